"""The tail a nearby product band puts at a starting-material band (start-only leftover)."""

import numpy as np

from reflib.analysis import leftover as lo


def test_flank_allowance_is_a_lorentzian_tail():
    """A Lorentzian of FWHM w is at w**2 / (w**2 + 4 d**2) of its height at distance d (the
    Lorentzian line shape; any spectroscopy text). Half a width away: half the height."""
    grid = np.arange(1000.0, 2000.0, 2.0)
    y = np.zeros_like(grid)
    y[np.searchsorted(grid, 1700.0)] = 0.8  # the sample's height at the product band
    w, peak = 20.0, 0.4
    got = lo._flank_allowance(y, grid, 1730.0, w, peak, [1700.0])
    want = lo.PRODUCT_TAIL * 0.8 * w**2 / (w**2 + 4 * 30.0**2) / peak
    assert abs(got - want) < 1e-12


def test_flank_allowance_ignores_bands_on_top_and_far_away():
    """A product band within the largest shift is judged by shape, not as a tail; one many
    widths away leaves none (common practice, no source)."""
    grid = np.arange(1000.0, 2000.0, 2.0)
    y = np.full_like(grid, 0.5)
    on_top = 1730.0 + 0.5 * lo.START_MAX_SHIFT_CM1
    far = 1730.0 + 2.0 * lo.PRODUCT_TAIL_REACH * 20.0
    assert lo._flank_allowance(y, grid, 1730.0, 20.0, 0.4, [on_top, far]) == 0.0
    assert lo._flank_allowance(y, grid, 1730.0, 20.0, 0.4, []) == 0.0
