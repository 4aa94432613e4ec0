"""reflib.signal.peakfind against the general-purpose reference library, SciPy.

``reflib.signal.peakfind`` re-implements ``scipy.signal.find_peaks`` (with ``prominence`` and
``distance``) and ``scipy.signal.peak_widths`` so that the picker need not import scipy.signal.
Every check here compares with SciPy itself on the same input and asks for the same result
exactly (indices equal, floats bit-equal), on traces built to hit the awkward cases: plateaus
(flat tops, including ones of even length and ones that rise again), maxima at the ends of the
trace (never peaks by SciPy's definition), flat traces, and equal heights closer than the
distance (ties, settled by the order of ``np.argsort``). The same comparison on the published
gas-phase spectra is in tests/outside/test_peakfind_gas_phase.py.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import signal

from reflib.errors import ValidationError
from reflib.signal.peakfind import find_peaks, local_maxima, peak_prominences, peak_widths


def _same_peaks(x: np.ndarray, prominence: float | None, distance: float | None) -> np.ndarray:
    ref_idx, ref_props = signal.find_peaks(x, prominence=prominence, distance=distance)
    idx, props = find_peaks(x, prominence=prominence, distance=distance)
    assert idx.tolist() == ref_idx.tolist()
    assert set(props) == set(ref_props)
    for key, value in ref_props.items():
        assert np.array_equal(props[key], value), key
    return idx


def _same_widths(x: np.ndarray, rel_height: float) -> None:
    idx, props = signal.find_peaks(x, prominence=0.0)
    data = (props["prominences"], props["left_bases"], props["right_bases"])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = signal.peak_widths(x, idx, rel_height=rel_height, prominence_data=data)
        ours = peak_widths(x, idx, rel_height=rel_height, prominence_data=data)
    for a, b in zip(ours, ref):
        assert np.array_equal(a, b)


def _traces(seed: int, count: int):
    """Noisy traces of several kinds: white noise, random walks, rounded (plateau-rich) noise,
    bands on noise, and small integers (many ties and plateaus)."""
    rng = np.random.default_rng(seed)
    for k in range(count):
        n = int(rng.integers(3, 600))
        kind = k % 5
        if kind == 0:
            x = rng.normal(size=n)
        elif kind == 1:
            x = np.cumsum(rng.normal(size=n))
        elif kind == 2:
            x = np.round(rng.normal(size=n), 1)
        elif kind == 3:
            t = np.arange(n, dtype=float)
            x = rng.normal(0.0, 0.02, n)
            for _ in range(int(rng.integers(1, 6))):
                c, s = rng.uniform(0, n), rng.uniform(1, 30)
                x += rng.uniform(0.1, 1.0) * np.exp(-0.5 * ((t - c) / s) ** 2)
        else:
            x = rng.integers(0, 4, n).astype(float)
        yield rng, x


def test_random_traces_give_the_same_peaks_and_properties():
    for rng, x in _traces(1, 400):
        prominence = float(rng.choice([0.0, 0.05, 0.5, 2.0]))
        distance = float(rng.choice([1.0, 2.0, 3.5, 7.0, 40.0]))
        _same_peaks(x, prominence, distance)
        _same_peaks(x, None, distance)
        _same_peaks(x, prominence, None)


def test_random_traces_give_the_same_widths():
    for rng, x in _traces(2, 300):
        _same_widths(x, float(rng.choice([0.0, 0.25, 0.5, 1.0, 1.5])))


def test_plateaus_are_reported_at_their_middle():
    # Plateaus of odd and even length; one that rises again on its right is no maximum.
    x = np.array([0.0, 2.0, 2.0, 2.0, 1.0, 3.0, 3.0, 0.0, 1.0, 1.0, 4.0, 0.0])
    assert local_maxima(x).tolist() == [2, 5, 10]
    assert _same_peaks(x, 0.0, None).tolist() == [2, 5, 10]


def test_maxima_at_the_ends_are_not_peaks():
    x = np.array([5.0, 1.0, 2.0, 1.0, 6.0])
    assert _same_peaks(x, 0.0, None).tolist() == [2]
    assert _same_peaks(np.array([3.0, 3.0, 1.0, 2.0, 2.0]), 0.0, None).tolist() == []


@pytest.mark.parametrize("n", [0, 1, 2, 3, 50])
def test_flat_and_tiny_traces_have_no_peaks(n):
    x = np.full(n, 0.7)
    assert _same_peaks(x, 0.0, 2.0).tolist() == []


def test_equal_heights_within_the_distance_fall_as_in_the_reference():
    # Many maxima of exactly equal height 2 points apart: which survive depends on the order
    # in which equal heights are visited.
    x = np.tile([0.0, 1.0], 40)
    for distance in (2.0, 3.0, 4.0, 5.0, 9.0):
        kept = _same_peaks(x, None, distance)
        assert np.all(np.diff(kept) >= np.ceil(distance))
    rng = np.random.default_rng(5)
    for _ in range(50):
        x = rng.integers(0, 3, 200).astype(float)
        _same_peaks(x, 0.5, float(rng.integers(2, 12)))


def test_prominence_bases_are_the_lowest_points_nearest_the_peak():
    # Left of the peak at 4 the lowest value 0 occurs at 0 and 2: the base is 2 (nearer);
    # right of it the lowest value 0 occurs at 6 and 8: the base is 6.
    x = np.array([0.0, 1.0, 0.0, 1.0, 3.0, 1.0, 0.0, 1.0, 0.0, 5.0, 0.0])
    prom, lb, rb = peak_prominences(x, np.array([4]))
    assert (prom.tolist(), lb.tolist(), rb.tolist()) == ([3.0], [2], [6])
    ref = signal.peak_prominences(x, [4])
    assert (ref[0].tolist(), ref[1].tolist(), ref[2].tolist()) == ([3.0], [2], [6])


def test_a_zero_width_warns_as_in_the_reference():
    x = np.array([0.0, 1.0, 0.0])
    with pytest.warns(RuntimeWarning, match="width of 0"):
        w, *_ = peak_widths(x, np.array([1]), rel_height=0.0)
    assert w.tolist() == [0.0]


def test_bad_arguments_are_refused():
    x = np.array([0.0, 1.0, 0.0])
    with pytest.raises(ValidationError, match="distance"):
        find_peaks(x, distance=0.5)
    with pytest.raises(ValidationError, match="one-dimensional"):
        find_peaks(np.zeros((2, 3)))
    with pytest.raises(ValidationError, match="0..2"):
        peak_widths(x, np.array([3]))
    with pytest.raises(ValidationError, match="rel_height"):
        peak_widths(x, np.array([1]), rel_height=-1.0)
    with pytest.raises(ValidationError, match="invalid for peak 1"):
        peak_widths(x, np.array([1]), prominence_data=(np.ones(1), np.array([2]), np.array([2])))


def test_prominences_of_any_points_match_the_reference():
    # scipy.signal.peak_prominences accepts any indices, not only local maxima.
    rng = np.random.default_rng(7)
    for _, x in _traces(8, 150):
        idx = np.unique(rng.integers(0, x.size, int(rng.integers(1, 20))))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ref = signal.peak_prominences(x, idx)
        for a, b in zip(peak_prominences(x, idx), ref):
            assert np.array_equal(a, b)


def test_widths_with_bases_and_heights_given_by_the_caller_match_the_reference():
    # As the picker calls it: its own heights and bases (valleys between neighbouring bands).
    rng = np.random.default_rng(9)
    for _, x in _traces(10, 150):
        idx, _ = signal.find_peaks(x)
        if idx.size == 0:
            continue
        lb = np.array([int(rng.integers(0, p + 1)) for p in idx])
        rb = np.array([int(rng.integers(p, x.size)) for p in idx])
        prom = rng.uniform(0.0, 2.0, idx.size) * (np.ptp(x) + 1e-3)
        rel = float(rng.choice([0.25, 0.5, 1.0]))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ref = signal.peak_widths(x, idx, rel_height=rel, prominence_data=(prom, lb, rb))
            ours = peak_widths(x, idx, rel_height=rel, prominence_data=(prom, lb, rb))
        for a, b in zip(ours, ref):
            assert np.array_equal(a, b)
