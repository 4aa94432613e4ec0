"""What the command line calls: the plot and/or HTML report of one search, leftover check,
mixture explanation or comparison, references taken from a library."""

from __future__ import annotations

from pathlib import Path

from reflib.report.common import (
    MAX_PLOT_HITS,
    Data,
    provenance_of,
    range_of,
    reference_data,
    tokens_of,
)
from reflib.report.html import html_report
from reflib.report.plots import plot_compare, plot_leftover, plot_mixture, plot_search

# --- what the command line calls --------------------------------------------------------------


def search_outputs(
    lib,
    result,
    query: Data,
    *,
    plot: str | Path | None = None,
    report: str | Path | None = None,
    y: str = "absorbance",
) -> list[Path]:
    """The plot and/or HTML report of one search, references taken from ``lib``."""
    refs = {h.spectrum_id: reference_data(lib, h.spectrum_id) for h in result.hits[:MAX_PLOT_HITS]}
    written = []
    if plot is not None:
        written.append(plot_search(result, query, refs, plot, y=y))
    if report is not None:
        svg = plot_search(result, query, refs, None, y=y)
        prov = provenance_of(query, prep=result.query_prep, range_cm1=result.range_cm1)
        written.append(html_report("search", result, svg, prov, report))
    return written


def leftover_outputs(
    lib, result, sample: Data, *, plot=None, report=None, y: str = "absorbance", prep=()
) -> list[Path]:
    """The plot and/or HTML report of one leftover check, references taken from ``lib``."""
    start = reference_data(lib, result.start["spectrum_id"])
    product = (
        reference_data(lib, result.product["spectrum_id"]) if result.product is not None else None
    )
    return _outputs(
        "leftover",
        lambda out: plot_leftover(result, sample, start, product, out, y=y, prep=prep),
        result,
        sample,
        [sample, start] + ([product] if product is not None else []),
        plot,
        report,
        prep,
    )


def mixture_outputs(
    lib, result, sample: Data, *, plot=None, report=None, y: str = "absorbance", prep=()
) -> list[Path]:
    """The plot and/or HTML report of one mixture explanation, references from ``lib``."""
    comps = {
        c.info["spectrum_id"]: reference_data(lib, c.info["spectrum_id"])
        for c in result.components
        if c.info.get("spectrum_id") is not None
    }
    return _outputs(
        "mixture",
        lambda out: plot_mixture(result, sample, comps, out, y=y, prep=prep),
        result,
        sample,
        [sample],
        plot,
        report,
        prep,
    )


def compare_outputs(
    result, a: Data, b: Data, *, plot=None, report=None, y: str = "absorbance"
) -> list[Path]:
    """The plot and/or HTML report of one comparison (provenance: spectrum A's)."""
    written = []
    if plot is not None:
        written.append(plot_compare(result, a, b, plot, y=y))
    if report is not None:
        svg = plot_compare(result, a, b, None, y=y)
        prov = provenance_of(a, prep=result.prep, range_cm1=result.range_cm1)
        written.append(html_report("compare", result, svg, prov, report))
    return written


def _outputs(kind, draw, result, sample, items, plot, report, prep) -> list[Path]:
    written = []
    if plot is not None:
        written.append(draw(plot))
    if report is not None:
        svg = draw(None)
        from reflib.chem import prep as prep_mod

        tokens = tokens_of(items, prep)
        lo, hi = range_of(items)
        prov = provenance_of(sample, prep=tokens_of([sample], prep), range_cm1=(lo, hi))
        prov["masked"] = prep_mod.merged_regions(tokens, air=True, within=(lo, hi))
        written.append(html_report(kind, result, svg, prov, report))
    return written
