"""The ``reflib`` command line: thin; parses options, calls the library, prints tables or JSON.

Every user mistake is a :class:`~reflib.errors.ReflibError`; :func:`main` prints it as one line
on stderr and exits with status 2. Heavy modules are imported inside the commands so that
``reflib --help`` starts fast.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

import typer

from reflib.errors import ReflibError

app = typer.Typer(
    name="reflib",
    help=(
        "A group's own infrared reference library in one SQLite file. "
        "A library match is evidence, not proof of identity."
    ),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)


def _echo_json(obj: Any) -> None:
    typer.echo(json.dumps(obj, indent=2, ensure_ascii=False))


def _peak_table(peaks: Any, assign: bool = False) -> str:
    lines = [f"{'cm-1':>8}  {'rel':>5}  {'FWHM':>6}  words"]
    notes = {}
    if assign:
        from reflib import bands

        notes = dict(zip(peaks.positions.tolist(), bands.describe_all(peaks)))
    for p in peaks.descending():
        width = "" if p.width != p.width else f"{p.width:6.1f}"
        row = f"{p.position:8.1f}  {p.intensity:5.2f}  {width:>6}  {p.words()}"
        if assign and notes.get(p.position):
            row += f"  {notes[p.position]}"
        lines.append(row)
    return "\n".join(lines)


@app.command()
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
    if isinstance(obj, Spectrum):
        from reflib.peaks import pick_peaks

        peak_list = pick_peaks(obj)
    else:
        peak_list = obj
    if json_out:
        out = peak_list.to_dict()
        if isinstance(obj, Spectrum):
            out["range_cm1"] = list(obj.range_cm1)
            out["points"] = int(obj.x.size)
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


LIBRARY_HELP = "Library file (default: $REFLIB_LIBRARY, else reflib.sqlite here)."
DEFAULT_LIBRARY = "reflib.sqlite"


def _library_path(library: Path | None) -> Path:
    return Path(library) if library else Path(DEFAULT_LIBRARY)


def _open(library: Path | None):
    from reflib.library import Library

    return Library.open(_library_path(library))


LibraryOpt = typer.Option(None, "--library", "-L", envvar="REFLIB_LIBRARY", help=LIBRARY_HELP)


@app.command()
def init(
    path: Path = typer.Argument(None, help="Where to create the library (default: reflib.sqlite)."),
    library: Path = LibraryOpt,
) -> None:
    """Create a new, empty library file."""
    from reflib.library import Library

    target = path or _library_path(library)
    Library.create(target).close()
    typer.echo(f"created library {target}")


@app.command()
def add(
    files: list[Path] = typer.Argument(None, help="Spectrum files or typed peak lists."),
    name: str = typer.Option(..., "--name", "-n", help="Compound name."),
    peaks_text: str = typer.Option(None, "--peaks", help='Typed peaks: "3350 br, 1715 s".'),
    smiles: str = typer.Option(None, "--smiles", help="Structure as SMILES."),
    role: str = typer.Option(None, "--role", help="starting material, intermediate, product, ..."),
    prep: str = typer.Option(None, "--prep", help="Preparation tokens, e.g. nujol or chcl3,caf2."),
    notebook: str = typer.Option(None, "--notebook", help="Notebook reference."),
    operator: str = typer.Option(None, "--operator", help="Who ran the spectrum."),
    note: str = typer.Option(None, "--note", help="Free text."),
    force: bool = typer.Option(False, "--force", help="Add even an exact duplicate file."),
    strict: bool = typer.Option(
        False, "--strict", help="Refuse a spectrum that contradicts --smiles."
    ),
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """Add a confirmed compound's spectrum (or typed peak list) to the library."""
    from reflib.io import read_spectrum
    from reflib.io.peaktext import parse_peak_text

    if not files and not peaks_text:
        raise _usage('give a spectrum file or --peaks "..."')
    items = [read_spectrum(f) for f in files or []]
    if peaks_text:
        items.append(parse_peak_text(peaks_text, source="--peaks"))
    results = []
    with _open(library) as lib:
        for data in items:
            res = lib.add(
                data,
                name=name,
                smiles=smiles,
                role=role,
                prep=prep,
                notebook=notebook,
                operator=operator,
                note=note,
                force=force,
                strict=strict,
            )
            results.append(res)
    if json_out:
        _echo_json([r.to_dict() for r in results])
        return
    for r in results:
        what = "new compound" if r.new_compound else "added to compound"
        typer.echo(f"spectrum {r.spectrum_id}: {what} {r.compound_id} {r.name!r}")
        for w in r.warnings:
            typer.echo(f"  warning: {w}")


def _usage(msg: str) -> Exception:
    from reflib.errors import ValidationError

    return ValidationError(msg)


