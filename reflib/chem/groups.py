"""Group analysis: which functional groups a peak list shows, with the evidence for each call.

For every group of a fixed vocabulary (:func:`vocabulary`, ``reflib/data/group_vocabulary.csv``)
:func:`analyse` gives a call, ``present``, ``possible`` or ``absent``, a score 0..1, the bands
that speak for it (``evidence``, each seen or not) and the reasons against it. The rules are rows
of ``reflib/data/group_rules.csv``, each with its source; they read bands together, not one by
one:

- a group is ``present`` when every ``key`` band is seen with at least its strength and shape
  (rows sharing an ``alt`` tag are alternatives: a free or an H-bonded O-H), and at least
  ``min_support`` of its ``support`` bands are seen;
- it is ``absent`` only when a key window of at least medium strength (or all key windows) is
  clean, inside the spectrum's range, not spoiled by the preparation, and the detection floor
  (``noise``, or the weakest picked band) is below what the band would show; ``support+`` rows
  must be clean too (alkenes and alkynes whose =C-H or C-H may be missing), and so must
  ``clean`` rows, which only guard absence (the C-H of CHCl3 near 3030). Otherwise the call
  is ``possible``;
- the carbonyl classes compete for one C=O band: the class with the most telling evidence claims
  it (anhydride, acid chloride, acid, aldehyde, ester, amide, then ketone), the others drop to
  ``possible``;
- weak bands at twice a strong C=O (the overtone near 3450) and the preparation's own bands are
  explained as such and never count as evidence;
- in the gas phase each window moves up by its row's ``gas_shift_cm1`` and widens by the P-R
  branch allowance (:data:`reflib.chem.bands.GAS_BRANCH_CM1`); rows of H-bonded forms are
  skipped;
- a formula (argument, ``##MOLFORM`` in the metadata, or a library structure) removes every
  group needing an element the compound lacks, and halogen groups (and acid chlorides) are
  ``present`` only when the formula holds the halogen: the spectrum alone cannot tell a C-F from
  a C-O band.

:func:`band_labels` is the one labeller every output uses: its labels name only groups the
analysis did not call absent. A group call is a reading of the spectrum, not a structure proof.
"""

from __future__ import annotations

import csv
import math
import re
from bisect import bisect_left, bisect_right
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from typing import Any

from reflib.chem import bands
from reflib.errors import ValidationError
from reflib.spectrum import Peak, PeakList

RULES_FILE = "group_rules.csv"
VOCABULARY_FILE = "group_vocabulary.csv"
ELEMENTS_FILE = "group_elements.csv"
CALLS = ("present", "possible", "absent")
NEEDS = ("key", "support", "support+", "clean")
CAUTION = "a group call is a reading of the spectrum, not a structure proof"

_LEVEL = {"vw": 0, "w": 1, "m": 2, "s": 3, "vs": 4}
#: Relative intensity (strongest band = 1) a band of each strength word shows at the least in a
#: spectrum of its group: the detection floor must be below it to call the group absent
#: (common practice, no source).
EXPECTED_AT_LEAST = {"vw": 0.005, "w": 0.02, "m": 0.05, "s": 0.15, "vs": 0.3}
#: Condensed-phase allowance on the edges of a window, cm-1 (picking and calibration).
CONDENSED_TOLERANCE_CM1 = 5.0
#: Weakest strength of a band read as the C=O stretch that overtones and competition refer to.
CO_MIN_STRENGTH = "s"
#: A weak band this close below twice a strong C=O (anharmonicity lowers an overtone) is its
#: overtone, cm-1 (from memory: 2 x 1715 gives a band near 3400-3440).
OVERTONE_BELOW_CM1 = 50.0
OVERTONE_ABOVE_CM1 = 10.0
#: Preparation regions with a weight at or below this hide a window (see reflib.chem.prep).
HIDDEN_WEIGHT = 0.2

_ELEMENT_SYMBOLS = frozenset(
    "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As "
    "Se Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd "
    "Tb Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn D T".split()
)


@dataclass(frozen=True)
class Rule:
    """One band a group should show: ``need`` says how it counts (see the module notes)."""

    group: str
    role: str
    need: str
    alt: str
    lo_cm1: float
    hi_cm1: float
    gas_shift_cm1: float
    phase: str
    min_strength: str
    shape: str
    source: str

    def __post_init__(self) -> None:
        # worked out once: every analysis reads them for every rule
        windows = {phase: self._window(phase) for phase in bands.PHASES}
        top = OVERTONE_MAX_STRENGTH if "overtone" in self.role else "vs"
        object.__setattr__(self, "_windows", windows)
        object.__setattr__(self, "_levels", (_LEVEL[self.min_strength], _LEVEL[top]))

    def in_phase(self, phase: str) -> bool:
        return self.phase in ("any", phase)

    def window(self, phase: str) -> tuple[float, float]:
        """Where the band is looked for in ``phase``, cm-1."""
        found = self._windows.get(phase)
        return found if found is not None else self._window(phase)

    def _window(self, phase: str) -> tuple[float, float]:
        if phase == "gas":
            shift = self.gas_shift_cm1
            tol = bands.GAS_BRANCH_CM1
            return self.lo_cm1 + shift - tol, self.hi_cm1 + shift + tol
        return self.lo_cm1 - CONDENSED_TOLERANCE_CM1, self.hi_cm1 + CONDENSED_TOLERANCE_CM1


@dataclass(frozen=True)
class GroupDef:
    """A group of the vocabulary: the elements it needs, the structure ids (as
    :mod:`reflib.chem.structure` detects them) it covers, and its rank among carbonyl classes."""

    name: str
    elements: frozenset[str]
    confirm_elements: frozenset[str]
    structure_ids: tuple[str, ...]
    min_support: int
    co_class: int | None
    notes: str
    source: str


