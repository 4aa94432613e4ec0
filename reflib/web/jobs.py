"""The jobs the server runs, each a plain function of a Library (run on the library thread
by :class:`reflib.web.worker.LibraryWorker`) returning JSON-ready data: the same calls and the
same JSON as the CLI."""

from __future__ import annotations

from typing import Any

from reflib.errors import ValidationError


class Duplicate(ValidationError):
    """The uploaded file is already in the library (answered with 409)."""


def search(lib, query, args: dict[str, Any]):
    """The search result object (``to_dict()`` is ``reflib search --json``)."""
    return lib.search(query, **args)


def search_refs(lib, result) -> dict[int, Any]:
    """The references the overlay plot of a search draws (as ``reflib search --plot``)."""
    from reflib.report.common import MAX_PLOT_HITS, reference_data

    return {h.spectrum_id: reference_data(lib, h.spectrum_id) for h in result.hits[:MAX_PLOT_HITS]}


def leftover(lib, sample, start: str, product: str | None, prep: str | None):
    from reflib.library.lookup import leftover_in_library

    if not start:
        raise ValidationError("choose the starting material (field 'start')")
    return leftover_in_library(lib, sample, start, product or None, prep=prep)


def leftover_refs(lib, result):
    from reflib.report.common import reference_data

    start = reference_data(lib, result.start["spectrum_id"])
    product = (
        reference_data(lib, result.product["spectrum_id"]) if result.product is not None else None
    )
    return start, product


def add(lib, data, fields: dict[str, Any], operator: str) -> dict[str, Any]:
    """Add a confirmed compound's spectrum; Duplicate when the file is already there."""
    sha = data.meta.sha256
    dup = lib.store.spectrum_by_sha(sha) if sha else None
    if dup:
        raise Duplicate(
            f"this file is already in the library as spectrum {dup['id']} of {dup['name']!r}"
        )
    res = lib.add(
        data,
        name=fields.get("name") or "",
        smiles=fields.get("smiles"),
        role=fields.get("role"),
        prep=fields.get("prep"),
        notebook=fields.get("notebook"),
        note=fields.get("note"),
        operator=operator,
    )
    return res.to_dict()


def show(lib, compound_id: int) -> dict[str, Any]:
    c = lib.show(compound_id)
    c["history"] = lib.history(compound_id)
    return c


def groups(data, prep: str | None) -> dict[str, Any]:
    """The functional-group analysis of an upload: exactly the JSON of ``reflib groups``."""
    from reflib.chem.groups import groups as analyse_data

    out = analyse_data(data, prep=prep or ()).to_dict()
    if getattr(data, "meta", None) is not None and data.meta.source_file:
        out["query"]["file"] = data.meta.source_file
    return out
