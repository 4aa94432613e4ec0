"""Bulk add: many confirmed compounds in one transaction per chunk, with ``executemany``.

:meth:`reflib.library.Library.add_many` adds item by item, one transaction and several
round trips each. :func:`add_bulk` writes the same rows (same columns, same encoding key, same
ids, same stored vectors) but per chunk of ``chunk_size`` items: names and file hashes are looked
up once per chunk, compounds, spectra, peaks and vectors go in with one ``executemany`` each,
and the library's revision is bumped once per chunk::

    from reflib.library.bulk import add_bulk
    results = add_bulk(lib, [{"data": peaks, "name": "benzil", "prep": "kbr"}, ...])

Each item is a dict of :meth:`Library.add`'s keywords plus ``data``; ``check_similar`` is not
offered (searching the library for every new entry is what a bulk load avoids). A chunk is
atomic: every item of it is checked before anything of it is written, so a bad item raises a
:class:`~reflib.errors.ValidationError` naming its position, with the chunks before it in the
library and nothing of its own chunk.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from itertools import islice
from typing import Any

import numpy as np

from reflib.analysis.encode import comparable_peaks, encode
from reflib.chem import prep as prep_mod
from reflib.errors import ReflibError, ValidationError
from reflib.library.entries import (
    AddResult,
    clean_name,
    consistency_warnings,
    quality_warnings,
    structure_ids,
    to_peaks,
)
from reflib.library.history import record_many
from reflib.library.store import (
    PEAKS_INSERT,
    VECTORS_INSERT,
    check_storable,
    normalise_role,
    now,
    pack_vector,
    peak_rows,
    spectrum_row,
)
from reflib.spectrum import PeakList, Spectrum

Row = dict[str, Any]

#: Items written per transaction.
CHUNK_SIZE = 1000

_KEYWORDS = {
    "data",
    "name",
    "smiles",
    "role",
    "prep",
    "notebook",
    "operator",
    "note",
    "aliases",
    "force",
    "strict",
}
_ASCII_FOLD = {c: c + 32 for c in range(ord("A"), ord("Z") + 1)}


def _nocase(name: str) -> str:
    """The name as SQLite's NOCASE collation compares it (ASCII letters folded only)."""
    return name.translate(_ASCII_FOLD)


@dataclass
class _Prepared:
    pos: int
    data: Any
    name: str
    role: str | None
    tokens: list[str]
    peaks: Any
    vector: np.ndarray
    structure: dict[str, Any] | None
    item: dict[str, Any]
    warnings: list[str]
    rows: _Rows | None = None  # set by :meth:`lighten`


@dataclass
class _Rows:
    """What :func:`write_prepared` writes for one item, but the ids: the ``spectra`` row (its
    ``compound_id`` and ``notes`` are set at write time), the ``peaks`` rows without their
    spectrum id, and the stored vector."""

    spectrum: dict[str, Any]
    peaks: list[tuple]
    vector: bytes


def _rows(p: _Prepared) -> _Rows:
    spec = spectrum_row(0, p.data, prep=p.tokens, operator=p.item.get("operator"))
    return _Rows(spec, [r[1:] for r in peak_rows(0, p.peaks)], pack_vector(p.vector))


def lighten(p: _Prepared) -> _Prepared:
    """``p`` with its rows built and the objects they came from dropped: what an import worker
    sends back (plain rows and bytes pickle in a fraction of the time of a PeakList)."""
    rows = p.rows or _rows(p)
    item = {k: v for k, v in p.item.items() if k != "data"}
    return _Prepared(p.pos, None, p.name, p.role, p.tokens, None, None, p.structure, item,
                     p.warnings, rows)  # fmt: skip


#: A chunk with at least this many full spectra is peak-picked in worker processes.
PARALLEL_MIN = 32


