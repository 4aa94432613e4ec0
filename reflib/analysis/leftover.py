"""Leftover starting material in a product: local non-negative fits around the starting
material's diagnostic bands. No I/O.

Profiles and fits come from :mod:`reflib.analysis.profiles`.

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

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import ndimage
from scipy.optimize import nnls

from reflib.analysis.profiles import (
    DEFAULT_BAND_FWHM,
    GRID_STEP_CM1,
    MIN_SHARE,
    PEAK_LIST_NOISE,
    REF_AREA_WEIGHT,
    SMOOTH_CM1,
    USABLE_WEIGHT,
    Profile,
    area,
    baseline_columns,
    check_data,
    common_grid,
    fit_nonnegative,
    prep_columns,
    profile,
    reference_area,
    strong_bands,
)
from reflib.analysis.search import CAUTION
from reflib.chem import prep as prep_mod
from reflib.errors import ValidationError
from reflib.spectrum import PeakList, Spectrum

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
#: Significance (fitted amount over its standard error) a diagnostic band needs to count as seen.
Z_SEEN = 3.0
#: Significance of the combined amount of starting material needed to call it detected.
#: Calibrated on scripts/bench_leftover.py (false alarms at 0 % against detection at 5 %).
Z_DETECT = 5.0
#: The upper bound allows the sample to dip this many noise units below zero.
BOUND_NOISE_UNITS = 3.0

Data = Spectrum | PeakList


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
    peaks = strong_bands(start, grid, Profile(S, usable, 0, [], ""))
    p_peaks = strong_bands(product, grid, Profile(P, usable, 0, [], "")) if P is not None else None
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
    others: Iterable[Data] = (),
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
    others:
        Spectra of reagents and solvents that may be in the sample; without the product they
        are fitted, non-negatively, wherever their bands overlap a starting-material band.

    Returns
    -------
    LeftoverResult
        With the product: ``share`` (0..1, see the module docstring), a 95 % interval from the
        local fits' covariance and the scatter between diagnostic bands, ``detected`` when the
        combined amount is at least :data:`Z_DETECT` standard errors and :data:`MIN_SHARE`.
        Always: ``upper_bound``, the largest share of starting material that can be subtracted
        without driving the sample more than :data:`BOUND_NOISE_UNITS` noise units below zero
        at any of its strong bands. Without the product see :func:`_start_only`: each strong
        band judged by place, width and shape, the amount from the bands that agree with the
        lowest ceiling, a share and interval when detected.
    """
    check_data("sample", sample)
    check_data("start", start)
    if product is not None:
        check_data("product", product)
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
        extra_refs = []
        for o in others:
            check_data("reagent or solvent", o)
            extra_refs.append(profile(o, grid).y)
        return _start_only(
            info_s, y, S, grid, usable, noise, ub_share, sample_top, a_y, notes,
            start=start, a_s=a_s, corr_pts=corr_pts, others=extra_refs,
            broad_ok=_broad_comparable(sp.prep, st.prep),
            product_bands=sorted(
                set(_product_group_bands(sample, start, sp.prep))
                | set(_foreign_bands(y, grid, S, usable, noise) if FOREIGN_BANDS else [])
            ),
        )  # fmt: skip

    # --- product known: local fits ---
    a_p = reference_area(P, grid, pr.prep, ref_mask)
    extra = prep_columns(grid, sp.prep) + baseline_columns(grid)
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


def _broadened_fit_data(
    y: np.ndarray, S: np.ndarray, P: np.ndarray, grid: np.ndarray, tokens: list[str]
) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[np.ndarray]]:
    """Sample, start and product profiles broadened to :data:`AMOUNT_BROADENING_CM1`, with the
    preparation's band columns (broadened alike) and a smooth baseline."""
    sig = AMOUNT_BROADENING_CM1 / 2.3548 / GRID_STEP_CM1

    def br(v: np.ndarray) -> np.ndarray:
        return ndimage.gaussian_filter1d(v, sig, mode="nearest")

    extra = [br(c) for c in prep_columns(grid, tokens)] + baseline_columns(grid, 4)
    return br(y), br(S), br(P), extra


