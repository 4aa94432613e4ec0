"""Leftover starting material and mixtures: non-negative fits of absorbance profiles. No I/O.

Everything here works on *profiles*: baseline-corrected decadic absorbance on one common
wavenumber grid (cm-1, :data:`GRID_STEP_CM1` apart), lightly smoothed so that the sharp lines of
water vapour and the detector noise weigh less than real bands. A full spectrum becomes a profile
through :func:`reflib.peaks.baseline` (ATR spectra get :func:`reflib.prep.atr_correction` first);
a peak list is drawn as Gaussian bands of its widths (12 cm-1 when unknown). Beer-Lambert
additivity makes a mixture's profile the sum of its components' profiles, each times its amount.

Share of the signal
-------------------
The **share** of a component is the fraction of the sample's compound absorbance, integrated
over wavenumber, that the component accounts for::

    share_k = c_k A_k / sum_i c_i A_i

where ``c_k`` is the fitted amount of reference ``k`` and ``A_k`` its integrated absorbance
(absorbance x cm-1) over the compared range, outside the regions its own preparation drops. The
preparation's own bands and the baseline are not signal. This is the share a Beer-Lambert sum of
area-normalised spectra is built with (mass or mole fractions need absorptivities reflib does not
have).

Why the leftover test fits locally
----------------------------------
A sample and its references were measured on different days: bands move a few cm-1 and change
height. A whole-spectrum fit lets the starting-material term soak up that misfit, so
:func:`leftover` fits the sample only in windows around the starting material's *diagnostic
bands* (its strong bands far from any product band, outside masked regions), each window with
its own amounts of product and starting material, a straight local baseline, and a shift of each
reference of up to :data:`MAX_SHIFT_CM1`. The amount of starting material is the
inverse-variance mean over the windows, judged against the residual of the local fits and the
noise measured in the sample. The product's amount comes from a whole-spectrum fit, where misfit
hardly matters because the product dominates.

Example
-------
>>> import numpy as np
>>> from reflib.spectrum import Spectrum
>>> x = np.arange(400.0, 4000.0, 2.0)
>>> g = lambda c, w: np.exp(-0.5 * ((x - c) / w) ** 2)
>>> start = Spectrum(x, g(1715, 8) + 0.5 * g(1200, 8))
>>> product = Spectrum(x, g(3350, 60) + 0.5 * g(1200, 8))
>>> r = leftover(Spectrum(x, 0.1 * start.y + product.y), start, product)
>>> r.detected, round(r.share, 2)
(True, 0.02)
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import ndimage
from scipy.optimize import nnls

from reflib import prep as prep_mod
from reflib.errors import ValidationError
from reflib.search import CAUTION
from reflib.spectrum import PeakList, Spectrum

#: Step of the common grid, cm-1.
GRID_STEP_CM1 = 2.0
#: FWHM (cm-1) of the Gaussian smoothing every profile gets: under the narrowest condensed-phase
#: bands (about 8 cm-1), over water-vapour lines (2-3 cm-1) and the point-to-point noise.
SMOOTH_CM1 = 6.0
#: Baseline under every profile: asymmetric least squares stiff enough to pass under the
#: broadest hydrogen-bonded O-H envelopes (FWHM up to about 600 cm-1), see reflib.peaks.baseline.
BASELINE_METHOD = "als"
BASELINE_WINDOW_CM1 = 1500.0
#: ALS asymmetry: small, so that dense band regions hardly pull the baseline up (0.01 took 7-10 %
#: of the area of the gas-phase test spectra, 1e-4 takes 1-2 %); the curve then runs along the
#: bottom of the noise, and :func:`_noise_offset` lifts the band-free level back to zero.
BASELINE_P = 1e-4
#: Width (cm-1) given to a band of a peak list without one.
DEFAULT_BAND_FWHM = 12.0
#: A band of a typed peak list carries no noise figure; this is the noise assumed for a profile
#: drawn from one, relative to its strongest band (the usual 1 % floor of a peak list).
PEAK_LIST_NOISE = 0.01
#: Largest shift (cm-1) allowed between a reference and the sample in a local fit: spectra of the
#: same compound measured on different days (or instruments) agree within a few cm-1 each, so
#: two of them may differ by twice that (common practice, no source).
MAX_SHIFT_CM1 = 8.0
#: A starting-material band is diagnostic when the product's relative absorbance at it is below
#: this fraction of the band's own relative intensity.
DIAGNOSTIC_CONTRAST = 0.35
#: Starting-material bands weaker than this (relative) are not used as diagnostic bands.
DIAGNOSTIC_MIN_INTENSITY = 0.12
#: At most this many diagnostic bands, the clearest first.
MAX_DIAGNOSTIC = 10
#: Relative change of one band's height between two measurements of the same compound (log
#: standard deviation; common practice, no source: heights of strong bands agree within 10-20 %).
BAND_HEIGHT_SPREAD = 0.2
#: Local amounts as area ratios (True) or least-squares amplitudes (False).
AREA_AMOUNTS = True
#: FWHM (cm-1) of the broadening used to fit the product's amount (see ``product_amount``).
AMOUNT_BROADENING_CM1 = 30.0
#: Reference areas count the points where the references' own preparations leave more than this
#: weight (reflib.prep.weight_profile).
REF_AREA_WEIGHT = 1e-6
#: Points of weight below this (reflib.prep.weight_profile) are left out of every fit.
USABLE_WEIGHT = 0.5
#: Significance (fitted amount over its standard error) a diagnostic band needs to count as seen.
Z_SEEN = 3.0
#: Significance of the combined amount of starting material needed to call it detected.
#: Calibrated on scripts/bench_leftover.py (false alarms at 0 % against detection at 5 %).
Z_DETECT = 5.0
#: Shares below this are not called detected even when significant (a fraction, 0..1).
MIN_SHARE = 0.02
#: Start only: the upper bound allows the sample to dip this many noise units below zero.
BOUND_NOISE_UNITS = 3.0
#: Start only: detected when the bound's limiting band is this many noise units above zero and
#: the bound (before the day-to-day allowance) is at least :data:`START_ONLY_MIN_SHARE`
#: (calibrated on scripts/bench_leftover.py).
START_ONLY_Z = 6.0
START_ONLY_MIN_SHARE = 0.075

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


def _tokens(data: Data, extra: Iterable[str] | str | None = ()) -> list[str]:
    toks = prep_mod.parse_tokens(list(data.meta.prep))
    more = prep_mod.parse_tokens(extra) if extra else []
    return list(dict.fromkeys([*more, *toks]))


def _check_data(name: str, data: Any) -> None:
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
    baseline of :func:`reflib.peaks.baseline`, smoothed to :data:`SMOOTH_CM1`, interpolated.
    A peak list: its bands drawn as Gaussians of their FWHM, heights the relative intensities.
    """
    from reflib.peaks import baseline, estimate_noise, uniform_grid

    _check_data("data", data)
    tokens = _tokens(data, prep)
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
    sigma_pts = SMOOTH_CM1 / 2.3548 / step
    if sigma_pts > 0.3:
        y = ndimage.gaussian_filter1d(y, sigma_pts, mode="nearest")
        noise *= _smooth_gain(sigma_pts)
    y = y - baseline(y, x, method=BASELINE_METHOD, window_cm1=BASELINE_WINDOW_CM1, p=BASELINE_P)
    y = y - _noise_offset(y, noise)
    covered = (grid >= x[0]) & (grid <= x[-1])
    out = np.interp(grid, x, y, left=0.0, right=0.0)
    return Profile(out, covered, float(noise), tokens, "spectrum")


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