def add_bulk(
    lib: Any,
    items: Iterable[dict[str, Any]],
    *,
    chunk_size: int = CHUNK_SIZE,
    progress: Callable[[int], None] | None = None,
    workers: int | None = None,
) -> list[AddResult]:
    """Add many entries, ``chunk_size`` per transaction; the same rows :meth:`Library.add` writes.

    ``items`` are dicts of :meth:`Library.add`'s keywords plus ``data`` (a Spectrum or a
    PeakList); ``progress`` is called with the number of items written after each chunk.
    Full spectra are peak-picked in ``workers`` processes (default: one per core when a chunk
    holds at least :data:`PARALLEL_MIN` spectra; 1 picks in this process).
    Returns one :class:`~reflib.library.AddResult` per item, in order.
    """
    import reflib.library.workers as workers_mod

    if chunk_size < 1:
        raise ValidationError(f"chunk_size must be at least 1, got {chunk_size}")
    if workers is not None and workers < 1:
        raise ValidationError(f"workers must be at least 1, got {workers}")
    results: list[AddResult] = []
    it = iter(items)
    done = 0
    pool = None
    try:
        for chunk in _chunks(it, chunk_size):
            spectra = [
                i
                for i, item in enumerate(chunk)
                if isinstance(item, dict) and isinstance(item.get("data"), Spectrum)
            ]
            picked: dict[int, PeakList] = {}
            n_workers = workers_mod.worker_count(workers, len(spectra), PARALLEL_MIN)
            if n_workers > 1:
                if pool is None:  # falls back to this process where children cannot start
                    pool = workers_mod.start_pool(n_workers)
                found = pool.map(to_peaks, [chunk[i]["data"] for i in spectra], chunksize=16)
                picked = dict(zip(spectra, found))
            results += _add_chunk(lib, chunk, done, picked)
            done += len(chunk)
            lib._index = None
            if progress is not None:
                progress(len(chunk))
    finally:
        if pool is not None:
            pool.shutdown()
    return results


def _chunks(it: Iterator[dict[str, Any]], n: int) -> Iterator[list[dict[str, Any]]]:
    while True:
        chunk = list(islice(it, n))
        if not chunk:
            return
        yield chunk


def _prepare(enc: Any, item: dict[str, Any], pos: int, peaks: PeakList | None = None) -> _Prepared:
    """Everything :meth:`Library.add` computes before it writes, for one item, with the
    library's encoding ``enc`` (no library needed: this runs in import workers too)."""
    if not isinstance(item, dict) or "data" not in item:
        raise ValidationError(f"item {pos}: expected a dict with 'data' and 'name'")
    unknown = set(item) - _KEYWORDS
    if unknown:
        raise ValidationError(
            f"item {pos}: unknown keys {', '.join(sorted(unknown))}; "
            f"expected {', '.join(sorted(_KEYWORDS))}"
        )
    data = item["data"]
    name = clean_name(item.get("name"))
    role = normalise_role(item["role"]) if item.get("role") is not None else None
    prep = item.get("prep")
    tokens = prep_mod.parse_tokens(prep) if prep is not None else []
    tokens = list(dict.fromkeys([*tokens, *prep_mod.parse_tokens(data.meta.prep)]))
    if peaks is None:
        peaks = to_peaks(data, tokens)
    if len(peaks) == 0:
        raise ValidationError("no bands found in this spectrum; nothing to add")
    vector = encode(comparable_peaks(peaks, tokens, enc), enc)
    check_storable(data, peaks, vector)
    smiles = item.get("smiles")
    structure = structure_ids(smiles) if smiles else None
    warnings: list[str] = quality_warnings(data, peaks, tokens)
    if smiles:
        warnings += consistency_warnings(
            data, peaks, smiles, tokens, strict=bool(item.get("strict", False))
        )
    return _Prepared(pos, data, name, role, tokens, peaks, vector, structure, item, warnings)


def _add_chunk(
    lib: Any,
    chunk: list[dict[str, Any]],
    offset: int,
    picked: dict[int, PeakList] | None = None,
) -> list[AddResult]:
    prepared = []
    enc = lib.encoding
    for i, item in enumerate(chunk):
        try:
            prepared.append(_prepare(enc, item, offset + i, (picked or {}).get(i)))
        except ReflibError as exc:
            raise type(exc)(f"item {offset + i}: {exc}") from None
    return write_prepared(lib, prepared)


