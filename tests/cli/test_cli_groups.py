"""``reflib groups`` and ``peaks --assign``: thin over reflib.chem.groups.

Band positions in the typed peak lists are condensed-phase values from memory.
"""

import json
import subprocess
import sys

from typer.testing import CliRunner

from reflib.cli import app

runner = CliRunner()

ACETONE = "3005 w, 2970 m, 1715 vs, 1420 m, 1365 s, 1220 s, 1092 w, 530 m cm-1"


def _write(tmp_path, text, name="acetone.txt"):
    p = tmp_path / name
    p.write_text(text + "\n")
    return p


def test_groups_json_has_calls_evidence_and_caution(tmp_path) -> None:
    f = _write(tmp_path, ACETONE)
    res = runner.invoke(app, ["groups", str(f), "--formula", "C3H6O", "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert set(d) >= {"query", "groups", "quality", "caution"}
    calls = {g["group"]: g for g in d["groups"]}
    assert calls["ketone"]["call"] == "present"
    assert any(e["seen"] and abs(e["cm1"] - 1715) < 1 for e in calls["ketone"]["evidence"])
    assert calls["nitro"]["call"] == "absent" and calls["amine"]["call"] == "absent"
    assert d["query"]["formula"] == "C3H6O"


def test_groups_text_says_the_caution(tmp_path) -> None:
    res = runner.invoke(app, ["groups", str(_write(tmp_path, ACETONE))])
    assert res.exit_code == 0, res.output
    assert "ketone" in res.output and "not a structure proof" in res.output


def test_groups_bad_formula_is_one_line_and_exit_2(tmp_path) -> None:
    f = _write(tmp_path, ACETONE)
    proc = subprocess.run(
        [sys.executable, "-m", "reflib.cli", "groups", str(f), "--formula", "C3Xx6O"],
        capture_output=True,
        text=True,
    )
    assert proc.returncode == 2
    assert proc.stderr.count("\n") == 1 and "unknown element" in proc.stderr


def test_peaks_assign_json_labels_every_band(tmp_path) -> None:
    f = _write(tmp_path, ACETONE)
    res = runner.invoke(app, ["peaks", str(f), "--assign", "--json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.output)
    assert all("assignment" in p for p in d["peaks"])
    by_pos = {round(p["position"]): p["assignment"] for p in d["peaks"]}
    assert any("ketone C=O" in a for a in by_pos[1715])
    plain = json.loads(runner.invoke(app, ["peaks", str(f), "--json"]).output)
    assert all("assignment" not in p for p in plain["peaks"])
