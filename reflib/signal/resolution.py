"""Common resolution: blur a finely resolved spectrum to a coarser one, and merge a gas-phase
band's rotational branches into one band. Arrays in, arrays out; no I/O.

A spectrum measured at 0.5 cm-1 (a gas, every rotational line and water line resolved) and one
measured at 4 cm-1 give different peak lists of the same compound: the fine one has many sharp
maxima where the coarse one has one envelope. Comparing them fairly means comparing at the
coarser resolution: :func:`degrade` convolves the finer spectrum with a Gaussian whose FWHM makes
up the difference (FWHMs of Gaussian line shapes add in quadrature; the instrument's own line
shape is not Gaussian, so this is an approximation good to a few tenths of a cm-1 in band
position, common practice, no source). The convolution runs on the ordinate as given: on the
transmittance of a transmittance file (the instrument averages the light, not its logarithm),
on the values of an absorbance file (which may be in scaled units that cannot be turned back
into transmittance).

:func:`merge_rotational` then turns the P and R branch maxima of one gas-phase band (with the Q
branch between them when it has one) into one band at the band centre, the position a
condensed-phase spectrum shows it near.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np

from reflib.errors import ValidationError
from reflib.signal import filters1d
from reflib.signal.peaks import uniform_grid
from reflib.spectrum import PeakList, Spectrum

#: Resolution (cm-1) reflib compares at: the usual resolution of condensed-phase survey spectra,
#: and so of most library references (common practice, no source).
COMPARE_RESOLUTION = 4.0

#: A spectrum stated finer than this (cm-1) is degraded to COMPARE_RESOLUTION before picking;
#: at 2 cm-1 and coarser the picker's 4 cm-1 minimum separation already gives comparable lists.
DEGRADE_FINER_THAN = 2.0

#: P and R branch maxima of one band lie this far apart at most (cm-1) for the molecules of a
#: synthesis lab at room temperature (about 2.36 sqrt(B T) for a linear rotor; 15-30 cm-1 for
#: small organics, wider only for hydrides such as HCl, from memory).
MAX_BRANCH_SEPARATION = 30.0
#: ... and at least this far (below it they are one band at 4 cm-1 resolution anyway).
MIN_BRANCH_SEPARATION = 6.0
#: The weaker of the P and R maxima is at least this fraction of the stronger (from memory:
#: the two branches have similar heights at room temperature).
BRANCH_RATIO = 0.4

_FWHM_TO_SIGMA = 1.0 / (2.0 * np.sqrt(2.0 * np.log(2.0)))


def resolution_of(spectrum: Spectrum) -> float:
    """The spectrum's resolution in cm-1: the stated one, else twice the point spacing (an
    FT spectrometer's usual sampling, zero-filled twice; common practice, no source)."""
    if spectrum.meta.resolution is not None and spectrum.meta.resolution > 0:
        return float(spectrum.meta.resolution)
    return 2.0 * float(np.median(np.diff(spectrum.x)))


def degrade(spectrum: Spectrum, fwhm_cm1: float, *, current: float | None = None) -> Spectrum:
    """The spectrum blurred to a resolution of ``fwhm_cm1`` (cm-1), on an even grid.

    The Gaussian kernel's FWHM is ``sqrt(fwhm_cm1**2 - current**2)``, ``current`` being the
    spectrum's own resolution (:func:`resolution_of` when not given). A spectrum already at
    ``fwhm_cm1`` or coarser is returned unchanged. ``meta.resolution`` of the result is
    ``fwhm_cm1`` and ``meta.extra['degraded_from']`` the original resolution.

    >>> x = np.arange(1000.0, 1100.0, 0.25)
    >>> line = np.exp(-0.5 * ((x - 1050.0) / (0.5 * _FWHM_TO_SIGMA)) ** 2)  # 0.5 cm-1 FWHM
    >>> wide = degrade(Spectrum(x, line), 4.0, current=0.5)
    >>> i = int(np.argmax(wide.y)); half = wide.x[wide.y >= 0.5 * wide.y[i]]
    >>> bool(abs(half[-1] - half[0] - 4.0) <= 0.5), round(float(wide.x[i]), 2)
    (True, 1050.0)
    """
    if not (np.isfinite(fwhm_cm1) and fwhm_cm1 > 0):
        raise ValidationError(f"resolution must be a positive width in cm-1, got {fwhm_cm1!r}")
    now = resolution_of(spectrum) if current is None else float(current)
    if now >= fwhm_cm1:
        return spectrum
    x, y = uniform_grid(spectrum.x, spectrum.y)
    step = float(x[1] - x[0])
    sigma = np.sqrt(fwhm_cm1**2 - now**2) * _FWHM_TO_SIGMA / step
    y = filters1d.gaussian_filter1d(y, sigma, mode="nearest") if sigma > 0.1 else y
    meta = replace(spectrum.meta, resolution=float(fwhm_cm1), extra=dict(spectrum.meta.extra))
    meta.extra["degraded_from"] = f"{now:g}"
    return Spectrum(x, y, spectrum.y_kind, meta)


