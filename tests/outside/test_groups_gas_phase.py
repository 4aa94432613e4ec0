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
