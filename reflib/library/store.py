"""The library file: SQLite schema (via sqlite-utils), transactions, revision counter, provenance.

One library is one SQLite file any SQLite tool can open. Tables:

``compounds``  id, name, aliases, smiles, canonical_smiles, formula, inchikey, role, tags,
               notebook, notes, added_by, added_at
``spectra``    id, compound_id, prep, kind ('spectrum' or 'peaks'), resolution, source_file,
               sha256, lo_cm1, hi_cm1, y_kind, x, y (zlib-compressed float64), meta (JSON),
               acquired_at, operator, notes, added_at
``peaks``      spectrum_id, position (cm-1), intensity (0..1), width (FWHM cm-1), strength,
               broad, shoulder, and from schema 3 on label (the author's assignment, or NULL)
``vectors``    spectrum_id, encoding (key), data (float32 blob)
``meta``       key, value: schema_version, encoding (JSON), revision, created_at, and from
               schema 2 on library_id (random hex, names this library for caches and backups)
               and reflib_version (the reflib that created or last migrated the file)

Every write goes through :meth:`Store.write`, one transaction (``BEGIN IMMEDIATE``) that bumps
``revision``; a writer that finds the file locked by another process waits and retries with
backoff. Several reads that must agree (the vectors of a search and the peaks of its hits) go in
one :meth:`Store.read` transaction: in WAL mode it sees one snapshot however others write.

Schema versions: a file of an older schema is migrated when opened, after a backup copy is
written next to it (``lib.sqlite.v1-backup-20260101-120000``); a file of a newer schema is
refused with the reflib version it needs.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import json
import random
import sqlite3
import time
import uuid
import zlib
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from itertools import groupby
from operator import itemgetter
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from reflib.analysis.encode import DEFAULT_ENCODING, Encoding
from reflib.errors import LibraryError, NotFoundError, ValidationError
from reflib.spectrum import Metadata, PeakList, Spectrum

if TYPE_CHECKING:
    import sqlite_utils

#: Schema this reflib writes. 1: the first layout. 2: meta rows library_id and reflib_version;
#: peaks indexed by (spectrum_id, position), which serves both the lookup and the ordering of
#: :meth:`Store.peaks_of` without a sort. 3: peaks.label, the author's assignment of a typed
#: band ("C=O"), NULL where none was given.
#: 4: a ``history`` table (every add, remove, merge and
#: edit with time, operator, old and new value) and ``spectra.source_library`` (where a merged
#: spectrum came from).
#: 5: ``neighbours``, each spectrum's best score against another compound (the calibrated
#: verdict's crowding).
SCHEMA_VERSION = 5
ROLES = ("starting material", "intermediate", "product", "reagent", "solvent", "other")
ROLE_ALIASES = {
    "sm": "starting material",
    "start": "starting material",
    "starting-material": "starting material",
    "starting_material": "starting material",
    "int": "intermediate",
    "prod": "product",
}
#: How long one SQLite call waits for another process's lock before reporting "locked" (s).
BUSY_TIMEOUT_S = 30.0
#: How long a writer keeps retrying ``BEGIN IMMEDIATE`` on a locked file before giving up (s).
WRITE_RETRY_S = 120.0
#: Full spectra with more points than this are refused (a 4000 cm-1 range at 0.01 cm-1 spacing
#: is 400 000 points; no infrared instrument comes near the cap).
MAX_STORED_POINTS = 2_000_000
#: Peak lists with more bands than this are refused (a condensed-phase spectrum has tens).
MAX_STORED_PEAKS = 5_000


def _is_locked(exc: BaseException) -> bool:
    msg = str(exc).lower()
    return isinstance(exc, sqlite3.OperationalError) and ("locked" in msg or "busy" in msg)


def _retry_locked(what: str, path: str, fn, *, retry_s: float | None = None):
    """Call ``fn()``; while SQLite says the file is locked, sleep with backoff and call again."""
    limit = WRITE_RETRY_S if retry_s is None else retry_s
    deadline = time.monotonic() + limit
    delay = 0.02
    while True:
        try:
            return fn()
        except sqlite3.OperationalError as exc:
            if not _is_locked(exc):
                raise
            if time.monotonic() >= deadline:
                raise LibraryError(
                    f"{path} stayed locked by another process for over {limit:.0f} s while "
                    f"{what}; try again when the other import or add has finished"
                ) from None
            time.sleep(delay * random.uniform(0.5, 1.5))
            delay = min(delay * 2, 1.0)


def normalise_role(role: str | None) -> str:
    """The canonical role word, or a ValidationError listing the valid ones."""
    if role is None or not str(role).strip():
        return "other"
    r = str(role).strip().lower()
    r = ROLE_ALIASES.get(r, r)
    if r not in ROLES:
        raise ValidationError(f"unknown role {role!r}; use one of: {', '.join(ROLES)}")
    return r


def now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")


def pack_array(a: np.ndarray) -> bytes:
    return zlib.compress(np.ascontiguousarray(a, dtype="<f8").tobytes(), 6)


def unpack_array(b: bytes) -> np.ndarray:
    return np.frombuffer(zlib.decompress(b), dtype="<f8").copy()


def pack_vector(v: np.ndarray) -> bytes:
    return np.ascontiguousarray(v, dtype="<f4").tobytes()


@dataclass
class VectorSet:
    """All stored vectors of one encoding, with what the search needs about each spectrum."""

    spectrum_ids: np.ndarray  # int64
    compound_ids: np.ndarray  # int64
    preps: list[tuple[str, ...]]
    ranges: list[tuple[float | None, float | None]]
    matrix: np.ndarray  # (n, bins) float32


PEAKS_INSERT = (
    "INSERT INTO peaks(spectrum_id, position, intensity, width, strength, broad, shoulder, label)"
    " VALUES (?, ?, ?, ?, ?, ?, ?, ?)"
)
VECTORS_INSERT = "INSERT INTO vectors(spectrum_id, encoding, data) VALUES (?, ?, ?)"


def spectrum_row(
    compound_id: int,
    data: Spectrum | PeakList,
    *,
    prep: list[str],
    operator: str | None = None,
    notes: str | None = None,
    acquired_at: str | None = None,
) -> dict[str, Any]:
    """The ``spectra`` row of one spectrum or peak list (without its id)."""
    meta = data.meta
    rec: dict[str, Any] = {
        "compound_id": compound_id,
        "prep": ",".join(prep),
        "kind": "spectrum" if isinstance(data, Spectrum) else "peaks",
        "resolution": meta.resolution,
        "source_file": meta.source_file,
        "sha256": meta.sha256,
        "meta": json.dumps(meta.to_dict(), ensure_ascii=False, default=str),
        "acquired_at": acquired_at,
        "operator": operator,
        "notes": notes,
        "added_at": now(),
        "lo_cm1": None,
        "hi_cm1": None,
        "y_kind": None,
        "x": None,
        "y": None,
    }
    if isinstance(data, Spectrum):
        rec.update(
            lo_cm1=float(data.x[0]),
            hi_cm1=float(data.x[-1]),
            y_kind=data.y_kind,
            x=pack_array(data.x),
            y=pack_array(data.y),
        )
    return rec


def peak_rows(spectrum_id: int, peaks: PeakList) -> list[tuple]:
    """The ``peaks`` rows of one peak list, in :data:`PEAKS_INSERT` column order."""
    return [
        (spectrum_id, pos, inten, None if w != w else w, word, int(b), int(sh), label)
        for pos, inten, w, word, b, sh, label in peaks  # PeakList yields Peak tuples
    ]


def check_storable(data: Spectrum | PeakList, peaks: PeakList, vector: np.ndarray) -> None:
    """Refuse what a library does not store: a full spectrum of more than
    :data:`MAX_STORED_POINTS` points, a peak list of more than :data:`MAX_STORED_PEAKS` bands,
    a vector that is not a finite one-dimensional array."""
    if isinstance(data, Spectrum) and data.x.size > MAX_STORED_POINTS:
        raise ValidationError(
            f"spectrum has {data.x.size} points; a library stores at most "
            f"{MAX_STORED_POINTS} (resample it to a coarser spacing)"
        )
    if len(peaks) > MAX_STORED_PEAKS:
        raise ValidationError(
            f"peak list has {len(peaks)} bands; a library stores at most {MAX_STORED_PEAKS} "
            "per spectrum"
        )
    vec = np.asarray(vector)
    if vec.ndim != 1 or not np.all(np.isfinite(vec)):
        raise ValidationError("the encoded vector is not a finite one-dimensional array")


class Store:
    """Low-level access to one library file. Use :class:`reflib.library.Library` instead."""

    def __init__(self, conn: sqlite3.Connection, path: str):
        self.conn = conn
        self.path = path
        # What sqlite_utils.Database sets on a connection it wraps, set here so the connection
        # is the same whether or not :attr:`db` is ever made.
        conn.execute("PRAGMA recursive_triggers = ON")
        self._db: sqlite_utils.Database | None = None
        self._txn: str | None = None  # None, "read" or "write"

    @property
    def db(self) -> sqlite_utils.Database:
        """The connection as a :class:`sqlite_utils.Database`, made on first use.

        Only writes that create tables or insert rows need it; importing sqlite_utils costs
        about 0.05-0.2 s, which a search (a read) does not pay.
        """
        if self._db is None:
            import sqlite_utils

            self._db = sqlite_utils.Database(self.conn)
        return self._db

    # --- opening -------------------------------------------------------------------------------

    @staticmethod
    def _connect(path: str) -> sqlite3.Connection:
        conn = sqlite3.connect(path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
        conn.execute("PRAGMA foreign_keys = ON")
        conn.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        if path != ":memory:":
            # switching to WAL needs a moment of exclusive access: retry while others hold it
            _retry_locked(
                "switching it to WAL mode", path, lambda: conn.execute("PRAGMA journal_mode = WAL")
            )
            conn.execute("PRAGMA synchronous = NORMAL")
        return conn

    @classmethod
    def create(cls, path: str | Path, encoding: Encoding = DEFAULT_ENCODING) -> Store:
        """Create a new, empty library file. Refuses to overwrite an existing one.

        The file is built as schema 1 and brought to :data:`SCHEMA_VERSION` by the same
        migrations an old library goes through, in one transaction.
        """
        p = str(path)
        if p != ":memory:" and Path(p).exists():
            raise LibraryError(f"{p} already exists; open it instead of creating it")
        if p != ":memory:" and not Path(p).parent.exists():
            raise LibraryError(f"folder {Path(p).parent} does not exist")
        try:
            conn = cls._connect(p)
        except sqlite3.Error as exc:
            raise LibraryError(f"cannot create {p}: {exc}") from None
        store = cls(conn, p)
        with store.write(bump=False):
            create_schema_v1(store.db, encoding)
            store._apply_migrations(1)
        return store

    @classmethod
    def open(cls, path: str | Path, *, migrate: bool = True) -> Store:
        """Open an existing library, checking that this reflib can read its schema.

        A library of an older schema is migrated (after a backup copy is written next to it)
        unless ``migrate`` is false; one of a newer schema is refused.
        """
        p = str(path)
        if p == ":memory:":
            raise LibraryError("an in-memory library cannot be reopened; create it instead")
        if not Path(p).exists():
            raise LibraryError(
                f"no library at {p}; create one with 'reflib init {p}' "
                "or point to yours with --library or REFLIB_LIBRARY"
            )
        if Path(p).is_dir():
            raise LibraryError(f"{p} is a folder, not a library file")
        try:
            conn = cls._connect(p)
            tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master")}
        except sqlite3.DatabaseError as exc:
            raise LibraryError(f"{p} is not a reflib library (SQLite says: {exc})") from None
        if "meta" not in tables:
            conn.close()
            raise LibraryError(f"{p} is an SQLite file but not a reflib library (no meta table)")
        store = cls(conn, p)
        version = store.schema_version
        if version > SCHEMA_VERSION:
            writer = store.get_meta("reflib_version")
            conn.close()
            from reflib import __version__

            need = f" {writer} or later" if writer and writer != __version__ else ""
            raise LibraryError(
                f"{p} was written by a newer reflib (library schema {version}); this reflib "
                f"{__version__} reads schema {SCHEMA_VERSION} and older: upgrade reflib{need} "
                "to open it"
            )
        if version < 1:
            conn.close()
            raise LibraryError(f"{p} has no valid schema_version in its meta table")
        if version < SCHEMA_VERSION and migrate:
            store.migrate()
        return store

    def close(self) -> None:
        self.conn.close()

    @property
    def schema_version(self) -> int:
        """The schema version recorded in the file (0 when missing or unreadable)."""
        try:
            return int(self.get_meta("schema_version", "0") or 0)
        except ValueError:
            return 0

    # --- schema versions -----------------------------------------------------------------------

    def migrate(self) -> str | None:
        """Bring an older library to :data:`SCHEMA_VERSION`; returns the backup path written.

        First a backup copy is written next to the file through SQLite's online backup API
        (``<name>.v<old>-backup-YYYYmmdd-HHMMSS``), then every step runs in one transaction:
        an interruption leaves the file at its old version, never half-migrated. Returns None
        when there was nothing to do (another process may have migrated it meanwhile).
        """
        old = self.schema_version
        if old >= SCHEMA_VERSION:
            return None
        stamp = _dt.datetime.now().strftime("%Y%m%d-%H%M%S")
        dest = Path(f"{self.path}.v{old}-backup-{stamp}")
        n = 1
        while dest.exists():
            n += 1
            dest = Path(f"{self.path}.v{old}-backup-{stamp}-{n}")
        try:
            self.backup(dest)
        except LibraryError as exc:
            raise LibraryError(
                f"not migrating {self.path} from schema {old}: the backup copy failed ({exc})"
            ) from None
        try:
            with self.write():
                current = self.schema_version  # re-read under the write lock
                if current >= SCHEMA_VERSION:
                    return str(dest)
                self._apply_migrations(current)
        except sqlite3.Error as exc:
            raise LibraryError(
                f"migrating {self.path} from schema {old} failed ({exc}); the file is "
                f"unchanged and a copy is at {dest}"
            ) from None
        return str(dest)

    def _apply_migrations(self, version: int) -> None:
        """Run every migration step above ``version`` (call inside :meth:`write`)."""
        from reflib import __version__

        for target in range(version + 1, SCHEMA_VERSION + 1):
            MIGRATIONS[target](self.conn)
            self.set_meta("schema_version", str(target))
        self.set_meta("reflib_version", __version__)

    def backup(self, dest: str | Path) -> str:
        """Copy the library to ``dest`` through SQLite's online backup API.

        Safe while other processes read and write: the copy is one consistent snapshot.
        Refuses to overwrite an existing ``dest``. Returns the path written.
        """
        d = Path(dest)
        if self.path == ":memory:":
            raise LibraryError("an in-memory library cannot be backed up to itself; use a file")
        if d.exists():
            raise LibraryError(f"{d} already exists; choose a new name for the backup")
        if not d.parent.exists():
            raise LibraryError(f"folder {d.parent} does not exist")
        try:
            target = sqlite3.connect(str(d))
        except sqlite3.Error as exc:
            raise LibraryError(f"cannot write {d}: {exc}") from None
        try:
            _retry_locked(
                f"copying it to {d}", self.path, lambda: self.conn.backup(target, pages=-1)
            )
        except sqlite3.Error as exc:
            target.close()
            d.unlink(missing_ok=True)
            raise LibraryError(f"backup to {d} failed: {exc}") from None
        target.close()
        return str(d)

    # --- transactions and meta -----------------------------------------------------------------

    @contextlib.contextmanager
    def write(self, *, bump: bool = True) -> Iterator[None]:
        """One write transaction (BEGIN IMMEDIATE ... COMMIT), bumping the revision counter.

        When another process holds the write lock, ``BEGIN IMMEDIATE`` waits (busy timeout)
        and is retried with backoff for up to :data:`WRITE_RETRY_S` seconds, then a
        LibraryError says the file stayed locked. On any exception the transaction is rolled
        back: nothing half-written stays. Nested calls join the outer transaction.
        """
        if self._txn == "write":
            yield
            return
        if self._txn == "read" or self.conn.in_transaction:
            raise RuntimeError("Store.write() inside a read transaction")
        _retry_locked("waiting to write", self.path, lambda: self.conn.execute("BEGIN IMMEDIATE"))
        self._txn = "write"
        try:
            yield
            if bump:
                self.conn.execute(
                    "UPDATE meta SET value = CAST(value AS INTEGER) + 1 WHERE key = 'revision'"
                )
            self.conn.execute("COMMIT")
        except BaseException:
            if self.conn.in_transaction:
                self.conn.execute("ROLLBACK")
            raise
        finally:
            self._txn = None

    @contextlib.contextmanager
    def read(self) -> Iterator[None]:
        """One read transaction: every query inside sees the same snapshot of the library.

        In WAL mode a reader never waits for writers and never sees half of a write; use this
        around reads that must agree with each other. Inside :meth:`write` it simply joins.
        """
        if self._txn is not None or self.conn.in_transaction:
            yield
            return
        self.conn.execute("BEGIN")
        self._txn = "read"
        try:
            # the snapshot starts at the first read, so take it now
            self.conn.execute("SELECT value FROM meta WHERE key = 'revision'").fetchone()
            yield
        finally:
            self._txn = None
            if self.conn.in_transaction:
                self.conn.execute("COMMIT")

    def get_meta(self, key: str, default: str | None = None) -> str | None:
        row = self.conn.execute("SELECT value FROM meta WHERE key = ?", (key,)).fetchone()
        return row[0] if row else default

    def set_meta(self, key: str, value: str) -> None:
        self.conn.execute(
            "INSERT INTO meta(key, value) VALUES(?, ?) "
            "ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            (key, value),
        )

    @property
    def revision(self) -> int:
        return int(self.get_meta("revision", "0") or 0)

    @property
    def encoding(self) -> Encoding:
        raw = self.get_meta("encoding") or "{}"
        cached = getattr(self, "_encoding_cache", None)
        if cached is None or cached[0] != raw:  # parsed once per stored text
            cached = self._encoding_cache = (raw, Encoding.from_dict(json.loads(raw)))
        return cached[1]

    # --- compounds -----------------------------------------------------------------------------

    def find_compound(self, ref: str | int) -> dict[str, Any]:
        """A compound by id (int or digits) or by name or alias (case-insensitive)."""
        row = None
        if isinstance(ref, int) or (isinstance(ref, str) and ref.strip().isdigit()):
            row = self.conn.execute("SELECT * FROM compounds WHERE id = ?", (int(ref),)).fetchone()
        if row is None and isinstance(ref, str):
            row = self.conn.execute(
                "SELECT * FROM compounds WHERE name = ? COLLATE NOCASE", (ref.strip(),)
            ).fetchone()
            if row is None:
                for cand in self.conn.execute(
                    "SELECT * FROM compounds WHERE aliases IS NOT NULL AND aliases != '[]'"
                ):
                    aliases = json.loads(cand[2] or "[]")
                    if any(a.lower() == ref.strip().lower() for a in aliases):
                        row = cand
                        break
        if row is None:
            raise NotFoundError(f"no compound {ref!r} in the library; 'reflib list' shows them")
        cols = [d[0] for d in self.conn.execute("SELECT * FROM compounds LIMIT 0").description]
        return dict(zip(cols, row))

    def compound_by_name(self, name: str) -> dict[str, Any] | None:
        try:
            return self.find_compound(name)
        except NotFoundError:
            return None

    def insert_compound(self, record: dict[str, Any]) -> int:
        rec = dict(record)
        rec.setdefault("added_at", now())
        for key in ("aliases", "tags"):
            rec[key] = json.dumps(list(rec.get(key) or []), ensure_ascii=False)
        return int(self.db["compounds"].insert(rec).last_pk)

    def list_compounds(self, *, role: str | None = None, match: str | None = None) -> list[dict]:
        sql = (
            "SELECT c.*, COUNT(s.id) AS n_spectra, GROUP_CONCAT(DISTINCT s.prep) AS preps "
            "FROM compounds c LEFT JOIN spectra s ON s.compound_id = c.id"
        )
        where, args = [], []
        if role:
            where.append("c.role = ?")
            args.append(normalise_role(role))
        if match:
            where.append("(c.name LIKE ? ESCAPE '\\' OR c.aliases LIKE ? ESCAPE '\\')")
            pat = "%" + match.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_") + "%"
            args += [pat, pat]
        if where:
            sql += " WHERE " + " AND ".join(where)
        sql += " GROUP BY c.id ORDER BY c.name COLLATE NOCASE"
        cur = self.conn.execute(sql, args)
        cols = [d[0] for d in cur.description]
        return [dict(zip(cols, r)) for r in cur.fetchall()]

    def remove_compound(self, compound_id: int) -> None:
        with self.write():
            ids = [
                r[0]
                for r in self.conn.execute(
                    "SELECT id FROM spectra WHERE compound_id = ?", (compound_id,)
                )
            ]
            for sid in ids:
                self.conn.execute("DELETE FROM vectors WHERE spectrum_id = ?", (sid,))
                self.conn.execute("DELETE FROM peaks WHERE spectrum_id = ?", (sid,))
            self.conn.execute("DELETE FROM spectra WHERE compound_id = ?", (compound_id,))
            self.conn.execute("DELETE FROM compounds WHERE id = ?", (compound_id,))

    # --- spectra -------------------------------------------------------------------------------

    def spectrum_by_sha(self, sha256: str) -> dict[str, Any] | None:
        row = self.conn.execute(
            "SELECT s.id, s.compound_id, c.name FROM spectra s JOIN compounds c "
            "ON c.id = s.compound_id WHERE s.sha256 = ?",
            (sha256,),
        ).fetchone()
        return None if row is None else {"id": row[0], "compound_id": row[1], "name": row[2]}

    def insert_spectrum(
        self,
        compound_id: int,
        data: Spectrum | PeakList,
        peaks: PeakList,
        vector: np.ndarray,
        encoding_key: str,
        *,
        prep: list[str],
        operator: str | None = None,
        notes: str | None = None,
        acquired_at: str | None = None,
    ) -> int:
        """Insert one spectrum with its peaks and vector (call inside :meth:`write`).

        Refuses a full spectrum of more than :data:`MAX_STORED_POINTS` points and a peak list of
        more than :data:`MAX_STORED_PEAKS` bands, and a vector that does not fit the encoding.
        """
        check_storable(data, peaks, vector)
        rec = spectrum_row(
            compound_id,
            data,
            prep=prep,
            operator=operator,
            notes=notes,
            acquired_at=acquired_at,
        )
        sid = int(self.db["spectra"].insert(rec).last_pk)
        self.conn.executemany(PEAKS_INSERT, peak_rows(sid, peaks))
        self.conn.execute(VECTORS_INSERT, (sid, encoding_key, pack_vector(vector)))
        return sid

    def spectrum_record(self, spectrum_id: int) -> dict[str, Any]:
        cur = self.conn.execute("SELECT * FROM spectra WHERE id = ?", (int(spectrum_id),))
        row = cur.fetchone()
        if row is None:
            raise NotFoundError(f"no spectrum {spectrum_id} in the library")
        return dict(zip([d[0] for d in cur.description], row))

    def spectra_of(self, compound_id: int) -> list[dict[str, Any]]:
        cur = self.conn.execute(
            "SELECT id, prep, kind, source_file, sha256, lo_cm1, hi_cm1, resolution, operator, "
            "notes, added_at FROM spectra WHERE compound_id = ? ORDER BY id",
            (compound_id,),
        )
        cols = [d[0] for d in cur.description]
        return [dict(zip(cols, r)) for r in cur.fetchall()]

    def known_hashes(self) -> frozenset[str]:
        """The SHA-256 of every stored file (to skip files already in the library)."""
        rows = self.conn.execute("SELECT sha256 FROM spectra WHERE sha256 IS NOT NULL")
        return frozenset(r[0] for r in rows)

    def peaks_of(self, spectrum_id: int) -> PeakList:
        """The stored bands of one spectrum (:class:`NotFoundError` if there is no such id)."""
        return self.peaks_of_many([spectrum_id])[int(spectrum_id)]

    def peaks_of_many(self, spectrum_ids: Iterable[int]) -> dict[int, PeakList]:
        """The stored bands of several spectra, by id, read with two queries (the spectra's
        ``meta`` and ``prep`` columns, not their stored traces, and their band rows)."""
        return {i: peaks_from_rows(*rec) for i, rec in self.peak_rows_of_many(spectrum_ids).items()}

    def peak_rows_of_many(self, spectrum_ids: Iterable[int]) -> dict[int, tuple[list, dict]]:
        """What :meth:`peaks_of_many` reads, before it becomes peak lists: by id, the band rows
        and the spectrum's record, for :func:`peaks_from_rows`. Reading is the part that must
        happen inside a snapshot; making the lists can wait until one is needed."""
        ids = sorted({int(i) for i in spectrum_ids})
        if not ids:
            return {}
        marks = ",".join("?" * len(ids))
        recs = {
            r[0]: {"meta": r[1], "prep": r[2]}
            for r in self.conn.execute(
                f"SELECT id, meta, prep FROM spectra WHERE id IN ({marks})", ids
            )
        }
        missing = [i for i in ids if i not in recs]
        if missing:
            raise NotFoundError(f"no spectrum {missing[0]} in the library")
        rows: dict[int, list] = {i: [] for i in ids}
        found = self.conn.execute(
            "SELECT spectrum_id, position, intensity, width, strength, broad, shoulder, label "
            f"FROM peaks WHERE spectrum_id IN ({marks}) ORDER BY spectrum_id, position",
            ids,
        ).fetchall()
        for sid, group in groupby(found, key=itemgetter(0)):
            rows[sid] = [r[1:] for r in group]
        return {i: (rows[i], recs[i]) for i in ids}

    def full_spectrum(self, spectrum_id: int) -> Spectrum | None:
        rec = self.spectrum_record(spectrum_id)
        if rec["kind"] != "spectrum" or rec["x"] is None:
            return None
        meta = Metadata(**{**_meta_from_json(rec["meta"]), "prep": _split_prep(rec["prep"])})
        return Spectrum(unpack_array(rec["x"]), unpack_array(rec["y"]), rec["y_kind"], meta)

    def load_vectors(self, encoding_key: str) -> VectorSet:
        """Every vector of the given encoding, in spectrum-id order.

        Rows and the encoding are read in one read transaction, so a write by another process
        in between cannot mix two states of the library.
        """
        with self.read():
            rows = self.conn.execute(
                "SELECT s.id, s.compound_id, s.prep, s.lo_cm1, s.hi_cm1, v.data, v.encoding "
                "FROM spectra s JOIN vectors v ON v.spectrum_id = s.id ORDER BY s.id"
            ).fetchall()
            enc = self.encoding
        stale = [r[0] for r in rows if r[6] != encoding_key]
        if stale:
            raise LibraryError(
                f"{len(stale)} spectra were encoded with another encoding; run 'reflib reindex'"
            )
        n = len(rows)
        matrix = np.empty((n, enc.size), dtype=np.float32)
        for i, r in enumerate(rows):
            matrix[i] = np.frombuffer(r[5], dtype="<f4")
        return VectorSet(
            spectrum_ids=np.array([r[0] for r in rows], dtype=np.int64),
            compound_ids=np.array([r[1] for r in rows], dtype=np.int64),
            preps=[tuple(_split_prep(r[2])) for r in rows],
            ranges=[(r[3], r[4]) for r in rows],
            matrix=matrix,
        )

    def counts(self) -> dict[str, int]:
        """Rows per table, from one snapshot."""
        with self.read():
            return {
                t: int(self.conn.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0])
                for t in ("compounds", "spectra", "peaks", "vectors")
            }


def peaks_from_rows(rows: list, rec: Any) -> PeakList:
    """A :class:`PeakList` from rows of ``peaks`` (position, intensity, width, strength, broad,
    shoulder and, from schema 3 on, label) and the spectrum's record (its ``meta`` and ``prep``
    columns). Also reads another library's rows (``reflib merge``), of any schema."""
    meta = Metadata(**{**_meta_from_json(rec["meta"]), "prep": _split_prep(rec["prep"])})
    if not rows:
        return PeakList(np.zeros(0), np.zeros(0), meta=meta)
    cols = list(zip(*rows))
    pos, inten, width, strength, broad, shoulder = cols[:6]
    label = cols[6] if len(cols) > 6 else (None,) * len(pos)
    return PeakList(
        np.array(pos, float),
        np.array(inten, float),
        np.array(width, float),  # NULL (width unknown) becomes NaN
        list(strength),
        np.array(broad, bool),
        np.array(shoulder, bool),
        meta=meta,
        labels=list(label) if any(v is not None for v in label) else None,
    )