def _baseline_columns(grid: np.ndarray, order: int = 2) -> list[np.ndarray]:
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


@dataclass
class DiagnosticBand:
    """A starting-material band used to look for it in the sample.

    ``position`` cm-1 (the starting material's); ``seen`` whether the sample shows it above
    noise; ``sample_intensity`` the band's height in the sample relative to the sample's strongest
    band (0..1); ``snr`` that height over its standard error; ``amount`` the local fitted amount.
    """

    position: float
    seen: bool
    sample_intensity: float
    snr: float = 0.0
    amount: float = 0.0
    sigma: float = 0.0

    def to_dict(self) -> dict[str, Any]:
        return {
            "position": round(self.position, 1),
            "seen": bool(self.seen),
            "sample_intensity": round(float(self.sample_intensity), 4),
        }


@dataclass
class LeftoverResult:
    """What :func:`leftover` found; :meth:`to_dict` is the JSON ``reflib leftover --json`` prints.

    ``share`` and ``share_interval`` (0..1, 95 %) need the pure product; ``upper_bound`` (0..1)
    needs only the starting material; ``detection_limit`` (0..1) is the share below which this
    pair's leftover would not be called detected.
    """

    start: dict[str, Any]
    product: dict[str, Any] | None
    detected: bool
    share: float | None
    share_interval: tuple[float, float] | None
    upper_bound: float | None
    detection_limit: float
    diagnostic_bands: list[DiagnosticBand]
    notes: list[str] = field(default_factory=list)
    z: float = 0.0
    limiting_band: float | None = None

    def to_dict(self) -> dict[str, Any]:
        r4 = lambda v: None if v is None else round(float(v), 4)  # noqa: E731
        return {
            "start": dict(self.start),
            "product": None if self.product is None else dict(self.product),
            "detected": bool(self.detected),
            "share": r4(self.share),
            "share_interval": None
            if self.share_interval is None
            else [r4(self.share_interval[0]), r4(self.share_interval[1])],
            "upper_bound": r4(self.upper_bound),
            "detection_limit": r4(self.detection_limit),
            "diagnostic_bands": [b.to_dict() for b in self.diagnostic_bands],
            "notes": list(self.notes),
            "caution": CAUTION,
        }


# --- the leftover test --------------------------------------------------------------------------


def _shifted(y: np.ndarray, shift_pts: float) -> np.ndarray:
    """``y`` moved by ``shift_pts`` grid points toward higher wavenumber (linear interpolation)."""
    if shift_pts == 0:
        return y
    idx = np.arange(y.size, dtype=float) - shift_pts
    return np.interp(idx, np.arange(y.size), y, left=0.0, right=0.0)


@dataclass
class _Window:
    position: float
    sl: slice
    fwhm: float


def _window(grid: np.ndarray, pos: float, fwhm: float, usable: np.ndarray) -> _Window | None:
    half = float(np.clip(1.6 * fwhm + 12.0, 24.0, 400.0))
    i0 = int(np.searchsorted(grid, pos - half))
    i1 = int(np.searchsorted(grid, pos + half))
    if i1 - i0 < 8 or usable[i0:i1].mean() < 0.7:
        return None
    return _Window(pos, slice(i0, i1), fwhm)


