"""Local maxima, their prominences and their widths, in numpy alone (indices in points).

These are the two peak-finding calls the picker (:mod:`reflib.peaks`) needs, written so that
importing reflib does not import ``scipy.signal`` (whose package import alone costs most of a
second, through ``scipy.stats``). The definitions are those of the general-purpose reference
library, SciPy (``scipy.signal.find_peaks`` and ``scipy.signal.peak_widths``), and the results
are the same, index for index and bit for bit (tests/test_peakfind.py compares them on the
published gas-phase spectra and on random traces):

* a local maximum is a point, or a run of equal points (a plateau), with a lower neighbour on
  each side; a plateau is reported at its middle point (the left one of the two middle points);
  the first and last points of the trace are never maxima;
* ``distance``: maxima are taken from the highest down, and each removes the lower maxima
  closer than ``distance`` points; equal heights are taken in the order ``np.argsort`` gives;
* the prominence of a maximum is its height above the higher of its two bases; a base is the
  lowest point between the maximum and the nearest point higher than it on that side (or the
  end of the trace); of equal lowest points, the one nearest the maximum is the base;
* a width is measured at ``height - rel_height * prominence``: from the maximum outwards to the
  first point at or below that level (never past the base), interpolated linearly between that
  point and its neighbour towards the maximum.

The trace must be free of NaN (the picker's traces are). Loops run over maxima, not points.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence

import numpy as np

from reflib.errors import ValidationError


def local_maxima(x: np.ndarray) -> np.ndarray:
    """Indices of the local maxima of ``x`` (plateaus at their middle point), ascending.

    >>> local_maxima(np.array([0.0, 2.0, 1.0, 3.0, 3.0, 3.0, 0.0, 5.0])).tolist()
    [1, 4]
    """
    x = _as_trace(x)
    if x.size < 3:
        return np.zeros(0, dtype=np.intp)
    # Runs of equal values: starts and (inclusive) ends.
    change = np.flatnonzero(x[1:] != x[:-1]) + 1
    starts = np.concatenate(([0], change))
    ends = np.concatenate((change - 1, [x.size - 1]))
    if starts.size < 3:
        return np.zeros(0, dtype=np.intp)
    s, e = starts[1:-1], ends[1:-1]  # a run touching an end of the trace is never a maximum
    is_max = (x[s - 1] < x[s]) & (x[e + 1] < x[e])
    s, e = s[is_max], e[is_max]
    return ((s + e) // 2).astype(np.intp)


def select_by_distance(peaks: np.ndarray, heights: np.ndarray, distance: float) -> np.ndarray:
    """Boolean mask of the maxima kept when each, highest first, removes lower ones nearer than
    ``distance`` points (the distance is rounded up to a whole number of points).

    ``peaks`` must be ascending.

    >>> select_by_distance(np.array([2, 4, 9]), np.array([1.0, 2.0, 1.5]), 3).tolist()
    [False, True, True]
    """
    peaks = np.asarray(peaks, dtype=np.intp)
    heights = np.asarray(heights, dtype=float)
    dist = int(np.ceil(distance))
    keep = np.ones(peaks.size, dtype=bool)
    if peaks.size < 2 or dist <= 1:
        return keep
    order = np.argsort(heights)  # the same call as the reference, so ties fall the same way
    for j in order[::-1]:  # one step per maximum
        if not keep[j]:
            continue
        p = peaks[j]
        lo = int(np.searchsorted(peaks, p - dist, side="right"))
        hi = int(np.searchsorted(peaks, p + dist, side="left"))
        keep[lo:j] = False
        keep[j + 1 : hi] = False
    return keep


def peak_prominences(x: np.ndarray, peaks: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Prominences (units of ``x``), left bases and right bases (indices) of the given maxima.

    >>> prom, lb, rb = peak_prominences(np.array([0.0, 3.0, 1.0, 2.0, 0.5]), np.array([1, 3]))
    >>> prom.tolist(), lb.tolist(), rb.tolist()
    ([2.5, 1.0], [0, 2], [4, 4])
    """
    x = _as_trace(x)
    peaks = _as_peaks(peaks, x.size)
    n = x.size
    prominences = np.empty(peaks.size)
    left_bases = np.empty(peaks.size, dtype=np.intp)
    right_bases = np.empty(peaks.size, dtype=np.intp)
    for k, p in enumerate(peaks.tolist()):  # one step per maximum
        h = x[p]
        start = _last_above(x, p, h) + 1
        stop = _first_above(x, p, h, n)
        left = x[start : p + 1]
        lb = start + (left.size - 1 - int(np.argmin(left[::-1])))  # lowest, nearest the peak
        rb = p + int(np.argmin(x[p:stop]))
        left_bases[k], right_bases[k] = lb, rb
        prominences[k] = h - max(x[lb], x[rb])
    return prominences, left_bases, right_bases


