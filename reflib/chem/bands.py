"""Group-frequency correlation table and band annotation.

The table (``reflib/data/group_frequencies.csv``, one row per band of a group, each with its
source) is loaded once, on first use. :func:`candidates` ranks the groups that could explain one
band from its position, strength word and shape; :func:`assign` does it for a whole
:class:`~reflib.spectrum.PeakList`; :func:`describe` gives the short text the CLI prints.

Ranges are typical condensed-phase values (neat liquid, solid, solution). In the gas phase polar
bands sit higher (no intermolecular interaction: carbonyls by some 20 cm-1, amide carbonyls and
free O-H more), and a picked band may be a P or R branch maximum rather than the band centre. With
``phase="gas"`` each range is therefore moved up by the row's ``gas_shift_cm1`` (from memory, 0
for bands that barely move, such as C-H stretches) and widened by :data:`GAS_BRANCH_CM1` on both
sides; bands of hydrogen-bonded forms (``condensed_only`` rows: H-bonded O-H, acid dimers) are
not considered in the gas phase.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from typing import Any

from reflib.errors import ValidationError
from reflib.spectrum import Peak, PeakList

TABLE_FILE = "group_frequencies.csv"
KINDS = ("band", "isotope", "artefact")
TABLE_STRENGTHS = ("s", "m", "w", "var")
SHAPES = ("sharp", "broad", "var")
PHASES = ("condensed", "gas")

#: Gas-phase allowance on both edges, cm-1: half the P-R branch separation, which for a band of
#: a molecule with rotational constant B (cm-1) at temperature T (K) is about 2.36 sqrt(B T)
#: (rigid-rotor result); B = 0.1-1 cm-1 at 296 K gives 13-41 cm-1, so about 12 either side.
GAS_BRANCH_CM1 = 12.0
#: Priors by kind of row: an isotope band or a preparation artefact is a less likely reading of a
#: band than a group of the compound itself, unless the preparation says so (see ``prep``).
KIND_PRIOR = {"band": 1.0, "isotope": 0.75, "artefact": 0.7}
#: A band wider than this (FWHM, cm-1) counts as broad when no broad flag is given.
BROAD_WIDTH_CM1 = 60.0

_OBSERVED_LEVEL = {"vs": 4.0, "s": 3.0, "m": 2.0, "w": 1.0, "vw": 0.0}
_TABLE_LEVEL = {"s": 3.5, "m": 2.0, "w": 0.5}


@dataclass(frozen=True)
class GroupFrequency:
    """One row of the correlation table: a band of a group, with its range in cm-1.

    ``groups`` are the functional-group ids (as :mod:`reflib.chem.structure` detects them) the band
    belongs to; ``kind`` is ``band``, ``isotope`` (an X-D band derived from an X-H range) or
    ``artefact`` (a band of the preparation or the air, ``prep`` naming the token). ``expect``
    is empty for bands that may legitimately be weak or absent; rows of one group sharing an
    ``expect`` token are alternatives, one of which a spectrum of that group should show.
    """

    id: str
    groups: tuple[str, ...]
    kind: str
    label: str
    lo_cm1: float
    hi_cm1: float
    gas_shift_cm1: float
    condensed_only: bool
    strength: str
    shape: str
    expect: str
    prep: str
    derived_from: str
    notes: str
    source: str

    @property
    def group(self) -> str:
        """The first (main) group id of the row."""
        return self.groups[0]

    @property
    def centre_cm1(self) -> float:
        return 0.5 * (self.lo_cm1 + self.hi_cm1)

    def in_phase(self, phase: str) -> bool:
        """False for bands of hydrogen-bonded forms (``condensed_only``) in the gas phase."""
        return not (phase == "gas" and self.condensed_only)

    def range_for(self, phase: str = "condensed") -> tuple[float, float]:
        """The range (lo, hi) in cm-1 used for ``phase`` (see the module notes on gas phase)."""
        _check_phase(phase)
        if phase == "gas" and self.kind != "artefact":
            shift = self.gas_shift_cm1
            return self.lo_cm1 + shift - GAS_BRANCH_CM1, self.hi_cm1 + shift + GAS_BRANCH_CM1
        return self.lo_cm1, self.hi_cm1

    def to_dict(self) -> dict[str, Any]:
        out = dict(self.__dict__)
        out["groups"] = list(self.groups)
        return out


@dataclass(frozen=True)
class Assignment:
    """A candidate reading of one band: a table row and how well the band fits it (0..1)."""

    id: str
    group: str
    label: str
    score: float
    lo_cm1: float
    hi_cm1: float
    kind: str = "band"

    @property
    def short(self) -> str:
        """The label without a trailing 'stretch', e.g. ``'ketone C=O'``."""
        return self.label.removesuffix(" stretch")

    def to_dict(self) -> dict[str, Any]:
        return {
            "id": self.id,
            "group": self.group,
            "label": self.label,
            "score": round(self.score, 3),
            "range_cm1": [round(self.lo_cm1, 1), round(self.hi_cm1, 1)],
            "kind": self.kind,
        }


def _check_phase(phase: str) -> None:
    if phase not in PHASES:
        raise ValidationError(f"phase must be one of {', '.join(PHASES)}; got {phase!r}")


def parse_table(text: str, name: str = TABLE_FILE) -> tuple[GroupFrequency, ...]:
    """Parse correlation-table CSV text into rows, checking every field (errors name the line)."""
    rows: list[GroupFrequency] = []
    seen: set[str] = set()
    reader = csv.DictReader(io.StringIO(text))
    for line, raw in enumerate(reader, start=2):
        if None in raw or any(v is None for v in raw.values()):
            raise ValidationError("wrong number of columns", path=name, line=line)
        try:
            lo, hi = float(raw["lo_cm1"]), float(raw["hi_cm1"])
            shift = float(raw["gas_shift_cm1"] or 0.0)
        except ValueError:
            raise ValidationError(
                "lo_cm1, hi_cm1 and gas_shift_cm1 must be numbers, got "
                f"{raw['lo_cm1']!r}, {raw['hi_cm1']!r}, {raw['gas_shift_cm1']!r}",
                path=name,
                line=line,
            ) from None
        if not 0 < lo < hi:
            raise ValidationError(f"need 0 < lo_cm1 < hi_cm1, got {lo}-{hi}", path=name, line=line)
        for col, allowed in (
            ("kind", KINDS),
            ("strength", TABLE_STRENGTHS),
            ("shape", SHAPES),
        ):
            if raw[col] not in allowed:
                raise ValidationError(
                    f"{col} must be one of {', '.join(allowed)}, got {raw[col]!r}",
                    path=name,
                    line=line,
                )
        if not raw["source"].strip():
            raise ValidationError("every row needs a source", path=name, line=line)
        if raw["id"] in seen:
            raise ValidationError(f"duplicate id {raw['id']!r}", path=name, line=line)
        seen.add(raw["id"])
        rows.append(
            GroupFrequency(
                id=raw["id"],
                groups=tuple(g for g in raw["group"].split("|") if g),
                kind=raw["kind"],
                label=raw["label"],
                lo_cm1=lo,
                hi_cm1=hi,
                gas_shift_cm1=shift,
                condensed_only=raw["condensed_only"].strip().lower() == "yes",
                strength=raw["strength"],
                shape=raw["shape"],
                expect=raw["expect"],
                prep=raw["prep"],
                derived_from=raw["derived_from"],
                notes=raw["notes"],
                source=raw["source"],
            )
        )
    return tuple(rows)


@lru_cache(maxsize=1)
def table() -> tuple[GroupFrequency, ...]:
    """The correlation table shipped with reflib (loaded on first call, then cached)."""
    text = resources.files("reflib").joinpath("data", TABLE_FILE).read_text(encoding="utf-8")
    return parse_table(text)


def rows_for_groups(groups: Iterable[str]) -> list[GroupFrequency]:
    """The table rows belonging to any of ``groups`` (functional-group ids), in table order."""
    wanted = set(groups)
    return [r for r in table() if wanted.intersection(r.groups)]


def position_tolerance(position_cm1: float) -> float:
    """How far (cm-1) outside a table range a band may lie and still be read as that group.

    About 0.6 % of the position plus 5 cm-1 (15 at 1700, 23 at 3000): room for picking error,
    instrument calibration and the fuzziness of the typical ranges (common practice, no source).
    """
    return 5.0 + 0.006 * position_cm1


def _position_score(x: float, lo: float, hi: float) -> float:
    half = 0.5 * (hi - lo)
    centre = lo + half
    if lo <= x <= hi:
        return 1.0 - 0.35 * ((x - centre) / half) ** 2
    outside = lo - x if x < lo else x - hi
    return 0.65 * math.exp(-0.5 * (outside / position_tolerance(x)) ** 2)


def _strength_factor(observed: str | None, expected: str) -> float:
    if observed is None:
        return 1.0
    if expected == "var":
        return 0.9
    diff = abs(_OBSERVED_LEVEL[observed] - _TABLE_LEVEL[expected])
    return max(0.35, 1.0 - 0.2 * max(0.0, diff - 0.5))


def _shape_factor(broad: bool | None, expected: str) -> float:
    if broad is None:
        return 1.0
    if expected == "var":
        return 0.9
    if broad == (expected == "broad"):
        return 1.0
    return 0.4 if broad else 0.5


def candidates(
    position_cm1: float,
    *,
    strength: str | None = None,
    broad: bool | None = None,
    width: float | None = None,
    top: int = 3,
    phase: str = "condensed",
    prep: Sequence[str] = (),
    groups: Iterable[str] | None = None,
    support: Sequence[float] | None = None,
    min_score: float = 0.1,
) -> list[Assignment]:
    """Rank the table's groups that could explain a band, most likely first.

    Parameters
    ----------
    position_cm1:
        Band position, cm-1.
    strength:
        Strength word of the band (vs, s, m, w, vw) or None if unknown.
    broad:
        Whether the band is broad; when None, ``width`` (FWHM, cm-1) decides if given
        (broader than :data:`BROAD_WIDTH_CM1`), else shape is not used.
    top:
        At most this many candidates (one per label).
    phase:
        ``"condensed"`` (default) or ``"gas"`` (ranges widened, see the module notes).
    prep:
        Preparation tokens of the sample (``"cdcl3"``, ``"nujol"``...): their artefact bands
        are then as likely as a group of the compound.
    groups:
        Only consider rows of these functional groups (and no artefacts) when given.
    support:
        Positions (cm-1) of the other bands of the same spectrum. When given, a group whose
        other expected bands are present gains over one whose other expected bands are missing
        (see :func:`corroboration`): an ester C=O with a strong C-O band beside it reads as an
        ester before a ketone.
    min_score:
        Drop candidates scoring below this.

    Example
    -------
    >>> [a.label for a in candidates(3330, strength="s", broad=True, top=2)]
    ['H-bonded O-H stretch', 'H-bonded phenol O-H stretch']
    """
    if not (math.isfinite(position_cm1) and position_cm1 > 0):
        raise ValidationError(f"band position must be a positive cm-1 value, got {position_cm1!r}")
    if strength is not None and strength not in _OBSERVED_LEVEL:
        raise ValidationError(
            f"unknown strength word {strength!r}; expected one of {', '.join(_OBSERVED_LEVEL)}"
        )
    if top < 1:
        raise ValidationError(f"top must be at least 1, got {top}")
    _check_phase(phase)
    if broad is None and width is not None and math.isfinite(width):
        broad = width > BROAD_WIDTH_CM1
    wanted = None if groups is None else set(groups)
    seen = None if support is None else _tokens_seen(tuple(map(float, support)), phase)
    return _ranked(position_cm1, strength, broad, top, phase, set(prep), wanted, seen, min_score)


def candidates_for(
    bands: Iterable[tuple[float, str | None, bool | None, float | None]],
    *,
    top: int = 3,
    phase: str = "condensed",
    prep: Sequence[str] = (),
    groups: Iterable[str] | None = None,
    support: Sequence[float] | None = None,
    min_score: float = 0.1,
) -> list[list[Assignment]]:
    """:func:`candidates` of several bands of one spectrum, sharing the work that does not
    depend on the band (the groups allowed, the other bands' support): one list per
    ``(position_cm1, strength, broad, width)`` of ``bands``, in order, each the same as
    :func:`candidates` with those arguments and the keywords given here.

    >>> [[a.label for a in c] for c in candidates_for([(1715.0, "vs", False, None)], top=1)]
    [['ketone C=O stretch']]
    """
    if top < 1:
        raise ValidationError(f"top must be at least 1, got {top}")
    _check_phase(phase)
    wanted = None if groups is None else set(groups)
    seen = None if support is None else _tokens_seen(tuple(map(float, support)), phase)
    prep_set = set(prep)
    bands = list(bands)
    for position, strength, _, _ in bands:
        if not (math.isfinite(position) and position > 0):
            raise ValidationError(f"band position must be a positive cm-1 value, got {position!r}")
        if strength is not None and strength not in _OBSERVED_LEVEL:
            raise ValidationError(
                f"unknown strength word {strength!r}; expected one of {', '.join(_OBSERVED_LEVEL)}"
            )
    near = _rows_near_many([b[0] for b in bands], phase, min_score, wanted)
    out = []
    for (position, strength, broad, width), rows in zip(bands, near):
        if broad is None and width is not None and math.isfinite(width):
            broad = width > BROAD_WIDTH_CM1
        out.append(
            _ranked(position, strength, broad, top, phase, prep_set, wanted, seen, min_score, rows)
        )
    return out


def _ranked(
    position_cm1: float,
    strength: str | None,
    broad: bool | None,
    top: int,
    phase: str,
    prep_set: set[str],
    wanted: set[str] | None,
    seen: frozenset[tuple[str, str]] | None,
    min_score: float,
    near: list[tuple[GroupFrequency, float, float]] | None = None,
) -> list[Assignment]:
    """The ranking of :func:`candidates`, its arguments checked and prepared; ``near`` the
    rows of :func:`_rows_near` when already found."""
    best: dict[str, tuple] = {}  # label: (score, row, lo, hi); Assignments made for the top
    if near is None:
        near = _rows_near(position_cm1, phase, min_score)
    for row, lo, hi in near:
        if wanted is not None and (row.kind == "artefact" or wanted.isdisjoint(row.groups)):
            continue
        score = _position_score(position_cm1, lo, hi)
        if score < min_score:
            continue
        prior = KIND_PRIOR[row.kind]
        if row.kind == "artefact" and row.prep in prep_set:
            prior = 1.0
        score *= prior * _strength_factor(strength, row.strength) * _shape_factor(broad, row.shape)
        if seen is not None:
            score *= corroboration(row, seen)
        if score < min_score:
            continue
        current = best.get(row.label)
        if current is None or score > current[0]:
            best[row.label] = (score, row, lo, hi)
    ranked = sorted(best.values(), key=lambda b: (-b[0], b[1].id))[:top]
    return [Assignment(r.id, r.group, r.label, sc, lo, hi, r.kind) for sc, r, lo, hi in ranked]


#: Weight of corroboration: a band whose group has all its other expected bands present keeps its
#: score; one whose group has none of them loses this fraction; a group with no other expected
#: band loses half of it.
CORROBORATION_WEIGHT = 0.15


@lru_cache(maxsize=1024)
def _other_tokens(group: str, expect: str) -> frozenset[tuple[str, str]]:
    """(group, expect token) pairs of the expected bands of ``group`` other than ``expect``."""
    return frozenset(
        (g, r.expect)
        for r in table()
        if r.expect and r.kind != "artefact"
        for g in r.groups
        if g == group and r.expect != expect
    )


@lru_cache(maxsize=4)
def _position_index(phase: str) -> tuple[tuple[GroupFrequency, ...], Any, Any]:
    """The table rows usable in ``phase`` (table order) with their ranges as two arrays."""
    import numpy as np

    rows = tuple(r for r in table() if r.in_phase(phase))
    ranges = np.array([r.range_for(phase) for r in rows], dtype=np.float64).reshape(-1, 2)
    return rows, ranges[:, 0], ranges[:, 1]


def _rows_near(x: float, phase: str, min_score: float) -> list[tuple[GroupFrequency, float, float]]:
    """(row, lo, hi) of the rows of ``phase`` whose position score at ``x`` can reach
    ``min_score``, in table order, with the row's range for ``phase``.

    Inside its range a row scores at least 0.65; outside it 0.65 exp(-d^2 / 2 tol^2)
    (:func:`_position_score`), which is below ``min_score`` beyond
    d = tol sqrt(2 ln(0.65 / min_score)). Only the rows within that reach (plus a margin of
    1 cm-1 against rounding) are returned; every other factor of a candidate's score is at
    most 1, so the rows left out could not have been kept.
    """
    rows, lo, hi = _position_index(phase)
    if min_score <= 0.0:
        return list(zip(rows, lo.tolist(), hi.tolist()))
    reach = 1.0
    if min_score < 0.65:
        reach += position_tolerance(x) * math.sqrt(2.0 * math.log(0.65 / min_score))
    import numpy as np

    near = np.flatnonzero((lo - reach <= x) & (x <= hi + reach)).tolist()
    return [
        (rows[i], lo_i, hi_i) for i, lo_i, hi_i in zip(near, lo[near].tolist(), hi[near].tolist())
    ]


def _rows_near_many(
    xs: list[float], phase: str, min_score: float, wanted: set[str] | None
) -> list[list[tuple[GroupFrequency, float, float]]]:
    """:func:`_rows_near` of each position of ``xs`` in one comparison of arrays, leaving out
    the rows that ``wanted`` (the groups allowed, when given) would skip: artefacts and rows
    of no wanted group."""
    import numpy as np

    if not xs:
        return []
    if min_score <= 0.0:
        return [_rows_near(x, phase, min_score) for x in xs]
    rows, lo, hi = _position_index(phase)
    spread = math.sqrt(2.0 * math.log(0.65 / min_score)) if min_score < 0.65 else 0.0
    reach = np.array([1.0 + (position_tolerance(x) * spread if spread else 0.0) for x in xs])
    x = np.array(xs, dtype=np.float64)[:, None]
    near = (lo[None, :] - reach[:, None] <= x) & (x <= hi[None, :] + reach[:, None])
    if wanted is not None:
        near &= _rows_of_groups(phase, frozenset(wanted))[None, :]
    lo_l, hi_l = lo.tolist(), hi.tolist()
    return [[(rows[i], lo_l[i], hi_l[i]) for i in np.flatnonzero(m).tolist()] for m in near]


@lru_cache(maxsize=64)
def _rows_of_groups(phase: str, wanted: frozenset[str]) -> Any:
    """True for the rows of ``phase`` (table order) that belong to a group of ``wanted`` and
    are not artefacts."""
    import numpy as np

    rows, _, _ = _position_index(phase)
    return np.array([r.kind != "artefact" and not wanted.isdisjoint(r.groups) for r in rows])


@lru_cache(maxsize=64)
def _tokens_seen(positions: tuple[float, ...], phase: str) -> frozenset[tuple[str, str]]:
    """(group, expect token) pairs with at least one band of ``positions`` in range."""
    import numpy as np

    rows, lo, hi = _position_index(phase)
    x = np.asarray(positions, dtype=np.float64)
    tol = 5.0 + 0.006 * x  # position_tolerance, element by element
    hit = ((lo[:, None] - tol[None, :] <= x[None, :]) & (x[None, :] <= hi[:, None] + tol)).any(1)
    out = set()
    for i in np.flatnonzero(hit).tolist():
        row = rows[i]
        if row.expect:
            out.update((g, row.expect) for g in row.groups)
    return frozenset(out)


def corroboration(row: GroupFrequency, seen: frozenset[tuple[str, str]]) -> float:
    """Factor (0.85..1) by which the other expected bands of ``row``'s group support it.

    ``seen`` holds the (group, token) pairs present in the spectrum. Artefact rows and groups
    with no other expected band get the neutral middle value.
    """
    return _corroboration(row.group, row.expect, row.kind == "artefact", seen)


@lru_cache(maxsize=4096)
def _corroboration(
    group: str, expect: str, artefact: bool, seen: frozenset[tuple[str, str]]
) -> float:
    others = _other_tokens(group, expect)
    fraction = 0.5 if artefact or not others else len(others & seen) / len(others)
    return 1.0 - CORROBORATION_WEIGHT * (1.0 - fraction)


def _peak_candidates(
    peak: Peak,
    top: int,
    phase: str,
    prep: Sequence[str],
    support: Sequence[float] | None = None,
) -> list[Assignment]:
    width = peak.width if math.isfinite(peak.width) else None
    # A peak list always carries a broad flag; a False flag with a known width is left to the
    # width, an unknown width keeps the flag.
    broad = True if peak.broad else (None if width is not None else False)
    return candidates(
        peak.position,
        strength=peak.strength,
        broad=broad,
        width=width,
        top=top,
        phase=phase,
        prep=prep,
        support=support,
    )


def phase_of(peaks: PeakList) -> str:
    """``"gas"`` when the peak list's metadata says the sample was a gas or vapour (``state``, or
    the ``gas`` preparation token), else ``"condensed"``."""
    state = (peaks.meta.state or "").lower()
    gaseous = "gas" in state or "vapo" in state or "gas" in peaks.meta.prep
    return "gas" if gaseous else "condensed"


def assign(
    peaks: PeakList,
    *,
    top: int = 3,
    phase: str | None = None,
    prep: Sequence[str] | None = None,
) -> list[list[Assignment]]:
    """Candidate groups for every band of ``peaks`` (in the list's ascending order).

    The other bands of the list corroborate each reading (``support`` of :func:`candidates`).

    ``phase`` defaults to what the metadata says (:func:`phase_of`); ``prep`` to the metadata's
    preparation tokens.
    """
    phase = phase_of(peaks) if phase is None else phase
    prep = list(peaks.meta.prep) if prep is None else list(prep)
    support = [float(x) for x in peaks.positions]
    return [_peak_candidates(p, top, phase, prep, support) for p in peaks]


def describe(
    peak: Peak, *, phase: str = "condensed", prep: Sequence[str] = (), top: int = 2
) -> str:
    """Short text naming a band's likeliest groups, e.g. ``'ketone C=O? ester C=O?'``.

    Candidates scoring less than half the best are left out; an empty string when nothing fits.

    >>> describe(Peak(1715.0, 1.0, 12.0, "vs", False, False))
    'ketone C=O? carbamate C=O?'
    """
    return _short_text(_peak_candidates(peak, top, phase, prep))


def _short_text(found: list[Assignment]) -> str:
    if not found:
        return ""
    best = found[0].score
    return " ".join(f"{a.short}?" for a in found if a.score >= 0.5 * best)


def describe_all(
    peaks: PeakList, *, top: int = 2, only: Iterable[float] | None = None
) -> list[str]:
    """:func:`describe` for every band of ``peaks`` (ascending order), with the phase and
    preparation of the list's metadata and the other bands as corroboration (:func:`assign`).

    With ``only`` (band positions), the bands elsewhere get an empty text without being looked
    up; the texts of the others are the same as without ``only``.

    >>> describe_all(PeakList([1240.0, 1745.0], [0.9, 1.0]))[1]
    'ester C=O? cyclopentanone C=O?'
    """
    if only is None:
        return [_short_text(found) for found in assign(peaks, top=top)]
    wanted = set(only)
    phase = phase_of(peaks)
    prep = list(peaks.meta.prep)
    support = [float(x) for x in peaks.positions]
    return [
        _short_text(_peak_candidates(p, top, phase, prep, support)) if p.position in wanted else ""
        for p in peaks
    ]


def top_groups(
    position: float, strength: str, broad: bool, width: float, prep: list[str]
) -> list[str]:
    """Labels of the group-frequency rows a band falls in: the best and those scoring at least
    half as well (at most two)."""
    found = candidates(
        position,
        strength=strength,
        broad=broad or None,
        width=width if math.isfinite(width) else None,
        top=2,
        prep=prep,
    )
    if not found:
        return []
    best = found[0].score
    return [a.label for a in found if a.score >= 0.5 * best]
