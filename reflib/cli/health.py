"""The ``reflib check`` and ``reflib backup`` commands (registered by :mod:`reflib.cli`).

``check`` exits 0 when the library is healthy, 1 when problems are left (after ``--fix``: 0 when
all were repaired), 2 for a user mistake such as a missing library.
"""

from __future__ import annotations

from pathlib import Path

import typer

from reflib.cli.common import LibraryOpt, app

PANEL = "Look after the library"


@app.command(rich_help_panel=PANEL)
def check(
    fix: bool = typer.Option(
        False, "--fix", help="Repair what is safe: orphan rows, stale or missing vectors."
    ),
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """Check the library file: integrity, orphans, stale vectors, duplicates, index cache."""
    from reflib.cli.common import _echo_json, _open
    from reflib.library.health import check_library, report_lines

    with _open(library) as lib:
        report = check_library(lib, fix=fix)
    if json_out:
        _echo_json(report.to_dict())
    else:
        for line in report_lines(report):
            typer.echo(line)
    if not report.healthy:
        raise typer.Exit(1)


@app.command(rich_help_panel=PANEL)
def backup(
    dest: Path = typer.Argument(..., help="New file to write the copy to."),
    library: Path = LibraryOpt,
) -> None:
    """Copy the library safely while others use it (SQLite online backup)."""
    from reflib.cli.common import _open
    from reflib.errors import LibraryError
    from reflib.library.store import Store

    with _open(library) as lib:
        written = lib.store.backup(dest)
    copy = Store.open(written, migrate=False)
    try:
        ok = copy.conn.execute("PRAGMA integrity_check").fetchone()[0]
        counts = copy.counts()
    finally:
        copy.close()
    if ok != "ok":
        raise LibraryError(f"the copy at {written} fails its integrity check: {ok}")
    typer.echo(
        f"backed up {lib.path} to {written}: {counts['compounds']} compounds, "
        f"{counts['spectra']} spectra"
    )
