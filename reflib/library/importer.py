"""Bulk import: a manifest CSV or a folder of spectra, one transaction per file.

A manifest has the columns ``file,name,prep,smiles,role,notebook,operator,note`` (only ``file``
is required; paths are relative to the manifest). A folder import takes every file in it (not
hidden, not in sub-folders) and names each compound from its JCAMP-DX title or, failing that,
the file stem. A file already in the library (same SHA-256) is skipped, so an interrupted import
can simply be run again.
"""

from __future__ import annotations

import csv
import hashlib
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


def _sha256(path: Path) -> str | None:
    try:
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except OSError:
        return None


#: Files read and peak-picked ahead, in worker processes, while earlier ones are written.
READ_AHEAD = 32


def load_file(path: Path):
    """Read one file and pick its bands (runs in a worker process): (data, peaks) or an error."""
    from reflib.io import read_spectrum
    from reflib.library.entries import to_peaks

    try:
        data = read_spectrum(path)
        return data, to_peaks(data), None
    except ReflibError as exc:
        # exceptions cross the process boundary as (class, message, path, line): pickling
        # would drop the keyword-only path and line
        return None, None, (type(exc), exc.message, exc.path, exc.line)


def run_import(
    lib,
    entries: list[ImportEntry],
    *,
    force: bool = False,
    progress: Callable[[int], object] | None = None,
    workers: int | None = None,
) -> ImportReport:
    """Add each entry in its own transaction; collect failures instead of stopping.

    Files are read and peak-picked in ``workers`` processes (default one per core when there
    are at least :data:`READ_AHEAD` files; 1 reads in this process); the writes stay in this
    process, one transaction per file, in manifest order.
    """
    import os

    report = ImportReport()
    todo: list[ImportEntry] = []
    for e in entries:
        digest = _sha256(e.file)
        if digest and not force and lib.store.spectrum_by_sha(digest):
            report.skipped += 1
            if progress:
                progress(1)
        else:
            todo.append(e)
    n_workers = workers if workers is not None else (os.cpu_count() or 1)
    pool = None
    if n_workers > 1 and len(todo) >= READ_AHEAD:
        from concurrent.futures import ProcessPoolExecutor

        pool = ProcessPoolExecutor(max_workers=n_workers)
    try:
        for start in range(0, len(todo), READ_AHEAD):
            chunk = todo[start : start + READ_AHEAD]
            files = [e.file for e in chunk]
            loaded = list(pool.map(load_file, files)) if pool else [load_file(f) for f in files]
            for e, (data, peaks, err) in zip(chunk, loaded):
                _add_one(lib, e, data, peaks, err, force, report)
                if progress:
                    progress(1)
    finally:
        if pool is not None:
            pool.shutdown(cancel_futures=True)
    return report


def _add_one(lib, e: ImportEntry, data, peaks, err, force: bool, report: ImportReport) -> None:
    label = str(e.file.name if e.line is None else f"{e.file.name} (manifest line {e.line})")
    try:
        if err is not None:
            cls, message, path, line = err
            raise cls(message, path=path, line=line)
        name = e.name or data.meta.title or e.file.stem
        res = lib.add(
            data,
            name=name,
            smiles=e.smiles,
            role=e.role,
            prep=e.prep,
            notebook=e.notebook,
            operator=e.operator,
            note=e.note,
            force=force,
            check_similar=False,
            peaks=peaks,
        )
        report.added += 1
        report.warnings += [f"{label}: {w}" for w in res.warnings]
    except ReflibError as exc:
        msg = exc.message if exc.path else str(exc)
        if exc.line is not None and exc.path:
            msg = f"line {exc.line}: {exc.message}"
        report.failures.append((label, msg))