def _local_fit(
    y: np.ndarray,
    grid: np.ndarray,
    S: np.ndarray,
    P: np.ndarray | None,
    win: _Window,
    usable: np.ndarray,
    noise: float,
    corr_pts: float,
) -> tuple[float, float, float]:
    """Best local fit over shifts: (amount of S, its standard error, height of the S band,
    residual rms in noise units)."""
    sl = win.sl
    m = usable[sl]
    yy = y[sl][m]
    t = (grid[sl][m] - win.position) / max(float(np.ptp(grid[sl][m])), 1.0)
    base = [np.ones_like(t), -np.ones_like(t), t, -t]
    shifts = np.arange(-MAX_SHIFT_CM1, MAX_SHIFT_CM1 + 0.1, 1.0) / GRID_STEP_CM1
    s_cache: dict[float, np.ndarray] = {}
    p_cache: dict[float, np.ndarray] = {}

    def fit(ds: float, dp: float):
        if ds not in s_cache:
            s_cache[ds] = _shifted(S, ds)[sl][m]
        cols = [s_cache[ds]]
        if P is not None:
            if dp not in p_cache:
                p_cache[dp] = _shifted(P, dp)[sl][m]
            cols.append(p_cache[dp])
        X = np.column_stack(cols + base)
        coef, rnorm = nnls(X, yy)
        return (rnorm, coef, X, s_cache[ds], ds, dp)

    # coordinate search over the two shifts (starting material, product), twice round
    best = fit(0.0, 0.0)
    for _round in range(2):
        for ds in shifts:
            cand = fit(float(ds), best[5])
            if cand[0] < best[0]:
                best = cand
        if P is None:
            break
        for dp in shifts:
            cand = fit(best[4], float(dp))
            if cand[0] < best[0]:
                best = cand
    rnorm, coef, X, sc = best[:4]
    n, p = X.shape[0], (3 if P is None else 4)
    s2 = max(rnorm**2 / max(n - p, 1), noise**2)
    misfit = float(np.sqrt(rnorm**2 / max(n - p, 1)) / noise) if noise > 0 else 0.0
    # free-sign design for the covariance: [S, (P), 1, t]
    Xf = np.column_stack([X[:, 0]] + ([X[:, 1]] if P is not None else []) + [X[:, -4], X[:, -2]])
    try:
        cov = np.linalg.inv(Xf.T @ Xf) * s2 * corr_pts
        sigma = float(np.sqrt(max(cov[0, 0], 0.0)))
    except np.linalg.LinAlgError:
        sigma = float("inf")
    peak = float(sc.max()) if sc.size else 0.0
    if AREA_AMOUNTS and coef[0] > 0:
        # the amount as an area ratio: what the fit leaves for the starting material (sample
        # less the local product and baseline terms) over the starting material's own area
        rest = yy - X[:, 1:] @ coef[1:]
        core = sc > 0.2 * peak
        den = float(np.sum(sc[core]))
        if den > 0:
            b_area = float(np.sum(rest[core]) / den)
            return max(b_area, 0.0), sigma, peak, misfit
    return float(coef[0]), sigma, peak, misfit


def _strong_bands(data: Data, grid: np.ndarray, prof: Profile) -> PeakList:
    if isinstance(data, PeakList):
        return data
    from reflib.peaks import pick_peaks

    return pick_peaks(data)


def _relative_at(y: np.ndarray, grid: np.ndarray, pos: float, reach: float) -> float:
    m = np.abs(grid - pos) <= reach
    top = float(y.max()) if y.size else 0.0
    if not m.any() or top <= 0:
        return 0.0
    return float(np.clip(y[m].max(), 0.0, None) / top)


def diagnostic_bands(
    start: Data,
    product: Data | None,
    grid: np.ndarray,
    S: np.ndarray,
    P: np.ndarray | None,
    usable: np.ndarray,
    *,
    contrast_limit: float = DIAGNOSTIC_CONTRAST,
    max_bands: int = MAX_DIAGNOSTIC,
) -> tuple[list[tuple[float, float, float]], bool]:
    """The starting material's diagnostic bands ``(position cm-1, relative intensity, FWHM)``.

    Its bands of at least :data:`DIAGNOSTIC_MIN_INTENSITY` in usable (unmasked, covered) places;
    with a product, only those the product does not crowd: the product's relative absorbance
    near the band, and the relative intensity of any product band overlapping it (closer than
    half the sum of the widths plus :data:`MAX_SHIFT_CM1`), must stay under
    :data:`DIAGNOSTIC_CONTRAST` of the band's own intensity. Clearest first. When none
    qualifies, the (at most three) least crowded bands with some contrast are returned and the
    flag is False ("no clean diagnostic band").
    """
    peaks = _strong_bands(start, grid, Profile(S, usable, 0, [], ""))
    p_peaks = _strong_bands(product, grid, Profile(P, usable, 0, [], "")) if P is not None else None
    out = []
    for p in peaks:
        if p.intensity < DIAGNOSTIC_MIN_INTENSITY or not (
            grid[0] + 20 < p.position < grid[-1] - 20
        ):
            continue
        i = int(np.clip(np.searchsorted(grid, p.position), 0, grid.size - 1))
        if not usable[i]:
            continue
        fwhm = p.width if np.isfinite(p.width) else DEFAULT_BAND_FWHM
        rel_s = _relative_at(S, grid, p.position, 3.0)
        if rel_s <= 0:
            continue
        contrast = 0.0
        if P is not None:
            reach = 0.5 * fwhm + MAX_SHIFT_CM1 + SMOOTH_CM1
            contrast = _relative_at(P, grid, p.position, reach) / rel_s
            if p_peaks is not None and len(p_peaks):
                pw = np.where(np.isfinite(p_peaks.widths), p_peaks.widths, DEFAULT_BAND_FWHM)
                near = np.abs(p_peaks.positions - p.position) < 0.5 * (pw + fwhm) + MAX_SHIFT_CM1
                if near.any():
                    contrast = max(contrast, float(p_peaks.intensities[near].max()) / p.intensity)
        out.append((contrast, -rel_s, float(p.position), rel_s, float(fwhm)))
    out.sort()
    clean = [o for o in out if o[0] < contrast_limit]
    ok = bool(clean)
    pool = clean if clean else [o for o in out if o[0] < 1.0][:3]
    chosen: list[tuple[float, float, float]] = []
    for _c, _neg, pos, rel, fwhm in pool:
        if any(abs(pos - q) < max(fwhm, f) for q, _, f in chosen):
            continue
        chosen.append((pos, rel, fwhm))
        if len(chosen) >= max_bands:
            break
    return chosen, ok