@dataclass
class Evidence:
    """A band speaking for a group: seen at ``cm1``, or expected in ``window`` and not seen."""

    role: str
    need: str
    window: tuple[float, float]
    cm1: float | None = None
    seen: bool = False
    level: int = -1  # strength level of the band seen (vw 0 .. vs 4)

    def to_dict(self) -> dict[str, Any]:
        centre = 0.5 * (self.window[0] + self.window[1])
        return {
            "cm1": round(self.cm1 if self.cm1 is not None else centre, 1),
            "role": self.role,
            "seen": self.seen,
            "need": self.need,
            "window_cm1": [round(self.window[0], 1), round(self.window[1], 1)],
        }


@dataclass
class GroupCall:
    """The call for one group of the vocabulary."""

    group: str
    call: str
    score: float
    evidence: list[Evidence] = field(default_factory=list)
    against: list[str] = field(default_factory=list)
    by_formula: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {
            "group": self.group,
            "call": self.call,
            "score": round(self.score, 3),
            "evidence": [e.to_dict() for e in self.evidence],
            "against": list(self.against),
        }


@dataclass
class GroupReport:
    """What :func:`analyse` found: one :class:`GroupCall` per vocabulary group, in vocabulary
    order, and the bands explained as something other than a group (overtones, preparation)."""

    query: dict[str, Any]
    groups: list[GroupCall]
    explained: dict[float, str] = field(default_factory=dict)
    phase: str = "condensed"
    elements: frozenset[str] | None = None

    def call(self, group: str) -> GroupCall:
        for g in self.groups:
            if g.group == group:
                return g
        raise ValidationError(f"unknown group {group!r}; the vocabulary is {', '.join(names())}")

    def named(self, call: str) -> list[str]:
        """Names of the groups with this call, vocabulary order."""
        return [g.group for g in self.groups if g.call == call]

    def to_dict(self, quality: list[Any] | None = None) -> dict[str, Any]:
        return {
            "query": dict(self.query),
            "groups": [g.to_dict() for g in self.groups],
            "explained": [
                {"cm1": round(pos, 1), "as": text} for pos, text in sorted(self.explained.items())
            ],
            "quality": list(quality or []),
            "caution": CAUTION,
        }


# ---------------------------------------------------------------- tables


def _read_csv(name: str) -> list[dict[str, str]]:
    text = resources.files("reflib").joinpath("data", name).read_text(encoding="utf-8")
    rows = list(csv.DictReader(text.splitlines()))
    for line, row in enumerate(rows, start=2):
        if None in row or any(v is None for v in row.values()):
            raise ValidationError("wrong number of columns", path=name, line=line)
        if not row.get("source", "").strip():
            raise ValidationError("every row needs a source", path=name, line=line)
    return rows


def _split(text: str) -> tuple[str, ...]:
    return tuple(t for t in text.split("|") if t)


@lru_cache(maxsize=1)
def vocabulary() -> tuple[GroupDef, ...]:
    """The groups :func:`analyse` calls, in the order it reports them."""
    out = []
    for row in _read_csv(VOCABULARY_FILE):
        out.append(
            GroupDef(
                name=row["group"],
                elements=frozenset(_split(row["elements"])),
                confirm_elements=frozenset(_split(row["confirm_elements"])),
                structure_ids=_split(row["structure_ids"]),
                min_support=int(row["min_support"] or 0),
                co_class=int(row["co_class"]) if row["co_class"] else None,
                notes=row["notes"],
                source=row["source"],
            )
        )
    return tuple(out)


def names() -> list[str]:
    """The vocabulary's group names, in order."""
    return [g.name for g in vocabulary()]


@lru_cache(maxsize=1)
def rules() -> tuple[Rule, ...]:
    """The rows of the rule table, checked."""
    known = set(names())
    out = []
    for line, row in enumerate(_read_csv(RULES_FILE), start=2):
        try:
            lo, hi = float(row["lo_cm1"]), float(row["hi_cm1"])
            shift = float(row["gas_shift_cm1"] or 0.0)
        except ValueError:
            raise ValidationError(
                "cm-1 columns must be numbers", path=RULES_FILE, line=line
            ) from None
        if row["group"] not in known:
            raise ValidationError(f"unknown group {row['group']!r}", path=RULES_FILE, line=line)
        if row["need"] not in NEEDS or row["min_strength"] not in _LEVEL or not 0 < lo < hi:
            raise ValidationError("bad need, min_strength or range", path=RULES_FILE, line=line)
        if row["phase"] not in ("any", "gas", "condensed"):
            raise ValidationError(f"bad phase {row['phase']!r}", path=RULES_FILE, line=line)
        out.append(
            Rule(
                row["group"],
                row["role"],
                row["need"],
                row["alt"],
                lo,
                hi,
                shift,
                row["phase"],
                row["min_strength"],
                row["shape"],
                row["source"],
            )  # fmt: skip
        )
    return tuple(out)


@lru_cache(maxsize=1)
def structure_elements() -> dict[str, frozenset[str]]:
    """Elements each structure group id (of :mod:`reflib.chem.structure`) needs."""
    return {r["group"]: frozenset(_split(r["elements"])) for r in _read_csv(ELEMENTS_FILE)}


@lru_cache(maxsize=1)
def _vocabulary_of() -> dict[str, str]:
    """Structure group id -> vocabulary group (the most specific one covering it)."""
    out: dict[str, str] = {}
    for g in sorted(vocabulary(), key=lambda g: g.name == "carbonyl"):
        for sid in g.structure_ids:
            out.setdefault(sid, g.name)
    return out


def vocabulary_groups(structure_ids: Iterable[str]) -> list[str]:
    """Vocabulary names covering structure group ids (``carbonyl`` included for any C=O class).

    >>> vocabulary_groups(["alkyl_ch", "ester"])
    ['carbonyl', 'ester', 'alkyl C-H']
    """
    ids = set(structure_ids)
    return [g.name for g in vocabulary() if ids.intersection(g.structure_ids)]


# ---------------------------------------------------------------- formula


