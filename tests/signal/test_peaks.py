"""Mechanism tests of reflib.signal.peaks on constructed spectra.

The bands here are built from their textbook shapes (Gaussian, Lorentzian), so the right answer is
known exactly: a Gaussian of standard deviation s has FWHM 2 sqrt(2 ln 2) s, a Lorentzian of
half width g has FWHM 2 g (physics, no source needed), and absorbance is -log10 of transmittance
(Beer-Lambert). Checks against real spectra are in tests/outside/test_peaks_gas_phase.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.errors import ValidationError
from reflib.signal.peaks import (
    baseline,
    estimate_noise,
    is_uniform,
    pick_peaks,
    saturated_runs,
    uniform_grid,
)
from reflib.spectrum import Metadata, Spectrum, absorbance_to_transmittance

FWHM_PER_SD = 2.0 * np.sqrt(2.0 * np.log(2.0))


def gaussian(x: np.ndarray, centre: float, fwhm: float, height: float = 1.0) -> np.ndarray:
    sd = fwhm / FWHM_PER_SD
    return height * np.exp(-0.5 * ((x - centre) / sd) ** 2)


def lorentzian(x: np.ndarray, centre: float, fwhm: float, height: float = 1.0) -> np.ndarray:
    g = fwhm / 2.0
    return height * g**2 / ((x - centre) ** 2 + g**2)


def grid(step: float = 1.0, lo: float = 400.0, hi: float = 4000.0) -> np.ndarray:
    return lo + step * np.arange(int(round((hi - lo) / step)) + 1)


def nearest(positions: np.ndarray, target: float) -> float:
    return float(positions[np.argmin(np.abs(positions - target))])


# --- positions, widths, intensities ------------------------------------------------------------


@pytest.mark.parametrize("step", [1.0, 1.93, 4.0])
def test_band_positions_recovered_between_grid_points(step: float) -> None:
    """Gaussian and Lorentzian bands centred off the grid come back within 0.15 of a step.

    The centres are deliberately not on grid points, so a picker that returns the top sample
    would be off by up to half a step.
    """
    x = grid(step)
    bands = [(1715.37, 16.0, "g"), (2953.81, 20.0, "l"), (1100.62, 24.0, "g"), (810.2, 14.0, "l")]
    y = np.zeros_like(x)
    for centre, fwhm, kind in bands:
        y += (gaussian if kind == "g" else lorentzian)(x, centre, fwhm, 0.8)
    rng = np.random.default_rng(1)
    y += rng.normal(0.0, 2e-4, x.size)
    found = pick_peaks(Spectrum(x, y)).positions
    for centre, _fwhm, _kind in bands:
        assert abs(nearest(found, centre) - centre) < 0.15 * step


def test_gaussian_fwhm_recovered() -> None:
    """The FWHM of a noisy Gaussian band (cm-1) is recovered within 5 %, smoothing included."""
    x = grid(0.5)
    rng = np.random.default_rng(2)
    for fwhm in (8.0, 18.84, 40.0):
        y = gaussian(x, 1450.3, fwhm) + rng.normal(0.0, 1e-3, x.size)
        pl = pick_peaks(Spectrum(x, y))
        strongest = pl.widths[np.argmax(pl.intensities)]
        assert strongest == pytest.approx(fwhm, rel=0.05)


def test_lorentzian_fwhm_recovered() -> None:
    """A Lorentzian's FWHM (2 g) is measured at half height, not from a Gaussian assumption."""
    x = grid(1.0)
    y = lorentzian(x, 1600.4, 12.0)
    pl = pick_peaks(Spectrum(x, y))
    assert pl.widths[np.argmax(pl.intensities)] == pytest.approx(12.0, rel=0.05)


def test_overlapping_bands_get_their_own_widths() -> None:
    """Two bands 60 cm-1 apart whose valley lies above half height each keep their own FWHM.

    Half-height crossings are searched only up to the valley between the bands, so the
    stronger band is not given the width of the pair (which would wrongly flag it broad).
    """
    x = grid(1.0)
    y = gaussian(x, 2924.0, 40.0) + gaussian(x, 2870.0, 40.0, 0.8)
    pl = pick_peaks(Spectrum(x, y))
    assert len(pl) == 2
    assert np.all(pl.widths < 50.0)
    assert not pl.broad.any()