def _describe(data: Data, info: dict[str, Any] | None) -> dict[str, Any]:
    d: dict[str, Any] = dict(info or {})
    if "name" not in d:
        d["name"] = data.meta.title or data.meta.source_file
    d.setdefault("kind", "spectrum" if isinstance(data, Spectrum) else "peaks")
    d.setdefault("prep", list(data.meta.prep))
    return d


def leftover(
    sample: Data,
    start: Data,
    product: Data | None = None,
    *,
    prep: Iterable[str] | str | None = (),
    start_info: dict[str, Any] | None = None,
    product_info: dict[str, Any] | None = None,
) -> LeftoverResult:
    """Is starting material left in ``sample``, and how much of the signal is it?

    Parameters
    ----------
    sample, start, product:
        Spectra (best) or peak lists of the sample, the starting material and, when known, the
        pure product. Their own preparation tokens come from their metadata.
    prep:
        The sample's preparation tokens (added to its metadata's): their regions are masked
        and their own bands fitted out.
    start_info, product_info:
        What to print about the references (name, ids...); defaults to their titles.

    Returns
    -------
    LeftoverResult
        With the product: ``share`` (0..1, see the module docstring), a 95 % interval from the
        local fits' covariance and the scatter between diagnostic bands, ``detected`` when the
        combined amount is at least :data:`Z_DETECT` standard errors and :data:`MIN_SHARE`.
        Always: ``upper_bound``, the largest share of starting material that can be subtracted
        without driving the sample more than :data:`BOUND_NOISE_UNITS` noise units below zero
        at any of its strong bands; without the product ``detected`` rests on that bound.
    """
    _check_data("sample", sample)
    _check_data("start", start)
    if product is not None:
        _check_data("product", product)
    items = [sample, start] + ([product] if product is not None else [])
    grid = common_grid(items)
    sp = profile(sample, grid, prep)
    st = profile(start, grid)
    pr = profile(product, grid) if product is not None else None
    tokens = list(dict.fromkeys([*sp.prep, *st.prep, *(pr.prep if pr else [])]))
    w = prep_mod.weight_profile(grid, tokens, air=True)
    covered = sp.covered & st.covered & (pr.covered if pr else True)
    usable = (w >= USABLE_WEIGHT) & covered
    notes: list[str] = []
    y, S = sp.y, st.y
    P = pr.y if pr is not None else None
    if sp.kind == "peaks":
        notes.append("the sample is a peak list: noise assumed 1 % of its strongest band")
    noise = max(sp.noise, 1e-6 * max(float(np.ptp(y)), 1e-12))
    if sp.kind == "peaks":
        noise = PEAK_LIST_NOISE * float(y.max())
    corr_pts = max(1.0, 2.0 * np.sqrt(np.pi) * SMOOTH_CM1 / 2.3548 / GRID_STEP_CM1)
    sample_top = float(y[usable].max()) if usable.any() else float(y.max())
    # reference areas: over the range compared, outside what the references' own preparations
    # spoil (a KBr pellet's water bands would otherwise count as the compound's absorbance)
    ref_w = prep_mod.weight_profile(grid, [*st.prep, *(pr.prep if pr else [])], air=True)
    ref_mask = (ref_w >= REF_AREA_WEIGHT) & covered
    a_s = reference_area(S, grid, st.prep, ref_mask)
    if a_s <= 0:
        raise ValidationError("the starting material shows no absorbance in the compared range")
    a_y = area(y, usable)

    diags, clean = diagnostic_bands(start, product, grid, S, P, usable)
    if P is not None and diags and not clean:
        notes.append(
            "no starting-material band is clear of the product's bands: the estimate rests on "
            "crowded bands and is weak"
        )
    bound, limiting, bound_bands = _upper_bound(y, grid, S, start, usable, noise)
    raw_ub = min(1.0, bound * area(S, usable) / a_y) if a_y > 0 else None
    # a band may be weaker in the sample than in the reference by day-to-day change alone:
    # the reported bound allows two spreads of it
    ub_share = None if raw_ub is None else min(1.0, raw_ub * float(np.exp(2 * BAND_HEIGHT_SPREAD)))
    info_s = _describe(start, start_info)
    info_p = _describe(product, product_info) if product is not None else None

    if P is None:
        return _start_only(
            info_s, y, S, grid, usable, noise, bound, limiting, bound_bands, ub_share,
            sample_top, a_y, notes, raw_ub,
        )  # fmt: skip

    # --- product known: local fits ---
    a_p = reference_area(P, grid, pr.prep, ref_mask)
    extra = prep_columns(grid, sp.prep) + _baseline_columns(grid)
    coef, _, _ = fit_nonnegative(y, [P, S], extra, w * covered)
    amount_p = float(coef[0])
    bands: list[DiagnosticBand] = []
    amounts, sigmas = [], []
    for pos, _rel, fwhm in diags:
        win = _window(grid, pos, fwhm, usable)
        if win is None:
            continue
        b, sb, peak, _misfit = _local_fit(y, grid, S, P, win, usable, noise, corr_pts)
        z = b / sb if sb > 0 else 0.0
        height = b * peak
        seen = z >= Z_SEEN and height >= Z_SEEN * noise
        rel = height / sample_top if sample_top > 0 else 0.0
        bands.append(DiagnosticBand(pos, seen, rel, z, b, sb))
        amounts.append(b)
        sigmas.append(sb)
    if not bands:
        notes.append(
            "no starting-material band is clear of the product's bands and the masked regions: "
            "the share rests on the bound only"
        )
        return LeftoverResult(
            info_s, info_p, False, None, None, ub_share, 1.0 if ub_share is None else ub_share,
            [], notes, 0.0, limiting,
        )  # fmt: skip
    am, sg = np.array(amounts), np.array(sigmas)
    used = reject_high(am, sg)
    for k, band in enumerate(bands):
        if not used[k]:
            notes.append(
                f"the band at {band.position:.0f} cm-1 claims more starting material than the "
                "other diagnostic bands allow (a misfit of a nearby band?); left out"
            )
    b_mean, b_sig, b_err = combine_bands(am[used], sg[used])
    z_all = b_mean / b_sig if b_sig > 0 else 0.0
    broad = _broadened_fit_data(y, S, P, grid, sp.prep)

    def product_amount(b: float) -> float:
        """The product's amount with the starting material fixed at ``b``: a least-squares fit
        of heavily broadened profiles (:data:`AMOUNT_BROADENING_CM1`), which shifts and width
        changes of a few cm-1 leave nearly alone (a sharp template a few cm-1 off comes out
        low) and which needs no band areas of the sample."""
        yb, sb, pb, extra_b = broad
        c, _, _ = fit_nonnegative(yb - b * sb, [pb], extra_b, w * covered)
        return float(c[0]) if c[0] > 0 else amount_p

    def share_of(b: float, a: float | None = None) -> float:
        a = amount_p if a is None else a
        tot = b * a_s + a * a_p
        return float(b * a_s / tot) if tot > 0 else 0.0

    amount_p = product_amount(b_mean)

    z_ok = z_all >= Z_DETECT and share_of(b_mean) >= MIN_SHARE and any(b.seen for b in bands)
    if z_ok:
        # the amount is then measured on every starting-material band the product does not
        # swamp (the crowded ones too, each with the product modelled): more bands average out
        # the day-to-day change of single band heights
        more, _ = diagnostic_bands(
            start, product, grid, S, P, usable, contrast_limit=1.0, max_bands=2 * MAX_DIAGNOSTIC
        )
        have = {round(b.position, 1) for b in bands}
        am2, sg2 = list(am[used]), list(sg[used])
        for pos, _rel, fwhm in more:
            if round(pos, 1) in have:
                continue
            win = _window(grid, pos, fwhm, usable)
            if win is None:
                continue
            b, sb, _peak, _misfit = _local_fit(y, grid, S, P, win, usable, noise, corr_pts)
            am2.append(b)
            sg2.append(sb)
        am2a, sg2a = np.array(am2), np.array(sg2)
        keep2 = reject_high(am2a, sg2a)
        b_mean, _, b_err = combine_bands(am2a[keep2], sg2a[keep2])
        notes.append(f"amount measured on {int(keep2.sum())} starting-material band(s)")
    amount_p = product_amount(b_mean)
    share = share_of(b_mean)
    interval = (share_of(max(b_mean - 1.96 * b_err, 0.0)), share_of(b_mean + 1.96 * b_err))
    limit = max(share_of(Z_DETECT * b_sig), MIN_SHARE)
    detected = bool(z_all >= Z_DETECT and share >= MIN_SHARE and any(b.seen for b in bands))
    if detected and not all(b.seen for b in bands):
        notes.append(
            "not every diagnostic band is seen: "
            + ", ".join(f"{b.position:.0f}" for b in bands if not b.seen)
            + " cm-1 stay below noise"
        )
    if len(bands) == 1:
        notes.append(f"only one diagnostic band ({bands[0].position:.0f} cm-1): a weak basis")
    notes.append(
        f"fitted locally around {len(bands)} diagnostic band(s); starting material at "
        f"{z_all:.1f} standard errors"
    )
    if ub_share is not None and limiting is not None:
        notes.append(f"the bound is set by the starting material's band at {limiting:.0f} cm-1")
    return LeftoverResult(
        info_s, info_p, detected, share, interval, ub_share, limit, bands, notes, z_all, limiting
    )


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
    coef, _, _ = fit_nonnegative(y, cols, _baseline_columns(grid, 1), spoiled.astype(float))
    own = sum(c * col for c, col in zip(coef, cols))
    return float(total - area(own, mask))