def combine_bands(
    amounts: np.ndarray, sigmas: np.ndarray, spread: float | np.ndarray | None = None
) -> tuple[float, float, float]:
    """Combine the local amounts of several bands: (mean, its noise error, its total error).

    Each band's variance is its fit variance plus ``(spread * mean)**2``: a band's height
    changes between days by about :data:`BAND_HEIGHT_SPREAD` (relative), so one very clean band
    must not outweigh the others (``spread`` is one value, or one per band: see
    :data:`BROAD_HEIGHT_SPREAD`). The noise error (fit variances only) is what the detection
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
    peaks = strong_bands(start, grid, Profile(S, usable, 0, [], ""))
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


#: Start only: a band counts when its relative intensity in the starting material is at least this.
START_BAND_MIN_INTENSITY = 0.15
#: Start only: at most this many of the starting material's bands are judged, strongest first.
#: A functional group's own band (an amine's NH2 scissoring, a nitrile's C#N) is often weaker
#: than the skeleton's bands the product shares, so the cut must reach well down the list.
START_MAX_BANDS = 24
#: Start only: shape allowance. A band measured on another day differs from the reference in width
#: (about 10 %) and in its Lorentzian share, which leaves a residual of a few per cent of its
#: height even at the right amount; the misfit is judged against noise plus this fraction of the
#: fitted band's height (common practice, no source).
SHAPE_ALLOWANCE = 0.12
#: Start only: a band's shape fits when its residual is under this many allowed units.
SHAPE_LIMIT = 2.5
#: Start only: largest shift (cm-1) of one band between the reference and the sample. Each
#: measurement may be a few cm-1 off (global) and each band a couple more (its own), so two
#: measurements differ by up to about twice that (common practice, no source).
START_MAX_SHIFT_CM1 = 12.0
#: Start only: bands broader than this (cm-1 FWHM) are hydrogen-bonded O-H and N-H envelopes.
BROAD_FWHM_CM1 = 60.0
#: Start only: relative change of a hydrogen-bonded envelope's height between two measurements
#: (log standard deviation). Hydrogen bonding, and so the envelope, changes with the sample's
#: state, water content and temperature far more than a skeleton band does (from memory).
BROAD_HEIGHT_SPREAD = 0.5
#: Start only: significance a single band needs to count as seen (fitted amount over its error).
START_SEEN_Z = 3.0
#: Start only: significance of the combined amount of the consistent bands needed to call the
#: starting material detected. Each band's error grows with the residual its fit leaves under
#: the band (see :func:`_start_band_fit`); chosen on scripts/bench_leftover.py --seed 1 and
#: --seed 2 (invented data), the default seed 0 then measured as a held-out check.
START_DETECT_Z = 4.0
#: Start only: seen bands (right place, width and shape) needed among the consistent ones.
START_MIN_SEEN = 1
#: Start only: fraction of a Lorentzian tail of a nearby product band (see
#: :func:`_flank_allowance`) counted as a systematic error of a starting-material band's amount
#: (band shapes of condensed phases lie between Gaussian and Lorentzian; common practice, no
#: source).
PRODUCT_TAIL = 1.0
#: Start only: product bands farther than this many widths of the starting-material band leave
#: no tail worth counting.
PRODUCT_TAIL_REACH = 5.0
#: Start only: each neighbouring band of the sample is fitted as a Gaussian and a Lorentzian of
#: its width (a pseudo-Voigt), not as a Gaussian alone.
NEIGHBOUR_LORENTZ = True
#: Start only: a maximum of the sample is a neighbouring band when the trace between it and the
#: starting-material band dips below it by at least this many noise units (a band standing out
#: of the noise; common practice, no source).
NEIGHBOUR_PROMINENCE = 5.0
#: Start only: also count as the product's likely bands the sample's bands the starting material
#: cannot be (:func:`_foreign_bands`): at least this strong relative to the sample's strongest...
FOREIGN_BANDS = True
FOREIGN_MIN_RELATIVE = 0.1
#: ...where the starting material's profile stays under this fraction of its strongest band.
FOREIGN_MAX_START = 0.05


@dataclass
class _StartBand:
    position: float
    rel: float  # relative intensity in the starting material
    amount: float  # local amount of the starting material (1 = as in the reference)
    sigma: float  # its standard error from noise
    peak: float  # height of the reference band (profile units)
    shape_ok: bool
    misfit: float
    shift: float  # cm-1
    ceiling: float  # largest amount the sample leaves room for at the band's core
    broad: bool  # a hydrogen-bonded envelope (see BROAD_FWHM_CM1)
    flank: float = 0.0  # amount a nearby product band's tail may put there (see PRODUCT_TAIL)
    judged: bool = True  # its amount may set and join the consistent group
    bound: float = float("inf")  # plain sample over the band core, any shape (see _bound)


def _start_band_fit(
    y: np.ndarray,
    grid: np.ndarray,
    S: np.ndarray,
    others: list[np.ndarray],
    win: _Window,
    usable: np.ndarray,
    noise: float,
    corr_pts: float,
) -> tuple[float, float, float, float, float, float, float, float]:
    """One starting-material band against the sample, without the product: the sample in the
    window as the shifted starting material, the interfering reagents/solvents/preparation bands
    and a straight baseline. Returns (amount, its standard error, its error from the noise
    alone, reference band height, misfit in allowed units, shift cm-1, ceiling, bound). The
    bound is the plain sample over the reference band's core at the most generous shift: it
    holds whatever the band's shape (see :func:`_bound`). The standard
    error is the noise's, grown by the residual the fit leaves under the band where that is
    larger than the noise."""
    sl = win.sl
    m = usable[sl]
    yy = y[sl][m]
    gx = grid[sl][m]
    t = (gx - win.position) / max(float(np.ptp(gx)), 1.0)
    base = [np.ones_like(t), -np.ones_like(t), t, -t]
    oth = [o[sl][m] for o in others]
    oth = [o for o in oth if o.size and float(o.max()) > 2.0 * noise]
    oth += [c[sl][m] for c in _neighbour_columns(y, grid, win, noise)]
    shifts = np.arange(-START_MAX_SHIFT_CM1, START_MAX_SHIFT_CM1 + 0.1, 2.0) / GRID_STEP_CM1
    best = None
    bound = 0.0
    for ds in shifts:
        sc = _shifted(S, float(ds))[sl][m]
        X = np.column_stack([sc, *oth, *base])
        coef, rnorm = nnls(X, yy)
        if best is None or rnorm < best[0]:
            best = (rnorm, coef, X, sc, float(ds))
        # Beer-Lambert: every compound adds absorbance, so the sample at the band's core
        # holds at most this much starting material whatever else absorbs there; the most
        # generous of the allowed shifts
        pk = float(sc.max()) if sc.size else 0.0
        if pk > 0:
            core = sc > 0.5 * pk
            bound = max(bound, float(np.min((yy[core] + BOUND_NOISE_UNITS * noise) / sc[core])))
    rnorm, coef, X, sc, ds = best
    # the error from the sample's noise; grown below by the residual under the band
    s2 = noise**2
    Xf = np.column_stack([X[:, : 1 + len(oth)], X[:, -4], X[:, -2]])
    try:
        cov = np.linalg.inv(Xf.T @ Xf) * s2 * corr_pts
        sigma = float(np.sqrt(max(cov[0, 0], 0.0)))
    except np.linalg.LinAlgError:
        sigma = float("inf")
    peak = float(sc.max()) if sc.size else 0.0
    a = float(coef[0])
    core = sc > 0.3 * peak if peak > 0 else np.zeros(sc.size, bool)
    resid = yy - X @ coef
    rms = float(np.sqrt(np.mean(resid[core] ** 2))) if core.any() else 0.0
    allowed = float(np.hypot(noise, SHAPE_ALLOWANCE * a * peak))
    misfit = rms / allowed if allowed > 0 else 0.0
    # the fit may leave more than noise under the band (another band's shape, a width
    # change): the amount is then no better known than that residual allows (least-squares
    # practice: the error scales with the residual's rms when it exceeds the noise)
    sigma_fit = sigma * max(rms / noise, 1.0) if noise > 0 else sigma
    # the ceiling: the sample less the local baseline and interferents, which the starting
    # material's band core may not exceed by more than BOUND_NOISE_UNITS noise units
    rest = yy - X[:, 1:] @ coef[1:]
    top = sc > 0.5 * peak if peak > 0 else core
    ceiling = (
        float(np.min((rest[top] + BOUND_NOISE_UNITS * noise) / sc[top]))
        if top.any()
        else float("inf")
    )
    # and the plain one (the sample itself, which a starting-material band cannot exceed): a
    # local baseline drawn through a crowded window can dip under the sample's true level
    plain = (
        float(np.min((yy[top] + BOUND_NOISE_UNITS * noise) / sc[top]))
        if top.any()
        else float("inf")
    )
    ceiling = max(ceiling, plain, 0.0)
    return a, sigma_fit, sigma, peak, misfit, ds * GRID_STEP_CM1, ceiling, max(bound, ceiling)


def _profile_fwhm(S: np.ndarray, grid: np.ndarray, pos: float) -> float:
    """Full width (cm-1) at half height of the reference profile's band at ``pos``."""
    i = int(np.clip(np.searchsorted(grid, pos), 0, grid.size - 1))
    lo = max(i - 4, 0)
    i = lo + int(np.argmax(S[lo : i + 5]))
    half = 0.5 * S[i]
    if half <= 0:
        return 0.0
    j, k = i, i
    while j > 0 and S[j] > half:
        j -= 1
    while k < S.size - 1 and S[k] > half:
        k += 1
    return float(grid[k] - grid[j])


