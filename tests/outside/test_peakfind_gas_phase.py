"""The numpy peak finding and filters on the real gas-phase spectra of the jcamp 1.3.2 sdist.

reflib.signal.peakfind and reflib.signal.filters1d replace scipy.signal's ``find_peaks`` /
``peak_widths`` and
scipy.ndimage's four 1-D filters in the picker, so that starting reflib does not import them.
The general-purpose reference library, SciPy, is the judge: on every gas-phase spectrum of the
distribution (NIST-distributed spectra: Coblentz transmittance charts, 0.24 cm-1 absorbance,
4 cm-1 absorbance), every call the picker makes is checked against SciPy on the very trace the
picker passed, and the whole picked PeakList (positions, intensities, widths, words, broad
flags, saturation note) must be identical to the one the picker gives with SciPy's functions
put back in their place.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import ndimage, signal

from reflib.io import read_all
from reflib.signal import filters1d, peakfind, peaks
from reflib.spectrum import PeakList, Spectrum

pytestmark = pytest.mark.outside

OPTION_SETS = [{}, {"baseline": "als"}, {"smooth_cm1": 0.0, "min_snr": 4.0}]


def _spectra(gas_phase: Path) -> list[tuple[str, Spectrum]]:
    out = []
    for path in sorted(gas_phase.glob("*.jdx")):
        for k, item in enumerate(read_all(path)):
            if isinstance(item, Spectrum):
                out.append((f"{path.name}#{k}", item))
    return out


class _Checked:
    """Calls reflib's function, checks it against SciPy's on the same arguments, counts calls."""

    def __init__(self, ours, ref, compare):
        self.ours, self.ref, self.compare, self.calls = ours, ref, compare, 0

    def __call__(self, *args, **kwargs):
        got = self.ours(*args, **kwargs)
        self.compare(got, self.ref(*args, **kwargs))
        self.calls += 1
        return got


def _equal_arrays(a, b):
    assert np.array_equal(a, b)


def _equal_peaks(a, b):
    assert np.array_equal(a[0], b[0])
    assert set(a[1]) == set(b[1])
    for key in b[1]:
        assert np.array_equal(a[1][key], b[1][key]), key


def _equal_tuples(a, b):
    for u, v in zip(a, b, strict=True):
        assert np.array_equal(u, v)


def _as_dict(pl: PeakList) -> dict:
    return {
        "positions": pl.positions.tolist(),
        "intensities": pl.intensities.tolist(),
        "widths": None if pl.widths is None else [repr(w) for w in pl.widths],
        "strengths": list(pl.strengths),
        "broad": pl.broad.tolist(),
        "extra": dict(pl.meta.extra),
    }


def test_every_call_matches_scipy_on_the_real_spectra(gas_phase, monkeypatch):
    checks = {
        "minimum_filter1d": _Checked(
            filters1d.minimum_filter1d, ndimage.minimum_filter1d, _equal_arrays
        ),
        "maximum_filter1d": _Checked(
            filters1d.maximum_filter1d, ndimage.maximum_filter1d, _equal_arrays
        ),
        "uniform_filter1d": _Checked(
            filters1d.uniform_filter1d, ndimage.uniform_filter1d, _equal_arrays
        ),
        "gaussian_filter1d": _Checked(
            filters1d.gaussian_filter1d, ndimage.gaussian_filter1d, _equal_arrays
        ),
    }
    for name, check in checks.items():
        monkeypatch.setattr(filters1d, name, check)
    found = _Checked(peakfind.find_peaks, signal.find_peaks, _equal_peaks)
    widths = _Checked(peakfind.peak_widths, signal.peak_widths, _equal_tuples)
    monkeypatch.setattr(peaks, "find_peaks", found)
    monkeypatch.setattr(peaks, "peak_widths", widths)
    spectra = _spectra(gas_phase)
    assert len(spectra) >= 60  # the distribution carries about 70 gas-phase spectra
    for _, spectrum in spectra:
        peaks.pick_peaks(spectrum)
        peaks.pick_peaks(spectrum, smooth_cm1=0.0, min_snr=4.0)
    # Every replaced call was exercised, on every spectrum.
    assert found.calls >= len(spectra) and widths.calls >= len(spectra)
    assert all(c.calls >= len(spectra) for c in checks.values()), {
        k: c.calls for k, c in checks.items()
    }


def test_picked_peak_lists_are_those_scipy_gives(gas_phase, monkeypatch):
    spectra = _spectra(gas_phase)
    ours = {
        (name, i): _as_dict(peaks.pick_peaks(s, **opts))
        for name, s in spectra
        for i, opts in enumerate(OPTION_SETS)
    }
    for name in ("minimum_filter1d", "maximum_filter1d", "uniform_filter1d", "gaussian_filter1d"):
        monkeypatch.setattr(filters1d, name, getattr(ndimage, name))
    monkeypatch.setattr(peaks, "find_peaks", signal.find_peaks)
    monkeypatch.setattr(peaks, "peak_widths", signal.peak_widths)
    theirs = {
        (name, i): _as_dict(peaks.pick_peaks(s, **opts))
        for name, s in spectra
        for i, opts in enumerate(OPTION_SETS)
    }
    assert sum(len(v["positions"]) for v in ours.values()) > 500  # real bands were compared
    for key, value in theirs.items():
        assert ours[key] == value, key
