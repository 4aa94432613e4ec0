"""Structures (SMILES via RDKit), their functional groups, and structure-spectrum consistency.

RDKit is imported inside the functions, so ``import reflib.chem.structure`` stays cheap.

* :func:`parse_smiles` gives a :class:`Structure`: canonical SMILES, formula, InChIKey.
* :func:`functional_groups` finds groups with the SMARTS of ``reflib/data/functional_groups.csv``;
  the group ids are those of the correlation table (:mod:`reflib.chem.bands`). The SMARTS are
  written
  so that groups exclude one another where a chemist would: an ester is not also a ketone or an
  ether, a carboxylic acid is not an alcohol, an amide is not an amine.
* :func:`check_consistency` compares a peak list with a structure: each group's expected bands
  should be present above noise, and no strong band of the functional-group region should be
  left unexplained by the structure's groups.
"""

from __future__ import annotations

import csv
from collections.abc import Iterable, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from typing import Any

from reflib.chem import bands
from reflib.errors import ValidationError
from reflib.spectrum import STRENGTH_WORDS, PeakList

GROUPS_FILE = "functional_groups.csv"

#: Strong bands below this wavenumber (cm-1) are not checked for an explanation: the
#: fingerprint region holds skeletal bands of every compound that no group table explains.
EXPLAIN_ABOVE_CM1 = 1500.0
#: Gas phase: a line narrower than this (FWHM, cm-1) is resolved rotational structure, not a band.
GAS_LINE_FWHM_CM1 = 3.0
#: Gas phase: how far (cm-1) the rotational sub-bands of one vibration may reach from its centre.
#: Perpendicular bands of symmetric tops carry K sub-bands spaced about 2(A(1 - zeta) - B); for a
#: methyl group (A near 5 cm-1) they spread a band over some +-60 cm-1 (from memory).
GAS_ROTATION_SPREAD_CM1 = 70.0
#: An expected band the table calls strong counts only from this relative intensity up (the
#: lower edge of the strength word "w"): a very weak band there (an overtone) does not stand in.
STRONG_ROW_MIN = STRENGTH_WORDS["w"][0]
#: Wavenumber range (cm-1) assumed covered by a spectrum when the caller does not say.
DEFAULT_COVERED_CM1 = (650.0, 4000.0)


@dataclass(frozen=True)
class Structure:
    """A parsed structure: the SMILES as given, RDKit's canonical SMILES, formula and InChIKey."""

    smiles: str
    canonical_smiles: str
    formula: str
    inchikey: str

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class GroupPattern:
    """One SMARTS of a functional group (a group may have several; any match counts)."""

    group: str
    label: str
    smarts: str
    notes: str


@contextmanager
def _quiet_rdkit():
    from rdkit import RDLogger

    RDLogger.DisableLog("rdApp.*")
    try:
        yield
    finally:
        RDLogger.EnableLog("rdApp.*")


def _mol_from_smiles(smiles: str):
    from rdkit import Chem

    if not isinstance(smiles, str) or not smiles.strip():
        raise ValidationError(f"expected a SMILES string, got {smiles!r}")
    text = smiles.strip()
    with _quiet_rdkit():
        mol = Chem.MolFromSmiles(text)
        if mol is None:
            raw = Chem.MolFromSmiles(text, sanitize=False)
            if raw is None:
                raise ValidationError(
                    f"invalid SMILES {text!r}: cannot be parsed (check brackets, ring-closure "
                    "digits and element symbols)"
                )
            try:
                Chem.SanitizeMol(raw)
            except Exception as exc:  # RDKit raises its own sanitization exceptions
                raise ValidationError(f"invalid SMILES {text!r}: {exc}") from None
            raise ValidationError(f"invalid SMILES {text!r}")  # pragma: no cover
    if mol.GetNumAtoms() == 0:
        raise ValidationError(f"SMILES {text!r} holds no atoms")
    return mol


def parse_smiles(smiles: str) -> Structure:
    """Parse a SMILES string; invalid input is a :class:`~reflib.errors.ValidationError`.

    Example
    -------
    >>> s = parse_smiles("CC(=O)C")
    >>> s.canonical_smiles, s.formula, s.inchikey
    ('CC(C)=O', 'C3H6O', 'CSCPPACGZOOCGX-UHFFFAOYSA-N')
    """
    from rdkit import Chem
    from rdkit.Chem import inchi
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    mol = _mol_from_smiles(smiles)
    with _quiet_rdkit():
        key = inchi.MolToInchiKey(mol) or ""
    return Structure(
        smiles=smiles.strip(),
        canonical_smiles=Chem.MolToSmiles(mol),
        formula=CalcMolFormula(mol),
        inchikey=key,
    )


