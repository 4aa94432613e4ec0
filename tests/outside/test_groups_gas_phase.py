"""Group analysis on the real gas-phase infrared spectra of jcamp 1.3.2 (fixture ``gas_phase``).

Each compound's structure is written below as SMILES (from memory; the names are the files'
titles). The truth per group comes from RDKit SMARTS (:func:`reflib.chem.structure.
functional_groups`, mapped to the vocabulary by :func:`reflib.chem.groups.vocabulary_groups`).
Two files hold no single named compound (``example_compound_file``: two untitled blocks;
``example_multiline_datasets``: a reader test) and are left out: 66 of the 68 files are scored.

Peaks are picked at :func:`reflib.signal.peaks.pick_peaks` defaults; the formula is the file's
``##MOLFORM`` when it has one (as ``reflib groups FILE`` reads it). The rules come from handbook
knowledge (``reflib/data/group_rules.csv``, each row with its source), not from these spectra.
Published anchors for comparison: F1 above 0.7 for 17 groups from machine-learned classifiers on
gas-phase spectra (J. Cheminform. 2025, 17, 24).
"""

from __future__ import annotations

from functools import cache
from pathlib import Path

import pytest

from reflib.chem import groups
from reflib.chem.structure import functional_groups
from reflib.io import read_spectrum
from reflib.signal.peaks import pick_peaks
from reflib.spectrum import PeakList

pytestmark = pytest.mark.outside

# file stem -> SMILES (from memory)
STRUCTURES = {
    "1,1,1-trichloroethane": "CC(Cl)(Cl)Cl",
    "1,1-dichloroethene": "C=C(Cl)Cl",
    "1,2-dichloroethane": "ClCCCl",
    "1,2-dimethylbenzene": "Cc1ccccc1C",
    "1,3-butadiene": "C=CC=C",
    "1,3-dimethylbenzene": "Cc1cccc(C)c1",
    "1,4-dimethylbenzene": "Cc1ccc(C)cc1",
    "1-butanol": "CCCCO",
    "1-butene": "C=CCC",
    "2-butanone": "CCC(C)=O",
    "acetone": "CC(C)=O",
    "acetonitrile": "CC#N",
    "acrylonitrile": "C=CC#N",
    "ammonia": "N",
    "benzene": "c1ccccc1",
    "butadiene": "C=CC=C",
    "butane": "CCCC",
    "carbon dioxide": "O=C=O",
    "carbon monoxide": "[C-]#[O+]",
    "carbon tetrafluoride": "FC(F)(F)F",
    "chlorobenzene": "Clc1ccccc1",
    "chloroform": "ClC(Cl)Cl",
    "cis-butene": "C/C=C\\C",
    "dichlorodifluoromethane": "FC(F)(Cl)Cl",
    "dichloromethane": "ClCCl",
    "ethane": "CC",
    "ethanol": "CCO",
    "ethanol2": "CCO",
    "ethyl acetate": "CCOC(C)=O",
    "ethyl acrylate": "C=CC(=O)OCC",
    "ethyl benzene": "CCc1ccccc1",
    "ethyl tert-butyl ether": "CCOC(C)(C)C",
    "ethylene oxide": "C1CO1",
    "ethylene": "C=C",
    "heptane-2,3-dimethylpentane": "CCC(C)C(C)C",
    "hexafluoroethane": "FC(F)(F)C(F)(F)F",
    "hydrogen sulfide": "S",
    "iso-butane": "CC(C)C",
    "iso-butylene": "C=C(C)C",
    "iso-pentane": "CCC(C)C",
    "isopropanol_ASDF": "CC(C)O",
    "isopropyl alcohol": "CC(C)O",
    "m-xylene": "Cc1cccc(C)c1",
    "methane": "C",
    "methanol": "CO",
    "methyl bromide": "CBr",
    "methyl tert-butyl ether": "COC(C)(C)C",
    "methyl_iodide": "CI",
    "n-butane": "CCCC",
    "n-heptane": "CCCCCCC",
    "n-pentane": "CCCCC",
    "neo-pentane": "CC(C)(C)C",
    "ozone": "[O-][O+]=O",
    "p-xylene": "Cc1ccc(C)cc1",
    "penta fluoroethane": "FC(F)C(F)(F)F",
    "propane": "CCC",
    "propylene oxide": "CC1CO1",
    "propylene": "C=CC",
    "sulfur dioxide": "O=S=O",
    "sulphur hexafluoride": "FS(F)(F)(F)(F)F",
    "tetrachloroethene": "ClC(Cl)=C(Cl)Cl",
    "toluene": "Cc1ccccc1",
    "trans-butene": "C/C=C/C",
    "vinyl acetate": "CC(=O)OC=C",
    "vinyl chloride": "C=CCl",
    "water": "O",
}
LEFT_OUT = {"example_compound_file", "example_multiline_datasets"}


@cache
def _peaks(path: Path) -> tuple[PeakList, tuple[float, float]]:
    spectrum = read_spectrum(path)
    return pick_peaks(spectrum), spectrum.range_cm1


@cache
def _truth(smiles: str) -> frozenset[str]:
    return frozenset(groups.vocabulary_groups(functional_groups(smiles)))


