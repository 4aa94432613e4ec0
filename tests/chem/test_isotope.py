"""Unit checks of reflib.chem.isotope; physics checks are in
tests/outside/test_isotope_shifts.py."""

from __future__ import annotations

import math

import pytest

from reflib.chem.isotope import deuterated_range, deuterium_shift, isotope_shift, reduced_mass
from reflib.errors import ValidationError


def test_reduced_mass_is_symmetric_and_below_the_lighter_mass() -> None:
    """mu = m1 m2 / (m1 + m2): symmetric, and smaller than either mass (definition)."""
    assert reduced_mass(12.0, 1.008) == pytest.approx(reduced_mass(1.008, 12.0))
    assert reduced_mass(12.0, 1.008) < 1.008
    assert reduced_mass(2.0, 2.0) == pytest.approx(1.0)


def test_no_substitution_means_no_shift() -> None:
    """Same masses, same force constant: the wavenumber is unchanged (harmonic oscillator)."""
    assert isotope_shift(1715.0, light=(12.0, 15.999), heavy=(12.0, 15.999)) == pytest.approx(
        1715.0
    )


def test_heavier_isotope_lowers_a_stretch_by_the_square_root_of_the_mass_ratio() -> None:
    """nu ~ 1/sqrt(mu): 13C=O against 12C=O (harmonic oscillator, no source needed)."""
    nu = isotope_shift(1715.0, light=(12.0, 15.999), heavy=(13.003, 15.999))
    expected = 1715.0 * math.sqrt(reduced_mass(12.0, 15.999) / reduced_mass(13.003, 15.999))
    assert nu == pytest.approx(expected)
    assert 1670 < nu < 1680  # the familiar ~38 cm-1 13C carbonyl shift (from memory)


def test_anharmonic_prediction_is_higher_than_harmonic() -> None:
    """Morse oscillator: the X-D fundamental lies above rho * nu(X-H) when x_e w_e > 0."""
    assert deuterium_shift(3000.0, "C", anharmonic=True) > deuterium_shift(3000.0, "C")


def test_deuterated_range_brackets_both_models() -> None:
    lo, hi = deuterated_range(2840.0, 3000.0, "C")
    assert lo == pytest.approx(deuterium_shift(2840.0, "C"))
    assert hi == pytest.approx(deuterium_shift(3000.0, "C", anharmonic=True))


@pytest.mark.parametrize(
    "call",
    [
        lambda: reduced_mass(0.0, 1.0),
        lambda: reduced_mass(-1.0, 1.0),
        lambda: isotope_shift(-5.0),
        lambda: isotope_shift(float("nan")),
        lambda: isotope_shift(3000.0, anharmonicity_cm1=-1.0),
        lambda: deuterium_shift(3000.0, "S"),
        lambda: deuterated_range(3000.0, 2800.0),
    ],
)
def test_bad_input_is_a_validation_error(call) -> None:
    with pytest.raises(ValidationError):
        call()
