"""Library health: is the file intact, consistent and up to date, and what can be repaired.

:func:`check_library` runs every check on a :class:`~reflib.library.Library` (or a bare
:class:`~reflib.library.store.Store`) and returns a :class:`HealthReport`; with ``fix=True`` it
first
repairs what is safe to repair, in one transaction, and then checks again.

Checks, and what ``fix`` does about each:

=================  ==============================================  ==============================
check              finds                                           fix
=================  ==============================================  ==============================
integrity          ``PRAGMA integrity_check`` not ``ok``           none: restore from a backup
foreign_keys       ``PRAGMA foreign_key_check`` violations         delete the orphan rows
orphan_peaks       peaks whose spectrum is gone                    delete them
orphan_vectors     vectors whose spectrum is gone                  delete them
orphan_spectra     spectra whose compound is gone                  delete them, peaks, vectors
empty_compounds    compounds without any spectrum                  delete them
spectra_no_peaks   spectra without a single band                   none: remove and add again
missing_vectors    spectra without a search vector                 encode them from their peaks
stale_vectors      vectors of another encoding than the library's  re-encode them
duplicates         the same file (SHA-256) stored more than once   none: reported only
index_cache        a search-index cache that no longer matches     rebuild it (notice only)
=================  ==============================================  ==============================

Example::

    from reflib.library import Library
    from reflib.library.health import check_library
    with Library.open("group.sqlite") as lib:
        report = check_library(lib, fix=True)
        print(report.healthy, [f.message for f in report.findings])
"""

from __future__ import annotations

import importlib
import sqlite3
from dataclasses import dataclass, field
from typing import Any

from reflib.analysis.encode import encode
from reflib.library.store import Store, pack_vector

#: Checks whose findings ``fix`` repairs.
FIXABLE = {
    "foreign_keys",
    "orphan_peaks",
    "orphan_vectors",
    "orphan_spectra",
    "empty_compounds",
    "missing_vectors",
    "stale_vectors",
    "index_cache",
}


@dataclass
class Finding:
    """One thing a check found. ``severity`` is ``'problem'`` or ``'notice'``."""

    check: str
    message: str
    count: int
    severity: str = "problem"
    ids: list[int] = field(default_factory=list)
    fixed: bool = False

    @property
    def fixable(self) -> bool:
        return self.check in FIXABLE

    def to_dict(self) -> dict[str, Any]:
        return {
            "check": self.check,
            "severity": self.severity,
            "message": self.message,
            "count": self.count,
            "ids": list(self.ids[:50]),
            "fixable": self.fixable,
            "fixed": self.fixed,
        }


@dataclass
class HealthReport:
    """What :func:`check_library` found (and, with ``fix``, what it repaired)."""

    path: str
    schema_version: int
    counts: dict[str, int]
    findings: list[Finding]
    index_status: str
    fixed: list[str] = field(default_factory=list)

    @property
    def problems(self) -> list[Finding]:
        """Problems still present (repaired ones excluded; notices excluded)."""
        return [f for f in self.findings if f.severity == "problem" and not f.fixed]

    @property
    def healthy(self) -> bool:
        return not self.problems

    def to_dict(self) -> dict[str, Any]:
        return {
            "library": self.path,
            "schema_version": self.schema_version,
            "counts": dict(self.counts),
            "index_cache": self.index_status,
            "healthy": self.healthy,
            "findings": [f.to_dict() for f in self.findings],
        }


def _store(lib_or_store: Any) -> Store:
    return lib_or_store if isinstance(lib_or_store, Store) else lib_or_store.store


def _ids(conn, sql: str, args: tuple = ()) -> list[int]:
    return [int(r[0]) for r in conn.execute(sql, args).fetchall()]


def _index_module():
    """reflib.library.index when it exists (it holds the search cache), else None."""
    try:
        return importlib.import_module("reflib.library.index")
    except ModuleNotFoundError as exc:
        if exc.name != "reflib.library.index":
            raise
        return None


def index_status(store: Store) -> str:
    """'fresh', 'stale', 'missing', 'memory', or 'none' when reflib has no index cache."""
    mod = _index_module()
    if mod is None or not hasattr(mod, "status"):
        return "none"
    return str(mod.status(store))


