"""The search index: stored vectors as one memory-mapped float32 matrix, grouped by preparation.

SQLite stays the source of truth. The index is a cache file beside the library
(``<library>.reflib-index``) holding every vector with its rows sorted by comparison group
(preparation tokens and covered range). The matrix is stored column by column (bin by bin):
a query's bands cover about a third of the bins, in a few runs, and a search reads only the
columns of those runs (:func:`reflib.analysis.search.score_block`).
The file is keyed by the library's revision, its encoding and its creation stamp; a key that
does not match means the cache is stale and is rebuilt (written to a temporary file, then
renamed over the old one, so a reader never sees half a file).

Layout: 8 bytes magic ``RFLIDX02``, 8 bytes little-endian header length, a JSON header, zero
padding to a multiple of 64 bytes, then ``n x bins`` little-endian float32 values, column-major
(all rows of bin 0, then of bin 1, ...). A file of another layout (``RFLIDX01`` was row-major)
is not read; it is rebuilt like a stale one.
"""

from __future__ import annotations

import json
import os
import struct
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from reflib.library.store import Store, VectorSet

MAGIC = b"RFLIDX02"
SUFFIX = ".reflib-index"

#: Rows copied at a time into the column-major matrix (bounds the extra memory of a build).
COPY_ROWS = 4096


@dataclass
class Group:
    """A run of index rows that share preparation and covered range."""

    prep: tuple[str, ...]
    lo: float | None
    hi: float | None
    start: int
    stop: int


@dataclass
class Index:
    """Vectors ready for search: ``matrix`` rows are in group order."""

    key: dict[str, Any]
    spectrum_ids: np.ndarray
    compound_ids: np.ndarray
    groups: list[Group]
    matrix: np.ndarray  # (n, bins) float32, column-major, possibly over a read-only memory map
    #: weighted reference norms already computed, by (group start, weight digest); see
    #: :func:`reflib.analysis.search.score_index`
    norms: dict = field(default_factory=dict, repr=False)

    @property
    def size(self) -> int:
        return int(self.matrix.shape[0])


def index_path(library_path: str | Path) -> Path:
    """Where the cache of a library lives."""
    return Path(str(library_path) + SUFFIX)


def library_key(store: Store) -> dict[str, Any]:
    """What the cache must match: revision, encoding and the library's creation stamp."""
    return {
        "revision": store.revision,
        "encoding": store.encoding.key(),
        "created_at": store.get_meta("created_at"),
        "schema": store.get_meta("schema_version"),
    }


def range_key(lo: float | None, hi: float | None) -> tuple[float | None, float | None]:
    """A covered range (cm-1) rounded to 10 cm-1: spectra whose ranges round alike share one
    comparison group (and one weight vector)."""
    return (
        None if lo is None else round(lo / 10) * 10.0,
        None if hi is None else round(hi / 10) * 10.0,
    )


def _group_rows(vs: VectorSet) -> tuple[np.ndarray, list[Group]]:
    """Row order that makes each comparison group contiguous, and the groups."""
    keys = [(tuple(sorted(p)), *range_key(lo, hi)) for p, (lo, hi) in zip(vs.preps, vs.ranges)]
    distinct = sorted(set(keys), key=lambda k: (k[0], -1 if k[1] is None else k[1], k[2] or -1))
    gid = {k: i for i, k in enumerate(distinct)}
    codes = np.array([gid[k] for k in keys], dtype=np.int64)
    order = np.argsort(codes, kind="stable")
    groups = []
    sorted_codes = codes[order]
    for i, k in enumerate(distinct):
        start = int(np.searchsorted(sorted_codes, i, side="left"))
        stop = int(np.searchsorted(sorted_codes, i, side="right"))
        groups.append(Group(k[0], k[1], k[2], start, stop))
    return order, groups