def formula_elements(text: str) -> frozenset[str]:
    """The element symbols of a molecular formula as written by hand or in ``##MOLFORM``.

    Spaces, counts, parentheses, colons and locants are allowed (``"C H3 C O C H3"``,
    ``"1,2-( C H3)2 C6 H4"``); D and T count as hydrogen.

    >>> sorted(formula_elements("C8H8O"))
    ['C', 'H', 'O']
    >>> sorted(formula_elements("C H3 C H( O H) C H3"))
    ['C', 'H', 'O']
    """
    found = re.findall(r"[A-Z][a-z]?", text or "")
    if not found:
        raise ValidationError(f"formula {text!r} names no element (expected e.g. C8H8O)")
    bad = [s for s in found if s not in _ELEMENT_SYMBOLS]
    if bad:
        raise ValidationError(f"formula {text!r}: unknown element symbol {bad[0]!r}")
    return frozenset("H" if s in ("D", "T") else s for s in found)


def formula_of(peaks: PeakList) -> str | None:
    """The ``##MOLFORM`` the file's metadata carries, if any."""
    for key, value in peaks.meta.extra.items():
        if key.strip().lower().replace("_", "") == "molform" and value.strip():
            return value.strip()
    return None


# ---------------------------------------------------------------- analysis


@dataclass(frozen=True)
class _Band:
    position: float
    intensity: float
    level: int
    broad: bool


class _Bands:
    """Bands ascending by position, looked up by window (bisection, not a scan of every band)."""

    def __init__(self, items: Iterable[_Band]) -> None:
        self.items = sorted(items, key=lambda b: b.position)
        self.positions = [b.position for b in self.items]

    def __iter__(self) -> Iterator[_Band]:
        return iter(self.items)

    def __len__(self) -> int:
        return len(self.items)

    def between(self, lo: float, hi: float) -> list[_Band]:
        """The bands with ``lo <= position <= hi``, ascending."""
        return self.items[bisect_left(self.positions, lo) : bisect_right(self.positions, hi)]


@lru_cache(maxsize=256)
def _rules_of(group: str, phase: str) -> tuple[Rule, ...]:
    """The rule rows of ``group`` that apply in ``phase``, in table order."""
    return tuple(r for r in rules() if r.group == group and r.in_phase(phase))


@lru_cache(maxsize=1)
def _air_co2_rows() -> tuple[bands.GroupFrequency, ...]:
    return tuple(row for row in bands.table() if row.id.startswith("air_co2"))


def _is_broad(p: Peak) -> bool:
    return bool(p.broad) or (math.isfinite(p.width) and p.width > bands.BROAD_WIDTH_CM1)


def _shape_ok(b: _Band, shape: str, phase: str) -> bool:
    if shape == "broad":
        return b.broad
    if shape == "sharp":
        # gas-phase rotational envelopes make every band look wide; shape says little there
        return phase == "gas" or not b.broad
    return True


def _explain(
    peaks: Sequence[Peak], prep: Sequence[str], phase: str
) -> tuple[dict[float, str], float | None]:
    """Bands that are no group's: the preparation's own bands and the C=O overtone."""
    from reflib.chem import prep as prep_mod

    explained: dict[float, str] = {}
    own = prep_mod.own_bands(prep, air=False) if prep else []
    hidden = prep_mod.regions_for(prep, air=False) if prep else []
    for p in peaks:
        for pos, inten, fwhm, token in own:
            # a weak band of the preparation explains a weak or medium band there, not a
            # strong one (the sample's amide C=O on KBr's water bend); a main band explains any
            if abs(p.position - pos) <= max(8.0, 0.5 * fwhm) and (
                inten >= 0.5 or _LEVEL[p.strength] <= _LEVEL["m"]
            ):
                explained[p.position] = f"band of the preparation ({token})"
                break
        else:
            for r in hidden:
                if r.weight <= HIDDEN_WEIGHT and r.lo <= p.position <= r.hi:
                    explained[p.position] = f"in a region the preparation spoils ({r.token})"
                    break
    for p in peaks:  # the air's CO2, weak: a purge that was not perfect
        if p.position not in explained and _LEVEL[p.strength] <= _LEVEL["w"]:
            for row in _air_co2_rows():
                if row.lo_cm1 <= p.position <= row.hi_cm1:
                    explained[p.position] = row.label
    co = _strongest_co(peaks, explained, phase)
    if co is not None:
        for p in peaks:
            if p.position in explained or _LEVEL[p.strength] > _LEVEL["m"]:
                continue
            if 2 * co - OVERTONE_BELOW_CM1 <= p.position <= 2 * co + OVERTONE_ABOVE_CM1:
                explained[p.position] = f"overtone of the C=O band (2 x {co:.0f})"
    return explained, co


def _strongest_co(peaks: Sequence[Peak], explained: dict[float, str], phase: str) -> float | None:
    rule = next(r for r in rules() if r.group == "carbonyl")
    lo, hi = rule.window(phase)
    found = [
        p
        for p in peaks
        if lo <= p.position <= hi
        and p.position not in explained
        and _LEVEL[p.strength] >= _LEVEL[CO_MIN_STRENGTH]
    ]
    return max(found, key=lambda p: p.intensity).position if found else None


def _hidden(lo: float, hi: float, prep: Sequence[str]) -> bool:
    if not prep:
        return False
    key = prep if isinstance(prep, tuple) else tuple(prep)
    return any(a <= lo and b >= hi for a, b in _hiding_regions(key))


@lru_cache(maxsize=64)
def _hiding_regions(prep: tuple[str, ...]) -> tuple[tuple[float, float], ...]:
    """(lo, hi) of the regions the preparation hides (weight at most HIDDEN_WEIGHT); the same
    for every group of an analysis, so worked out once per preparation."""
    from reflib.chem import prep as prep_mod

    return tuple(
        (r.lo, r.hi) for r in prep_mod.regions_for(prep, air=False) if r.weight <= HIDDEN_WEIGHT
    )