def _neighbour_columns(
    y: np.ndarray, grid: np.ndarray, win: _Window, noise: float
) -> list[np.ndarray]:
    """Gaussian columns for the sample's own bands beside a starting-material band: maxima of
    the sample within two widths of the window but farther from the band than its half width
    plus the largest shift, each as wide as the sample's band is at half height. Without the
    product its bands are unknown; these let a neighbour's flank be told from the band itself."""
    half = 0.5 * win.fwhm + START_MAX_SHIFT_CM1 + SMOOTH_CM1
    reach = grid[win.sl][-1] - win.position + 2.0 * win.fwhm
    cols = []
    step = GRID_STEP_CM1
    centre = int(np.clip(np.searchsorted(grid, win.position), 0, y.size - 1))
    for i in range(2, y.size - 2):
        d = grid[i] - win.position
        if abs(d) <= half or abs(d) > reach or y[i] < 5.0 * noise:
            continue
        if not (y[i] >= y[i - 1] and y[i] >= y[i + 1] and y[i] > y[i - 2] and y[i] > y[i + 2]):
            continue
        # a band of its own: the trace dips between it and the starting-material band by more
        # than noise (a noise ripple on the band's own flank is no neighbour; fitted as one, it
        # would copy the band's shape and take its amount)
        between = y[min(i, centre) : max(i, centre) + 1]
        if y[i] - float(between.min()) < NEIGHBOUR_PROMINENCE * noise:
            continue
        # half width on the side away from the starting-material band
        k, direction = i, (1 if d > 0 else -1)
        while 0 < k < y.size - 1 and y[k] > 0.5 * y[i] and abs(k - i) * step < 60:
            k += direction
        fwhm = float(np.clip(2.0 * abs(k - i) * step, 8.0, 120.0))
        sig = fwhm / 2.3548
        shapes = [np.exp(-0.5 * ((grid - grid[i]) / sig) ** 2)]
        if NEIGHBOUR_LORENTZ:
            # condensed-phase bands lie between Gaussian and Lorentzian: a Lorentzian column
            # of the same width lets the fit take a neighbour's long tail
            shapes.append(1.0 / (1.0 + 4.0 * ((grid - grid[i]) / fwhm) ** 2))
        # a shape that puts less than the noise into the window tells the fit nothing (and
        # makes its covariance singular)
        cols += [c for c in shapes if y[i] * float(c[win.sl].max()) >= noise]
    return cols


