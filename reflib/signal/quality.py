"""A quality report on one full spectrum: what is wrong with the measurement, and what to do.

:func:`assess` looks at the ordinate data itself (arrays in, a list of :class:`Finding` out; no
I/O) and returns one finding per check that has something to say. Each finding has a ``check``
name, a ``severity`` (``info``, ``warn`` or ``bad``), a ``message`` with a plain remedy, and the
figures behind it. A clean spectrum (flat baseline, unsaturated bands, noise well under the bands,
no air lines) gets ``info`` entries only (resolution, range).

The checks and their thresholds (common practice, no source, unless said otherwise):

* ``saturation``: a flat top on a band, at the top of the absorbance or near the floor of the
  transmittance (stray light holds a saturated band at a few %T instead of 0, so the floor is
  not 0). A rounded band top stays within a small tolerance of its maximum over less than a
  fifth of its FWHM; a flat top over 0.4 of it or more is a plateau.
* ``transmittance-over-100``: the highest transmittance above 100 % by more than the noise.
* ``negative-bands``: dips below the baseline deeper than 6 noise standard deviations.
* ``water-vapour`` and ``co2``: the air's lines (narrow lines in 3900-3500 and 1900-1300 cm-1;
  the CO2 band in 2390-2280 cm-1) against the strongest band of the sample.
* ``noise``: the signal-to-noise ratio, strongest band height over the noise's standard
  deviation (rms); warn below 50, bad below 10.
* ``baseline``: offset and slope of the baseline; warn when it moves by more than a fifth of the
  strongest band across the range or sits above 0.3 absorbance (half the light lost).
* ``fringes``: a sinusoidal baseline present across the range (interference in a thin film or an
  empty cell gap): spacing in cm-1 and the thickness d = 1 / (2 n spacing) for n = 1.
* ``resolution``: point spacing and the stated resolution; ``range``: the covered range against
  the usual 4000-400 cm-1.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from reflib.signal import filters1d
from reflib.signal.peakfind import find_peaks, peak_widths
from reflib.signal.peaks import baseline, estimate_noise, flat_tops, saturated_runs, uniform_grid
from reflib.spectrum import PeakList, Spectrum

SEVERITIES = ("info", "warn", "bad")

#: Regions of the air's lines (cm-1): water vapour rotation-vibration lines and the CO2
#: antisymmetric stretch (P and R branches about 2360 and 2340 cm-1). Common practice, no source.
WATER_REGIONS = ((3500.0, 3900.0), (1300.0, 1900.0))
CO2_REGION = (2280.0, 2390.0)
CO2_BEND = (650.0, 685.0)

#: A line narrower than this (FWHM, cm-1) is a gas line, not a condensed-phase band.
NARROW_LINE_CM1 = 6.0
#: At least this many narrow lines in the water regions make a water-vapour pattern.
MIN_WATER_LINES = 5

#: Width at 80 % of a band's height over its width at half height at or above which the top is
#: flat: 0.57 for a Gaussian, 0.50 for a Lorentzian, 0.64-0.88 for either driven to 4-10 times
#: the absorbance the spectrometer can show (worked out in the tests).
FLAT_SHAPE = 0.63
#: Signal-to-noise ratios below these are warn and bad.
SNR_WARN, SNR_BAD = 50.0, 10.0
#: Air lines at least this fraction of the strongest sample band are warn, then bad.
AIR_WARN, AIR_BAD = 0.05, 0.3
#: Dips deeper than this many noise standard deviations are negative bands.
DIP_SIGMAS = 6.0
#: Usual mid-infrared range (cm-1).
USUAL_RANGE = (400.0, 4000.0)
#: Fringe spacings searched (cm-1): from thick cells (a few cm-1) to thin films (hundreds).
FRINGE_SPACING = (3.0, 600.0)
#: The fringes' line in the transform must stand this many times above its neighbourhood's median.
FRINGE_CONTRAST = 6.0
_MAD_TO_SIGMA = 1.482602218505602


@dataclass
class Finding:
    """One result of the quality report; :meth:`to_dict` is its JSON form."""

    check: str
    severity: str
    message: str
    figures: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "check": self.check,
            "severity": self.severity,
            "message": self.message,
            **self.figures,
        }


def to_dicts(findings: Sequence[Finding]) -> list[dict[str, Any]]:
    """The findings as JSON-ready dictionaries."""
    return [f.to_dict() for f in findings]


def worst(findings: Sequence[Finding]) -> str:
    """The highest severity among ``findings`` (``info`` for none)."""
    return max((f.severity for f in findings), key=SEVERITIES.index, default="info")


@dataclass
class _Trace:
    x: np.ndarray  # uniform grid, cm-1 ascending
    a: np.ndarray  # absorbance
    t: np.ndarray  # transmittance fraction
    from_t: bool
    step: float
    noise: float  # absorbance standard deviation on the baseline
    noise_t: float  # transmittance standard deviation (fraction)
    base: np.ndarray  # robust baseline (absorbance): follows the baseline, not the dips
    resid: np.ndarray  # a - base
    strongest: float  # height of the strongest sample band above base (outside the air's regions)


def _robust_baseline(x: np.ndarray, a: np.ndarray, noise: float, step: float) -> np.ndarray:
    """A baseline that neither rides up bands nor dips into negative bands: the median of the
    points near the rolling-minimum baseline, in 100 cm-1 bins, interpolated."""
    lower = baseline(a, x)
    near = (a - lower) <= max(6.0 * noise, 1e-9)  # the opening sits about 3 sigma low
    bin_w = max(100.0, 20 * step)
    edges = np.arange(x[0], x[-1] + bin_w, bin_w)
    cx, cy = [], []
    for lo, hi in zip(edges[:-1], edges[1:]):
        sel = near & (x >= lo) & (x < hi)
        if np.count_nonzero(sel) >= 5:
            cx.append(float(np.mean(x[sel])))
            cy.append(float(np.median(a[sel])))
    if len(cx) < 2:
        return lower
    return np.interp(x, cx, cy)


def _prepare(spectrum: Spectrum) -> _Trace:
    from_t = spectrum.y_kind == "transmittance"
    absorb = spectrum.to_absorbance()
    x, a = uniform_grid(absorb.x, absorb.y)
    if from_t:
        _, t = uniform_grid(spectrum.x, spectrum.y)
    else:
        t = np.power(10.0, -a)
    step = float(x[1] - x[0])
    clear = t > 0.2  # where the absorbance noise is not amplified by a lack of light
    noise = estimate_noise(a[clear]) if np.count_nonzero(clear) > 10 else estimate_noise(a)
    noise = max(noise, 1e-9)
    noise_t = estimate_noise(t[clear]) if np.count_nonzero(clear) > 10 else estimate_noise(t)
    base = _robust_baseline(x, a, noise, step)
    resid = a - base
    # the strongest band of the sample: outside the CO2 regions, smoothed to 6 cm-1 so that
    # narrow water lines and single noise spikes do not set it
    sample = np.ones(x.size, bool)
    for lo, hi in (CO2_REGION, CO2_BEND):
        sample &= ~((x >= lo) & (x <= hi))
    if not sample.any():
        sample[:] = True
    sigma_pts = NARROW_LINE_CM1 / (2.0 * np.sqrt(2.0 * np.log(2.0))) / step
    smooth = filters1d.gaussian_filter1d(resid, sigma_pts) if sigma_pts > 0.3 else resid
    strongest = max(float(np.max(smooth[sample])), 1e-12)
    return _Trace(x, a, t, from_t, step, noise, noise_t, base, resid, strongest)


def _r(v: float, nd: int = 1) -> float:
    return round(float(v), nd)


# --- the checks ----------------------------------------------------------------------------------


def _top_width(h: np.ndarray, i: int, level: float) -> tuple[int, int]:
    """The run of ``h >= level`` around index ``i``, as (start, stop)."""
    below = np.flatnonzero(h < level)
    k = int(np.searchsorted(below, i))
    start = int(below[k - 1]) + 1 if k > 0 else 0
    stop = int(below[k]) if k < below.size else h.size
    return start, stop


def _flat_near_floor(tr: _Trace, corrected: np.ndarray) -> list[tuple[int, int]]:
    """Bands below 10 %T whose top is flat: the width at 80 % of the height is at least
    :data:`FLAT_SHAPE` of the width at half height. Stray light holds a saturated band a few %T
    above 0, so the floor's level says nothing; its shape does."""
    smooth = filters1d.gaussian_filter1d(corrected, max(0.5, 1.0 / tr.step))
    padded = np.concatenate(([False], tr.t < 0.1, [False])).astype(np.int8)
    out = []
    for start, stop in np.flatnonzero(np.diff(padded)).reshape(-1, 2):
        i = start + int(np.argmax(smooth[start:stop]))
        h = float(smooth[i])
        if h <= 10.0 * tr.noise:
            continue
        s80 = _top_width(smooth, i, 0.8 * h)
        s50 = _top_width(smooth, i, 0.5 * h)
        w80, w50 = s80[1] - s80[0], s50[1] - s50[0]
        if w80 >= 3 and w80 >= FLAT_SHAPE * w50:
            out.append(s80)
    return out


