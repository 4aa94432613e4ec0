"""``reflib import --no-calibrate``: the import leaves the verdict's calibration alone and says so.

The peak lists are invented (mechanics data, no chemistry behind them); that a library of at
least 20 compounds asks for a calibration is reflib's own rule (docs/verdict.md).
"""

import subprocess
import sys

from reflib.library import Library
from reflib.library.calibrate import load_model, needs_calibration


def test_import_without_calibration_keeps_no_model_and_says_how_to_calibrate(tmp_path):
    folder = tmp_path / "lists"
    folder.mkdir()
    for i in range(24):  # invented: three bands moving apart from list to list
        bands = [3000 - 37 * i, 1750 - 23 * i, 1200 - 11 * i]
        (folder / f"c{i:02d}.txt").write_text(", ".join(f"{b} (s)" for b in bands) + " cm-1\n")
    lib = tmp_path / "lib.sqlite"
    Library.create(lib).close()
    r = subprocess.run(
        [sys.executable, "-m", "reflib.cli", "import", "-L", str(lib), str(folder),
         "--no-calibrate"],
        capture_output=True,
        text=True,
    )  # fmt: skip
    assert r.returncode == 0, r.stderr
    assert "added 24" in r.stdout
    assert "run 'reflib calibrate'" in r.stderr and "recalibrated" not in r.stderr
    with Library.open(lib) as opened:
        assert load_model(opened.store) is None
        assert needs_calibration(opened)
