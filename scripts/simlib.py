"""A seeded simulator of INVENTED infrared spectra, for the demo and the benchmarks only.

Nothing here is measured data. Band positions come from group-frequency rules written from
memory (the usual handbook ranges, e.g. ketone C=O 1705-1725 cm-1, nitrile 2210-2260 cm-1);
fingerprint bands are drawn by a random generator seeded from the skeleton's identity, so that

* homologues (same ring pattern and functional group, different chain length) share most bands
  and differ in a few chain bands and in the C-H stretch and bend intensities;
* positional isomers (ortho/meta/para) differ in the out-of-plane C-H bends, the overtone
  pattern and some fingerprint bands;
* starting material / product pairs of common reactions (ketone reduction, ester hydrolysis,
  amide formation, alcohol protection, nitrile hydrolysis, oxidation, alkyne hydrogenation) share
  the skeleton's bands and differ in the functional group's.

Public API (all positions in cm-1, absorbance decadic)::

    make_compounds(n, seed)           -> list[SimCompound]  invented library compounds
    held_out(n, seed)                 -> list[SimCompound]  analogs not in make_compounds(n, seed)
    build_peaks(key, groups, ...)     -> (PeakList, labels) clean reference list from group keys
    perturb(peaks, rng, ...)          -> PeakList           measured-on-another-day copy
    condense(peaks, tokens, rng)      -> PeakList           phase effects (free O-H in solution)
    render(peaks, *, rng, ...)        -> Spectrum           full absorbance spectrum
    render_mixture(parts, *, rng)     -> Spectrum           shares of the signal, Beer-Lambert sum
    apply_prep(spectrum, tokens, rng) -> Spectrum           preparation's bands, opaque parts, air

Everything is deterministic for a given seed (string keys are hashed with SHA-256, never with
Python's randomised ``hash``).
"""

from __future__ import annotations

import hashlib
import itertools
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from reflib.spectrum import Metadata, PeakList, Spectrum

INVENTED = "invented data (simulated from group-frequency rules written from memory)"

# --------------------------------------------------------------------------------------------
# Random generators seeded from names
# --------------------------------------------------------------------------------------------


def rng_for(*keys: object) -> np.random.Generator:
    """A numpy Generator seeded from the SHA-256 of the keys (stable across runs and machines)."""
    text = "\x1f".join(str(k) for k in keys)
    digest = hashlib.sha256(text.encode()).digest()
    return np.random.default_rng(int.from_bytes(digest[:8], "little"))


# --------------------------------------------------------------------------------------------
# Group-frequency rules (from memory; invented intensities and widths)
# Each band: (lo_cm1, hi_cm1, (rel_int_lo, rel_int_hi), (fwhm_lo, fwhm_hi), label)
# --------------------------------------------------------------------------------------------

Band = tuple[float, float, tuple[float, float], tuple[float, float], str]

SHARP = (8.0, 14.0)
MED = (12.0, 20.0)
CO = (14.0, 22.0)