def run_checks(lib_or_store: Any) -> tuple[list[Finding], str]:
    """Every check, read from one snapshot of the file; returns (findings, index status)."""
    store = _store(lib_or_store)
    conn = store.conn
    out: list[Finding] = []
    try:
        rows = [str(r[0]) for r in conn.execute("PRAGMA integrity_check").fetchall()]
    except sqlite3.DatabaseError as exc:
        rows = [f"SQLite cannot read the file ({exc})"]
    if rows != ["ok"]:
        out.append(
            Finding(
                "integrity",
                "SQLite integrity check failed: "
                + "; ".join(rows[:3])
                + (f" (and {len(rows) - 3} more)" if len(rows) > 3 else "")
                + " - restore the library from a backup",
                len(rows),
            )
        )
        return out, "unknown"  # nothing else can be trusted in a damaged file
    with store.read():
        fk = conn.execute("PRAGMA foreign_key_check").fetchall()
        if fk:
            tables = sorted({str(r[0]) for r in fk})
            out.append(
                Finding(
                    "foreign_keys",
                    f"{len(fk)} rows point to rows that do not exist (in {', '.join(tables)})",
                    len(fk),
                )
            )
        simple = [
            (
                "orphan_peaks",
                "SELECT id FROM peaks WHERE spectrum_id NOT IN (SELECT id FROM spectra)",
                "peaks belong to no spectrum",
            ),
            (
                "orphan_vectors",
                "SELECT spectrum_id FROM vectors WHERE spectrum_id NOT IN (SELECT id FROM spectra)",
                "vectors belong to no spectrum",
            ),
            (
                "orphan_spectra",
                "SELECT id FROM spectra WHERE compound_id NOT IN (SELECT id FROM compounds)",
                "spectra belong to no compound",
            ),
            (
                "empty_compounds",
                "SELECT id FROM compounds WHERE id NOT IN (SELECT compound_id FROM spectra)",
                "compounds have no spectrum",
            ),
            (
                "spectra_no_peaks",
                "SELECT id FROM spectra WHERE id NOT IN (SELECT spectrum_id FROM peaks)",
                "spectra have no bands (remove them and add the files again)",
            ),
            (
                "missing_vectors",
                "SELECT id FROM spectra WHERE id NOT IN (SELECT spectrum_id FROM vectors)",
                "spectra have no search vector (search cannot find them)",
            ),
        ]
        for check, sql, words in simple:
            ids = _ids(conn, sql)
            if ids:
                out.append(Finding(check, f"{len(ids)} {words}", len(ids), ids=ids))
        key = store.encoding.key()
        stale = _ids(
            conn,
            "SELECT v.spectrum_id FROM vectors v JOIN spectra s ON s.id = v.spectrum_id "
            "WHERE v.encoding IS NOT ?",
            (key,),
        )
        if stale:
            out.append(
                Finding(
                    "stale_vectors",
                    f"{len(stale)} spectra were encoded with an older or other encoding "
                    "(search refuses them until they are re-encoded)",
                    len(stale),
                    ids=stale,
                )
            )
        dups = conn.execute(
            "SELECT sha256, GROUP_CONCAT(id) FROM spectra WHERE sha256 IS NOT NULL "
            "GROUP BY sha256 HAVING COUNT(*) > 1 ORDER BY MIN(id)"
        ).fetchall()
        if dups:
            groups = [sorted(int(i) for i in str(r[1]).split(",")) for r in dups]
            shown = "; ".join("spectra " + ", ".join(map(str, g)) for g in groups[:5])
            out.append(
                Finding(
                    "duplicates",
                    f"{len(groups)} files are stored more than once ({shown}); keep one with "
                    "'reflib remove' or leave them if that was meant",
                    len(groups),
                    ids=[i for g in groups for i in g[1:]],
                )
            )
        status = index_status(store)
    if status == "stale":
        out.append(
            Finding(
                "index_cache",
                "the search-index cache no longer matches the library (the next search "
                "rebuilds it)",
                1,
                severity="notice",
            )
        )
    return out, status