def _opaque_regions(tokens: Sequence[str]) -> list[tuple[float, float]]:
    """Ranges (cm-1) the named solvents and windows make opaque: a flat top there is the
    solvent's or the window's own, expected, not an over-thick sample."""
    if not tokens:
        return []
    from reflib.chem import prep as prep_mod
    from reflib.errors import ValidationError

    try:
        regions = prep_mod.regions_for(tokens, air=False)
    except ValidationError:  # an unknown token is reported where the preparation is checked
        return []
    return [(r.lo, r.hi) for r in regions if r.weight == 0.0]


#: What to do about a flat-topped band: the path is too long, except in ATR, where the depth
#: of penetration is fixed and a flat top means clipped or wrongly converted data (common
#: practice, no source).
SATURATION_REMEDY = "use a thinner film, less sample in the pellet or a shorter path"
SATURATION_REMEDY_ATR = (
    "an ATR band should not saturate: check that the file was exported as absorbance or %T "
    "without clipping, and that the crystal was clean when the background was taken"
)


def _saturation(
    tr: _Trace,
    peaks: PeakList | None,
    opaque: Sequence[tuple[float, float]] = (),
    atr: bool = False,
) -> Finding | None:
    corrected = tr.a - baseline(tr.a, tr.x)
    runs = [tuple(r) for r in saturated_runs(tr.a, from_transmittance=tr.from_t)]
    if not tr.from_t:
        runs += [tuple(r) for r in flat_tops(tr.a, corrected, 4.0 * tr.noise)]
    runs += _flat_near_floor(tr, corrected)
    bands = []
    for start, stop in sorted(set(runs)):
        if min(start, tr.x.size - stop) < stop - start:
            continue  # a flat end of the data is a window or detector cut-off, not a band
        lo, hi = float(tr.x[start]), float(tr.x[stop - 1])
        if any(b[0] <= hi and lo <= b[1] for b in bands):
            continue
        if any(o_lo - 10.0 <= lo and hi <= o_hi + 10.0 for o_lo, o_hi in opaque):
            continue  # the solvent's (or window's) own opaque band: expected, not a fault
        bands.append((lo, hi))
    if peaks is not None and peaks.meta.extra.get("saturated"):
        for tok in str(peaks.meta.extra["saturated"]).split(","):
            p = float(tok)
            if not any(lo - 5 <= p <= hi + 5 for lo, hi in bands) and not any(
                o_lo <= p <= o_hi for o_lo, o_hi in opaque
            ):
                bands.append((p, p))
    if not bands:
        return None
    bands.sort(reverse=True)
    remedy = SATURATION_REMEDY_ATR if atr else SATURATION_REMEDY

    def lowest(lo: float, hi: float) -> float:
        sel = (tr.x >= lo) & (tr.x <= hi)
        if not sel.any():  # a band position between two points: the nearest point
            sel = np.zeros(tr.x.size, dtype=bool)
            sel[int(np.argmin(np.abs(tr.x - 0.5 * (lo + hi))))] = True
        return 100.0 * float(np.min(tr.t[sel]))

    floor = [lowest(lo, hi) for lo, hi in bands]
    where = ", ".join(f"{hi:.0f}-{lo:.0f}" if hi > lo else f"{lo:.0f}" for lo, hi in bands)
    return Finding(
        "saturation",
        "warn",
        f"flat-topped (saturated) band(s) at {where} cm-1, lowest {min(floor):.1f} %T: their "
        "positions are uncertain and their heights mean nothing; " + remedy,
        {
            "bands": [
                {"from_cm1": _r(hi), "to_cm1": _r(lo), "centre_cm1": _r(0.5 * (lo + hi))}
                for lo, hi in bands
            ],
            "floor_percent_t": _r(min(floor), 2),
        },
    )


