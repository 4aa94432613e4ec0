"""Opaque regions as holes, flat tops at their centre, shoulders and flank bands, on constructed
spectra whose right answer is known exactly.

Shapes are textbook Gaussians (FWHM = 2 sqrt(2 ln 2) s) and absorbance is -log10 of
transmittance (Beer-Lambert); a flat top at a few %T is what stray light or a chart's floor
gives a band driven past saturation (common practice, no source). Real-spectrum checks are in
tests/outside/test_saturated_co2.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.analysis.encode import comparable_peaks
from reflib.signal.peaks import parse_holes, pick_peaks
from reflib.spectrum import Metadata, Spectrum, absorbance_to_transmittance

FWHM_PER_SD = 2.0 * np.sqrt(2.0 * np.log(2.0))


def gaussian(x: np.ndarray, centre: float, fwhm: float, height: float = 1.0) -> np.ndarray:
    return height * np.exp(-0.5 * ((x - centre) / (fwhm / FWHM_PER_SD)) ** 2)


def grid(step: float = 1.0, lo: float = 400.0, hi: float = 4000.0) -> np.ndarray:
    return lo + step * np.arange(int(round((hi - lo) / step)) + 1)


def near(pl, target: float, tol: float) -> np.ndarray:
    return np.flatnonzero(np.abs(pl.positions - target) <= tol)


# --- flat tops ---------------------------------------------------------------------------------


@pytest.mark.parametrize("floor", [0.015, 0.03])
def test_flat_topped_band_at_a_stray_light_floor_is_picked_at_its_centre(floor: float) -> None:
    """A lopsided strong band (two Gaussians, the stronger one off centre) that bottoms out at
    a few %T: one band, at the centre of the plateau rather than at the lowest point, flagged
    saturated; an ordinary band elsewhere is untouched."""
    x = grid(1.0)
    a = gaussian(x, 2340.0, 50.0, 3.0) + gaussian(x, 2325.0, 20.0, 1.0) + gaussian(x, 1200, 15, 0.4)
    rng = np.random.default_rng(1)
    t = floor + (1 - floor) * absorbance_to_transmittance(a) + rng.normal(0.0, 5e-4, x.size)
    pl = pick_peaks(Spectrum(x, np.clip(t, 1e-4, None), "transmittance"))
    plateau = x[t <= t.min() + 0.025]
    centre = 0.5 * (plateau.min() + plateau.max())
    assert abs(centre - float(x[np.argmin(t)])) > 3.0  # the lowest point is off centre
    inside = near(pl, 2335.0, 40.0)
    assert inside.size == 1
    assert float(pl.positions[inside[0]]) == pytest.approx(centre, abs=1.5)
    assert float(pl.meta.extra["saturated"]) == pytest.approx(centre, abs=1.5)
    assert near(pl, 1200.0, 0.5).size == 1


def test_a_band_at_forty_percent_transmittance_is_not_saturated() -> None:
    """The floor rule needs a floor: a spectrum whose strongest band stops at 40 %T has none."""
    x = grid(1.0)
    t = absorbance_to_transmittance(gaussian(x, 1715.0, 20.0, 0.4) + gaussian(x, 1200, 15, 0.2))
    pl = pick_peaks(Spectrum(x, t, "transmittance"))
    assert "saturated" not in pl.meta.extra
    assert pl.positions == pytest.approx([1200.0, 1715.0], abs=0.3)


def test_saturated_band_counts_as_strong_in_the_comparison() -> None:
    """In the peak list the search compares, a flat-topped band is at the top of the scale."""
    x = grid(1.0)
    a = np.minimum(gaussian(x, 1715.0, 40.0, 3.0), 1.2) + gaussian(x, 1100.0, 15.0, 1.0)
    pl = pick_peaks(Spectrum(x, a + 0.02))
    assert "1715" in pl.meta.extra["saturated"]
    cmp_ = comparable_peaks(pl, [])
    assert float(cmp_.intensities[near(cmp_, 1715.0, 1.0)[0]]) == 1.0


# --- holes -------------------------------------------------------------------------------------


def _opaque_end_spectrum(rng: np.random.Generator, prep=()) -> tuple[np.ndarray, np.ndarray]:
    """Bands at 870 and 950 cm-1 beside an opaque block from 824 cm-1 down to the end of the
    data (a solvent and a window with no light), plus a band at 1600."""
    x = grid(2.0)
    a = gaussian(x, 870.0, 14.0, 0.30) + gaussian(x, 950.0, 14.0, 0.25)
    a += gaussian(x, 1600.0, 14.0, 1.0) + 0.05
    block = 0.5 * (1 + np.tanh((824.0 - x) / 4.0))
    t = absorbance_to_transmittance(a + 6.0 * block)
    t = np.clip(t + rng.normal(0.0, 3e-4, x.size), 1e-4, None)
    return x, -np.log10(t)


def test_bands_beside_an_opaque_end_block_keep_their_heights() -> None:
    """The block is cut out with its wall before the baseline, so the baseline cannot climb onto
    the bands beside it: both are found at their heights (relative to the 1600 band) within
    10 %, and the cut range covers the block and stops short of the first band."""
    rng = np.random.default_rng(3)
    x, a = _opaque_end_spectrum(rng)
    pl = pick_peaks(Spectrum(x, a, "absorbance", Metadata(prep=["chcl3", "nacl"])))
    for centre, rel in ((870.0, 0.30), (950.0, 0.25)):
        k = near(pl, centre, 2.0)
        assert k.size == 1, (centre, pl.to_text())
        assert float(pl.intensities[k[0]]) == pytest.approx(rel, rel=0.1)
    holes = parse_holes(pl.meta.extra["holes"])
    assert len(holes) == 1
    lo, hi = holes[0]
    assert lo == pytest.approx(400.0) and 824.0 < hi < 860.0
    assert not np.any(pl.positions < hi)


@pytest.mark.parametrize("centre", np.arange(826.0, 850.0, 2.0))
def test_a_band_beside_a_hole_is_reported_or_inside_the_reported_hole(centre: float) -> None:
    """No band-free edge between the hole and the first place a band can be reported: a band
    beside the opaque block is either picked (within 3 cm-1) or its centre lies in the listed
    hole, where the comparison does not count it as absent. (Before the edge was listed, bands
    at 832 and 834 cm-1 were neither.)"""
    x, a = _opaque_end_spectrum(np.random.default_rng(3))
    a = a + gaussian(x, centre, 10.0, 0.3)
    pl = pick_peaks(Spectrum(x, a, "absorbance", Metadata(prep=["chcl3", "nacl"])))
    ((lo, hi),) = parse_holes(pl.meta.extra["holes"])
    k = near(pl, centre, 3.0)
    if k.size:
        assert float(pl.positions[k[0]]) > hi, (centre, hi, pl.to_text())
    else:
        assert lo <= centre <= hi, (centre, hi, pl.to_text())


def test_an_interior_opaque_block_is_a_hole_not_a_band() -> None:
    """A 150 cm-1 opaque block inside the range (carbon tetrachloride in its cell, 700-850) is
    a hole: no band inside it, the bands either side kept at their heights, the block listed."""
    x = grid(2.0)
    a = gaussian(x, 650.0, 14.0, 0.3) + gaussian(x, 900.0, 14.0, 0.3) + gaussian(x, 1700, 14)
    block = 0.25 * (1 + np.tanh((x - 700.0) / 4.0)) * (1 + np.tanh((850.0 - x) / 4.0))
    t = absorbance_to_transmittance(a + 0.05 + 6.0 * block)
    t = np.clip(t + np.random.default_rng(5).normal(0.0, 3e-4, x.size), 1e-4, None)
    pl = pick_peaks(Spectrum(x, -np.log10(t), "absorbance", Metadata(prep=["ccl4"])))
    assert not np.any((pl.positions > 690.0) & (pl.positions < 860.0)), pl.to_text()
    for centre in (650.0, 900.0):
        k = near(pl, centre, 2.0)
        assert k.size == 1
        assert float(pl.intensities[k[0]]) == pytest.approx(0.3, rel=0.1)
    ((lo, hi),) = parse_holes(pl.meta.extra["holes"])
    assert lo < 700.0 and hi > 850.0


def test_holes_count_as_not_covered_in_the_comparison() -> None:
    """A cut range gets weight 0 in the comparison, so a band erased there is not 'absent'."""
    from reflib.analysis.encode import Encoding
    from reflib.analysis.search import comparison_weights

    enc = Encoding()
    w = comparison_weights(enc, ["film"], ["film"], holes=[(1000.0, 1100.0)])
    g = enc.grid()
    assert np.all(w[(g >= 1000) & (g <= 1100)] == 0.0)
    assert np.all(w[(g >= 1200) & (g <= 1250)] > 0.0)


# --- shoulders and flank bands -----------------------------------------------------------------


def _shoulder_spectrum() -> Spectrum:
    """1700 cm-1 (FWHM 16, height 1) with a shoulder at 1716 (FWHM 12, height 0.35)."""
    x = grid(1.0)
    a = gaussian(x, 1700.0, 16.0) + gaussian(x, 1716.0, 12.0, 0.35) + 0.02
    d = np.diff(a[(x > 1650) & (x < 1760)])
    assert np.sum((d[:-1] > 0) & (d[1:] <= 0)) == 1  # a single maximum: a true shoulder
    return Spectrum(x, a + np.random.default_rng(2).normal(0.0, 5e-4, x.size))


def test_shoulder_on_a_two_gaussian_sum_is_found_and_flagged() -> None:
    """The sum has one maximum only, yet the second derivative shows the shoulder; it is
    reported within 2 cm-1 and flagged, and the main band is not."""
    pl = pick_peaks(_shoulder_spectrum())
    main = near(pl, 1700.0, 1.0)
    sh = near(pl, 1716.0, 2.0)
    assert main.size == 1 and sh.size == 1, pl.to_text()
    assert bool(pl.shoulder[sh[0]]) and not bool(pl.shoulder[main[0]])
    # its height above the local envelope is a lower bound (the main band's convex wing takes
    # part of its curvature): above noise, below its true 0.35
    assert 0.02 < float(pl.intensities[sh[0]]) < 0.35


@pytest.mark.parametrize("seed", range(5))
def test_single_bands_on_noise_get_no_shoulders(seed: int) -> None:
    """Isolated Gaussian bands on white noise: no shoulder is invented."""
    x = grid(1.0)
    rng = np.random.default_rng(seed)
    a = sum(gaussian(x, c, 14.0, h) for c, h in ((1000, 1.0), (1700, 0.6), (2950, 0.3)))
    pl = pick_peaks(Spectrum(x, a + rng.normal(0.0, 2e-3, x.size)))
    assert not pl.shoulder.any(), pl.to_text()
    assert len(pl) == 3


def test_band_on_the_wall_of_a_saturated_band_is_found() -> None:
    """A 0.4-absorbance band 30 cm-1 from a saturated solvent band (a 45 cm-1 flat top near
    1216 cm-1, as chloroform's in a 0.1 mm cell): its dip is shallow, but measured against the
    local envelope it stands well above noise and is reported."""
    x = grid(1.0)
    box = 0.25 * (1 + np.tanh((x - 1195.0) / 6.0)) * (1 + np.tanh((1240.0 - x) / 6.0))
    a = 6.0 * box + gaussian(x, 1270.0, 14.0, 0.4) + gaussian(x, 1700.0, 14.0, 1.0) + 0.05
    t = np.clip(absorbance_to_transmittance(a), 1e-4, None)
    pl = pick_peaks(Spectrum(x, -np.log10(t), "absorbance", Metadata(prep=["chcl3"])))
    assert near(pl, 1270.0, 3.0).size == 1, pl.to_text()


# --- walls of opaque regions -------------------------------------------------------------------


def test_lower_hull_follows_a_convex_wall_between_band_feet() -> None:
    """The lower convex hull of a convex curve plus narrow bands: never above the trace, and on
    the convex curve itself away from the bands (a chord of a convex curve lies above it, so
    the hull is the curve wherever no band lifts it; mathematics, common practice, no source)."""
    from reflib.signal.peaks import lower_hull

    x = np.arange(1000.0, 1600.0, 2.0)
    wall = -np.log10(np.clip((x - 990.0) / 100.0, 1e-6, None).clip(max=1.0))  # falls to 0
    y = wall + gaussian(x, 1040.0, 14.0, 0.3) + gaussian(x, 1300.0, 14.0, 0.5)
    h = lower_hull(y)
    assert np.all(h <= y + 1e-12)
    away = (np.abs(x - 1040.0) > 30.0) & (np.abs(x - 1300.0) > 30.0)
    assert np.max(np.abs(h - wall)[away]) < 2e-3
    # under a band on the wall the hull spans its feet: the band keeps most of its height
    k = int(np.argmin(np.abs(x - 1040.0)))
    assert 0.25 < y[k] - h[k] <= 0.3 + 1e-9


def _window_wall_spectrum(rng: np.random.Generator):
    """A CaF2 cell: no light below 1000 cm-1, transmission rising linearly to 1 at 1100 (the
    window's own absorbance is -log10 of that, Beer-Lambert), bands of known height at 1040
    (on the wall), 1300 and 1700 (off it), a little transmittance noise."""
    x = grid(2.0)
    tr_window = np.clip((x - 1000.0) / 100.0, 0.0, 1.0)
    a = gaussian(x, 1040.0, 14.0, 0.3) + gaussian(x, 1300.0, 14.0, 0.5) + gaussian(x, 1700, 14)
    t = tr_window * absorbance_to_transmittance(a + 0.02)
    t = np.clip(t + rng.normal(0.0, 3e-4, x.size), 1e-4, None)
    return x, -np.log10(t)


@pytest.mark.parametrize("seed", range(3))
def test_band_on_a_window_wall_keeps_its_height(seed: int) -> None:
    """The window's rising absorbance below 1100 cm-1 is not part of the band at 1040: that
    band is reported at its height relative to the 1700 band (0.3) within 20 %, the hole
    covers the window's dark part and stops short of the band."""
    x, a = _window_wall_spectrum(np.random.default_rng(seed))
    pl = pick_peaks(Spectrum(x, a, "absorbance", Metadata(prep=["cdcl3", "caf2"])))
    k = near(pl, 1040.0, 3.0)
    assert k.size == 1, pl.to_text()
    assert float(pl.intensities[k[0]]) == pytest.approx(0.3, rel=0.2)
    assert float(pl.intensities[near(pl, 1300.0, 2.0)[0]]) == pytest.approx(0.5, rel=0.1)
    ((lo, hi),) = parse_holes(pl.meta.extra["holes"])
    assert lo == pytest.approx(400.0) and 1000.0 < hi < 1025.0


def test_the_cut_wall_stops_where_the_light_comes_back() -> None:
    """A chloroform-like opaque block at 1195-1240 cm-1 whose walls run out slowly (a
    Lorentzian tail): the cut stops once the wall is within one absorbance unit of the trace
    nearby (a tenth of the light), well inside the 80 cm-1 limit, and a band 35 cm-1 beyond
    the block's edge is reported at its height."""
    x = grid(2.0)
    box = 0.25 * (1 + np.tanh((x - 1195.0) / 6.0)) * (1 + np.tanh((1240.0 - x) / 6.0))
    tail = 2.0 / (1.0 + ((x - 1217.0) / 12.0) ** 2)
    a = 6.0 * box + tail + gaussian(x, 1160.0, 14.0, 0.3) + gaussian(x, 1700.0, 14.0) + 0.05
    t = np.clip(absorbance_to_transmittance(a), 1e-4, None)
    t = np.clip(t + np.random.default_rng(4).normal(0.0, 3e-4, x.size), 1e-4, None)
    pl = pick_peaks(Spectrum(x, -np.log10(t), "absorbance", Metadata(prep=["chcl3"])))
    ((lo, hi),) = parse_holes(pl.meta.extra["holes"])
    assert 1170.0 < lo < 1195.0 and 1240.0 < hi < 1265.0, (lo, hi)
    k = near(pl, 1160.0, 3.0)
    assert k.size == 1, pl.to_text()
    assert float(pl.intensities[k[0]]) == pytest.approx(0.3, rel=0.25)