def _split_prep(text: str | None) -> list[str]:
    return [t for t in (text or "").split(",") if t]


def _meta_from_json(text: str | None) -> dict[str, Any]:
    d = json.loads(text or "{}")
    fields = set(Metadata.__dataclass_fields__)
    out = {k: v for k, v in d.items() if k in fields and k != "prep"}
    return out


# --- schema ------------------------------------------------------------------------------------


def create_schema_v1(db: sqlite_utils.Database, encoding: Encoding) -> None:
    """The schema-1 tables, the base every migration starts from (call inside a transaction).

    Kept exactly as schema 1 was first written, so that a new library and a migrated old one
    go through the same steps and end up alike.
    """
    db["meta"].create({"key": str, "value": str}, pk="key")
    db["compounds"].create(
        {
            "id": int,
            "name": str,
            "aliases": str,
            "smiles": str,
            "canonical_smiles": str,
            "formula": str,
            "inchikey": str,
            "role": str,
            "tags": str,
            "notebook": str,
            "notes": str,
            "added_by": str,
            "added_at": str,
        },
        pk="id",
        not_null={"name", "role", "added_at"},
    )
    db.execute("CREATE UNIQUE INDEX idx_compounds_name ON compounds(name COLLATE NOCASE)")
    db["compounds"].create_index(["inchikey"])
    db["spectra"].create(
        {
            "id": int,
            "compound_id": int,
            "prep": str,
            "kind": str,
            "resolution": float,
            "source_file": str,
            "sha256": str,
            "lo_cm1": float,
            "hi_cm1": float,
            "y_kind": str,
            "x": bytes,
            "y": bytes,
            "meta": str,
            "acquired_at": str,
            "operator": str,
            "notes": str,
            "added_at": str,
        },
        pk="id",
        foreign_keys=[("compound_id", "compounds", "id")],
        not_null={"compound_id", "kind", "added_at"},
    )
    db["spectra"].create_index(["compound_id"])
    db["spectra"].create_index(["sha256"])
    db["peaks"].create(
        {
            "id": int,
            "spectrum_id": int,
            "position": float,
            "intensity": float,
            "width": float,
            "strength": str,
            "broad": int,
            "shoulder": int,
        },
        pk="id",
        foreign_keys=[("spectrum_id", "spectra", "id")],
        not_null={"spectrum_id", "position", "intensity"},
    )
    db["peaks"].create_index(["spectrum_id"])
    db["vectors"].create(
        {"spectrum_id": int, "encoding": str, "data": bytes},
        pk="spectrum_id",
        foreign_keys=[("spectrum_id", "spectra", "id")],
    )
    for key, value in {
        "schema_version": "1",
        "encoding": json.dumps(encoding.to_dict(), sort_keys=True),
        "revision": "0",
        "created_at": now(),
    }.items():
        db["meta"].insert({"key": key, "value": value})


