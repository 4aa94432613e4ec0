"""Absorbance profiles on one common grid and the non-negative fits the leftover test and the
mixture analysis share. No I/O.

A *profile* is baseline-corrected decadic absorbance on one common wavenumber grid (cm-1,
:data:`GRID_STEP_CM1` apart), lightly smoothed so that the sharp lines of water vapour and the
detector noise weigh less than real bands. A full spectrum becomes a profile through
:func:`reflib.signal.peaks.baseline` (ATR spectra get :func:`reflib.chem.prep.atr_correction`
first); a peak list is drawn as Gaussian bands of its widths (12 cm-1 when unknown). Beer-Lambert
additivity makes a mixture's profile the sum of its components' profiles, each times its amount.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import ndimage
from scipy.optimize import nnls

from reflib.chem import prep as prep_mod
from reflib.errors import ValidationError
from reflib.spectrum import PeakList, Spectrum

#: Step of the common grid, cm-1.
GRID_STEP_CM1 = 2.0
#: FWHM (cm-1) of the Gaussian smoothing every profile gets: under the narrowest condensed-phase
#: bands (about 8 cm-1), over water-vapour lines (2-3 cm-1) and the point-to-point noise.
SMOOTH_CM1 = 6.0
#: Baseline under every profile: asymmetric least squares stiff enough to pass under the
#: broadest hydrogen-bonded O-H envelopes (FWHM up to about 600 cm-1), see
#: reflib.signal.peaks.baseline.
BASELINE_METHOD = "als"
BASELINE_WINDOW_CM1 = 1500.0
#: ALS asymmetry: small, so that dense band regions hardly pull the baseline up (0.01 took 7-10 %
#: of the area of the gas-phase test spectra, 1e-4 takes 1-2 %); the curve then runs along the
#: bottom of the noise, and :func:`_noise_offset` lifts the band-free level back to zero.
BASELINE_P = 1e-4
#: Opaque stretches (1 % transmittance or less) are bridged for the baseline from this far
#: (cm-1) beyond their edges: a cell's or window's cut-off rises over some 10-20 cm-1.
OPAQUE_MARGIN_CM1 = 16.0
#: Width (cm-1) given to a band of a peak list without one.
DEFAULT_BAND_FWHM = 12.0
#: A band of a typed peak list carries no noise figure; this is the noise assumed for a profile
#: drawn from one, relative to its strongest band (the usual 1 % floor of a peak list).
PEAK_LIST_NOISE = 0.01
#: Reference areas count the points where the references' own preparations leave more than this
#: weight (reflib.chem.prep.weight_profile).
REF_AREA_WEIGHT = 1e-6
#: Points of weight below this (reflib.chem.prep.weight_profile) are left out of every fit.
USABLE_WEIGHT = 0.5

#: Shares below this are not called detected even when significant (a fraction, 0..1).
MIN_SHARE = 0.02

Data = Spectrum | PeakList


# --- profiles -----------------------------------------------------------------------------------


@dataclass
class Profile:
    """A baseline-corrected absorbance profile on the common grid.

    ``y`` absorbance (decadic, smoothed); ``covered`` True where the input has data; ``noise``
    standard deviation of the smoothed profile's noise (absorbance); ``prep`` tokens; ``kind``
    ``"spectrum"`` or ``"peaks"``.
    """

    y: np.ndarray
    covered: np.ndarray
    noise: float
    prep: list[str]
    kind: str


def tokens_of(data: Data, extra: Iterable[str] | str | None = ()) -> list[str]:
    toks = prep_mod.parse_tokens(list(data.meta.prep))
    more = prep_mod.parse_tokens(extra) if extra else []
    return list(dict.fromkeys([*more, *toks]))


def check_data(name: str, data: Any) -> None:
    if not isinstance(data, (Spectrum, PeakList)):
        raise ValidationError(f"{name} must be a Spectrum or PeakList, got {type(data).__name__}")
    if isinstance(data, PeakList) and len(data) == 0:
        raise ValidationError(f"{name} is a peak list without bands; nothing to compare")


def common_grid(items: Sequence[Data]) -> np.ndarray:
    """The grid (cm-1, ascending) over the range every full spectrum among ``items`` covers."""
    lo, hi = 400.0, 4000.0
    for d in items:
        if isinstance(d, Spectrum):
            lo, hi = max(lo, float(d.x[0])), min(hi, float(d.x[-1]))
    if hi - lo < 50 * GRID_STEP_CM1:
        raise ValidationError(
            f"the spectra share only {max(hi - lo, 0):.0f} cm-1 of wavenumber range "
            f"({lo:.0f}-{hi:.0f}); at least {50 * GRID_STEP_CM1:.0f} cm-1 are needed"
        )
    lo = np.ceil(lo / GRID_STEP_CM1) * GRID_STEP_CM1
    n = int(np.floor((hi - lo) / GRID_STEP_CM1)) + 1
    return lo + GRID_STEP_CM1 * np.arange(n)


def _smooth_gain(sigma_pts: float) -> float:
    impulse = np.zeros(8 * int(np.ceil(sigma_pts)) + 9)
    impulse[impulse.size // 2] = 1.0
    return float(np.sqrt(np.sum(ndimage.gaussian_filter1d(impulse, sigma_pts) ** 2)))


def profile(data: Data, grid: np.ndarray, prep: Iterable[str] | str | None = ()) -> Profile:
    """The absorbance profile of a spectrum or peak list on ``grid`` (cm-1).

    A spectrum: absorbance, ATR-corrected when ``atr`` is among its tokens, minus the rolling
    baseline of :func:`reflib.signal.peaks.baseline`, smoothed to :data:`SMOOTH_CM1`, interpolated.
    A peak list: its bands drawn as Gaussians of their FWHM, heights the relative intensities.
    """
    from reflib.signal.peaks import baseline, estimate_noise, saturated_runs, uniform_grid

    check_data("data", data)
    tokens = tokens_of(data, prep)
    if isinstance(data, PeakList):
        widths = np.where(np.isfinite(data.widths), data.widths, DEFAULT_BAND_FWHM)
        widths = np.sqrt(widths**2 + SMOOTH_CM1**2)
        y = np.zeros_like(grid)
        for p, h, w in zip(data.positions, data.intensities, widths):
            s = w / 2.3548
            y += h * np.exp(-0.5 * ((grid - p) / s) ** 2)
        return Profile(y, np.ones(grid.size, bool), PEAK_LIST_NOISE, tokens, "peaks")
    a = data.to_absorbance()
    x, y = uniform_grid(a.x, a.y)
    if "atr" in tokens:
        y = prep_mod.atr_correction(x, y)
    noise = estimate_noise(y)
    step = float(x[1] - x[0])
    opaque = saturated_runs(y, from_transmittance=True)
    sigma_pts = SMOOTH_CM1 / 2.3548 / step
    if sigma_pts > 0.3:
        y = ndimage.gaussian_filter1d(y, sigma_pts, mode="nearest")
        noise *= _smooth_gain(sigma_pts)
    under = _bridge_opaque(y, opaque, int(round(OPAQUE_MARGIN_CM1 / step)))
    y = y - baseline(under, x, method=BASELINE_METHOD, window_cm1=BASELINE_WINDOW_CM1, p=BASELINE_P)
    y = y - _noise_offset(y, noise)
    covered = (grid >= x[0]) & (grid <= x[-1])
    out = np.interp(grid, x, y, left=0.0, right=0.0)
    return Profile(out, covered, float(noise), tokens, "spectrum")


def _bridge_opaque(y: np.ndarray, runs: np.ndarray, margin: int) -> np.ndarray:
    """``y`` with each opaque stretch (``runs``, index pairs from
    :func:`reflib.signal.peaks.saturated_runs`) and ``margin`` points either side replaced by a
    straight line between the trace's levels just outside (flat where a stretch reaches an end).

    Where the sample passes no light (a solvent cell's opaque range, a window's cut-off, a
    saturated band) the trace says nothing about the baseline; left in, a plateau of several
    absorbance units drags the stiff baseline up far beyond its edges (by about 0.15 over
    300 cm-1 beside a chloroform cell's opaque range below 800 cm-1), and every band there
    comes out too low or negative. Only the baseline's input is bridged, never the trace.
    """
    if not len(runs):
        return y
    out = y.copy()
    n = y.size
    for i0, i1 in runs:
        a, b = int(i0) - margin, int(i1) + margin
        left = float(y[a]) if a >= 0 else None
        right = float(y[b]) if b < n else None
        a, b = max(a, 0), min(b, n - 1)
        if left is None and right is None:
            continue
        lv = right if left is None else left
        rv = left if right is None else right
        out[a : b + 1] = np.linspace(lv, rv, b - a + 1)
    return out


def _noise_offset(y: np.ndarray, noise: float) -> float:
    """The level of the band-free stretches of a baseline-corrected trace (absorbance).

    A baseline pulled under the trace runs along the lower edge of the noise, leaving band-free
    regions a little above zero; integrated over a few thousand cm-1 that offset would count as
    signal. The band-free points are the most common value of the trace (the mode of the values
    below the median, in bins of one noise unit), refined as the median of the points within two
    noise units of it. Sharp negative dips (an over-compensated CO2 or water-vapour line) do not
    move the mode; a trace without band-free stretches (gas-phase rotational lines) has its mode
    near its lower edge, so no band area is taken away.
    """
    if noise <= 0 or y.size < 20:
        return 0.0
    lo, med = np.percentile(y, [1.0, 50.0])
    if med - lo <= noise:
        return float(np.median(y))
    nbins = int(min(400, max(5, (med - lo) / noise)))
    counts, edges = np.histogram(y[(y >= lo) & (y <= med)], bins=nbins)
    k = int(np.argmax(counts))
    centre = 0.5 * (edges[k] + edges[k + 1])
    near = np.abs(y - centre) < 2.0 * noise
    return float(np.median(y[near])) if near.sum() >= 10 else float(centre)


def _gauss(grid: np.ndarray, pos: float, fwhm: float) -> np.ndarray:
    s = np.sqrt(fwhm**2 + SMOOTH_CM1**2) / 2.3548
    return np.exp(-0.5 * ((grid - pos) / s) ** 2)


def prep_columns(grid: np.ndarray, tokens: Iterable[str]) -> list[np.ndarray]:
    """One column per preparation token with own bands (mull oil, solvent, KBr water)."""
    cols: dict[str, np.ndarray] = {}
    for pos, inten, fwhm, tok in prep_mod.own_bands(list(tokens), air=False):
        w = fwhm if np.isfinite(fwhm) else 10.0
        cols.setdefault(tok, np.zeros_like(grid))
        cols[tok] += inten * _gauss(grid, pos, w)
    return [c for c in cols.values() if np.any(c > 1e-6)]


def baseline_columns(grid: np.ndarray, order: int = 2) -> list[np.ndarray]:
    t = (grid - grid.mean()) / max(np.ptp(grid), 1.0)
    cols = []
    for k in range(order + 1):
        cols += [t**k, -(t**k)]
    return cols


def fit_nonnegative(
    y: np.ndarray, components: Sequence[np.ndarray], extra: Sequence[np.ndarray], w: np.ndarray
) -> tuple[np.ndarray, np.ndarray, float]:
    """Weighted non-negative least squares: ``y ~ sum c_k comp_k + extra`` with c >= 0.

    ``extra`` columns are non-negative too (give +/- pairs for free terms). Returns the
    component amounts, the fitted profile and the weighted residual sum of squares.
    """
    cols = list(components) + list(extra)
    X = np.column_stack(cols) if cols else np.zeros((y.size, 0))
    sw = np.sqrt(np.clip(w, 0.0, None))
    keep = sw > 0
    coef, _ = nnls(X[keep] * sw[keep, None], y[keep] * sw[keep], maxiter=50 * X.shape[1] + 100)
    fitted = X @ coef
    rss = float(np.sum(w * (y - fitted) ** 2))
    return coef[: len(components)], fitted, rss


def area(y: np.ndarray, mask: np.ndarray) -> float:
    """Integrated absorbance (absorbance x cm-1) of a profile where ``mask`` is True.

    Signed: noise on a band-free stretch integrates to about zero (clipping it at zero would
    count half of it as signal).
    """
    return float(np.sum(y[mask]) * GRID_STEP_CM1)


# --- results ------------------------------------------------------------------------------------


def reference_area(y: np.ndarray, grid: np.ndarray, tokens: list[str], mask: np.ndarray) -> float:
    """Integrated absorbance of a reference profile, less its own preparation's bands.

    The preparation's bands (a KBr pellet's water, a mull oil's C-H bands) are fitted, non-
    negatively, to the reference only where that preparation spoils it, with a straight baseline,
    and their area is taken away. Where a compound band sits under a preparation band (an
    alcohol's O-H under a pellet's water) part of it goes too: the area is then a little low.
    """
    total = area(y, mask)
    cols = prep_columns(grid, tokens)
    if not cols:
        return total
    spoiled = (prep_mod.weight_profile(grid, tokens, air=False) < 1.0) & mask
    if spoiled.sum() < 5:
        return total
    coef, _, _ = fit_nonnegative(y, cols, baseline_columns(grid, 1), spoiled.astype(float))
    own = sum(c * col for c, col in zip(coef, cols))
    return float(total - area(own, mask))


def strong_bands(data: Data, grid: np.ndarray, prof: Profile) -> PeakList:
    if isinstance(data, PeakList):
        return data
    from reflib.signal.peaks import pick_peaks

    return pick_peaks(data)