GROUPS: dict[str, list[Band]] = {
    # carbonyls
    "ketone_alkyl": [
        (1708, 1722, (0.9, 1.0), CO, "C=O stretch"),
        (1355, 1368, (0.3, 0.45), SHARP, "CH3-C=O bend"),
        (1150, 1230, (0.2, 0.35), MED, "C-CO-C stretch"),
    ],
    "ketone_aryl": [
        (1678, 1690, (0.9, 1.0), CO, "conjugated C=O stretch"),
        (1355, 1362, (0.3, 0.45), SHARP, "CH3-C=O bend"),
        (1255, 1272, (0.5, 0.7), MED, "aryl-CO-C stretch"),
        (955, 965, (0.15, 0.25), SHARP, "C-C stretch"),
    ],
    "aldehyde_alkyl": [
        (1722, 1735, (0.9, 1.0), CO, "C=O stretch"),
        (2815, 2830, (0.15, 0.25), MED, "aldehyde C-H (Fermi)"),
        (2712, 2725, (0.15, 0.25), MED, "aldehyde C-H (Fermi)"),
        (1385, 1395, (0.1, 0.2), SHARP, "aldehyde C-H bend"),
    ],
    "aldehyde_aryl": [
        (1695, 1705, (0.9, 1.0), CO, "conjugated C=O stretch"),
        (2815, 2830, (0.15, 0.25), MED, "aldehyde C-H (Fermi)"),
        (2725, 2740, (0.15, 0.25), MED, "aldehyde C-H (Fermi)"),
        (1200, 1215, (0.25, 0.4), MED, "C-C(O) stretch"),
    ],
    "ester_alkyl": [
        (1735, 1745, (0.9, 1.0), CO, "C=O stretch"),
        (1160, 1200, (0.6, 0.8), (18, 26), "C-O stretch"),
        (1240, 1260, (0.35, 0.5), MED, "C-O stretch"),
        (1435, 1440, (0.2, 0.3), SHARP, "O-CH3 bend"),
    ],
    "ester_aryl": [
        (1718, 1728, (0.9, 1.0), CO, "conjugated C=O stretch"),
        (1272, 1285, (0.75, 0.9), (18, 26), "C-O stretch"),
        (1100, 1115, (0.45, 0.6), MED, "O-C stretch"),
        (1433, 1438, (0.2, 0.3), SHARP, "O-CH3 bend"),
    ],
    "acetate": [  # ethyl acetate style
        (1738, 1745, (0.85, 1.0), CO, "C=O stretch"),
        (1235, 1245, (0.9, 1.0), (20, 28), "C-O stretch"),
        (1040, 1050, (0.4, 0.55), MED, "O-C stretch"),
        (1370, 1375, (0.3, 0.4), SHARP, "CH3 bend"),
    ],
    "lactone_gamma": [
        (1765, 1780, (0.9, 1.0), CO, "lactone C=O stretch"),
        (1165, 1185, (0.6, 0.75), (18, 24), "C-O stretch"),
        (1020, 1040, (0.25, 0.4), MED, "ring C-O"),
        (935, 950, (0.2, 0.3), SHARP, "ring mode"),
    ],
    "acid_alkyl": [
        (1705, 1715, (0.9, 1.0), (22, 30), "dimer C=O stretch"),
        (2950, 3050, (0.35, 0.5), (450, 600), "O-H stretch (dimer, very broad)"),
        (2660, 2680, (0.08, 0.12), (40, 60), "O-H combination"),
        (1280, 1300, (0.4, 0.55), (20, 30), "C-O stretch"),
        (1410, 1420, (0.25, 0.35), (18, 25), "C-O-H bend"),
        (930, 945, (0.25, 0.35), (40, 60), "O-H out of plane (broad)"),
    ],
    "acid_aryl": [
        (1680, 1695, (0.9, 1.0), (22, 30), "conjugated dimer C=O stretch"),
        (2950, 3050, (0.35, 0.5), (450, 600), "O-H stretch (dimer, very broad)"),
        (2550, 2570, (0.08, 0.12), (40, 60), "O-H combination"),
        (1285, 1300, (0.5, 0.65), (20, 30), "C-O stretch"),
        (1420, 1430, (0.25, 0.35), (18, 25), "C-O-H bend"),
        (925, 940, (0.25, 0.35), (40, 60), "O-H out of plane (broad)"),
    ],
    "amide_primary": [
        (1655, 1675, (0.9, 1.0), (22, 30), "amide I"),
        (1615, 1630, (0.45, 0.6), (18, 26), "amide II (NH2 bend)"),
        (3340, 3370, (0.45, 0.6), (70, 100), "N-H stretch (asym)"),
        (3160, 3190, (0.4, 0.55), (70, 100), "N-H stretch (sym)"),
        (1395, 1410, (0.35, 0.5), MED, "C-N stretch"),
    ],
    "amide_secondary": [  # acetamide N-H, as in N-aryl or N-alkyl acetamides
        (1645, 1670, (0.9, 1.0), (20, 28), "amide I"),
        (1535, 1555, (0.6, 0.75), (18, 26), "amide II"),
        (3280, 3300, (0.35, 0.5), (60, 90), "N-H stretch"),
        (3080, 3095, (0.08, 0.12), (40, 60), "amide II overtone"),
        (1370, 1375, (0.3, 0.4), SHARP, "CH3 bend"),
        (1280, 1300, (0.25, 0.35), MED, "amide III"),
    ],
    "carbamate_boc": [
        (1690, 1712, (0.9, 1.0), (20, 28), "carbamate C=O stretch"),
        (3330, 3360, (0.3, 0.45), (50, 70), "N-H stretch"),
        (1510, 1530, (0.5, 0.65), (18, 24), "N-H bend / C-N"),
        (1390, 1393, (0.25, 0.35), SHARP, "tert-butyl bend"),
        (1364, 1368, (0.3, 0.4), SHARP, "tert-butyl bend"),
        (1160, 1172, (0.7, 0.85), (16, 22), "C-O stretch"),
        (1245, 1255, (0.35, 0.5), MED, "C-O / C-N stretch"),
    ],
    "acid_chloride": [
        (1795, 1810, (0.9, 1.0), CO, "acid chloride C=O stretch"),
        (950, 965, (0.3, 0.4), MED, "C-C stretch"),
        (680, 720, (0.4, 0.55), MED, "C-Cl stretch"),
    ],
    "anhydride": [
        (1815, 1825, (0.6, 0.75), CO, "C=O stretch (sym)"),
        (1750, 1760, (0.9, 1.0), CO, "C=O stretch (asym)"),
        (1030, 1050, (0.6, 0.75), (18, 26), "C-O-C stretch"),
    ],
    # O-H, N-H
    "alcohol_primary": [
        (3320, 3350, (0.55, 0.75), (230, 300), "O-H stretch (H-bonded, broad)"),
        (1045, 1060, (0.6, 0.8), (16, 22), "C-O stretch (primary)"),
        (1400, 1420, (0.1, 0.15), (40, 70), "O-H bend (broad)"),
        (650, 670, (0.15, 0.25), (60, 100), "O-H out of plane (broad)"),
    ],
    "alcohol_secondary": [
        (3330, 3370, (0.55, 0.75), (230, 300), "O-H stretch (H-bonded, broad)"),
        (1080, 1110, (0.55, 0.75), (16, 22), "C-O stretch (secondary)"),
        (1370, 1380, (0.15, 0.2), MED, "CH-OH bend"),
        (1005, 1015, (0.2, 0.3), MED, "C-O / C-C"),
        (650, 670, (0.15, 0.25), (60, 100), "O-H out of plane (broad)"),
    ],
    "phenol": [
        (3300, 3360, (0.55, 0.75), (230, 300), "O-H stretch (H-bonded, broad)"),
        (1220, 1240, (0.7, 0.85), (18, 24), "aryl C-O stretch"),
        (1350, 1370, (0.25, 0.35), (30, 50), "O-H bend"),
    ],
    "amine_primary_alkyl": [
        (3365, 3385, (0.12, 0.2), (40, 60), "N-H stretch (asym)"),
        (3285, 3300, (0.1, 0.18), (40, 60), "N-H stretch (sym)"),
        (1590, 1615, (0.2, 0.3), (30, 45), "NH2 scissor"),
        (1060, 1080, (0.2, 0.3), MED, "C-N stretch"),
        (790, 830, (0.3, 0.45), (60, 100), "NH2 wag (broad)"),
    ],
    "amine_primary_aryl": [
        (3420, 3440, (0.35, 0.45), (30, 45), "N-H stretch (asym)"),
        (3340, 3360, (0.4, 0.5), (30, 45), "N-H stretch (sym)"),
        (1615, 1625, (0.6, 0.75), (18, 26), "NH2 scissor"),
        (1265, 1285, (0.45, 0.6), MED, "aryl C-N stretch"),
    ],
    "amine_tertiary": [
        (2790, 2810, (0.2, 0.3), MED, "Bohlmann C-H stretch"),
        (1200, 1210, (0.35, 0.45), MED, "C-N stretch"),
        (1065, 1075, (0.4, 0.55), MED, "C-N stretch"),
    ],
    # triple bonds
    "nitrile_alkyl": [(2245, 2255, (0.3, 0.4), (10, 14), "C#N stretch")],
    "nitrile_aryl": [(2222, 2232, (0.5, 0.65), (10, 14), "conjugated C#N stretch")],
    "alkyne_terminal": [
        (3285, 3310, (0.6, 0.8), (14, 22), "#C-H stretch"),
        (2105, 2125, (0.1, 0.2), (10, 14), "C#C stretch"),
        (615, 660, (0.55, 0.75), (20, 30), "#C-H bend"),
    ],
    "alkyne_internal": [(2230, 2250, (0.0, 0.03), (10, 14), "C#C stretch (near-symmetric)")],
    "alkyne_tms": [
        (2150, 2165, (0.45, 0.6), (12, 16), "C#C stretch (silyl alkyne)"),
        (1248, 1252, (0.55, 0.7), SHARP, "Si-CH3 bend"),
        (840, 850, (0.85, 1.0), MED, "Si-C rock"),
        (758, 762, (0.35, 0.5), SHARP, "Si-C stretch"),
    ],
    "alkyne_diyne_symmetric": [
        (2210, 2220, (0.03, 0.06), (10, 14), "C#C-C#C stretch (weak, near-symmetric)"),
        (2140, 2150, (0.05, 0.08), (10, 14), "C#C-C#C stretch"),
    ],
    "trimethylsilyl": [
        (1248, 1252, (0.6, 0.75), SHARP, "Si-CH3 bend"),
        (840, 850, (0.85, 1.0), MED, "Si-C rock"),
        (758, 762, (0.4, 0.5), SHARP, "Si-C stretch"),
    ],
    "alkene_vinyl": [
        (3080, 3090, (0.15, 0.25), MED, "=C-H stretch"),
        (1638, 1645, (0.2, 0.35), MED, "C=C stretch"),
        (988, 995, (0.35, 0.5), SHARP, "vinyl C-H out of plane"),
        (905, 915, (0.55, 0.75), SHARP, "=CH2 wag"),
    ],
    "alkene_vinyl_aryl": [
        (3080, 3090, (0.15, 0.25), MED, "=C-H stretch"),
        (1625, 1632, (0.25, 0.35), MED, "conjugated C=C stretch"),
        (988, 995, (0.4, 0.55), SHARP, "vinyl C-H out of plane"),
        (900, 910, (0.6, 0.8), SHARP, "=CH2 wag"),
    ],
    # N-O, C-O-C, silicon, halogens
    "nitro_alkyl": [
        (1548, 1558, (0.9, 1.0), MED, "NO2 asym stretch"),
        (1375, 1385, (0.6, 0.75), MED, "NO2 sym stretch"),
    ],
    "nitro_aryl": [
        (1515, 1530, (0.9, 1.0), MED, "NO2 asym stretch"),
        (1340, 1350, (0.85, 1.0), MED, "NO2 sym stretch"),
        (850, 860, (0.3, 0.4), MED, "C-N stretch"),
    ],
    "ether_alkyl": [(1110, 1125, (0.75, 0.9), (20, 28), "C-O-C stretch")],
    "ether_cyclic": [
        (1065, 1075, (0.85, 1.0), (18, 24), "C-O-C asym stretch"),
        (905, 915, (0.35, 0.45), MED, "C-O-C sym stretch"),
    ],
    "ether_aryl": [
        (1240, 1255, (0.8, 0.95), (18, 24), "aryl-O stretch"),
        (1030, 1045, (0.45, 0.6), MED, "O-CH3 stretch"),
        (2830, 2840, (0.15, 0.22), MED, "O-CH3 C-H stretch"),
    ],
    "silyl_ether_tbs": [
        (1250, 1256, (0.5, 0.65), SHARP, "Si-CH3 bend"),
        (1090, 1110, (0.85, 1.0), (18, 26), "Si-O-C stretch"),
        (833, 840, (0.85, 1.0), MED, "Si-C rock"),
        (773, 778, (0.5, 0.65), SHARP, "Si-C stretch"),
        (1471, 1474, (0.15, 0.22), SHARP, "tert-butyl bend"),
        (1360, 1363, (0.1, 0.15), SHARP, "tert-butyl bend"),
    ],
    "silyl_chloride_tbs": [
        (1255, 1260, (0.5, 0.65), SHARP, "Si-CH3 bend"),
        (825, 835, (0.85, 1.0), MED, "Si-C rock"),
        (770, 780, (0.6, 0.75), SHARP, "Si-C stretch"),
        (505, 520, (0.45, 0.6), MED, "Si-Cl stretch"),
        (1470, 1474, (0.15, 0.22), SHARP, "tert-butyl bend"),
    ],
    "bromide_alkyl": [
        (640, 650, (0.45, 0.6), MED, "C-Br stretch"),
        (560, 570, (0.35, 0.45), MED, "C-Br stretch"),
        (1250, 1260, (0.3, 0.4), MED, "CH2-Br wag"),
    ],
    "bromide_aryl": [
        (1068, 1075, (0.4, 0.55), SHARP, "aryl C-Br (ring)"),
        (1008, 1012, (0.4, 0.5), SHARP, "ring breathing"),
    ],
    "chloride_alkyl": [
        (720, 730, (0.45, 0.6), MED, "C-Cl stretch"),
        (650, 660, (0.4, 0.55), MED, "C-Cl stretch"),
        (1300, 1310, (0.25, 0.35), MED, "CH2-Cl wag"),
    ],
    "chloride_aryl": [
        (1088, 1095, (0.45, 0.6), SHARP, "aryl C-Cl (ring)"),
        (1012, 1016, (0.3, 0.4), SHARP, "ring breathing"),
    ],
    "fluoride_aryl": [
        (1220, 1235, (0.85, 1.0), (16, 22), "aryl C-F stretch"),
        (1155, 1160, (0.35, 0.45), SHARP, "C-H in plane"),
    ],
}

