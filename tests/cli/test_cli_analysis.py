"""The ``leftover``, ``mixture`` and ``compare`` commands: thin over
reflib.analysis.mixture/compare.

Spectra are Gaussian bands at handbook group frequencies (from memory): ketone C=O near
1715 cm-1, hydrogen-bonded O-H near 3350 cm-1 (broad), secondary-alcohol C-O near 1110 cm-1,
C-H stretches near 2960/2930 cm-1. Mixtures follow Beer-Lambert additivity (physical law).
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
from typer.testing import CliRunner

from reflib.analysis.search import CAUTION
from reflib.cli import app
from reflib.io.delimited import write_delimited
from reflib.spectrum import Spectrum

runner = CliRunner()
X = np.arange(400.0, 4000.0 + 1.0, 2.0)
SKELETON = [(2962, 0.5, 18), (2931, 0.6, 20), (1460, 0.3, 14), (1378, 0.25, 10), (960, 0.15, 12)]
KETONE = SKELETON + [(1715, 1.0, 18), (1360, 0.4, 10), (1220, 0.35, 16)]
ALCOHOL = SKELETON + [(3350, 0.45, 260), (1110, 0.6, 18), (1040, 0.3, 14)]


def absorbance(spec):
    y = np.zeros_like(X)
    for p, h, w in spec:
        y += h * np.exp(-0.5 * ((X - p) / (w / 2.3548)) ** 2)
    return y


def area(spec):
    return sum(h * w / 2.3548 * np.sqrt(2 * np.pi) for _p, h, w in spec)


def write(path, y, seed):
    y = y + np.random.default_rng(seed).normal(0, 0.002, y.size)
    path.write_text(write_delimited(Spectrum(X, y)))
    return path


@pytest.fixture()
def setup(tmp_path):
    lib = tmp_path / "lib.sqlite"
    assert runner.invoke(app, ["init", str(lib)]).exit_code == 0
    ketone = write(tmp_path / "ketone.csv", absorbance(KETONE), 1)
    alcohol = write(tmp_path / "alcohol.csv", absorbance(ALCOHOL), 2)
    for name, f in (("pentan-2-one", ketone), ("pentan-2-ol", alcohol)):
        r = runner.invoke(app, ["add", "-L", str(lib), str(f), "--name", name, "--prep", "film"])
        assert r.exit_code == 0, r.output
    crude_y = 0.1 / area(KETONE) * absorbance(KETONE) + 0.9 / area(ALCOHOL) * absorbance(ALCOHOL)
    crude = write(tmp_path / "crude.csv", crude_y * 0.8 / crude_y.max(), 3)
    pure = write(tmp_path / "pure.csv", 0.8 * absorbance(ALCOHOL) / 0.6, 4)
    return lib, crude, pure, ketone, alcohol


def test_leftover_json_with_and_without_product(setup):
    lib, crude, pure, *_ = setup
    args = ["leftover", "-L", str(lib), "--start", "pentan-2-one"]
    r = runner.invoke(app, [*args, "--product", "pentan-2-ol", str(crude), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert d["detected"] is True and abs(d["share"] - 0.1) < 0.02
    assert d["start"]["name"] == "pentan-2-one" and d["product"]["name"] == "pentan-2-ol"
    assert any(abs(b["position"] - 1715) < 5 for b in d["diagnostic_bands"])
    assert d["caution"] == CAUTION
    r = runner.invoke(app, [*args, str(crude), "--json"])
    d = json.loads(r.output)
    assert d["product"] is None and d["upper_bound"] >= 0.09
    # start only (issue 16): detected with a share whose interval holds the 10 % it was made with
    assert d["detected"] is True and d["share_interval"][0] <= 0.1 <= d["share_interval"][1]
    r = runner.invoke(app, [*args, "--product", "2", str(pure), "--json"])
    assert json.loads(r.output)["detected"] is False


def test_leftover_plain_output_is_a_short_table(setup):
    lib, crude, *_ = setup
    r = runner.invoke(
        app, ["leftover", "-L", str(lib), str(crude), "--start", "1", "--product", "2"]
    )
    assert r.exit_code == 0, r.output
    assert "DETECTED" in r.output and "share of the signal" in r.output
    assert "band cm-1" in r.output and CAUTION in r.output


def test_mixture_command(setup):
    lib, crude, *_ = setup
    r = runner.invoke(app, ["mixture", "-L", str(lib), str(crude), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    shares = {c["name"]: c["share"] for c in d["components"]}
    assert set(shares) == {"pentan-2-one", "pentan-2-ol"}
    assert abs(shares["pentan-2-one"] - 0.1) < 0.03
    r = runner.invoke(app, ["mixture", "-L", str(lib), str(crude), "--max-components", "1"])
    assert r.exit_code == 0 and "pentan-2-ol" in r.output and "pentan-2-one" not in r.output


def test_compare_files_and_library_entries(setup, tmp_path):
    lib, _crude, _pure, ketone, alcohol = setup
    r = runner.invoke(app, ["compare", str(ketone), str(alcohol), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert any(abs(b["position"] - 1715) < 4 for b in d["lost"])
    assert any(abs(b["position"] - 3350) < 20 and b["broad"] for b in d["new"])
    assert any("is gone" in s for s in d["summary"])
    r = runner.invoke(app, ["compare", "-L", str(lib), "pentan-2-one", str(alcohol)])
    assert r.exit_code == 0, r.output
    assert "the 1715 band" in r.output and CAUTION in r.output


def _reflib(*args, cwd):
    return subprocess.run(
        [sys.executable, "-m", "reflib.cli", *args], capture_output=True, text=True, cwd=cwd
    )


def test_user_mistakes_give_one_line_and_status_2(setup, tmp_path):
    lib, crude, *_ = setup
    for args in (
        ["leftover", "-L", str(lib), str(crude), "--start", "hexan-2-one"],
        ["leftover", "-L", str(lib), str(crude), "--start", "1", "--product", "pentan-2-one"],
        ["leftover", "-L", str(lib), str(crude), "--start", "1", "--prep", "marmalade"],
        ["compare", "-L", str(lib), str(crude), "no-such-thing"],
        ["mixture", "-L", str(lib), str(tmp_path / "missing.csv")],
    ):
        r = _reflib(*args, cwd=tmp_path)
        assert r.returncode == 2, (args, r.stdout, r.stderr)
        lines = r.stderr.strip().splitlines()
        assert len(lines) == 1 and "Traceback" not in r.stderr, r.stderr


def test_leftover_series_of_a_folder(setup, tmp_path):
    """A reaction followed by aliquots (issue 16): a folder of crudes with falling shares (20, 10,
    5, 0 % of the integrated absorbance, Beer-Lambert sums) gives one JSON document per file in
    name order plus a summary with a falling trend, and the plot is written."""
    lib, *_ = setup
    folder = tmp_path / "aliquots"
    folder.mkdir()
    for k, share in enumerate((0.2, 0.1, 0.05, 0.0)):
        y = share / area(KETONE) * absorbance(KETONE) + (1 - share) / area(ALCOHOL) * absorbance(
            ALCOHOL
        )
        write(folder / f"t{k + 1}.csv", y * 0.8 / y.max(), 10 + k)
    out = tmp_path / "series.png"
    args = ["leftover", "-L", str(lib), str(folder), "--start", "pentan-2-one", "--json"]
    r = runner.invoke(app, [*args, "--plot", str(out)])
    assert r.exit_code == 0, r.output
    docs = [json.loads(line) for line in r.stdout.splitlines() if line.startswith("{")]
    assert [d["file"] for d in docs[:-1]] == ["t1.csv", "t2.csv", "t3.csv", "t4.csv"]
    summary = docs[-1]
    assert summary["summary"] is True and summary["ordered_by"] == "name"
    assert summary["trend"] == "falling" and summary["below_limit_from"] == "t4.csv"
    shares = [d["share"] for d in docs[:3]]
    assert shares == sorted(shares, reverse=True)
    assert out.exists() and out.stat().st_size > 1000
    r = runner.invoke(app, ["leftover", "-L", str(lib), str(folder), "--start", "1"])
    assert r.exit_code == 0 and "trend: falling" in r.output
    r = _reflib(*args, "--report", str(tmp_path / "r.html"), cwd=tmp_path)
    assert r.returncode == 2 and "--report is for one crude" in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1
