"""Encoding: peak list -> vector on the grid; region profiles."""

import numpy as np
import pytest

from reflib.analysis.encode import (
    Encoding,
    coverage_mask,
    encode,
    parse_profile,
    region_profile,
    temper,
)
from reflib.errors import ValidationError
from reflib.spectrum import PeakList


def test_band_lands_on_its_bin_with_the_stated_width():
    enc = Encoding(bin_width=1.0, broadening=10.0)
    v = encode(PeakList([1715.0], [1.0]), enc).astype(float)
    grid = enc.grid()
    assert grid[v.argmax()] == 1715.0
    # FWHM of the spread band equals the broadening (definition of the encoding)
    above = grid[v >= v.max() / 2]
    assert above.max() - above.min() == pytest.approx(10.0, abs=1.01)


def test_sqrt_tempering_compresses_strong_bands():
    enc = Encoding()
    v = encode(PeakList([1715.0, 1100.0], [1.0, 0.25]), enc)
    grid = enc.grid()
    hi = v[np.argmin(abs(grid - 1716))]
    lo = v[np.argmin(abs(grid - 1100))]
    assert lo / hi == pytest.approx(0.5, rel=0.05)
    assert temper(np.array([0.25]), "linear")[0] == 0.25


def test_broad_band_keeps_its_width_and_does_not_dominate():
    enc = Encoding()
    sharp = encode(PeakList([1715.0], [1.0]), enc).astype(float)
    broad = encode(PeakList([3350.0], [1.0], widths=[200.0], broad=[True]), enc).astype(float)
    grid = enc.grid()
    above = grid[broad >= broad.max() / 2]
    assert above.max() - above.min() == pytest.approx(200.0, abs=2 * enc.bin_width)
    # squared norms comparable (within a factor of 1.5): one broad band cannot swamp the cosine
    assert 0.67 < (broad @ broad) / (sharp @ sharp) < 1.5


def test_bands_outside_the_grid_are_dropped():
    enc = Encoding(lo=400, hi=4000)
    assert not encode(PeakList([200.0, 4600.0], [1.0, 1.0]), enc).any()


def test_encoding_key_changes_with_parameters():
    assert Encoding().key() == Encoding().key()
    assert Encoding().key() != Encoding(broadening=12.0).key()
    assert Encoding.from_dict(Encoding(bin_width=2.0).to_dict()) == Encoding(bin_width=2.0)


def test_bad_encoding_parameters_are_refused():
    with pytest.raises(ValidationError):
        Encoding(lo=4000, hi=400)
    with pytest.raises(ValidationError):
        Encoding(transform="cube")


def test_profiles_and_ranges():
    grid = np.array([500.0, 1700.0, 3000.0])
    # functional-group region 4000-1500 cm-1 and fingerprint 1500-400 cm-1 (common practice)
    assert region_profile(grid, "functional").tolist() == [1.0, 2.0, 2.0]
    assert region_profile(grid, "fingerprint").tolist() == [2.0, 1.0, 1.0]
    assert region_profile(grid, "1800-1650:3").tolist() == [1.0, 3.0, 1.0]
    assert parse_profile(None) == []
    with pytest.raises(ValidationError, match="expected a profile name"):
        parse_profile("carbonyl")
    assert coverage_mask(grid, 1000, None).tolist() == [0.0, 1.0, 1.0]
