"""Render the README's pictures from the invented demo data into docs/.

    python scripts/make_readme_figures.py [--out docs]

A search plot of the nujol-mull crude (AO-214-03) and a leftover plot of the crude reduction
product with unreduced ketone left (AO-214-04), each as a PNG of at most 1200 x 800 pixels. The
demo data is invented (demo_data/README.md): the pictures show reflib's drawing, not real spectra.
"""

from __future__ import annotations

import argparse
import csv
import tempfile
from pathlib import Path

from reflib.demo import find_demo_data
from reflib.io import read_spectrum
from reflib.library import Library
from reflib.library.importer import plan_import, run_import
from reflib.library.lookup import leftover_in_library
from reflib.report import leftover_outputs, search_outputs

ROOT = Path(__file__).resolve().parent.parent


def shrink(path: Path) -> None:
    """Store a PNG with an adaptive 256-colour palette (the plots use a handful of colours plus
    anti-aliasing), so the committed pictures stay small."""
    if path.suffix != ".png":
        return
    from PIL import Image

    with Image.open(path) as im:
        small = im.convert("RGB").convert("P", palette=Image.Palette.ADAPTIVE, colors=256)
    small.save(path, optimize=True)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=ROOT / "docs")
    ap.add_argument("--svg", action="store_true", help="Also write SVG copies (not committed).")
    args = ap.parse_args()
    data = find_demo_data(ROOT / "demo_data")
    args.out.mkdir(parents=True, exist_ok=True)
    with open(data / "crudes" / "expected.csv", newline="", encoding="utf-8") as fh:
        rows = {r["file"]: r for r in csv.DictReader(fh)}
    with tempfile.TemporaryDirectory() as tmp, Library.create(Path(tmp) / "demo.sqlite") as lib:
        run_import(lib, plan_import(data / "manifest.csv"))
        row = rows["AO-214-03-crude-nujol.jdx"]
        query = read_spectrum(data / "crudes" / row["file"])
        res = lib.search(query, prep=row["prep"], top=3)
        for suffix in [".png"] + ([".svg"] if args.svg else []):
            out = search_outputs(lib, res, query, plot=args.out / f"search-nujol-crude{suffix}")
            shrink(out[0])
            print("wrote", *out)
        row = rows["AO-214-04-crude-film.jdx"]
        sample = read_spectrum(data / "crudes" / row["file"])
        lr = leftover_in_library(lib, sample, row["leftover"], row["expected"], prep=row["prep"])
        for suffix in [".png"] + ([".svg"] if args.svg else []):
            out = leftover_outputs(
                lib, lr, sample, plot=args.out / f"leftover-ketone{suffix}", prep=row["prep"]
            )
            shrink(out[0])
            print("wrote", *out)


if __name__ == "__main__":
    main()
