"""The ``groups`` command: which functional groups a spectrum shows, with the evidence."""

from __future__ import annotations

from pathlib import Path

import typer

from reflib.cli.common import _echo_json, app

_MARK = {"present": "+", "possible": "?", "absent": "-"}


PANEL = "Identify an unknown"


@app.command(rich_help_panel=PANEL)
def groups(
    file: Path = typer.Argument(..., help="Spectrum (JCAMP-DX, CSV/TSV) or typed peak list."),
    prep: str = typer.Option(None, "--prep", help="The sample's preparation, e.g. nujol."),
    formula: str = typer.Option(
        None, "--formula", help="Molecular formula, e.g. C8H8O (else the file's ##MOLFORM)."
    ),
    phase: str = typer.Option(None, "--phase", help="gas or condensed (else from the file)."),
    json_out: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
    all_groups: bool = typer.Option(False, "--all", help="Also list the groups called absent."),
) -> None:
    """Call each group of a fixed vocabulary present, possible or absent, with its bands."""
    from reflib.chem.groups import CAUTION
    from reflib.chem.groups import groups as analyse_file

    report = analyse_file(file, prep=prep or (), formula=formula, phase=phase)
    if json_out:
        out = report.to_dict()
        out["query"]["file"] = file.name
        _echo_json(out)
        return
    q = report.query
    typer.echo(
        f"{file.name}: {q['bands']} bands, {q['phase']} phase"
        + (f", formula {q['formula']} ({q['formula_from']})" if q["formula"] else "")
        + (f", prep {', '.join(q['prep'])}" if q["prep"] else "")
    )
    for call in report.groups:
        if call.call == "absent" and not all_groups:
            continue
        seen = [f"{e.cm1:.0f} {e.role}" for e in call.evidence if e.seen and e.need != "clean"]
        line = f"{_MARK[call.call]} {call.group:<16} {call.call:<8} {call.score:4.2f}"
        if seen:
            line += "  " + "; ".join(seen)
        if call.against and call.call != "present":
            line += "  [" + "; ".join(call.against) + "]"
        typer.echo(line)
    absent = report.named("absent")
    if absent and not all_groups:
        typer.echo(f"absent: {', '.join(absent)}")
    for pos, text in sorted(report.explained.items()):
        typer.echo(f"{pos:.0f} cm-1: {text}")
    typer.echo(f"Caution: {CAUTION}.")
