"""The ``reflib`` command line: thin; parses options, calls the library, prints tables or JSON.

Every user mistake is a :class:`~reflib.errors.ReflibError`; :func:`main` prints it as one line
on stderr and exits with status 2. Heavy modules are imported inside the commands so that
``reflib --help`` starts fast.
"""

from __future__ import annotations

import difflib
import importlib
import sys

import typer

# Each command module registers its commands on the app when imported; the order here is the
# order of the panels in ``reflib --help``.
# isort: off
from reflib.cli import library, search, groups, analysis, group, calibrate, health, demo  # noqa: F401

# isort: on
from reflib.cli.common import app
from reflib.errors import ReflibError

__all__ = ["app", "main"]


def _click_classes() -> tuple[tuple[type, ...], tuple[type, ...]]:
    """The usage-error and exit classes of the click that typer runs on: typer 0.29 vendors its
    own copy (``typer._click``), older typers use the ``click`` package; catch both."""
    usage: list[type] = []
    exits: list[type] = [typer.Exit]
    for name in ("typer._click.exceptions", "click.exceptions"):
        try:
            mod = importlib.import_module(name)
        except ImportError:
            continue
        usage.append(mod.ClickException)
        if hasattr(mod, "Exit"):
            exits.append(mod.Exit)
    return tuple(usage), tuple(exits)


def usage_line(exc: Exception) -> str:
    """One line for a command-line usage error: what is wrong, and where to look."""
    msg = " ".join(exc.format_message().split())  # type: ignore[attr-defined]
    option = getattr(exc, "option_name", None)
    possible = sorted(getattr(exc, "possibilities", None) or ())
    if option and possible:
        best = difflib.get_close_matches(option, possible, n=1, cutoff=0.0)
        msg = f"No such option: {option}; did you mean {best[0]}?"
    ctx = getattr(exc, "ctx", None)
    where = ctx.command_path if ctx is not None else "reflib"
    if not where.startswith("reflib"):
        where = "reflib"
    return f"{where}: {msg} (see '{where} --help')"


def main(argv: list[str] | None = None) -> None:
    """Entry point of the ``reflib`` console script.

    A :class:`~reflib.errors.ReflibError` or a usage error (a mistyped command or option, a
    missing argument, a value of the wrong type) prints one line on stderr and exits with
    status 2; Ctrl-C exits with 130. Anything else is a bug and shows its traceback.
    """
    usage_errors, exits = _click_classes()
    try:
        rc = app(args=argv, prog_name="reflib", standalone_mode=False)
    except ReflibError as exc:
        typer.echo(f"reflib: {exc}", err=True)
        sys.exit(2)
    except (typer.Abort, KeyboardInterrupt):
        typer.echo("reflib: interrupted", err=True)
        sys.exit(130)
    except exits as exc:
        sys.exit(exc.exit_code)
    except usage_errors as exc:
        ctx = getattr(exc, "ctx", None)
        if type(exc).__name__ == "NoArgsIsHelpError" and ctx is not None:
            typer.echo(ctx.get_help())  # plain "reflib" or "reflib GROUP": the help, not an error
            sys.exit(0)
        typer.echo(usage_line(exc), err=True)
        sys.exit(2)
    if isinstance(rc, int) and rc:
        sys.exit(rc)


if __name__ == "__main__":
    main()
