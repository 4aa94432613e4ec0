"""Analyses with library compounds: a compound's best spectrum from a library, and the
leftover, mixture and comparison analyses run with compounds named by name or id.

These bridge the library and the analysis rooms, so they live on the library's side: the
analysis modules never import the library.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from reflib.analysis.compare import Comparison, compare
from reflib.analysis.leftover import LeftoverResult, leftover
from reflib.analysis.mixture import MixtureResult, explain_mixture
from reflib.analysis.profiles import Data, tokens_of
from reflib.errors import ValidationError
from reflib.spectrum import PeakList, Spectrum


def library_entry(
    lib: Any, ref: str | int, *, prefer_prep: Iterable[str] = ()
) -> tuple[Data, dict[str, Any]]:
    """A compound's best spectrum from a :class:`~reflib.library.Library` and what to print.

    The full spectrum is preferred over a typed peak list, and among those one sharing a
    preparation token with ``prefer_prep``. Raises NotFoundError for an unknown name or id.
    """
    c = lib.store.find_compound(ref)
    spectra = lib.store.spectra_of(int(c["id"]))
    if not spectra:
        raise ValidationError(f"compound {c['name']!r} has no spectrum in the library")
    wanted = set(prefer_prep)
    best = None
    for s in spectra:
        full = lib.store.full_spectrum(int(s["id"]))
        data = full if full is not None else lib.store.peaks_of(int(s["id"]))
        shared = len(wanted & set(data.meta.prep))
        rank = (full is not None, shared, -int(s["id"]))
        if best is None or rank > best[0]:
            best = (rank, data, int(s["id"]))
    _, data, sid = best
    info = {
        "name": c["name"],
        "compound_id": int(c["id"]),
        "spectrum_id": sid,
        "kind": "spectrum" if isinstance(data, Spectrum) else "peaks",
        "prep": list(data.meta.prep),
    }
    if c.get("smiles"):  # its bands are then labelled from its own groups only
        info["smiles"] = c["smiles"]
    return data, info


def leftover_in_library(
    lib: Any,
    sample: Data,
    start_ref: str | int,
    product_ref: str | int | None = None,
    *,
    prep: Iterable[str] | str | None = (),
) -> LeftoverResult:
    """:func:`leftover` with the starting material (and product) taken from a library by name
    or id."""
    tokens = tokens_of(sample, prep)
    start, s_info = library_entry(lib, start_ref, prefer_prep=tokens)
    product, p_info = (None, None)
    if product_ref is not None:
        product, p_info = library_entry(lib, product_ref, prefer_prep=tokens)
        if p_info["compound_id"] == s_info["compound_id"]:
            raise ValidationError(
                f"--start and --product name the same compound ({s_info['name']!r})"
            )
    others = [] if product is not None else interferents(lib, s_info["compound_id"], tokens)
    return leftover(
        sample, start, product, prep=tokens, start_info=s_info, product_info=p_info,
        others=others,
    )  # fmt: skip


#: Library roles whose compounds may sit in a crude beside the starting material and product.
INTERFERENT_ROLES = ("reagent", "solvent")


def interferents(lib: Any, exclude_id: int, prefer_prep: Iterable[str] = ()) -> list[Data]:
    """Spectra of the library's reagents and solvents (roles :data:`INTERFERENT_ROLES`), for
    the start-only leftover test to fit where their bands overlap the starting material's."""
    out: list[Data] = []
    for role in INTERFERENT_ROLES:
        for c in lib.store.list_compounds(role=role):
            if int(c["id"]) == int(exclude_id):
                continue
            try:
                data, _info = library_entry(lib, int(c["id"]), prefer_prep=prefer_prep)
            except ValidationError:
                continue
            out.append(data)
    return out


def mixture_in_library(
    lib: Any,
    sample: Data,
    *,
    max_components: int = 3,
    prep: Iterable[str] | str | None = (),
    candidates: int = 8,
) -> MixtureResult:
    """:func:`explain_mixture` over the top ``candidates`` hits of a library search."""
    tokens = tokens_of(sample, prep)
    res = lib.search(sample, prep=tokens, top=candidates)
    if not res.hits:
        raise ValidationError(f"the search found no candidates: {res.reason}")
    cands = []
    for h in res.hits:
        full = lib.store.full_spectrum(h.spectrum_id)
        data = full if full is not None else lib.store.peaks_of(h.spectrum_id)
        info = {
            "name": h.name,
            "compound_id": h.compound_id,
            "spectrum_id": h.spectrum_id,
            "score": round(float(h.score), 4),
        }
        cands.append((info, data))
    return explain_mixture(sample, cands, max_components=max_components, prep=tokens)


def compare_in_library(
    lib: Any,
    a: Spectrum | PeakList | str | int,
    b: Spectrum | PeakList | str | int,
    *,
    prep: Iterable[str] | str | None = (),
) -> Comparison:
    """:func:`compare` where either side may be a library compound (name or id)."""

    def resolve(x: Any) -> tuple[Spectrum | PeakList, dict[str, Any] | None]:
        if isinstance(x, (Spectrum, PeakList)):
            return x, None
        return library_entry(lib, x)

    da, ia = resolve(a)
    db, ib = resolve(b)
    return compare(da, db, prep=prep, a_info=ia, b_info=ib)