def for_comparison(spectrum: Spectrum) -> Spectrum:
    """The spectrum at the resolution reflib compares at: degraded to
    :data:`COMPARE_RESOLUTION` when its resolution (:func:`resolution_of`: the stated one, else
    twice the point spacing) is finer than :data:`DEGRADE_FINER_THAN`, else unchanged."""
    now = resolution_of(spectrum)
    if now >= DEGRADE_FINER_THAN:
        return spectrum
    return degrade(spectrum, COMPARE_RESOLUTION, current=now)


def merge_rotational(
    peaks: PeakList,
    *,
    max_separation: float = MAX_BRANCH_SEPARATION,
    min_separation: float = MIN_BRANCH_SEPARATION,
    ratio: float = BRANCH_RATIO,
) -> PeakList:
    """One band per rotational contour of a gas-phase peak list.

    Two maxima ``min_separation``..``max_separation`` cm-1 apart whose heights are within
    ``ratio`` of each other are the P and R branches of one band: they become one band at their
    midpoint (the band centre), or at the Q branch when a band between them is the strongest of
    the three. The merged band keeps the strongest height and is as wide as the contour (the
    P-R separation plus the mean of their widths). Every band is merged at most once, strongest
    pairs first.

    >>> pl = PeakList([1033.0, 1020.0, 1046.0, 1500.0], [1.0, 0.6, 0.55, 0.3])
    >>> merged = merge_rotational(pl)
    >>> merged.positions.tolist(), merged.intensities.tolist()
    ([1033.0, 1500.0], [1.0, 0.3])
    """
    n = len(peaks)
    if n < 2:
        return peaks
    pos, inten = peaks.positions, peaks.intensities
    widths = np.where(np.isfinite(peaks.widths), peaks.widths, 0.0)
    used = np.zeros(n, bool)
    new_pos, new_int, new_w, new_broad = [], [], [], []
    pairs = []
    for i in range(n):
        for j in range(i + 1, n):
            d = pos[j] - pos[i]
            if d > max_separation:
                break
            lo, hi = sorted((inten[i], inten[j]))
            if d >= min_separation and hi > 0 and lo >= ratio * hi:
                q = i + 1 + int(np.argmax(inten[i + 1 : j])) if j > i + 1 else None
                with_q = q is not None and inten[q] >= hi
                if q is not None and not with_q:
                    continue  # a weaker band between: not one contour
                # P-Q-R triplets first, then the strongest pairs
                pairs.append((not with_q, -(inten[i] + inten[j]), i, j, q if with_q else None))
    for _, _, i, j, q in sorted(pairs, key=lambda p: (p[0], p[1])):
        if used[i : j + 1].any():
            continue
        group = list(range(i, j + 1))
        centre = float(pos[q]) if q is not None else 0.5 * float(pos[i] + pos[j])
        used[group] = True
        new_pos.append(centre)
        new_int.append(float(inten[group].max()))
        new_w.append(float(pos[j] - pos[i] + 0.5 * (widths[i] + widths[j])))
        new_broad.append(bool(peaks.broad[group].any()))
    if not new_pos:
        return peaks
    keep = np.flatnonzero(~used)  # (a subset would rescale the intensities on its own)
    meta = replace(peaks.meta, extra=dict(peaks.meta.extra))
    meta.extra["rotational_contours_merged"] = str(len(new_pos))
    return PeakList(
        np.r_[pos[keep], new_pos],
        np.r_[inten[keep], new_int],
        np.r_[peaks.widths[keep], new_w],
        None,
        np.r_[peaks.broad[keep], new_broad].astype(bool),
        np.r_[peaks.shoulder[keep], np.zeros(len(new_pos), bool)].astype(bool),
        meta=meta,
    )


__all__: Sequence[str] = [
    "COMPARE_RESOLUTION",
    "degrade",
    "for_comparison",
    "merge_rotational",
    "resolution_of",
]
