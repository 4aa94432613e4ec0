"""What adding one entry computes before it writes: the checked name, the structure's
identifiers, the spectrum-against-structure warnings, the peak list, and the :class:`AddResult`.

Shared by :class:`reflib.library.core.Library` (one entry) and :mod:`reflib.library.bulk` (many).
Imports the chemistry and signal rooms, never the rest of the library package.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

from reflib.chem import prep as prep_mod
from reflib.errors import ValidationError
from reflib.spectrum import PeakList, Spectrum


@dataclass
class AddResult:
    """What :meth:`Library.add` did."""

    compound_id: int
    spectrum_id: int
    name: str
    new_compound: bool
    warnings: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {
            "compound_id": self.compound_id,
            "spectrum_id": self.spectrum_id,
            "name": self.name,
            "new_compound": self.new_compound,
            "warnings": list(self.warnings),
        }


def to_peaks(data: Spectrum | PeakList, tokens: list[str] | tuple[str, ...] = ()) -> PeakList:
    """The peak list of a spectrum (picked) or a peak list itself.

    A spectrum finer than 2 cm-1 is first blurred to the 4 cm-1 reflib compares at
    (:func:`reflib.signal.resolution.for_comparison`) and its noisy ends are cut
    (:func:`usable_part`), so that fine and coarse spectra give comparable lists. (Rotational
    contours are merged only when a gas is compared with a condensed phase, see
    :mod:`reflib.analysis.phase`: between two gas spectra the contours tell homologues apart.)
    ``tokens`` is accepted for the callers' symmetry and not used yet.
    """
    if isinstance(data, PeakList):
        return data
    if isinstance(data, Spectrum):
        from reflib.signal.peaks import pick_peaks
        from reflib.signal.resolution import for_comparison

        return pick_peaks(for_comparison(usable_part(data, tokens)))
    raise ValidationError(f"expected a Spectrum or PeakList, got {type(data).__name__}")


def quality_report(
    data: Spectrum | PeakList, peaks: PeakList, tokens: list[str] | tuple[str, ...] = ()
) -> list[dict[str, Any]] | None:
    """The quality report (:func:`reflib.signal.quality.assess`) of a spectrum as dicts; None
    for a peak list."""
    if not isinstance(data, Spectrum):
        return None
    from reflib.signal.quality import assess, to_dicts

    return to_dicts(assess(data, peaks, tokens))


def quality_warnings(
    data: Spectrum | PeakList, peaks: PeakList, tokens: list[str] | tuple[str, ...] = ()
) -> list[str]:
    """The warn and bad findings of the quality report as warning lines."""
    found = quality_report(data, peaks, tokens) or []
    return [f"quality ({q['check']}): {q['message']}" for q in found if q["severity"] != "info"]


def usable_part(data: Spectrum, tokens: list[str] | tuple[str, ...] = ()) -> Spectrum:
    """The spectrum without noisy ends (:func:`reflib.signal.quality.usable_range`): a window or
    detector cutting off leaves noise that the picker would list as bands. An end that the
    preparation already masks (a window's cut-off, an opaque solvent region) is left to the
    mask."""
    from reflib.signal.quality import usable_range

    lo, hi = usable_range(data)
    if (lo, hi) == data.range_cm1:
        return data
    spoiled = prep_mod.merged_regions(list(tokens), air=False)
    x0, x1 = data.range_cm1
    if lo > x0 and any(a <= lo and b >= x0 for a, b, _ in spoiled):
        lo = x0
    if hi < x1 and any(a <= x1 and b >= hi for a, b, _ in spoiled):
        hi = x1
    if (lo, hi) == data.range_cm1:
        return data
    keep = (data.x >= lo) & (data.x <= hi)
    return replace(data, x=data.x[keep], y=data.y[keep])


def data_range(data: Spectrum | PeakList) -> tuple[float | None, float | None]:
    """The wavenumber range (cm-1) a spectrum covers; (None, None) for a peak list."""
    if isinstance(data, Spectrum):
        return data.range_cm1
    return (None, None)


def consistency_warnings(
    data: Spectrum | PeakList, peaks: PeakList, smiles: str, tokens: list[str], *, strict: bool
) -> list[str]:
    """Warnings where the spectrum contradicts the structure; with ``strict`` they refuse."""
    from reflib.chem import structure

    masked = [(lo, hi) for lo, hi, _ in prep_mod.merged_regions(tokens, air=False)]
    lo, hi = data_range(data)
    covered = (lo, hi) if lo is not None else None
    phase = "gas" if "gas" in tokens else None
    checked = PeakList(
        peaks.positions,
        peaks.intensities,
        peaks.widths,
        peaks.strengths,
        peaks.broad,
        peaks.shoulder,
        meta=replace(peaks.meta, prep=list(tokens)),
    )
    report = structure.check_consistency(
        checked, smiles, masked=masked, covered=covered, phase=phase
    )
    if strict and report.warnings:
        raise ValidationError(
            "refused (--strict): the spectrum contradicts the structure: "
            + "; ".join(report.warnings)
        )
    return list(report.warnings)


def clean_name(name: str) -> str:
    if name is None or not str(name).strip():
        raise ValidationError("a compound needs a name (--name)")
    name = " ".join(str(name).split())
    if len(name) > 200:
        raise ValidationError(f"name is {len(name)} characters long; at most 200")
    return name


def structure_ids(smiles: str) -> dict[str, Any]:
    """Canonical SMILES, formula and InChIKey (RDKit); a clear error for an invalid SMILES."""
    from reflib.chem import structure

    st = structure.parse_smiles(smiles)
    return {
        "smiles": smiles,
        "canonical_smiles": st.canonical_smiles,
        "formula": st.formula,
        "inchikey": st.inchikey,
    }
