"""``reflib check [--fix]`` and ``reflib backup``: find damage, repair what is safe, copy safely.

Damage is made the way it happens in the field: rows written or deleted by another SQLite tool
with foreign keys off, vectors left from an older encoding, a file added twice with --force,
bytes of the file overwritten. What counts as consistent follows the library's own data model
(every compound has spectra, every spectrum bands and a vector of the library's encoding) and
SQLite's PRAGMA integrity_check / foreign_key_check (sqlite.org/pragma.html). Band positions
are condensed-phase values from memory.
"""

from __future__ import annotations

import json
import sqlite3
import subprocess
import sys

import numpy as np
import pytest

from reflib.analysis.encode import Encoding, encode
from reflib.library import Library
from reflib.library.health import check_library
from reflib.library.store import SCHEMA_VERSION
from reflib.spectrum import PeakList

BANDS = {
    "acetone": ([3005.0, 1715.0, 1365.0, 1220.0, 530.0], [0.1, 1.0, 0.5, 0.5, 0.3]),
    "benzonitrile": ([2230.0, 1490.0, 760.0, 690.0], [0.6, 0.4, 1.0, 1.0]),
    "ethyl acetate": ([2985.0, 1740.0, 1240.0, 1047.0], [0.3, 1.0, 1.0, 0.6]),
}


def reflib(*args):
    return subprocess.run(
        [sys.executable, "-m", "reflib.cli", *map(str, args)], capture_output=True, text=True
    )


@pytest.fixture()
def libpath(tmp_path):
    p = tmp_path / "lib.sqlite"
    with Library.create(p) as lib:
        for name, (pos, inten) in BANDS.items():
            lib.add(PeakList(pos, inten), name=name)
    return p


def raw(path):
    """A plain SQLite connection with foreign keys off, as another tool might open the file."""
    con = sqlite3.connect(path, isolation_level=None)
    con.execute("PRAGMA foreign_keys = OFF")
    return con


def _spectrum_id(con, name):
    return con.execute(
        "SELECT s.id FROM spectra s JOIN compounds c ON c.id = s.compound_id WHERE c.name = ?",
        (name,),
    ).fetchone()[0]


# fault -> (SQL applied with foreign keys off, checks expected to report it, repairable?)
FAULTS = {
    "orphan peaks": (
        ["INSERT INTO peaks(spectrum_id, position, intensity) VALUES (999, 1000, 1)"],
        {"orphan_peaks", "foreign_keys"},
        True,
    ),
    "orphan vector": (
        ["INSERT INTO vectors VALUES (999, 'x', x'00')"],
        {"orphan_vectors", "foreign_keys"},
        True,
    ),
    "compound deleted under its spectrum": (
        ["DELETE FROM compounds WHERE name = 'acetone'"],
        {"orphan_spectra", "foreign_keys"},
        True,
    ),
    "compound without spectrum": (
        [
            "INSERT INTO compounds(name, role, added_at) VALUES "
            "('half-written', 'other', '2026-01-01')"
        ],
        {"empty_compounds"},
        True,
    ),
    "vector missing": (
        ["DELETE FROM vectors WHERE spectrum_id = {benzonitrile}"],
        {"missing_vectors"},
        True,
    ),
    "vector of an older encoding": (
        ["UPDATE vectors SET encoding = 'old-key' WHERE spectrum_id = {benzonitrile}"],
        {"stale_vectors"},
        True,
    ),
    "spectrum without bands": (
        ["DELETE FROM peaks WHERE spectrum_id = {benzonitrile}"],
        {"spectra_no_peaks"},
        False,
    ),
}


def test_fresh_library_is_healthy(libpath):
    with Library.open(libpath) as lib:
        report = check_library(lib)
    assert report.healthy and report.problems == []
    # the adds searched the library (similarity warnings), so a cache may lag: a notice only
    assert {f.check for f in report.findings} <= {"index_cache"}
    assert report.counts == {"compounds": 3, "spectra": 3, "peaks": 13, "vectors": 3}
    r = reflib("check", "-L", libpath, "--json")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["healthy"] is True and d["schema_version"] == SCHEMA_VERSION
    assert all(f["severity"] == "notice" for f in d["findings"])


@pytest.mark.parametrize("fault", list(FAULTS))
def test_each_fault_is_found_and_repaired_when_safe(libpath, fault):
    sqls, expected, repairable = FAULTS[fault]
    con = raw(libpath)
    ids = {n.replace(" ", "_"): _spectrum_id(con, n) for n in BANDS}
    for sql in sqls:
        con.execute(sql.format(**ids))
    con.close()
    with Library.open(libpath) as lib:
        found = check_library(lib)
        assert {f.check for f in found.problems} == expected
        fixed = check_library(lib, fix=True)
        assert fixed.healthy is repairable
        again = check_library(lib)
        assert again.healthy is repairable
        if repairable:  # nothing left behind that violates the data model
            assert sqlite3.connect(libpath).execute("PRAGMA foreign_key_check").fetchall() == []
        remaining = {n for n in BANDS if lib.store.compound_by_name(n)}
    if fault == "compound deleted under its spectrum":
        assert remaining == {"benzonitrile", "ethyl acetate"}
    else:
        assert remaining == set(BANDS)  # repairs never touch whole, good compounds