def analyse(
    peaks: PeakList,
    *,
    prep: Sequence[str] | str = (),
    formula: str | None = None,
    phase: str | None = None,
    covered: tuple[float, float] | None = None,
    noise: float | None = None,
    structure_ids: Iterable[str] | None = None,
) -> GroupReport:
    """Call every group of the vocabulary on a peak list (see the module notes for the rules).

    Parameters
    ----------
    peaks:
        The bands (relative intensities, strongest 1; strength words; broad flags).
    prep:
        Preparation tokens (``"nujol"``, ``"cdcl3"``...); the metadata's when empty.
    formula:
        Molecular formula (``"C8H8O"``); the metadata's ``##MOLFORM`` when None.
    phase:
        ``"gas"`` or ``"condensed"``; from the metadata when None.
    covered:
        (lo, hi) cm-1 the spectrum covers. When None, only the span of the picked bands counts
        as seen, widened by 50 cm-1 (a peak list does not say where the spectrum ended).
    noise:
        Noise level relative to the strongest band; with the weakest picked band it sets the
        detection floor below which a missing band proves nothing.
    structure_ids:
        Groups of a known structure (:func:`reflib.chem.structure.functional_groups`); their
        elements then stand for the formula.

    Example
    -------
    >>> from reflib.spectrum import PeakList
    >>> pl = PeakList([1240.0, 1745.0, 2980.0, 1050.0, 1375.0], [0.8, 1.0, 0.3, 0.5, 0.3])
    >>> analyse(pl).call("ester").call
    'present'
    """
    from reflib.chem import prep as prep_mod

    phase = bands.phase_of(peaks) if phase is None else phase
    if phase not in bands.PHASES:
        raise ValidationError(f"phase must be one of {', '.join(bands.PHASES)}; got {phase!r}")
    tokens = prep_mod.parse_tokens(prep) if prep else list(peaks.meta.prep)
    if noise is not None and not (math.isfinite(noise) and noise >= 0):
        raise ValidationError(f"noise must be a relative level >= 0, got {noise!r}")
    formula_text = formula if formula is not None else formula_of(peaks)
    elements: frozenset[str] | None = None
    formula_from = None
    if formula_text is not None:
        elements = formula_elements(formula_text)
        formula_from = "argument" if formula is not None else "metadata"
    if structure_ids is not None:
        ids = list(structure_ids)
        known = structure_elements()
        from_structure = frozenset().union(*(known.get(i, frozenset()) for i in ids)) | {"C"}
        elements = from_structure if elements is None else elements
        formula_from = formula_from or "structure"
    positions = [float(x) for x in peaks.positions]
    if covered is None:
        if positions:
            covered = (min(positions) - 50.0, max(positions) + 50.0)
        else:
            covered = (0.0, 0.0)
    floor = float(peaks.intensities.min()) if len(peaks) else 1.0
    if noise is not None:
        floor = max(floor, 3.0 * noise)
    listed = list(peaks)
    explained, co = _explain(listed, tokens, phase)
    usable = _Bands(
        _Band(p.position, p.intensity, _LEVEL[p.strength], _is_broad(p))
        for p in listed
        if p.position not in explained
    )
    # the C=O band (both branches in the gas) is the carbonyl's: no other group's evidence
    near_co = 2.0 * bands.GAS_BRANCH_CM1 if phase == "gas" else CONDENSED_TOLERANCE_CM1
    not_co = _Bands(
        b for b in usable if co is None or abs(b.position - co) > near_co or b.level < _LEVEL["m"]
    )
    prep_key = tuple(tokens)  # looked up for every rule: a tuple once, not a list each time
    calls = [
        _call_group(
            g,
            usable if g.co_class is not None or g.name == "carbonyl" else not_co,
            phase,
            prep_key,
            elements,
            covered,
            floor,
        )
        for g in vocabulary()
    ]
    by_name = {c.group: c for c in calls}
    _compete_for_co(calls)
    _cross_checks(by_name)
    _shared_evidence(calls)
    query = {
        "bands": len(peaks),
        "phase": phase,
        "prep": tokens,
        "formula": formula_text,
        "formula_from": formula_from,
        "covered_cm1": [round(covered[0], 1), round(covered[1], 1)],
        "detection_floor": round(floor, 4),
        "title": peaks.meta.title,
    }
    if co is not None:
        query["co_cm1"] = round(co, 1)
    return GroupReport(query, calls, explained, phase, elements)


#: Overtone and combination bands are weak by nature: a band stronger than this strength word
#: is not read as one (common practice, no source: an aromatic ring's 2000-1650 cm-1 pattern is
#: very weak beside the ring stretches; a weak or stronger band there is read as a C=O or C=C).
OVERTONE_MAX_STRENGTH = "vw"


def _seen(rule: Rule, usable: _Bands, phase: str) -> _Band | None:
    """The strongest band in the rule's window with the rule's strength and shape (the first
    of equals), or None."""
    lo, hi = rule.window(phase)
    low, top = rule._levels  # an overtone is weak: at most OVERTONE_MAX_STRENGTH
    best = None
    for b in usable.between(lo, hi):
        if low <= b.level <= top and _shape_ok(b, rule.shape, phase):
            if best is None or b.intensity > best.intensity:
                best = b
    return best


def _clean(
    rule: Rule,
    usable: _Bands,
    phase: str,
    prep: Sequence[str],
    covered: tuple[float, float],
    floor: float,
) -> bool:
    """True when the rule's window is visible and holds no band near the rule's strength."""
    lo, hi = rule.window(phase)
    if lo < covered[0] or hi > covered[1] or _hidden(lo, hi, prep):
        return False
    if floor > EXPECTED_AT_LEAST[rule.min_strength]:
        return False
    level = rule._levels[0] - 1
    return not any(b.level >= level for b in usable.between(lo, hi))


