"""Commands ``leftover``, ``mixture`` and ``compare``: thin wrappers over
reflib.analysis.mixture/compare.

:func:`register` adds them to the typer app of :mod:`reflib.cli` (which calls it at import).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import typer

from reflib.cli.common import (
    LibraryOpt,
    PlotYOpt,
    _check_pictures,
    _echo_json,
    _open,
    _usage,
    app,
)


def _fmt_share(v: float | None) -> str:
    return "-" if v is None else f"{100 * v:.1f} %"


def print_leftover(res: Any) -> None:
    """The plain-text form of a :class:`reflib.analysis.mixture.LeftoverResult`."""
    d = res.to_dict()
    typer.echo(f"starting material: {d['start'].get('name') or '-'}")
    product = d["product"]
    typer.echo("product: " + ((product.get("name") or "-") if product else "not given"))
    verdict = "DETECTED" if d["detected"] else "not detected"
    typer.echo(f"starting material {verdict}")
    if d["share"] is not None:
        lo, hi = d["share_interval"]
        typer.echo(
            f"share of the signal: {_fmt_share(d['share'])} "
            f"(95 % interval {_fmt_share(lo)} - {_fmt_share(hi)})"
        )
    if d["upper_bound"] is not None:
        typer.echo(
            "upper bound on the share (the most the sample leaves room for): "
            f"{_fmt_share(d['upper_bound'])}"
        )
    typer.echo(f"detection limit for this pair: about {_fmt_share(d['detection_limit'])}")
    if d["diagnostic_bands"]:
        typer.echo(f"{'band cm-1':>10}  {'seen':>4}  {'in sample':>9}")
        for b in d["diagnostic_bands"]:
            typer.echo(
                f"{b['position']:10.0f}  {'yes' if b['seen'] else 'no':>4}  "
                f"{b['sample_intensity']:9.3f}"
            )
    for n in d["notes"]:
        typer.echo(f"note: {n}")
    typer.echo(d["caution"])


def print_mixture(res: Any) -> None:
    """The plain-text form of a :class:`reflib.analysis.mixture.MixtureResult`."""
    d = res.to_dict()
    if d["components"]:
        width = max(len(str(c.get("name"))) for c in d["components"])
        typer.echo(f"{'share':>7}  {'name':<{width}}")
        for c in d["components"]:
            typer.echo(f"{_fmt_share(c['share']):>7}  {c.get('name')!s:<{width}}")
    else:
        typer.echo("no library compound explains the sample")
    typer.echo(f"explained: {_fmt_share(d['explained'])} of the sample's absorbance")
    if d["unexplained_bands"]:
        typer.echo("strong bands nothing explains:")
        for u in d["unexplained_bands"]:
            g = f"  {u['groups'][0]}?" if u["groups"] else ""
            typer.echo(f"  {u['position']:.0f} cm-1 (rel {u['intensity']:.2f}){g}")
    for n in d["notes"]:
        typer.echo(f"note: {n}")
    typer.echo(d["caution"])


def print_comparison(res: Any) -> None:
    """The plain-text form of a :class:`reflib.analysis.compare.Comparison`."""
    d = res.to_dict()
    lo, hi = d["range_cm1"]
    typer.echo(
        f"A: {d['a'].get('name') or '-'}   B: {d['b'].get('name') or '-'}   "
        f"compared {lo:.0f}-{hi:.0f} cm-1"
    )
    for s in d["summary"]:
        typer.echo(f"- {s}")
    if d["matched"]:
        typer.echo(f"{'A cm-1':>8}  {'B cm-1':>8}  {'shift':>6}  {'factor':>6}  groups")
        for m in d["matched"]:
            g = ", ".join(m["groups"][:1])
            typer.echo(f"{m['a']:8.1f}  {m['b']:8.1f}  {m['shift']:+6.1f}  {m['factor']:6.2f}  {g}")
    if d["masked"]:
        typer.echo("masked: " + "; ".join(f"{a:.0f}-{b:.0f} ({why})" for a, b, why in d["masked"]))
    typer.echo(d["caution"])


def _read_or_entry(lib_path: Path | None, ref: str) -> tuple[Any, dict[str, Any] | None]:
    """A file when ``ref`` is an existing path, else a library compound by name or id."""
    from reflib.io import read_spectrum

    p = Path(ref)
    if p.exists():
        return read_spectrum(p), None
    from reflib.cli.common import _open
    from reflib.library.lookup import library_entry

    with _open(lib_path) as lib:
        return library_entry(lib, ref)


PlotOpt = typer.Option(None, "--plot", help="Draw the comparison (.png, .svg or .pdf).")
ReportOpt = typer.Option(None, "--report", help="Write a self-contained HTML report.")


def _crude_files(files: list[Path]) -> list[Path]:
    """The files named, a folder standing for the (non-hidden) files in it."""
    out: list[Path] = []
    for f in files:
        if f.is_dir():
            out += sorted(p for p in f.iterdir() if p.is_file() and not p.name.startswith("."))
        else:
            out.append(f)
    if not out:
        raise _usage("no crude files given (the folder is empty)")
    return out


def print_series(res: Any) -> None:
    """The plain-text form of a :class:`reflib.analysis.series.SeriesResult`."""
    docs = res.to_dicts()
    summary = docs[-1]
    unit = "h" if summary["x_unit"] == "hours" else "#"
    typer.echo(f"{unit:>8}  {'share':>8}  {'95 % interval':>17}  {'bound':>7}  file")
    for x, d in zip(summary["x"], docs[:-1]):
        iv = d["share_interval"]
        ivs = "-" if iv is None else f"{_fmt_share(iv[0])} - {_fmt_share(iv[1])}"
        share = _fmt_share(d["share"]) if d["detected"] else "n.d."
        typer.echo(
            f"{x:8.2f}  {share:>8}  {ivs:>17}  {_fmt_share(d['upper_bound']):>7}  {d['file']}"
        )
    slope = summary["slope"]
    per = "per hour" if unit == "h" else "per sample"
    trend = summary["trend"]
    if slope is not None:
        trend += f" ({100 * slope:+.2f} points {per}, +/- {100 * summary['slope_error']:.2f})"
    typer.echo(f"trend: {trend}")
    if summary["below_limit_from"]:
        typer.echo(f"below the detection limit from {summary['below_limit_from']} on")
    for n in summary["notes"]:
        typer.echo(f"note: {n}")
    typer.echo(docs[0]["caution"])


PANEL = "Compare and quantify"


@app.command(rich_help_panel=PANEL)
def leftover(
    files: list[Path] = typer.Argument(
        ..., help="The crude spectra (or peak lists), or a folder of them: one file, or a series."
    ),
    start: str = typer.Option(..., "--start", help="Starting material: library name or id."),
    product: str = typer.Option(
        None, "--product", help="Pure product: library name or id (better estimate)."
    ),
    prep: str = typer.Option(None, "--prep", help="The sample's preparation, e.g. nujol."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    plot: Path = PlotOpt,
    report: Path = ReportOpt,
    plot_y: str = PlotYOpt,
    library: Path = LibraryOpt,
) -> None:
    """Is starting material left in a product, and how much of the signal is it? With several
    files (or a folder): the share in each, in measuring order, and its trend."""
    from reflib.io import read_spectrum
    from reflib.library.lookup import leftover_in_library

    _check_pictures(plot, report, plot_y)
    paths = _crude_files(files)
    if len(paths) > 1:
        if report is not None:
            raise _usage("--report is for one crude; for a series use --plot and --json")
        from reflib.analysis.series import leftover_series

        items = [(p.name, read_spectrum(p)) for p in paths]
        with _open(library) as lib:
            res = leftover_series(
                items, lambda d: leftover_in_library(lib, d, start, product, prep=prep)
            )
        if plot:
            from reflib.report.plots import plot_series

            typer.echo(f"wrote {plot_series(res, plot)}", err=True)
        if json_out:
            for doc in res.to_dicts():
                typer.echo(json.dumps(doc, ensure_ascii=False))
        else:
            print_series(res)
        return
    sample = read_spectrum(paths[0])
    with _open(library) as lib:
        res = leftover_in_library(lib, sample, start, product, prep=prep)
        if plot or report:
            from reflib.report import leftover_outputs

            for w in leftover_outputs(
                lib, res, sample, plot=plot, report=report, y=plot_y, prep=prep
            ):
                typer.echo(f"wrote {w}", err=True)
    if json_out:
        _echo_json(res.to_dict())
    else:
        print_leftover(res)


@app.command(rich_help_panel=PANEL)
def mixture(
    file: Path = typer.Argument(..., help="The crude spectrum or peak list."),
    max_components: int = typer.Option(
        3, "--max-components", help="At most this many library compounds."
    ),
    prep: str = typer.Option(None, "--prep", help="The sample's preparation, e.g. chcl3."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    plot: Path = PlotOpt,
    report: Path = ReportOpt,
    plot_y: str = PlotYOpt,
    library: Path = LibraryOpt,
) -> None:
    """Explain a crude as a few library compounds, and list the bands nothing explains."""
    from reflib.io import read_spectrum
    from reflib.library.lookup import mixture_in_library

    _check_pictures(plot, report, plot_y)
    sample = read_spectrum(file)
    with _open(library) as lib:
        res = mixture_in_library(lib, sample, max_components=max_components, prep=prep)
        if plot or report:
            from reflib.report import mixture_outputs

            for w in mixture_outputs(
                lib, res, sample, plot=plot, report=report, y=plot_y, prep=prep
            ):
                typer.echo(f"wrote {w}", err=True)
    if json_out:
        _echo_json(res.to_dict())
    else:
        print_mixture(res)


@app.command(rich_help_panel=PANEL)
def compare(
    a: str = typer.Argument(..., help="First spectrum: a file, or a library name or id."),
    b: str = typer.Argument(..., help="Second spectrum: a file, or a library name or id."),
    prep: str = typer.Option(None, "--prep", help="Preparation of both, e.g. nujol."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    plot: Path = PlotOpt,
    report: Path = ReportOpt,
    plot_y: str = PlotYOpt,
    library: Path = LibraryOpt,
) -> None:
    """Band by band between two spectra: matched (with shift), lost, new, changed."""
    from reflib.analysis.compare import compare as compare_fn

    _check_pictures(plot, report, plot_y)
    da, ia = _read_or_entry(library, a)
    db, ib = _read_or_entry(library, b)
    res = compare_fn(da, db, prep=prep, a_info=ia, b_info=ib)
    if plot or report:
        from reflib.report import compare_outputs

        for w in compare_outputs(res, da, db, plot=plot, report=report, y=plot_y):
            typer.echo(f"wrote {w}", err=True)
    if json_out:
        _echo_json(res.to_dict())
    else:
        print_comparison(res)