def build(store: Store) -> Index:
    """An in-memory index straight from the library (no cache file).

    Key and vectors are read in one read transaction, so they describe the same revision even
    while another process writes.
    """
    conn = store.conn
    own = not conn.in_transaction
    if own:
        conn.execute("BEGIN")
    try:
        key = library_key(store)
        vs = store.load_vectors(store.encoding.key())
    finally:
        if own:
            conn.execute("COMMIT")
    order, groups = _group_rows(vs)
    return Index(
        key=key,
        spectrum_ids=vs.spectrum_ids[order],
        compound_ids=vs.compound_ids[order],
        groups=groups,
        matrix=_column_major(vs.matrix, order),
    )


def _column_major(matrix: np.ndarray, order: np.ndarray) -> np.ndarray:
    """``matrix[order]`` as a column-major (Fortran-ordered) float32 array, copied in blocks of
    rows so a build needs little more than the two matrices."""
    out = np.empty((len(order), matrix.shape[1]), dtype=np.float32, order="F")
    for start in range(0, len(order), COPY_ROWS):
        out[start : start + COPY_ROWS] = matrix[order[start : start + COPY_ROWS]]
    return out


def write(index: Index, path: str | Path) -> None:
    """Write the cache atomically: a temporary file in the same folder, then rename."""
    path = Path(path)
    header = {
        "key": index.key,
        "n": index.size,
        "bins": int(index.matrix.shape[1]) if index.matrix.ndim == 2 else 0,
        "spectrum_ids": index.spectrum_ids.tolist(),
        "compound_ids": index.compound_ids.tolist(),
        "groups": [[list(g.prep), g.lo, g.hi, g.start, g.stop] for g in index.groups],
    }
    blob = json.dumps(header, separators=(",", ":")).encode()
    head = MAGIC + struct.pack("<Q", len(blob)) + blob
    head += b"\0" * (-len(head) % 64)
    fd, tmp = tempfile.mkstemp(prefix=path.name + ".", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(head)
            # column-major: the transpose of a Fortran-ordered matrix is C-ordered
            np.asfortranarray(index.matrix, dtype="<f4").T.tofile(fh)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def read(path: str | Path) -> Index | None:
    """Memory-map a cache file; None if it is missing, truncated or not an index."""
    path = Path(path)
    try:
        with open(path, "rb") as fh:
            magic = fh.read(8)
            if magic != MAGIC:
                return None
            (hlen,) = struct.unpack("<Q", fh.read(8))
            if hlen > 1 << 31:
                return None
            header = json.loads(fh.read(hlen))
        offset = 16 + hlen
        offset += -offset % 64
        n, bins = int(header["n"]), int(header["bins"])
        if path.stat().st_size != offset + 4 * n * bins:
            return None
        if n == 0:
            matrix = np.zeros((0, bins), dtype=np.float32)
        else:
            mapped = np.memmap(path, dtype="<f4", mode="r", offset=offset, shape=(bins, n))
            # a plain array over the map: slicing a memmap subclass costs microseconds a slice
            matrix = np.asarray(mapped).T
        groups = [Group(tuple(g[0]), g[1], g[2], int(g[3]), int(g[4])) for g in header["groups"]]
        return Index(
            key=header["key"],
            spectrum_ids=np.asarray(header["spectrum_ids"], dtype=np.int64),
            compound_ids=np.asarray(header["compound_ids"], dtype=np.int64),
            groups=groups,
            matrix=matrix,
        )
    except (OSError, ValueError, KeyError, TypeError, struct.error):
        return None


def status(store: Store) -> str:
    """'fresh', 'stale', 'missing' or 'memory' (an in-memory library has no cache file)."""
    if store.path == ":memory:":
        return "memory"
    idx = read(index_path(store.path))
    if idx is None:
        return "missing"
    return "fresh" if idx.key == library_key(store) else "stale"


def load(store: Store) -> Index:
    """The library's index: the cache file when its key matches, else rebuilt (and cached).

    A cache whose key does not match is never used. Failing to write the cache (a read-only
    folder, say) is not an error: the index is then used from memory.
    """
    if store.path == ":memory:":
        return build(store)
    path = index_path(store.path)
    key = library_key(store)
    idx = read(path)
    if idx is not None and idx.key == key:
        return idx
    fresh = build(store)
    try:
        write(fresh, path)
    except OSError:
        return fresh
    cached = read(path)
    return cached if cached is not None and cached.key == key else fresh