# ring substitution patterns: out-of-plane bends and overtone region (from memory)
RINGS: dict[str, list[Band]] = {
    "para": [
        (810, 845, (0.7, 0.9), MED, "2 adjacent H out of plane (para)"),
        (1900, 1910, (0.02, 0.04), (20, 30), "overtone"),
        (1790, 1800, (0.02, 0.04), (20, 30), "overtone"),
        (1015, 1020, (0.2, 0.3), SHARP, "in-plane C-H"),
    ],
    "meta": [
        (775, 795, (0.6, 0.8), MED, "3 adjacent H out of plane (meta)"),
        (685, 700, (0.5, 0.65), MED, "ring puckering (meta)"),
        (875, 895, (0.25, 0.35), SHARP, "isolated H out of plane"),
        (1930, 1940, (0.02, 0.04), (20, 30), "overtone"),
        (1850, 1860, (0.02, 0.04), (20, 30), "overtone"),
    ],
    "ortho": [
        (745, 765, (0.75, 0.9), MED, "4 adjacent H out of plane (ortho)"),
        (1940, 1950, (0.02, 0.04), (20, 30), "overtone"),
        (1830, 1840, (0.02, 0.04), (20, 30), "overtone"),
        (1035, 1045, (0.2, 0.3), SHARP, "in-plane C-H"),
    ],
    "mono": [
        (745, 760, (0.65, 0.8), MED, "5 adjacent H out of plane"),
        (690, 700, (0.65, 0.8), MED, "ring puckering (mono)"),
        (1945, 1955, (0.02, 0.04), (20, 30), "overtone"),
        (1870, 1880, (0.02, 0.04), (20, 30), "overtone"),
        (1025, 1030, (0.15, 0.25), SHARP, "in-plane C-H"),
    ],
}

RING_COMMON: list[Band] = [
    (3025, 3040, (0.06, 0.1), MED, "aromatic C-H stretch"),
    (3060, 3075, (0.05, 0.09), MED, "aromatic C-H stretch"),
    (1598, 1610, (0.25, 0.45), SHARP, "ring C=C stretch"),
    (1575, 1585, (0.08, 0.2), SHARP, "ring C=C stretch"),
    (1495, 1515, (0.2, 0.4), SHARP, "ring C=C stretch"),
    (1445, 1455, (0.15, 0.3), SHARP, "ring C=C stretch"),
]


#: Below this wavenumber (cm-1) a group's bands are coupled skeletal modes: their position and
#: height move with the rest of the molecule (a homologue's C-CO-C stretch is not where its
#: neighbour's is), while the localised stretches above it (C=O, C#N, O-H) hardly move.
#: From memory: the usual statement that the fingerprint region is "characteristic of the whole
#: molecule" and the group-frequency region of the group.
COUPLED_BELOW = 1500.0
COUPLED_SHIFT_SD = 4.0  # cm-1
COUPLED_INTENSITY_SD = 0.2  # natural-log units


def _band_from_rule(rule: Band, rng_family: np.random.Generator, rng_own: np.random.Generator):
    lo, hi, (ilo, ihi), (wlo, whi), _label = rule
    pos = lo + (hi - lo) * rng_family.uniform() + rng_own.normal(0.0, 1.0)
    inten = ilo + (ihi - ilo) * rng_family.uniform()
    inten *= float(np.exp(rng_own.normal(0.0, 0.05)))
    width = wlo + (whi - wlo) * rng_family.uniform()
    pos = float(np.clip(pos, min(lo, hi) - 3, max(lo, hi) + 3))
    if pos < COUPLED_BELOW:
        pos += rng_own.normal(0.0, COUPLED_SHIFT_SD)
        inten *= float(np.exp(rng_own.normal(0.0, COUPLED_INTENSITY_SD)))
    return pos, float(inten), float(width)