def _call_group(
    g: GroupDef,
    usable: _Bands,
    phase: str,
    prep: Sequence[str],
    elements: frozenset[str] | None,
    covered: tuple[float, float],
    floor: float,
) -> GroupCall:
    if elements is not None and not g.elements <= elements:
        missing = sorted(g.elements - elements)
        return GroupCall(
            g.name, "absent", 0.0, [], [f"the formula holds no {', '.join(missing)}"], True
        )
    mine = _rules_of(g.name, phase)
    evidence: list[Evidence] = []
    key_sets: dict[str, list[tuple[Rule, bool]]] = {}
    supports = 0
    n_support = 0
    for i, r in enumerate(mine):
        hit = _seen(r, usable, phase)
        evidence.append(
            Evidence(
                r.role,
                r.need,
                r.window(phase),
                hit.position if hit else None,
                hit is not None,
                hit.level if hit else -1,
            )
        )
        if r.need == "key":
            key_sets.setdefault(r.alt or f"#{i}", []).append((r, hit is not None))
        elif r.need != "clean":
            n_support += 1
            supports += hit is not None
    keys_seen = sum(any(ok for _, ok in s) for s in key_sets.values())
    keys_ok = keys_seen == len(key_sets)
    weight = 2 * len(key_sets) + n_support
    score = (2 * keys_seen + supports) / weight if weight else 0.0
    against: list[str] = []
    if keys_ok and supports >= g.min_support:
        call = "present"
        if g.confirm_elements and (elements is None or not g.confirm_elements <= elements):
            call = "possible"
            against.append(
                f"its bands fit, but only a formula holding {', '.join(sorted(g.confirm_elements))}"
                " tells it from groups absorbing in the same place"
            )
    else:
        call = "possible"
        if keys_ok:
            against.append(f"needs {g.min_support} of its supporting bands, saw {supports}")
        missing = [e.role for e in evidence if e.need == "key" and not e.seen]
        if missing:
            against.append("not seen: " + ", ".join(dict.fromkeys(missing)))
        if _absent(mine, key_sets, usable, phase, prep, covered, floor):
            call = "absent"
            score = 0.0
    if call == "absent":
        against.append("its key band's window is clean where the spectrum would show it")
    return GroupCall(g.name, call, score, evidence, against)


def _absent(
    mine: Sequence[Rule],
    key_sets: dict[str, list[tuple[Rule, bool]]],
    usable: _Bands,
    phase: str,
    prep: Sequence[str],
    covered: tuple[float, float],
    floor: float,
) -> bool:
    if not key_sets:
        return False
    for r in mine:
        if r.need in ("support+", "clean") and not _clean(r, usable, phase, prep, covered, floor):
            return False

    def set_clean(members: list[tuple[Rule, bool]]) -> bool:
        return all(_clean(r, usable, phase, prep, covered, floor) for r, _ in members)

    telling = [
        s for s in key_sets.values() if all(_LEVEL[r.min_strength] >= _LEVEL["m"] for r, _ in s)
    ]
    if any(set_clean(s) for s in telling):
        return True
    return all(set_clean(s) for s in key_sets.values())


def _co_band(call: GroupCall) -> float | None:
    for e in call.evidence:
        if e.seen and e.need == "key" and "C=O" in e.role:
            return e.cm1
    return None


def _compete_for_co(calls: list[GroupCall]) -> None:
    """One C=O band, one class: the most telling present class keeps it."""
    rank = {g.name: g.co_class for g in vocabulary() if g.co_class is not None}
    present = sorted(
        (c for c in calls if c.group in rank and c.call == "present"), key=lambda c: rank[c.group]
    )
    claimed: dict[float, str] = {}
    for c in present:
        bands_used = [e.cm1 for e in c.evidence if e.seen and "C=O" in e.role and e.cm1]
        # in the gas phase the P and R branch maxima of one C=O band are two picked bands
        taken = [
            name
            for b in bands_used
            for pos, name in claimed.items()
            if abs(b - pos) <= 2.0 * bands.GAS_BRANCH_CM1
        ]
        if taken:
            c.call = "possible"
            c.score *= 0.5
            c.against.append(f"its C=O band reads better as {taken[0]}")
            continue
        for b in bands_used:
            claimed[b] = c.group


#: Groups whose bands sit where every organic compound's C-H, ring and alkyne bands do (from
#: memory, common practice of reading spectra): a band another group called present needs is no
#: evidence for them.
MIMICKED = ("nitro", "epoxide", "amide", "amine")


def _shared_evidence(calls: list[GroupCall]) -> None:
    taken: dict[float, str] = {}
    for c in calls:
        if c.call != "present" or c.group in MIMICKED or c.group == "carbonyl":
            continue
        for e in c.evidence:
            if e.seen and e.need == "key" and e.cm1 is not None:
                taken.setdefault(e.cm1, c.group)
    defs = {g.name: g for g in vocabulary()}
    for c in calls:
        if c.group not in MIMICKED or c.call != "present":
            continue
        shared = [e for e in c.evidence if e.seen and e.cm1 in taken and e.need != "clean"]
        keys_lost = any(e.need == "key" and "C=O" not in e.role for e in shared)
        supports_left = sum(
            e.seen and e.cm1 not in taken for e in c.evidence if e.need in ("support", "support+")
        )
        if keys_lost or supports_left < defs[c.group].min_support:
            e = shared[0]
            _demote(c, f"the {e.cm1:.0f} band is the {taken[e.cm1]}'s ({e.role} needs it too)")


def _oh_seen(by_name: dict[str, GroupCall], not_at: set[float | None]) -> float | None:
    """The band an O-H group was seen with, unless it is one of ``not_at`` (an amide's N-H)."""
    for name in ("alcohol", "phenol", "carboxylic acid"):
        for e in by_name[name].evidence:
            if e.seen and "O-H" in e.role and e.cm1 not in not_at:
                return e.cm1
    return None


def _demote(c: GroupCall, why: str) -> None:
    if c.call == "present":
        c.call = "possible"
        c.score *= 0.5
        c.against.append(why)


