"""``reflib calibrate``: learn the verdict's confidence from the library's own references."""

from __future__ import annotations

from pathlib import Path

import typer

from reflib.cli.common import LibraryOpt, _echo_json, _open, app

PANEL = "Look after the library"


@app.command(rich_help_panel=PANEL)
def calibrate(
    max_false_rate: float = typer.Option(
        0.01,
        "--max-false-rate",
        help="Share of held-out analogs that may be called confident (sets the threshold).",
    ),
    json_out: bool = typer.Option(False, "--json", help="Print what was measured as JSON."),
    library: Path = LibraryOpt,
) -> None:
    """Calibrate the verdict: search perturbed copies of every reference with and without its
    compound, fit the confidence model and store it in the library."""
    from reflib.library.calibrate import calibrate as run

    with _open(library) as lib:
        result = run(lib, max_false_rate=max_false_rate)
    m = result.measured
    if json_out:
        _echo_json({"seconds": round(result.seconds, 2), **m})
        return
    for line in describe(result.model, result.seconds):
        typer.echo(line)


def describe(model, seconds: float | None = None) -> list[str]:
    """The lines ``reflib calibrate`` prints (also used after an automatic calibration)."""
    m = model.measured
    took = f" in {seconds:.1f} s" if seconds is not None else ""
    out = [
        f"calibrated on {model.n_compounds} compounds ({model.n_spectra} spectra){took}",
        f"queries made: {m['queries']} ({m['in_library_queries']} with the compound in the "
        f"library, {m['held_out_queries']} with it left out)",
        f"in-library queries called confident: {100 * m['in_library_confident']:.1f} % "
        f"(top hit right in {100 * m['top1_in_library']:.1f} %)",
        f"held-out analogs called confident: {100 * m['held_out_confident']:.1f} % "
        f"(allowed {100 * model.max_false_rate:g} %)",
        f"confident and wrong (in library): {100 * m['confident_wrong']:.2f} %",
        f"reliability on {m['evaluation_queries']} queries of compounds the fit did not see "
        f"(expected calibration error {m['ece_evaluation']:.3f}):",
        "  confidence     n   mean confidence   observed right",
    ]
    for b in m["reliability"]:
        bins = f"{b['lo']:.1f}-{b['hi']:.1f}"
        out.append(f"  {bins} {b['n']:7d} {b['predicted']:15.3f} {b['observed']:16.3f}")
    cmp = m.get("model_comparison")
    if cmp:
        out.append(
            "model comparison on the same compound folds (calibration error / Brier / right top "
            "hits confident when 1 % of the rest are):"
        )
        for key, text in (
            ("logistic", "logistic regression"),
            ("logistic_isotonic", "logistic regression + isotonic"),
            ("stored", f"{m.get('model', 'stored model')} (stored)"),
            ("boosting_isotonic", "gradient boosting + isotonic"),
        ):
            if f"{key}_ece" in cmp:
                out.append(
                    f"  {text}: {cmp[key + '_ece']:.3f} / {cmp[key + '_brier']:.3f} / "
                    f"{100 * cmp[key + '_right_at_1pct']:.1f} %"
                )
    out.append(
        "A calibrated confidence is evidence, not proof of identity: it is measured on this "
        "library's own references re-made, not on your unknowns."
    )
    return out