def _over_100(tr: _Trace, meta_note: str | None) -> Finding | None:
    if not tr.from_t:
        return None
    top = float(np.max(tr.t))
    over = top - 1.0
    if over <= max(3.0 * tr.noise_t, 0.005):
        return None
    above = tr.x[tr.t > 1.0]
    at = float(tr.x[int(np.argmax(tr.t))])
    severity = "bad" if over > 0.3 else "warn" if over > 0.02 else "info"
    figures: dict[str, Any] = {
        "max_percent_t": _r(100 * top, 2),
        "at_cm1": _r(at),
        "over_100_from_cm1": _r(above.max()),
        "over_100_to_cm1": _r(above.min()),
        "fraction_over_100": _r(above.size / tr.x.size, 3),
    }
    if meta_note:
        figures["reader_note"] = meta_note
    return Finding(
        "transmittance-over-100",
        severity,
        f"transmittance reaches {100 * top:.1f} % at {at:.0f} cm-1 ({above.max():.0f}-"
        f"{above.min():.0f} cm-1 above 100 %): the background does not match the sample "
        "(a cleaner window or a different purge at background time); take a fresh background",
        figures,
    )


def _dips(tr: _Trace) -> Finding | None:
    depth_min = max(DIP_SIGMAS * tr.noise, 0.005 * tr.strongest)
    mask = tr.resid < -depth_min
    if not mask.any():
        return None
    padded = np.concatenate(([False], mask, [False])).astype(np.int8)
    edges = np.flatnonzero(np.diff(padded)).reshape(-1, 2)
    found = []
    for start, stop in edges:
        if stop - start < 2:
            continue
        i = start + int(np.argmin(tr.resid[start:stop]))
        found.append((float(tr.x[i]), float(-tr.resid[i])))
    if not found:
        return None
    found.sort(key=lambda p: -p[1])
    rel = found[0][1] / tr.strongest
    severity = "warn" if rel >= 0.03 else "info"
    shown = sorted(found[:20], reverse=True)
    return Finding(
        "negative-bands",
        severity,
        f"{len(found)} dip(s) below the baseline, deepest at {found[0][0]:.0f} cm-1 "
        f"({100 * rel:.0f} % of the strongest band): over-subtracted solvent, CO2 or water, or a "
        "background with more of something than the sample; subtract less, or take a fresh "
        "background",
        {
            "positions_cm1": [_r(p) for p, _ in shown],
            "deepest_relative": _r(rel, 3),
            "count": len(found),
        },
    )


