"""Comparing a gas-phase spectrum with a condensed-phase one (film, neat liquid, solid, mull,
solution). Arrays in, results out; no I/O.

The same compound looks different in the two phases: polar groups absorb higher in the gas (a
carbonyl by about 20 cm-1, a free O-H far above the hydrogen-bonded band of the liquid), each
band has a rotational contour instead of one maximum, and the X-H stretches change shape most of
all. So a gas/condensed comparison

* merges each gas band's rotational contour (P, Q, R branches) into one band at its centre;
* moves the gas spectrum's bands to where the condensed phase has them, by the correlation
  table's ``gas_shift_cm1`` (:func:`to_condensed`: the median shift of the table rows whose
  gas-phase range holds the band, zero for most rows);
* compares with a wider position tolerance (:data:`BROADENING_CM1` instead of the encoding's
  16 cm-1, :data:`MATCH_TOLERANCE_CM1` instead of 12 in the band-by-band explanation);
* counts the O-H/N-H stretch region (:data:`XH_REGION`, 3100-3700 cm-1) with a weight of 0.3, on
  top of the 0.3 any phase change already gives it;
* is never called confident unless the bands say so clearly (:data:`STRICT_RULE`).

These numbers are from knowledge of the trade (gas-phase shifts of a few to 40 cm-1 for polar
groups, P-R separations of 15-30 cm-1), not fitted to the reference data they are checked on.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np

from reflib.analysis.encode import Encoding
from reflib.spectrum import PeakList

#: FWHM (cm-1) a sharp band is spread to in a gas/condensed comparison: about one P-R
#: half-separation wider than the encoding's 16 cm-1.
BROADENING_CM1 = 28.0
#: Position tolerance (cm-1) of a band match in a gas/condensed explanation.
MATCH_TOLERANCE_CM1 = 22.0
#: O-H and N-H stretches: (lo, hi, weight) in cm-1. C-H stretches (below 3100) keep their
#: weight: they move little between phases, and a mull's own C-H bands are its mask's job.
XH_REGION = (3100.0, 3700.0, 0.3)


def is_gas(tokens: Sequence[str]) -> bool:
    """True when the preparation tokens say gas phase."""
    return "gas" in tokens


def gas_against_condensed(a: Sequence[str], b: Sequence[str]) -> bool:
    """True when exactly one of two preparations is a gas."""
    return is_gas(a) != is_gas(b)


def _shift_table() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    from reflib.chem import bands

    rows = [r for r in bands.table() if r.kind == "band"]
    ranges = np.array([r.range_for("gas") for r in rows])
    shifts = np.array([r.gas_shift_cm1 for r in rows])
    return ranges[:, 0], ranges[:, 1], shifts


def to_condensed(peaks: PeakList) -> PeakList:
    """A gas-phase peak list with each band moved down by the median ``gas_shift_cm1`` of the
    correlation-table rows whose gas-phase range holds it (bands no row claims stay put).

    >>> moved = to_condensed(PeakList([1735.0, 2960.0], [1.0, 0.5]))
    >>> [round(float(p)) for p in moved.positions]   # a gas ketone C=O; a C-H stretch
    [1715, 2960]
    """
    if len(peaks) == 0:
        return peaks
    lo, hi, shifts = _shift_table()
    pos = peaks.positions
    inside = (pos[:, None] >= lo[None, :]) & (pos[:, None] <= hi[None, :])
    moved = pos.copy()
    for i in range(pos.size):
        s = shifts[inside[i]]
        if s.size:
            moved[i] = pos[i] - float(np.median(s))
    return PeakList(
        moved,
        peaks.intensities,
        peaks.widths,
        peaks.strengths,
        peaks.broad,
        peaks.shoulder,
        meta=peaks.meta,
    )


def as_condensed(peaks: PeakList, tokens: Sequence[str]) -> PeakList:
    """For a gas-phase list: rotational contours merged into one band at their centre
    (:func:`reflib.signal.resolution.merge_rotational`), then :func:`to_condensed`; any other
    list as it is."""
    if not is_gas(tokens):
        return peaks
    from reflib.signal.resolution import merge_rotational

    return to_condensed(merge_rotational(peaks))


def wide_encoding(enc: Encoding) -> Encoding:
    """The encoding with the wider gas/condensed position tolerance."""
    return replace(enc, broadening=max(enc.broadening, BROADENING_CM1))


def xh_weights(grid: np.ndarray, w: np.ndarray) -> np.ndarray:
    """``w`` with the X-H stretch region down-weighted."""
    lo, hi, weight = XH_REGION
    return np.where((grid >= lo) & (grid <= hi), w * weight, w)


def strict_verdict(verdict: str, reason: str, features: dict[str, float]) -> tuple[str, str]:
    """A gas/condensed search is confident only with a high score, a clear margin and every
    strong band matched; otherwise at most ambiguous."""
    if verdict != "confident":
        return verdict, reason
    unmatched = features["strong_new"] + features["strong_missing"]
    if features["score"] >= 0.9 and features["margin"] >= 0.08 and unmatched == 0:
        return verdict, reason + " (gas against condensed phase, every strong band matched)"
    return "ambiguous", (
        "gas against condensed phase: band positions and shapes differ between phases, so the "
        f"top hit (score {features['score']:.2f}, margin {features['margin']:.3f}) is a "
        "candidate, not a confident match"
    )


__all__: Sequence[str] = [
    "BROADENING_CM1",
    "MATCH_TOLERANCE_CM1",
    "XH_REGION",
    "as_condensed",
    "gas_against_condensed",
    "is_gas",
    "strict_verdict",
    "to_condensed",
    "wide_encoding",
    "xh_weights",
]
