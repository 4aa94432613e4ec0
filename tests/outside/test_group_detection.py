"""SMARTS group detection against the groups a chemist lists for well-known molecules.

Source of every expected set: from memory (the functional groups any organic-chemistry course
names for these compounds). Besides the named functional group, each set lists the hydrocarbon
parts the correlation table has bands for: ``alkyl_ch`` (sp3 C-H), ``alkene``, ``aromatic``.
The sets are compared exactly, so a group found too many times (an ester also called a ketone
or an ether) fails as surely as a group missed.
"""

from __future__ import annotations

import pytest

from reflib.chem.structure import functional_groups

# name, SMILES, groups a chemist would list (from memory)
MOLECULES = [
    ("ethyl acetate", "CCOC(C)=O", {"alkyl_ch", "ester"}),  # not ketone, not ether
    ("methyl benzoate", "COC(=O)c1ccccc1", {"alkyl_ch", "ester_conjugated", "aromatic"}),
    ("vinyl acetate", "CC(=O)OC=C", {"alkyl_ch", "alkene", "ester_enol_aryl"}),
    ("phenyl acetate", "CC(=O)Oc1ccccc1", {"alkyl_ch", "aromatic", "ester_enol_aryl"}),
    ("ethyl acrylate", "C=CC(=O)OCC", {"alkyl_ch", "alkene", "ester_conjugated"}),
    ("gamma-butyrolactone", "O=C1CCCO1", {"alkyl_ch", "lactone_gamma"}),
    ("delta-valerolactone", "O=C1CCCCO1", {"alkyl_ch", "ester"}),
    ("acetic acid", "CC(=O)O", {"alkyl_ch", "carboxylic_acid"}),  # not an alcohol
    ("benzoic acid", "OC(=O)c1ccccc1", {"aromatic", "carboxylic_acid"}),
    ("sodium acetate", "CC(=O)[O-].[Na+]", {"alkyl_ch", "carboxylate"}),
    ("acetamide", "CC(N)=O", {"alkyl_ch", "amide"}),  # not an amine
    ("N-methylacetamide", "CNC(C)=O", {"alkyl_ch", "amide"}),  # not an amine
    ("N,N-dimethylformamide", "CN(C)C=O", {"alkyl_ch", "amide"}),  # not an aldehyde or amine
    ("urea", "NC(N)=O", {"urea"}),  # not an amide or amine
    ("ethyl carbamate", "CCOC(N)=O", {"alkyl_ch", "carbamate"}),  # not ester, amide, amine
    ("dimethyl carbonate", "COC(=O)OC", {"alkyl_ch", "carbonate"}),  # not ester, not ether
    ("acetic anhydride", "CC(=O)OC(C)=O", {"alkyl_ch", "anhydride"}),  # not ester
    ("acetyl chloride", "CC(Cl)=O", {"alkyl_ch", "acyl_halide"}),  # not C-Cl, not ketone
    ("benzoyl chloride", "ClC(=O)c1ccccc1", {"aromatic", "acyl_halide"}),
    ("acetone", "CC(C)=O", {"alkyl_ch", "ketone"}),
    ("acetophenone", "CC(=O)c1ccccc1", {"alkyl_ch", "aromatic", "ketone_conjugated"}),
    ("cyclohexanone", "O=C1CCCCC1", {"alkyl_ch", "ketone"}),
    ("cyclopentanone", "O=C1CCCC1", {"alkyl_ch", "ketone_ring5"}),
    ("cyclobutanone", "O=C1CCC1", {"alkyl_ch", "ketone_ring4"}),
    ("mesityl oxide", "CC(C)=CC(C)=O", {"alkyl_ch", "alkene", "ketone_conjugated"}),
    ("acetaldehyde", "CC=O", {"alkyl_ch", "aldehyde"}),  # not a ketone
    ("benzaldehyde", "O=Cc1ccccc1", {"aromatic", "aldehyde_conjugated"}),
    ("ethanol", "CCO", {"alkyl_ch", "alcohol"}),
    ("tert-butanol", "CC(C)(C)O", {"alkyl_ch", "alcohol"}),
    ("phenol", "Oc1ccccc1", {"aromatic", "phenol"}),  # not an alcohol
    ("benzyl alcohol", "OCc1ccccc1", {"alkyl_ch", "aromatic", "alcohol"}),
    ("diethyl ether", "CCOCC", {"alkyl_ch", "ether"}),
    ("tetrahydrofuran", "C1CCOC1", {"alkyl_ch", "ether"}),
    ("anisole", "COc1ccccc1", {"alkyl_ch", "aromatic", "aryl_ether"}),
    ("ethylene oxide", "C1CO1", {"alkyl_ch", "epoxide"}),  # not also a plain ether
    ("aniline", "Nc1ccccc1", {"aromatic", "amine_primary"}),
    ("n-butylamine", "CCCCN", {"alkyl_ch", "amine_primary"}),
    ("diethylamine", "CCNCC", {"alkyl_ch", "amine_secondary"}),
    ("triethylamine", "CCN(CC)CC", {"alkyl_ch", "amine_tertiary"}),
    ("pyridine", "c1ccncc1", {"aromatic"}),  # aromatic n is not an amine
    ("acetonitrile", "CC#N", {"alkyl_ch", "nitrile"}),
    ("benzonitrile", "N#Cc1ccccc1", {"aromatic", "nitrile"}),
    ("phenylacetylene", "C#Cc1ccccc1", {"aromatic", "alkyne_terminal"}),
    ("1-hexyne", "C#CCCCC", {"alkyl_ch", "alkyne_terminal"}),
    ("2-butyne", "CC#CC", {"alkyl_ch", "alkyne_internal"}),
    ("diphenylacetylene", "C(#Cc1ccccc1)c1ccccc1", {"aromatic", "alkyne_internal"}),
    ("nitrobenzene", "[O-][N+](=O)c1ccccc1", {"aromatic", "nitro"}),
    ("nitromethane", "C[N+](=O)[O-]", {"alkyl_ch", "nitro"}),
    ("1-hexene", "C=CCCCC", {"alkyl_ch", "alkene"}),
    ("benzene", "c1ccccc1", {"aromatic"}),
    ("toluene", "Cc1ccccc1", {"alkyl_ch", "aromatic"}),
    ("n-hexane", "CCCCCC", {"alkyl_ch"}),
    ("chlorobenzene", "Clc1ccccc1", {"aromatic", "organochlorine"}),
    ("chloroform", "ClC(Cl)Cl", {"alkyl_ch", "organochlorine"}),
    ("deuterochloroform", "[2H]C(Cl)(Cl)Cl", {"c_deuterium", "organochlorine"}),
    ("methyl iodide", "CI", {"alkyl_ch", "organoiodine"}),
    ("ethanethiol", "CCS", {"alkyl_ch", "thiol"}),
    ("dimethyl sulfoxide", "CS(C)=O", {"alkyl_ch", "sulfoxide"}),
    ("sulfolane", "O=S1(=O)CCCC1", {"alkyl_ch", "sulfone"}),
    ("methyl tosylate", "COS(=O)(=O)c1ccc(C)cc1", {"alkyl_ch", "aromatic", "sulfonate_ester"}),
    ("phenyl isocyanate", "O=C=Nc1ccccc1", {"aromatic", "isocyanate"}),
    ("acetone oxime", "CC(C)=NO", {"alkyl_ch", "oxime"}),  # not an imine or alcohol
    ("trifluorotoluene", "FC(F)(F)c1ccccc1", {"aromatic", "organofluorine"}),
]


@pytest.mark.parametrize(("name", "smiles", "expected"), MOLECULES, ids=[m[0] for m in MOLECULES])
def test_groups_match_what_a_chemist_lists(name: str, smiles: str, expected: set[str]) -> None:
    """From memory: the usual functional-group reading of each molecule."""
    assert set(functional_groups(smiles)) == expected, name


def test_at_least_thirty_molecules_are_checked() -> None:
    """The issue asks for at least 30 named molecules."""
    assert len({m[0] for m in MOLECULES}) >= 30
