"""The preparation masks against facts of the trade and physics.

Each check names its source: "common practice, no source" (what every IR lab knows), "from
memory", or a named publication.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from reflib.chem.prep import TOKENS, harmonic_isotope_shift, weight_profile


def w_at(cm1: float, tokens, *, air: bool = False) -> float:
    return float(weight_profile(np.array([cm1]), tokens, air=air)[0])


@pytest.mark.parametrize("cm1", [2920.0, 2850.0, 1465.0, 1380.0])
def test_mineral_oil_bands_are_masked_in_a_nujol_mull(cm1):
    """Mineral-oil bands near 2920, 2850, 1465 and 1380 cm-1 (common practice, no source)."""
    assert w_at(cm1, ["nujol"]) < 0.5
    assert w_at(cm1, ["nujol"], air=True) < 0.5
    assert w_at(cm1, []) == 1.0  # the mask comes from the mull, not from nothing


def test_a_nujol_mull_leaves_the_carbonyl_region_untouched():
    """The point of a mull: carbonyl stretches near 1700 cm-1 stay visible (common practice)."""
    grid = np.arange(1650.0, 1800.5, 1.0)
    assert np.all(weight_profile(grid, ["nujol"], air=False) == 1.0)
    # with the air included the mull adds nothing on top of the air's own water lines
    np.testing.assert_array_equal(weight_profile(grid, ["nujol"]), weight_profile(grid, []))


def test_fluorocarbon_mull_is_the_complement_of_a_mineral_oil_mull():
    """Fluorocarbon oil has no C-H and absorbs strongly below about 1360 cm-1; mineral oil the
    reverse (common practice, no source; Wikipedia (pl), article 'Nujol')."""
    ch = np.arange(2800.0, 3000.5, 5.0)
    cf = np.arange(1100.0, 1350.5, 5.0)
    assert np.all(weight_profile(ch, ["nujol"], air=False) == 0.0)
    assert np.all(weight_profile(ch, ["fluorocarbon"], air=False) == 1.0)
    assert np.all(weight_profile(cf, ["fluorocarbon"], air=False) == 0.0)
    assert np.all(weight_profile(cf, ["nujol"], air=False) == 1.0)
    below = np.arange(500.0, 1360.0, 10.0)
    assert np.all(weight_profile(below, ["fluorocarbon"], air=False) < 0.5)
    assert w_at(1700.0, ["fluorocarbon"]) == 1.0


def test_chloroform_ch_stretch_is_masked():
    """The chloroform C-H stretch near 3020 cm-1 (common practice, no source)."""
    assert w_at(3020.0, ["chcl3"]) < 0.5
    assert w_at(3020.0, ["cdcl3"]) == 1.0  # deuterated: no C-H stretch of the solvent


def test_cd_stretch_predicted_by_the_harmonic_oscillator_and_masked_for_cdcl3_only():
    """Harmonic oscillator: nu scales as 1/sqrt(reduced mass) (physics; atomic masses C 12.000,
    H 1.008, D 2.014 from memory). From a 3020 cm-1 C-H stretch it predicts a C-D stretch near
    2216 cm-1; the observed C-D stretch of deuterochloroform is near 2250 cm-1 (common practice,
    no source), a little higher because anharmonicity lowers the C-H stretch more than the C-D."""
    mu_ch = 12.000 * 1.008 / (12.000 + 1.008)
    mu_cd = 12.000 * 2.014 / (12.000 + 2.014)
    by_hand = 3020.0 * math.sqrt(mu_ch / mu_cd)
    predicted = harmonic_isotope_shift(3020.0, 12.000, 1.008, 2.014)
    assert predicted == pytest.approx(by_hand, rel=1e-12)
    assert predicted == pytest.approx(2216.0, abs=5.0)
    observed = 2250.0
    assert 1.0 < observed / predicted < 1.03
    assert w_at(observed, ["cdcl3"]) < 0.5
    assert w_at(observed, ["chcl3"]) == 1.0


def test_atmospheric_co2_is_always_down_weighted():
    """Atmospheric CO2 near 2350 cm-1 (common practice, no source), whatever the preparation."""
    for tokens in [[], *([t] for t in TOKENS)]:
        assert w_at(2350.0, tokens, air=True) < 1.0
    assert w_at(2350.0, [], air=True) > 0.0  # down-weighted, not dropped
    assert w_at(667.0, [], air=True) < 1.0  # the CO2 bend (from memory)


def test_water_vapour_is_down_weighted_not_dropped():
    """Water-vapour lines 3900-3500 and 1900-1300 cm-1 (common practice, no source)."""
    for cm1 in (3756.0, 3657.0, 1595.0):
        assert 0.0 < w_at(cm1, [], air=True) < 1.0


def test_caf2_window_passes_nothing_below_about_1000():
    """CaF2 windows pass nothing below about 1000 cm-1 (common practice, no source)."""
    assert w_at(950.0, ["caf2"]) == 0.0
    assert np.all(weight_profile(np.arange(400.0, 1000.5, 10.0), ["caf2"], air=False) == 0.0)
    assert w_at(1200.0, ["caf2"]) == 1.0
    assert w_at(1200.0, ["caf2"], air=True) == 1.0


@pytest.mark.parametrize(
    ("window", "dark", "clear"),
    [("baf2", 750.0, 900.0), ("nacl", 600.0, 720.0), ("kbr-window", 350.0, 450.0)],
)
def test_other_window_cutoffs(window, dark, clear):
    """Usable lower limits of cell windows: BaF2 about 800, NaCl about 650, KBr about 400 cm-1
    (from memory)."""
    assert w_at(dark, [window]) == 0.0
    assert w_at(clear, [window]) == 1.0


def test_kbr_pellet_water_bands_are_down_weighted():
    """A KBr pellet picks up water: broad band near 3450 and a weak one near 1640 cm-1 (common
    practice, no source)."""
    assert w_at(3450.0, ["kbr"]) < 0.5
    assert w_at(1640.0, ["kbr"]) < 1.0
    assert w_at(1700.0, ["kbr"]) == 1.0


def test_ccl4_and_cs2_cover_complementary_ranges():
    """Transparent windows: CCl4 1-6 um (10000-1667 cm-1), CS2 7.4-11.0 um (1351-909 cm-1)
    (S. Ghosal, J. L. Ebert, S. A. Self, Infrared Physics 34 (1993) 621, abstract); the trade
    runs CCl4 above about 1330 cm-1 and CS2 below (common practice, no source)."""
    assert np.all(weight_profile(np.arange(1667.0, 4000.5, 5.0), ["ccl4"], air=False) == 1.0)
    assert np.all(weight_profile(np.arange(909.0, 1351.5, 2.0), ["cs2"], air=False) == 1.0)
    assert w_at(1515.0, ["cs2"]) == 0.0  # the C=S stretch that CCl4 covers
    assert w_at(780.0, ["ccl4"]) == 0.0  # the C-Cl stretch that CS2 covers
