"""Commands that build and read the library: init, add, import, list, show, remove, export,
reindex."""

from __future__ import annotations

import sys
from pathlib import Path

import typer

from reflib.cli.common import (
    AddedByOpt,
    HasGroupOpt,
    LibraryOpt,
    SinceOpt,
    SmartsOpt,
    TagOpt,
    _echo_json,
    _library_path,
    _open,
    _usage,
    _where,
    app,
    auto_calibrate,
)

PANEL = "Build and browse the library"


@app.command(rich_help_panel=PANEL)
def init(
    path: Path = typer.Argument(None, help="Where to create the library (default: reflib.sqlite)."),
    library: Path = LibraryOpt,
) -> None:
    """Create a new, empty library file."""
    from reflib.library import Library

    target = path or _library_path(library)
    Library.create(target).close()
    typer.echo(f"created library {target}")


@app.command(rich_help_panel=PANEL)
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
        auto_calibrate(lib)
    if json_out:
        _echo_json([r.to_dict() for r in results])
        return
    for r in results:
        what = "new compound" if r.new_compound else "added to compound"
        typer.echo(f"spectrum {r.spectrum_id}: {what} {r.compound_id} {r.name!r}")
        for w in r.warnings:
            typer.echo(f"  warning: {w}")


@app.command(name="import", rich_help_panel=PANEL)
def import_(
    source: Path = typer.Argument(..., help="A manifest CSV or a folder of spectra."),
    prep: str = typer.Option(None, "--prep", help="Preparation tokens for all files."),
    role: str = typer.Option(None, "--role", help="Role for entries without their own."),
    force: bool = typer.Option(False, "--force", help="Add exact duplicates too."),
    calibrate: bool = typer.Option(
        True,
        "--calibrate/--no-calibrate",
        help="Recalibrate the verdict afterwards when the library has changed enough "
        "(--no-calibrate: leave it to 'reflib calibrate', e.g. between batches).",
    ),
    library: Path = LibraryOpt,
) -> None:
    """Add many spectra from a manifest CSV or a folder of spectra.

    Manifest columns: file,name,prep,smiles,role,notebook,operator,note (only file is required;
    paths relative to the manifest).
    """
    from reflib.library.calibrate import needs_calibration
    from reflib.library.importer import plan_import, run_import

    entries = plan_import(source, prep=prep, role=role)
    with _open(library) as lib:
        with typer.progressbar(length=len(entries), label="importing", file=sys.stderr) as bar:
            report = run_import(lib, entries, force=force, progress=bar.update)
        if calibrate:
            auto_calibrate(lib)
        elif needs_calibration(lib):
            typer.echo(
                "the verdict's calibration is out of date: run 'reflib calibrate' "
                "(until then searches use the old calibration or the fixed rule)",
                err=True,
            )
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


@app.command(name="list", rich_help_panel=PANEL)
def list_(
    role: str = typer.Option(None, "--role", help="Only this role."),
    match: str = typer.Option(None, "--match", help="Only names containing this text."),
    tag: str = TagOpt,
    has_group: str = HasGroupOpt,
    smarts: str = SmartsOpt,
    added_by: str = AddedByOpt,
    since: str = SinceOpt,
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """List the compounds in the library (filters: those with a matching spectrum)."""
    where = _where(tag=tag, has_group=has_group, smarts=smarts, added_by=added_by, since=since)
    with _open(library) as lib:
        rows = lib.compounds(role=role, match=match, where=where)
    if json_out:
        keep = ("id", "name", "role", "smiles", "formula", "notebook", "n_spectra", "preps", "tags")
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


@app.command(rich_help_panel=PANEL)
def show(
    ref: str = typer.Argument(..., help="Compound id or name."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """Show one compound, its provenance and its spectra's peak lists."""
    from reflib.chem.groups import band_texts
    from reflib.io.peaktext import compare_labels

    with _open(library) as lib:
        c = lib.show(ref)
        for s in c["spectra"]:  # the author's labels beside reflib's reading of each band
            notes = compare_labels(lib.peaks(int(s["id"])), band_texts)
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


@app.command(rich_help_panel=PANEL)
def remove(
    ref: str = typer.Argument(..., help="Compound id or name."),
    yes: bool = typer.Option(False, "--yes", help="Do not ask for confirmation."),
    operator: str = typer.Option(None, "--operator", help="Who removes it (default: login)."),
    library: Path = LibraryOpt,
) -> None:
    """Remove a compound and all its spectra (its history stays: 'reflib history')."""
    with _open(library) as lib:
        c = lib.store.find_compound(ref)
        if not yes:
            if not sys.stdin.isatty():
                raise _usage(f"removing {c['name']!r} needs --yes when not run interactively")
            typer.confirm(f"remove {c['name']!r} and all its spectra?", abort=True)
        out = lib.remove(int(c["id"]), operator=operator)
    typer.echo(f"removed {out['name']!r} ({out['spectra']} spectra)")


@app.command(rich_help_panel=PANEL)
def export(
    dest: Path = typer.Argument(..., help="Folder to write into (created if missing)."),
    fmt: str = typer.Option("jcamp", "--format", help="jcamp or csv."),
    library: Path = LibraryOpt,
) -> None:
    """Write every stored spectrum (or peak list) as a JCAMP-DX or CSV file."""
    from reflib.library.exporter import export_library

    with _open(library) as lib:
        n = export_library(lib, dest, fmt)
    typer.echo(f"wrote {n} files to {dest}")


@app.command(rich_help_panel=PANEL)
def reindex(library: Path = LibraryOpt) -> None:
    """Re-encode every stored peak list with the library's encoding."""
    with _open(library) as lib:
        n = lib.reindex()
    typer.echo(f"re-encoded {n} spectra")