def _start_bands(
    start: Data, grid: np.ndarray, S: np.ndarray, usable: np.ndarray
) -> list[tuple[float, float, float]]:
    """The starting material's strong bands ``(position, relative intensity, FWHM)`` in usable
    places, strongest first, none within a band width of a stronger one."""
    peaks = strong_bands(start, grid, Profile(S, usable, 0, [], ""))
    order = np.argsort(-np.asarray(peaks.intensities, float))
    chosen: list[tuple[float, float, float]] = []
    for j in order:
        pos, inten = float(peaks.positions[j]), float(peaks.intensities[j])
        if inten < START_BAND_MIN_INTENSITY or not (grid[0] + 20 < pos < grid[-1] - 20):
            continue
        i = int(np.clip(np.searchsorted(grid, pos), 0, grid.size - 1))
        if not usable[i]:
            continue
        w = float(peaks.widths[j]) if np.isfinite(peaks.widths[j]) else DEFAULT_BAND_FWHM
        if any(abs(pos - q) < max(w, f) for q, _r, f in chosen):
            continue
        chosen.append((pos, inten, w))
        if len(chosen) >= START_MAX_BANDS:
            break
    return chosen


def start_only_bands(
    y: np.ndarray,
    grid: np.ndarray,
    S: np.ndarray,
    start: Data,
    usable: np.ndarray,
    noise: float,
    corr_pts: float,
    others: list[np.ndarray] = (),  # type: ignore[assignment]
    product_bands: list[float] = (),  # type: ignore[assignment]
    broad_ok: bool = True,
) -> list[_StartBand]:
    """Every strong starting-material band judged in the sample (see :func:`_start_band_fit`).

    ``broad_ok``: whether hydrogen-bonded envelopes may set the amount (see
    :func:`_broad_comparable`); when False they only bound it.

    ``product_bands`` are the sample's bands of groups the crude shows and the starting material
    does not (:func:`_product_group_bands`) and the sample's bands the starting material cannot
    be (:func:`_foreign_bands`): a band's amount is judged against the tail such a
    band puts at it (:func:`_flank_allowance`) as well as against the noise."""
    out = []
    wins = []
    for pos, rel, fwhm in _start_bands(start, grid, S, usable):
        win = _window(grid, pos, fwhm, usable)
        if win is not None:
            wins.append((pos, rel, fwhm, win))
    fits = [
        _start_band_fit(y, grid, S, list(others), win, usable, noise, corr_pts)
        for _p, _r, _f, win in wins
    ]
    for (pos, rel, fwhm, _win), (a, sg, sg_noise, peak, misfit, ds, ceil, bnd) in zip(wins, fits):
        broad = max(fwhm, _profile_fwhm(S, grid, pos)) > BROAD_FWHM_CM1
        # a band the sample does not show has no shape to judge: it is absent, and its ceiling
        # (the sample leaves no room for it) is the strongest evidence there is
        flank = _flank_allowance(y, grid, pos, fwhm, peak, product_bands)
        sg = float(np.hypot(sg, flank))
        # whether the sample shows the band (and so has a shape to judge) is a question of noise
        sg_noise = float(np.hypot(sg_noise, flank))
        shown = a >= START_SEEN_Z * sg_noise and a * peak >= START_SEEN_Z * noise
        shape_ok = misfit <= SHAPE_LIMIT or not shown
        judged = broad_ok or not broad
        out.append(
            _StartBand(pos, rel, a, sg, peak, shape_ok, misfit, ds, ceil, broad, flank, judged, bnd)
        )
    return out


