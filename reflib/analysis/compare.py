"""Two spectra band by band: what matched (and how far it moved), what was lost, what is new.

This is what a chemist reads after a reaction: "the 1715 band is gone, a broad 3400 band
appeared". Both inputs become peak lists (picked from full spectra); bands in regions the
preparations spoil (the union of both, plus the air) are left out; the rest are paired one to
one, closest first (:func:`reflib.analysis.search.match_bands`). Every band reported is annotated
with the
group-frequency ranges it falls in (:mod:`reflib.chem.bands`). Arrays and plain objects in, a
:class:`Comparison` out; no I/O.

Example
-------
>>> from reflib.spectrum import PeakList
>>> before = PeakList([1715.0, 1360.0, 2960.0], [1.0, 0.4, 0.5])
>>> after = PeakList([3400.0, 1360.0, 2960.0, 1100.0], [0.6, 0.4, 0.5, 0.7],
...                  widths=[250.0, 10.0, 15.0, 15.0], broad=[True, False, False, False])
>>> c = compare(before, after)
>>> [b.position for b in c.lost], [round(b.position) for b in c.new]
([1715.0], [1100, 3400])
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from reflib.analysis.encode import DEFAULT_ENCODING, coverage_mask
from reflib.analysis.search import CAUTION, MASKED_BELOW, MATCH_TOLERANCE, match_bands
from reflib.chem import prep as prep_mod
from reflib.chem.groups import labels_for
from reflib.errors import ValidationError
from reflib.spectrum import PeakList, Spectrum

#: Bands weaker than this (relative, 0..1) are not reported as lost or new.
MIN_REPORTED = 0.1
#: A matched band whose relative intensity changed by at least this factor (either way) is an
#: intensity change; both bands must be at least :data:`MIN_REPORTED`.
INTENSITY_FACTOR = 1.5
#: At most this many lost, new and changed bands go into the summary sentences.
SUMMARY_BANDS = 4


@dataclass
class BandNote:
    """One band of one spectrum: position (cm-1), relative intensity (0..1), words, groups."""

    position: float
    intensity: float
    strength: str
    broad: bool
    groups: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {
            "position": round(self.position, 1),
            "intensity": round(self.intensity, 3),
            "strength": self.strength,
            "broad": self.broad,
            "groups": list(self.groups),
        }


@dataclass
class BandPair:
    """A band of A matched with a band of B: positions (cm-1), shift B - A, intensity factor."""

    a: float
    b: float
    a_intensity: float
    b_intensity: float
    groups: list[str] = field(default_factory=list)

    @property
    def shift(self) -> float:
        return self.b - self.a

    @property
    def factor(self) -> float:
        return self.b_intensity / self.a_intensity if self.a_intensity > 0 else float("inf")

    def to_dict(self) -> dict[str, Any]:
        return {
            "a": round(self.a, 1),
            "b": round(self.b, 1),
            "shift": round(self.shift, 1),
            "a_intensity": round(self.a_intensity, 3),
            "b_intensity": round(self.b_intensity, 3),
            "factor": round(self.factor, 2),
            "groups": list(self.groups),
        }


@dataclass
class Comparison:
    """The result of :func:`compare`; :meth:`to_dict` is what ``reflib compare --json`` prints."""

    a: dict[str, Any]
    b: dict[str, Any]
    prep: list[str]
    range_cm1: tuple[float, float]
    matched: list[BandPair]
    lost: list[BandNote]
    new: list[BandNote]
    changed: list[BandPair]
    masked: list[tuple[float, float, str]]
    summary: list[str]

    def to_dict(self) -> dict[str, Any]:
        return {
            "a": dict(self.a),
            "b": dict(self.b),
            "prep": list(self.prep),
            "range_cm1": [round(self.range_cm1[0], 1), round(self.range_cm1[1], 1)],
            "matched": [p.to_dict() for p in self.matched],
            "lost": [n.to_dict() for n in self.lost],
            "new": [n.to_dict() for n in self.new],
            "intensity_changes": [p.to_dict() for p in self.changed],
            "masked": [[round(lo, 1), round(hi, 1), why] for lo, hi, why in self.masked],
            "summary": list(self.summary),
            "caution": CAUTION,
        }


def _peaks(data: Spectrum | PeakList, name: str) -> PeakList:
    if isinstance(data, PeakList):
        return data
    if isinstance(data, Spectrum):
        from reflib.signal.peaks import pick_peaks

        return pick_peaks(data)
    raise ValidationError(f"{name} must be a Spectrum or PeakList, got {type(data).__name__}")


def _label(groups: list[str]) -> str:
    # labels from reflib.chem.groups carry their own "?" when tentative
    return f" ({groups[0]})" if groups else ""


def _labels(pl: PeakList, info: dict[str, Any] | None, tokens: list[str]) -> dict:
    """Band labels of one side: from its own structure's groups when a library entry has one."""
    smiles = (info or {}).get("smiles")
    ids = None
    if smiles:
        from reflib.chem.structure import functional_groups

        ids = functional_groups(smiles)
    return labels_for(pl, prep=tokens, structure_ids=ids)