def _alkyl_bands(n_ch3: int, n_ch2: int, longest_run: int, rng: np.random.Generator):
    """C-H stretches and bends whose intensities grow with the number of CH3 and CH2 groups."""
    out = []

    def add(lo, hi, inten, w):
        if inten > 0.005:
            out.append((lo + (hi - lo) * rng.uniform(), inten, w))

    add(2955, 2965, min(0.9, 0.2 * n_ch3), 18.0)  # CH3 asym stretch
    add(2920, 2932, min(1.0, 0.14 * n_ch2 + 0.02), 20.0)  # CH2 asym stretch
    add(2868, 2876, min(0.6, 0.1 * n_ch3), 14.0)  # CH3 sym stretch
    add(2850, 2860, min(0.7, 0.1 * n_ch2), 14.0)  # CH2 sym stretch
    add(1460, 1468, min(0.5, 0.05 * (n_ch2 + n_ch3)), 14.0)  # CH2 scissor / CH3 asym bend
    add(1375, 1382, min(0.4, 0.05 * n_ch3), 10.0)  # CH3 umbrella
    if longest_run >= 4:
        add(718, 726, min(0.3, 0.03 * n_ch2), 12.0)  # (CH2)n rock
    return out


@dataclass
class SimCompound:
    """One invented compound: a name as a chemist would write it, its family and a clean peak list.

    ``family`` groups close analogs (same ring pattern and functional group = homologues; same
    chain and group = positional isomers; same skeleton = reaction partners); ``skeleton`` is the
    functional-group-free part; ``groups`` the group keys the bands came from.
    """

    name: str
    family: str
    role: str
    smiles: str | None
    groups: list[str]
    peaks: PeakList
    skeleton: str = ""
    key: str = ""
    labels: list[str] = field(default_factory=list)


def build_peaks(
    key: str,
    groups: Sequence[str],
    *,
    family_key: str,
    skeleton_key: str,
    chain_key: str,
    ring: str | None = None,
    n_ch3: int = 0,
    n_ch2: int = 0,
    longest_run: int = 0,
    n_fingerprint: tuple[int, int, int, int] = (4, 3, 4, 3),
    seed: int = 0,
) -> tuple[PeakList, list[str]]:
    """A clean reference peak list (cm-1, relative intensity, FWHM) built from group keys.

    ``family_key`` seeds the functional-group band positions shared by homologues;
    ``skeleton_key`` seeds the skeleton (ring pattern) fingerprint bands shared by every compound
    on that skeleton; ``chain_key`` seeds bands shared by compounds with the same chain; ``key``
    (the compound itself) seeds small per-compound offsets and its own few bands.
    ``n_fingerprint`` = numbers of (skeleton, family, chain, own) fingerprint bands.
    Returns the peak list and one label per band (ascending position), for annotation.
    """
    own = rng_for(seed, "own", key)
    bands: list[tuple[float, float, float, str]] = []
    for g in groups:
        fam = rng_for(seed, "group", g, family_key)
        for rule in GROUPS[g]:
            p, i, w = _band_from_rule(rule, fam, own)
            if i > 0.004:
                bands.append((p, i, w, f"{g}: {rule[4]}"))
    if ring is not None:
        rr = rng_for(seed, "ring", ring, skeleton_key)
        for rule in RING_COMMON + RINGS[ring]:
            p, i, w = _band_from_rule(rule, rr, own)
            bands.append((p, i, w, f"ring {ring}: {rule[4]}"))
    for p, i, w in _alkyl_bands(n_ch3, n_ch2, longest_run, rng_for(seed, "alkyl", skeleton_key)):
        bands.append((p + own.normal(0, 0.7), i * float(np.exp(own.normal(0, 0.05))), w, "C-H"))
    # fingerprint bands: shared by skeleton, by family (homologues), by chain; the compound's own
    n_sk, n_fam, n_ch, n_own = n_fingerprint
    for tag, k, n, irange in (
        ("skeleton", skeleton_key, n_sk, (0.08, 0.45)),
        ("family", family_key, n_fam, (0.08, 0.4)),
        ("chain", chain_key, n_ch, (0.06, 0.35)),
        ("own", key, n_own, (0.05, 0.3)),
    ):
        r = rng_for(seed, "fp", tag, k)
        for _ in range(n):
            p = r.uniform(560, 1480)
            i = r.uniform(*irange)
            w = r.uniform(7, 16)
            bands.append((p + own.normal(0, 0.7), i, w, f"fingerprint ({tag})"))
    bands.sort(key=lambda b: b[0])
    pos = np.array([b[0] for b in bands])
    inten = np.array([b[1] for b in bands])
    width = np.array([b[2] for b in bands])
    pl = PeakList(pos, inten, widths=width, broad=width >= 40)
    return pl, [b[3] for b in bands]


# --------------------------------------------------------------------------------------------
# The invented compound universe: aryl (ortho/meta/para) and n-alkyl skeletons x functional groups
# --------------------------------------------------------------------------------------------

ALKYL = ["methyl", "ethyl", "propyl", "butyl", "pentyl", "hexyl", "heptyl", "octyl", "nonyl"]
ALKANE = [
    "meth", "eth", "prop", "but", "pent", "hex", "hept", "oct", "non", "dec", "undec", "dodec",
]  # fmt: skip
POS = {"ortho": 2, "meta": 3, "para": 4}

# key: (aryl smiles fragment, aryl name template, groups on aryl, extra CH3, extra CH2, reaction)
# name template fields: {p} ring position of the alkyl chain, {alk} alkyl name
ARYL_FG: dict[str, tuple[str, str, list[str], int, int]] = {
    "acetyl": ("C(C)=O", "1-({p}-{alk}phenyl)ethan-1-one", ["ketone_aryl"], 1, 0),
    "hydroxyethyl": ("C(C)O", "1-({p}-{alk}phenyl)ethan-1-ol", ["alcohol_secondary"], 1, 0),
    "formyl": ("C=O", "{p}-{alk}benzaldehyde", ["aldehyde_aryl"], 0, 0),
    "hydroxymethyl": ("CO", "({p}-{alk}phenyl)methanol", ["alcohol_primary"], 0, 1),
    "tbsoxymethyl": (
        "CO[Si](C)(C)C(C)(C)C",
        "tert-butyldimethyl[({p}-{alk}phenyl)methoxy]silane",
        ["silyl_ether_tbs"],
        5,
        1,
    ),
    "methoxycarbonyl": ("C(=O)OC", "methyl {p}-{alk}benzoate", ["ester_aryl"], 1, 0),
    "carboxy": ("C(=O)O", "{p}-{alk}benzoic acid", ["acid_aryl"], 0, 0),
    "carbamoyl": ("C(N)=O", "{p}-{alk}benzamide", ["amide_primary"], 0, 0),
    "cyano": ("C#N", "{p}-{alk}benzonitrile", ["nitrile_aryl"], 0, 0),
    "nitro": ("[N+](=O)[O-]", "1-{alk}-{p}-nitrobenzene", ["nitro_aryl"], 0, 0),
    "amino": ("N", "{p}-{alk}aniline", ["amine_primary_aryl"], 0, 0),
    "acetamido": ("NC(C)=O", "N-({p}-{alk}phenyl)acetamide", ["amide_secondary"], 1, 0),
    "bocamino": (
        "NC(=O)OC(C)(C)C",
        "tert-butyl N-({p}-{alk}phenyl)carbamate",
        ["carbamate_boc"],
        3,
        0,
    ),
    "methoxy": ("OC", "1-{alk}-{p}-methoxybenzene", ["ether_aryl"], 1, 0),
    "hydroxy": ("O", "{p}-{alk}phenol", ["phenol"], 0, 0),
    "ethynyl": ("C#C", "1-ethynyl-{p}-{alk}benzene", ["alkyne_terminal"], 0, 0),
    "ethenyl": ("C=C", "1-ethenyl-{p}-{alk}benzene", ["alkene_vinyl_aryl"], 0, 0),
    "chlorocarbonyl": ("C(=O)Cl", "{p}-{alk}benzoyl chloride", ["acid_chloride"], 0, 0),
    "bromo": ("Br", "1-bromo-{p}-{alk}benzene", ["bromide_aryl"], 0, 0),
    "chloro": ("Cl", "1-chloro-{p}-{alk}benzene", ["chloride_aryl"], 0, 0),
    "fluoro": ("F", "1-fluoro-{p}-{alk}benzene", ["fluoride_aryl"], 0, 0),
}