@lru_cache(maxsize=1)
def group_patterns() -> tuple[GroupPattern, ...]:
    """The SMARTS table shipped with reflib (loaded on first call)."""
    text = resources.files("reflib").joinpath("data", GROUPS_FILE).read_text(encoding="utf-8")
    out = []
    for line, row in enumerate(csv.DictReader(text.splitlines()), start=2):
        if None in row or any(v is None for v in row.values()):
            raise ValidationError("wrong number of columns", path=GROUPS_FILE, line=line)
        out.append(GroupPattern(row["group"], row["label"], row["smarts"], row["notes"]))
    return tuple(out)


@lru_cache(maxsize=1)
def _compiled() -> tuple[tuple[str, Any], ...]:
    from rdkit import Chem

    out = []
    for p in group_patterns():
        q = Chem.MolFromSmarts(p.smarts)
        if q is None:
            raise ValidationError(f"bad SMARTS for {p.group}: {p.smarts!r}", path=GROUPS_FILE)
        out.append((p.group, q))
    return tuple(out)


def group_label(group: str) -> str:
    """Human name of a functional-group id, e.g. ``'nitrile'``; the id itself if unknown."""
    for p in group_patterns():
        if p.group == group:
            return p.label
    return group


def functional_groups(smiles_or_mol: Any) -> list[str]:
    """Functional-group ids present in a structure (SMILES string or RDKit Mol), table order.

    >>> functional_groups("CCOC(C)=O")
    ['alkyl_ch', 'ester']
    """
    mol = _mol_from_smiles(smiles_or_mol) if isinstance(smiles_or_mol, str) else smiles_or_mol
    found: list[str] = []
    for group, query in _compiled():
        if group not in found and mol.HasSubstructMatch(query):
            found.append(group)
    return found


@dataclass
class ConsistencyReport:
    """Outcome of :func:`check_consistency`.

    ``warnings`` are the contradictions (empty when the spectrum fits the structure); ``notes``
    are remarks that are not contradictions (a band of the air, a check that could not be made);
    ``checks`` lists every expected band judged, with what was seen.
    """

    smiles: str
    groups: list[str]
    warnings: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    checks: list[dict[str, Any]] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return not self.warnings

    def to_dict(self) -> dict[str, Any]:
        return {
            "smiles": self.smiles,
            "groups": list(self.groups),
            "ok": self.ok,
            "warnings": list(self.warnings),
            "notes": list(self.notes),
            "checks": list(self.checks),
        }


def _check_ranges(name: str, ranges: Iterable[Sequence[float]] | None) -> list[tuple[float, float]]:
    out = []
    for r in ranges or ():
        try:
            lo, hi = (float(v) for v in r)
        except (TypeError, ValueError):
            raise ValidationError(f"{name} must be (lo, hi) pairs in cm-1, got {r!r}") from None
        if not lo < hi:
            raise ValidationError(f"{name} range must have lo < hi, got {lo:g}-{hi:g} cm-1")
        out.append((lo, hi))
    return out


def _inside(x: float, ranges: Sequence[tuple[float, float]]) -> bool:
    return any(lo <= x <= hi for lo, hi in ranges)


def _fully_masked(lo: float, hi: float, masked: Sequence[tuple[float, float]]) -> bool:
    return any(m_lo <= lo and hi <= m_hi for m_lo, m_hi in masked)


def _fmt_range(lo: float, hi: float) -> str:
    return f"{hi:.0f}-{lo:.0f}"


