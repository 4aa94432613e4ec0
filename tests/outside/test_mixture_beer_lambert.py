"""Leftover and mixtures on REAL spectra: gas-phase infrared spectra of the jcamp 1.3.2 sdist.

Source: the ``data/infrared_spectra`` folder of the PyPI package jcamp 1.3.2 (fetched by
scripts/fetch_reference_data.py; fixture ``gas_phase`` in tests/conftest.py). The files used
here (acetone, isopropyl alcohol, 2-butanone, 1-butanol, ethyl acetate) share one absorbance axis
(0.24 cm-1 steps, 575-3975 cm-1), so mixtures can be made point by point.

Physical law: Beer-Lambert additivity - the absorbance of a mixture is the sum of its
components' absorbances, each proportional to its amount (A = sum_i eps_i c_i l). A mixture
made as ``s * A1 / area1 + (1 - s) * A2 / area2`` (areas: trapezoid integrals of each spectrum's
absorbance over the common range) therefore holds a share ``s`` of its integrated absorbance from
component 1, which is what reflib reports as the share of the signal.
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.analysis import leftover, mixture
from reflib.analysis.compare import compare
from reflib.io import read_spectrum
from reflib.spectrum import Metadata, Spectrum

pytestmark = pytest.mark.outside

#: (starting material, product) pairs; acetone -> isopropyl alcohol is a ketone reduction.
PAIRS = [
    ("acetone", "isopropyl alcohol"),
    ("2-butanone", "1-butanol"),
    ("ethyl acetate", "isopropyl alcohol"),
]


def _load(gas_phase, name: str) -> Spectrum:
    s = read_spectrum(gas_phase / f"{name}.jdx").to_absorbance()
    return Spectrum(s.x, s.y, "absorbance", Metadata(title=name))


def _unit_area(s: Spectrum) -> np.ndarray:
    return s.y / np.trapezoid(s.y, s.x)


@pytest.fixture(scope="module")
def spectra(gas_phase):
    names = {n for pair in PAIRS for n in pair}
    out = {n: _load(gas_phase, n) for n in names}
    x0 = out["acetone"].x
    for n, s in out.items():
        assert s.x.size == x0.size and np.allclose(s.x, x0), f"{n} is on another axis"
    return out


@pytest.mark.parametrize("start,product", PAIRS)
@pytest.mark.parametrize("share", [0.05, 0.1, 0.2, 0.4])
def test_beer_lambert_mixture_gives_the_ratio_back(spectra, start, product, share):
    """Within 2 points of the share it was made with (issue: outside checks)."""
    s, p = spectra[start], spectra[product]
    y = share * _unit_area(s) + (1 - share) * _unit_area(p)
    smp = Spectrum(s.x, y, "absorbance", Metadata(title="mixture"))
    r = leftover.leftover(smp, s, p)
    assert r.detected
    assert abs(r.share - share) <= 0.02, (r.share, share)


@pytest.mark.parametrize("start,product", PAIRS)
def test_pure_product_is_not_called_detected(spectra, start, product):
    """No starting material: not detected, also after a 1 cm-1 shift and noise of 0.5 % of the
    strongest band (a re-measurement)."""
    s, p = spectra[start], spectra[product]
    assert not leftover.leftover(p, s, p).detected
    rng = np.random.default_rng(0)
    y = np.interp(p.x - 1.0, p.x, p.y) + rng.normal(0, 0.005 * p.y.max(), p.y.size)
    r = leftover.leftover(Spectrum(p.x, y, "absorbance", Metadata(title="remeasured")), s, p)
    assert not r.detected, (r.share, r.z)
    assert not leftover.leftover(p, s).detected  # start only


def test_carbonyl_is_diagnostic_for_acetone_in_isopropyl_alcohol(spectra):
    """Acetone's C=O stretch (gas phase near 1738 cm-1; condensed about 1715, from memory) is
    among its diagnostic bands against isopropyl alcohol, which has no carbonyl."""
    s, p = spectra["acetone"], spectra["isopropyl alcohol"]
    y = 0.1 * _unit_area(s) + 0.9 * _unit_area(p)
    r = leftover.leftover(Spectrum(s.x, y), s, p)
    assert any(1700 <= b.position <= 1760 and b.seen for b in r.diagnostic_bands)


def test_mixture_of_real_spectra_names_both(spectra):
    """A 30:70 Beer-Lambert mixture is explained by its two components with those shares."""
    s, p = spectra["2-butanone"], spectra["1-butanol"]
    other = spectra["ethyl acetate"]
    y = 0.3 * _unit_area(s) + 0.7 * _unit_area(p)
    res = mixture.explain_mixture(
        Spectrum(s.x, y), [("ethyl acetate", other), ("2-butanone", s), ("1-butanol", p)]
    )
    shares = {c.info["name"]: c.share for c in res.components}
    assert set(shares) == {"2-butanone", "1-butanol"}
    assert abs(shares["2-butanone"] - 0.3) <= 0.02


def test_compare_acetone_with_isopropyl_alcohol(spectra):
    """Ketone -> alcohol on real spectra: the C=O band is lost (gas phase near 1740 cm-1) and a
    C-O stretch of the secondary alcohol appears (near 1150 cm-1 in the gas; condensed
    1100-1150, from memory). The gas-phase free O-H near 3650 cm-1 is under a tenth of the
    strongest band in this file, so it is below what compare reports."""
    c = compare(spectra["acetone"], spectra["isopropyl alcohol"])
    assert any(1700 <= b.position <= 1760 for b in c.lost)
    assert any(1100 <= b.position <= 1170 for b in c.new)
    assert any("C=O" in g for b in c.lost for g in b.groups)
    assert "is gone" in c.summary[0]