# n-alkyl chain R-(group); {c} = carbons of R, names use ALKANE stems
# (smiles tail, name template taking stems of R+k carbons, groups, extra CH3, extra CH2, k)
CHAIN_FG: dict[str, tuple[str, str, list[str], int, int, int]] = {
    "methylketone": ("C(C)=O", "{s2}an-2-one", ["ketone_alkyl"], 1, 0, 2),
    "sec-alcohol": ("C(C)O", "{s2}an-2-ol", ["alcohol_secondary"], 1, 0, 2),
    "aldehyde": ("C=O", "{s1}anal", ["aldehyde_alkyl"], 0, 0, 1),
    "prim-alcohol": ("CO", "{s1}an-1-ol", ["alcohol_primary"], 0, 1, 1),
    "tbs-ether": (
        "CO[Si](C)(C)C(C)(C)C",
        "tert-butyldimethyl({s1}yloxy)silane",
        ["silyl_ether_tbs"],
        5,
        1,
        1,
    ),
    "methyl-ester": ("C(=O)OC", "methyl {s1}anoate", ["ester_alkyl"], 1, 0, 1),
    "acid": ("C(=O)O", "{s1}anoic acid", ["acid_alkyl"], 0, 0, 1),
    "amide": ("C(N)=O", "{s1}anamide", ["amide_primary"], 0, 0, 1),
    "nitrile": ("C#N", "{s1}anenitrile", ["nitrile_alkyl"], 0, 0, 1),
    "amine": ("N", "{s0}an-1-amine", ["amine_primary_alkyl"], 0, 0, 0),
    "acetamide": ("NC(C)=O", "N-{a0}acetamide", ["amide_secondary"], 1, 0, 0),
    "boc-amine": ("NC(=O)OC(C)(C)C", "tert-butyl N-{a0}carbamate", ["carbamate_boc"], 3, 0, 0),
    "methyl-ether": ("OC", "1-methoxy{s0}ane", ["ether_alkyl"], 1, 0, 0),
    "alkyne": ("C#C", "{s2}-1-yne", ["alkyne_terminal"], 0, 0, 2),
    "alkene": ("C=C", "{s2}-1-ene", ["alkene_vinyl"], 0, 0, 2),
    "internal-alkyne": ("C#CC", "{s3}-2-yne", ["alkyne_internal"], 1, 0, 3),
    "acid-chloride": ("C(=O)Cl", "{s1}anoyl chloride", ["acid_chloride"], 0, 0, 1),
    "anhydride": ("C(=O)OC(=O){R}", "{s1}anoic anhydride", ["anhydride"], 1, 0, 1),
    "bromide": ("Br", "1-bromo{s0}ane", ["bromide_alkyl"], 0, 0, 0),
    "chloride": ("Cl", "1-chloro{s0}ane", ["chloride_alkyl"], 0, 0, 0),
    "nitroalkane": ("[N+](=O)[O-]", "1-nitro{s0}ane", ["nitro_alkyl"], 0, 0, 0),
    "lactone": ("C1CCC(=O)O1", "5-{a0}oxolan-2-one", ["lactone_gamma"], 0, 2, 0),
}

#: Reactions that relate two functional groups on the same skeleton (starting material -> product).
REACTIONS: dict[str, list[tuple[str, str]]] = {
    "ketone reduction": [("acetyl", "hydroxyethyl"), ("methylketone", "sec-alcohol")],
    "ester hydrolysis": [("methoxycarbonyl", "carboxy"), ("methyl-ester", "acid")],
    "amide formation": [("chlorocarbonyl", "carbamoyl"), ("acid-chloride", "amide")],
    "alcohol protection": [("hydroxymethyl", "tbsoxymethyl"), ("prim-alcohol", "tbs-ether")],
    "nitrile hydrolysis": [("cyano", "carbamoyl"), ("nitrile", "amide")],
    "oxidation": [("hydroxymethyl", "formyl"), ("prim-alcohol", "aldehyde")],
    "alkyne hydrogenation": [("ethynyl", "ethenyl"), ("alkyne", "alkene")],
    "amine protection": [("amino", "bocamino"), ("amine", "boc-amine")],
    "nitro reduction": [("nitro", "amino"), ("nitroalkane", "amine")],
    "acetylation": [("amino", "acetamido"), ("amine", "acetamide")],
}

_ROLE_OF: dict[str, str] = {}
for _pairs in REACTIONS.values():
    for _sm, _prod in _pairs:
        _ROLE_OF.setdefault(_sm, "starting material")
        _ROLE_OF[_prod] = "product"


def _aryl_compound(fg: str, pattern: str, n: int, seed: int) -> SimCompound:
    frag, tmpl, groups, x_ch3, x_ch2 = ARYL_FG[fg]
    r = "C" * n
    if pattern == "para":
        smiles = f"{r}c1ccc({frag})cc1"
    elif pattern == "meta":
        smiles = f"{r}c1cccc({frag})c1"
    else:
        smiles = f"{r}c1ccccc1{frag}"
    name = tmpl.format(p=POS[pattern], alk=ALKYL[n - 1])
    key = f"aryl/{pattern}/{n}/{fg}"
    peaks, labels = build_peaks(
        key,
        groups,
        family_key=f"aryl/{pattern}/{fg}",
        skeleton_key=f"aryl/{pattern}",
        chain_key=f"aryl/chain/{n}",
        ring="para" if pattern == "para" else pattern,
        n_ch3=1 + x_ch3,
        n_ch2=(n - 1) + x_ch2,
        longest_run=n - 1,
        seed=seed,
    )
    return SimCompound(
        name=name,
        family=f"aryl-{pattern}-{fg}",
        role=_ROLE_OF.get(fg, "intermediate"),
        smiles=smiles,
        groups=list(groups) + [f"ring_{pattern}"],
        peaks=peaks,
        skeleton=f"{n}-carbon chain on a {pattern}-disubstituted ring",
        key=key,
        labels=labels,
    )


