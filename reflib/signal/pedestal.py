"""Broad bands beneath sharp ones: the H-bonded O-H under a terminal alkyne's C-H.

A sharp band standing on a broad one takes the maximum, so a picker that looks for maxima
reports one band (the sharp one, with a width swollen by the broad band's shoulders) and the
broad band is lost: a secondary alcohol with a terminal alkyne (O-H near 3330, FWHM 200-300
cm-1, with the ``≡C-H`` stretch near 3300, FWHM 20-30) then reads as having no O-H at all.

A grey-scale opening (a running minimum, then a running maximum, over ``opening_cm1``) removes
every band narrower than the window and keeps the ones wider than it: what is left is the
envelope of the broad bands. Its maxima are broad bands when they are wide enough, not already
picked as broad bands, and taller than what a sharp band's own wings leave behind: a Lorentzian
of height h and FWHM w still stands at h / (1 + (L / w)^2) at L / 2 from its centre, so the
opening of an isolated strong sharp band leaves a low bump that is not a band (Lorentzian line
shape, common practice, no source).

Hydrogen-bonded X-H stretches are the broad bands that sharp bands sit on (O-H, N-H, the
carboxylic acid O-H under the C-H stretches; from memory, any handbook correlation chart), so
only envelopes above ``lo_cm1`` are read. Arrays in, arrays out; no I/O.
"""

from __future__ import annotations

import numpy as np

from reflib.signal import filters1d
from reflib.signal.peakfind import find_peaks

#: Window of the opening (cm-1): wider than a sharp band (FWHM 5-40), narrower than an
#: H-bonded X-H band (FWHM 150-400) (common practice, no source).
OPENING_CM1 = 100.0
#: An envelope narrower than this (FWHM, cm-1) is not read as a broad band. An H-bonded O-H
#: stretch is 200-400 cm-1 wide and a carboxylic acid's wider still; the C-H stretches span
#: 2850-2970, so the envelope of their cluster (or of a primary amine's N-H pair, about 70
#: apart) stays well under 200 (from memory, any handbook correlation chart).
MIN_FWHM_CM1 = 200.0
#: Only envelopes above this (cm-1): the X-H stretching region.
LO_CM1 = 2400.0
#: The envelope must stand this many times above the sharp bands' wings.
WING_FACTOR = 3.0


def broad_beneath(
    x: np.ndarray,
    y: np.ndarray,
    noise: float,
    positions: np.ndarray,
    broad: np.ndarray,
    *,
    min_snr: float = 8.0,
    min_relative: float = 0.05,
    opening_cm1: float = OPENING_CM1,
    min_fwhm_cm1: float = MIN_FWHM_CM1,
    lo_cm1: float = LO_CM1,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Broad bands of ``y`` that no band in ``positions`` stands for.

    Parameters
    ----------
    x, y:
        A uniform ascending wavenumber grid (cm-1) and the baseline-corrected absorbance on it.
    noise:
        The noise of ``y`` (absorbance).
    positions, broad:
        The bands already picked (cm-1) and their broad flags.
    min_snr, min_relative:
        A broad band must stand ``min_snr`` times the noise high and reach ``min_relative`` of
        the trace's highest point.

    Returns
    -------
    positions, heights, fwhm
        Of each broad band found (cm-1, absorbance, cm-1), ascending.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    positions = np.asarray(positions, dtype=float)
    broad = np.asarray(broad, dtype=bool)
    none = (np.zeros(0), np.zeros(0), np.zeros(0))
    if x.size < 5 or not np.isfinite(y).all():
        return none
    step = float(x[1] - x[0])
    if max(3, int(round(opening_cm1 / step)) | 1) >= x.size:
        return none
    env = _opening(y, step, opening_cm1)
    top = float(y.max())
    if top <= 0:
        return none
    idx, _ = find_peaks(env, prominence=min_snr * noise)
    out_p, out_h, out_w = [], [], []
    for i in idx.tolist():
        h = float(env[i])
        if x[i] < lo_cm1 or h < min_relative * top or h < min_snr * noise:
            continue
        left, right = _half_crossings(env, i, env[i] / 2.0)
        fwhm = (right - left) * step
        if fwhm < min_fwhm_cm1:
            continue
        centre = 0.5 * (x[left] + x[right])  # the middle of the envelope at half height
        near = np.abs(positions - centre) <= fwhm / 2.0
        if (near & broad).any():
            continue  # already picked as a broad band
        if h < WING_FACTOR * _wings(x, y, env, positions[near], opening_cm1):
            continue
        out_p.append(centre)
        out_h.append(h)
        out_w.append(fwhm)
    order = np.argsort(out_p)
    return (np.asarray(out_p)[order], np.asarray(out_h)[order], np.asarray(out_w)[order])


def _half_crossings(trace: np.ndarray, i: int, level: float) -> tuple[int, int]:
    """The last points on each side of ``i`` still above ``level``."""
    below = trace <= level
    left_hits = np.flatnonzero(below[:i])
    right_hits = np.flatnonzero(below[i + 1 :])
    left = int(left_hits[-1]) + 1 if left_hits.size else 0
    right = i + int(right_hits[0]) if right_hits.size else trace.size - 1
    return left, right


def _wings(
    x: np.ndarray, y: np.ndarray, env: np.ndarray, sharp: np.ndarray, opening_cm1: float
) -> float:
    """The highest wing that the sharp bands at ``sharp`` (cm-1) leave in an opening of
    ``opening_cm1``: each band's height above the envelope, h, and its width at half that
    height, w, give h / (1 + (L / w)^2)."""
    worst = 0.0
    for p in sharp.tolist():
        above, w = _above(x, y, env, p)
        if above > 0:
            worst = max(worst, above / (1.0 + (opening_cm1 / w) ** 2))
    return worst


def _above(x: np.ndarray, y: np.ndarray, env: np.ndarray, p: float) -> tuple[float, float]:
    """Height of the band at ``p`` (cm-1) above the envelope, and its width (cm-1) at half
    that height (0, nan when it does not stand above it)."""
    step = float(x[1] - x[0])
    j = int(np.clip(np.searchsorted(x, p), 0, x.size - 1))
    above = float(y[j] - env[j])
    if above <= 0:
        return 0.0, float("nan")
    left, right = _half_crossings(y - env, j, above / 2.0)
    return above, max((right - left) * step, step)


def widths_above(
    x: np.ndarray, y: np.ndarray, positions: np.ndarray, *, opening_cm1: float = OPENING_CM1
) -> np.ndarray:
    """FWHM (cm-1) of the bands at ``positions`` measured above the envelope of the broad
    bands they stand on (NaN where a band does not stand above it): a sharp band's own width,
    not swollen by the broad band's shoulders."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    env = _opening(y, float(x[1] - x[0]), opening_cm1)
    return np.array([_above(x, y, env, float(p))[1] for p in np.asarray(positions, float)])


def _opening(y: np.ndarray, step: float, opening_cm1: float) -> np.ndarray:
    """Running minimum, then running maximum, over ``opening_cm1`` (an odd number of points)."""
    size = max(3, int(round(opening_cm1 / step)) | 1)
    return filters1d.maximum_filter1d(filters1d.minimum_filter1d(y, size), size)
