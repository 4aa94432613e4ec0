"""What every command shares: the typer app, the library option, JSON output, usage errors
and the picture options. Imports no command module."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import typer

app = typer.Typer(
    name="reflib",
    help=(
        "A group's own infrared reference library in one SQLite file. "
        "A library match is evidence, not proof of identity."
    ),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode="markdown",
)


def _echo_json(obj: Any) -> None:
    typer.echo(json.dumps(obj, indent=2, ensure_ascii=False))


LIBRARY_HELP = "Library file (default: $REFLIB_LIBRARY, else reflib.sqlite here)."
DEFAULT_LIBRARY = "reflib.sqlite"


def _library_path(library: Path | None) -> Path:
    return Path(library) if library else Path(DEFAULT_LIBRARY)


def _open(library: Path | None):
    from reflib.library import Library

    return Library.open(_library_path(library))


LibraryOpt = typer.Option(None, "--library", "-L", envvar="REFLIB_LIBRARY", help=LIBRARY_HELP)


def _usage(msg: str) -> Exception:
    from reflib.errors import ValidationError

    return ValidationError(msg)


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


# --- reference filters shared by search and list (reflib.library.filters) ---------------------

TagOpt = typer.Option(None, "--tag", help="Only references of compounds with this tag.")
HasGroupOpt = typer.Option(
    None, "--has-group", help="Only structures with this functional group, e.g. ketone."
)
SmartsOpt = typer.Option(None, "--smarts", help="Only structures matching this SMARTS.")
AddedByOpt = typer.Option(None, "--added-by", help="Only spectra added by this operator.")
SinceOpt = typer.Option(None, "--since", help="Only spectra added on or after this date.")


def _where(**conditions: Any):
    """The :class:`reflib.library.filters.Where` of the filter options (None when none given)."""
    from reflib.library.filters import Where

    return Where.of(conditions)


def auto_calibrate(lib) -> None:
    """Calibrate after an add or import when the library has grown or shrunk enough since the
    last calibration (:func:`reflib.library.calibrate.needs_calibration`); one line on stderr."""
    from reflib.library.calibrate import maybe_calibrate

    done = maybe_calibrate(lib)
    if done is not None:
        typer.echo(
            f"recalibrated the verdict on {done.model.n_compounds} compounds in "
            f"{done.seconds:.1f} s (reflib calibrate prints what it measured)",
            err=True,
        )
