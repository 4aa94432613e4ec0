"""The committed demo folder is what scripts/make_demo_data.py writes, and it is self-consistent.

The demo data are invented (simulated); these checks are about the files, not about chemistry:
regenerating gives the same bytes (so a change to the simulator cannot leave stale demo files),
every manifest row names a readable file, and the crudes' expected answers name library
compounds. Common practice, no source.
"""

from __future__ import annotations

import csv
from pathlib import Path

import make_demo_data  # scripts/ is on sys.path (tests/conftest.py)

from reflib.io import read_spectrum
from reflib.spectrum import PeakList, Spectrum

DEMO = Path(__file__).resolve().parent.parent / "demo_data"


def _files(root: Path) -> dict[str, bytes]:
    return {p.relative_to(root).as_posix(): p.read_bytes() for p in root.rglob("*") if p.is_file()}


def test_regenerating_gives_the_committed_bytes(tmp_path: Path) -> None:
    make_demo_data.build(tmp_path)
    fresh, committed = _files(tmp_path), _files(DEMO)
    assert sorted(fresh) == sorted(committed)
    stale = [name for name in fresh if fresh[name] != committed[name]]
    assert stale == [], f"demo_data is stale; run python scripts/make_demo_data.py ({stale})"


def test_manifest_rows_are_readable_and_labelled_invented() -> None:
    with (DEMO / "manifest.csv").open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert list(rows[0]) == [
        "file",
        "name",
        "prep",
        "smiles",
        "role",
        "notebook",
        "operator",
        "note",
    ]
    assert len({r["name"] for r in rows}) >= 10
    for row in rows:
        obj = read_spectrum(DEMO / row["file"])
        assert isinstance(obj, Spectrum | PeakList)
        text = (DEMO / row["file"]).read_text(encoding="utf-8")
        assert "INVENTED" in text, row["file"]


def test_crude_answers_name_library_compounds() -> None:
    with (DEMO / "manifest.csv").open(encoding="utf-8") as fh:
        names = {r["name"] for r in csv.DictReader(fh)}
    with (DEMO / "crudes" / "expected.csv").open(encoding="utf-8") as fh:
        crudes = list(csv.DictReader(fh))
    assert {c["expected"] for c in crudes} - names == {"no-match"}
    for c in crudes:
        assert (DEMO / "crudes" / c["file"]).is_file()
        if c["leftover"]:
            assert c["leftover"] in names and 0 < float(c["leftover_share"]) < 0.5
