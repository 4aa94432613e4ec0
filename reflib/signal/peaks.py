"""Peak picking for full infrared spectra: baseline, noise, bands, widths, strength words.

:func:`pick_peaks` turns a :class:`~reflib.spectrum.Spectrum` into a
:class:`~reflib.spectrum.PeakList`. The search ranks on these lists, so the picker matters more
than any later step (see the design notes). The steps, each a pure function of arrays:

1. transmittance -> decadic absorbance (:meth:`Spectrum.to_absorbance`, capped at A = 4);
2. a uniform wavenumber grid (:func:`uniform_grid`; ``np.interp`` only when the axis is not
   uniform within 1 %);
3. :func:`baseline` removal: a rolling minimum followed by a rolling maximum (a grey opening,
   which follows a straight sloping baseline exactly) and a moving average, with windows in
   cm-1; asymmetric least squares as the alternative;
4. a light Gaussian smoothing (``smooth_cm1`` FWHM) and the noise of the smoothed trace from
   :func:`estimate_noise` (for transmittance input the noise is propagated point by point,
   because -log10 amplifies it where little light gets through);
5. local maxima (:func:`reflib.signal.peakfind.find_peaks`, the definitions of SciPy's
   ``scipy.signal.find_peaks``) with a prominence of ``min_snr`` times that noise and a
   minimum separation in cm-1;
6. a parabola through the three top points for a sub-grid position, ``peak_widths`` at half
   height above the baseline for the FWHM (cm-1), the baseline-corrected height for the relative
   intensity, :func:`~reflib.spectrum.strength_word` for the word, a width rule for ``broad``.

Saturated bands become one band at the centre of the top, and their positions are listed in
``meta.extra['saturated']``: transmittance at or below ``saturation_t`` (absorbance at or above
2 by default), a plateau near a transmittance floor above that level (stray light, a chart's
floor: :func:`floor_runs`), an absorbance trace clipped to a run of identical values at its
maximum, or a strong noisy plateau at the maximum (see :func:`saturated_runs` and
:func:`flat_tops`).

Opaque regions are holes, not bands: a saturated run that reaches an end of the data, is wider
than :data:`OPAQUE_MIN_WIDTH_CM1`, or overlaps a region the spectrum's own preparation makes
opaque (``meta.prep``: a solvent in its cell, a window's cut-off) is cut out with the dark
part of its walls (while less than a tenth of the light nearby comes through,
:data:`WALL_DEPTH`) before the baseline, the baseline is computed on each piece between holes
(it never bridges one; beside a hole it is the higher of the rolling baseline and the lower
convex hull of the piece, which follows the rest of the wall, :func:`lower_hull`), no band is
reported in or at the edge of a hole, and the cut ranges with that edge (the smoothing's
reach, a few points) are listed in ``meta.extra['holes']`` so that the comparison counts
them as not covered.

Bands the trace shows no maximum for, or only a shallow dip beside a stronger band, are found
in the second derivative (:func:`derivative_bands`): their prominence is their height above
the local envelope, held to the same ``min_snr``, and they are flagged ``shoulder`` (their
height is a lower bound). Comparing them with those heights measured worse on
scripts/bench_accuracy.py (film 98.4 -> 97.8, nujol 96.2 -> 94.7 % top-1), so the search leaves
flagged shoulders out; they are for the chemist's eye.

Chosen defaults and why (measured on the gas-phase spectra of the jcamp 1.3.2 distribution and on
constructed bands; see the tests):

* ``min_snr=8`` (prominence over the noise of the smoothed trace): white noise on a flat
  baseline sampled every 1 cm-1 gave 12 false bands per 3601-point spectrum at 5, 0.2 at 7 and
  1 in 30 spectra at 8 (a prominence is a maximum minus a minimum, so it reaches about 7 sigma by
  chance over a few thousand points); on the gas-phase set, 8 instead of 5 lost only bands under
  a quarter of the strongest, mostly Q-branch bumps on rotational envelopes.
* ``window_cm1=500``: wider than a hydrogen-bonded O-H envelope (FWHM about 300 cm-1), which then
  keeps about 85 % of its height; a narrower window eats broad bands, a wider one stops following
  curved baselines.
* ``smooth_cm1=2``: well under a 4 cm-1 instrument resolution, so band positions do not move and
  widths grow by under 3 % for 10 cm-1 bands (the smoothing is removed from the FWHM in
  quadrature), while the noise drops on finely sampled spectra.
* ``min_separation_cm1=4``: bands closer than a typical 4 cm-1 resolution are not resolved; this
  also keeps resolved rotational lines of gas-phase spectra from filling the list.
* ``min_relative=0.01`` and ``max_peaks=50``: bands under 1 % of the strongest add little to a
  library match; 50 bands is more than a chemist writes for any compound.
* ``broad_fwhm_cm1=80`` above 2500 cm-1, ``broad_fwhm_low_cm1=60`` below: hydrogen-bonded O-H
  and N-H stretches are far wider than 80 cm-1 while C-H stretches are 10-30 cm-1 wide and
  fingerprint bands rarely exceed 40 cm-1 (common practice, no source).
* ``saturation_t=0.01``: below 1 % transmittance a spectrometer (or a chart) no longer tells
  band shape from noise.
"""

from __future__ import annotations

import copy
import warnings
from collections.abc import Sequence

import numpy as np

from reflib.errors import ValidationError
from reflib.signal import filters1d
from reflib.signal.peakfind import find_peaks, local_maxima, peak_widths, select_by_distance
from reflib.signal.pedestal import broad_beneath, widths_above
from reflib.spectrum import MIN_TRANSMITTANCE, PeakList, Spectrum, strength_word

#: Baseline methods understood by :func:`baseline` and :func:`pick_peaks`.
BASELINE_METHODS = ("rolling", "als", "none")

#: A grid whose steps differ from their median by less than this fraction is used as it is.
UNIFORM_TOLERANCE = 0.01

#: The resampled grid never gets more than this many times the input's points.
MAX_RESAMPLE_FACTOR = 4

#: An absorbance trace with more than this fraction of its points above the saturation level is
#: taken to be in scaled units, and only the repeated-maximum rule marks saturation.
MAX_SATURATED_FRACTION = 0.25