def write_prepared(lib: Any, prepared: list[_Prepared]) -> list[AddResult]:
    """Write prepared items in one transaction: all of them or, on an error, none."""
    store = lib.store
    conn = store.conn
    enc_key = lib.encoding.key()
    with store.write():
        _refuse_duplicates(lib, prepared)
        by_id, by_name, by_alias = _known_compounds(lib, [p.name for p in prepared])
        next_cid = int(conn.execute("SELECT COALESCE(MAX(id), 0) FROM compounds").fetchone()[0])
        next_sid = int(conn.execute("SELECT COALESCE(MAX(id), 0) FROM spectra").fetchone()[0])
        compound_rows: list[dict[str, Any]] = []
        role_updates: list[tuple[str, int]] = []
        history_rows: list[tuple] = []
        spectrum_rows: list[dict[str, Any]] = []
        all_peaks: list[tuple] = []
        vector_rows: list[tuple] = []
        results = []
        for p in prepared:
            existing = (
                (by_id.get(int(p.name)) if p.name.isdigit() else None)
                or by_name.get(_nocase(p.name))
                or by_alias.get(p.name.lower())
            )
            if existing is not None:
                cid = int(existing["id"])
                new_compound = False
                if existing.get("canonical_smiles") and p.structure:
                    if existing["canonical_smiles"] != p.structure["canonical_smiles"]:
                        raise ValidationError(
                            f"item {p.pos}: {p.name!r} is in the library with SMILES "
                            f"{existing['smiles']}, not {p.item.get('smiles')}; use another "
                            "name or fix the SMILES"
                        )
                if p.role and p.role != existing["role"]:
                    role_updates.append((p.role, cid))
                    op = p.item.get("operator")
                    history_rows.append(
                        ("edit", cid, existing["name"], op, "role", existing["role"], p.role,
                         "changed by an add")
                    )  # fmt: skip
                    existing["role"] = p.role
            else:
                next_cid += 1
                cid = next_cid
                new_compound = True
                rec = _compound_row(cid, p)
                compound_rows.append(rec)
                by_name[_nocase(p.name)] = rec
                for a in _item_aliases(p):
                    by_alias.setdefault(a.lower(), rec)
            next_sid += 1
            sid = next_sid
            spectrum_rows.append(_spectrum_row(sid, cid, p, new_compound))
            if p.rows is None:
                all_peaks += peak_rows(sid, p.peaks)
                vector_rows.append((sid, enc_key, pack_vector(p.vector)))
            else:
                all_peaks += [(sid, *r) for r in p.rows.peaks]
                vector_rows.append((sid, enc_key, p.rows.vector))
            results.append(AddResult(cid, sid, p.name, new_compound, p.warnings))
        _insert_rows(conn, "compounds", compound_rows)
        conn.executemany("UPDATE compounds SET role = ? WHERE id = ?", role_updates)
        _insert_rows(conn, "spectra", spectrum_rows)
        conn.executemany(PEAKS_INSERT, all_peaks)
        conn.executemany(VECTORS_INSERT, vector_rows)
        record_many(store, history_rows + [_history_row(p, r) for p, r in zip(prepared, results)])
    return results


def _history_row(p: _Prepared, r: AddResult) -> tuple:
    """The history record of one bulk-added spectrum (as :func:`history.record_add` writes)."""
    source = _meta_field(p, "source_file") or "no file name"
    what = ("new compound; " if r.new_compound else "") + f"spectrum from {source}"
    return ("add", r.compound_id, r.name, p.item.get("operator"), "spectrum", None,
            r.spectrum_id, what)  # fmt: skip


def _refuse_duplicates(lib: Any, prepared: list[_Prepared]) -> None:
    """The duplicate-file check of :meth:`Library.add`, one query per chunk."""
    shas = {}
    for p in prepared:
        sha = _meta_field(p, "sha256")
        if sha and not p.item.get("force", False):
            if sha in shas:
                raise ValidationError(
                    f"item {p.pos}: the same file as item {shas[sha]}; use force to add it again"
                )
            shas[sha] = p.pos
    if not shas:
        return
    q = ",".join("?" * len(shas))
    row = lib.store.conn.execute(
        "SELECT s.id, s.sha256, c.name FROM spectra s JOIN compounds c ON c.id = s.compound_id "
        f"WHERE s.sha256 IN ({q}) ORDER BY s.id LIMIT 1",
        list(shas),
    ).fetchone()
    if row is not None:
        raise ValidationError(
            f"item {shas[row[1]]}: this file is already in the library as spectrum {row[0]} of "
            f"{row[2]!r}; use --force to add it again"
        )