def _broadened_fit_data(
    y: np.ndarray, S: np.ndarray, P: np.ndarray, grid: np.ndarray, tokens: list[str]
) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[np.ndarray]]:
    """Sample, start and product profiles broadened to :data:`AMOUNT_BROADENING_CM1`, with the
    preparation's band columns (broadened alike) and a smooth baseline."""
    sig = AMOUNT_BROADENING_CM1 / 2.3548 / GRID_STEP_CM1

    def br(v: np.ndarray) -> np.ndarray:
        return ndimage.gaussian_filter1d(v, sig, mode="nearest")

    extra = [br(c) for c in prep_columns(grid, tokens)] + _baseline_columns(grid, 4)
    return br(y), br(S), br(P), extra


def combine_bands(
    amounts: np.ndarray, sigmas: np.ndarray, spread: float | None = None
) -> tuple[float, float, float]:
    """Combine the local amounts of several bands: (mean, its noise error, its total error).

    Each band's variance is its fit variance plus ``(spread * mean)**2``: a band's height
    changes between days by about :data:`BAND_HEIGHT_SPREAD` (relative), so one very clean band
    must not outweigh the others. The noise error (fit variances only) is what the detection
    test uses; the total error adds the scatter between bands and sets the interval.
    """
    spread = BAND_HEIGHT_SPREAD if spread is None else spread
    sg = np.maximum(sigmas, 1e-12)
    w0 = 1.0 / sg**2
    mean = float(np.sum(w0 * amounts) / np.sum(w0))
    for _ in range(5):
        var = sg**2 + (spread * max(mean, 0.0)) ** 2
        w = 1.0 / var
        mean = float(np.sum(w * amounts) / np.sum(w))
    noise_err = float(np.sqrt(np.sum(w**2 * sg**2)) / np.sum(w))
    total = float(np.sqrt(1.0 / np.sum(w)))
    if amounts.size >= 2:
        scatter = float(np.sum(w * (amounts - mean) ** 2) / np.sum(w) / (amounts.size - 1))
        total = max(total, float(np.sqrt(noise_err**2 + scatter)))
    return mean, noise_err, total