#: A transmittance spectrum whose lowest point is at or below this (5 %T) has bands near its
#: floor: points within :data:`FLOOR_SPAN_T` of that lowest transmittance form a saturated
#: plateau (a chart or an instrument with a little stray light bottoms out at a few %T, not 0).
FLOOR_T = 0.05
FLOOR_SPAN_T = 0.025

#: A saturated run wider than this (cm-1) is an opaque region (solvent, window, crystal), not a
#: band: an over-thick sample's C-H stretches saturate together over 100-150 cm-1, a
#: hydrogen-bonded O-H envelope more, and such an O-H is then left out rather than misplaced
#: (common practice, no source). A run reaching an end of the data, or overlapping a region the
#: spectrum's own preparation makes opaque (a solvent in its cell, a window's cut-off), is
#: opaque whatever its width.
OPAQUE_MIN_WIDTH_CM1 = 200.0

#: The walls of an opaque region are cut with it, at least :data:`WALL_MIN_CM1` beyond the run,
#: then while the trace smoothed over :data:`WALL_SMOOTH_CM1` (FWHM) keeps falling and stays
#: more than :data:`WALL_DEPTH` absorbance above the lowest point within :data:`WALL_MAX_CM1`
#: (less than a tenth of the light the sample passes there: the photometric noise is ten times
#: larger and stray light flattens band shapes), and at most :data:`WALL_MAX_CM1` beyond the
#: run. The lower part of the wall is left to the baseline, which follows it (see
#: :func:`lower_hull`), so bands standing on it are kept (common practice, no source).
WALL_SMOOTH_CM1 = 8.0
WALL_MAX_CM1 = 80.0
WALL_MIN_CM1 = 6.0
WALL_DEPTH = 1.0

#: Second-derivative bands (shoulders, bands on a flank): the trace is smoothed again with this
#: FWHM (cm-1) before the derivative, and a minimum of -y'' must reach this many standard
#: deviations of the derivative's own noise.
D2_SMOOTH_CM1 = 4.0
D2_SNR = 6.0

_MAD_TO_SIGMA = 1.482602218505602  # 1 / Phi^-1(3/4): MAD of a normal sample -> its sigma


def estimate_noise(y: np.ndarray) -> float:
    """Robust standard deviation of the white noise on a trace, in the units of ``y``.

    Uses the second difference ``y[i-1] - 2 y[i] + y[i+1]``, which removes straight baselines and
    most of any band sampled with more than a few points per width; for white noise of standard
    deviation sigma it has standard deviation ``sqrt(6) sigma``. The median absolute deviation
    (scaled by 1.4826) makes the estimate blind to the few points where bands are sharp. When
    more than half of the second differences are exactly zero (a digitised, quantised trace),
    the root mean square of the central 95 % is used instead, so quantisation still counts as
    noise. A constant trace gives 0.

    >>> rng = np.random.default_rng(0)
    >>> round(estimate_noise(rng.normal(0.0, 0.01, 20000)), 3)
    0.01
    """
    y = np.asarray(y, dtype=float).reshape(-1)
    if y.size < 3:
        return 0.0
    d2 = np.diff(y, 2)
    mad = float(np.median(np.abs(d2 - np.median(d2))))
    if mad > 0:
        return float(_MAD_TO_SIGMA * mad / np.sqrt(6.0))
    a = np.abs(d2)
    central = a[a <= np.quantile(a, 0.95)]
    if central.size == 0 or not np.any(central > 0):
        central = a
    return float(np.sqrt(np.mean(central**2) / 6.0))


def is_uniform(x: np.ndarray, tolerance: float = UNIFORM_TOLERANCE) -> bool:
    """True when every step of ``x`` is within ``tolerance`` (a fraction) of the median step."""
    x = np.asarray(x, dtype=float)
    if x.size < 3:
        return True
    dx = np.diff(x)
    med = float(np.median(dx))
    return bool(np.all(np.abs(dx - med) <= tolerance * abs(med)))