def score_all(folder: Path) -> dict[str, dict[str, int]]:
    """Per group: tp, fp, fn (true but not called present) and absent_true (true, called absent)."""
    table = {g: {"tp": 0, "fp": 0, "fn": 0, "absent_true": 0} for g in groups.names()}
    for stem, smiles in STRUCTURES.items():
        peaks, covered = _peaks(folder / f"{stem}.jdx")
        report = groups.analyse(peaks, covered=covered)
        truth = _truth(smiles)
        for call in report.groups:
            row = table[call.group]
            true = call.group in truth
            if call.call == "present":
                row["tp" if true else "fp"] += 1
            elif true:
                row["fn"] += 1
                row["absent_true"] += call.call == "absent"
    return table


def totals(table: dict[str, dict[str, int]]) -> dict[str, float]:
    tp = sum(r["tp"] for r in table.values())
    fp = sum(r["fp"] for r in table.values())
    fn = sum(r["fn"] for r in table.values())
    return {
        "tp": tp,
        "fp": fp,
        "fn": fn,
        "precision": tp / (tp + fp) if tp + fp else 1.0,
        "recall": tp / (tp + fn) if tp + fn else 1.0,
        "absent_true": sum(r["absent_true"] for r in table.values()),
    }


def test_every_file_is_scored_or_left_out_with_a_reason(gas_phase: Path) -> None:
    stems = {p.stem for p in gas_phase.glob("*.jdx")}
    assert len(stems) == 68
    assert stems == set(STRUCTURES) | LEFT_OUT


@pytest.fixture(scope="module")
def table(gas_phase: Path) -> dict[str, dict[str, int]]:
    return score_all(gas_phase)


def test_overall_precision_and_recall_of_present_calls(table: dict[str, dict[str, int]]) -> None:
    """Issue targets: precision >= 0.9 and recall >= 0.8 over the vocabulary. Measured when
    written: 85 true, 6 false present calls, 21 missed (precision 0.93, recall 0.80)."""
    tot = totals(table)
    assert tot["precision"] >= 0.9, tot
    assert tot["recall"] >= 0.8, tot


def test_no_true_group_is_called_absent(table: dict[str, dict[str, int]]) -> None:
    assert {g: r["absent_true"] for g, r in table.items() if r["absent_true"]} == {}


@pytest.mark.parametrize(
    ("group", "min_precision", "min_recall"),
    [
        ("carbonyl", 1.0, 1.0),
        ("ester", 1.0, 0.3),
        ("alcohol", 1.0, 0.6),
        ("ether", 1.0, 1.0),
        ("C-F", 1.0, 1.0),
        ("C-Cl", 1.0, 0.7),
        ("alkyl C-H", 0.9, 0.8),
        ("aromatic", 0.6, 1.0),
    ],
)
def test_per_group_figures(
    table: dict[str, dict[str, int]], group: str, min_precision: float, min_recall: float
) -> None:
    """Per-group floors at (or just under) what the rules reach; see docs/groups.md."""
    r = table[group]
    assert r["tp"] / max(1, r["tp"] + r["fp"]) >= min_precision, r
    assert r["tp"] / max(1, r["tp"] + r["fn"]) >= min_recall, r


def test_groups_never_called_present_without_their_truth(table: dict[str, dict[str, int]]) -> None:
    """None of the 66 compounds is an acid, amide, anhydride, acid chloride, aldehyde, amine,
    phenol, nitro compound or alkyne: no such call may be present."""
    for g in ("carboxylic acid", "amide", "anhydride", "acid chloride", "aldehyde", "amine",
              "phenol", "nitro", "alkyne"):  # fmt: skip
        assert table[g]["fp"] == 0, g


def test_no_label_needs_an_element_the_molform_lacks(gas_phase: Path) -> None:
    """Every band label on every file with a ##MOLFORM names only groups whose elements the
    formula holds (element needs: reflib/data/group_elements.csv)."""
    words = {
        "N": ("nitro", "amine", "amide", "nitrile", "oxime", "imine", "azide", "isocyan"),
        "S": ("sulf", "thiol", "C-S"),
        "P": ("phosph",),
        "Br": ("C-Br", "-Br"),
        "I": ("C-I ", "-I wag"),
        "Cl": ("C-Cl", "acid chloride"),
        "F": ("C-F",),
        "Si": ("Si-", "silo"),
        "O": ("C=O", "O-H", "C-O", "ester", "ether", "ketone", "alcohol"),
    }
    checked = 0
    for stem in STRUCTURES:
        peaks, covered = _peaks(gas_phase / f"{stem}.jdx")
        text = groups.formula_of(peaks)
        if text is None:
            continue
        elements = groups.formula_elements(text)
        report = groups.analyse(peaks, covered=covered)
        labels = [lab for band in groups.band_labels(peaks, report) for lab in band]
        for element, fragments in words.items():
            if element in elements:
                continue
            bad = [lab for lab in labels if any(f in lab for f in fragments)]
            bad = [lab for lab in bad if "overtone" not in lab and "preparation" not in lab]
            assert not bad, (stem, element, bad)
        checked += 1
    assert checked >= 55


if __name__ == "__main__":  # pragma: no cover - prints the table for docs/groups.md
    import sys

    folder = Path(sys.argv[1])
    tab = score_all(folder)
    for g, r in tab.items():
        n = r["tp"] + r["fp"]
        t = r["tp"] + r["fn"]
        p = f"{r['tp'] / n:.2f}" if n else "-"
        rc = f"{r['tp'] / t:.2f}" if t else "-"
        print(
            f"| {g} | {t} | {r['tp']} | {r['fp']} | {r['fn']} | {p} | {rc} | {r['absent_true']} |"
        )
    print(totals(tab))
