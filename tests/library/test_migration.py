"""Schema versions: a genuine schema-1 library migrates to the current schema and keeps every row.

The schema-1 layout below is the DDL reflib 0.1.0 wrote (copied from such a file's
sqlite_master), so the fixture does not depend on the code under test to build the old file.
Band positions are condensed-phase values from memory.
"""

from __future__ import annotations

import json
import re
import sqlite3
import subprocess
import sys
import zlib
from pathlib import Path

import numpy as np
import pytest

from reflib.analysis.encode import DEFAULT_ENCODING, encode
from reflib.errors import LibraryError
from reflib.library import Library
from reflib.library import store as store_mod
from reflib.library.health import check_library
from reflib.library.store import SCHEMA_VERSION, Store
from reflib.spectrum import PeakList

V1_DDL = [
    'CREATE TABLE "meta" ("key" TEXT PRIMARY KEY, "value" TEXT)',
    'CREATE TABLE "compounds" ("id" INTEGER PRIMARY KEY, "name" TEXT NOT NULL, "aliases" TEXT, '
    '"smiles" TEXT, "canonical_smiles" TEXT, "formula" TEXT, "inchikey" TEXT, '
    '"role" TEXT NOT NULL, "tags" TEXT, "notebook" TEXT, "notes" TEXT, "added_by" TEXT, '
    '"added_at" TEXT NOT NULL)',
    "CREATE UNIQUE INDEX idx_compounds_name ON compounds(name COLLATE NOCASE)",
    'CREATE INDEX "idx_compounds_inchikey" ON "compounds" ("inchikey")',
    'CREATE TABLE "spectra" ("id" INTEGER PRIMARY KEY, '
    '"compound_id" INTEGER NOT NULL REFERENCES "compounds"("id"), "prep" TEXT, '
    '"kind" TEXT NOT NULL, "resolution" REAL, "source_file" TEXT, "sha256" TEXT, '
    '"lo_cm1" REAL, "hi_cm1" REAL, "y_kind" TEXT, "x" BLOB, "y" BLOB, "meta" TEXT, '
    '"acquired_at" TEXT, "operator" TEXT, "notes" TEXT, "added_at" TEXT NOT NULL)',
    'CREATE INDEX "idx_spectra_compound_id" ON "spectra" ("compound_id")',
    'CREATE INDEX "idx_spectra_sha256" ON "spectra" ("sha256")',
    'CREATE TABLE "peaks" ("id" INTEGER PRIMARY KEY, '
    '"spectrum_id" INTEGER NOT NULL REFERENCES "spectra"("id"), "position" REAL NOT NULL, '
    '"intensity" REAL NOT NULL, "width" REAL, "strength" TEXT, "broad" INTEGER, '
    '"shoulder" INTEGER)',
    'CREATE INDEX "idx_peaks_spectrum_id" ON "peaks" ("spectrum_id")',
    'CREATE TABLE "vectors" ("spectrum_id" INTEGER PRIMARY KEY REFERENCES "spectra"("id"), '
    '"encoding" TEXT, "data" BLOB)',
]

# name, role, bands (position, strength) - acetone, benzonitrile, ethyl acetate from memory
COMPOUNDS = [
    ("acetone", "solvent", [(3005, "w"), (1715, "vs"), (1365, "s"), (1220, "s"), (530, "m")]),
    ("benzonitrile", "starting material", [(2230, "s"), (1490, "m"), (760, "vs"), (690, "vs")]),
    ("ethyl acetate ‘EtOAc’", "solvent", [(2985, "m"), (1740, "vs"), (1240, "vs"), (1047, "s")]),
]
TABLES = ("meta", "compounds", "spectra", "peaks", "vectors")


