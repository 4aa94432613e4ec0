"""Commands that read spectra and search the library: peaks and search."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

import typer

from reflib.cli.common import (
    AddedByOpt,
    HasGroupOpt,
    LibraryOpt,
    PlotYOpt,
    SinceOpt,
    SmartsOpt,
    TagOpt,
    _check_pictures,
    _echo_json,
    _expand,
    _open,
    _where,
    app,
)
from reflib.errors import ReflibError


def _peak_table(peaks: Any, assign: bool = False) -> str:
    lines = [f"{'cm-1':>8}  {'rel':>5}  {'FWHM':>6}  words"]
    notes = {}
    if assign:
        from reflib.chem.groups import band_texts

        notes = dict(zip(peaks.positions.tolist(), band_texts(peaks)))
    for p in peaks.descending():
        width = "" if p.width != p.width else f"{p.width:6.1f}"
        row = f"{p.position:8.1f}  {p.intensity:5.2f}  {width:>6}  {p.words()}"
        if assign and notes.get(p.position):
            row += f"  {notes[p.position]}"
        lines.append(row)
    return "\n".join(lines)


PANEL = "Identify an unknown"


@app.command(rich_help_panel=PANEL)
def peaks(
    file: Path = typer.Argument(..., help="Spectrum (JCAMP-DX, CSV/TSV) or typed peak list."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    assign: bool = typer.Option(False, "--assign", help="Label each band with candidate groups."),
    y_kind: str = typer.Option(
        None, "--y-kind", help="Override y detection for columns: absorbance or transmittance."
    ),
) -> None:
    """Print a file's metadata and its peak list (picked from the spectrum when one is given)."""
    from reflib.io import read_spectrum
    from reflib.spectrum import Spectrum

    obj = read_spectrum(file, y_kind=y_kind)
    quality = None
    if isinstance(obj, Spectrum):
        from reflib.signal.peaks import pick_peaks
        from reflib.signal.quality import assess, to_dicts

        peak_list = pick_peaks(obj)
        quality = to_dicts(assess(obj, peak_list))
    else:
        peak_list = obj
    if json_out:
        out = peak_list.to_dict()
        if assign:
            from reflib.chem.groups import CAUTION, band_labels

            labels = dict(zip(peak_list.positions.tolist(), band_labels(peak_list)))
            for row, pos in zip(out["peaks"], [p.position for p in peak_list.descending()]):
                row["assignment"] = labels.get(pos, [])
            out["caution"] = CAUTION
        if isinstance(obj, Spectrum):
            out["range_cm1"] = list(obj.range_cm1)
            out["points"] = int(obj.x.size)
            out["quality"] = quality
        _echo_json(out)
        return
    meta = peak_list.meta.to_dict()
    for key in (
        "title",
        "origin",
        "data_type",
        "state",
        "sampling_procedure",
        "resolution",
        "prep",
    ):
        if key in meta:
            typer.echo(f"{key}: {meta[key]}")
    if isinstance(obj, Spectrum):
        lo, hi = obj.range_cm1
        typer.echo(f"range: {lo:.0f}-{hi:.0f} cm-1, {obj.x.size} points, y: {obj.y_kind}")
    typer.echo(f"{len(peak_list)} bands")
    typer.echo(_peak_table(peak_list, assign=assign))
    for q in quality or []:
        if q["severity"] != "info":
            typer.echo(f"warning ({q['check']}): {q['message']}")


def _print_search(res, explain_top: int | None = None) -> None:
    from reflib.analysis.search import PRINTED_HITS

    explain_top = PRINTED_HITS if explain_top is None else explain_top
    lo, hi = (round(v, 1) for v in res.range_cm1)  # as the JSON gives them
    prep = ", ".join(res.query_prep) or "none given"
    typer.echo(
        f"query: {res.query_file or '-'}; preparation: {prep}; compared {lo:.0f}-{hi:.0f} cm-1"
    )
    for qf in res.quality or []:
        if qf["severity"] != "info":
            typer.echo(f"warning ({qf['check']}): {qf['message']}")
    if not res.hits:
        typer.echo(f"verdict: {res.verdict} ({res.reason})")
        return
    width = max(len(h.name) for h in res.hits)
    typer.echo(f"{'rank':>4}  {'score':>5}  {'name':<{width}}  role")
    for h in res.hits:
        typer.echo(f"{h.rank:>4}  {h.score:5.3f}  {h.name:<{width}}  {h.role}")
    typer.echo(f"verdict: {res.verdict} ({res.reason})")
    air = [(lo_, hi_) for lo_, hi_, why in res.masked if "atmospheric CO2" in why]
    for h in res.hits[:explain_top]:
        typer.echo(f"#{h.rank} {h.name}:")
        # a pair where the room's CO2 absorbs is marked: it may be the air's in both spectra
        in_air = [any(lo_ <= a <= hi_ for lo_, hi_ in air) for a, _ in h.matched]
        pairs = [
            f"{a:.0f}~{b:.0f}" + (" (CO2 region)" if mark else "")
            for (a, b), mark in zip(h.matched, in_air)
        ]
        typer.echo("  matched: " + (", ".join(pairs) or "none"))
        typer.echo(
            "  missing in the unknown: " + (", ".join(f"{m:.0f}" for m in h.missing) or "none")
        )
        new = []
        for n in h.new:
            label = h.annotations.get(f"{n:.1f}")
            new.append(f"{n:.0f}" + (f" ({label})" if label else ""))
        typer.echo("  new in the unknown: " + (", ".join(new) or "none"))
    if res.distinguishing:
        typer.echo("bands that would tell the top two apart:")
        for name, bands in res.distinguishing.items():
            typer.echo(f"  only {name}: {', '.join(f'{b:.0f}' for b in bands) or 'none'}")
    if res.masked:
        typer.echo("masked or down-weighted:")
        for lo_, hi_, why in res.masked:
            typer.echo(f"  {lo_:.0f}-{hi_:.0f} cm-1: {why}")
    from reflib.analysis.search import CAUTION

    typer.echo(CAUTION)