@app.command(name="import")
def import_(
    source: Path = typer.Argument(..., help="A manifest CSV or a folder of spectra."),
    prep: str = typer.Option(None, "--prep", help="Preparation tokens for all files."),
    role: str = typer.Option(None, "--role", help="Role for entries without their own."),
    force: bool = typer.Option(False, "--force", help="Add exact duplicates too."),
    library: Path = LibraryOpt,
) -> None:
    """Add many spectra from a manifest CSV or a folder (manifest columns: see README)."""
    from reflib.importer import plan_import, run_import

    entries = plan_import(source, prep=prep, role=role)
    with _open(library) as lib:
        with typer.progressbar(length=len(entries), label="importing", file=sys.stderr) as bar:
            report = run_import(lib, entries, force=force, progress=bar.update)
    typer.echo(
        f"added {report.added}, skipped {report.skipped} already in the library, "
        f"failed {len(report.failures)}"
    )
    for w in report.warnings:
        typer.echo(f"  warning: {w}")
    if report.failures:
        typer.echo("failures:")
        for f, why in report.failures:
            typer.echo(f"  {f}: {why}")
        raise typer.Exit(1)


@app.command(name="list")
def list_(
    role: str = typer.Option(None, "--role", help="Only this role."),
    match: str = typer.Option(None, "--match", help="Only names containing this text."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """List the compounds in the library."""
    with _open(library) as lib:
        rows = lib.compounds(role=role, match=match)
    if json_out:
        keep = ("id", "name", "role", "smiles", "formula", "notebook", "n_spectra", "preps")
        _echo_json([{k: r.get(k) for k in keep} for r in rows])
        return
    if not rows:
        typer.echo("no compounds")
        return
    width = max(len(r["name"]) for r in rows)
    typer.echo(f"{'id':>5}  {'name':<{width}}  {'role':<18} spectra  preparations")
    for r in rows:
        typer.echo(
            f"{r['id']:>5}  {r['name']:<{width}}  {r['role']:<18} {r['n_spectra']:>7}  "
            f"{', '.join(r['preps']) or '-'}"
        )


@app.command()
def show(
    ref: str = typer.Argument(..., help="Compound id or name."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """Show one compound, its provenance and its spectra's peak lists."""
    from reflib.bands import describe_all
    from reflib.io.peaktext import compare_labels

    with _open(library) as lib:
        c = lib.show(ref)
        for s in c["spectra"]:  # the author's labels beside reflib's reading of each band
            notes = compare_labels(lib.peaks(int(s["id"])), describe_all)
            if notes:
                s["label_notes"] = [n.to_dict() | {"text": n.text} for n in notes]
    if json_out:
        _echo_json(c)
        return
    typer.echo(f"{c['name']} (compound {c['id']}, {c['role']})")
    for key in (
        "smiles",
        "canonical_smiles",
        "formula",
        "inchikey",
        "notebook",
        "notes",
        "added_by",
        "added_at",
    ):
        if c.get(key):
            typer.echo(f"  {key}: {c[key]}")
    for s in c["spectra"]:
        prep = ", ".join(s["prep"]) or "no preparation given"
        typer.echo(f"  spectrum {s['id']}: {s['kind']}, {prep}, from {s['source_file'] or '-'}")
        bands = ", ".join(
            f"{p['position']:.0f} {p['strength']}{' br' if p['broad'] else ''}"
            + (f" ({p['label']})" if p.get("label") else "")
            for p in s["peaks"]
        )
        typer.echo(f"    {bands}")
        for note in s.get("label_notes", []):
            typer.echo(f"    {note['text']}")


@app.command()
def remove(
    ref: str = typer.Argument(..., help="Compound id or name."),
    yes: bool = typer.Option(False, "--yes", help="Do not ask for confirmation."),
    library: Path = LibraryOpt,
) -> None:
    """Remove a compound and all its spectra."""
    with _open(library) as lib:
        c = lib.store.find_compound(ref)
        if not yes:
            if not sys.stdin.isatty():
                raise _usage(f"removing {c['name']!r} needs --yes when not run interactively")
            typer.confirm(f"remove {c['name']!r} and all its spectra?", abort=True)
        out = lib.remove(int(c["id"]))
    typer.echo(f"removed {out['name']!r} ({out['spectra']} spectra)")


@app.command()
def export(
    dest: Path = typer.Argument(..., help="Folder to write into (created if missing)."),
    fmt: str = typer.Option("jcamp", "--format", help="jcamp or csv."),
    library: Path = LibraryOpt,
) -> None:
    """Write every stored spectrum (or peak list) as a JCAMP-DX or CSV file."""
    from reflib.exporter import export_library

    with _open(library) as lib:
        n = export_library(lib, dest, fmt)
    typer.echo(f"wrote {n} files to {dest}")


@app.command()
def reindex(library: Path = LibraryOpt) -> None:
    """Re-encode every stored peak list with the library's encoding."""
    with _open(library) as lib:
        n = lib.reindex()
    typer.echo(f"re-encoded {n} spectra")


def _print_search(res, explain_top: int = 3) -> None:
    d = res.to_dict()
    q = d["query"]
    lo, hi = q["range_cm1"]
    typer.echo(
        f"query: {q['file'] or '-'}; preparation: {', '.join(q['prep']) or 'none given'}; "
        f"compared {lo:.0f}-{hi:.0f} cm-1"
    )
    if not res.hits:
        typer.echo(f"verdict: {res.verdict} ({res.reason})")
        return
    width = max(len(h.name) for h in res.hits)
    typer.echo(f"{'rank':>4}  {'score':>5}  {'name':<{width}}  role")
    for h in res.hits:
        typer.echo(f"{h.rank:>4}  {h.score:5.3f}  {h.name:<{width}}  {h.role}")
    typer.echo(f"verdict: {res.verdict} ({res.reason})")
    for h in res.hits[:explain_top]:
        typer.echo(f"#{h.rank} {h.name}:")
        typer.echo("  matched: " + (", ".join(f"{a:.0f}~{b:.0f}" for a, b in h.matched) or "none"))
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
    from reflib.search import CAUTION

    typer.echo(CAUTION)


PlotYOpt = typer.Option(
    "absorbance", "--plot-y", help="y axis of --plot/--report: absorbance or transmittance."
)


def _check_pictures(plot: Path | None, report: Path | None, plot_y: str) -> None:
    """Refuse a bad --plot/--report file name or --plot-y before any work is done."""
    if plot is None and report is None:
        return
    from reflib.report import check_plot_path, check_report_path

    if plot is not None:
        check_plot_path(plot)
    if report is not None:
        check_report_path(report)
    if plot_y not in ("absorbance", "transmittance"):
        raise _usage(f"--plot-y must be absorbance or transmittance, got {plot_y!r}")


def _expand(paths: list[Path]) -> list[Path]:
    out: list[Path] = []
    for p in paths:
        if p.is_dir():
            files = sorted(f for f in p.iterdir() if f.is_file() and not f.name.startswith("."))
            if not files:
                raise _usage(f"{p}: folder holds no files to search")
            out += files
        else:
            out.append(p)
    return out


@app.command()
def search(
    files: list[Path] = typer.Argument(..., help="Unknown spectra or peak lists, or folders."),
    prep: str = typer.Option(None, "--prep", help="The unknown's preparation, e.g. nujol."),
    top: int = typer.Option(5, "--top", help="How many hits to list."),
    weights: str = typer.Option(
        None, "--weights", help="Region profile: functional, fingerprint, or 1800-1650:3,..."
    ),
    json_out: bool = typer.Option(
        False, "--json", help="Print the JSON contract (README), one document per line."
    ),
    csv_out: Path = typer.Option(None, "--csv", help="Also write a one-line-per-query summary."),
    plot: Path = typer.Option(
        None, "--plot", help="Draw the unknown against its top hits (.png, .svg or .pdf)."
    ),
    report: Path = typer.Option(None, "--report", help="Write a self-contained HTML report."),
    plot_y: str = PlotYOpt,
    library: Path = LibraryOpt,
) -> None:
    """Find which library compounds an unknown spectrum resembles, band by band.

    Several files (or a folder) are searched as one batch; a file that cannot be read is
    reported and the others are still searched (exit status 1 then). With several queries,
    --plot and --report write one file per query, numbered in query order (crude-1.png, ...).
    """
    from reflib.io import read_spectrum

    _check_pictures(plot, report, plot_y)
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
                    results += lib.search_many(chunk, prep=prep, top=top, weights=weights)
                    bar.update(len(chunk))
        else:
            results = lib.search_many(queries, prep=prep, top=top, weights=weights)
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


@app.command()
def demo(
    data: Path = typer.Option(None, "--data", help="The demo_data folder (default: ./demo_data)."),
) -> None:
    """Walk the three jobs on the bundled, invented demo data in a temporary library."""
    from reflib.demo import run_demo

    run_demo(typer.echo, data, print_search=_print_search)


def _register_plugins() -> None:
    """Commands that live in their own modules (each defines ``register(app)``)."""
    from reflib import cli_health, cli_mixture

    cli_mixture.register(app)
    cli_health.register(app)


_register_plugins()


def main() -> None:
    """Entry point of the ``reflib`` console script."""
    try:
        rc = app(standalone_mode=False)
    except ReflibError as exc:
        typer.echo(f"reflib: {exc}", err=True)
        sys.exit(2)
    except (typer.Abort, KeyboardInterrupt):
        typer.echo("reflib: interrupted", err=True)
        sys.exit(130)
    except Exception as exc:  # click usage errors come through here in non-standalone mode
        import click

        if isinstance(exc, click.exceptions.Exit):
            sys.exit(exc.exit_code)
        if isinstance(exc, click.ClickException):
            exc.show()
            sys.exit(2)
        raise
    if isinstance(rc, int) and rc:
        sys.exit(rc)


if __name__ == "__main__":
    main()
