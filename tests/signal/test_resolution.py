"""Common resolution: degrading a fine spectrum and merging rotational contours.

Physics used: Gaussian line shapes convolve to a Gaussian whose FWHM is the quadrature sum of
the two (a property of the normal distribution); the P and R branches of a parallel band of a
gas flank its centre (Herzberg's band-contour picture, from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.signal.peaks import pick_peaks
from reflib.signal.resolution import degrade, for_comparison, merge_rotational, resolution_of
from reflib.spectrum import Metadata, PeakList, Spectrum

X = np.arange(900.0, 1300.0, 0.25)


def _line(centre: float, fwhm: float, height: float = 1.0) -> np.ndarray:
    sd = fwhm / (2.0 * np.sqrt(2.0 * np.log(2.0)))
    return height * np.exp(-0.5 * ((X - centre) / sd) ** 2)


def _fwhm(x: np.ndarray, y: np.ndarray) -> float:
    i = int(np.argmax(y))
    half = 0.5 * y[i]
    left = np.interp(half, y[: i + 1], x[: i + 1])
    right = np.interp(-half, -y[i:], x[i:])
    return float(right - left)


@pytest.mark.parametrize(("now", "target"), [(0.5, 4.0), (1.0, 8.0)])
def test_degraded_line_has_the_target_fwhm(now, target):
    s = Spectrum(X, _line(1100.0, now), meta=Metadata(resolution=now))
    wide = degrade(s, target)
    assert _fwhm(wide.x, wide.y) == pytest.approx(target, rel=0.03)
    assert wide.meta.resolution == target
    assert float(wide.x[np.argmax(wide.y)]) == pytest.approx(1100.0, abs=0.25)


def test_coarser_spectrum_is_left_alone():
    s = Spectrum(X, _line(1100.0, 8.0), meta=Metadata(resolution=8.0))
    assert degrade(s, 4.0) is s
    assert for_comparison(s) is s


def test_fine_rotational_lines_become_one_picked_envelope():
    """Lines every 2.5 cm-1 under an envelope (a rotational band resolved at 0.5 cm-1): the
    picker lists many maxima at full resolution and few after degrading to 4 cm-1."""
    envelope = _line(1050.0, 30.0)
    lines = sum(_line(c, 0.5, 1.0) for c in np.arange(1020.0, 1080.0, 2.5))
    y = envelope * lines / lines.max()
    s = Spectrum(X, y, meta=Metadata(resolution=0.5))
    fine = pick_peaks(s, min_separation_cm1=1.0, smooth_cm1=0.5)
    coarse = pick_peaks(for_comparison(s), min_separation_cm1=1.0, smooth_cm1=0.5)
    assert len(fine) >= 10
    assert len(coarse) <= 3
    assert resolution_of(s) == 0.5


def test_p_and_r_branches_merge_at_the_centre():
    """A P-R doublet 24 cm-1 apart (no Q branch) -> one band at the midpoint; a P-Q-R triplet
    -> one band at the Q branch; an unrelated weak band stays."""
    pl = PeakList([1054.0, 1078.0, 1300.0, 1700.0, 1712.0, 1724.0], [0.9, 1.0, 0.1, 0.5, 0.8, 0.45])
    merged = merge_rotational(pl)
    assert merged.positions.tolist() == [1066.0, 1300.0, 1712.0]
    assert merged.intensities.tolist() == pytest.approx([1.0, 0.1, 0.8])


def test_bands_of_very_different_height_do_not_merge():
    pl = PeakList([1054.0, 1070.0], [1.0, 0.1])
    assert merge_rotational(pl).positions.tolist() == [1054.0, 1070.0]