def _air_level(rel: float) -> str:
    return "bad" if rel >= AIR_BAD else "warn" if rel >= AIR_WARN else "info"


def _water(tr: _Trace) -> Finding | None:
    lines, heights = [], []
    # the absorbance noise grows where little light gets through: sigma_A = sigma_T / (T ln 10)
    local = np.maximum(tr.noise, tr.noise_t / (np.log(10.0) * np.clip(tr.t, 1e-4, None)))
    for lo, hi in WATER_REGIONS:
        sel = (tr.x >= lo) & (tr.x <= hi)
        if np.count_nonzero(sel) < 10:
            continue
        xs = tr.x[sel]
        for sign in (1.0, -1.0):
            ys = sign * tr.resid[sel]
            idx, props = find_peaks(ys, prominence=DIP_SIGMAS * tr.noise)
            if idx.size == 0:
                continue
            widths = peak_widths(ys, idx, rel_height=0.5)[0] * tr.step
            narrow = (widths <= NARROW_LINE_CM1) & (
                props["prominences"] >= DIP_SIGMAS * local[sel][idx]
            )
            lines.extend(xs[idx[narrow]].tolist())
            heights.extend(props["prominences"][narrow].tolist())
    if len(lines) < MIN_WATER_LINES:
        return None
    rel = float(np.max(heights)) / tr.strongest
    return Finding(
        "water-vapour",
        _air_level(rel),
        f"{len(lines)} narrow water-vapour lines in 3900-3500 and 1900-1300 cm-1, the strongest "
        f"{100 * rel:.0f} % of the sample's strongest band: purge the instrument longer, or take "
        "the background just before the sample",
        {"lines": len(lines), "strongest_relative": _r(rel, 3)},
    )


