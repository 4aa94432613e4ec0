"""A crude as a few library compounds: forward selection of non-negative whole-spectrum fits.
No I/O. Profiles and fits come from :mod:`reflib.analysis.profiles`; for a known starting
material and product use :mod:`reflib.analysis.leftover`, which fits locally.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from reflib.analysis.profiles import (
    GRID_STEP_CM1,
    MIN_SHARE,
    PEAK_LIST_NOISE,
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
    strong_bands,
)
from reflib.analysis.search import CAUTION
from reflib.chem import prep as prep_mod
from reflib.chem.groups import labels_for
from reflib.errors import ValidationError
from reflib.spectrum import PeakList, Spectrum

Data = Spectrum | PeakList


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
    check_data("sample", sample)
    if max_components < 1:
        raise ValidationError(f"max_components must be at least 1, got {max_components}")
    if not candidates:
        raise ValidationError("no candidate compounds to explain the sample with")
    infos = []
    datas = []
    for i, (info, data) in enumerate(candidates):
        check_data(f"candidate {i + 1}", data)
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
    extra = prep_columns(grid, sp.prep) + baseline_columns(grid)
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

    peaks = strong_bands(sample, grid, Profile(signal, usable, noise, [], ""))
    out = []
    labels = labels_for(peaks, prep=list(sample.meta.prep)) if len(peaks) else {}
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
            groups = labels.get(p.position, [])
            out.append(UnexplainedBand(p.position, p.intensity, left, groups))
    out.sort(key=lambda u: -u.intensity * u.left)
    return out
