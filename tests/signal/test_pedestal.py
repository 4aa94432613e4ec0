"""Broad bands beneath sharp ones (reflib.signal.pedestal) on sums of known line shapes.

Line shapes: Gaussian for an H-bonded O-H stretch (FWHM about 250 cm-1 near 3330), Lorentzian
for the sharp terminal-alkyne C-H stretch near 3300 (FWHM about 25); positions and widths are
typical condensed-phase values from memory. That a sum of bands is the sum of their
absorbances is Beer-Lambert (physical law).
"""

from __future__ import annotations

import numpy as np

from reflib.signal.pedestal import broad_beneath

X = np.arange(400.0, 4000.5, 1.0)


def gauss(centre, fwhm, h):
    return h * np.exp(-4 * np.log(2) * ((X - centre) / fwhm) ** 2)


def lorentz(centre, fwhm, h):
    return h / (1 + ((X - centre) / (fwhm / 2)) ** 2)


ALKYL = lorentz(2960, 18, 0.15) + lorentz(2870, 15, 0.1) + lorentz(1460, 15, 0.2)


def test_oh_under_the_alkyne_ch_is_found():
    y = gauss(3330, 250, 0.4) + lorentz(3300, 25, 0.5) + ALKYL
    pos, h, w = broad_beneath(X, y, 0.001, np.array([2870.0, 2960.0, 3300.0]), np.zeros(3, bool))
    assert pos.size == 1
    assert abs(pos[0] - 3330) <= 15 and 0.3 <= h[0] <= 0.5 and 200 <= w[0] <= 300


def test_a_strong_sharp_band_alone_leaves_no_broad_band():
    """The opening leaves the Lorentzian's wings; they are not read as a band."""
    y = lorentz(3300, 22, 1.0) + ALKYL
    pos, _, _ = broad_beneath(X, y, 0.001, np.array([2870.0, 2960.0, 3300.0]), np.zeros(3, bool))
    assert pos.size == 0


def test_a_broad_band_already_picked_is_not_added_again():
    y = gauss(3350, 250, 0.6) + ALKYL
    pos, _, _ = broad_beneath(
        X, y, 0.001, np.array([2870.0, 2960.0, 3350.0]), np.array([False, False, True])
    )
    assert pos.size == 0


def test_only_the_x_h_stretching_region_is_read():
    """A broad band in the fingerprint region (for example Si-O-Si near 1080) is left to the
    picker."""
    y = gauss(1080, 150, 0.6) + lorentz(1100, 15, 0.8) + ALKYL
    pos, _, _ = broad_beneath(X, y, 0.001, np.array([1100.0, 1460.0]), np.zeros(2, bool))
    assert pos.size == 0


def test_noise_decides_what_is_too_weak():
    y = gauss(3330, 250, 0.1) + lorentz(3300, 25, 0.3) + ALKYL
    sharp = np.array([2870.0, 2960.0, 3300.0])
    assert broad_beneath(X, y, 0.02, sharp, np.zeros(3, bool))[0].size == 0  # 8 sigma = 0.16
    assert broad_beneath(X, y, 0.001, sharp, np.zeros(3, bool))[0].size == 1


def test_a_faint_pedestal_under_a_strong_band_is_not_told_from_its_wings():
    """0.02 under a 0.5 band of FWHM 25: its wings alone stand at 0.5 / 17 = 0.03 in the
    opening, so the pedestal is not claimed."""
    y = gauss(3330, 250, 0.02) + lorentz(3300, 25, 0.5) + ALKYL
    sharp = np.array([2870.0, 2960.0, 3300.0])
    assert broad_beneath(X, y, 0.0001, sharp, np.zeros(3, bool), min_relative=0.01)[0].size == 0


def test_the_sharp_band_keeps_its_own_width_on_the_broad_one():
    """Picked from a whole spectrum: the O-H (FWHM 250) and the alkyne C-H on it (FWHM 25)
    come out as two bands, each with about its own width."""
    from reflib.signal.peaks import pick_peaks
    from reflib.signal.pedestal import widths_above
    from reflib.spectrum import Spectrum

    y = gauss(3330, 250, 0.4) + lorentz(3300, 25, 0.5) + ALKYL + 0.01
    assert abs(widths_above(X, y, np.array([3300.0]))[0] - 25) <= 5
    pl = pick_peaks(Spectrum(X, y))
    oh = np.flatnonzero(np.abs(pl.positions - 3330) <= 20)
    ch = np.flatnonzero(np.abs(pl.positions - 3300) <= 3)
    assert oh.size == 1 and ch.size == 1, pl.to_text()
    assert pl.broad[oh[0]] and not pl.broad[ch[0]]
    assert 18 <= pl.widths[ch[0]] <= 32 and 180 <= pl.widths[oh[0]] <= 320
