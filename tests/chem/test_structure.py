"""reflib.chem.structure: SMILES parsing, group detection and the consistency check.

Peak lists here are written from memory as a chemist would type them (textbook band positions
of the named compound); the real spectra are checked in tests/outside/.
"""

from __future__ import annotations

import subprocess
import sys

import pytest

from reflib.chem.structure import (
    ConsistencyReport,
    check_consistency,
    functional_groups,
    parse_smiles,
)
from reflib.errors import ValidationError
from reflib.spectrum import Metadata, PeakList


def test_parse_smiles_canonicalises_and_gives_formula_and_inchikey() -> None:
    """InChIKeys of ethanol and acetone (from memory; they are the standard published keys)."""
    a, b = parse_smiles("OCC"), parse_smiles("CCO")
    assert a.canonical_smiles == b.canonical_smiles == "CCO"
    assert a.formula == "C2H6O"
    assert a.inchikey == b.inchikey == "LFQSCWFLJHTTHZ-UHFFFAOYSA-N"
    assert parse_smiles("CC(=O)C").inchikey == "CSCPPACGZOOCGX-UHFFFAOYSA-N"
    assert parse_smiles(" CCO ").to_dict()["smiles"] == "CCO"


@pytest.mark.parametrize("bad", ["C1CC(", "Cx", "C(C)(C)(C)(C)C", "", "   "])
def test_invalid_smiles_is_a_clear_error_and_rdkit_stays_quiet(bad: str, capfd) -> None:
    with pytest.raises(ValidationError) as err:
        parse_smiles(bad)
    assert "SMILES" in str(err.value)
    assert capfd.readouterr().err == ""


def test_valence_error_says_what_is_wrong() -> None:
    with pytest.raises(ValidationError, match="valence"):
        parse_smiles("C(C)(C)(C)(C)C")


def test_functional_groups_accepts_a_mol() -> None:
    from rdkit import Chem

    assert functional_groups(Chem.MolFromSmiles("CC#N")) == functional_groups("CC#N")


def test_importing_the_module_does_not_import_rdkit() -> None:
    code = "import sys, reflib.chem.structure; print('rdkit' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


# Benzonitrile as typed from memory: aromatic C-H, C#N near 2229, ring 1600/1490, oop 758/688.
BENZONITRILE = PeakList(
    [688.0, 758.0, 1448.0, 1491.0, 1598.0, 2229.0, 3068.0],
    [0.6, 1.0, 0.5, 0.5, 0.3, 0.55, 0.15],
)


def test_correct_structure_passes() -> None:
    report = check_consistency(BENZONITRILE, "N#Cc1ccccc1")
    assert report.ok, report.warnings
    assert {c["group"] for c in report.checks} >= {"nitrile", "aromatic"}


def test_missing_expected_band_is_named_with_its_range() -> None:
    no_cn = PeakList(
        [688.0, 758.0, 1448.0, 1491.0, 1598.0, 3068.0], [0.6, 1.0, 0.5, 0.5, 0.3, 0.15]
    )
    report = check_consistency(no_cn, "N#Cc1ccccc1")
    assert not report.ok
    assert report.warnings == [
        "nitrile expected near 2260-2210 cm-1 (nitrile C#N stretch): nothing above noise"
    ]


def test_unexplained_strong_band_is_named() -> None:
    extra = PeakList(
        list(BENZONITRILE.positions) + [1770.0], list(BENZONITRILE.intensities) + [0.8]
    )
    report = check_consistency(extra, "N#Cc1ccccc1")
    assert len(report.warnings) == 1
    assert report.warnings[0].startswith(
        "strong band at 1770 cm-1: no group in this structure explains it"
    )


def test_masked_ranges_hide_bands_and_expectations() -> None:
    extra = PeakList(
        list(BENZONITRILE.positions) + [1770.0], list(BENZONITRILE.intensities) + [0.8]
    )
    assert check_consistency(extra, "N#Cc1ccccc1", masked=[(1750.0, 1790.0)]).ok
    no_cn = PeakList([688.0, 758.0, 1491.0, 1598.0, 3068.0], [0.6, 1.0, 0.5, 0.3, 0.15])
    report = check_consistency(no_cn, "N#Cc1ccccc1", masked=[(2150.0, 2350.0)])
    assert report.ok
    assert any("not judged" in n for n in report.notes)


def test_symmetric_internal_alkyne_without_cc_band_gives_no_warning() -> None:
    """Diphenylacetylene shows no C#C stretch in the IR (symmetric; common practice)."""
    tolan = PeakList([690.0, 755.0, 1443.0, 1495.0, 1600.0, 3060.0], [0.8, 1.0, 0.4, 0.6, 0.2, 0.2])
    assert check_consistency(tolan, "C(#Cc1ccccc1)c1ccccc1").ok