def build_v1_library(path: Path) -> None:
    """A schema-1 file with three compounds, four spectra (one full), bands and vectors."""
    con = sqlite3.connect(path)
    for ddl in V1_DDL:
        con.execute(ddl)
    enc = DEFAULT_ENCODING
    meta = {
        "schema_version": "1",
        "encoding": json.dumps(enc.to_dict(), sort_keys=True),
        "revision": "7",
        "created_at": "2026-01-05T09:00:00+00:00",
    }
    con.executemany("INSERT INTO meta VALUES (?, ?)", meta.items())
    sid = 0
    for cid, (name, role, bands) in enumerate(COMPOUNDS, start=1):
        con.execute(
            "INSERT INTO compounds(id, name, aliases, role, tags, notes, added_at) "
            "VALUES (?, ?, '[]', ?, '[]', ?, '2026-01-05T09:00:00+00:00')",
            (cid, name, role, f"note for {name}; 'quoted'"),
        )
        for copy in range(2 if cid == 1 else 1):
            sid += 1
            words = [w for _, w in bands]
            pl = PeakList([p + copy for p, _ in bands], [0.5] * len(bands), strengths=words)
            x = y = None
            if copy:  # one full spectrum, stored as reflib 0.1.0 stored it
                xs = np.linspace(400.0, 4000.0, 901)
                x = zlib.compress(xs.astype("<f8").tobytes())
                y = zlib.compress(np.exp(-(((xs - 1716) / 9) ** 2)).astype("<f8").tobytes())
            con.execute(
                "INSERT INTO spectra(id, compound_id, prep, kind, source_file, sha256, x, y, "
                "y_kind, meta, added_at) VALUES (?, ?, 'film', ?, ?, ?, ?, ?, ?, '{}', "
                "'2026-01-05T09:00:00+00:00')",
                (
                    sid,
                    cid,
                    "spectrum" if copy else "peaks",
                    f"s{sid}.txt",
                    f"{sid:064x}",
                    x,
                    y,
                    "absorbance" if copy else None,
                ),
            )
            con.executemany(
                "INSERT INTO peaks(spectrum_id, position, intensity, width, strength, broad, "
                "shoulder) VALUES (?, ?, ?, NULL, ?, 0, 0)",
                [(sid, p.position, p.intensity, p.strength) for p in pl],
            )
            con.execute(
                "INSERT INTO vectors VALUES (?, ?, ?)",
                (sid, enc.key(), encode(pl, enc).astype("<f4").tobytes()),
            )
    con.commit()
    con.close()


def dump(path: Path | str) -> dict[str, list[tuple]]:
    con = sqlite3.connect(path)
    tables = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    out = {
        t: sorted(con.execute(f"SELECT * FROM {t}").fetchall(), key=repr)
        for t in TABLES
        if t in tables
    }
    out["history"] = con.execute("SELECT * FROM history").fetchall() if "history" in tables else []
    con.close()
    return out


@pytest.fixture()
def v1(tmp_path):
    p = tmp_path / "group.sqlite"
    build_v1_library(p)
    return p


def test_v1_library_migrates_keeping_every_row(v1):
    before = dump(v1)
    assert len(before["peaks"]) == 18 and len(before["spectra"]) == 4
    s = Store.open(v1)
    assert s.schema_version == SCHEMA_VERSION == 5
    assert re.fullmatch(r"[0-9a-f]{32}", s.get_meta("library_id"))
    assert s.get_meta("reflib_version")
    s.close()
    after = dump(v1)
    for table in ("compounds", "vectors"):
        assert after[table] == before[table], table
    # schema 3 adds peaks.label: every band is kept as it was, with no label
    assert after["peaks"] == [(*row, None) for row in before["peaks"]]
    # schema 4 adds spectra.source_library (NULL for every spectrum added before) at the end
    assert [r[:-1] for r in after["spectra"]] == before["spectra"]
    assert all(r[-1] is None for r in after["spectra"])
    assert after["history"] == []  # schema 4: the history starts empty, nothing is invented
    new_meta = {k for k, _ in after["meta"]} - {k for k, _ in before["meta"]}
    assert new_meta == {"library_id", "reflib_version"}
    assert dict(after["meta"])["revision"] == "8"  # one write: the migration
    con = sqlite3.connect(v1)
    # schema 3: the calibration's neighbour scores, empty until 'reflib calibrate'
    assert con.execute("SELECT COUNT(*) FROM neighbours").fetchone()[0] == 0
    indexes = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type='index'")}
    plan = " ".join(
        str(r[-1])
        for r in con.execute(
            "EXPLAIN QUERY PLAN SELECT position FROM peaks WHERE spectrum_id = 1 ORDER BY position"
        )
    )
    con.close()
    assert "idx_peaks_spectrum_position" in indexes and "idx_peaks_spectrum_id" not in indexes
    assert "idx_peaks_spectrum_position" in plan and "TEMP B-TREE" not in plan  # no sort step