def test_relative_intensities_and_strength_words() -> None:
    """Heights above the baseline, relative to the strongest band, map to the strength words."""
    x = grid(1.0)
    y = 0.1 + gaussian(x, 1715.0, 15.0, 1.0) + gaussian(x, 1200.0, 15.0, 0.5)
    y += gaussian(x, 800.0, 15.0, 0.1)
    pl = pick_peaks(Spectrum(x, y))
    assert pl.positions == pytest.approx([800.0, 1200.0, 1715.0], abs=0.2)
    assert pl.intensities == pytest.approx([0.1, 0.5, 1.0], abs=0.01)
    assert pl.strengths == ["w", "s", "vs"]


# --- things that must not make bands -----------------------------------------------------------


def test_white_noise_gives_almost_no_peaks() -> None:
    """White noise on a flat baseline: at most two bands in all of 30 spectra of 3601 points."""
    x = grid(1.0)
    total = 0
    for seed in range(30):
        rng = np.random.default_rng(seed)
        y = 0.05 + rng.normal(0.0, 0.01, x.size)
        total += len(pick_peaks(Spectrum(x, y)))
    assert total <= 2


def test_white_noise_on_transmittance_gives_almost_no_peaks() -> None:
    """The same for noise on a transmittance trace near 90 % T."""
    x = grid(1.0)
    total = 0
    for seed in range(10):
        rng = np.random.default_rng(100 + seed)
        t = 0.9 + rng.normal(0.0, 0.005, x.size)
        total += len(pick_peaks(Spectrum(x, t, "transmittance")))
    assert total <= 1


def test_sloping_baseline_creates_no_peaks() -> None:
    """A KBr-like scattering slope rising toward high wavenumber, with noise, has no bands;
    with three bands added exactly those three are found, at their positions.

    The slope shape (rising roughly with the square of wavenumber) is common practice for coarse
    KBr grinds, no source; the test only needs a strong smooth slope.
    """
    x = grid(1.0)
    rng = np.random.default_rng(3)
    slope = 0.05 + 0.6 * ((x - 400.0) / 3600.0) ** 2
    noise = rng.normal(0.0, 2e-3, x.size)
    assert len(pick_peaks(Spectrum(x, slope + noise))) == 0
    y = slope + noise
    for centre in (3300.0, 1715.0, 1050.0):
        y = y + gaussian(x, centre, 20.0, 0.4)
    pl = pick_peaks(Spectrum(x, y))
    assert pl.positions == pytest.approx([1050.0, 1715.0, 3300.0], abs=0.5)
    # Heights are measured from the sloping baseline, not from zero: all three equal.
    assert pl.intensities == pytest.approx([1.0, 1.0, 1.0], abs=0.03)


@pytest.mark.parametrize("method", ["rolling", "als"])
def test_baseline_follows_a_straight_slope_under_bands(method: str) -> None:
    """Both baseline methods return the straight line under narrow bands (window in cm-1),
    away from the last half window at either end where the rolling method holds level."""
    x = grid(0.5)
    line = 0.2 + 1e-4 * (x - 400.0)
    y = line + gaussian(x, 1700.0, 20.0) + gaussian(x, 2900.0, 30.0, 0.5)
    b = baseline(y, x, method=method)
    inner = (x > 700.0) & (x < 3700.0)
    assert np.max(np.abs(b - line)[inner]) < (2e-3 if method == "rolling" else 2e-2)


def test_baseline_window_is_in_wavenumbers_not_points() -> None:
    """The same spectrum sampled at 0.5 and 2 cm-1 gets the same baseline (interpolated)."""
    fine, coarse = grid(0.5), grid(2.0)

    def trace(x: np.ndarray) -> np.ndarray:
        return 0.1 + 0.1 * np.sin(x / 700.0) + gaussian(x, 3350.0, 300.0, 0.5)

    b_fine = baseline(trace(fine), fine)
    b_coarse = baseline(trace(coarse), coarse)
    assert np.max(np.abs(np.interp(coarse, fine, b_fine) - b_coarse)) < 0.01


