"""The ``reflib`` command line: thin; parses options, calls the library, prints tables or JSON.

Every user mistake is a :class:`~reflib.errors.ReflibError`; :func:`main` prints it as one line
on stderr and exits with status 2. Heavy modules are imported inside the commands so that
``reflib --help`` starts fast.
"""

from __future__ import annotations

import sys

import typer

from reflib.cli import analysis, calibrate, demo, health, library, search  # noqa: F401  (each registers its commands)
from reflib.cli.common import app
from reflib.errors import ReflibError

__all__ = ["app", "main"]


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