def test_cli_check_exit_status_and_fix(libpath):
    con = raw(libpath)
    con.execute("INSERT INTO peaks(spectrum_id, position, intensity) VALUES (999, 1000, 1)")
    con.execute("UPDATE vectors SET encoding = 'old-key'")
    con.close()
    r = reflib("check", "-L", libpath)
    assert r.returncode == 1
    assert "orphan_peaks" in r.stdout and "stale_vectors" in r.stdout and "--fix" in r.stdout
    r = reflib("check", "-L", libpath, "--fix")
    assert r.returncode == 0, r.stdout
    for check in ("orphan_peaks", "foreign_keys", "stale_vectors"):
        assert f"fixed: {check}:" in r.stdout
    assert r.stdout.strip().endswith("healthy")
    assert reflib("check", "-L", libpath).returncode == 0


def test_stale_vectors_are_re_encoded_with_the_library_encoding(libpath):
    """After a change of encoding parameters, --fix gives exactly the vectors add would give."""
    new = Encoding(broadening=14.0)
    con = raw(libpath)
    con.execute(
        "UPDATE meta SET value = ? WHERE key = 'encoding'",
        (json.dumps(new.to_dict(), sort_keys=True),),
    )
    con.close()
    with Library.open(libpath) as lib:
        report = check_library(lib)
        assert [f.check for f in report.problems] == ["stale_vectors"]
        assert report.problems[0].count == 3
        assert check_library(lib, fix=True).healthy
        for sid, key, blob in lib.store.conn.execute("SELECT * FROM vectors"):
            assert key == new.key()
            want = encode(lib.store.peaks_of(sid), new).astype("<f4")
            assert np.array_equal(np.frombuffer(blob, "<f4"), want)
        query = PeakList([2229.0, 1491.0, 759.0, 691.0], [0.6, 0.4, 1.0, 1.0])
        assert lib.search(query, top=1).hits[0].name == "benzonitrile"


def test_duplicates_are_reported_never_removed(tmp_path):
    lib = tmp_path / "lib.sqlite"
    f = tmp_path / "acetone.txt"
    f.write_text("IR (film): 3005 w, 1715 vs, 1365 s, 1220 s, 530 m cm-1\n")
    assert reflib("init", lib).returncode == 0
    assert reflib("add", "-L", lib, "--name", "acetone", f).returncode == 0
    assert reflib("add", "-L", lib, "--name", "acetone", f, "--force").returncode == 0
    r = reflib("check", "-L", lib, "--fix")
    assert r.returncode == 1 and "duplicates" in r.stdout and "spectra 1, 2" in r.stdout
    assert sqlite3.connect(lib).execute("SELECT COUNT(*) FROM spectra").fetchone()[0] == 2


def test_index_cache_staleness_is_a_notice_and_fix_rebuilds_it(libpath):
    index = pytest.importorskip("reflib.library.index")
    query = PeakList([2229.0, 1491.0, 759.0, 691.0], [0.6, 0.4, 1.0, 1.0])
    with Library.open(libpath) as lib:
        lib.search(query)  # builds the cache file
        assert index.status(lib.store) == "fresh"
        lib.add(PeakList([2250.0, 910.0], [1.0, 0.5]), name="deuterochloroform")
        report = check_library(lib)
        assert report.healthy and [f.check for f in report.findings] == ["index_cache"]
        assert report.findings[0].severity == "notice"
        check_library(lib, fix=True)
        assert index.status(lib.store) == "fresh"


def test_damaged_file_is_reported_not_repaired(tmp_path):
    """Overwriting one page of the bands' index is what a bad sector or a bad copy does."""
    p = tmp_path / "lib.sqlite"
    rng = np.random.default_rng(3)
    with Library.create(p) as lib:
        for i in range(120):
            pos = rng.choice(np.arange(500, 3600, 5), size=10, replace=False).astype(float)
            lib.add(PeakList(pos, rng.uniform(0.1, 1, 10)), name=f"c{i}", check_similar=False)
    con = sqlite3.connect(p)
    con.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    page_size = con.execute("PRAGMA page_size").fetchone()[0]
    root = con.execute(
        "SELECT rootpage FROM sqlite_master WHERE name = 'idx_peaks_spectrum_position'"
    ).fetchone()[0]
    con.close()
    with open(p, "r+b") as fh:
        fh.seek((root - 1) * page_size + 8)
        fh.write(bytes(rng.integers(0, 256, page_size - 16, dtype=np.uint8)))
    r = reflib("check", "-L", p, "--fix")
    assert r.returncode == 1 and "Traceback" not in r.stderr, r.stderr
    assert "integrity" in r.stdout and "restore" in r.stdout and "--fix" not in r.stdout
    before = p.read_bytes()
    reflib("check", "-L", p, "--fix")
    assert p.read_bytes() == before  # --fix never writes to a damaged file


def test_backup_is_a_complete_copy(libpath, tmp_path):
    dest = tmp_path / "copy.sqlite"
    r = reflib("backup", "-L", libpath, dest)
    assert r.returncode == 0, r.stderr
    assert "3 compounds, 3 spectra" in r.stdout

    def rows(p):
        con = sqlite3.connect(p)
        out = {
            t: con.execute(f"SELECT * FROM {t} ORDER BY 1").fetchall()
            for t in ("meta", "compounds", "spectra", "peaks", "vectors")
        }
        con.close()
        return out

    assert rows(dest) == rows(libpath)
    assert reflib("check", "-L", dest).returncode == 0
