"""Request fields -> Library call arguments, checked at the boundary (a ValidationError is 400)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from reflib.errors import ValidationError

FILTER_KEYS = ("role", "tag", "has_group", "smarts", "added_by", "since")
#: The keys of one compound in a listing: those of ``reflib list --json`` (plus tags).
LIST_KEYS = ("id", "name", "role", "smiles", "formula", "notebook", "n_spectra", "preps", "tags")


def text(fields: Mapping[str, str], key: str) -> str | None:
    v = fields.get(key)
    if v is None:
        return None
    v = str(v).strip()
    if len(v) > 2000:
        raise ValidationError(f"field {key!r} is {len(v)} characters long; at most 2000")
    return v or None


def where(fields: Mapping[str, str], keys=FILTER_KEYS):
    from reflib.library.filters import Where

    return Where.of({k: text(fields, k) for k in keys})


def top(fields: Mapping[str, str]) -> int:
    raw = text(fields, "top")
    if raw is None:
        return 5
    if not raw.isdigit() or not 1 <= int(raw) <= 50:
        raise ValidationError(f"top must be a whole number from 1 to 50, got {raw!r}")
    return int(raw)


def search_args(fields: Mapping[str, str]) -> dict[str, Any]:
    return {
        "prep": text(fields, "prep"),
        "top": top(fields),
        "weights": text(fields, "weights"),
        "where": where(fields),
    }


def listing(lib, fields: Mapping[str, str]) -> list[dict[str, Any]]:
    """The compounds a listing shows (the rows of ``reflib list --json``)."""
    rows = lib.compounds(
        role=text(fields, "role"),
        match=text(fields, "match"),
        where=where(fields, keys=FILTER_KEYS[1:]),
    )
    return [{**{k: r.get(k) for k in LIST_KEYS}, "added_by": r.get("added_by")} for r in rows]


def compound_ref(raw: str) -> int:
    from reflib.errors import NotFoundError

    if not str(raw).isdigit():
        raise NotFoundError(f"no compound {raw!r}; compound ids are whole numbers")
    return int(raw)
