"""Speed of reflib.signal.peaks.pick_peaks on large INVENTED spectra, with a bare find_peaks
baseline.

One command, not a test::

    python scripts/bench_peaks.py            # 3 600, 14 000 and 60 000 points
    python scripts/bench_peaks.py --repeat 3

Each spectrum is 40 Gaussian bands at random positions on a sloping baseline with white noise,
absorbance, 400-4000 cm-1. The table gives the best of ``--repeat`` runs of pick_peaks with the
rolling and the ALS baseline, and of ``scipy.signal.find_peaks`` alone on the raw trace with a
fixed prominence (the floor any picker pays), and the ratio of pick_peaks to that floor.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from scipy import signal

from reflib.signal.peaks import pick_peaks
from reflib.spectrum import Spectrum


def invented_spectrum(n: int, seed: int = 0) -> Spectrum:
    rng = np.random.default_rng(seed)
    x = np.linspace(400.0, 4000.0, n)
    y = 0.05 + 0.1 * ((x - 400.0) / 3600.0) ** 2 + rng.normal(0.0, 2e-3, n)
    for centre, fwhm, height in zip(
        rng.uniform(450.0, 3950.0, 40), rng.uniform(6.0, 60.0, 40), rng.uniform(0.05, 1.0, 40)
    ):
        y += height * np.exp(-4.0 * np.log(2.0) * ((x - centre) / fwhm) ** 2)
    return Spectrum(x, y)


def best_time(func, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - t0)
    return best


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repeat", type=int, default=5)
    args = ap.parse_args(argv)
    print(f"{'points':>8}  {'rolling ms':>10}  {'als ms':>8}  {'find_peaks ms':>13}  ratio  bands")
    for n in (3_600, 14_000, 60_000):
        s = invented_spectrum(n)
        t_roll = best_time(lambda s=s: pick_peaks(s), args.repeat)
        t_als = best_time(lambda s=s: pick_peaks(s, baseline="als"), args.repeat)
        t_bare = best_time(lambda s=s: signal.find_peaks(s.y, prominence=0.02), args.repeat)
        bands = len(pick_peaks(s))
        ratio = t_roll / t_bare if t_bare > 0 else float("nan")
        print(
            f"{n:8d}  {t_roll * 1e3:10.1f}  {t_als * 1e3:8.1f}  {t_bare * 1e3:13.2f}  "
            f"{ratio:5.1f}  {bands:5d}"
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