def _product_group_bands(sample: Data, start: Data, prep: Iterable[str]) -> list[float]:
    """Positions (cm-1) of the sample's bands that speak for a group the crude shows
    (``present`` in :func:`reflib.chem.groups.analyse`) and the starting material does not: the
    product's likely bands (an acid's C=O beside an ester's, an amide's beside an amine's)."""
    from reflib.chem.groups import groups

    try:
        crude = groups(sample, prep=list(prep))
        own = set(groups(start).named("present"))
    except ValidationError:
        return []
    out: set[float] = set()
    for call in crude.groups:
        if call.call != "present" or call.group in own:
            continue
        out.update(float(e.cm1) for e in call.evidence if e.seen and e.cm1 is not None)
    return sorted(out)


def _foreign_bands(
    y: np.ndarray, grid: np.ndarray, S: np.ndarray, usable: np.ndarray, noise: float
) -> list[float]:
    """Positions (cm-1) of the sample's strong bands the starting material cannot be: maxima of
    at least :data:`FOREIGN_MIN_RELATIVE` of the sample's strongest band where the starting
    material's own profile, anywhere within the largest shift, stays under
    :data:`FOREIGN_MAX_START` of its strongest band. Whatever absorbs there (the product, a
    reagent) puts its tail under the starting material's nearby bands."""
    if not usable.any():
        return []
    top_y = float(y[usable].max())
    top_s = float(S[usable].max()) if S[usable].size else 0.0
    if top_y <= 0 or top_s <= 0:
        return []
    reach = int(round(START_MAX_SHIFT_CM1 / GRID_STEP_CM1))
    s_near = ndimage.maximum_filter1d(S, 2 * reach + 1, mode="nearest")
    out = []
    for i in range(2, y.size - 2):
        if not usable[i] or y[i] < FOREIGN_MIN_RELATIVE * top_y or y[i] < 10.0 * noise:
            continue
        if not (y[i] >= y[i - 1] and y[i] >= y[i + 1] and y[i] > y[i - 2] and y[i] > y[i + 2]):
            continue
        if s_near[i] < FOREIGN_MAX_START * top_s:
            out.append(float(grid[i]))
    return out


