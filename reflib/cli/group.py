"""Commands for a group's shared library: merge, edit, history and serve."""

from __future__ import annotations

import os
from pathlib import Path

import typer

from reflib.cli.common import LibraryOpt, _echo_json, _open, _usage, app

OperatorOpt = typer.Option(
    None, "--operator", help="Who makes the change (default: your login name)."
)


PANEL = "The group's library"


@app.command(rich_help_panel=PANEL)
def merge(
    other: Path = typer.Argument(..., help="Another reflib library file (opened read-only)."),
    operator: str = OperatorOpt,
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """Bring another library's compounds and spectra in, in one transaction.

    Spectra already here (same SHA-256) are skipped; compounds are matched by InChIKey, else by
    name. A name whose structure differs is a conflict: that compound is left out and listed,
    and the exit status is 1.
    """
    with _open(library) as lib:
        rep = lib.merge(other, operator=operator)
    if json_out:
        _echo_json(rep.to_dict())
    else:
        typer.echo(
            f"merged {rep.source}: {rep.spectra_added} spectra added, {rep.spectra_skipped} "
            f"already here; {rep.compounds_added} new compounds, {rep.compounds_matched} matched"
        )
        typer.echo(
            f"library now: {rep.after['compounds']} compounds, {rep.after['spectra']} spectra "
            f"(before: {rep.before['compounds']}, {rep.before['spectra']})"
        )
        for c in rep.conflicts:
            typer.echo(
                f"  conflict: {c['name']!r} is {c['here']} here but {c['there']} there; "
                f"its {c['spectra_not_merged']} spectra were not merged (rename one of them)"
            )
    if rep.conflicts:
        raise typer.Exit(1)


@app.command(rich_help_panel=PANEL)
def edit(
    ref: str = typer.Argument(..., help="Compound id or name."),
    name: str = typer.Option(None, "--name", help="New name."),
    smiles: str = typer.Option(None, "--smiles", help="New structure as SMILES."),
    role: str = typer.Option(None, "--role", help="New role."),
    note: str = typer.Option(None, "--note", help="New note (replaces the old one)."),
    tag: list[str] = typer.Option(None, "--tag", help="Add a tag (repeat for several)."),
    untag: list[str] = typer.Option(None, "--untag", help="Remove a tag."),
    operator: str = OperatorOpt,
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """Correct a compound's name, structure, role, note or tags; every change is recorded."""
    with _open(library) as lib:
        out = lib.edit(ref, name=name, smiles=smiles, role=role, note=note, tag=tag or (),
                       untag=untag or (), operator=operator)  # fmt: skip
    if json_out:
        _echo_json(out)
        return
    if not out["changes"]:
        typer.echo(f"{out['name']!r}: nothing changed")
    for ch in out["changes"]:
        typer.echo(f"{out['name']!r}: {ch['field']}: {ch['old']!r} -> {ch['new']!r}")


@app.command(rich_help_panel=PANEL)
def history(
    ref: str = typer.Argument(..., help="Compound id or name (also of a removed compound)."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON."),
    library: Path = LibraryOpt,
) -> None:
    """Show every recorded change of a compound: add, remove, merge and edit."""
    with _open(library) as lib:
        rows = lib.history(ref)
    if json_out:
        _echo_json(rows)
        return
    for r in rows:
        what = r["action"]
        if r["field"] and r["action"] == "edit":
            what += f" {r['field']}: {r['old']!r} -> {r['new']!r}"
        if r["detail"]:
            what += f" ({r['detail']})"
        typer.echo(f"{r['at']}  {r['operator']:<12}  {r['compound_name']}: {what}")


@app.command(rich_help_panel=PANEL)
def serve(
    host: str = typer.Option("127.0.0.1", "--host", help="Address to listen on."),
    port: int = typer.Option(8017, "--port", help="Port to listen on."),
    token: str = typer.Option(
        None, "--token", envvar="REFLIB_TOKEN", help="Access token (needed off loopback)."
    ),
    users: Path = typer.Option(None, "--users", help="File of 'token name' lines."),
    read_only: bool = typer.Option(False, "--read-only", help="Answer 403 to every write."),
    max_upload_mb: float = typer.Option(50.0, "--max-upload-mb", help="Largest upload (MB)."),
    library: Path = LibraryOpt,
) -> None:
    """Serve the library to the group over HTTP: a JSON API and a web page."""
    from reflib.web.app import ServerConfig, check_config, run

    cfg = ServerConfig(
        library=str(library or os.environ.get("REFLIB_LIBRARY") or "reflib.sqlite"),
        host=host,
        port=port,
        token=token,
        users_file=str(users) if users else None,
        read_only=read_only,
        max_upload_mb=max_upload_mb,
    )
    check_config(cfg)  # one line and exit 2 before anything listens
    if port < 0 or port > 65535:
        raise _usage(f"--port must be 0-65535, got {port}")
    run(cfg)