def _cross_checks(by_name: dict[str, GroupCall]) -> None:
    """Readings that exclude each other (from memory, common practice of reading spectra)."""
    amide = by_name["amide"]
    # the bands a present amide was seen with beside its C=O: its N-H stretch and amide II
    nh = (
        {e.cm1 for e in amide.evidence if e.seen and e.need != "key"}
        if amide.call == "present"
        else set()
    )
    oh = _oh_seen(by_name, nh)
    co_class = [
        g.name for g in vocabulary() if g.co_class is not None and by_name[g.name].call == "present"
    ]
    ether = by_name["ether"]
    if oh is not None:
        _demote(ether, f"an O-H band at {oh:.0f}: the C-O band may be an alcohol's")
    if co_class:
        _demote(ether, f"the C-O band may be the {co_class[0]}'s")
    if by_name["epoxide"].call == "present":
        _demote(ether, "the C-O band may be the epoxide's")
    if by_name["C-F"].call == "present":
        _demote(ether, "C-F bands cover the C-O-C window")
        _demote(by_name["alcohol"], "C-F bands cover the C-O window")
    if by_name["carboxylic acid"].call == "present":
        _demote(by_name["alcohol"], "the O-H band is the acid's")
    if by_name["phenol"].call == "present":
        _demote(by_name["alcohol"], "the O-H band may be the phenol's")
    if by_name["aromatic"].call != "present":
        _demote(by_name["phenol"], "no aromatic ring is called present")
    if amide.call == "present":
        _demote(by_name["amine"], "the N-H band may be the amide's")
        for name in ("alcohol", "phenol", "nitro"):
            shared = [e for e in by_name[name].evidence if e.seen and e.cm1 in nh]
            if shared:
                _demote(by_name[name], f"the {shared[0].cm1:.0f} band is the amide's")
    if oh is not None:
        _demote(by_name["amine"], f"the band at {oh:.0f} may be an O-H")
    alkene = by_name["alkene"]
    aromatic = by_name["aromatic"]
    cc = next((e for e in alkene.evidence if e.role == "C=C stretch" and e.seen), None)
    ring = next((e for e in aromatic.evidence if e.role == "ring stretch near 1600"), None)
    if (
        aromatic.call == "present"
        and cc is not None
        and cc.level >= _LEVEL["m"]
        and any(e.seen for e in alkene.evidence if e.need == "key")
        and not (ring is not None and ring.seen and ring.level >= _LEVEL["m"])
    ):
        # an alkene's C=C stretch is medium or strong; an aromatic ring shows nothing of that
        # strength at 1680-1620 unless its own 1600 band is as strong (from memory)
        _demote(aromatic, f"the {cc.cm1:.0f} band reads as an alkene C=C stretch")
        alkene.against = [a for a in alkene.against if "aromatic" not in a]
        supports = sum(e.seen for e in alkene.evidence if e.need in ("support", "support+"))
        keys = all(e.seen for e in alkene.evidence if e.need == "key")
        if alkene.call == "possible" and keys and supports >= 1 and not alkene.against:
            alkene.call = "present"
    if by_name["aromatic"].call == "present" and alkene.call == "present":
        if not all(e.seen for e in alkene.evidence if e.need == "support+"):
            _demote(alkene, "aromatic ring bands cover the =C-H and C=C windows")
    if by_name["epoxide"].call == "present" and not any(
        e.seen for e in alkene.evidence if e.role == "C=C stretch"
    ):
        _demote(alkene, "the epoxide's ring C-H and ring bands cover the =C-H and wag windows")


# ---------------------------------------------------------------- labels


def _allowed_ids(report: GroupReport) -> set[str]:
    """Structure group ids a label may name: not in an absent vocabulary group and not needing
    an element the formula lacks."""
    absent = set(report.named("absent"))
    voc = _vocabulary_of()
    out = set()
    for sid, needs in structure_elements().items():
        if report.elements is not None and not needs <= report.elements:
            continue
        if voc.get(sid) in absent:
            continue
        out.add(sid)
    return out


def _label(group: str, role: str) -> str:
    """``'alkyl C-H stretch'`` rather than ``'alkyl C-H C-H stretch'``."""
    first, _, rest = role.partition(" ")
    if rest and group.split()[-1] == first:
        return f"{group} {rest}"
    return f"{group} {role}"


def _allowed_fallback(report: GroupReport, allowed: set[str]) -> set[str]:
    """Of ``allowed``, the ids a band with no evidence may be read as: a group of the
    vocabulary only when called present (a possible one is named only at its own evidence)."""
    present = set(report.named("present"))
    voc = _vocabulary_of()
    elements = report.elements if report.elements is not None else COMMON_ELEMENTS
    needs = structure_elements()
    return {
        sid
        for sid in allowed
        if (voc[sid] in present if sid in voc else needs.get(sid, frozenset()) <= elements)
    }


#: Without a formula a band with no other evidence is read only as a group of these elements:
#: a heteroatom group (S, P, Si, N-O...) from one band is the classic false label.
COMMON_ELEMENTS = frozenset({"C", "H", "O"})


