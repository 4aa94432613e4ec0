"""Bulk import: a manifest CSV or a folder of spectra, written in chunked transactions.

A manifest has the columns ``file,name,prep,smiles,role,notebook,operator,note`` (only ``file``
is required; paths are relative to the manifest). A folder import takes every file in it (not
hidden, not in sub-folders) and names each compound from its JCAMP-DX title or, failing that,
the file stem. A file already in the library (same SHA-256) is skipped, so an interrupted import
can simply be run again.
"""

from __future__ import annotations

import csv
import hashlib
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from reflib.errors import ReadError, ReflibError

MANIFEST_COLUMNS = ("file", "name", "prep", "smiles", "role", "notebook", "operator", "note")


@dataclass
class ImportEntry:
    file: Path
    name: str | None = None
    prep: str | None = None
    smiles: str | None = None
    role: str | None = None
    notebook: str | None = None
    operator: str | None = None
    note: str | None = None
    line: int | None = None  # manifest line


@dataclass
class ImportReport:
    added: int = 0
    skipped: int = 0
    failures: list[tuple[str, str]] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)


def plan_import(
    source: str | Path, *, prep: str | None = None, role: str | None = None
) -> list[ImportEntry]:
    """The entries to import from a manifest CSV or a folder (nothing is read beyond that)."""
    src = Path(source)
    if not src.exists():
        raise ReadError("no such file or folder", path=src)
    if src.is_dir():
        files = sorted(p for p in src.iterdir() if p.is_file() and not p.name.startswith("."))
        if not files:
            raise ReadError("folder holds no files to import", path=src)
        return [ImportEntry(file=f, prep=prep, role=role) for f in files]
    return read_manifest(src, prep=prep, role=role)