def compare(
    a: Spectrum | PeakList,
    b: Spectrum | PeakList,
    *,
    prep: Iterable[str] | str | None = (),
    tolerance: float = MATCH_TOLERANCE,
    a_info: dict[str, Any] | None = None,
    b_info: dict[str, Any] | None = None,
) -> Comparison:
    """Band-by-band comparison of ``a`` (before) with ``b`` (after).

    Parameters
    ----------
    a, b:
        Spectra or peak lists; their preparation tokens come from their metadata.
    prep:
        Extra preparation tokens applying to both (e.g. both run as a nujol mull).
    tolerance:
        Position tolerance of a match, cm-1 (broad bands: half their width).
    a_info, b_info:
        What to print about each side (file or library entry); defaults to the titles.

    Returns
    -------
    Comparison
        ``matched`` (with the shift b - a in cm-1), ``lost`` (in a, not in b), ``new`` (in b,
        not in a), ``changed`` (matched bands whose relative intensity moved by
        :data:`INTENSITY_FACTOR` or more), each annotated with group-frequency labels, and
        ``summary`` sentences, strongest first.
    """
    pa, pb = _peaks(a, "a"), _peaks(b, "b")
    extra = prep_mod.parse_tokens(prep) if prep else []
    tokens = list(
        dict.fromkeys(
            [
                *extra,
                *prep_mod.parse_tokens(list(pa.meta.prep)),
                *prep_mod.parse_tokens(list(pb.meta.prep)),
            ]
        )
    )
    lo, hi = DEFAULT_ENCODING.lo, DEFAULT_ENCODING.hi
    for d in (a, b):
        if isinstance(d, Spectrum):
            lo, hi = max(lo, d.range_cm1[0]), min(hi, d.range_cm1[1])
    if hi <= lo:
        raise ValidationError(
            f"the two spectra share no wavenumber range (A and B overlap in {lo:.0f}-{hi:.0f} cm-1)"
        )
    grid = DEFAULT_ENCODING.grid()
    w = prep_mod.weight_profile(grid, tokens, air=True) * coverage_mask(grid, lo, hi)

    def usable(pl: PeakList) -> np.ndarray:
        return np.flatnonzero(np.interp(pl.positions, grid, w, left=0.0, right=0.0) >= MASKED_BELOW)

    ia, ib = usable(pa), usable(pb)
    sa, sb = _subset(pa, ia), _subset(pb, ib)
    pairs = match_bands(sa, sb, tolerance=tolerance)
    used_a = {i for i, _ in pairs}
    used_b = {j for _, j in pairs}
    # labels from each side's own group analysis (reflib.chem.groups), by position, with that
    # side's own preparation: a film's O-H band is no KBr pellet's water because the other
    # spectrum was a pellet
    own_a = list(dict.fromkeys([*extra, *prep_mod.parse_tokens(list(pa.meta.prep))]))
    own_b = list(dict.fromkeys([*extra, *prep_mod.parse_tokens(list(pb.meta.prep))]))
    labels = {id(sa): _labels(pa, a_info, own_a), id(sb): _labels(pb, b_info, own_b)}

    def note(pl: PeakList, i: int) -> BandNote:
        p = list(pl)[i]
        groups = labels[id(pl)].get(p.position, [])
        return BandNote(p.position, p.intensity, p.strength, p.broad, groups)

    a_list, b_list = list(sa), list(sb)
    matched = []
    for i, j in pairs:
        pa_i, pb_j = a_list[i], b_list[j]
        groups = labels[id(sb)].get(pb_j.position, [])
        matched.append(
            BandPair(pa_i.position, pb_j.position, pa_i.intensity, pb_j.intensity, groups)
        )
    matched.sort(key=lambda m: -m.a)
    lost = [
        note(sa, i) for i in range(len(sa)) if i not in used_a and sa.intensities[i] >= MIN_REPORTED
    ]
    new = [
        note(sb, j) for j in range(len(sb)) if j not in used_b and sb.intensities[j] >= MIN_REPORTED
    ]
    lost.sort(key=lambda n: -n.intensity)
    new.sort(key=lambda n: -n.intensity)
    changed = [
        m
        for m in matched
        if min(m.a_intensity, m.b_intensity) >= MIN_REPORTED
        and (m.factor >= INTENSITY_FACTOR or m.factor <= 1.0 / INTENSITY_FACTOR)
    ]
    changed.sort(key=lambda m: -abs(np.log(m.factor)))
    masked = prep_mod.merged_regions(tokens, air=True, within=(lo, hi))
    summary = _summary(matched, lost, new, changed)
    return Comparison(
        a=_info(a, a_info),
        b=_info(b, b_info),
        prep=tokens,
        range_cm1=(float(lo), float(hi)),
        matched=matched,
        lost=lost,
        new=new,
        changed=changed,
        masked=masked,
        summary=summary,
    )