def _flank_allowance(
    y: np.ndarray,
    grid: np.ndarray,
    pos: float,
    fwhm: float,
    peak: float,
    product_bands: list[float],
) -> float:
    """The amount of starting material a product band's tail can fake at a band at ``pos``:
    for each product band farther than the largest shift (a band on top is judged by shape and
    by the other bands) and within :data:`PRODUCT_TAIL_REACH` widths, the sample's height there
    times a Lorentzian's relative height at that distance (:data:`PRODUCT_TAIL` of it, with the
    starting-material band's width standing in for the product band's), over the reference
    band's height. The local baseline and neighbour columns take up part of such a tail, not all."""
    if peak <= 0 or not product_bands:
        return 0.0
    w = max(float(fwhm), 1.0)
    total = 0.0
    for c in product_bands:
        d = abs(c - pos)
        if d <= START_MAX_SHIFT_CM1 or d > PRODUCT_TAIL_REACH * w:
            continue
        i = int(np.clip(np.searchsorted(grid, c), 0, grid.size - 1))
        h = float(np.clip(y[max(i - 2, 0) : i + 3].max(), 0.0, None))
        total += PRODUCT_TAIL * h * w**2 / (w**2 + 4.0 * d**2)
    return total / peak


def _ceiling(b: _StartBand) -> float:
    """A band's ceiling counts only when the starting material's shape fits there: where another
    band of another shape sits, the local fit says nothing about the starting material."""
    return b.ceiling if b.shape_ok else float("inf")


def consistent_low_group(bands: list[_StartBand]) -> np.ndarray:
    """Mask of the bands that agree with the weakest evidence.

    Leftover starting material adds its own amount to *every* one of its bands; the product (or
    anything else) can only add more at some of them. So the amount is set by the bands showing
    the least: the group whose amounts agree, within noise and the day-to-day change of band
    heights, with the lowest upper limit any band allows (a band of another shape too, by the
    plain sample at its core: see :func:`_bound`). A band claiming far more (a product band on
    top of it) is left out of the estimate; it only says that band is not clear.
    """
    a = np.array([b.amount for b in bands])
    s = np.array([b.sigma for b in bands])
    judged = np.array([_judgeable(b) for b in bands])
    if not judged.any():
        return judged
    # each band's upper limit (its amount plus two errors, or its ceiling), widened by two of
    # its own day-to-day spreads
    limits = np.minimum(np.maximum(a, 0.0) + 2.0 * s, [_ceiling(b) for b in bands])
    upper = float(np.min((limits * np.exp(2.0 * _spreads(bands)))[judged]))
    # and no band, of whatever shape, may hold less than the amount (see _bound)
    bounds = np.array([_bound(b) for b in bands]) * np.exp(2.0 * _spreads(bands))
    upper = min(upper, float(np.min(bounds)))
    return judged & ((a - 2.0 * s) <= upper)