def reject_high(amounts: np.ndarray, sigmas: np.ndarray, k: float = 3.0) -> np.ndarray:
    """Mask of the bands to keep: drop, one at a time, a band whose amount lies more than ``k``
    total errors above the mean of the others. Leftover starting material shows in *all* its
    diagnostic bands alike; one band claiming much more is a neighbour's misfit, not leftover."""
    keep = np.ones(amounts.size, bool)
    while keep.sum() >= 2:
        idx = np.flatnonzero(keep)
        worst, worst_z = None, k
        for i in idx:
            others = keep.copy()
            others[i] = False
            m, _n, t = combine_bands(amounts[others], sigmas[others])
            spread = BAND_HEIGHT_SPREAD * max(m, 0.0)
            z = (amounts[i] - m) / np.sqrt(sigmas[i] ** 2 + t**2 + spread**2)
            if z > worst_z:
                worst, worst_z = i, z
        if worst is None:
            break
        keep[worst] = False
    return keep


def _upper_bound(
    y: np.ndarray, grid: np.ndarray, S: np.ndarray, start: Data, usable: np.ndarray, noise: float
) -> tuple[float, float | None, list[tuple[float, float, float]]]:
    """Largest amount of S subtractable without y - b S < -k noise at any strong S band core.

    Returns (amount, position of the limiting band or None, [(position, bound, sample height)]).
    """
    peaks = _strong_bands(start, grid, Profile(S, usable, 0, [], ""))
    shifts = np.arange(-MAX_SHIFT_CM1, MAX_SHIFT_CM1 + 0.1, 1.0) / GRID_STEP_CM1
    results = []
    for p in peaks:
        if p.intensity < 0.3:
            continue
        i = int(np.clip(np.searchsorted(grid, p.position), 0, grid.size - 1))
        if not usable[i]:
            continue
        fwhm = p.width if np.isfinite(p.width) else DEFAULT_BAND_FWHM
        core = np.abs(grid - p.position) <= max(0.5 * fwhm, 3.0)
        core &= usable
        if core.sum() < 2:
            continue
        best = 0.0
        for ds in shifts:
            sc = _shifted(S, ds)[core]
            ok = sc > 0.5 * sc.max() if sc.max() > 0 else np.zeros_like(sc, bool)
            if not ok.any():
                continue
            b = float(np.min((y[core][ok] + BOUND_NOISE_UNITS * noise) / sc[ok]))
            best = max(best, b)
        height = float(np.max(y[core]))
        results.append((float(p.position), best, height))
    if not results:
        return float("inf"), None, []
    pos, b, _h = min(results, key=lambda r: r[1])
    return b, pos, results


def _start_only(
    info_s,
    y,
    S,
    grid,
    usable,
    noise,
    bound,
    limiting,
    bound_bands,
    ub_share,
    top,
    a_y,
    notes,
    raw_ub,
) -> LeftoverResult:
    notes.append("the pure product is not given: only an upper bound on the share is possible")
    bands = []
    for pos, b, h in sorted(bound_bands, key=lambda r: r[1]):
        i = int(np.argmin(np.abs(grid - pos)))
        level = float(b * S[max(i - 2, 0) : i + 3].max())
        z = level / noise if noise > 0 else 0.0
        seen = z >= START_ONLY_Z
        bands.append(DiagnosticBand(pos, seen, h / top if top > 0 else 0.0, z, b, 0.0))
        if len(bands) >= MAX_DIAGNOSTIC:
            break
    if ub_share is None or limiting is None:
        notes.append("no strong starting-material band lies in an unmasked region")
        return LeftoverResult(info_s, None, False, None, None, None, 1.0, bands, notes)
    s_peak = float(S[usable].max()) if usable.any() else float(S.max())
    per_noise = (
        START_ONLY_Z * noise / s_peak * (float(np.sum(S[usable])) * GRID_STEP_CM1) / a_y
        if a_y > 0 and s_peak > 0
        else 1.0
    )
    limit = max(START_ONLY_MIN_SHARE, per_noise)
    lim_band = bands[0] if bands else None
    detected = bool(lim_band is not None and lim_band.seen and raw_ub >= limit)
    notes.append(f"the bound is set by the starting material's band at {limiting:.0f} cm-1")
    if detected:
        notes.append(
            "every strong starting-material band shows in the sample: starting material is "
            "probably left (without the pure product the bound may include product bands)"
        )
    return LeftoverResult(
        info_s, None, detected, None, None, ub_share, limit, bands, notes, 0.0, limiting
    )


