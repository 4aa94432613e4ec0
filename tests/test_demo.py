"""``reflib demo`` runs on the bundled (invented) demo data and does what it says.

This checks the demo itself, not reflib's accuracy: the demo data is invented.
"""

import subprocess
import sys

from reflib.demo import run_demo


def test_demo_walks_the_jobs():
    lines = []
    summary = run_demo(lines.append)
    assert summary["added"] == 13
    s = summary["searches"]
    assert s["AO-214-03-crude-nujol.jdx"]["top"] == s["AO-214-03-crude-nujol.jdx"]["expected"]
    assert s["AO-214-03-crude-nujol.jdx"]["verdict"] == "confident"
    assert s["XX-001-unknown-kbr.jdx"]["verdict"] == "no-match"
    assert s["AO-214-07-crude-chcl3.csv"]["top"] == s["AO-214-07-crude-chcl3.csv"]["expected"]
    assert summary["leftover"]["detected"] is True
    assert any("evidence, not proof" in line for line in lines)


def test_demo_command_runs(tmp_path):
    r = subprocess.run(
        [sys.executable, "-m", "reflib.cli", "demo"], capture_output=True, text=True, cwd=tmp_path
    )
    assert r.returncode == 0, r.stderr
    assert "Job 3" in r.stdout and "no-match" in r.stdout