def _migrate_1_to_2(conn: sqlite3.Connection) -> None:
    """Schema 2: a library id, and peaks indexed by (spectrum_id, position).

    ``library_id`` lets an index cache or a backup tell which library it belongs to even after
    the file is renamed or copied over; the composite index answers :meth:`Store.peaks_of`
    (one spectrum's bands in position order) straight from the index.
    """
    conn.execute(
        "INSERT OR IGNORE INTO meta(key, value) VALUES ('library_id', ?)", (uuid.uuid4().hex,)
    )
    conn.execute("DROP INDEX IF EXISTS idx_peaks_spectrum_id")
    conn.execute(
        "CREATE INDEX IF NOT EXISTS idx_peaks_spectrum_position ON peaks(spectrum_id, position)"
    )


def _migrate_2_to_3(conn: sqlite3.Connection) -> None:
    """Schema 3: ``peaks.label``, the author's assignment of a typed band, NULL for every band
    stored before (a nullable column added in place: every row is kept as it was)."""
    columns = {r[1] for r in conn.execute("PRAGMA table_info(peaks)")}
    if "label" not in columns:
        conn.execute("ALTER TABLE peaks ADD COLUMN label TEXT")


def _migrate_3_to_4(conn: sqlite3.Connection) -> None:
    """Schema 4: the change history and the source library of merged spectra.

    ``history`` has no foreign key to ``compounds``: a removed compound's record stays. Every
    existing row is kept; old spectra get ``source_library`` NULL (added here, not merged).
    """
    conn.execute(
        "CREATE TABLE IF NOT EXISTS history (id INTEGER PRIMARY KEY, at TEXT NOT NULL, "
        "operator TEXT, action TEXT NOT NULL, compound_id INTEGER, compound_name TEXT, "
        "field TEXT, old TEXT, new TEXT, detail TEXT)"
    )
    conn.execute("CREATE INDEX IF NOT EXISTS idx_history_compound ON history(compound_id)")
    conn.execute(
        "CREATE INDEX IF NOT EXISTS idx_history_name ON history(compound_name COLLATE NOCASE)"
    )
    cols = {r[1] for r in conn.execute("PRAGMA table_info(spectra)")}
    if "source_library" not in cols:
        conn.execute("ALTER TABLE spectra ADD COLUMN source_library TEXT")


def _migrate_4_to_5(conn: sqlite3.Connection) -> None:
    """Schema 5: each spectrum's nearest other compound's score, written by a calibration.

    The calibrated verdict (:mod:`reflib.library.calibrate`) reads how crowded the top hit's
    neighbourhood is from here; the model itself is JSON in ``meta`` (key ``calibration``).
    Rows go with their spectrum.
    """
    conn.execute(
        "CREATE TABLE IF NOT EXISTS neighbours ("
        "spectrum_id INTEGER PRIMARY KEY REFERENCES spectra(id) ON DELETE CASCADE, "
        "score REAL NOT NULL)"
    )


#: Migration steps: MIGRATIONS[n] turns a schema n-1 library into schema n.
MIGRATIONS = {
    2: _migrate_1_to_2,
    3: _migrate_2_to_3,
    4: _migrate_3_to_4,
    5: _migrate_4_to_5,
}