# --- mixtures -----------------------------------------------------------------------------------

#: Forward selection adds a component only when it lowers the weighted residual sum of squares
#: by at least this fraction, and by more than :data:`MIXTURE_NOISE_UNITS` squared noise units
#: (what a column fitted to pure noise could remove), and takes at least :data:`MIN_SHARE`.
MIXTURE_MIN_IMPROVEMENT = 0.15
MIXTURE_NOISE_UNITS = 25.0
#: Sample bands at least this strong (relative) that the fit leaves at least
#: :data:`UNEXPLAINED_FRACTION` of are reported as unexplained.
UNEXPLAINED_MIN_INTENSITY = 0.15
UNEXPLAINED_FRACTION = 0.4


@dataclass
class Component:
    """One library compound in a mixture: its share of the signal (0..1) and fitted amount."""

    info: dict[str, Any]
    share: float
    amount: float

    def to_dict(self) -> dict[str, Any]:
        return {**self.info, "share": round(self.share, 4), "amount": round(self.amount, 5)}


@dataclass
class UnexplainedBand:
    """A strong sample band no component explains: position cm-1, relative intensity (0..1),
    and the fraction of its height the fit leaves."""

    position: float
    intensity: float
    left: float
    groups: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {
            "position": round(self.position, 1),
            "intensity": round(self.intensity, 3),
            "unexplained_fraction": round(self.left, 3),
            "groups": list(self.groups),
        }


@dataclass
class MixtureResult:
    """What :func:`explain_mixture` found; :meth:`to_dict` is what ``reflib mixture --json``
    prints. ``explained`` is the fraction of the sample's integrated absorbance the components
    account for (0..1, usable region)."""

    components: list[Component]
    unexplained: list[UnexplainedBand]
    explained: float
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {
            "components": [c.to_dict() for c in self.components],
            "explained": round(self.explained, 4),
            "unexplained_bands": [u.to_dict() for u in self.unexplained],
            "notes": list(self.notes),
            "caution": CAUTION,
        }


def explain_mixture(
    sample: Data,
    candidates: Sequence[tuple[str | dict[str, Any], Data]],
    *,
    max_components: int = 3,
    prep: Iterable[str] | str | None = (),
) -> MixtureResult:
    """Explain ``sample`` as a non-negative sum of a few ``candidates`` (forward selection).

    ``candidates`` are ``(name or info dict, Spectrum or PeakList)`` pairs, e.g. the hits of a
    library search. At each step the candidate that lowers the weighted residual most is added
    (all amounts refitted, non-negative, with the preparation's own bands and a smooth baseline);
    selection stops at ``max_components`` or when the next one no longer improves the fit beyond
    noise (see :data:`MIXTURE_MIN_IMPROVEMENT`). Shares as defined in the module docstring; the
    strong sample bands the fit leaves unexplained are the bands of something not among the
    candidates.
    """
    _check_data("sample", sample)
    if max_components < 1:
        raise ValidationError(f"max_components must be at least 1, got {max_components}")
    if not candidates:
        raise ValidationError("no candidate compounds to explain the sample with")
    infos = []
    datas = []
    for i, (info, data) in enumerate(candidates):
        _check_data(f"candidate {i + 1}", data)
        infos.append({"name": info} if isinstance(info, str) else dict(info))
        datas.append(data)
    grid = common_grid([sample, *datas])
    sp = profile(sample, grid, prep)
    profs = [profile(d, grid) for d in datas]
    w = prep_mod.weight_profile(grid, sp.prep, air=True) * sp.covered
    for p in profs:
        w = w * p.covered
    usable = w >= USABLE_WEIGHT
    y = sp.y
    noise = sp.noise if sp.kind == "spectrum" else PEAK_LIST_NOISE * float(y.max())
    corr_pts = max(1.0, 2.0 * np.sqrt(np.pi) * SMOOTH_CM1 / 2.3548 / GRID_STEP_CM1)
    extra = prep_columns(grid, sp.prep) + _baseline_columns(grid)
    _, fitted0, rss = fit_nonnegative(y, [], extra, w)
    chosen: list[int] = []
    coef = np.zeros(0)
    fitted = fitted0
    notes: list[str] = []
    while len(chosen) < max_components:
        best = None
        for k in range(len(profs)):
            if k in chosen:
                continue
            idx = [*chosen, k]
            c, f, r = fit_nonnegative(y, [profs[i].y for i in idx], extra, w)
            if best is None or r < best[2]:
                best = (idx, c, r, f)
        if best is None:
            break
        idx, c, r, f = best
        gain = rss - r
        areas = np.array([area(profs[i].y, usable) for i in idx])
        parts = c * areas
        new_share = parts[-1] / parts.sum() if parts.sum() > 0 else 0.0
        if (
            gain < MIXTURE_MIN_IMPROVEMENT * rss
            or gain < MIXTURE_NOISE_UNITS * noise**2 * corr_pts
            or new_share < MIN_SHARE
        ):
            name = infos[idx[-1]].get("name")
            notes.append(f"stopped: adding {name!r} would not improve the fit beyond noise")
            break
        chosen, coef, rss, fitted = idx, c, r, f
    comps = []
    if chosen:
        areas = np.array([area(profs[i].y, usable) for i in chosen])
        parts = coef * areas
        tot = parts.sum()
        for i, c, part in zip(chosen, coef, parts):
            comps.append(Component(infos[i], float(part / tot) if tot > 0 else 0.0, float(c)))
        comps.sort(key=lambda c: -c.share)
    baseline_fit = (
        fitted0 if not chosen else fitted - sum(c * profs[i].y for c, i in zip(coef, chosen))
    )
    signal = np.clip(y - baseline_fit, 0.0, None)
    model = np.clip(fitted - baseline_fit, 0.0, None)
    a_sig = float(np.sum(signal[usable]))
    explained = float(np.sum(np.minimum(model, signal)[usable]) / a_sig) if a_sig > 0 else 0.0
    unexplained = _unexplained(sample, grid, y - baseline_fit, fitted - baseline_fit, usable, noise)
    if unexplained:
        notes.append(
            f"{len(unexplained)} strong band(s) no candidate explains: perhaps a compound that "
            "is not in the library"
        )
    return MixtureResult(comps, unexplained, explained, notes)