def test_far_range_c_cl_is_not_required() -> None:
    """1-Chlorobutane on CaF2 windows: no light below about 1000 cm-1, so no C-Cl band seen."""
    pl = PeakList([1290.0, 1380.0, 1465.0, 2875.0, 2935.0, 2962.0], [0.3, 0.3, 0.4, 0.5, 0.8, 1.0])
    report = check_consistency(pl, "CCCCCl", covered=(1000.0, 4000.0))
    assert report.ok, report.warnings


def test_expected_band_outside_the_covered_range_is_not_judged() -> None:
    """Ethylene oxide's ring band (950-810) cannot be seen through CaF2 windows."""
    pl = PeakList([1270.0, 1470.0, 3005.0, 3065.0], [1.0, 0.4, 0.5, 0.4])
    assert not check_consistency(pl, "C1CO1").ok
    assert check_consistency(pl, "C1CO1", covered=(1000.0, 4000.0)).ok


def test_air_co2_is_noted_not_warned() -> None:
    pl = PeakList(list(BENZONITRILE.positions) + [2349.0], list(BENZONITRILE.intensities) + [0.9])
    report = check_consistency(pl, "N#Cc1ccccc1")
    assert report.ok
    assert any("CO2" in n for n in report.notes)


def test_preparation_bands_from_metadata_are_noted() -> None:
    """Mineral-oil C-H near 2924 in a mull of benzonitrile-like solid (common practice)."""
    pl = PeakList(
        list(BENZONITRILE.positions) + [2924.0],
        list(BENZONITRILE.intensities) + [0.9],
        meta=Metadata(prep=["nujol"]),
    )
    report = check_consistency(pl, "N#Cc1ccccc1")
    assert report.ok
    unmulled = PeakList(
        list(BENZONITRILE.positions) + [2924.0], list(BENZONITRILE.intensities) + [0.9]
    )
    assert not check_consistency(unmulled, "N#Cc1ccccc1").ok


def test_deuterated_solvent_structure_expects_cd() -> None:
    """CDCl3: C-D stretch near 2250 (common practice, no source)."""
    pl = PeakList([750.0, 910.0, 2253.0], [1.0, 0.5, 0.1])
    report = check_consistency(pl, "[2H]C(Cl)(Cl)Cl")
    assert report.ok
    assert any(c["group"] == "c_deuterium" and c["seen_cm1"] for c in report.checks)
    no_cd = PeakList([750.0, 910.0], [1.0, 0.5])
    assert not check_consistency(no_cd, "[2H]C(Cl)(Cl)Cl").ok


def test_report_to_dict() -> None:
    d = check_consistency(BENZONITRILE, "c1ccc(cc1)C#N").to_dict()
    assert d["ok"] is True and d["smiles"] == "N#Cc1ccccc1"
    assert set(d) == {"smiles", "groups", "ok", "warnings", "notes", "checks"}
    assert isinstance(ConsistencyReport("C", []).ok, bool)


@pytest.mark.parametrize(
    "kwargs",
    [
        {"masked": [(2000.0, 1000.0)]},
        {"masked": ["oops"]},
        {"covered": (4000.0, 400.0)},
        {"phase": "plasma"},
        {"strong": "huge"},
    ],
)
def test_bad_options_are_validation_errors(kwargs) -> None:
    with pytest.raises(ValidationError):
        check_consistency(BENZONITRILE, "N#Cc1ccccc1", **kwargs)


def test_invalid_smiles_in_the_check_is_a_validation_error() -> None:
    with pytest.raises(ValidationError, match="SMILES"):
        check_consistency(BENZONITRILE, "N#Cc1cccc")


def test_an_overtone_does_not_stand_in_for_a_strong_expected_band() -> None:
    """Acetone-like list with a very weak C=O overtone near 3430 (from memory): read as an
    alcohol, the O-H is reported as only very weak."""
    pl = PeakList([1217.0, 1365.0, 1715.0, 2970.0, 3430.0], [0.7, 0.6, 1.0, 0.3, 0.03])
    report = check_consistency(pl, "CC(C)O")
    assert any("only very weak bands (3430 cm-1)" in w for w in report.warnings)


def test_gas_phase_branches_of_one_band_give_one_warning() -> None:
    """P and R branch maxima about 20 cm-1 apart (gas) are one unexplained band."""
    pl = PeakList(
        [1033.0, 1729.0, 1739.0, 2970.0, 3680.0],
        [0.9, 0.8, 1.0, 0.4, 0.2],
        meta=Metadata(state="gas"),
    )
    report = check_consistency(pl, "CO")
    unexplained = [w for w in report.warnings if w.startswith("strong band")]
    assert len(unexplained) == 1
    assert unexplained[0].startswith(
        "strong band at 1739 cm-1 (with 1729): no group in this structure explains it"
    )