def check_consistency(
    peaks: PeakList,
    smiles: str,
    *,
    masked: Iterable[Sequence[float]] | None = None,
    phase: str | None = None,
    covered: Sequence[float] | None = None,
    strong: str = "s",
    explain_above: float = EXPLAIN_ABOVE_CM1,
) -> ConsistencyReport:
    """Does a peak list fit a structure?

    Two checks, both by the correlation table of :mod:`reflib.chem.bands`:

    1. every group the structure has should show its expected bands (rows with an ``expect``
       token; groups whose bands may legitimately be weak or absent, such as a symmetric
       internal alkyne or the far-range C-Cl stretch, have none): a band of the peak list within
       the range, widened by :func:`reflib.chem.bands.position_tolerance`, counts (for a band the
       table calls strong, only from :data:`STRONG_ROW_MIN` up). The peak list holds only bands
       above noise, so "nothing in range" means nothing above noise. In the gas phase the bands
       of hydrogen-bonded forms are not expected.
    2. every strong band (strength ``strong`` or stronger) above ``explain_above`` cm-1 should
       fall in a range of one of the structure's groups (ranges of bands the table calls weak,
       such as aromatic overtones, do not count). Bands of the air (CO2, water vapour)
       and of the preparation tokens in ``peaks.meta.prep`` are noted, not warned about (weak
       artefacts such as water-vapour lines explain no strong band). In the gas phase a line
       narrower than :data:`GAS_LINE_FWHM_CM1` within :data:`GAS_ROTATION_SPREAD_CM1` of a
       range of the structure is read as rotational structure and noted.

    Parameters
    ----------
    peaks:
        The spectrum's peak list (positions cm-1).
    smiles:
        The structure claimed for it.
    masked:
        (lo, hi) ranges in cm-1 that the preparation spoils; bands inside are ignored and an
        expected band lying wholly inside is not judged.
    phase:
        ``"condensed"`` or ``"gas"``; default from the peak list's metadata.
    covered:
        (lo, hi) in cm-1 the spectrum covers; expected bands outside are not judged.
        Default :data:`DEFAULT_COVERED_CM1`, widened to the peak list's own extent.
    strong:
        The weakest strength word counted as strong for check 2.

    Example
    -------
    >>> pl = PeakList([1365.0, 1715.0, 2970.0], [0.4, 1.0, 0.3])
    >>> check_consistency(pl, "CC(C)=O").ok
    True
    >>> for w in check_consistency(pl, "CCO").warnings:
    ...     print(w.split(" (")[0])
    alcohol expected near 3650-3200 cm-1
    alcohol expected near 1260-1000 cm-1
    strong band at 1715 cm-1: no group in this structure explains it
    """
    if strong not in STRENGTH_WORDS:
        raise ValidationError(
            f"unknown strength word {strong!r}; expected one of {', '.join(STRENGTH_WORDS)}"
        )
    masked_r = _check_ranges("masked", masked)
    phase = bands.phase_of(peaks) if phase is None else phase
    if phase not in bands.PHASES:
        raise ValidationError(f"phase must be one of {', '.join(bands.PHASES)}; got {phase!r}")
    if covered is None:
        lo_c, hi_c = DEFAULT_COVERED_CM1
        if len(peaks):
            lo_c = min(lo_c, float(peaks.positions[0]))
            hi_c = max(hi_c, float(peaks.positions[-1]))
    else:
        ((lo_c, hi_c),) = _check_ranges("covered", [covered])
    structure = parse_smiles(smiles)
    groups = functional_groups(structure.smiles)
    report = ConsistencyReport(smiles=structure.canonical_smiles, groups=groups)
    positions = [float(p) for p in peaks.positions]
    intensities = [float(v) for v in peaks.intensities]

    # 1. expected bands
    for group in groups:
        by_token: dict[str, list[bands.GroupFrequency]] = {}
        for row in bands.rows_for_groups([group]):
            if row.expect and row.kind != "artefact" and row.in_phase(phase):
                by_token.setdefault(row.expect, []).append(row)
        for token, rows in by_token.items():
            judged = []
            for row in rows:
                lo, hi = row.range_for(phase)
                if hi < lo_c or lo > hi_c or _fully_masked(lo, hi, masked_r):
                    continue
                judged.append((row, lo, hi))
            labels = " or ".join(dict.fromkeys(r.label for r in rows))
            if not judged:
                report.notes.append(
                    f"{group_label(group)}: {labels} not judged (outside the covered range "
                    "or masked)"
                )
                continue
            in_range = [
                (x, inten)
                for x, inten in zip(positions, intensities)
                if not _inside(x, masked_r)
                and any(
                    lo - bands.position_tolerance(x) <= x <= hi + bands.position_tolerance(x)
                    for _r, lo, hi in judged
                )
            ]
            # a band the table calls strong must not be merely very weak
            need = max((STRONG_ROW_MIN if r.strength == "s" else 0.0) for r, _lo, _hi in judged)
            seen = [x for x, inten in in_range if inten >= need]
            lo_all = min(lo for _r, lo, _h in judged)
            hi_all = max(hi for _r, _l, hi in judged)
            report.checks.append(
                {
                    "group": group,
                    "expect": token,
                    "range_cm1": [round(lo_all, 1), round(hi_all, 1)],
                    "seen_cm1": [round(x, 1) for x in seen],
                }
            )
            if not seen:
                found = (
                    "only very weak bands ("
                    + ", ".join(f"{x:.0f}" for x, _i in in_range)
                    + " cm-1)"
                    if in_range
                    else "nothing above noise"
                )
                report.warnings.append(
                    f"{group_label(group)} expected near {_fmt_range(lo_all, hi_all)} cm-1 "
                    f"({labels}): {found}"
                )

    # 2. strong bands left unexplained
    threshold = STRENGTH_WORDS[strong][0]
    rows = bands.rows_for_groups(groups)
    prep = set(peaks.meta.prep)
    unexplained: list[tuple[float, str]] = []
    intensity_at = dict(zip(positions, intensities))
    for p in peaks.descending():
        if p.intensity < threshold or p.position < explain_above or _inside(p.position, masked_r):
            continue
        tol = bands.position_tolerance(p.position)
        # a weak band of the table (overtones, weak wags) never explains a strong one
        ranges = [r.range_for(phase) for r in rows if r.strength != "w"]
        if any(lo - tol <= p.position <= hi + tol for lo, hi in ranges):
            continue
        if (
            phase == "gas"
            and p.width <= GAS_LINE_FWHM_CM1
            and any(
                lo - GAS_ROTATION_SPREAD_CM1 <= p.position <= hi + GAS_ROTATION_SPREAD_CM1
                for lo, hi in ranges
            )
        ):
            report.notes.append(
                f"line at {p.position:.0f} cm-1 (FWHM {p.width:.1f} cm-1) read as rotational "
                "structure of a nearby band of this structure"
            )
            continue
        artefact = next(
            (
                r
                for r in bands.table()
                if r.kind == "artefact"
                and r.strength != "w"
                and (r.prep == "air" or r.prep in prep)
                and r.lo_cm1 - tol <= p.position <= r.hi_cm1 + tol
            ),
            None,
        )
        if artefact is not None:
            report.notes.append(f"band at {p.position:.0f} cm-1 may be {artefact.label}")
            continue
        others = bands.candidates(
            p.position, strength=p.strength, broad=p.broad, phase=phase, top=2
        )
        hint = "; ".join(a.short for a in others)
        unexplained.append((p.position, hint))
    # In the gas phase the P and R branch maxima of one band are two picked bands: one warning.
    merge_within = 2.0 * bands.GAS_BRANCH_CM1 if phase == "gas" else 0.0
    groups_of_bands: list[list[tuple[float, str]]] = []
    for pos, hint in unexplained:  # high to low wavenumber
        if groups_of_bands and groups_of_bands[-1][-1][0] - pos <= merge_within:
            groups_of_bands[-1].append((pos, hint))
        else:
            groups_of_bands.append([(pos, hint)])
    for members in groups_of_bands:
        pos, hint = max(members, key=lambda m: intensity_at[m[0]])
        also = [f"{m[0]:.0f}" for m in members if m[0] != pos]
        report.warnings.append(
            f"strong band at {pos:.0f} cm-1"
            + (f" (with {', '.join(also)})" if also else "")
            + ": no group in this structure explains it"
            + (f" (could be: {hint})" if hint else "")
        )
    return report


