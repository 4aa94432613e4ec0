"""The change history of a library: every add, remove, merge and edit, with time, operator and
the old and new value (schema 3, table ``history``).

The table has no foreign key to ``compounds``, so a removed compound's record stays. Records are
written inside the same :meth:`~reflib.library.store.Store.write` transaction as the change they
describe: a change that is rolled back leaves no record, and no change is written without one.
"""

from __future__ import annotations

import getpass
import json
from typing import Any

from reflib.errors import NotFoundError
from reflib.library.store import Store, now

HISTORY_INSERT = (
    "INSERT INTO history(at, operator, action, compound_id, compound_name, field, old, new, "
    "detail) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)"
)
#: The actions a history record may have.
ACTIONS = ("add", "remove", "merge", "edit")


def operator_name(operator: str | None = None) -> str:
    """Who makes a change: ``operator`` when given, else the login name of this process."""
    if operator and str(operator).strip():
        return " ".join(str(operator).split())
    try:
        return getpass.getuser()
    except (KeyError, OSError):  # no login name (some containers): say so, do not guess
        return "unknown"


def _text(value: Any) -> str | None:
    if value is None:
        return None
    if isinstance(value, (list, tuple, dict)):
        return json.dumps(value, ensure_ascii=False)
    return str(value)


def record(
    store: Store,
    action: str,
    *,
    compound_id: int | None,
    compound_name: str | None,
    operator: str | None = None,
    field: str | None = None,
    old: Any = None,
    new: Any = None,
    detail: str | None = None,
) -> None:
    """Write one history record (call inside :meth:`Store.write`)."""
    if action not in ACTIONS:
        raise ValueError(f"unknown history action {action!r}")
    store.conn.execute(
        HISTORY_INSERT,
        (
            now(),
            operator_name(operator),
            action,
            compound_id,
            compound_name,
            field,
            _text(old),
            _text(new),
            detail,
        ),
    )


def record_many(store: Store, rows: list[tuple]) -> None:
    """Write prepared records: (action, compound_id, name, operator, field, old, new, detail)."""
    at = now()
    store.conn.executemany(
        HISTORY_INSERT,
        [
            (at, operator_name(op), action, cid, name, field, _text(old), _text(new), detail)
            for action, cid, name, op, field, old, new, detail in rows
        ],
    )


def history_of(store: Store, ref: str | int) -> list[dict[str, Any]]:
    """Every record of one compound, oldest first: by id or name of a compound in the library,
    or, for a removed compound, by the id or a name it had."""
    try:
        c = store.find_compound(ref)
        ids = {int(c["id"])}
    except NotFoundError:
        ids = set()
    text = str(ref).strip()
    if text.isdigit():
        ids.add(int(text))
    rows = store.conn.execute(
        "SELECT DISTINCT compound_id FROM history WHERE compound_name = ? COLLATE NOCASE "
        "OR (field = 'name' AND (old = ? COLLATE NOCASE OR new = ? COLLATE NOCASE))",
        (text, text, text),
    ).fetchall()
    ids |= {int(r[0]) for r in rows if r[0] is not None}
    if not ids:
        raise NotFoundError(f"no compound {ref!r} in the library or its history")
    q = ",".join("?" * len(ids))
    cur = store.conn.execute(
        f"SELECT id, at, operator, action, compound_id, compound_name, field, old, new, detail "
        f"FROM history WHERE compound_id IN ({q}) ORDER BY id",
        sorted(ids),
    )
    cols = [d[0] for d in cur.description]
    out = [dict(zip(cols, r)) for r in cur.fetchall()]
    if not out:
        raise NotFoundError(f"compound {ref!r} has no recorded history")
    return out


def record_add(
    store: Store,
    compound_id: int,
    name: str,
    spectrum_id: int,
    data: Any,
    new_compound: bool,
    operator: str | None,
) -> None:
    """The record of one :meth:`Library.add` (call inside its write)."""
    meta = getattr(data, "meta", None)
    source = getattr(meta, "source_file", None) or "no file name"
    record(
        store,
        "add",
        compound_id=compound_id,
        compound_name=name,
        operator=operator,
        field="spectrum",
        new=spectrum_id,
        detail=("new compound; " if new_compound else "") + f"spectrum from {source}",
    )