def test_baseline_rejects_unknown_method() -> None:
    with pytest.raises(ValidationError, match="expected one of"):
        baseline(np.zeros(10), method="percentile")


# --- saturation --------------------------------------------------------------------------------


def test_saturated_transmittance_band_is_one_peak_at_the_centre() -> None:
    """A band whose transmittance sits at noise level around zero (absorbance capped at 4 by
    Spectrum.to_absorbance) is one band at the centre of its flat bottom, flagged saturated,
    with no ripple bands on the plateau."""
    x = grid(1.0)
    a = gaussian(x, 1715.0, 60.0, 8.0) + gaussian(x, 1200.0, 20.0, 0.5)
    rng = np.random.default_rng(4)
    t = np.clip(absorbance_to_transmittance(a) + rng.normal(0.0, 2e-3, x.size), 0.0, None)
    pl = pick_peaks(Spectrum(x, t, "transmittance"))
    near = np.abs(pl.positions - 1715.0) < 60.0
    assert near.sum() == 1
    assert nearest(pl.positions, 1715.0) == pytest.approx(1715.0, abs=2.0)
    assert nearest(pl.positions, 1200.0) == pytest.approx(1200.0, abs=0.5)
    assert "saturated" in pl.meta.extra
    assert float(pl.meta.extra["saturated"]) == pytest.approx(1715.0, abs=2.0)


def test_clipped_absorbance_band_is_one_peak_at_the_centre() -> None:
    """An absorbance trace clipped flat at its top (as some instruments write) gives one band at
    the centre of the flat top, even on a sloping baseline which tilts the plateau once the
    baseline is removed."""
    x = grid(1.0)
    a = np.minimum(0.05 + 5e-5 * x + gaussian(x, 2100.4, 50.0, 3.0), 1.5)
    a += gaussian(x, 1000.0, 20.0, 0.3)
    pl = pick_peaks(Spectrum(x, a))
    assert len(pl) == 2
    assert nearest(pl.positions, 2100.4) == pytest.approx(2100.4, abs=1.0)
    assert pl.meta.extra["saturated"].startswith("2100")


def test_saturated_band_exported_as_absorbance_is_one_peak() -> None:
    """The same saturated band written as absorbance (the instrument's -log10 of a transmittance
    near zero: a plateau of noise between about A = 2.5 and 4) is one band at the centre too,
    like the transmittance it came from. Beer-Lambert; the plateau shape is how a saturated
    band looks in any spectrometer's absorbance export (common practice, no source)."""
    x = grid(1.0)
    a = gaussian(x, 1715.0, 60.0, 8.0) + gaussian(x, 1200.0, 20.0, 0.5)
    rng = np.random.default_rng(8)
    t = np.clip(absorbance_to_transmittance(a) + rng.normal(0.0, 2e-3, x.size), 1e-4, None)
    pl = pick_peaks(Spectrum(x, -np.log10(t)))
    assert np.sum(np.abs(pl.positions - 1715.0) < 60.0) == 1
    assert float(pl.meta.extra["saturated"]) == pytest.approx(1715.0, abs=2.0)


def test_noisy_plateau_in_scaled_units_is_one_peak() -> None:
    """A strong band clipped at half its height with noise added, in arbitrary units (values
    near 1e-3, so the absorbance-2 rule cannot apply), is still one band at the centre of its
    flat top (:func:`reflib.signal.peaks.flat_tops`)."""
    x = grid(1.0)
    a = 1e-3 * np.minimum(gaussian(x, 2360.0, 80.0, 2.0), 1.0) + 1e-4 * gaussian(x, 900, 15)
    a += np.random.default_rng(9).normal(0.0, 2e-6, x.size)
    pl = pick_peaks(Spectrum(x, a))
    assert np.sum(np.abs(pl.positions - 2360.0) < 80.0) == 1
    assert float(pl.meta.extra["saturated"]) == pytest.approx(2360.0, abs=2.0)
    assert nearest(pl.positions, 900.0) == pytest.approx(900.0, abs=0.5)