def band_labels(
    peaks: PeakList,
    report: GroupReport | None = None,
    *,
    structure_ids: Iterable[str] | None = None,
    top: int = 2,
    only: Iterable[float] | None = None,
) -> list[list[str]]:
    """Labels for every band of ``peaks`` (ascending order), consistent with the analysis.

    With ``only`` (positions, cm-1, as in ``peaks``) just those bands are labelled and the
    others get ``[]``; the analysis and the corroboration still use every band.

    A band that is evidence of a group called present is labelled with that group and role; one
    that is evidence of a possible group gets a ``?``; an overtone or a band of the preparation
    says so; any other band gets the correlation table's best readings among the groups the
    analysis did not call absent (``?`` each). With ``structure_ids`` (a library reference's own
    groups, from RDKit) only those groups are named.
    """
    if report is None:
        report = analyse(peaks, structure_ids=structure_ids)
    allowed = _allowed_ids(report)
    if structure_ids is not None:
        allowed &= set(structure_ids)
        own = set(vocabulary_groups(structure_ids))
    else:
        own = None
    by_pos: dict[float, list[str]] = {}
    windows: list[tuple[float, float, str]] = []
    claimed = _claimed_bands(report, peaks)
    confirm = {g.name: g.confirm_elements for g in vocabulary()}
    for c in report.groups:
        if c.call == "absent" or (own is not None and c.group not in own):
            continue
        if confirm[c.group] and not (report.elements and confirm[c.group] <= report.elements):
            continue  # a halogen is named only when the formula (or structure) holds it
        if c.call == "possible" and _c_o_unseen(c):
            continue  # a carbonyl compound is not named from its other bands alone
        if c.call == "possible" and _keys_taken(c, claimed, report.phase):
            continue  # its key bands are a present group's (a nitro read into amide II)
        mark = "" if c.call == "present" else "?"
        for e in c.evidence:
            if e.need == "clean":
                continue
            text = _label(c.group, e.role) + mark
            if e.seen and e.cm1 is not None:
                by_pos.setdefault(e.cm1, []).append(text)
            if c.call == "present" and e.need == "key":
                windows.append((e.window[0], e.window[1], text))
    fallback = _allowed_fallback(report, allowed)
    support = [float(x) for x in peaks.positions]
    wanted = None if only is None else {float(x) for x in only}
    minor_co = _minor_co(report, top)
    salt_ok = _carboxylate_plausible(report, peaks)
    # a C=O stretch is one of a carbonyl compound's strongest bands: an overtone does not show it
    co_positions = peaks.positions[peaks.intensities >= CO_SEEN_AT_LEAST]
    out: list[list[str]] = []
    fallback_bands: list[tuple[int, Peak]] = []  # read from the correlation table, below
    for p in peaks:
        if wanted is not None and p.position not in wanted:
            out.append([])
            continue
        if p.position in report.explained:
            out.append([report.explained[p.position]])
            continue
        here = by_pos.get(p.position, [])
        found = [t for t in here if not t.endswith("?")]
        if not found:  # another branch or band of a group called present
            found = list(dict.fromkeys(t for lo, hi, t in windows if lo <= p.position <= hi))
        if not found:
            found = here
        if len(found) > 1:  # the class names the C=O better than "carbonyl"
            found = [t for t in found if not t.startswith("carbonyl ")] or found
        if found:
            out.append(minor_co(p, found[:top]))
            continue
        fallback_bands.append((len(out), p))
        out.append([])
    ranked = bands.candidates_for(
        (
            (
                p.position,
                p.strength,
                True if p.broad else None,
                p.width if math.isfinite(p.width) else None,
            )
            for _, p in fallback_bands
        ),
        top=top,
        phase=report.phase,
        groups=fallback,
        support=support,
    )
    for (k, p), cands in zip(fallback_bands, ranked):
        # an overtone or combination band is weak by nature (OVERTONE_MAX_STRENGTH)
        weak_enough_for_overtone = _LEVEL[p.strength] <= _LEVEL[OVERTONE_MAX_STRENGTH]
        cands = [
            a
            for a in cands
            if _carbonyl_seen(a.id, report.phase, co_positions)
            and (a.group != "carboxylate" or salt_ok)
            and (weak_enough_for_overtone or "overtone" not in a.label)
        ]
        best = cands[0].score if cands else 0.0
        out[k] = minor_co(p, [f"{a.short}?" for a in cands if a.score >= 0.5 * best])
    return out


#: Relative intensity below which a band in the C=O region of a spectrum whose compound has no
#: carbonyl reads as another compound's C=O: a compound's own C=O stretch is among its strongest
#: bands (from memory, any handbook correlation chart; the bound is common practice, no source).
MINOR_CO_BELOW = 0.25
MINOR_CO_LABEL = "C=O of a minor component?"


def _minor_co(report: GroupReport, top: int) -> Callable[[Any, list[str]], list[str]]:
    """A function adding :data:`MINOR_CO_LABEL` to a weak band's labels in the C=O region when
    the analysis called the carbonyl class absent (leftover starting material, an oxidised
    trace, not the compound's own group), unless the band already reads as an overtone.
    Condensed phase only (a crude; in the gas phase such weak bands are mostly overtones and
    combinations), and not when the formula given holds no oxygen."""
    no_oxygen = report.elements is not None and "O" not in report.elements
    if report.phase != "condensed" or no_oxygen or report.call("carbonyl").call != "absent":
        return lambda p, labels: labels
    lo = min(w[0] for w in _co_windows(report.phase))
    hi = max(w[1] for w in _co_windows(report.phase))

    def add(p: Any, labels: list[str]) -> list[str]:
        overtone = any("overtone" in t for t in labels)  # an aromatic's weak 1650-2000 bands
        if lo <= p.position <= hi and p.intensity < MINOR_CO_BELOW and not p.broad and not overtone:
            return [*labels[: top - 1], MINOR_CO_LABEL]
        return labels

    return add


#: A carboxylate salt's asymmetric CO2- stretch (1540-1650 cm-1) is one of the strongest bands of
#: its spectrum, and a salt shows no C=O stretch (from memory, any handbook correlation chart): a
#: band is read as a carboxylate's only beside a band this strong (relative intensity, the lower
#: bound of "s") in that window, and when the analysis found no carbonyl compound.
CARBOXYLATE_BAND_AT_LEAST = 0.45


def _carboxylate_plausible(report: GroupReport, peaks: PeakList) -> bool:
    """Whether bands may be read as a carboxylate salt's (see :data:`CARBOXYLATE_BAND_AT_LEAST`):
    an aromatic ring's 1600/1580 pair or an amide II band alone does not make a salt."""
    if report.call("carbonyl").call == "present":
        return False
    window = _row_window("carboxylate_asym", report.phase)
    if window is None:
        return False
    lo, hi = window
    pos, inten = peaks.positions, peaks.intensities
    return bool(((pos >= lo) & (pos <= hi) & (inten >= CARBOXYLATE_BAND_AT_LEAST)).any())


def _is_c_o_stretch(row: bands.GroupFrequency) -> bool:
    """Whether a table row is a C=O stretch (its ``expect`` token ``co...``, "C=O" in its
    label)."""
    return row.kind == "band" and row.expect.startswith("co") and "C=O" in row.label


@lru_cache(maxsize=4)
def _co_windows(phase: str) -> tuple[tuple[float, float], ...]:
    """The windows (cm-1) of the table's C=O stretch rows in ``phase``."""
    return tuple(
        r.range_for(phase) for r in bands.table() if r.in_phase(phase) and _is_c_o_stretch(r)
    )


@lru_cache(maxsize=16)
def _row_window(row_id: str, phase: str) -> tuple[float, float] | None:
    """The window (cm-1) of one correlation-table row in ``phase``, None if it has none there."""
    for r in bands.table():
        if r.id == row_id and r.in_phase(phase):
            return r.range_for(phase)
    return None