# --- structure filters (search and list restricted by group or substructure) ------------------


def group_ids() -> tuple[str, ...]:
    """Every functional-group id of the SMARTS table, table order."""
    return tuple(dict.fromkeys(p.group for p in group_patterns()))


def check_group(group: str) -> str:
    """``group`` if it is a functional-group id of the table, else a ValidationError naming
    them."""
    g = str(group or "").strip().lower()
    if g not in group_ids():
        raise ValidationError(f"unknown group {group!r}; use one of: {', '.join(group_ids())}")
    return g


@lru_cache(maxsize=256)
def compile_smarts(pattern: str) -> Any:
    """A SMARTS query, or a ValidationError for a pattern RDKit cannot read."""
    from rdkit import Chem

    text = str(pattern or "").strip()
    if not text:
        raise ValidationError("expected a SMARTS pattern, got nothing")
    with _quiet_rdkit():
        q = Chem.MolFromSmarts(text)
    if q is None:
        raise ValidationError(f"invalid SMARTS {text!r}: RDKit cannot parse it")
    return q


@lru_cache(maxsize=65536)
def _groups_of(smiles: str) -> frozenset[str]:
    return frozenset(functional_groups(smiles))


def has_group(smiles: str, group: str) -> bool:
    """True when the structure holds the functional group (table id), as
    :func:`functional_groups` finds it. Results are cached per SMILES."""
    return group in _groups_of(smiles)


@lru_cache(maxsize=65536)
def _matches(smiles: str, pattern: str) -> bool:
    return bool(_mol_from_smiles(smiles).HasSubstructMatch(compile_smarts(pattern)))


def matches_smarts(smiles: str, pattern: str) -> bool:
    """True when the structure holds the SMARTS substructure (cached per SMILES and pattern)."""
    return _matches(smiles, pattern)
