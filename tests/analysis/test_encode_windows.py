"""A band's window in the encoding is as wide as that band needs, whatever its neighbours.

Physical law (Beer-Lambert: the absorbances of bands add), so the vector of a peak list is
the sum of the vectors of its bands taken one at a time; a broad O-H band beside sharp ones
must not change what the sharp ones contribute. Each band is encoded beside the same strong
band outside the encoded range, so every list keeps the same intensity scale.
"""

from __future__ import annotations

import numpy as np

from reflib.analysis.encode import DEFAULT_ENCODING, encode
from reflib.spectrum import PeakList


def test_vector_is_the_sum_of_its_bands_with_broad_and_sharp_bands_mixed():
    enc = DEFAULT_ENCODING
    far = enc.hi + 500.0  # strongest band, outside the encoded range: sets the scale only
    rng = np.random.default_rng(4)
    pos = np.sort(rng.uniform(enc.lo + 50, enc.hi - 50, 25))
    inten = rng.uniform(0.05, 0.9, 25)
    widths = np.where(rng.random(25) < 0.5, rng.uniform(4, 20, 25), np.nan)
    broad = np.zeros(25, bool)
    broad[[3, 17]] = True
    widths[[3, 17]] = [250.0, 120.0]

    def one(sel):
        return encode(
            PeakList(
                np.r_[pos[sel], far],
                np.r_[inten[sel], 1.0],
                np.r_[widths[sel], np.nan],
                None,
                np.r_[broad[sel], False],
            ),
            enc,
        ).astype(np.float64)

    whole = one(np.arange(25))
    parts = sum(one(np.array([i])) for i in range(25))
    assert np.abs(whole).max() > 0.1
    np.testing.assert_allclose(whole, parts, rtol=1e-5, atol=1e-6)
    # the broad band reaches far beyond a sharp band's 4-sigma window
    wide = one(np.array([3]))
    assert (wide > 1e-4).sum() > 5 * (one(np.array([4])) > 1e-4).sum()