def _co2(tr: _Trace) -> Finding | None:
    sel = (tr.x >= CO2_REGION[0]) & (tr.x <= CO2_REGION[1])
    if np.count_nonzero(sel) < 3:
        return None
    seg = tr.resid[sel]
    i = int(np.argmax(np.abs(seg)))
    value = float(seg[i])
    if abs(value) < DIP_SIGMAS * tr.noise:
        return None
    rel = abs(value) / tr.strongest
    if rel < 0.01:
        return None
    sign = "absorption" if value > 0 else "negative (over-subtracted)"
    return Finding(
        "co2",
        _air_level(rel),
        f"CO2 {sign} band at {float(tr.x[sel][i]):.0f} cm-1, {100 * rel:.0f} % of the sample's "
        "strongest band: purge the instrument or take the background just before the sample "
        "(unless the sample holds CO2)",
        {"at_cm1": _r(float(tr.x[sel][i])), "relative": _r(rel if value > 0 else -rel, 3)},
    )


def _noise(tr: _Trace) -> Finding:
    snr = tr.strongest / tr.noise
    severity = "bad" if snr < SNR_BAD else "warn" if snr < SNR_WARN else "info"
    remedy = ": co-add more scans, or use more sample" if severity != "info" else ""
    return Finding(
        "noise",
        severity,
        f"signal-to-noise ratio {snr:.0f} (strongest band over the noise rms){remedy}",
        {"snr": _r(min(snr, 1e7), 1), "noise_rms_a": float(f"{tr.noise:.3g}")},
    )


def _baseline(tr: _Trace) -> Finding:
    slope, offset_at_lo = np.polyfit(tr.x - tr.x[0], tr.base, 1)
    span = float(np.ptp(tr.base))
    offset = float(np.min(tr.base))
    per_1000 = float(slope) * 1000.0
    high_end = float(np.mean(tr.base[tr.x > tr.x[-1] - 300])) - float(
        np.mean(tr.base[tr.x < tr.x[0] + 300])
    )
    bad_span = span > 0.2 * tr.strongest
    severity = "warn" if bad_span or offset > 0.3 else "info"
    message = f"baseline from {offset:.3f} A, moving {span:.3f} A across the range"
    if severity == "warn":
        if high_end > 0 and bad_span:
            message += (
                " and rising toward high wavenumber (scattering: grind the KBr pellet or mull "
                "finer, press a clearer pellet)"
            )
        else:
            message += ": check the background and the sample's contact or thickness"
    return Finding(
        "baseline",
        severity,
        message,
        {
            "offset_a": _r(offset, 4),
            "slope_a_per_1000cm1": _r(per_1000, 4),
            "span_a": _r(span, 4),
            "relative_span": _r(span / tr.strongest, 3),
        },
    )


