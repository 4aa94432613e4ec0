"""Which references a search or a listing may use: role, tag, functional group, substructure,
who added them and since when (``--role --tag --has-group --smarts --added-by --since``).

A :class:`Where` is checked once, when made; :func:`matching_spectra` turns it into the ids of
the reference spectra it allows. Groups and SMARTS are matched on the stored structure
(RDKit, :mod:`reflib.chem.structure`): a compound without a structure never matches them.
``added_by`` and ``since`` are properties of each spectrum (its operator and time of adding).
"""

from __future__ import annotations

import datetime as _dt
import json
from dataclasses import dataclass
from typing import Any

from reflib.errors import ValidationError
from reflib.library.store import Store, normalise_role


@dataclass(frozen=True)
class Where:
    """Conditions on the references; every given one must hold."""

    role: str | None = None
    tag: str | None = None
    has_group: str | None = None
    smarts: str | None = None
    added_by: str | None = None
    since: str | None = None

    def __post_init__(self) -> None:
        if self.role is not None:
            object.__setattr__(self, "role", normalise_role(self.role))
        if self.has_group is not None:
            from reflib.chem.structure import check_group

            object.__setattr__(self, "has_group", check_group(self.has_group))
        if self.smarts is not None:
            from reflib.chem.structure import compile_smarts

            compile_smarts(self.smarts)
        if self.since is not None:
            object.__setattr__(self, "since", parse_since(self.since))
        for key in ("tag", "added_by"):
            v = getattr(self, key)
            if v is not None and not str(v).strip():
                raise ValidationError(f"--{key.replace('_', '-')} needs a value")

    @classmethod
    def of(cls, where: Where | dict[str, Any] | None) -> Where | None:
        """A Where from a Where, a dict of its fields (None values ignored) or None."""
        if where is None or isinstance(where, Where):
            return where if where is None or not where.is_empty() else None
        unknown = set(where) - set(cls.__dataclass_fields__)
        if unknown:
            raise ValidationError(
                f"unknown filter {sorted(unknown)[0]!r}; use: {', '.join(cls.__dataclass_fields__)}"
            )
        w = cls(**{k: v for k, v in where.items() if v not in (None, "")})
        return None if w.is_empty() else w

    def is_empty(self) -> bool:
        return all(getattr(self, k) is None for k in self.__dataclass_fields__)

    def describe(self) -> str:
        """``role=product, has-group=ketone``: the conditions as the CLI spells them."""
        return ", ".join(
            f"{k.replace('_', '-')}={getattr(self, k)}"
            for k in self.__dataclass_fields__
            if getattr(self, k) is not None
        )


def parse_since(text: str) -> str:
    """An ISO date or date-time as the UTC ISO text stored in ``added_at``."""
    t = str(text).strip()
    try:
        if len(t) == 10:
            d = _dt.datetime.combine(_dt.date.fromisoformat(t), _dt.time(), _dt.timezone.utc)
        else:
            d = _dt.datetime.fromisoformat(t.replace("Z", "+00:00"))
            if d.tzinfo is None:
                d = d.replace(tzinfo=_dt.timezone.utc)
    except ValueError:
        raise ValidationError(
            f"--since expects a date like 2026-03-01 (or 2026-03-01T14:00), got {text!r}"
        ) from None
    return d.astimezone(_dt.timezone.utc).isoformat(timespec="seconds")


def matching_spectra(store: Store, where: Where) -> set[int]:
    """Ids of the reference spectra that satisfy ``where``."""
    sql = (
        "SELECT s.id, c.smiles, c.canonical_smiles FROM spectra s "
        "JOIN compounds c ON c.id = s.compound_id"
    )
    conds, args = [], []
    if where.role:
        conds.append("c.role = ?")
        args.append(where.role)
    if where.tag:
        conds.append(
            "EXISTS (SELECT 1 FROM json_each(COALESCE(c.tags, '[]')) "
            "WHERE value = ? COLLATE NOCASE)"
        )
        args.append(" ".join(where.tag.split()))
    if where.added_by:
        conds.append("COALESCE(s.operator, c.added_by) = ? COLLATE NOCASE")
        args.append(" ".join(where.added_by.split()))
    if where.since:
        conds.append("s.added_at >= ?")
        args.append(where.since)
    if where.has_group or where.smarts:
        conds.append("COALESCE(c.canonical_smiles, c.smiles) IS NOT NULL")
    if conds:
        sql += " WHERE " + " AND ".join(conds)
    rows = store.conn.execute(sql, args).fetchall()
    if not (where.has_group or where.smarts):
        return {int(r[0]) for r in rows}
    from reflib.chem import structure

    out = set()
    for sid, smiles, canonical in rows:
        text = canonical or smiles
        try:
            if where.has_group and not structure.has_group(text, where.has_group):
                continue
            if where.smarts and not structure.matches_smarts(text, where.smarts):
                continue
        except ValidationError:  # a stored structure RDKit no longer reads: not a match
            continue
        out.add(int(sid))
    return out


def matching_compounds(store: Store, where: Where) -> set[int]:
    """Ids of compounds with at least one spectrum that satisfies ``where``."""
    ids = matching_spectra(store, where)
    if not ids:
        return set()
    rows = store.conn.execute("SELECT id, compound_id FROM spectra").fetchall()
    return {int(c) for s, c in rows if s in ids}


def tags_of(record: dict[str, Any]) -> list[str]:
    return json.loads(record.get("tags") or "[]")


def restricted_search(lib: Any, prepared: list, where: Where, *, top: int, profile) -> list:
    """:meth:`Library._search_prepared` over the references ``where`` allows (call inside a
    read transaction); each result's reason says how far the search was restricted."""
    import numpy as np

    from reflib.analysis.search import SearchResult

    idx = lib.index()
    allowed = matching_spectra(lib.store, where)
    rows = np.isin(idx.spectrum_ids, np.fromiter(allowed, dtype=np.int64, count=len(allowed)))
    n = int(rows.sum())
    note = f"search restricted to {n} of {idx.size} reference spectra ({where.describe()})"
    if n == 0:
        out = []
        for source, _, qrange, tokens in prepared:
            lo = qrange[0] if qrange[0] is not None else lib.encoding.lo
            hi = qrange[1] if qrange[1] is not None else lib.encoding.hi
            out.append(SearchResult(source, tokens, (lo, hi), "no-match", note, [], []))
        return out
    results = lib._search_prepared(prepared, top=top, profile=profile, rows=rows)
    for res in results:
        res.reason = f"{res.reason}; {note}"
    return results
