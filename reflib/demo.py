"""``reflib demo``: the three jobs on the bundled, invented demo data.

Builds a temporary library from ``demo_data/manifest.csv``, then identifies the crudes in
``demo_data/crudes/`` and checks one for leftover starting material. Everything in demo_data is
invented (see demo_data/README.md): these are not real spectra of the named compounds.
"""

from __future__ import annotations

import csv
import tempfile
from collections.abc import Callable
from pathlib import Path

from reflib.errors import ReadError

Echo = Callable[[str], object]


def find_demo_data(explicit: str | Path | None = None) -> Path:
    """The demo_data folder: ``explicit``, else ./demo_data, else the one beside the package."""
    here = Path(__file__).resolve().parent
    candidates = (
        [Path(explicit)]
        if explicit
        else [Path.cwd() / "demo_data", here / "demo_data", here.parent / "demo_data"]
    )
    for c in candidates:
        if (c / "manifest.csv").is_file():
            return c
    raise ReadError(
        "demo data not found (looked for demo_data/manifest.csv here and beside the package); "
        "run 'reflib demo' from a checkout of reflib or pass --data DIR"
    )


def _expected(data: Path) -> list[dict[str, str]]:
    with open(data / "crudes" / "expected.csv", newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def run_demo(echo: Echo, data: str | Path | None = None, print_search=None) -> dict:
    """Walk the jobs, printing with ``echo``; returns what was found (used by the tests)."""
    from reflib.io import read_spectrum
    from reflib.library import Library
    from reflib.library.importer import plan_import, run_import

    folder = find_demo_data(data)
    summary: dict = {"searches": {}, "leftover": None}
    echo("reflib demo: an invented route in an imaginary group (all spectra are simulated).")
    echo("")
    with tempfile.TemporaryDirectory() as tmp:
        with Library.create(Path(tmp) / "demo.sqlite") as lib:
            echo("== Job 1: add the group's confirmed compounds (reflib import manifest.csv)")
            entries = plan_import(folder / "manifest.csv")
            report = run_import(lib, entries)
            summary["added"] = report.added
            for c in lib.compounds():
                echo(f"  {c['name']:<55} {c['role']:<18} {', '.join(c['preps'])}")
            echo(f"  added {report.added} spectra, {len(report.failures)} failures")
            for w in report.warnings:
                echo(f"  warning: {w}")
            for f, why in report.failures:
                echo(f"  failed: {f}: {why}")
            echo("")
            for row in _expected(folder):
                path = folder / "crudes" / row["file"]
                title = row["description"]
                echo(f"== Job 2: which known compound is this? {row['file']} ({title})")
                echo(f"   reflib search {path.name} --prep {row['prep']}")
                res = lib.search(read_spectrum(path), prep=row["prep"], top=3)
                summary["searches"][row["file"]] = {
                    "verdict": res.verdict,
                    "top": res.hits[0].name if res.hits else None,
                    "expected": row["expected"],
                }
                if print_search is not None:
                    print_search(res, explain_top=1)
                else:
                    echo(f"   verdict: {res.verdict}; top hit: {res.hits[0].name}")
                echo("")
            leftover_row = next((r for r in _expected(folder) if r.get("leftover")), None)
            if leftover_row is not None:
                summary["leftover"] = _leftover_job(echo, lib, folder, leftover_row)
    echo("A library match is evidence, not proof of identity: confirm with NMR, MS or a")
    echo("melting point. Handle chloroform and other solvents under your local safety rules.")
    return summary


def _leftover_job(echo: Echo, lib, folder: Path, row: dict[str, str]):
    from reflib.io import read_spectrum
    from reflib.library import lookup

    path = folder / "crudes" / row["file"]
    echo(f"== Job 3: is starting material left? {row['file']}")
    echo(
        f"   reflib leftover {path.name} --start '{row['leftover']}' --product '{row['expected']}'"
    )
    sample = read_spectrum(path)
    res = lookup.leftover_in_library(
        lib, sample, row["leftover"], row["expected"], prep=row["prep"]
    )
    d = res.to_dict()
    share = d.get("share")
    interval = d.get("share_interval")
    echo(f"   starting material detected: {'yes' if d['detected'] else 'no'}")
    if share is not None:
        iv = f" (interval {100 * interval[0]:.1f}-{100 * interval[1]:.1f} %)" if interval else ""
        echo(f"   starting material share of the signal: {100 * share:.1f} %{iv}")
    echo(f"   detection limit for this pair: about {100 * d['detection_limit']:.1f} %")
    for b in d.get("diagnostic_bands", []):
        seen = "seen" if b["seen"] else "not seen"
        echo(f"   diagnostic band {b['position']:.0f} cm-1: {seen}")
    echo("")
    return d
