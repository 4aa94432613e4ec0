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

        notes = {p.position: bands.describe(p) for p in peaks}
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


@app.command()
def demo() -> None:
    """Walk the three jobs on the bundled, invented demo data (coming with the library issue)."""
    typer.echo("reflib demo: coming. The library and search land next; nothing is run yet.")


def main() -> None:
    """Entry point of the ``reflib`` console script."""
    try:
        app(standalone_mode=False)
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


if __name__ == "__main__":
    main()