def test_absorbance_mostly_above_two_is_not_saturated() -> None:
    """A trace in scaled units that sits above 2 everywhere is not one big saturated band."""
    x = grid(1.0)
    a = 5.0 + gaussian(x, 1715.0, 15.0, 1.0) + gaussian(x, 1200.0, 15.0, 0.5)
    pl = pick_peaks(Spectrum(x, a))
    assert pl.positions == pytest.approx([1200.0, 1715.0], abs=0.2)
    assert "saturated" not in pl.meta.extra


def test_saturated_runs_merge_noise_gaps_and_ignore_single_points() -> None:
    """Runs at the floor split by a point of noise are one run; a lone point is not a run."""
    a = np.array([0, 0, 4, 4, 3.9, 4, 4, 0, 0, 0, 4, 0, 0], dtype=float)
    runs = saturated_runs(a, from_transmittance=True, saturation_t=0.01)
    assert runs.tolist() == [[2, 7]]


def test_opaque_end_of_the_range_is_not_a_band() -> None:
    """A flat top that runs into the end of the data (a window cutting off) gives no band."""
    x = grid(1.0, 200.0, 4000.0)
    a = gaussian(x, 1500.0, 20.0, 0.5) + 4.0 / (1.0 + np.exp(np.minimum((x - 300.0) / 5.0, 50)))
    t = absorbance_to_transmittance(a)
    t[:20] = 0.02  # the very first points come back up, as digitised charts often do
    pl = pick_peaks(Spectrum(x, t, "transmittance"))
    assert pl.positions == pytest.approx([1500.0], abs=0.5)


# --- input forms -------------------------------------------------------------------------------


def test_transmittance_gives_the_same_positions_as_absorbance() -> None:
    """Picking from T = 10**-A finds the same bands as picking from A (Beer-Lambert)."""
    x = grid(1.0)
    a = 0.02 + gaussian(x, 2953.2, 25.0, 0.6) + gaussian(x, 1716.7, 18.0, 1.0)
    a += lorentzian(x, 1100.1, 30.0, 0.3)
    from_a = pick_peaks(Spectrum(x, a))
    from_t = pick_peaks(Spectrum(x, absorbance_to_transmittance(a), "transmittance"))
    assert from_t.positions == pytest.approx(from_a.positions, abs=1e-6)
    assert from_t.intensities == pytest.approx(from_a.intensities, abs=1e-6)


def test_descending_input_gives_the_same_peaks() -> None:
    """A file written from 4000 down to 400 cm-1 gives the same list as the ascending one."""
    x = grid(1.0)
    y = gaussian(x, 1715.3, 15.0) + gaussian(x, 2950.6, 20.0, 0.4)
    up = pick_peaks(Spectrum(x, y))
    down = pick_peaks(Spectrum(x[::-1], y[::-1]))
    assert down.positions == pytest.approx(up.positions)
    assert down.widths == pytest.approx(up.widths)


def test_non_uniform_axis_is_resampled() -> None:
    """Wavenumbers with uneven steps (as after merging two ranges) are interpolated onto an
    even grid; band positions survive."""
    x = np.concatenate([np.arange(400.0, 2000.0, 0.5), np.arange(2000.0, 4000.0, 2.0)])
    assert not is_uniform(x)
    gx, _ = uniform_grid(x, np.zeros_like(x))
    assert is_uniform(gx)
    y = gaussian(x, 1234.5, 12.0) + gaussian(x, 3001.1, 30.0, 0.5)
    pl = pick_peaks(Spectrum(x, y))
    assert pl.positions == pytest.approx([1234.5, 3001.1], abs=0.3)


