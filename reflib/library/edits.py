"""Corrections to a compound after it was added: name, structure, role, note and tags, each
change written to the history with its old and new value (:mod:`reflib.library.history`)."""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Iterable
from typing import Any

from reflib.errors import ValidationError
from reflib.library.entries import clean_name, structure_ids
from reflib.library.history import record
from reflib.library.store import normalise_role

#: Longest tag accepted (characters).
MAX_TAG = 60


def clean_tag(tag: str) -> str:
    t = " ".join(str(tag or "").split())
    if not t:
        raise ValidationError("a tag cannot be empty")
    if len(t) > MAX_TAG:
        raise ValidationError(f"tag {t[:20]!r}... is {len(t)} characters long; at most {MAX_TAG}")
    return t


def edit_compound(
    lib: Any,
    ref: str | int,
    *,
    name: str | None = None,
    smiles: str | None = None,
    role: str | None = None,
    note: str | None = None,
    tag: Iterable[str] = (),
    untag: Iterable[str] = (),
    operator: str | None = None,
) -> dict[str, Any]:
    """Change one compound; returns ``{"compound_id", "name", "changes": [{field, old, new}]}``.

    Everything is checked before anything is written, and all changes are one transaction.
    An edit that changes nothing leaves every row as it was and records nothing.
    """
    store = lib.store
    new_values: dict[str, Any] = {}
    if name is not None:
        new_values["name"] = clean_name(name)
    if role is not None:
        new_values["role"] = normalise_role(role)
    if note is not None:
        new_values["notes"] = str(note).strip() or None
    structure = structure_ids(smiles) if smiles is not None and smiles.strip() else None
    add_tags = [clean_tag(t) for t in tag]
    drop_tags = [clean_tag(t) for t in untag]
    if not (new_values or structure or add_tags or drop_tags):
        raise ValidationError("nothing to change: give --name, --smiles, --role, --note or --tag")
    with store.write():
        c = store.find_compound(ref)
        cid = int(c["id"])
        changes: list[dict[str, Any]] = []
        updates: dict[str, Any] = {}
        for key, value in new_values.items():
            if value != c[key]:
                updates[key] = value
                changes.append({"field": key, "old": c[key], "new": value})
        if structure and structure["canonical_smiles"] != c.get("canonical_smiles"):
            updates.update(structure)
            changes.append({"field": "smiles", "old": c.get("smiles"), "new": structure["smiles"]})
        tags = json.loads(c.get("tags") or "[]")
        new_tags = [t for t in tags if t.lower() not in {d.lower() for d in drop_tags}]
        for t in add_tags:
            if t.lower() not in {x.lower() for x in new_tags}:
                new_tags.append(t)
        missing = [d for d in drop_tags if d.lower() not in {t.lower() for t in tags}]
        if missing:
            raise ValidationError(
                f"{c['name']!r} has no tag {missing[0]!r}; it has {tags or 'none'}"
            )
        if new_tags != tags:
            updates["tags"] = json.dumps(new_tags, ensure_ascii=False)
            changes.append({"field": "tags", "old": tags, "new": new_tags})
        if updates:
            sets = ", ".join(f"{k} = ?" for k in updates)
            try:
                store.conn.execute(
                    f"UPDATE compounds SET {sets} WHERE id = ?", [*updates.values(), cid]
                )
            except sqlite3.IntegrityError:
                raise ValidationError(
                    f"another compound is already called {updates.get('name')!r}"
                ) from None
            label = updates.get("name", c["name"])
            for ch in changes:
                record(
                    store,
                    "edit",
                    compound_id=cid,
                    compound_name=label,
                    operator=operator,
                    field=ch["field"],
                    old=ch["old"],
                    new=ch["new"],
                )
    lib._index = None
    return {"compound_id": cid, "name": updates.get("name", c["name"]), "changes": changes}