def _chain_compound(fg: str, n: int, seed: int) -> SimCompound:
    tail, tmpl, groups, x_ch3, x_ch2, _k = CHAIN_FG[fg]
    r = "C" * n
    tail = tail.replace("{R}", r)
    smiles = f"{r}{tail}"
    stems = {f"s{k}": ALKANE[n + k - 1] for k in range(4)}
    name = tmpl.format(a0=ALKYL[n - 1], **stems)
    if fg == "anhydride":
        smiles = f"{r}C(=O)OC(=O){r}"
    key = f"chain/{n}/{fg}"
    mult = 2 if fg == "anhydride" else 1
    peaks, labels = build_peaks(
        key,
        groups,
        family_key=f"chain/{fg}",
        skeleton_key="chain",
        chain_key=f"chain/chain/{n}",
        ring=None,
        n_ch3=mult * (1 + x_ch3) - (1 if fg == "anhydride" else 0),
        n_ch2=mult * (n - 1) + x_ch2,
        longest_run=n - 1,
        n_fingerprint=(3, 3, 4, 3),
        seed=seed,
    )
    return SimCompound(
        name=name,
        family=f"chain-{fg}",
        role=_ROLE_OF.get(fg, "intermediate"),
        smiles=smiles,
        groups=list(groups),
        peaks=peaks,
        skeleton=f"n-{ALKYL[n - 1]} chain",
        key=key,
        labels=labels,
    )


def universe(seed: int = 0) -> list[tuple[str, tuple]]:
    """Every compound the simulator knows, as (key, constructor args), in a fixed order."""
    out: list[tuple[str, tuple]] = []
    for fg, pattern, n in itertools.product(ARYL_FG, ("ortho", "meta", "para"), range(1, 6)):
        out.append((f"aryl/{pattern}/{n}/{fg}", ("aryl", fg, pattern, n)))
    for fg, n in itertools.product(CHAIN_FG, range(3, 10)):
        out.append((f"chain/{n}/{fg}", ("chain", fg, "", n)))
    return out


def _construct(args: tuple, seed: int) -> SimCompound:
    kind, fg, pattern, n = args
    if kind == "aryl":
        return _aryl_compound(fg, pattern, n, seed)
    return _chain_compound(fg, n, seed)


def compound(key: str, seed: int = 0) -> SimCompound:
    """The invented compound of a universe key, e.g. ``"aryl/para/3/acetyl"`` or ``"chain/5/acid"``.

    >>> compound("chain/5/acid").name
    'hexanoic acid'
    """
    for k, args in universe(seed):
        if k == key:
            return _construct(args, seed)
    raise KeyError(f"no simulated compound {key!r}; keys look like 'aryl/para/3/acetyl'")


def reaction_pairs(seed: int = 0) -> list[tuple[str, SimCompound, SimCompound]]:
    """Every (reaction, starting material, product) pair of :data:`REACTIONS` in the universe.

    Both partners share the skeleton (ring pattern and chain), so they share its bands.
    """
    out = []
    for reaction, pairs in REACTIONS.items():
        for sm, prod in pairs:
            if sm in ARYL_FG:
                for pattern, n in itertools.product(("ortho", "meta", "para"), range(1, 6)):
                    out.append(
                        (
                            reaction,
                            _aryl_compound(sm, pattern, n, seed),
                            _aryl_compound(prod, pattern, n, seed),
                        )
                    )
            else:
                for n in range(3, 10):
                    out.append(
                        (reaction, _chain_compound(sm, n, seed), _chain_compound(prod, n, seed))
                    )
    return out


def _split(seed: int, held_share: float = 0.15) -> tuple[list[tuple], list[tuple]]:
    """Seeded split of the universe into library candidates and held-out analogs."""
    items = universe(seed)
    rng = rng_for(seed, "split")
    order = rng.permutation(len(items))
    n_held = int(round(held_share * len(items)))
    held = [items[i][1] for i in sorted(order[:n_held])]
    lib = [items[i][1] for i in order[n_held:]]
    return lib, held


def make_compounds(n: int, seed: int = 0) -> list[SimCompound]:
    """``n`` invented library compounds in families of close analogs (seeded, deterministic).

    Compounds come from a universe of aryl (ortho/meta/para, methyl..pentyl) and n-alkyl
    (propyl..nonyl) skeletons carrying one of about twenty functional groups, so each compound has
    homologues, positional isomers and reaction partners among the others.

    >>> cs = make_compounds(5, seed=1)
    >>> len(cs), bool(cs[0].peaks.positions.min() > 400)
    (5, True)
    """
    lib, _held = _split(seed)
    if n > len(lib):
        raise ValueError(f"the simulator knows {len(lib)} library compounds; asked for {n}")
    return [_construct(a, seed) for a in lib[:n]]


def held_out(n: int, seed: int = 0) -> list[SimCompound]:
    """``n`` invented compounds that ``make_compounds(.., seed)`` never returns.

    Each is a homologue, positional isomer or functional-group variant of library compounds,
    so a search sees close relatives of it in the library but never itself.
    """
    lib, held = _split(seed)
    if n > len(held):
        raise ValueError(f"the simulator holds out {len(held)} compounds; asked for {n}")
    rng = rng_for(seed, "held-order")
    idx = rng.permutation(len(held))[:n]
    return [_construct(held[i], seed) for i in sorted(idx)]


# --------------------------------------------------------------------------------------------
# Measurement effects
# --------------------------------------------------------------------------------------------


def perturb(
    peaks: PeakList,
    rng: np.random.Generator,
    *,
    shift: float = 3.0,
    jitter: float = 2.0,
    intensity_jitter: float = 0.15,
    width_jitter: float = 0.1,
    drop_weak: float = 0.3,
    weak_below: float = 0.1,
) -> PeakList:
    """The same compound measured on another day (cm-1 and relative intensities).

    One global shift uniform in +-``shift`` cm-1; per-band jitter uniform in +-``jitter`` cm-1;
    intensities multiplied by exp(N(0, ``intensity_jitter``)); widths by exp(N(0, width_jitter));
    each band weaker than ``weak_below`` dropped with probability ``drop_weak``.
    """
    n = len(peaks)
    g = rng.uniform(-shift, shift)
    pos = peaks.positions + g + rng.uniform(-jitter, jitter, n)
    inten = peaks.intensities * np.exp(rng.normal(0.0, intensity_jitter, n))
    widths = peaks.widths * np.exp(rng.normal(0.0, width_jitter, n))
    keep = ~((peaks.intensities < weak_below) & (rng.uniform(size=n) < drop_weak))
    if not keep.any():
        keep[np.argmax(peaks.intensities)] = True
    return PeakList(
        pos[keep], inten[keep], widths=widths[keep], broad=peaks.broad[keep], meta=peaks.meta
    )


SOLUTION_TOKENS = {"chcl3", "cdcl3", "ccl4", "ch2cl2", "cs2"}