def _bound(b: _StartBand) -> float:
    """A band's limit on the amount, whatever its shape: where the starting material's shape
    fits, its ceiling; elsewhere the plain sample over the reference band's core at the most
    generous shift. Beer-Lambert: absorbances add, and no other compound can take absorbance
    away, so a band of another shape on top of the starting material's still holds at most
    what the sample shows there. Envelopes measured in another phase bound nothing
    (:func:`_broad_comparable`)."""
    if not b.judged:
        return float("inf")
    return b.ceiling if b.shape_ok else b.bound


def _judgeable(b: _StartBand) -> bool:
    """A band whose amount may set the level: comparable between the two measurements (see
    :func:`_broad_comparable`) and of the starting material's shape where the sample shows it."""
    return b.judged and b.shape_ok


def _spreads(bands: list[_StartBand]) -> np.ndarray:
    """Each band's day-to-day height spread (log sd): :data:`BROAD_HEIGHT_SPREAD` for a
    hydrogen-bonded envelope, :data:`BAND_HEIGHT_SPREAD` for any other band."""
    return np.array([BROAD_HEIGHT_SPREAD if b.broad else BAND_HEIGHT_SPREAD for b in bands])


def _broad_comparable(sample_prep: Iterable[str], start_prep: Iterable[str]) -> bool:
    """Whether hydrogen-bonded envelopes of the two measurements can be compared: both in
    solution, both in the gas, or both condensed (neat, film, mull, pellet, ATR). In dilute
    solution and in the gas much of the bonded O-H and N-H gives way to sharp free bands near
    3600 and 3400 cm-1 (any spectroscopy text), so the envelope's height says nothing there."""

    def phase(tokens: Iterable[str]) -> str:
        kinds = {prep_mod.PREPARATIONS[t].kind for t in tokens if t in prep_mod.PREPARATIONS}
        return "gas" if "gas" in kinds else "solution" if "solution" in kinds else "condensed"

    return phase(sample_prep) == phase(start_prep)


