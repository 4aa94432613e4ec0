"""Real pairs of the reference data: the same compound measured twice, found from each side.

One command, not a test::

    python scripts/bench_real_pairs.py

Data: the gas-phase infrared folder of the jcamp 1.3.2 sdist (scripts/fetch_reference_data.py).
Pairs (file names that are synonyms, from memory): gas against gas from two sources and
resolutions (0.48, 2 and 4 cm-1), and gas against liquid (``ethanol2.jdx`` and
``isopropanol_ASDF.jdx`` carry no state, but their broad hydrogen-bonded O-H band near
3340 cm-1 says liquid; they are added as ``film``). For each pair and each direction the query is
searched in a library of every other readable gas-phase spectrum plus the partner (never the
query itself); the partner's rank, the top hit and the verdict are printed.
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import fetch_reference_data  # noqa: E402

from reflib.errors import ReflibError  # noqa: E402
from reflib.io import read_all  # noqa: E402
from reflib.library import Library  # noqa: E402
from reflib.spectrum import Spectrum  # noqa: E402

PAIRS = [
    ("ethanol", "ethanol2"),
    ("isopropyl alcohol", "isopropanol_ASDF"),
    ("m-xylene", "1,3-dimethylbenzene"),
    ("p-xylene", "1,4-dimethylbenzene"),
    ("butane", "n-butane"),
    ("butadiene", "1,3-butadiene"),
]
LIQUID = {"ethanol2", "isopropanol_ASDF"}
SKIP = {"example_compound_file", "example_multiline_datasets", "heptane-2,3-dimethylpentane"}


def _spectra(folder: Path) -> dict[str, Spectrum]:
    out = {}
    for path in sorted(folder.glob("*.jdx")):
        if path.stem in SKIP:
            continue
        try:
            specs = [b for b in read_all(path) if isinstance(b, Spectrum)]
        except ReflibError:
            continue
        if len(specs) == 1:
            out[path.stem] = specs[0]
    return out


def _prep(stem: str) -> str:
    return "film" if stem in LIQUID else "gas"


def main() -> int:
    folder = fetch_reference_data.data_dir() / "infrared_spectra"
    spectra = _spectra(folder)
    in_pairs = {s for p in PAIRS for s in p}
    base = [s for s in spectra if s not in in_pairs]
    print(f"{'query':<22} {'partner':<22} {'phases':<12} rank  top hit                verdict")
    firsts = top3 = n = 0
    wrong_confident = 0
    for a, b in PAIRS:
        for query, partner in ((a, b), (b, a)):
            lib = Library.create(":memory:")
            for stem in [*base, partner]:
                lib.add(spectra[stem], name=stem, prep=_prep(stem), force=True, check_similar=False)
            res = lib.search(spectra[query], prep=_prep(query), top=10)
            names = [h.name for h in res.hits]
            rank = names.index(partner) + 1 if partner in names else None
            phases = f"{_prep(query)}/{_prep(partner)}"
            n += 1
            firsts += rank == 1
            top3 += rank is not None and rank <= 3
            wrong_confident += res.verdict == "confident" and rank != 1
            print(
                f"{query:<22} {partner:<22} {phases:<12} {rank or '>10':>4}  "
                f"{res.hits[0].name:<22} {res.verdict}"
            )
            lib.close()
    print(f"\nfirst {firsts}/{n}, top 3 {top3}/{n}, confident and wrong {wrong_confident}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