def test_broad_oh_band_is_flagged_broad() -> None:
    """A hydrogen-bonded O-H stretch (about 3350 cm-1, FWHM about 300 cm-1: common practice,
    no source) is kept by the baseline and flagged broad; sharp C-H and C=O bands are not."""
    x = grid(1.0)
    y = gaussian(x, 3350.0, 300.0, 0.5) + gaussian(x, 2960.0, 20.0, 0.6)
    y += gaussian(x, 2875.0, 20.0, 0.4) + gaussian(x, 1715.0, 18.0, 1.0)
    pl = pick_peaks(Spectrum(x, y))
    oh = np.argmin(np.abs(pl.positions - 3350.0))
    assert abs(pl.positions[oh] - 3350.0) < 15.0
    assert pl.broad[oh]
    assert pl.widths[oh] > 200.0
    assert pl.broad.sum() == 1
    assert pl.intensities[oh] > 0.3  # the 500 cm-1 window keeps most of its height


def test_meta_is_a_copy_and_options_are_respected() -> None:
    """PeakList.meta is a copy of the spectrum's; max_peaks and min_relative cut the list."""
    x = grid(1.0)
    y = sum(
        gaussian(x, c, 10.0, h) for c, h in zip(range(500, 3900, 100), np.linspace(1, 0.02, 34))
    )
    s = Spectrum(x, y, meta=Metadata(title="ladder"))
    pl = pick_peaks(s, max_peaks=10)
    assert len(pl) == 10 and pl.meta.title == "ladder"
    pl.meta.extra["x"] = "changed"
    assert "x" not in s.meta.extra
    assert len(pick_peaks(s, min_relative=0.5)) == 17
    assert not any(pl.shoulder)


def test_huge_spectrum_is_handled() -> None:
    """60 000 points (0.06 cm-1 steps) give the same bands as a 1 cm-1 sampling (speed is
    measured in scripts/bench_peaks.py, not here)."""
    x = np.linspace(400.0, 4000.0, 60_000)
    y = gaussian(x, 1715.3, 15.0) + gaussian(x, 2950.6, 20.0, 0.4)
    y += np.random.default_rng(5).normal(0.0, 1e-3, x.size)
    pl = pick_peaks(Spectrum(x, y))
    assert pl.positions == pytest.approx([1715.3, 2950.6], abs=0.1)


@pytest.mark.parametrize(
    "options",
    [
        {"min_snr": 0},
        {"min_snr": float("nan")},
        {"max_peaks": 0},
        {"max_peaks": 2.5},
        {"baseline": "percentile"},
        {"window_cm1": -1.0},
        {"min_relative": 1.0},
        {"saturation_t": 0.0},
        {"smooth_cm1": -2.0},
    ],
)
def test_bad_options_are_validation_errors(options: dict) -> None:
    x = grid(1.0)
    with pytest.raises(ValidationError):
        pick_peaks(Spectrum(x, gaussian(x, 1700.0, 20.0)), **options)


def test_tiny_or_flat_spectra_give_empty_lists() -> None:
    """Too few points, or a constant trace, give an empty list rather than an error."""
    assert len(pick_peaks(Spectrum([1000.0, 1001.0, 1002.0], [0.1, 0.5, 0.1]))) == 0
    x = grid(1.0)
    assert len(pick_peaks(Spectrum(x, np.full(x.size, 0.3)))) == 0


# --- noise ------------------------------------------------------------------------------------


def test_estimate_noise_ignores_bands_and_slopes() -> None:
    """The noise of white noise plus a slope and bands is its sigma, within 5 %."""
    x = grid(1.0)
    rng = np.random.default_rng(6)
    sigma = 0.003
    y = 0.1 + 1e-4 * x + gaussian(x, 1700.0, 20.0) + gaussian(x, 2900.0, 40.0, 0.5)
    y += rng.normal(0.0, sigma, x.size)
    assert estimate_noise(y) == pytest.approx(sigma, rel=0.05)


def test_estimate_noise_of_a_quantised_trace_is_not_zero() -> None:
    """A smooth trace rounded to 0.001 (a digitised chart) still has quantisation noise,
    about 0.001 / sqrt(12) per point; the estimate must be positive and of that order."""
    x = grid(1.0)
    t = np.round(0.9 - 0.3 * gaussian(x, 1700.0, 200.0), 3)
    noise = estimate_noise(t)
    assert 1e-5 < noise < 2e-3
    assert estimate_noise(np.full(100, 0.5)) == 0.0