def _fringes(tr: _Trace) -> Finding | None:
    n = tr.x.size
    if n < 64:
        return None
    y = tr.a - np.polyval(np.polyfit(tr.x, tr.a, 1), tr.x)
    # bands stand far above the spread of a periodic baseline: hold them at the median level so
    # that their broadband transform does not hide the fringes' line
    med = float(np.median(y))
    spread = _MAD_TO_SIGMA * float(np.median(np.abs(y - med)))
    band = filters1d.maximum_filter1d((y - med > 5.0 * spread).astype(float), 5) > 0
    y = np.where(band, med, y) - med
    win = np.hanning(n)
    pad = 4 * int(2 ** np.ceil(np.log2(n)))
    spec = np.abs(np.fft.rfft(y * win, pad))
    freq = np.fft.rfftfreq(pad, d=tr.step)  # cycles per cm-1
    span = float(tr.x[-1] - tr.x[0])
    lo_f = 1.0 / min(FRINGE_SPACING[1], span / 6.0)
    hi_f = 1.0 / max(FRINGE_SPACING[0], 4.0 * tr.step)
    ok = np.flatnonzero((freq >= lo_f) & (freq <= hi_f))
    if ok.size < 50:
        return None
    k = ok[int(np.argmax(spec[ok]))]
    # local contrast: the peak against the median of its neighbourhood (bands and noise give a
    # speckled, broadband spectrum; a periodic baseline a sharp line)
    half = max(40, ok.size // 30)
    nb = np.r_[spec[max(ok[0], k - half) : max(ok[0], k - 8)], spec[k + 9 : k + half]]
    if nb.size < 10 or spec[k] < FRINGE_CONTRAST * float(np.median(nb)):
        return None
    if 0 < k < spec.size - 1:  # parabolic refinement of the frequency
        l_, m_, r_ = np.log(spec[k - 1 : k + 2] + 1e-300)
        den = l_ - 2 * m_ + r_
        k_f = k + (0.5 * (l_ - r_) / den if den < 0 else 0.0)
    else:
        k_f = float(k)
    f0 = k_f / (pad * tr.step)
    amplitude = 2.0 * float(spec[k]) / float(np.sum(win))
    if amplitude < 3.0 * tr.noise:
        return None
    # present across the range, not a local run of rotational lines: fit the sinusoid in four
    # segments and ask for most of them to carry it
    seg_amp = []
    for part in np.array_split(np.arange(n), 4):
        xs, ys = tr.x[part], y[part]
        basis = np.column_stack(
            [np.sin(2 * np.pi * f0 * xs), np.cos(2 * np.pi * f0 * xs), np.ones(xs.size), xs]
        )
        coef = np.linalg.lstsq(basis, ys, rcond=None)[0]
        seg_amp.append(float(np.hypot(coef[0], coef[1])))
    seg_amp_arr = np.array(seg_amp)
    if np.count_nonzero(seg_amp_arr >= 0.4 * seg_amp_arr.max()) < 3:
        return None
    spacing = 1.0 / f0
    if not 1.0 / hi_f <= spacing <= 1.0 / lo_f:
        return None
    thickness_um = 1.0e4 / (2.0 * spacing)
    rel = amplitude / tr.strongest
    return Finding(
        "fringes",
        "warn" if rel >= 0.01 else "info",
        f"interference fringes every {spacing:.1f} cm-1 (amplitude {amplitude:.3g} A, "
        f"{100 * rel:.1f} % of the strongest band): a film or cell gap about "
        f"{thickness_um:.3g} um thick for a refractive index of 1 (divide by the real index, "
        "about 1.5 for an organic film); roughen or wedge the film, or fill the cell",
        {
            "spacing_cm1": _r(spacing, 2),
            "thickness_um": float(f"{thickness_um:.4g}"),
            "refractive_index": 1.0,
            "amplitude_a": float(f"{amplitude:.3g}"),
            "relative": _r(rel, 3),
        },
    )


def _resolution(spectrum: Spectrum) -> Finding:
    spacing = float(np.median(np.diff(spectrum.x)))
    stated = spectrum.meta.resolution
    coarse = spacing > 4.0 or (stated is not None and stated > 8.0)
    said = f"stated resolution {stated:g} cm-1" if stated else "no stated resolution"
    message = f"points every {spacing:.2f} cm-1, {said}"
    if coarse:
        message += ": bands closer than about twice that are not resolved; measure at 4 cm-1"
    figures: dict[str, Any] = {"point_spacing_cm1": _r(spacing, 3)}
    if stated is not None:
        figures["stated_resolution_cm1"] = float(stated)
    return Finding("resolution", "warn" if coarse else "info", message, figures)


def _range(spectrum: Spectrum) -> Finding:
    lo, hi = spectrum.range_cm1
    ulo, uhi = usable_range(spectrum)
    noisy = []
    if ulo > lo:
        noisy.append([_r(lo), _r(ulo)])
    if uhi < hi:
        noisy.append([_r(uhi), _r(hi)])
    lo, hi = ulo, uhi
    missing = []
    if lo > USUAL_RANGE[0] + 50:
        missing.append([USUAL_RANGE[0], _r(lo)])
    if hi < USUAL_RANGE[1] - 100:
        missing.append([_r(hi), USUAL_RANGE[1]])
    short = lo > 700.0 or hi < 3200.0
    message = f"covers {hi:.0f}-{lo:.0f} cm-1"
    if noisy:
        message += " after cutting noisy end(s) " + ", ".join(f"{b:.0f}-{a:.0f}" for a, b in noisy)
    if missing:
        message += f" (the usual range is {USUAL_RANGE[1]:.0f}-{USUAL_RANGE[0]:.0f} cm-1)"
    if short:
        message += (
            ": bands outside it cannot be compared; measure the full range or choose a window "
            "that passes it"
        )
    return Finding(
        "range",
        "warn" if short else "info",
        message,
        {"range_cm1": [_r(lo), _r(hi)], "missing_cm1": missing, "noisy_ends_cm1": noisy},
    )


#: Width (cm-1) of the windows in which :func:`usable_range` measures the local noise, and how
#: many times the median window's noise makes an end of the data unusable (a window or detector
#: cutting off leaves noise, which a picker would list as bands). Common practice, no source.
NOISE_WINDOW_CM1, NOISY_END_FACTOR = 50.0, 5.0


def usable_range(spectrum: Spectrum) -> tuple[float, float]:
    """The wavenumber range (cm-1) left after cutting noisy ends: runs of 50 cm-1 windows at
    either end whose noise (of the absorbance where light gets through) is over five times the
    median window's. The whole range when no end is noisy.

    >>> x = np.arange(400.0, 4000.0, 1.0)
    >>> y = np.exp(-0.5 * ((x - 1715.0) / 8.0) ** 2)
    >>> y[x < 650] += np.random.default_rng(0).normal(0.0, 0.05, np.count_nonzero(x < 650))
    >>> lo, hi = usable_range(Spectrum(x, y))
    >>> 640 <= lo <= 700, hi
    (True, 3999.0)
    """
    x, a = uniform_grid(spectrum.to_absorbance().x, spectrum.to_absorbance().y)
    step = float(x[1] - x[0])
    per = max(8, int(round(NOISE_WINDOW_CM1 / step)))
    nwin = x.size // per
    if nwin < 6:
        return spectrum.range_cm1
    # estimate_noise of each window at once: the MAD of its second differences
    d2 = np.diff(a[: nwin * per].reshape(nwin, per), 2, axis=1)
    dev = np.abs(d2 - np.median(d2, axis=1, keepdims=True))
    local = _MAD_TO_SIGMA * np.median(dev, axis=1) / np.sqrt(6.0)
    limit = NOISY_END_FACTOR * max(float(np.median(local)), 1e-12)
    noisy = local > limit
    first = 0
    while first < nwin and noisy[first]:
        first += 1
    last = nwin
    while last > first and noisy[last - 1]:
        last -= 1
    if first >= last or (first == 0 and last == nwin):
        return spectrum.range_cm1
    lo = float(x[first * per]) if first else spectrum.range_cm1[0]
    hi = float(x[min(last * per, x.size) - 1]) if last < nwin else spectrum.range_cm1[1]
    return lo, hi


def assess(
    spectrum: Spectrum,
    peaks: PeakList | None = None,
    prep: Sequence[str] = (),
) -> list[Finding]:
    """The quality report of one full spectrum, most severe first.

    Parameters
    ----------
    spectrum:
        The spectrum as read (absorbance or 0..1 transmittance, cm-1 ascending).
    peaks:
        Its picked bands, when already picked: a band the picker marked saturated is reported.
    prep:
        Preparation tokens; with ``gas`` the narrow-line checks (water, CO2) are left out, since
        a gas sample's own rotational lines look like the air's.

    Returns
    -------
    list of Finding
        ``saturation``, ``transmittance-over-100``, ``negative-bands``, ``water-vapour``,
        ``co2``, ``fringes`` when they find something; ``noise``, ``baseline``, ``resolution``
        and ``range`` always.

    Example
    -------
    >>> x = np.linspace(400.0, 4000.0, 3601)
    >>> noise = np.random.default_rng(1).normal(0.0, 0.04, x.size)
    >>> y = np.exp(-0.5 * ((x - 1715.0) / 8.0) ** 2) + noise
    >>> noise_check = [f for f in assess(Spectrum(x, y)) if f.check == "noise"][0]
    >>> noise_check.severity, 20 < noise_check.figures["snr"] < 30
    ('warn', True)
    """
    tokens = [str(t).lower() for t in prep] + [str(t).lower() for t in spectrum.meta.prep]
    gas = "gas" in tokens or "gas" in (spectrum.meta.state or "").lower()
    tr = _prepare(spectrum)
    checks: list[Finding | None] = [
        _saturation(tr, peaks, _opaque_regions(tokens), any(k.startswith("atr") for k in tokens)),
        _over_100(tr, spectrum.meta.extra.get("transmittance_over_100")),
        _dips(tr),
    ]
    if not gas:
        checks += [_water(tr), _co2(tr)]
    checks += [_noise(tr), _baseline(tr), _fringes(tr), _resolution(spectrum), _range(spectrum)]
    found = [f for f in checks if f is not None]
    found.sort(key=lambda f: -SEVERITIES.index(f.severity))
    return found


__all__: Sequence[str] = ["Finding", "SEVERITIES", "assess", "to_dicts", "usable_range", "worst"]