def test_backup_copy_is_written_first_and_is_the_old_file(v1):
    before = dump(v1)
    Store.open(v1).close()
    copies = sorted(v1.parent.glob("group.sqlite.v1-backup-*"))
    assert len(copies) == 1
    assert re.fullmatch(r"group\.sqlite\.v1-backup-\d{8}-\d{6}", copies[0].name)
    assert dump(copies[0]) == before  # the copy is the schema-1 file, untouched
    Store.open(v1).close()  # already current: no second copy
    assert len(list(v1.parent.glob("group.sqlite.v1-backup-*"))) == 1


def test_migrated_library_is_healthy_and_searchable(v1):
    with Library.open(v1) as lib:
        assert check_library(lib).healthy
        query = PeakList([2229.0, 1491.0, 759.0, 691.0], [0.6, 0.4, 1.0, 1.0])
        res = lib.search(query, top=2)
        assert res.hits[0].name == "benzonitrile"
        assert [p.position for p in lib.peaks(1)] == [530.0, 1220.0, 1365.0, 1715.0, 3005.0]
        lib.add(PeakList([1715.0, 1360.0], [1.0, 0.5]), name="butanone-ish")
        assert lib.store.counts()["spectra"] == 5


def test_failed_migration_leaves_the_file_at_schema_1(v1, monkeypatch):
    before = dump(v1)

    def broken(conn):
        store_mod._migrate_1_to_2(conn)  # do the work, then fail as a full disk would
        raise sqlite3.OperationalError("database or disk is full")

    monkeypatch.setitem(store_mod.MIGRATIONS, 2, broken)
    with pytest.raises(LibraryError, match="unchanged"):
        Store.open(v1)
    assert dump(v1) == before
    monkeypatch.undo()
    assert Store.open(v1).schema_version == SCHEMA_VERSION


def test_open_without_migrating_leaves_schema_1(v1):
    s = Store.open(v1, migrate=False)
    assert s.schema_version == 1
    s.close()
    assert not list(v1.parent.glob("*backup*"))


def test_newer_library_is_refused_naming_the_version_needed(tmp_path):
    p = tmp_path / "new.sqlite"
    s = Store.create(p)
    with s.write():
        s.set_meta("schema_version", str(SCHEMA_VERSION + 1))
        s.set_meta("reflib_version", "7.2.0")
    s.close()
    with pytest.raises(LibraryError, match=r"upgrade reflib 7\.2\.0 or later"):
        Store.open(p)
    r = subprocess.run(
        [sys.executable, "-m", "reflib.cli", "list", "-L", str(p)], capture_output=True, text=True
    )
    assert r.returncode == 2
    assert f"schema {SCHEMA_VERSION + 1}" in r.stderr and "7.2.0" in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1


def test_new_library_equals_a_migrated_one(tmp_path, v1):
    """create() runs the same steps as a migration, so both end with the same layout."""
    Store.open(v1).close()
    fresh = tmp_path / "fresh.sqlite"
    Store.create(fresh).close()

    def layout(p):
        con = sqlite3.connect(p)
        rows = con.execute(
            "SELECT type, name FROM sqlite_master WHERE name NOT LIKE 'sqlite_%' ORDER BY 1, 2"
        ).fetchall()
        cols = {t: [c[1] for c in con.execute(f"PRAGMA table_info({t})")] for t in TABLES}
        con.close()
        return rows, cols

    assert layout(fresh) == layout(v1)


def test_schema_2_library_gains_the_label_column_keeping_every_row(v1, monkeypatch):
    """A file left at schema 2 (as reflib wrote it before band labels) migrates to 3 and on to
    the current schema."""
    monkeypatch.setattr(store_mod, "SCHEMA_VERSION", 2)
    Store.open(v1).close()
    assert Store.open(v1, migrate=False).schema_version == 2
    before = dump(v1)
    monkeypatch.undo()
    s = Store.open(v1)
    assert s.schema_version == SCHEMA_VERSION
    s.close()
    after = dump(v1)
    for table in ("compounds", "vectors"):
        assert after[table] == before[table], table
    assert [r[:-1] for r in after["spectra"]] == before["spectra"]  # + source_library (4)
    assert after["peaks"] == [(*row, None) for row in before["peaks"]]
    assert len(list(v1.parent.glob("group.sqlite.v2-backup-*"))) == 1
    with Library.open(v1) as lib:
        assert lib.peaks(1).labels is None
        assert check_library(lib).healthy
