"""The demo command: the three jobs on the bundled, invented demo data."""

from __future__ import annotations

from pathlib import Path

import typer

from reflib.cli.common import app
from reflib.cli.search import _print_search

PANEL = "Try it"


@app.command(rich_help_panel=PANEL)
def demo(
    data: Path = typer.Option(None, "--data", help="The demo_data folder (default: ./demo_data)."),
) -> None:
    """Walk the three jobs on the bundled, invented demo data in a temporary library."""
    from reflib.demo import run_demo

    run_demo(typer.echo, data, print_search=_print_search)