def uniform_grid(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``(x, y)`` on an evenly spaced ascending grid (cm-1), by ``np.interp`` when needed.

    A grid already uniform within :data:`UNIFORM_TOLERANCE` is returned unchanged (as float
    arrays). Otherwise the new step is the median step of ``x``, but never so small that the grid
    gets more than :data:`MAX_RESAMPLE_FACTOR` times the input's points.

    >>> gx, gy = uniform_grid(np.array([1.0, 2.0, 3.0, 5.0]), np.array([0.0, 1.0, 2.0, 4.0]))
    >>> gx.tolist(), gy.tolist()
    ([1.0, 2.0, 3.0, 4.0, 5.0], [0.0, 1.0, 2.0, 3.0, 4.0])
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if is_uniform(x):
        return x, y
    span = float(x[-1] - x[0])
    step = max(float(np.median(np.diff(x))), span / (MAX_RESAMPLE_FACTOR * x.size))
    n = int(np.floor(span / step + 1e-9)) + 1
    gx = x[0] + step * np.arange(n)
    return gx, np.interp(gx, x, y)


def _points(width_cm1: float, step: float) -> int:
    """An odd number of points covering ``width_cm1`` at grid step ``step`` (at least 1)."""
    n = int(round(width_cm1 / step))
    return max(1, n + (1 - n % 2))


def _rolling_baseline(
    y: np.ndarray,
    step: float,
    window_cm1: float,
    smooth_cm1: float,
    hole_edges: tuple[bool, bool] = (False, False),
):
    size = _points(window_cm1, step)
    opened = filters1d.maximum_filter1d(
        filters1d.minimum_filter1d(y, size, mode="nearest"), size, mode="nearest"
    )
    smooth = _points(smooth_cm1, step)
    if smooth > 1:
        smoothed = filters1d.uniform_filter1d(opened, smooth, mode="nearest")
        # A moving average can rise above the data where the opening has a sharp corner;
        # the baseline never passes above the trace.
        out = np.minimum(smoothed, y)
    else:
        out = opened
    if any(hole_edges):
        # Beside a hole the trace starts on the wall of the opaque band. The opening follows a
        # falling wall, but the moving average does not (it mixes the wall's top into the
        # points beside it); the lower convex hull follows a convex wall between the feet of
        # the bands standing on it. Both lie under the trace: take the higher.
        out = np.maximum(out, lower_hull(y))
    return out


def lower_hull(y: np.ndarray) -> np.ndarray:
    """The lower convex hull of the points ``(i, y[i])`` (a "rubber band" stretched under the
    trace), evaluated at every index: never above the trace, equal to it wherever the trace is
    convex from below and touches the band."""
    y = np.asarray(y, dtype=float)
    n = y.size
    if n < 3:
        return y.copy()
    v = y.tolist()  # plain floats: the loop below is per point
    hull: list[int] = []
    for i, yi in enumerate(v):  # Andrew's monotone chain, lower half
        while len(hull) >= 2:
            i0, i1 = hull[-2], hull[-1]
            if (v[i1] - v[i0]) * (i - i0) - (yi - v[i0]) * (i1 - i0) >= 0:
                hull.pop()
            else:
                break
        hull.append(i)
    idx = np.array(hull)
    return np.interp(np.arange(n, dtype=float), idx.astype(float), y[idx])


def _als_baseline(
    y: np.ndarray, step: float, window_cm1: float, p: float, niter: int
) -> np.ndarray:
    """Asymmetric least squares (Eilers and Boelens' scheme): a smooth curve under the trace.

    The smoothness weight is set from the window: a Whittaker smoother with weight ``lam`` on
    second differences passes variations slower than a period of ``2 pi lam**0.25`` points, so
    ``lam = (window_points / (2 pi))**4``.
    """
    n = y.size
    if n < 4:
        return np.full(n, float(np.min(y)))
    from scipy.linalg import solveh_banded  # only here: scipy.linalg costs ~0.3 s to import

    lam = (window_cm1 / step / (2.0 * np.pi)) ** 4
    # D'D for the second-difference matrix D, as upper bands for solveh_banded.
    main = np.full(n, 6.0)
    main[[0, -1]] = 1.0
    main[[1, -2]] = 5.0
    off1 = np.full(n - 1, -4.0)
    off1[[0, -1]] = -2.0
    off2 = np.ones(n - 2)
    ab = np.zeros((3, n))
    ab[0, 2:] = lam * off2
    ab[1, 1:] = lam * off1
    w = np.ones(n)
    z = y
    for _ in range(niter):
        ab[2] = lam * main + w
        z = solveh_banded(ab, w * y, check_finite=False)
        new_w = np.where(y > z, p, 1.0 - p)
        if np.array_equal(new_w, w):
            break
        w = new_w
    return z


def baseline(
    y: np.ndarray,
    x: np.ndarray | None = None,
    *,
    method: str = "rolling",
    window_cm1: float = 500.0,
    smooth_cm1: float | None = None,
    p: float = 0.01,
    niter: int = 10,
) -> np.ndarray:
    """The baseline under an absorbance trace, same length and units as ``y``.

    Parameters
    ----------
    y:
        Absorbance (bands point up). Within half a window of either end the rolling
        method holds the baseline level, so a slope there is under-estimated (the picker does
        not report bands at the very ends of the data).
    x:
        Wavenumbers in cm-1 (ascending); without it the step is taken as 1 cm-1.
        A non-uniform axis is resampled for the computation and the result mapped back.
    method:
        ``"rolling"`` (default): a rolling minimum then a rolling maximum over ``window_cm1``
        (a grey opening: removes every band narrower than the window, follows straight slopes
        exactly), then a moving average over ``smooth_cm1``, kept at or below the trace.
        ``"als"``: asymmetric least squares, a smooth curve pulled under the trace
        (points above it get weight ``p``, points below ``1 - p``), stiffness from
        ``window_cm1``. ``"none"``: zeros.
    window_cm1:
        Width in cm-1 of the widest band that must survive (500 cm-1 keeps a broad O-H band).
    smooth_cm1:
        Moving-average width in cm-1 for the rolling method; default half the window.
    p, niter:
        Asymmetry and iteration limit of the ALS method.

    >>> x = np.linspace(400.0, 4000.0, 3601)
    >>> y = 0.1 + 1e-5 * x + np.exp(-0.5 * ((x - 1700.0) / 8.0) ** 2)
    >>> b = baseline(y, x)
    >>> bool(abs(b[1300] - (0.1 + 1e-5 * 1700.0)) < 1e-3)
    True
    """
    y = np.asarray(y, dtype=float).reshape(-1)
    if method not in BASELINE_METHODS:
        raise ValidationError(
            f"unknown baseline method {method!r}; expected one of {', '.join(BASELINE_METHODS)}"
        )
    if not window_cm1 > 0:
        raise ValidationError(f"baseline window must be a positive width in cm-1, got {window_cm1}")
    if not 0 < p < 1:
        raise ValidationError(f"ALS asymmetry p must be between 0 and 1, got {p}")
    if x is None:
        gx = np.arange(y.size, dtype=float)
        gy = y
    else:
        x = np.asarray(x, dtype=float).reshape(-1)
        if x.shape != y.shape:
            raise ValidationError(f"x has {x.size} points but y has {y.size}")
        gx, gy = uniform_grid(x, y)
    if method == "none" or y.size < 2:
        return np.zeros_like(y)
    step = float(gx[1] - gx[0])
    if method == "rolling":
        smooth = window_cm1 / 2.0 if smooth_cm1 is None else smooth_cm1
        b = _rolling_baseline(gy, step, window_cm1, smooth)
    else:
        b = _als_baseline(gy, step, window_cm1, p, niter)
    if gx is not x and x is not None:
        b = np.interp(x, gx, b)
    return b


def true_runs(mask: np.ndarray) -> np.ndarray:
    """Start and stop (exclusive) indices of the runs of True in ``mask``, shape (k, 2).

    >>> true_runs(np.array([0, 1, 1, 0, 1], bool)).tolist()
    [[1, 3], [4, 5]]
    """
    padded = np.concatenate(([False], mask, [False])).astype(np.int8)
    edges = np.flatnonzero(np.diff(padded))
    return edges.reshape(-1, 2)


def _close_gaps(mask: np.ndarray, gap_points: int) -> np.ndarray:
    """``mask`` with interior runs of at most ``gap_points`` False values set True."""
    mask = np.asarray(mask, dtype=bool).copy()
    if gap_points > 0 and mask.any():
        gaps = true_runs(~mask)
        inner = (gaps[:, 0] > 0) & (gaps[:, 1] < mask.size)
        gaps = gaps[inner & (gaps[:, 1] - gaps[:, 0] <= gap_points)]
        delta = np.zeros(mask.size + 1, dtype=np.int64)
        np.add.at(delta, gaps[:, 0], 1)
        np.add.at(delta, gaps[:, 1], -1)
        mask |= np.cumsum(delta[:-1]) > 0
    return mask


def saturated_runs(
    a: np.ndarray,
    *,
    from_transmittance: bool,
    saturation_t: float = 0.01,
    min_points: int = 3,
    gap_points: int = 2,
) -> np.ndarray:
    """Flat, saturated tops of an absorbance trace as (start, stop) index pairs, shape (k, 2).

    A point is saturated when its transmittance is at or below ``saturation_t`` (absorbance at
    or above ``-log10(saturation_t)``, 2 for the default 1 %). For a trace given as absorbance,
    points equal (within 1e-9 relative) to the trace's maximum are saturated too (an instrument
    or program that clips writes the same value again and again), and the level rule is dropped
    when more than :data:`MAX_SATURATED_FRACTION` of the trace lies above it (the values are
    then in scaled units, not decadic absorbance). Runs closer than
    ``gap_points`` are merged (noise pokes through the floor of a flat top); runs shorter than
    ``min_points`` are ordinary peaks.
    """
    a = np.asarray(a, dtype=float)
    if a.size == 0:
        return np.zeros((0, 2), dtype=int)
    level = -np.log10(max(saturation_t, MIN_TRANSMITTANCE))
    mask = a >= level - 1e-12
    if not from_transmittance:
        if mask.mean() > MAX_SATURATED_FRACTION:
            mask[:] = False  # mostly above the level: scaled units, not decadic absorbance
        top = float(np.max(a))
        mask |= a >= top - 1e-9 * max(abs(top), 1e-300)
    runs = true_runs(_close_gaps(mask, gap_points))
    if runs.size:
        runs = runs[(runs[:, 1] - runs[:, 0]) >= min_points]
    return runs


def flat_tops(
    a: np.ndarray,
    corrected: np.ndarray,
    tolerance: float,
    *,
    min_points: int = 3,
    min_height: float = 50.0,
    min_fraction: float = 0.4,
    gap_points: int = 2,
) -> np.ndarray:
    """Noisy flat tops at the maximum of an absorbance trace, as (start, stop) index pairs.

    An instrument that saturates writes a plateau of noise near its highest absorbance, not one
    repeated value. A run of points of ``a`` within ``tolerance`` (absorbance, about 4 noise
    standard deviations) of the trace's maximum is such a plateau when the band under it is
    strong (height above the baseline, from ``corrected``, at least ``min_height`` tolerances)
    and the run is at least ``min_fraction`` of the band's FWHM wide: a rounded top, Gaussian or
    Lorentzian, is then under 0.17 of its FWHM within the tolerance, while a band clipped at
    half of its true height or lower has a flat top of 0.7 of its FWHM or more. Runs split by at
    most ``gap_points`` points of noise are one run.
    """
    a = np.asarray(a, dtype=float)
    corrected = np.asarray(corrected, dtype=float)
    if a.size < 3 or not tolerance > 0:
        return np.zeros((0, 2), dtype=int)
    runs = true_runs(_close_gaps(a >= float(np.max(a)) - tolerance, gap_points))
    runs = runs[(runs[:, 1] - runs[:, 0]) >= min_points]
    out = []
    for start, stop in runs:  # one step per plateau
        height = float(np.max(corrected[start:stop]))
        if height < min_height * tolerance:
            continue
        below = np.flatnonzero(corrected < 0.5 * height)
        k = int(np.searchsorted(below, start))
        left = below[k - 1] if k > 0 else 0
        right = below[k] if k < below.size else a.size - 1
        if (stop - start) >= min_fraction * max(right - left, 1):
            out.append((start, stop))
    return np.array(out, dtype=int).reshape(-1, 2)


def _merge_runs(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Union of two sets of (start, stop) runs, overlapping runs merged."""
    both = np.concatenate([a.reshape(-1, 2), b.reshape(-1, 2)])
    if both.size == 0:
        return both.astype(int)
    both = both[np.argsort(both[:, 0])]
    merged = [list(both[0])]
    for start, stop in both[1:]:
        if start <= merged[-1][1]:
            merged[-1][1] = max(merged[-1][1], stop)
        else:
            merged.append([start, stop])
    return np.array(merged, dtype=int)


def _check_options(**opts: float) -> None:
    for name, value in opts.items():
        if not (np.isfinite(value) and value > 0):
            raise ValidationError(f"{name} must be a positive number, got {value!r}")


def pick_peaks(
    spectrum: Spectrum,
    *,
    min_snr: float = 8.0,
    max_peaks: int = 50,
    min_relative: float = 0.01,
    baseline: str = "rolling",
    window_cm1: float = 500.0,
    smooth_cm1: float = 2.0,
    min_separation_cm1: float = 4.0,
    broad_fwhm_cm1: float = 80.0,
    broad_fwhm_low_cm1: float = 60.0,
    broad_split_cm1: float = 2500.0,
    saturation_t: float = 0.01,
) -> PeakList:
    """The bands of a full spectrum as a :class:`~reflib.spectrum.PeakList`.

    Parameters
    ----------
    spectrum:
        Absorbance or transmittance spectrum (cm-1 ascending).
    min_snr:
        A band's prominence must be at least this many times the noise measured in the spectrum.
    max_peaks:
        Keep at most this many bands, the highest first.
    min_relative:
        Drop bands whose baseline-corrected height is below this fraction of the strongest.
    baseline:
        ``"rolling"``, ``"als"`` or ``"none"``, see :func:`baseline`.
    window_cm1:
        Baseline window in cm-1: bands narrower than this are kept whole.
    smooth_cm1:
        FWHM in cm-1 of the Gaussian smoothing applied before picking (0 for none).
    min_separation_cm1:
        Of two maxima closer than this (cm-1), only the higher is a band.
    broad_fwhm_cm1, broad_fwhm_low_cm1, broad_split_cm1:
        A band is flagged broad when its FWHM exceeds ``broad_fwhm_cm1`` above
        ``broad_split_cm1`` cm-1, or ``broad_fwhm_low_cm1`` below it.
    saturation_t:
        Transmittance (0..1) at or below which a band of a transmittance spectrum is saturated.

    Returns
    -------
    PeakList
        Positions (cm-1, sub-grid), relative heights (0..1), FWHM (cm-1), strength words,
        broad flags, shoulder flags. ``meta`` is a copy of the spectrum's, with
        ``meta.extra['saturated']`` listing the positions (cm-1, comma-separated) of flat-topped
        bands and ``meta.extra['holes']`` the cut opaque ranges, when there are any.

    Example
    -------
    >>> x = np.linspace(400.0, 4000.0, 3601)
    >>> band = lambda centre, sd: np.exp(-0.5 * ((x - centre) / sd) ** 2)
    >>> y = band(1715.3, 6.0) + 0.3 * band(2950.0, 8.0)
    >>> pl = pick_peaks(Spectrum(x, y))
    >>> [round(float(p), 1) for p in pl.positions], pl.strengths
    ([1715.3, 2950.0], ['vs', 'm'])
    """
    _check_options(
        min_snr=min_snr,
        window_cm1=window_cm1,
        min_separation_cm1=min_separation_cm1,
        broad_fwhm_cm1=broad_fwhm_cm1,
        broad_fwhm_low_cm1=broad_fwhm_low_cm1,
        broad_split_cm1=broad_split_cm1,
    )
    if not (isinstance(max_peaks, (int, np.integer)) and max_peaks >= 1):
        raise ValidationError(f"max_peaks must be a whole number of at least 1, got {max_peaks!r}")
    if not (np.isfinite(min_relative) and 0 <= min_relative < 1):
        raise ValidationError(f"min_relative must be in 0..1, got {min_relative!r}")
    if not (np.isfinite(smooth_cm1) and smooth_cm1 >= 0):
        raise ValidationError(
            f"smooth_cm1 must be 0 or a positive width in cm-1, got {smooth_cm1!r}"
        )
    if not (np.isfinite(saturation_t) and 0 < saturation_t < 1):
        raise ValidationError(f"saturation_t must be a transmittance in 0..1, got {saturation_t!r}")
    if baseline not in BASELINE_METHODS:
        raise ValidationError(
            f"unknown baseline method {baseline!r}; expected one of {', '.join(BASELINE_METHODS)}"
        )

    meta = copy.deepcopy(spectrum.meta)
    empty = PeakList(np.zeros(0), np.zeros(0), meta=meta)
    from_t = spectrum.y_kind == "transmittance"
    absorb = spectrum.to_absorbance()
    x, a = uniform_grid(absorb.x, absorb.y)
    if x.size < 5:
        return empty
    step = float(x[1] - x[0])

    # Saturated runs known before the baseline: the level rule, and for transmittance input the
    # plateau near the chart's or instrument's floor. Opaque ones (wide, or reaching an end of
    # the data) are holes: cut out with their walls, never bridged by the baseline.
    runs = saturated_runs(a, from_transmittance=from_t, saturation_t=saturation_t)
    if from_t:
        _, t_grid = uniform_grid(spectrum.x, spectrum.y)
        if float(np.min(t_grid)) > saturation_t:  # a floor above the level: stray light
            runs = _merge_runs(runs, floor_runs(t_grid))
    ranges = _opaque_ranges(spectrum.meta.prep)
    opaque = _is_opaque(runs, x, step, ranges)
    cut, holes = _cut_holes(a, runs[opaque], step)
    band_runs = runs[~opaque]

    corrected = np.zeros_like(a)
    for lo_i, hi_i in true_runs(~cut):
        if hi_i - lo_i >= 5:
            edges = (lo_i > 0, hi_i < x.size)

            if baseline == "rolling" and any(edges):
                corrected[lo_i:hi_i] = a[lo_i:hi_i] - _rolling_baseline(
                    a[lo_i:hi_i], step, window_cm1, window_cm1 / 2.0, edges
                )
            else:
                corrected[lo_i:hi_i] = a[lo_i:hi_i] - _baseline_for(
                    a[lo_i:hi_i], x[lo_i:hi_i], baseline, window_cm1
                )
    sigma_pts = smooth_cm1 / (2.0 * np.sqrt(2.0 * np.log(2.0))) / step
    if sigma_pts > 0.3:
        ys = filters1d.gaussian_filter1d(corrected, sigma_pts, mode="nearest")
        gain = _noise_gain(sigma_pts)
    else:
        ys, gain, sigma_pts = corrected.copy(), 1.0, 0.0

    # Noise of the smoothed trace; per point for transmittance input, sigma_A = sigma_T / (T ln 10).
    span = float(np.ptp(ys))
    if span <= 0:
        return empty
    raw_noise = np.full(
        x.size, max(estimate_noise(a[~cut] if (~cut).sum() > 10 else a), 1e-6 * span)
    )
    if from_t:
        sigma_t = estimate_noise(t_grid)
        t_floor = np.clip(t_grid, max(saturation_t, MIN_TRANSMITTANCE), None)
        raw_noise = np.maximum(raw_noise, sigma_t / (np.log(10.0) * t_floor))
    noise = raw_noise * gain

    if not from_t:
        smooth_a = filters1d.gaussian_filter1d(a, sigma_pts) if sigma_pts > 0 else a
        tops = flat_tops(smooth_a, ys, 4.0 * float(noise.min()))
        if tops.size:
            tops = tops[[not cut[s:e].any() for s, e in tops]]
        band_runs = _merge_runs(band_runs, tops)
    margin = max(1, int(np.ceil(3 * sigma_pts)))
    for start, stop in band_runs:
        lo, hi = max(0, start - margin), min(x.size, stop + margin)
        ys[lo:hi] = np.max(ys[lo:hi])
    # No band is reported within the smoothing's reach of a cut (the smoothed trace mixes the
    # cut's zeros in there), so that edge is not measured either: the reported holes include
    # it, and the comparison does not score a reference band there as absent.
    near_cut = _dilate(cut, margin + 1)
    holes = [tuple(r) for r in true_runs(near_cut)] if holes else []
    ys[cut] = 0.0

    distance = max(1, int(round(min_separation_cm1 / step)))
    idx, props = find_peaks(ys, prominence=min_snr * float(noise.min()), distance=distance)
    keep = (props["prominences"] >= min_snr * noise[idx]) & ~near_cut[idx]
    idx = idx[keep]

    # Sub-grid position: vertex of the parabola through the top three points.
    frac, heights = _vertex(ys, idx)

    # One band per flat top, at its centre.
    saturated = np.zeros(idx.size, bool)
    keep = np.ones(idx.size, bool)
    for start, stop in band_runs:
        inside = np.flatnonzero((idx >= start - margin) & (idx < stop + margin))
        if inside.size == 0:
            continue
        first = inside[np.argmax(heights[inside])]
        keep[inside] = False
        keep[first] = True
        frac[first] = 0.5 * (start + stop - 1)
        saturated[first] = True
    keep &= heights > 0  # a maximum below the baseline is not a band
    idx, frac, heights, saturated = idx[keep], frac[keep], heights[keep], saturated[keep]

    # Shoulders and bands on the flank of a stronger one, from the second derivative.
    busy = near_cut.copy()
    for start, stop in band_runs:
        busy[max(0, start - margin) : stop + margin] = True
    s_idx, s_frac, s_shoulder, s_fwhm, s_height = derivative_bands(
        ys, raw_noise, sigma_pts, step, idx, distance, busy, smooth_cm1=D2_SMOOTH_CM1, snr=D2_SNR
    )
    # Prominence against the local envelope, held to the same min_snr as any other band.
    s_keep = s_height >= min_snr * noise[s_idx]
    s_idx, s_frac, s_shoulder, s_fwhm, s_height = (
        s_idx[s_keep],
        s_frac[s_keep],
        s_shoulder[s_keep],
        s_fwhm[s_keep],
        s_height[s_keep],
    )
    if idx.size + s_idx.size == 0:
        return empty

    fwhm = _fwhm(ys, x, idx, heights, frac) if idx.size else np.zeros(0)
    smooth_fwhm = sigma_pts * step * 2.0 * np.sqrt(2.0 * np.log(2.0))
    fwhm = np.sqrt(np.maximum(fwhm**2 - smooth_fwhm**2, 0.25 * fwhm**2))
    frac = np.concatenate([frac, s_frac])
    heights = np.concatenate([heights, s_height])
    fwhm = np.concatenate([fwhm, s_fwhm])
    saturated = np.concatenate([saturated, np.zeros(s_idx.size, bool)])
    # Every band found only in the derivative is flagged a shoulder (with no maximum of its own,
    # or with only a shallow dip beside a stronger band, as "sh" is used in band lists): shown,
    # but left out of the comparison (see reflib.analysis.encode.comparable_peaks).
    shoulder = np.concatenate([np.zeros(idx.size, bool), np.ones(s_idx.size, bool)])
    positions = np.interp(frac, np.arange(x.size, dtype=float), x)

    # Broad bands beneath sharp ones (the H-bonded O-H under a terminal alkyne's C-H), which
    # have no maximum of their own: from an opening of the trace (reflib.signal.pedestal).
    limit = np.where(positions > broad_split_cm1, broad_fwhm_cm1, broad_fwhm_low_cm1)
    wide = np.nan_to_num(fwhm, nan=0.0) > limit
    b_pos, b_h, b_w = broad_beneath(
        x, ys, float(noise.min()), positions, wide & ~shoulder, min_snr=min_snr
    )
    if b_pos.size:
        # a broad shoulder the second derivative found on the same band is superseded
        gone = np.zeros(positions.size, bool)
        for centre, width in zip(b_pos.tolist(), b_w.tolist()):
            gone |= wide & shoulder & (np.abs(positions - centre) <= width / 2.0)
        if gone.any():
            keep = ~gone
            positions, heights, fwhm = positions[keep], heights[keep], fwhm[keep]
            saturated, shoulder, limit = saturated[keep], shoulder[keep], limit[keep]
        # a sharp band standing on a broad one: its own width, measured above the envelope
        on = np.zeros(positions.size, bool)
        for centre, width in zip(b_pos.tolist(), b_w.tolist()):
            on |= np.abs(positions - centre) <= width / 2.0
        on &= ~(np.nan_to_num(fwhm, nan=0.0) > limit)
        if on.any():
            own = widths_above(x, ys, positions[on])
            own = np.sqrt(np.maximum(own**2 - smooth_fwhm**2, 0.25 * own**2))
            fwhm[on] = np.fmin(fwhm[on], own)
        positions = np.concatenate([positions, b_pos])
        heights = np.concatenate([heights, b_h])
        fwhm = np.concatenate([fwhm, b_w])
        saturated = np.concatenate([saturated, np.zeros(b_pos.size, bool)])
        shoulder = np.concatenate([shoulder, np.zeros(b_pos.size, bool)])

    order = np.argsort(-heights, kind="stable")
    top = heights[order[0]]
    if top <= 0:
        return empty
    order = order[heights[order] >= min_relative * top][:max_peaks]
    positions, heights, fwhm, saturated, shoulder = (
        positions[order],
        heights[order],
        fwhm[order],
        saturated[order],
        shoulder[order],
    )
    rel = heights / top
    limit = np.where(positions > broad_split_cm1, broad_fwhm_cm1, broad_fwhm_low_cm1)
    broad = np.nan_to_num(fwhm, nan=0.0) > limit
    if saturated.any():
        meta.extra["saturated"] = ", ".join(f"{p:.1f}" for p in np.sort(positions[saturated]))
    if holes:
        meta.extra["holes"] = format_holes([(float(x[i]), float(x[j - 1])) for i, j in holes])
    return PeakList(
        positions,
        rel,
        widths=fwhm,
        strengths=[strength_word(float(r)) for r in rel],
        broad=broad,
        shoulder=shoulder,
        meta=meta,
    )


def _vertex(ys: np.ndarray, idx: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Fractional index and height of the parabola through the three points around each index."""
    if idx.size == 0:
        return np.zeros(0), np.zeros(0)
    left, mid, right = ys[idx - 1], ys[idx], ys[idx + 1]
    curv = left - 2.0 * mid + right
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.where(curv < 0, 0.5 * (left - right) / curv, 0.0)
    delta = np.clip(delta, -0.5, 0.5)
    return idx + delta, mid - 0.25 * (left - right) * delta


def _noise_gain(*sigmas: float, order: int = 0) -> float:
    """Standard deviation that unit white noise keeps after Gaussian smoothing(s) of ``sigmas``
    points and, for ``order=2``, a second difference."""
    radius = 8 * int(np.ceil(sum(sigmas))) + 9
    h = np.zeros(2 * radius + 1)
    h[radius] = 1.0
    for s in sigmas:
        h = filters1d.gaussian_filter1d(h, s)
    if order == 2:
        h = np.diff(h, 2)
    return float(np.sqrt(np.sum(h**2)))


def derivative_bands(
    ys: np.ndarray,
    raw_noise: np.ndarray,
    sigma_pts: float,
    step: float,
    taken: np.ndarray,
    distance: int,
    busy: np.ndarray,
    *,
    smooth_cm1: float = D2_SMOOTH_CM1,
    snr: float = D2_SNR,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Bands seen in the second derivative but not as maxima of the trace (indices in points).

    A band on the flank of a stronger one, or a shoulder with no maximum of its own, is a
    minimum of the second derivative (a maximum of ``-y''``) even where its dip is shallow: the
    derivative removes the slowly varying flank. ``ys`` (the smoothed, baseline-corrected trace)
    is smoothed again over ``smooth_cm1`` (FWHM), and a maximum of ``-y''`` is a band when it
    reaches ``snr`` times the derivative's noise (white noise of ``raw_noise`` standard
    deviation carried through both smoothings and the difference, computed exactly from the
    filters), lies at least ``distance`` points from every band in ``taken`` and from the
    other such bands (the stronger one kept), and outside ``busy`` (holes, flat tops).
    Returns indices, fractional positions, shoulder flags (True when the trace has no local
    maximum within ``distance`` points: a shoulder rather than a resolved band) and FWHM
    estimates in cm-1 (from the width of the derivative's lobe) and heights above the local
    envelope (``-y''`` times the lobe's half width squared, the height of a Gaussian of that
    curvature; never more than the trace itself), which is what the band adds to its
    neighbour's flank.
    """
    empty = (np.zeros(0, np.intp), np.zeros(0), np.zeros(0, bool), np.zeros(0), np.zeros(0))
    n = ys.size
    if n < 7:
        return empty
    g = max(smooth_cm1 / (2.0 * np.sqrt(2.0 * np.log(2.0))) / step, 0.5)
    sm = filters1d.gaussian_filter1d(ys, g, mode="nearest")
    d2 = np.zeros(n)
    d2[1:-1] = -(sm[:-2] - 2.0 * sm[1:-1] + sm[2:])
    sig = [s for s in (sigma_pts, g) if s > 0.3]
    sd = raw_noise * _noise_gain(*sig, order=2)
    cand = local_maxima(d2)
    cand = cand[(d2[cand] >= snr * sd[cand]) & ~busy[cand]]
    if cand.size == 0:
        return empty
    if taken.size:
        t = np.sort(taken)
        k = np.searchsorted(t, cand)
        gap = np.minimum(
            np.abs(cand - t[np.clip(k - 1, 0, t.size - 1)]),
            np.abs(t[np.clip(k, 0, t.size - 1)] - cand),
        )
        cand = cand[gap >= distance]
    if cand.size == 0:
        return empty
    cand = cand[select_by_distance(cand, d2[cand], distance)]
    cand = cand[(cand > 0) & (cand < n - 1)]
    frac, _ = _vertex(d2, cand)
    maxima = local_maxima(ys)
    if maxima.size:
        k = np.searchsorted(maxima, cand)
        near = np.minimum(
            np.abs(cand - maxima[np.clip(k - 1, 0, maxima.size - 1)]),
            np.abs(maxima[np.clip(k, 0, maxima.size - 1)] - cand),
        )
        shoulder = near > distance
    else:
        shoulder = np.ones(cand.size, bool)
    # Width: -y'' of a Gaussian of standard deviation s is positive for |x| < s, so the lobe's
    # half width is s of the twice-smoothed band; remove both smoothings in quadrature.
    fwhm = np.empty(cand.size)
    height = np.empty(cand.size)
    blur2 = g**2 + sigma_pts**2
    for k, c in enumerate(cand.tolist()):  # one step per band
        i = c
        while i > 0 and d2[i - 1] > 0:
            i -= 1
        j = c
        while j < n - 1 and d2[j + 1] > 0:
            j += 1
        half = 0.5 * (j - i + 1)
        s2 = max(half**2 - blur2, 0.25 * half**2)
        fwhm[k] = 2.0 * np.sqrt(2.0 * np.log(2.0) * s2) * step
        # Height above the local envelope: for a Gaussian, -y''(0) * s**2 is its height.
        height[k] = min(float(ys[c]), float(d2[c]) * half**2)
    return cand, frac, shoulder, fwhm, height


def floor_runs(t: np.ndarray, *, floor_t: float = FLOOR_T, span_t: float = FLOOR_SPAN_T):
    """Plateaus at the floor of a transmittance trace (0..1) as (start, stop) index pairs.

    When the lowest transmittance is at most ``floor_t``, the points within ``span_t`` of it
    are saturated: a band that bottoms out at a few %T (stray light, a chart's floor) is flat
    there, and its true depth is unknown. Runs of fewer than 3 points are ordinary minima.
    """
    t = np.asarray(t, dtype=float)
    if t.size < 3:
        return np.zeros((0, 2), dtype=int)
    low = float(np.min(t))
    if low > floor_t:
        return np.zeros((0, 2), dtype=int)
    runs = true_runs(_close_gaps(t <= low + span_t, 2))
    return runs[(runs[:, 1] - runs[:, 0]) >= 3]


def format_holes(holes: Sequence[tuple[float, float]]) -> str:
    """Cut ranges (cm-1) as the text kept in ``meta.extra['holes']``: ``"400.0-835.5, ..."``."""
    return ", ".join(f"{lo:.1f}-{hi:.1f}" for lo, hi in holes)


def parse_holes(text: str | None) -> list[tuple[float, float]]:
    """The cut ranges (cm-1) of :func:`format_holes` text; ``[]`` for None or empty text.

    >>> parse_holes("400.0-835.5, 1190.0-1241.0")
    [(400.0, 835.5), (1190.0, 1241.0)]
    """
    out = []
    for part in (text or "").split(","):
        part = part.strip()
        if not part:
            continue
        lo, _, hi = part.partition("-")
        try:
            out.append((float(lo), float(hi)))
        except ValueError:
            raise ValidationError(
                f"cannot read cut range {part!r}: expected LO-HI in cm-1"
            ) from None
    return out


def _opaque_ranges(tokens) -> list[tuple[float, float]]:
    """Ranges (cm-1) the spectrum's own preparation makes opaque: its solvents' dropped regions
    and everything below a window's cut-off (:mod:`reflib.chem.prep`); unknown tokens add none."""
    if not tokens:
        return []
    from reflib.chem import prep as prep_mod  # only when the spectrum names its preparation

    try:
        toks = prep_mod.parse_tokens(list(tokens))
    except ValidationError:
        return []
    out = [
        (r.lo, r.hi)
        for r in prep_mod.regions_for(toks, air=False)
        if r.weight == 0 and prep_mod.PREPARATIONS[r.token].kind in ("solution", "window")
    ]
    cut = prep_mod.opaque_below(toks)
    if cut:
        out.append((0.0, float(cut)))
    return out


def _is_opaque(
    runs: np.ndarray, x: np.ndarray, step: float, ranges: Sequence[tuple[float, float]] = ()
) -> np.ndarray:
    """Which saturated runs are opaque regions rather than bands: a run reaching an end of the
    data, wider than OPAQUE_MIN_WIDTH_CM1, or overlapping a range the preparation makes
    opaque."""
    if runs.size == 0:
        return np.zeros(0, bool)
    n = x.size
    width = runs[:, 1] - runs[:, 0]
    out = (np.minimum(runs[:, 0], n - runs[:, 1]) < width) | (width * step > OPAQUE_MIN_WIDTH_CM1)
    for k, (start, stop) in enumerate(runs):
        lo, hi = x[start], x[stop - 1]
        out[k] |= any(lo <= b and hi >= a for a, b in ranges)
    return out


def _dilate(mask: np.ndarray, k: int) -> np.ndarray:
    if k <= 0 or not mask.any():
        return mask.copy()
    return filters1d.maximum_filter1d(mask.astype(float), 2 * k + 1, mode="nearest") > 0


def _cut_holes(a: np.ndarray, runs: np.ndarray, step: float):
    """Mask of the points cut out around opaque runs (the run and its walls) and the cut
    ranges as (start, stop) index pairs.

    Each wall is followed outward on the trace smoothed over WALL_SMOOTH_CM1 while it keeps
    falling, at least WALL_MIN_CM1 and at most WALL_MAX_CM1 beyond the run: the falling wall is
    the opaque band's, and a band standing on it starts where the trace rises again.
    """
    n = a.size
    cut = np.zeros(n, bool)
    if runs.size == 0:
        return cut, []
    sigma = WALL_SMOOTH_CM1 / (2.0 * np.sqrt(2.0 * np.log(2.0))) / step
    sm = filters1d.gaussian_filter1d(a, sigma, mode="nearest") if sigma > 0.3 else a
    lo_min = max(1, int(np.ceil(WALL_MIN_CM1 / step)))
    lo_max = max(lo_min, int(np.ceil(WALL_MAX_CM1 / step)))
    for start, stop in runs:
        # the local floor: the lowest point of the smoothed trace within WALL_MAX_CM1
        floor_l = float(np.min(sm[max(0, start - lo_max) : start])) if start > 0 else 0.0
        floor_r = float(np.min(sm[stop : stop + lo_max])) if stop < n else 0.0
        i = start
        while (
            i > 0
            and start - i < lo_max
            and (start - i < lo_min or (sm[i - 1] < sm[i] and sm[i - 1] - floor_l > WALL_DEPTH))
        ):
            i -= 1
        j = stop
        while (
            j < n
            and j - stop < lo_max
            and (j - stop < lo_min or (sm[j] < sm[j - 1] and sm[j] - floor_r > WALL_DEPTH))
        ):
            j += 1
        cut[i:j] = True
    return cut, [tuple(r) for r in true_runs(cut)]


def _fwhm(
    ys: np.ndarray, x: np.ndarray, idx: np.ndarray, heights: np.ndarray, frac: np.ndarray
) -> np.ndarray:
    """FWHM in cm-1 at half the baseline-corrected height of each band.

    Each half is searched only up to the lowest point between the band and its neighbouring
    band, so that two overlapping bands do not share one wide width. A half that does not reach
    half height before that valley is taken equal to the other half; when neither does, the
    width comes from the curvature at the top, as for a Gaussian
    (FWHM = 2 sqrt(2 ln 2 h / -y'')).
    """
    n = ys.size
    order = np.argsort(idx)
    sidx = idx[order]
    valleys = np.empty(sidx.size + 1, dtype=np.intp)
    valleys[0], valleys[-1] = 0, n - 1
    for k in range(sidx.size - 1):  # one step per band, not per point
        a, b = sidx[k], sidx[k + 1]
        valleys[k + 1] = a + int(np.argmin(ys[a : b + 1]))
    lb = np.empty_like(idx)
    rb = np.empty_like(idx)
    lb[order], rb[order] = valleys[:-1], valleys[1:]
    lb = np.minimum(lb, idx)
    rb = np.maximum(rb, idx)
    with warnings.catch_warnings():  # zero widths become NaN below
        warnings.filterwarnings("ignore", message="some peaks have a width of 0")
        _, half, l_ips, r_ips = peak_widths(
            ys, idx, rel_height=0.5, prominence_data=(heights, lb, rb)
        )
    grid = np.arange(n, dtype=float)
    centre = np.interp(frac, grid, x)
    left_half = centre - np.interp(l_ips, grid, x)
    right_half = np.interp(r_ips, grid, x) - centre
    left_ok = ys[lb] < half
    right_ok = ys[rb] < half
    step = float(x[1] - x[0])
    curv = (ys[np.maximum(idx - 1, 0)] - 2.0 * ys[idx] + ys[np.minimum(idx + 1, n - 1)]) / step**2
    with np.errstate(divide="ignore", invalid="ignore"):
        from_curv = np.where(curv < 0, 2.0 * np.sqrt(2.0 * np.log(2.0) * heights / -curv), np.nan)
    fwhm = np.where(
        left_ok & right_ok,
        left_half + right_half,
        np.where(left_ok, 2.0 * left_half, np.where(right_ok, 2.0 * right_half, from_curv)),
    )
    return np.where(np.isfinite(fwhm) & (fwhm > 0), fwhm, np.nan)


def _baseline_for(a: np.ndarray, x: np.ndarray, method: str, window_cm1: float) -> np.ndarray:
    return baseline(a, x, method=method, window_cm1=window_cm1)


__all__: Sequence[str] = [
    "BASELINE_METHODS",
    "baseline",
    "estimate_noise",
    "is_uniform",
    "pick_peaks",
    "derivative_bands",
    "flat_tops",
    "floor_runs",
    "format_holes",
    "parse_holes",
    "saturated_runs",
    "uniform_grid",
]
