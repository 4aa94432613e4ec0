"""How many of the visible bands of INVENTED spectra the picker finds, per preparation.

One command, not a test::

    python scripts/bench_band_recall.py            # 320 compounds per preparation
    python scripts/bench_band_recall.py --quick    # 80

Each compound of scripts/simlib.py is measured as in scripts/bench_accuracy.py (perturbed,
phase effects, rendered with noise and baseline, the preparation applied) and picked by
reflib. A band of the perturbed list is *visible* when its relative intensity is at least 0.1
and the preparation's comparison weight there (reflib.chem.prep.weight_profile, air included)
is at least 0.5; it is *found* when a picked band lies within 8 cm-1 (half the encoding's
broadening). Also printed: picked bands per spectrum with no visible or masked band within 8
cm-1 (false bands, counted outside masked regions only). Numbers measure agreement with the
simulator, not with real spectra.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

import simlib  # noqa: E402
from bench_accuracy import QUERY_PREPS  # noqa: E402

TOLERANCE = 8.0


def main(argv: list[str] | None = None) -> int:
    from reflib.chem import prep as prep_mod
    from reflib.signal.peaks import pick_peaks

    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--preps", default=",".join(QUERY_PREPS))
    args = ap.parse_args(argv)
    n = 80 if args.quick else 320
    compounds = simlib.make_compounds(n, args.seed)
    print(f"{'prep':8} {'visible':>8} {'found%':>7} {'false/spec':>10}")
    for label in [p.strip() for p in args.preps.split(",") if p.strip()]:
        tokens = QUERY_PREPS[label]
        seen = found = false = 0
        for c in compounds:
            rng = simlib.rng_for(args.seed, "query", label, c.key)
            pl = simlib.condense(simlib.perturb(c.peaks, rng), tokens, rng)
            spec = simlib.render(
                pl,
                rng=rng,
                noise=float(rng.uniform(0.0008, 0.004)),
                baseline=float(rng.uniform(0.003, 0.03)),
            )
            spec = simlib.apply_prep(spec, tokens, rng)
            picked = pick_peaks(spec).positions
            lo, hi = spec.range_cm1
            w = prep_mod.weight_profile(pl.positions, tokens, air=True)
            inside = (pl.positions >= lo + 10) & (pl.positions <= hi - 10)
            vis = (pl.intensities >= 0.1) & (w >= 0.5) & inside
            for p in pl.positions[vis]:
                seen += 1
                found += bool(picked.size and np.min(np.abs(picked - p)) <= TOLERANCE)
            wp = prep_mod.weight_profile(picked, tokens, air=True) if picked.size else picked
            for p, wt in zip(picked, wp):
                if wt >= 0.5 and np.min(np.abs(pl.positions - p)) > TOLERANCE:
                    false += 1
        print(f"{label:8} {seen:8d} {100 * found / max(seen, 1):7.1f} {false / n:10.2f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
