"""Isotope shifts against the harmonic-oscillator law and the C-D band of deuterochloroform."""

from __future__ import annotations

import math

import pytest

from reflib.chem import bands
from reflib.chem.isotope import MASSES, deuterium_shift, isotope_shift


def test_ch_at_3020_predicts_cd_near_2216() -> None:
    """Harmonic oscillator (nu ~ mu**-1/2) with C 12.000, H 1.008, D 2.014 amu.

    mu(C-H) = 12 x 1.008 / 13.008 = 0.92989; mu(C-D) = 12 x 2.014 / 14.014 = 1.72456;
    sqrt(0.92989 / 1.72456) = 0.73430; 3020 x 0.73430 = 2217.6 cm-1 ("near 2216").
    """
    nu = isotope_shift(3020.0, light=(12.000, 1.008), heavy=(12.000, 2.014))
    assert nu == pytest.approx(3020.0 * math.sqrt(0.929889 / 1.724561), abs=0.05)
    assert abs(nu - 2216.0) < 3.0
    assert deuterium_shift(3020.0, "C") == pytest.approx(nu)


def test_ratio_is_close_to_one_over_sqrt_two_for_heavy_partners() -> None:
    """As the partner atom grows heavy, mu -> m(H) and the ratio -> sqrt(1.008/2.014)."""
    limit = math.sqrt(MASSES["H"] / MASSES["D"])
    nu = isotope_shift(1000.0, light=(1e6, MASSES["H"]), heavy=(1e6, MASSES["D"]))
    assert nu / 1000.0 == pytest.approx(limit, rel=1e-5)
    # O-H and N-H lie between that limit and the C-H ratio (heavier partner, lower ratio).
    assert limit < deuterium_shift(1000.0, "O") / 1000.0 < deuterium_shift(1000.0, "C") / 1000.0


def test_deuterochloroform_cd_stretch_is_annotated_as_cd() -> None:
    """The C-D stretch of CDCl3 near 2250 cm-1 (common practice, no source) reads as C-D.

    The harmonic prediction from chloroform's C-H stretch (3020 -> 2218 cm-1) falls some
    30 cm-1 short of the observed band because the bond is anharmonic: the Morse correction
    2 x_e w_e (rho - rho**2), with x_e w_e near 60 cm-1 for C-H, adds about 23 cm-1. The derived
    C-D range of the table uses the harmonic value for its lower edge and the anharmonic value
    for its upper edge, so it contains the observed band.
    """
    harmonic = deuterium_shift(3020.0, "C")
    assert 2250.0 - harmonic > 20.0  # the known shortfall of the harmonic model
    cd_rows = [r for r in bands.table() if r.group == "c_deuterium"]
    assert any(r.lo_cm1 <= 2250.0 <= r.hi_cm1 for r in cd_rows)
    # An unknown weak sharp band at 2250: C-D is among the top three readings...
    found = bands.candidates(2250.0, strength="w", broad=False, top=3)
    assert any("C-D" in a.label for a in found), [a.label for a in found]
    # ...and first when the sample is known to be a CDCl3 solution.
    first = bands.candidates(2250.0, strength="w", broad=False, prep=["cdcl3"])[0]
    assert "C-D" in first.label
    # Restricted to the groups of CDCl3 itself, the band is the generic derived C-D stretch.
    own = bands.candidates(2250.0, groups=["c_deuterium", "organochlorine"])
    assert own and own[0].group == "c_deuterium" and own[0].kind == "isotope"
