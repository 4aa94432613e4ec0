"""reflib peaks and add print the quality report (jcamp 1.3.2's carbon dioxide.jdx: its 2349
cm-1 band sits flat near 2 %T, read off the file's data); a warning keeps exit status 0."""

from __future__ import annotations

import json

from typer.testing import CliRunner

from reflib.cli import app

runner = CliRunner()


def test_peaks_json_and_text_carry_quality(gas_phase):
    path = str(gas_phase / "carbon dioxide.jdx")
    r = runner.invoke(app, ["peaks", path, "--json"])
    assert r.exit_code == 0, r.output
    checks = {q["check"]: q for q in json.loads(r.output)["quality"]}
    assert checks["saturation"]["severity"] == "warn"
    r = runner.invoke(app, ["peaks", path])
    assert r.exit_code == 0 and "warning (saturation)" in r.output


def test_add_prints_quality_warnings(gas_phase, tmp_path):
    lib = str(tmp_path / "lib.sqlite")
    assert runner.invoke(app, ["init", "--library", lib]).exit_code == 0
    r = runner.invoke(
        app, ["add", str(gas_phase / "carbon dioxide.jdx"), "--name", "co2", "--library", lib]
    )
    assert r.exit_code == 0, r.output
    assert "warning: quality (saturation)" in r.output