@app.command(rich_help_panel=PANEL)
def search(
    files: list[Path] = typer.Argument(..., help="Unknown spectra or peak lists, or folders."),
    prep: str = typer.Option(None, "--prep", help="The unknown's preparation, e.g. nujol."),
    top: int = typer.Option(5, "--top", help="How many hits to list."),
    weights: str = typer.Option(
        None, "--weights", help="Region profile: functional, fingerprint, or 1800-1650:3,..."
    ),
    json_out: bool = typer.Option(
        False, "--json", help="Print the JSON contract (docs/search.md), one document per line."
    ),
    csv_out: Path = typer.Option(None, "--csv", help="Also write a one-line-per-query summary."),
    plot: Path = typer.Option(
        None, "--plot", help="Draw the unknown against its top hits (.png, .svg or .pdf)."
    ),
    report: Path = typer.Option(None, "--report", help="Write a self-contained HTML report."),
    plot_y: str = PlotYOpt,
    role: str = typer.Option(None, "--role", help="Only references of this role."),
    tag: str = TagOpt,
    has_group: str = HasGroupOpt,
    smarts: str = SmartsOpt,
    added_by: str = AddedByOpt,
    since: str = SinceOpt,
    library: Path = LibraryOpt,
) -> None:
    """Find which library compounds an unknown spectrum resembles, band by band.

    Several files (or a folder) are searched as one batch; a file that cannot be read is
    reported and the others are still searched (exit status 1 then). With several queries,
    --plot and --report write one file per query, numbered in query order (crude-1.png, ...).
    """
    from reflib.io import read_spectrum

    _check_pictures(plot, report, plot_y)
    where = _where(role=role, tag=tag, has_group=has_group, smarts=smarts, added_by=added_by,
                   since=since)  # fmt: skip
    paths = _expand(files)
    with _open(library) as lib:
        queries, failed = [], []
        for f in paths:
            try:
                queries.append(read_spectrum(f))
            except ReflibError as exc:
                if len(paths) == 1:
                    raise
                failed.append(str(exc))
        if len(queries) > 20:
            results = []
            with typer.progressbar(length=len(queries), label="searching", file=sys.stderr) as bar:
                for start in range(0, len(queries), 256):
                    chunk = queries[start : start + 256]
                    results += lib.search_many(
                        chunk, prep=prep, top=top, weights=weights, where=where
                    )
                    bar.update(len(chunk))
        else:
            results = lib.search_many(queries, prep=prep, top=top, weights=weights, where=where)
        if plot or report:
            from reflib.report import numbered, search_outputs

            for k, (qry, res) in enumerate(zip(queries, results), start=1):
                n = len(results)
                written = search_outputs(
                    lib, res, qry, y=plot_y,
                    plot=numbered(plot, k, n) if plot else None,
                    report=numbered(report, k, n) if report else None,
                )  # fmt: skip
                for w in written:
                    typer.echo(f"wrote {w} ({res.query_file or 'query'})", err=True)
    for i, res in enumerate(results):
        if json_out:
            typer.echo(json.dumps(res.to_dict(), ensure_ascii=False))
        else:
            if i:
                typer.echo("")
            _print_search(res)
    if csv_out:
        _write_summary(csv_out, results)
    for msg in failed:
        typer.echo(f"reflib: {msg}", err=True)
    if failed:
        raise typer.Exit(1)


def _write_summary(path: Path, results) -> None:
    import csv

    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["file", "verdict", "top_hit", "score", "second_hit", "second_score"])
        for r in results:
            h1 = r.hits[0] if r.hits else None
            h2 = r.hits[1] if len(r.hits) > 1 else None
            w.writerow(
                [
                    r.query_file,
                    r.verdict,
                    h1.name if h1 else "",
                    f"{h1.score:.4f}" if h1 else "",
                    h2.name if h2 else "",
                    f"{h2.score:.4f}" if h2 else "",
                ]
            )