def _with_rules(call: GroupCall, phase: str) -> list[tuple[Rule, Evidence]]:
    """A call's evidence beside the rules it came from (``_call_group`` writes one item of
    evidence per rule of the group, in table order); empty if they do not line up."""
    rules_ = _rules_of(call.group, phase)
    return list(zip(rules_, call.evidence)) if len(rules_) == len(call.evidence) else []


def _claimed_bands(report: GroupReport, peaks: PeakList) -> set[float | None]:
    """Bands that a group called present needs: each seen band of its evidence that is the only
    band in that rule's window strong enough for it (where the window holds another, as an
    aromatic ring's 1480 beside a nitro's 1525, the band is not the present group's alone)."""
    pos = peaks.positions.tolist()  # ascending, as a PeakList keeps them
    levels = [_LEVEL[w] for w in peaks.strengths]
    out: set[float | None] = set()
    for c in report.groups:
        if c.call != "present":
            continue
        for r, e in _with_rules(c, report.phase):
            if not e.seen or e.need == "clean":
                continue
            lo, hi = e.window
            need = _LEVEL[r.min_strength]
            inside = levels[bisect_left(pos, lo) : bisect_right(pos, hi)]
            if sum(level >= need for level in inside) <= 1:
                out.add(e.cm1)
    return out


def _keys_taken(call: GroupCall, claimed: set[float | None], phase: str) -> bool:
    """Whether one of a group's key bands (one set of alternatives) was seen only at bands that
    are evidence of a group called present: a possible group is then named at none of its
    bands, since the band it needs is another group's (a nitro's asymmetric stretch read into
    an amide II band, an alcohol's O-H into an amide's N-H)."""
    key_sets: dict[str, list[Evidence]] = {}
    for i, (r, e) in enumerate(_with_rules(call, phase)):
        if r.need == "key":
            key_sets.setdefault(r.alt or f"#{i}", []).append(e)
    for members in key_sets.values():
        seen = [e.cm1 for e in members if e.seen]
        if seen and all(x in claimed for x in seen):
            return True
    return False


def _c_o_unseen(call: GroupCall) -> bool:
    """Whether a group's evidence has a C=O stretch and none of its C=O stretches is seen."""
    roles = [e for e in call.evidence if "C=O" in e.role]
    return bool(roles) and not any(e.seen for e in roles)


#: Weakest relative intensity of a band that shows a carbonyl compound's C=O stretch to
#: :func:`_carbonyl_seen` (the lower bound of "m": a very weak overtone or combination band in
#: the C=O region does not; a minor component's C=O of medium height does).
CO_SEEN_AT_LEAST = 0.2


def _carbonyl_seen(row_id: str, phase: str, positions: Any) -> bool:
    """Whether a table row other than a C=O stretch may name a band: a carbonyl compound's
    other bands (a carbonate's O-C-O, an ester's C-O, a ketone's C-C(=O)-C) only when the
    spectrum has a band where that compound's C=O stretch would be (its strongest band, the
    one that shows the class; from memory, any handbook correlation chart). ``positions`` are
    those of the bands strong enough to be one (:data:`CO_SEEN_AT_LEAST`)."""
    windows = _carbonyl_windows(phase).get(row_id)
    if windows is None:
        return True
    return any(((positions >= lo) & (positions <= hi)).any() for lo, hi in windows)


@lru_cache(maxsize=4)
def _carbonyl_windows(phase: str) -> dict[str, tuple[tuple[float, float], ...]]:
    """Row id -> the windows (cm-1, widened by the position tolerance) of the C=O stretch rows
    of the row's groups, for the rows that are not themselves a C=O stretch and belong to a
    group with one."""
    rows = [r for r in bands.table() if r.in_phase(phase)]
    by_group: dict[str, list[tuple[float, float]]] = {}
    co_rows = set()
    for r in rows:
        if _is_c_o_stretch(r):
            co_rows.add(r.id)
            lo, hi = r.range_for(phase)
            tol = bands.position_tolerance((lo + hi) / 2)
            for g in r.groups:
                by_group.setdefault(g, []).append((lo - tol, hi + tol))
    out: dict[str, tuple[tuple[float, float], ...]] = {}
    for r in rows:
        if r.id in co_rows or r.kind != "band":
            continue
        windows = [w for g in r.groups for w in by_group.get(g, [])]
        if windows:
            out[r.id] = tuple(windows)
    return out


def band_texts(peaks: PeakList, report: GroupReport | None = None, **kw: Any) -> list[str]:
    """:func:`band_labels` joined into one short text per band (``""`` when nothing fits)."""
    return ["; ".join(labels) for labels in band_labels(peaks, report, **kw)]


def labels_for(
    peaks: PeakList, *, prep: Sequence[str] = (), structure_ids: Iterable[str] | None = None
) -> dict[float, list[str]]:
    """Position -> labels, for outputs that look bands up by position (compare, mixture)."""
    report = analyse(peaks, prep=prep, structure_ids=structure_ids)
    return dict(
        zip(
            [float(x) for x in peaks.positions],
            band_labels(peaks, report, structure_ids=structure_ids),
        )
    )


def groups(
    source: Any,
    *,
    prep: Sequence[str] | str = (),
    formula: str | None = None,
    phase: str | None = None,
    noise: float | None = None,
) -> GroupReport:
    """Group analysis of a file, :class:`~reflib.spectrum.Spectrum` or peak list (the API of
    ``reflib groups``). A spectrum is picked with :func:`reflib.signal.peaks.pick_peaks`; its
    range and noise then bound what can be called absent."""
    from pathlib import Path

    from reflib.spectrum import Spectrum

    obj = source
    if isinstance(source, (str, Path)):
        from reflib.io import read_spectrum

        obj = read_spectrum(Path(source))
    covered = None
    if isinstance(obj, Spectrum):
        from reflib.signal.peaks import pick_peaks

        covered = obj.range_cm1
        peaks = pick_peaks(obj)
    elif isinstance(obj, PeakList):
        peaks = obj
    else:
        raise ValidationError(
            f"groups() takes a file, a Spectrum or a PeakList, got {type(source).__name__}"
        )
    return analyse(peaks, prep=prep, formula=formula, phase=phase, covered=covered, noise=noise)