def find_peaks(
    x: np.ndarray, *, prominence: float | None = None, distance: float | None = None
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Local maxima of ``x`` at least ``distance`` points apart with at least ``prominence``.

    Returns the indices (ascending) and a dict with ``"prominences"`` (units of ``x``),
    ``"left_bases"`` and ``"right_bases"`` (indices); the dict is empty when ``prominence`` is
    None. Same results as SciPy's ``scipy.signal.find_peaks(x, prominence=..., distance=...)``.

    >>> idx, props = find_peaks(np.array([0.0, 1.0, 0.0, 5.0, 0.0, 1.2, 0.0]), prominence=1.1)
    >>> idx.tolist(), props["prominences"].tolist()
    ([3, 5], [5.0, 1.2])
    """
    x = _as_trace(x)
    if distance is not None and not distance >= 1:
        raise ValidationError(f"distance must be at least 1 point, got {distance!r}")
    peaks = local_maxima(x)
    if distance is not None:
        peaks = peaks[select_by_distance(peaks, x[peaks], distance)]
    props: dict[str, np.ndarray] = {}
    if prominence is not None:
        prom, lb, rb = peak_prominences(x, peaks)
        keep = prominence <= prom
        peaks = peaks[keep]
        props = {"prominences": prom[keep], "left_bases": lb[keep], "right_bases": rb[keep]}
    return peaks, props


def peak_widths(
    x: np.ndarray,
    peaks: np.ndarray,
    *,
    rel_height: float = 0.5,
    prominence_data: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Widths (points) of the given maxima at ``rel_height`` of their prominence below the top.

    ``prominence_data`` is ``(prominences, left_bases, right_bases)`` as :func:`find_peaks`
    returns them (computed when None); the search for each crossing stops at the base. Returns
    ``(widths, width_heights, left_ips, right_ips)``: widths and the fractional crossing indices
    in points, the evaluation heights in units of ``x``. A zero width gives a warning, as in
    SciPy's ``scipy.signal.peak_widths``.

    >>> w, h, left, right = peak_widths(np.array([0.0, 1.0, 2.0, 1.0, 0.0]), np.array([2]))
    >>> w.tolist(), h.tolist(), left.tolist(), right.tolist()
    ([2.0], [1.0], [1.0], [3.0])
    """
    x = _as_trace(x)
    peaks = _as_peaks(peaks, x.size)
    if not rel_height >= 0:
        raise ValidationError(f"rel_height must be 0 or more, got {rel_height!r}")
    if prominence_data is None:
        prominence_data = peak_prominences(x, peaks)
    prom, lbs, rbs = (np.asarray(a) for a in prominence_data)
    if not (prom.shape == lbs.shape == rbs.shape == peaks.shape):
        raise ValidationError(
            f"prominence data must hold one value per peak ({peaks.size}), got arrays of "
            f"{prom.size}, {lbs.size} and {rbs.size}"
        )
    n = x.size
    m = peaks.size
    widths = np.empty(m)
    heights = np.empty(m)
    left_ips = np.empty(m)
    right_ips = np.empty(m)
    for k in range(m):  # one step per maximum
        p, lb, rb = int(peaks[k]), int(lbs[k]), int(rbs[k])
        if not 0 <= lb <= p <= rb < n:
            raise ValidationError(
                f"prominence data is invalid for peak {p}: bases {lb} and {rb} must enclose it "
                f"within the trace of {n} points"
            )
        level = x[p] - prom[k] * rel_height
        heights[k] = level
        # Left: the last point at or below the level in (lb, p], else the base itself.
        below = np.flatnonzero(~(level < x[lb + 1 : p + 1]))
        i = lb + 1 + int(below[-1]) if below.size else lb
        left = float(i)
        if x[i] < level:
            left += (level - x[i]) / (x[i + 1] - x[i])
        # Right: the first point at or below the level in [p, rb), else the base itself.
        below = np.flatnonzero(~(level < x[p:rb]))
        i = p + int(below[0]) if below.size else rb
        right = float(i)
        if x[i] < level:
            right -= (level - x[i]) / (x[i - 1] - x[i])
        left_ips[k], right_ips[k] = left, right
        widths[k] = right - left
    if np.any(widths == 0):
        warnings.warn("some peaks have a width of 0", RuntimeWarning, stacklevel=2)
    return widths, heights, left_ips, right_ips


def _as_trace(x: np.ndarray) -> np.ndarray:
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 1:
        raise ValidationError(f"a trace must be one-dimensional, got shape {x.shape}")
    return x


def _as_peaks(peaks: np.ndarray, n: int) -> np.ndarray:
    peaks = np.asarray(peaks)
    if peaks.size == 0:
        return np.zeros(0, dtype=np.intp)
    if peaks.ndim != 1 or not np.issubdtype(peaks.dtype, np.integer):
        raise ValidationError(
            f"peaks must be a 1-D array of indices, got {peaks.dtype} {peaks.shape}"
        )
    if peaks.min() < 0 or peaks.max() >= n:
        raise ValidationError(
            f"peak indices must lie in 0..{n - 1}, got {peaks.min()}..{peaks.max()}"
        )
    return peaks.astype(np.intp, copy=False)


_FIRST_WINDOW = 32


def _last_above(x: np.ndarray, p: int, h: float) -> int:
    """Index of the nearest point left of ``p`` that is not at or below ``h`` (-1 if none)."""
    hi, width = p, _FIRST_WINDOW
    while hi > 0:  # windows doubling outwards: cost grows with the distance, not the trace
        lo = max(0, hi - width)
        above = np.flatnonzero(~(x[lo:hi] <= h))
        if above.size:
            return lo + int(above[-1])
        hi, width = lo, 2 * width
    return -1


def _first_above(x: np.ndarray, p: int, h: float, n: int) -> int:
    """Index of the nearest point right of ``p`` that is not at or below ``h`` (``n`` if none)."""
    lo, width = p + 1, _FIRST_WINDOW
    while lo < n:
        hi = min(n, lo + width)
        above = np.flatnonzero(~(x[lo:hi] <= h))
        if above.size:
            return lo + int(above[0])
        lo, width = hi, 2 * width
    return n


__all__: Sequence[str] = [
    "find_peaks",
    "local_maxima",
    "peak_prominences",
    "peak_widths",
    "select_by_distance",
]