def condense(peaks: PeakList, tokens: Iterable[str], rng: np.random.Generator) -> PeakList:
    """Phase effects of the preparation on the compound's own bands (from memory).

    In dilute solution part of the hydrogen-bonded O-H (broad, 3200-3550 cm-1) becomes free O-H:
    a sharp band near 3600-3630 cm-1 appears and the broad band weakens. Other preparations are
    returned unchanged (the library compares condensed-phase spectra).
    """
    toks = set(tokens)
    if not toks & SOLUTION_TOKENS:
        return peaks
    pos, inten = list(peaks.positions), list(peaks.intensities)
    widths, broad = list(peaks.widths), list(peaks.broad)
    for i in range(len(peaks)):
        if peaks.broad[i] and 3200 <= peaks.positions[i] <= 3560 and peaks.widths[i] > 150:
            keep = rng.uniform(0.3, 0.6)
            pos.append(float(rng.uniform(3605, 3630)))
            inten.append(float(peaks.intensities[i] * (1 - keep) * 1.5))
            widths.append(float(rng.uniform(18, 26)))
            broad.append(False)
            inten[i] *= keep
    return PeakList(np.array(pos), np.array(inten), widths=np.array(widths), broad=np.array(broad))


def default_axis(step: float = 2.0, lo: float = 400.0, hi: float = 4000.0) -> np.ndarray:
    """The usual mid-infrared axis, ``lo``..``hi`` cm-1 at ``step`` cm-1."""
    return np.arange(lo, hi + step / 2, step, dtype=float)


def band_shapes(
    x: np.ndarray, pos: np.ndarray, height: np.ndarray, fwhm: np.ndarray, eta: float | np.ndarray
):
    """Sum of pseudo-Voigt bands (eta Lorentzian + (1-eta) Gaussian), each of the given height."""
    y = np.zeros_like(x)
    eta = np.broadcast_to(np.asarray(eta, float), pos.shape)
    for p, h, w, e in zip(pos, height, fwhm, eta, strict=True):
        lo, hi = np.searchsorted(x, [p - 12 * w, p + 12 * w])
        d = (x[lo:hi] - p) / (w / 2)
        y[lo:hi] += h * (e / (1 + d * d) + (1 - e) * np.exp(-np.log(2) * d * d))
    return y


def _clean_absorbance(peaks: PeakList, x: np.ndarray, rng: np.random.Generator, top: float):
    widths = np.where(np.isfinite(peaks.widths), peaks.widths, 14.0)
    eta = rng.uniform(0.3, 0.7, len(peaks))
    eta = np.where(peaks.broad, 0.1, eta)  # hydrogen-bonded bands are close to Gaussian
    y = band_shapes(x, peaks.positions, peaks.intensities, widths, eta)
    m = y.max()
    return y * (top / m) if m > 0 else y


def _baseline(x: np.ndarray, rng: np.random.Generator, amplitude: float) -> np.ndarray:
    t = (x - x.mean()) / (x.max() - x.min())
    c = rng.normal(0.0, amplitude, 3)
    return amplitude * 0.5 + c[0] * t + c[1] * (t * t - 1 / 12) + c[2] * t**3


def render(
    peaks: PeakList,
    *,
    x: np.ndarray | None = None,
    y_kind: str = "absorbance",
    noise: float = 0.002,
    baseline: float = 0.01,
    top: float | None = None,
    rng: np.random.Generator,
    title: str | None = None,
) -> Spectrum:
    """A full spectrum from a peak list: pseudo-Voigt bands in absorbance, noise and baseline.

    ``x`` defaults to 400-4000 cm-1 at 2 cm-1; the strongest band gets absorbance ``top``
    (default uniform 0.3-1.0); ``noise`` is the standard deviation of white noise (absorbance);
    ``baseline`` the size of a smooth cubic offset (absorbance). ``y_kind='transmittance'``
    returns 10**-A.
    """
    x = default_axis() if x is None else np.asarray(x, float)
    top = float(rng.uniform(0.3, 1.0)) if top is None else top
    y = _clean_absorbance(peaks, x, rng, top)
    y = y + _baseline(x, rng, baseline) + rng.normal(0.0, noise, x.size)
    meta = Metadata(title=title, origin=INVENTED, data_type="INFRARED SPECTRUM")
    spec = Spectrum(x, y, "absorbance", meta)
    return spec.to_transmittance() if y_kind == "transmittance" else spec


def render_mixture(
    parts: Sequence[tuple[PeakList, float]],
    *,
    x: np.ndarray | None = None,
    noise: float = 0.002,
    baseline: float = 0.01,
    top: float | None = None,
    rng: np.random.Generator,
    title: str | None = None,
) -> Spectrum:
    """Absorbance of a mixture: each part's band sum scaled to unit area, times its share.

    ``parts`` = [(peaks, share of the integrated absorbance), ...]; Beer-Lambert additivity.
    The strongest point of the sum is scaled to ``top`` (default uniform 0.3-1.0).
    """
    x = default_axis() if x is None else np.asarray(x, float)
    total = np.zeros_like(x)
    dx = float(np.mean(np.diff(x)))
    for peaks, share in parts:
        y = _clean_absorbance(peaks, x, rng, 1.0)
        total += share * y / (y.sum() * dx)
    top = float(rng.uniform(0.3, 1.0)) if top is None else top
    total *= top / total.max()
    total += _baseline(x, rng, baseline) + rng.normal(0.0, noise, x.size)
    return Spectrum(x, total, "absorbance", Metadata(title=title, origin=INVENTED))


# --------------------------------------------------------------------------------------------
# Preparations
# --------------------------------------------------------------------------------------------

MULL_TOKENS = {"nujol", "fluorocarbon"}
AIR_TOKENS = {"air", "atmosphere", "room"}

#: Fixed water-vapour line positions (the lines do not move between spectra; amplitudes do).
_WATER_LINES = np.concatenate(
    [
        rng_for("water-vapour-hi").uniform(3500, 3900, 45),
        rng_for("water-vapour-lo").uniform(1350, 1900, 55),
    ]
)
_WATER_STRENGTH = rng_for("water-vapour-strength").uniform(0.2, 1.0, _WATER_LINES.size)


def air_bands(x: np.ndarray, rng: np.random.Generator, amount: float = 1.0) -> np.ndarray:
    """Uncompensated room air (absorbance): CO2 near 2360/2340 and 667 cm-1, water-vapour lines.

    The sign is random: a background taken with more CO2 than the sample run gives negative bands.
    """
    sign_c = rng.choice([-1.0, 1.0], p=[0.3, 0.7])
    sign_w = rng.choice([-1.0, 1.0])
    c = sign_c * amount * rng.uniform(0.005, 0.03)
    w = sign_w * amount * rng.uniform(0.002, 0.012)
    y = band_shapes(x, np.array([2361.0, 2338.0, 667.5]), np.array([c, 0.8 * c, 0.6 * c]),
                    np.array([14.0, 14.0, 4.0]), 0.5)  # fmt: skip
    y += band_shapes(x, _WATER_LINES, w * _WATER_STRENGTH, np.full(_WATER_LINES.size, 2.5), 0.8)
    return y


def _detector(y: np.ndarray, rng: np.random.Generator, sd: float = 3e-4) -> np.ndarray:
    """Absorbance as measured: transmittance noise ``sd`` makes saturated bands flat and noisy."""
    t = np.clip(10.0 ** (-y) + rng.normal(0.0, sd, y.size), 1e-4, None)
    return -np.log10(t)