def _known_compounds(
    lib: Any, names: list[str]
) -> tuple[dict[int, Row], dict[str, Row], dict[str, Row]]:
    """Compounds already in the library by id (for all-digit names), NOCASE name and alias.

    The lookup of :meth:`Store.find_compound` that :meth:`Library.add` goes through (an
    all-digit name is tried as a compound id first, then the name case-insensitively, then the
    aliases lower-cased), with one query per 500 names and one pass over the aliased compounds
    per chunk.
    """
    conn = lib.store.conn
    cols = [d[0] for d in conn.execute("SELECT * FROM compounds LIMIT 0").description]
    by_name: dict[str, dict[str, Any]] = {}
    distinct = list(dict.fromkeys(names))
    for start in range(0, len(distinct), 500):
        part = distinct[start : start + 500]
        q = ",".join("?" * len(part))
        for row in conn.execute(
            f"SELECT * FROM compounds WHERE name COLLATE NOCASE IN ({q})", part
        ):
            rec = dict(zip(cols, row))
            by_name[_nocase(rec["name"])] = rec
    by_id: dict[int, dict[str, Any]] = {}
    digits = [int(n) for n in distinct if n.isdigit()]
    for start in range(0, len(digits), 500):
        part = digits[start : start + 500]
        q = ",".join("?" * len(part))
        for row in conn.execute(f"SELECT * FROM compounds WHERE id IN ({q})", part):
            rec = dict(zip(cols, row))
            by_id[int(rec["id"])] = rec
    by_alias: dict[str, dict[str, Any]] = {}
    if any(_nocase(n) not in by_name for n in distinct):
        for row in conn.execute(
            "SELECT * FROM compounds WHERE aliases IS NOT NULL AND aliases != '[]' ORDER BY id"
        ):
            rec = dict(zip(cols, row))
            for a in json.loads(rec["aliases"] or "[]"):
                by_alias.setdefault(a.lower(), rec)
    return by_id, by_name, by_alias


def _item_aliases(p: _Prepared) -> list[str]:
    return list(p.item.get("aliases") or ())


def _compound_row(cid: int, p: _Prepared) -> dict[str, Any]:
    """The compounds row :meth:`Store.insert_compound` writes for a new name."""
    item = p.item
    rec: dict[str, Any] = {
        "id": cid,
        "name": p.name,
        "aliases": json.dumps(_item_aliases(p), ensure_ascii=False),
        "role": p.role or "other",
        "notebook": item.get("notebook"),
        "notes": item.get("note"),
        "added_by": item.get("operator"),
        "smiles": item.get("smiles"),
        "canonical_smiles": None,
        "formula": None,
        "inchikey": None,
        "tags": "[]",
        "added_at": now(),
    }
    if p.structure:
        rec.update(p.structure)
    return rec


def _spectrum_row(sid: int, cid: int, p: _Prepared, new_compound: bool) -> dict[str, Any]:
    """The spectra row :meth:`Store.insert_spectrum` writes, with its id."""
    notes = p.item.get("note") if not new_compound else None
    if p.rows is not None:
        return {"id": sid, **p.rows.spectrum, "compound_id": cid, "notes": notes}
    rec = spectrum_row(cid, p.data, prep=p.tokens, operator=p.item.get("operator"), notes=notes)
    return {"id": sid, **rec}


def _meta_field(p: _Prepared, key: str) -> Any:
    """``source_file`` or ``sha256`` of the item's file (from its row once lightened)."""
    return p.rows.spectrum[key] if p.rows is not None else getattr(p.data.meta, key, None)


def _insert_rows(conn, table: str, rows: list[dict[str, Any]]) -> None:
    if not rows:
        return
    cols = list(rows[0])
    sql = f"INSERT INTO {table}({', '.join(cols)}) VALUES ({', '.join('?' * len(cols))})"
    conn.executemany(sql, [tuple(r[c] for c in cols) for r in rows])
