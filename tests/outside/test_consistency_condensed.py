"""Structure-spectrum consistency on the condensed-phase infrared files of jcamp 1.3.2.

Spectra: indene (R. J. Lancashire's test set, the same spectrum in several compressions),
2,2'-bipyridine (LABCALC.DX) and polyethylene (SPECFILE.DX) of the JCAMP-DX test files in the
jcamp 1.3.2 source distribution; peaks picked by :func:`reflib.signal.peaks.pick_peaks` at its
defaults; the files give no phase, so the condensed-phase table ranges apply. Polyethylene is
checked against dodecane, a chain segment standing in for the polymer (its groups are the same).
The wrong structures are plausible confusions a chemist could type (from memory: an alcohol, a
nitrile, an ester each show their strong bands; these spectra do not have them).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from reflib.chem.structure import check_consistency
from reflib.io import read_spectrum
from reflib.signal.peaks import pick_peaks

pytestmark = pytest.mark.outside

CORRECT = [
    ("Robert_J_Lancashire_test_data/xyinc1.jdx", "C1C=Cc2ccccc12"),  # indene
    ("Robert_J_Lancashire_test_data/fixinc2.jdx", "C1C=Cc2ccccc12"),
    ("Robert_J_Lancashire_test_data/dupinc2.jdx", "C1C=Cc2ccccc12"),
    ("jcamp-dx.org_official_test_data/LABCALC.DX", "c1ccc(nc1)-c1ccccn1"),  # 2,2'-bipyridine
    ("jcamp-dx.org_official_test_data/SPECFILE.DX", "CCCCCCCCCCCC"),  # polyethylene segment
]

WRONG = [
    ("Robert_J_Lancashire_test_data/xyinc1.jdx", "OC1CCc2ccccc12", "alcohol expected near"),
    ("jcamp-dx.org_official_test_data/LABCALC.DX", "N#Cc1ccccn1", "nitrile expected near"),
    ("jcamp-dx.org_official_test_data/LABCALC.DX", "Nc1ccccn1", "primary amine expected near"),
    ("jcamp-dx.org_official_test_data/SPECFILE.DX", "CCCCCCCCCCCO", "alcohol expected near"),
    ("jcamp-dx.org_official_test_data/SPECFILE.DX", "CCCCCCCCCC(=O)OC", "ester expected near"),
]


def _load(refdata: Path, name: str):
    spectrum = read_spectrum(refdata / name)
    return spectrum, pick_peaks(spectrum)


@pytest.mark.parametrize(("name", "smiles"), CORRECT)
def test_correct_structure_passes(refdata: Path, name: str, smiles: str) -> None:
    spectrum, peaks = _load(refdata, name)
    report = check_consistency(peaks, smiles, covered=spectrum.range_cm1)
    assert report.ok, report.warnings


@pytest.mark.parametrize(("name", "smiles", "fragment"), WRONG)
def test_wrong_structure_warns(refdata: Path, name: str, smiles: str, fragment: str) -> None:
    spectrum, peaks = _load(refdata, name)
    report = check_consistency(peaks, smiles, covered=spectrum.range_cm1)
    assert any(fragment in w for w in report.warnings), report.warnings