def read_manifest(
    path: Path, *, prep: str | None = None, role: str | None = None
) -> list[ImportEntry]:
    """Parse a manifest CSV; unknown columns or a missing ``file`` column are errors."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise ReadError(f"cannot read manifest: {exc}", path=path) from None
    rows = list(csv.reader(text.splitlines()))
    rows = [r for r in rows if any(c.strip() for c in r)]
    if not rows:
        raise ReadError("manifest is empty", path=path)
    header = [h.strip().lower() for h in rows[0]]
    if "file" not in header:
        raise ReadError(
            f"manifest needs a header with a 'file' column; columns: {', '.join(MANIFEST_COLUMNS)}",
            path=path,
            line=1,
        )
    unknown = [h for h in header if h not in MANIFEST_COLUMNS]
    if unknown:
        raise ReadError(
            f"unknown manifest column(s) {', '.join(unknown)}; "
            f"expected {', '.join(MANIFEST_COLUMNS)}",
            path=path,
            line=1,
        )
    entries = []
    for lineno, row in enumerate(rows[1:], start=2):
        if len(row) > len(header):
            raise ReadError(
                f"{len(row)} fields but the header has {len(header)}", path=path, line=lineno
            )
        rec = {h: (row[i].strip() if i < len(row) else "") for i, h in enumerate(header)}
        if not rec["file"]:
            raise ReadError("empty 'file' field", path=path, line=lineno)
        entries.append(
            ImportEntry(
                file=(path.parent / rec["file"]),
                name=rec.get("name") or None,
                prep=rec.get("prep") or prep,
                smiles=rec.get("smiles") or None,
                role=rec.get("role") or role,
                notebook=rec.get("notebook") or None,
                operator=rec.get("operator") or None,
                note=rec.get("note") or None,
                line=lineno,
            )
        )
    return entries


#: Fewer files than this are read in this process (starting workers would not pay).
READ_AHEAD = 32
#: Files written per transaction: a killed import loses at most the chunk in flight.
IMPORT_CHUNK = 256
#: ... and a chunk is written after at most this many seconds (slow files: full spectra).
CHUNK_SECONDS = 0.5

# What each worker needs, set once per worker by _worker_init: the library's encoding, the
# hashes of the files already in the library, and whether --force was given.
_STATE: dict = {}


def _worker_init(encoding: dict, known: frozenset[str], force: bool) -> None:
    from reflib.analysis.encode import Encoding

    _STATE.update(encoding=Encoding.from_dict(encoding), known=known, force=force)


def prepare_file(task: tuple[int, ImportEntry]):
    """Read, pick and encode one file (runs in a worker process).

    Returns ``("skipped", None)`` for a file already in the library, ``("ok", prepared)``
    (what :func:`reflib.library.bulk.write_prepared` writes) or ``("error", (class, message,
    path, line))``: exceptions cross the process boundary as that tuple, as pickling would drop
    the keyword-only path and line.
    """
    from reflib.io import read_bytes, read_spectrum
    from reflib.library.bulk import _prepare, lighten

    pos, e = task
    try:
        content = read_bytes(e.file)
    except ReflibError as exc:
        return "error", (type(exc), exc.message, exc.path, exc.line)
    if not _STATE["force"] and hashlib.sha256(content).hexdigest() in _STATE["known"]:
        return "skipped", None
    try:
        data = read_spectrum(e.file, data=content)
        item = {
            "data": data,
            "name": e.name or data.meta.title or e.file.stem,
            "smiles": e.smiles,
            "role": e.role,
            "prep": e.prep,
            "notebook": e.notebook,
            "operator": e.operator,
            "note": e.note,
            "force": _STATE["force"],
        }
        return "ok", lighten(_prepare(_STATE["encoding"], item, pos))
    except ReflibError as exc:
        return "error", (type(exc), exc.message, exc.path, exc.line)


def run_import(
    lib,
    entries: list[ImportEntry],
    *,
    force: bool = False,
    progress: Callable[[int], object] | None = None,
    workers: int | None = None,
) -> ImportReport:
    """Import ``entries``; collect per-file failures instead of stopping.

    Files are read, peak-picked and encoded in ``workers`` processes (default one per core
    when there are at least :data:`READ_AHEAD` files; 1, a daemonic process or
    ``REFLIB_WORKERS=1`` work in this process) while this process writes them, in manifest
    order, :data:`IMPORT_CHUNK` files (or :data:`CHUNK_SECONDS` of work) per transaction.
    A file already in the library (same SHA-256) is skipped, so a killed import, which loses
    at most the chunk in flight, resumes when run again. A chunk that fails as a whole is
    written file by file, so that one bad file is reported and the others are added.
    """
    import time

    import reflib.library.workers as workers_mod

    report = ImportReport()
    failures: list[tuple[int, str, str]] = []
    known = frozenset() if force else lib.store.known_hashes()
    state = (lib.encoding.to_dict(), known, force)
    n_workers = workers_mod.worker_count(workers, len(entries), READ_AHEAD)
    pool = None
    if n_workers > 1:
        pool = workers_mod.start_pool(n_workers, _worker_init, state)
        done = workers_mod.ordered_map(
            pool, prepare_file, enumerate(entries), chunksize=16, ahead=4 * IMPORT_CHUNK // 16
        )
    else:
        _worker_init(*state)
        done = map(prepare_file, enumerate(entries))
    batch: list = []
    started = time.monotonic()
    try:
        for (pos, e), (kind, payload) in zip(enumerate(entries), done):
            if kind == "ok":
                batch.append((pos, e, payload))
            else:
                if kind == "skipped":
                    report.skipped += 1
                else:
                    cls, message, path, line = payload
                    failures.append((pos, _label(e), _why(cls(message, path=path, line=line))))
                if progress:
                    progress(1)
            if batch and (
                len(batch) >= IMPORT_CHUNK or time.monotonic() - started >= CHUNK_SECONDS
            ):
                _write_batch(lib, batch, report, failures, progress)
                batch, started = [], time.monotonic()
        if batch:
            _write_batch(lib, batch, report, failures, progress)
    finally:
        if pool is not None:
            pool.shutdown(cancel_futures=True)
        _STATE.clear()
    report.failures = [(label, why) for _, label, why in sorted(failures)]
    return report


def _write_batch(lib, batch: list, report: ImportReport, failures: list, progress) -> None:
    """One transaction for the batch; if it fails, one per file, so the bad file is named."""
    from reflib.library.bulk import write_prepared

    try:
        written = [
            (e, r) for (_, e, _), r in zip(batch, write_prepared(lib, [p for *_, p in batch]))
        ]
    except ReflibError:
        written = []
        for pos, e, p in batch:
            try:
                written += [(e, r) for r in write_prepared(lib, [p])]
            except ReflibError as exc:
                failures.append((pos, _label(e), _why(exc)))
    lib._index = None
    for e, r in written:
        report.added += 1
        report.warnings += [f"{_label(e)}: {w}" for w in r.warnings]
    if progress:
        progress(len(batch))


_ITEM_PREFIX = re.compile(r"^item \d+: ")


def _label(e: ImportEntry) -> str:
    return str(e.file.name if e.line is None else f"{e.file.name} (manifest line {e.line})")


def _why(exc: ReflibError) -> str:
    msg = exc.message if exc.path else str(exc)
    if exc.line is not None and exc.path:
        msg = f"line {exc.line}: {exc.message}"
    return _ITEM_PREFIX.sub("", msg)  # the bulk writer numbers items; the label names the file