def _start_only(
    info_s: dict[str, Any],
    y: np.ndarray,
    S: np.ndarray,
    grid: np.ndarray,
    usable: np.ndarray,
    noise: float,
    ub_share: float | None,
    top: float,
    a_y: float,
    notes: list[str],
    *,
    start: Data,
    a_s: float,
    corr_pts: float,
    others: list[np.ndarray] = (),  # type: ignore[assignment]
    product_bands: list[float] = (),  # type: ignore[assignment]
    broad_ok: bool = True,
) -> LeftoverResult:
    """Start only: every strong starting-material band fitted in the sample (shifted starting
    material, interfering reagents/solvents, straight baseline); a band the sample shows must
    have the starting material's place, width and shape; the amount is the combination of the
    bands that agree with the lowest ceiling (:func:`consistent_low_group`), judged against the
    sample's noise and the day-to-day spread of band heights (:func:`combine_bands`)."""
    notes.append("the pure product is not given: the share rests on the starting material's bands")
    sb = start_only_bands(
        y, grid, S, start, usable, noise, corr_pts, list(others), list(product_bands), broad_ok
    )
    if not sb or ub_share is None or a_y <= 0:
        notes.append("no strong starting-material band lies in an unmasked region")
        return LeftoverResult(info_s, None, False, None, None, ub_share, 1.0, [], notes)
    group = consistent_low_group(sb)
    am = np.array([b.amount for b in sb])
    sg = np.array([b.sigma if np.isfinite(b.sigma) else 1e6 for b in sb])
    ceil = np.array([_ceiling(b) for b in sb])
    judgeable = [b for b in sb if _judgeable(b)]
    grow = np.exp(2.0 * _spreads(sb))  # two day-to-day spreads of each band's height
    if not judgeable:
        # issue 16, item 3: nothing can be seen for certain; say so and bound the share only
        notes.append(
            "no band of the starting material is clear of the sample's other bands (each is "
            "a hydrogen-bonded envelope measured in another phase, or has another band of "
            "another shape on it): only an upper bound is given"
        )
        fin = np.array([b.ceiling for b in sb])
        ub = float(min(1.0, float(np.min(fin * grow)) * a_s / a_y))
        bands = [DiagnosticBand(b.position, False, 0.0, 0.0, b.amount, b.sigma) for b in sb]
        return LeftoverResult(info_s, None, False, None, None, ub, 1.0, bands, notes)
    if not group.any():
        # no judged band fits under the lowest ceiling: the amount is what that band allows
        group = np.zeros(len(sb), bool)
        group[int(np.argmin(ceil))] = True
    b_mean, b_noise, b_err = combine_bands(
        np.clip(am[group], 0.0, ceil[group]), sg[group], _spreads(sb)[group]
    )
    z = b_mean / b_noise if b_noise > 0 else 0.0
    seen = [
        b.amount >= START_SEEN_Z * b.sigma and b.amount * b.peak >= START_SEEN_Z * noise for b in sb
    ]
    ok_seen = [i for i in range(len(sb)) if group[i] and seen[i] and sb[i].shape_ok]
    bad_shape = [i for i in range(len(sb)) if seen[i] and not sb[i].shape_ok]
    to_share = a_s / a_y
    share = float(np.clip(b_mean * to_share, 0.0, 1.0))
    detected = bool(z >= START_DETECT_Z and len(ok_seen) >= START_MIN_SEEN and share >= MIN_SHARE)
    # the detection limit: the share whose consistent bands would reach START_DETECT_Z
    limit = float(max(MIN_SHARE, START_DETECT_Z * b_noise * to_share))
    bands = [
        DiagnosticBand(
            b.position, bool(seen[i] and b.shape_ok), b.amount * b.peak / top if top > 0 else 0.0,
            b.amount / b.sigma if b.sigma > 0 else 0.0, b.amount, b.sigma,
        )
        for i, b in enumerate(sb)
    ]  # fmt: skip
    low = [f"{sb[i].position:.0f}" for i in range(len(sb)) if group[i]]
    high = [f"{sb[i].position:.0f}" for i in range(len(sb)) if not group[i]]
    notes.append(
        f"the amount rests on the band(s) at {', '.join(low)} cm-1, which agree with each other"
        + (f"; {', '.join(high)} cm-1 show more (other compounds absorb there)" if high else "")
    )
    for i in bad_shape:
        notes.append(
            f"the sample's band near {sb[i].position:.0f} cm-1 has another width or shape than "
            "the starting material's: it is not the starting material's"
        )
    if not np.isfinite(ceil).any():
        ceil = np.array([b.ceiling for b in sb])
    ub = float(min(1.0, float(np.min(ceil * grow)) * to_share))
    lim_k = int(np.argmin(ceil * grow))
    limiting = sb[lim_k].position
    if detected:
        lo = max(b_mean - 1.96 * b_err, 0.0) * to_share
        hi = (b_mean + 1.96 * b_err) * to_share
        interval = (float(lo), float(min(hi, 1.0)))
        ub = max(ub, interval[1])
        notes.append(
            f"starting material at {z:.1f} standard errors on {len(ok_seen)} band(s) of the right "
            "place, width and shape (without the pure product a product band at the same place "
            "cannot be ruled out)"
        )
        return LeftoverResult(
            info_s, None, True, share, interval, ub, limit, bands, notes, z, limiting
        )
    if limiting is not None:
        notes.append(f"the bound is set by the starting material's band at {limiting:.0f} cm-1")
    return LeftoverResult(info_s, None, False, None, None, ub, limit, bands, notes, z, limiting)
