"""ATR against transmission in the search: which side is corrected, and that folding the
correction into the query and the weights is exactly correcting the stored references.

The correction itself is reflib.chem.prep.atr_correction (penetration depth proportional to
the wavelength, to first order: physics of the evanescent wave, common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.analysis.encode import Encoding, encode
from reflib.analysis.search import atr_factor, atr_side, weighted_cosine
from reflib.spectrum import PeakList


def test_atr_side_only_when_exactly_one_is_atr() -> None:
    assert atr_side(["atr"], ["film"]) == "query"
    assert atr_side(["chcl3", "nacl"], ["atr"]) == "ref"
    assert atr_side(["atr"], ["atr"]) is None
    assert atr_side(["film"], ["kbr"]) is None


def test_correcting_through_the_weights_equals_correcting_the_reference() -> None:
    enc = Encoding()
    rng = np.random.default_rng(0)
    q = rng.random(enc.size)
    refs = rng.random((3, enc.size))
    w = rng.random(enc.size)
    g = atr_factor(enc)
    direct = weighted_cosine(q, refs * g, w)
    folded = weighted_cosine(q / g, refs, w * g**2)
    assert folded == pytest.approx(direct, rel=1e-6)


def test_atr_correction_restores_the_transmission_ratio() -> None:
    """A C-H stretch at 2950 and a fingerprint band at 1000 of equal transmission intensity
    come out of an ATR measurement at about 1000/2950 of each other; after the correction the
    ATR vector compares with the transmission one better than before."""
    enc = Encoding()
    trans = encode(PeakList([1000.0, 2950.0], [1.0, 1.0]), enc)
    atr = encode(PeakList([1000.0, 2950.0], [1.0, 1000.0 / 2950.0]), enc)
    w = np.ones(enc.size)
    before = float(weighted_cosine(atr, trans[None, :], w)[0])
    after = float(weighted_cosine(atr * atr_factor(enc), trans[None, :], w)[0])
    assert after > before
    assert after == pytest.approx(1.0, abs=0.01)
