"""Bring another library's compounds and spectra into this one (``reflib merge OTHER``).

Rules, in this order:

* the other file is opened read-only (SQLite URI ``mode=ro``) and never written;
* a spectrum already here (same SHA-256, or for a spectrum without a hash the same compound
  with the same band positions) is skipped, so merging the same library twice changes nothing;
* compounds are matched by InChIKey when both sides have a structure, else by exact name
  (case-insensitive, as names are unique here); a name that matches while the structures differ
  is a conflict: nothing of that compound is merged and the conflict is listed;
* provenance is kept: each merged spectrum keeps its operator and time of adding, and
  ``spectra.source_library`` names the library it came from (its library id and file name);
* everything is one transaction: an error leaves this library as it was.

Vectors are re-encoded with this library's encoding from the stored peak lists, so libraries
with different encodings merge correctly.
"""

from __future__ import annotations

import sqlite3
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from reflib.analysis.encode import comparable_peaks, encode
from reflib.errors import LibraryError
from reflib.library.history import record_many
from reflib.library.store import (
    PEAKS_INSERT,
    SCHEMA_VERSION,
    VECTORS_INSERT,
    Store,
    check_storable,
    pack_vector,
    peak_rows,
    peaks_from_rows,
)
from reflib.spectrum import PeakList

#: Spectrum columns copied as they are from the other library.
SPECTRUM_COLUMNS = (
    "prep", "kind", "resolution", "source_file", "sha256", "lo_cm1", "hi_cm1", "y_kind", "x",
    "y", "meta", "acquired_at", "operator", "notes", "added_at",
)  # fmt: skip
COMPOUND_COLUMNS = (
    "name", "aliases", "smiles", "canonical_smiles", "formula", "inchikey", "role", "tags",
    "notebook", "notes", "added_by", "added_at",
)  # fmt: skip


@dataclass
class MergeReport:
    """What a merge did; :meth:`to_dict` is the JSON ``reflib merge --json`` prints."""

    source: str
    before: dict[str, int]
    after: dict[str, int]
    compounds_added: int = 0
    compounds_matched: int = 0
    spectra_added: int = 0
    spectra_skipped: int = 0
    conflicts: list[dict[str, Any]] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


def open_read_only(path: str | Path) -> sqlite3.Connection:
    """The other library, opened so that SQLite refuses every write to it."""
    p = Path(path)
    if not p.is_file():
        raise LibraryError(f"no library file at {p}")
    try:
        conn = sqlite3.connect(f"{p.resolve().as_uri()}?mode=ro", uri=True)
        tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master")}
    except sqlite3.DatabaseError as exc:
        raise LibraryError(f"{p} is not a reflib library (SQLite says: {exc})") from None
    if not {"meta", "compounds", "spectra", "peaks"} <= tables:
        conn.close()
        raise LibraryError(f"{p} is an SQLite file but not a reflib library")
    row = conn.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
    version = int(row[0]) if row and str(row[0]).isdigit() else 0
    if not 1 <= version <= SCHEMA_VERSION:
        conn.close()
        raise LibraryError(
            f"{p} has library schema {version}; this reflib merges schemas 1 to {SCHEMA_VERSION}"
        )
    return conn


def _rows(conn: sqlite3.Connection, sql: str, args: tuple = ()) -> list[dict[str, Any]]:
    cur = conn.execute(sql, args)
    cols = [d[0] for d in cur.description]
    return [dict(zip(cols, r)) for r in cur.fetchall()]


def _peaks(conn: sqlite3.Connection, spectrum_id: int, rec: dict[str, Any]) -> PeakList:
    """The other library's bands of one spectrum, with the author's labels where its schema
    has them."""
    cols = {r[1] for r in conn.execute("PRAGMA table_info(peaks)")}
    label = ", label" if "label" in cols else ""
    rows = conn.execute(
        f"SELECT position, intensity, width, strength, broad, shoulder{label} FROM peaks "
        "WHERE spectrum_id = ? ORDER BY position",
        (spectrum_id,),
    ).fetchall()
    return peaks_from_rows(rows, rec)


def _peak_key(cid: int, positions) -> tuple:
    return ("peaks", cid, tuple(round(float(p), 2) for p in positions))


def merge_library(lib: Any, other: str | Path, *, operator: str | None = None) -> MergeReport:
    """Merge ``other`` into ``lib`` (a :class:`~reflib.library.Library`); see the module notes."""
    store: Store = lib.store
    if store.path != ":memory:" and Path(store.path).resolve() == Path(other).resolve():
        raise LibraryError("a library cannot be merged into itself")
    src = open_read_only(other)
    try:
        return _merge(lib, store, src, Path(other), operator)
    finally:
        src.close()


