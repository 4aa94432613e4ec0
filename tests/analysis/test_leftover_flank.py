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


def test_foreign_bands_are_the_sample_bands_the_start_cannot_be():
    """A strong sample band where the starting material absorbs nothing (within the largest
    shift) belongs to another compound; a band at the starting material's own place does not
    count (common practice, no source)."""
    grid = np.arange(1000.0, 2000.0, 2.0)
    g = lambda c, w: np.exp(-0.5 * ((grid - c) / w) ** 2)  # noqa: E731
    start = g(1740.0, 5.0)
    sample = 0.1 * g(1740.0, 5.0) + g(1710.0, 10.0) + 0.05 * g(1300.0, 8.0)
    usable = np.ones(grid.size, bool)
    got = lo._foreign_bands(sample, grid, start, usable, noise=1e-3)
    # the 1710 band (30 cm-1 from the start's, farther than its shift) is foreign; the 1300
    # band is under FOREIGN_MIN_RELATIVE of the strongest; the 1740 band is the start's own
    assert got == [1710.0]


def test_neighbour_columns_hold_a_lorentzian_of_the_same_width():
    """Condensed-phase bands lie between Gaussian and Lorentzian (any spectroscopy text): each
    neighbouring band of the sample gets both shapes, the Lorentzian at half height one half
    width from its centre."""
    grid = np.arange(1000.0, 2000.0, 2.0)
    y = np.exp(-0.5 * ((grid - 1720.0) / (20.0 / 2.3548)) ** 2)
    win = lo._window(grid, 1760.0, 10.0, np.ones(grid.size, bool))
    cols = lo._neighbour_columns(y, grid, win, 1e-3)
    assert len(cols) == 2
    gau, lor = cols
    # same centre, same width at half height, and the Lorentzian's tail the longer one
    assert grid[int(np.argmax(lor))] == grid[int(np.argmax(gau))] == 1720.0
    assert np.sum(lor >= 0.5) == np.sum(gau >= 0.5)
    far = np.searchsorted(grid, 1780.0)  # three widths away
    assert lor[far] > 10 * gau[far]


def test_neighbours_are_bands_that_stand_out_of_the_noise():
    """A maximum only a few noise units above the trace between it and the starting-material
    band is a ripple, not a band of its own (a peak must stand out of the noise; common
    practice, no source). Fitted as a neighbour it would copy the band's own shape."""
    grid = np.arange(1000.0, 2000.0, 2.0)
    g = lambda c, w: np.exp(-0.5 * ((grid - c) / (w / 2.3548)) ** 2)  # noqa: E731
    noise = 1e-3
    shelf = np.where(grid > 1715.0, 0.2, 0.0)
    win = lo._window(grid, 1700.0, 20.0, np.ones(grid.size, bool))
    ripple = g(1700.0, 20.0) + shelf + 3 * noise * g(1744.0, 6.0)
    assert lo._neighbour_columns(ripple, grid, win, noise) == []
    band = g(1700.0, 20.0) + shelf + 50 * noise * g(1744.0, 6.0)
    cols = lo._neighbour_columns(band, grid, win, noise)
    assert len(cols) == 2 and all(grid[int(np.argmax(c))] == 1744.0 for c in cols)
