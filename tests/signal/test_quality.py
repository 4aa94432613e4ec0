"""The quality report against spectra made with a fault of known size.

Each fault is built from physics, not from the code under test: Beer-Lambert absorbance, stray
light added to the transmitted light (T_obs = (T + s) / (1 + s)), interference fringes as a
sinusoidal baseline of known spacing (thickness d = 1 / (2 n spacing), the two-beam
interference condition of a plane-parallel layer), white noise of known standard deviation.
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.signal.quality import assess, to_dicts, worst
from reflib.spectrum import Metadata, Spectrum

X = np.arange(400.0, 4000.0, 1.0)


def _band(centre: float, fwhm: float, height: float = 1.0) -> np.ndarray:
    sd = fwhm / (2.0 * np.sqrt(2.0 * np.log(2.0)))
    return height * np.exp(-0.5 * ((X - centre) / sd) ** 2)


def _sample() -> np.ndarray:
    """An invented ester-like spectrum in absorbance, strongest band 1.0 at 1715 cm-1."""
    return (
        _band(1715, 15)
        + _band(2950, 20, 0.6)
        + _band(1200, 12, 0.4)
        + _band(3350, 250, 0.3)
        + _band(750, 10, 0.2)
    )


def _noise(sd: float, seed: int = 0) -> np.ndarray:
    return np.random.default_rng(seed).normal(0.0, sd, X.size)


def _by_check(findings) -> dict:
    return {f.check: f for f in findings}


def test_clean_spectrum_gets_no_warnings():
    """A flat baseline, unsaturated bands and noise far below them: info entries only."""
    for seed in range(3):
        findings = assess(Spectrum(X, _sample() + _noise(0.001, seed)))
        assert worst(findings) == "info", to_dicts(findings)
        checks = _by_check(findings)
        assert {"noise", "baseline", "resolution", "range"} <= set(checks)
        assert "fringes" not in checks and "saturation" not in checks


def test_known_noise_gives_its_snr():
    """Noise of standard deviation 0.025 under a strongest band of 1.0: snr 40 +- 10 %, warn
    below 50 (the issue's threshold); 0.005 gives 200 and no warning."""
    noisy = _by_check(assess(Spectrum(X, _sample() + _noise(0.025))))["noise"]
    assert noisy.figures["snr"] == pytest.approx(40.0, rel=0.1)
    assert noisy.severity == "warn"
    quiet = _by_check(assess(Spectrum(X, _sample() + _noise(0.005))))["noise"]
    assert quiet.figures["snr"] == pytest.approx(200.0, rel=0.1)
    assert quiet.severity == "info"


@pytest.mark.parametrize("spacing", [8.0, 37.0, 150.0])
def test_fringes_give_spacing_and_thickness(spacing):
    """A sinusoidal baseline of 0.02 A every ``spacing`` cm-1: spacing within 1 % and
    d = 1e4 / (2 spacing) micrometres for n = 1 (spacing 37 -> 135 um)."""
    y = _sample() + 0.02 * np.sin(2 * np.pi * X / spacing) + _noise(0.001)
    f = _by_check(assess(Spectrum(X, y)))["fringes"]
    assert f.figures["spacing_cm1"] == pytest.approx(spacing, rel=0.01)
    assert f.figures["thickness_um"] == pytest.approx(1e4 / (2 * spacing), rel=0.01)
    assert f.figures["refractive_index"] == 1.0
    assert f.figures["amplitude_a"] == pytest.approx(0.02, rel=0.25)
    assert f.severity == "warn"


def test_stray_light_saturation_found_at_the_band():
    """The 1715 band driven to absorbance 4 (0.01 %T) with 2 % stray light sits flat near
    2 %T; the report finds it there, and nothing at the other bands (at most 0.6 A)."""
    t = np.power(10.0, -(_sample() + 3.0 * _band(1715, 15)))
    stray = 0.02
    t_obs = (t + stray) / (1 + stray) + _noise(0.0005)
    f = _by_check(assess(Spectrum(X, t_obs, "transmittance")))["saturation"]
    assert len(f.figures["bands"]) == 1
    band = f.figures["bands"][0]
    assert band["centre_cm1"] == pytest.approx(1715.0, abs=3.0)
    assert f.figures["floor_percent_t"] == pytest.approx(100 * stray / (1 + stray), abs=0.3)


def test_strong_round_band_is_not_saturated():
    """A Gaussian band reaching 5 %T without stray light is strong, not flat-topped."""
    t = np.power(10.0, -1.3 * _sample()) + _noise(0.0005)
    assert "saturation" not in _by_check(assess(Spectrum(X, t, "transmittance")))


def test_transmittance_over_100_says_how_far_and_where():
    """A background 12 % weaker than the sample's: the baseline at 112 %T everywhere."""
    t = 1.12 * np.power(10.0, -_sample()) + _noise(0.001)
    f = _by_check(assess(Spectrum(X, t, "transmittance")))["transmittance-over-100"]
    assert f.figures["max_percent_t"] == pytest.approx(112.0, abs=0.6)
    assert f.severity == "warn"
    assert f.figures["over_100_from_cm1"] > 3900 and f.figures["over_100_to_cm1"] < 500


def test_negative_band_found_at_its_position():
    """An over-subtracted solvent band: a dip of 0.1 A at 1260 cm-1."""
    y = _sample() - _band(1260, 10, 0.1) + _noise(0.001)
    f = _by_check(assess(Spectrum(X, y)))["negative-bands"]
    assert f.figures["positions_cm1"][0] == pytest.approx(1260.0, abs=2.0)
    assert f.severity == "warn"


def test_water_vapour_and_co2_lines_relative_to_the_sample():
    """Narrow lines (2 cm-1 FWHM) of 0.1 A across 1900-1300 cm-1 and a CO2 band of 0.2 A at
    2349 cm-1 on a sample whose strongest band is 1.0: both about 10-20 %, warn."""
    air = sum(_band(c, 2.0, 0.1) for c in np.arange(1350.0, 1880.0, 23.0))
    co2 = _band(2360, 12, 0.2) + _band(2340, 12, 0.2)
    checks = _by_check(assess(Spectrum(X, _sample() + air + co2 + _noise(0.001))))
    water = checks["water-vapour"]
    assert water.figures["lines"] >= 15
    assert water.figures["strongest_relative"] == pytest.approx(0.1, rel=0.3)
    assert checks["co2"].figures["relative"] == pytest.approx(0.2, rel=0.3)
    assert {water.severity, checks["co2"].severity} == {"warn"}


def test_sloping_baseline_from_scattering():
    """A scattering rise of 0.3 A toward 4000 cm-1 (quadratic in wavenumber)."""
    y = _sample() + 0.3 * ((X - 400) / 3600) ** 2 + _noise(0.001)
    f = _by_check(assess(Spectrum(X, y)))["baseline"]
    assert f.severity == "warn"
    assert f.figures["span_a"] == pytest.approx(0.3, rel=0.2)
    assert f.figures["slope_a_per_1000cm1"] > 0
    assert "KBr" in f.message


def test_resolution_and_range_from_the_data_and_metadata():
    x = np.arange(650.0, 3000.0, 8.0)
    s = Spectrum(x, np.exp(-0.5 * ((x - 1715) / 10) ** 2), meta=Metadata(resolution=16.0))
    checks = _by_check(assess(s))
    assert checks["resolution"].figures == {"point_spacing_cm1": 8.0, "stated_resolution_cm1": 16.0}
    assert checks["resolution"].severity == "warn"
    assert checks["range"].severity == "warn"
    assert checks["range"].figures["missing_cm1"] == [[400.0, 650.0], [2994.0, 4000.0]]


def test_finding_json_shape():
    d = to_dicts(assess(Spectrum(X, _sample() + _noise(0.02))))
    assert all({"check", "severity", "message"} <= set(e) for e in d)
    assert d[0]["severity"] == "warn"  # most severe first


def _solvent_flat_top() -> np.ndarray:
    """The sample in chloroform: the solvent's C-H bend near 1215 cm-1 driven far past what a
    0.1 mm cell passes (opaque, common practice, no source), with 2 % stray light."""
    t = np.power(10.0, -(_sample() + 6.0 * _band(1216, 30)))
    return (t + 0.02) / 1.02 + _noise(0.0005)


def test_a_solvents_own_opaque_band_is_not_reported_as_saturation():
    """Chloroform's own 1215 band is opaque in a solution cell: expected, not a fault of the
    sample. Named as chcl3 it is not reported; unnamed it is (reflib cannot know it is the
    solvent's)."""
    t = _solvent_flat_top()
    named = _by_check(assess(Spectrum(X, t, "transmittance"), prep=["chcl3"]))
    assert "saturation" not in named
    unnamed = _by_check(assess(Spectrum(X, t, "transmittance")))["saturation"]
    assert unnamed.figures["bands"][0]["centre_cm1"] == pytest.approx(1216.0, abs=5.0)


def test_saturation_remedy_suits_the_preparation():
    """A thinner film helps a transmission spectrum; an ATR band cannot be thinned (fixed
    depth of penetration, common practice, no source), so its remedy is about the data."""
    t = np.power(10.0, -(_sample() + 3.0 * _band(1715, 15)))
    t_obs = (t + 0.02) / 1.02 + _noise(0.0005)
    film = _by_check(assess(Spectrum(X, t_obs, "transmittance"), prep=["film"]))["saturation"]
    atr = _by_check(assess(Spectrum(X, t_obs, "transmittance"), prep=["atr"]))["saturation"]
    assert "thinner film" in film.message and "thinner film" not in atr.message
    assert "ATR" in atr.message