def _info(data: Spectrum | PeakList, info: dict[str, Any] | None) -> dict[str, Any]:
    d = dict(info or {})
    d.setdefault("name", data.meta.title or data.meta.source_file)
    d.setdefault("kind", "spectrum" if isinstance(data, Spectrum) else "peaks")
    d.setdefault("prep", list(data.meta.prep))
    return d


def _subset(pl: PeakList, idx: np.ndarray) -> PeakList:
    return pl.subset(idx)


_WORDS = {"vs": "very strong ", "s": "strong ", "m": "medium ", "w": "weak ", "vw": "very weak "}


def _summary(
    matched: list[BandPair], lost: list[BandNote], new: list[BandNote], changed: list[BandPair]
) -> list[str]:
    out = []
    for n in lost[:SUMMARY_BANDS]:
        kind = "broad " if n.broad else ""
        out.append(f"the {kind}{n.position:.0f} band{_label(n.groups)} is gone")
    for n in new[:SUMMARY_BANDS]:
        kind = "broad " if n.broad else ""
        word = _WORDS.get(n.strength, "")
        out.append(f"a {word}{kind}{n.position:.0f} band{_label(n.groups)} appeared")
    for m in changed[:SUMMARY_BANDS]:
        verb = "grew" if m.factor > 1 else "weakened"
        f = m.factor if m.factor > 1 else 1.0 / m.factor
        out.append(f"the {m.a:.0f} band{_label(m.groups)} {verb} {f:.1f}x (relative intensity)")
    if matched:
        shifts = np.array([m.shift for m in matched])
        med = float(np.median(shifts))
        out.append(
            f"{len(matched)} bands match, median shift {med:+.1f} cm-1"
            + (
                f"; largest {shifts[np.argmax(np.abs(shifts))]:+.1f} cm-1"
                if len(matched) > 1
                else ""
            )
        )
    else:
        out.append("no band of one spectrum matches a band of the other")
    return out