def _unexplained(
    sample: Data,
    grid: np.ndarray,
    signal: np.ndarray,
    model: np.ndarray,
    usable: np.ndarray,
    noise: float,
) -> list[UnexplainedBand]:
    from reflib.compare import _groups

    peaks = _strong_bands(sample, grid, Profile(signal, usable, noise, [], ""))
    out = []
    for p in peaks:
        if p.intensity < UNEXPLAINED_MIN_INTENSITY:
            continue
        i = int(np.argmin(np.abs(grid - p.position)))
        if not usable[i] or abs(grid[i] - p.position) > 2 * GRID_STEP_CM1:
            continue
        height = float(signal[i])
        if height <= 8 * noise:
            continue
        left = float((signal[i] - max(model[i], 0.0)) / height)
        if left >= UNEXPLAINED_FRACTION:
            groups = _groups(p.position, p.strength, p.broad, p.width, list(sample.meta.prep))
            out.append(UnexplainedBand(p.position, p.intensity, left, groups))
    out.sort(key=lambda u: -u.intensity * u.left)
    return out


# --- with a library -----------------------------------------------------------------------------


def library_entry(
    lib: Any, ref: str | int, *, prefer_prep: Iterable[str] = ()
) -> tuple[Data, dict[str, Any]]:
    """A compound's best spectrum from a :class:`~reflib.library.Library` and what to print.

    The full spectrum is preferred over a typed peak list, and among those one sharing a
    preparation token with ``prefer_prep``. Raises NotFoundError for an unknown name or id.
    """
    c = lib.store.find_compound(ref)
    spectra = lib.store.spectra_of(int(c["id"]))
    if not spectra:
        raise ValidationError(f"compound {c['name']!r} has no spectrum in the library")
    wanted = set(prefer_prep)
    best = None
    for s in spectra:
        full = lib.store.full_spectrum(int(s["id"]))
        data = full if full is not None else lib.store.peaks_of(int(s["id"]))
        shared = len(wanted & set(data.meta.prep))
        rank = (full is not None, shared, -int(s["id"]))
        if best is None or rank > best[0]:
            best = (rank, data, int(s["id"]))
    _, data, sid = best
    info = {
        "name": c["name"],
        "compound_id": int(c["id"]),
        "spectrum_id": sid,
        "kind": "spectrum" if isinstance(data, Spectrum) else "peaks",
        "prep": list(data.meta.prep),
    }
    return data, info


def leftover_in_library(
    lib: Any,
    sample: Data,
    start_ref: str | int,
    product_ref: str | int | None = None,
    *,
    prep: Iterable[str] | str | None = (),
) -> LeftoverResult:
    """:func:`leftover` with the starting material (and product) taken from a library by name
    or id."""
    tokens = _tokens(sample, prep)
    start, s_info = library_entry(lib, start_ref, prefer_prep=tokens)
    product, p_info = (None, None)
    if product_ref is not None:
        product, p_info = library_entry(lib, product_ref, prefer_prep=tokens)
        if p_info["compound_id"] == s_info["compound_id"]:
            raise ValidationError(
                f"--start and --product name the same compound ({s_info['name']!r})"
            )
    return leftover(sample, start, product, prep=tokens, start_info=s_info, product_info=p_info)


def mixture_in_library(
    lib: Any,
    sample: Data,
    *,
    max_components: int = 3,
    prep: Iterable[str] | str | None = (),
    candidates: int = 8,
) -> MixtureResult:
    """:func:`explain_mixture` over the top ``candidates`` hits of a library search."""
    tokens = _tokens(sample, prep)
    res = lib.search(sample, prep=tokens, top=candidates)
    if not res.hits:
        raise ValidationError(f"the search found no candidates: {res.reason}")
    cands = []
    for h in res.hits:
        full = lib.store.full_spectrum(h.spectrum_id)
        data = full if full is not None else lib.store.peaks_of(h.spectrum_id)
        info = {
            "name": h.name,
            "compound_id": h.compound_id,
            "spectrum_id": h.spectrum_id,
            "score": round(float(h.score), 4),
        }
        cands.append((info, data))
    return explain_mixture(sample, cands, max_components=max_components, prep=tokens)