def _window(x: np.ndarray, cut: float, span: float) -> np.ndarray:
    """Window absorbance: transmission falls linearly from 1 at cut + span to 0 at cut (cm-1)."""
    tr = np.clip((x - cut) / span, 0.0, 1.0)
    return -np.log10(np.clip(tr, 1e-6, None))


def _box(x: np.ndarray, lo: float, hi: float, edge: float = 6.0) -> np.ndarray:
    """1 inside lo..hi cm-1, 0 outside, with smooth (tanh) edges ``edge`` cm-1 wide."""
    return 0.25 * (1 + np.tanh((x - lo) / edge)) * (1 + np.tanh((hi - x) / edge))


def apply_prep(
    spectrum: Spectrum,
    tokens: Sequence[str],
    rng: np.random.Generator,
    *,
    air: float = 1.0,
    truncate_windows: bool | None = None,
    subtract_solvent: bool | None = None,
) -> Spectrum:
    """What a preparation does to a clean absorbance spectrum (invented, for benchmarks).

    * the preparation's own bands (:func:`reflib.chem.prep.own_bands`): mull oil strong, solvent
      strong
      (sometimes subtracted, leaving a residue of either sign), KBr water weak;
    * solution regions of zero weight (:func:`reflib.chem.prep.regions_for`): opaque, high noisy
      absorbance (or, when the solvent was subtracted, noise around the sample's trace);
    * windows and crystals (:func:`reflib.chem.prep.opaque_below`): transmission falling to nothing
      at
      the cut-off, or the axis truncated there (``truncate_windows``; random when None);
    * ATR: absorbance grows toward low wavenumber (penetration depth ~ wavelength), a little extra
      noise where the diamond absorbs;
    * KBr pellets and mulls: a scattering slope rising toward high wavenumber;
    * always: a little uncompensated CO2 and water vapour (``air`` scales it).

    ``subtract_solvent``: True = the solvent's spectrum was subtracted (a residue of either sign
    and noise where it was opaque), False = not, None = at random (35 % subtracted).
    """
    from reflib.chem import prep  # imported late: the simulator itself needs only reflib.spectrum

    toks = prep.parse_tokens(list(tokens))
    kinds = {t: prep.PREPARATIONS[t].kind for t in toks}
    spec = spectrum.to_absorbance()
    x, y = spec.x.copy(), spec.y.copy()
    sample_top = float(np.percentile(y, 99.9))
    if "reflection" in kinds.values():
        y = y * (1000.0 / x) * rng.uniform(0.9, 1.3)
    if any(k in ("pellet", "mull") for k in kinds.values()):
        y = y + rng.uniform(0.02, 0.15) * (x / 4000.0) ** 2
    subtracted = {
        t: kinds[t] == "solution"
        and (rng.uniform() < 0.35 if subtract_solvent is None else subtract_solvent)
        for t in toks
    }
    scale = {}
    for t in toks:
        if kinds[t] == "mull":
            scale[t] = sample_top * rng.uniform(0.9, 1.8)
        elif kinds[t] == "solution":
            s = sample_top * rng.uniform(0.6, 1.5)
            scale[t] = s * rng.uniform(-0.15, 0.15) if subtracted[t] else s
        elif kinds[t] == "pellet":
            scale[t] = rng.uniform(0.03, 0.12)
        else:
            scale[t] = sample_top * rng.uniform(0.03, 0.08)
    own = prep.own_bands(toks, air=False)
    opaque = [
        (r.lo, r.hi, r.token)
        for r in prep.regions_for(toks, air=False)
        if r.weight == 0 and kinds[r.token] == "solution"
    ]
    if own:
        pos = np.array([b[0] for b in own], float)
        # a solvent band that makes its region opaque is several absorbance units in the cell
        deep = np.array(
            [
                rng.uniform(2.0, 4.0)
                if not subtracted[b[3]]
                and any(lo <= b[0] <= hi and t == b[3] for lo, hi, t in opaque)
                else 1.0
                for b in own
            ]
        )
        h = np.array([b[1] * scale[b[3]] for b in own], float) * deep
        w = np.array([b[2] if np.isfinite(b[2]) else 10.0 for b in own], float)
        y = y + band_shapes(x, pos, h, w, 0.3)
    y = y + air_bands(x, rng, air)
    for region in prep.regions_for(toks, air=False):
        m = (x >= region.lo) & (x <= region.hi)
        if not m.any() or kinds.get(region.token) == "window":
            continue
        if kinds[region.token] == "solution" and region.weight == 0:
            if subtracted[region.token]:
                y[m] += rng.normal(0.0, rng.uniform(0.02, 0.1), int(m.sum()))
            else:
                y = y + 6.0 * _box(x, region.lo, region.hi)  # no light: the detector saturates
        elif kinds[region.token] == "reflection":
            y[m] += rng.normal(0.0, 0.004, int(m.sum()))
    cut = prep.opaque_below(toks)
    if cut and cut > x[0]:
        if truncate_windows is None:
            truncate_windows = bool(rng.uniform() < 0.5)
        falling = [
            r.hi - r.lo
            for r in prep.regions_for(toks, air=False)
            if kinds.get(r.token) == "window" and r.lo == cut
        ]
        span = max(falling) if falling else 30.0
        if truncate_windows:
            keep = x >= cut + span / 2
            x, y = x[keep], y[keep]
        else:
            y = y + _window(x, cut, span)
    y = _detector(y, rng)
    meta = replace(spec.meta, prep=list(toks))
    return Spectrum(x, y, "absorbance", meta)


#: Measurement faults :func:`apply_fault` can add (invented, for benchmarks).
FAULTS = ("t-drift", "fringes")


def apply_fault(spectrum: Spectrum, fault: str, rng: np.random.Generator) -> Spectrum:
    """A measured spectrum with one fault of real measurements added (invented sizes):

    * ``t-drift``: a background weaker than the sample's lifts the transmittance baseline to
      105-140 % (returned as a 0..1 transmittance above 1);
    * ``fringes``: interference in a film or cell gap, a sinusoidal absorbance baseline of
      0.005-0.03 every 20-200 cm-1.
    """
    if fault not in FAULTS:
        raise ValueError(f"unknown fault {fault!r}; expected one of {FAULTS}")
    a = spectrum.to_absorbance()
    if fault == "fringes":
        spacing = rng.uniform(20.0, 200.0)
        y = a.y + rng.uniform(0.005, 0.03) * np.sin(2 * np.pi * a.x / spacing + rng.uniform(0, 6.3))
        return Spectrum(a.x, y, "absorbance", a.meta)
    t = np.power(10.0, -a.y) * rng.uniform(1.05, 1.4)
    return Spectrum(a.x, t, "transmittance", a.meta)


def as_percent_t_text(spectrum: Spectrum) -> str:
    """The spectrum as a two-column %T text file, high to low wavenumber, as instruments export."""
    t = spectrum.to_transmittance()
    rows = [f"{x:.2f},{100.0 * y:.4f}" for x, y in zip(t.x[::-1], t.y[::-1])]
    return "wavenumber (cm-1),%T\n" + "\n".join(rows) + "\n"