def repair(lib_or_store: Any, findings: list[Finding]) -> list[str]:
    """Repair the safely repairable findings in one transaction; returns the checks repaired."""
    store = _store(lib_or_store)
    conn = store.conn
    todo = {f.check for f in findings if f.fixable and f.severity in ("problem", "notice")}
    done: list[str] = []
    db_checks = todo - {"index_cache"}
    if db_checks:
        with store.write():
            # orphans first, outermost first, so that nothing refers to a deleted row
            dead_spectra = _ids(
                conn, "SELECT id FROM spectra WHERE compound_id NOT IN (SELECT id FROM compounds)"
            )
            for sid in dead_spectra:
                conn.execute("DELETE FROM vectors WHERE spectrum_id = ?", (sid,))
                conn.execute("DELETE FROM peaks WHERE spectrum_id = ?", (sid,))
                conn.execute("DELETE FROM spectra WHERE id = ?", (sid,))
            conn.execute("DELETE FROM peaks WHERE spectrum_id NOT IN (SELECT id FROM spectra)")
            conn.execute("DELETE FROM vectors WHERE spectrum_id NOT IN (SELECT id FROM spectra)")
            conn.execute("DELETE FROM compounds WHERE id NOT IN (SELECT compound_id FROM spectra)")
            enc = store.encoding
            key = enc.key()
            redo = _ids(
                conn,
                "SELECT s.id FROM spectra s LEFT JOIN vectors v ON v.spectrum_id = s.id "
                "WHERE v.spectrum_id IS NULL OR v.encoding IS NOT ? ORDER BY s.id",
                (key,),
            )
            with_peaks = set(_ids(conn, "SELECT DISTINCT spectrum_id FROM peaks"))
            for sid in redo:
                if sid not in with_peaks:
                    continue  # nothing to encode from; reported as spectra_no_peaks
                vec = encode(store.peaks_of(sid), enc)
                conn.execute(
                    "INSERT INTO vectors(spectrum_id, encoding, data) VALUES (?, ?, ?) "
                    "ON CONFLICT(spectrum_id) DO UPDATE SET encoding = excluded.encoding, "
                    "data = excluded.data",
                    (sid, key, pack_vector(vec)),
                )
        done += sorted(db_checks)
    if "index_cache" in todo:
        mod = _index_module()
        if mod is not None and hasattr(mod, "load"):
            mod.load(store)
            done.append("index_cache")
    return done


def check_library(lib_or_store: Any, *, fix: bool = False) -> HealthReport:
    """Check a library (a Library or a Store); with ``fix``, repair what is safe, then recheck.

    The report lists what was found before any repair, each finding marked ``fixed`` when the
    second check no longer shows it; :attr:`HealthReport.healthy` is true when no problem is
    left. Duplicates and a failed integrity check are never repaired automatically.
    """
    store = _store(lib_or_store)
    findings, status = run_checks(store)
    fixed: list[str] = []
    if fix and any(f.fixable for f in findings):
        if not any(f.check == "integrity" for f in findings):  # never write to a damaged file
            fixed = repair(store, findings)
            after, status = run_checks(store)
            left = {f.check for f in after}
            for f in findings:
                f.fixed = f.check in fixed and f.check not in left
            # a repair can never create a new kind of problem, but say so if it does
            findings += [f for f in after if f.check not in {g.check for g in findings}]
        if hasattr(lib_or_store, "_index"):
            lib_or_store._index = None
    try:
        counts = store.counts()
    except sqlite3.DatabaseError:
        counts = dict.fromkeys(("compounds", "spectra", "peaks", "vectors"), -1)
    return HealthReport(
        path=store.path,
        schema_version=store.schema_version,
        counts=counts,
        findings=findings,
        index_status=status,
        fixed=fixed,
    )


def report_lines(report: HealthReport) -> list[str]:
    """The report as lines for the terminal."""
    c = report.counts
    if min(c.values(), default=0) < 0:
        what = "contents unreadable"
    else:
        what = f"{c['compounds']} compounds, {c['spectra']} spectra, {c['peaks']} bands"
    lines = [
        f"library {report.path}: schema {report.schema_version}, {what}; "
        f"index cache: {report.index_status}"
    ]
    for f in report.findings:
        tag = "fixed" if f.fixed else ("notice" if f.severity == "notice" else "problem")
        lines.append(f"  {tag}: {f.check}: {f.message}")
    if report.healthy:
        lines.append("healthy")
    else:
        n = len(report.problems)
        fixable = any(f.fixable and not f.fixed for f in report.problems)
        tried = any(f.fixed for f in report.findings)
        hint = " (--fix repairs what is safe)" if fixable and not tried else ""
        lines.append(f"{n} problem{'s' if n != 1 else ''} left{hint}")
    return lines


__all__ = ["Finding", "HealthReport", "check_library", "run_checks", "repair", "report_lines"]