def _merge(lib, store: Store, src: sqlite3.Connection, other: Path, operator) -> MergeReport:
    enc = lib.encoding
    enc_key = enc.key()
    lib_id = src.execute("SELECT value FROM meta WHERE key = 'library_id'").fetchone()
    source = f"{lib_id[0] if lib_id else 'schema-1 library'} ({other.name})"
    their_compounds = _rows(src, "SELECT * FROM compounds ORDER BY id")
    cols = ", ".join(("id", "compound_id", *SPECTRUM_COLUMNS))
    their_spectra = _rows(src, f"SELECT {cols} FROM spectra ORDER BY id")
    by_compound: dict[int, list[dict[str, Any]]] = {}
    for s in their_spectra:
        by_compound.setdefault(int(s["compound_id"]), []).append(s)
    report = MergeReport(source=str(other.name), before=store.counts(), after={})
    conn = store.conn
    with store.write():
        ours = _rows(conn, "SELECT id, name, inchikey, smiles FROM compounds")
        by_key = {c["inchikey"]: c for c in ours if c["inchikey"]}
        by_name = {c["name"].lower(): c for c in ours}
        shas = {r[0] for r in conn.execute("SELECT sha256 FROM spectra WHERE sha256 IS NOT NULL")}
        peak_keys = {
            _peak_key(cid, [float(x) for x in (pos or "").split(",") if x])
            for cid, pos in conn.execute(
                "SELECT s.compound_id, (SELECT GROUP_CONCAT(position) FROM (SELECT position "
                "FROM peaks p WHERE p.spectrum_id = s.id ORDER BY position)) FROM spectra s "
                "WHERE s.sha256 IS NULL"
            )
        }
        history_rows: list[tuple] = []
        for c in their_compounds:
            spectra = by_compound.get(int(c["id"]), [])
            target = _match(c, by_key, by_name)
            if target == "conflict":
                mine = by_name[c["name"].lower()]
                report.conflicts.append(
                    {
                        "name": c["name"],
                        "here": mine["smiles"],
                        "there": c["smiles"],
                        "spectra_not_merged": len(spectra),
                    }
                )
                continue
            todo = []
            for s in spectra:
                if s["sha256"] and s["sha256"] in shas:
                    report.spectra_skipped += 1
                    continue
                peaks = _peaks(src, int(s["id"]), s)
                if not s["sha256"] and target is not None:
                    if _peak_key(int(target["id"]), peaks.positions) in peak_keys:
                        report.spectra_skipped += 1
                        continue
                todo.append((s, peaks))
            if not todo:
                continue
            if target is None:
                rec = {k: c.get(k) for k in COMPOUND_COLUMNS}
                rec["aliases"] = rec["aliases"] or "[]"
                rec["tags"] = rec["tags"] or "[]"
                cid = _insert(conn, "compounds", rec)
                target = {"id": cid, "name": c["name"], "inchikey": c["inchikey"]}
                by_name[c["name"].lower()] = target
                if c["inchikey"]:
                    by_key[c["inchikey"]] = target
                report.compounds_added += 1
            else:
                report.compounds_matched += 1
            cid = int(target["id"])
            for s, peaks in todo:
                prep = [t for t in (s["prep"] or "").split(",") if t]
                vector = encode(comparable_peaks(peaks, prep, enc), enc)
                check_storable(peaks, peaks, vector)
                row = {k: s[k] for k in SPECTRUM_COLUMNS}
                row.update(compound_id=cid, source_library=source)
                sid = _insert(conn, "spectra", row)
                conn.executemany(PEAKS_INSERT, peak_rows(sid, peaks))
                conn.execute(VECTORS_INSERT, (sid, enc_key, pack_vector(vector)))
                if s["sha256"]:
                    shas.add(s["sha256"])
                else:
                    peak_keys.add(_peak_key(cid, peaks.positions))
                report.spectra_added += 1
            history_rows.append(
                ("merge", cid, target["name"], operator, "spectra", None,
                 [int(s["id"]) for s, _ in todo],
                 f"{len(todo)} spectra from {source}; added there by "
                 f"{c.get('added_by') or 'unknown'} at {c.get('added_at')}")
            )  # fmt: skip
        record_many(store, history_rows)
    lib._index = None
    report.after = store.counts()
    return report


def _match(c: dict[str, Any], by_key: dict, by_name: dict) -> dict[str, Any] | str | None:
    """Our compound for one of theirs, None for a new one, or "conflict"."""
    if c["inchikey"] and c["inchikey"] in by_key:
        return by_key[c["inchikey"]]
    mine = by_name.get(str(c["name"]).lower())
    if mine is None:
        return None
    if mine["inchikey"] and c["inchikey"] and mine["inchikey"] != c["inchikey"]:
        return "conflict"
    return mine


def _insert(conn: sqlite3.Connection, table: str, row: dict[str, Any]) -> int:
    """Insert one row (plain SQL: a merge inserts thousands, sqlite-utils' per-row checks
    cost a third of the time); returns its id."""
    cols = ", ".join(row)
    marks = ", ".join("?" * len(row))
    cur = conn.execute(f"INSERT INTO {table} ({cols}) VALUES ({marks})", list(row.values()))
    return int(cur.lastrowid)
