"""reflib.signal.filters1d against the general-purpose reference library, SciPy (scipy.ndimage).

The picker's baseline and smoothing used ``scipy.ndimage.minimum_filter1d``,
``maximum_filter1d``, ``uniform_filter1d`` and ``gaussian_filter1d``; reflib.signal.filters1d
replaces
them so that starting reflib does not import scipy.ndimage. Each check compares with SciPy on the
same input and asks for bit-equal output, with windows from one point to more than twice the
trace (where the edge handling decides everything), both edge modes, and traces with plateaus,
steps and random walks. Real spectra: tests/outside/test_peakfind_gas_phase.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import ndimage

from reflib.errors import ValidationError
from reflib.signal import filters1d

RANK_FILTERS = ("minimum_filter1d", "maximum_filter1d", "uniform_filter1d")


def _traces(seed: int, count: int):
    rng = np.random.default_rng(seed)
    for k in range(count):
        n = int(rng.integers(1, 500))
        x = rng.normal(size=n)
        if k % 3 == 1:
            x = np.cumsum(x)  # slopes and long excursions
        elif k % 3 == 2:
            x = np.round(x)  # plateaus and steps
        yield rng, x


@pytest.mark.parametrize("mode", ["nearest", "reflect"])
@pytest.mark.parametrize("name", RANK_FILTERS)
def test_running_filters_match_the_reference_bit_for_bit(name, mode):
    ours, ref = getattr(filters1d, name), getattr(ndimage, name)
    for rng, x in _traces(3, 300):
        size = int(rng.integers(1, 2 * x.size + 4))  # odd and even, up to twice the trace
        assert np.array_equal(ours(x, size, mode=mode), ref(x, size, mode=mode)), (x.size, size)


@pytest.mark.parametrize("mode", ["nearest", "reflect"])
def test_gaussian_smoothing_matches_the_reference_bit_for_bit(mode):
    for rng, x in _traces(4, 300):
        sigma = float(rng.uniform(0.05, 40.0))
        got = filters1d.gaussian_filter1d(x, sigma, mode=mode)
        assert np.array_equal(got, ndimage.gaussian_filter1d(x, sigma, mode=mode)), sigma


def test_the_default_gaussian_mode_is_the_references():
    x = np.random.default_rng(6).normal(size=300)
    assert np.array_equal(filters1d.gaussian_filter1d(x, 2.5), ndimage.gaussian_filter1d(x, 2.5))


def test_a_grey_opening_follows_a_straight_slope():
    # Rolling minimum then maximum leaves a straight line unchanged away from the ends
    # (mathematical morphology: a line is open under any flat window; no source needed).
    x = 0.3 + 0.002 * np.arange(200.0)
    opened = filters1d.maximum_filter1d(filters1d.minimum_filter1d(x, 21), 21)
    assert np.allclose(opened[10:-10], x[10:-10], rtol=0, atol=1e-15)


def test_the_gaussian_kernel_sums_to_one_and_has_the_right_spread():
    # A Gaussian of sigma 5 points sampled at whole points out to 8 sigma has variance
    # sigma**2 to about 1e-12 (Poisson summation: the aliasing error falls as
    # exp(-2 pi**2 sigma**2); the tail beyond 8 sigma is below 1e-13). Mathematics, no source.
    w = filters1d.gaussian_kernel(5.0, 40)
    k = np.arange(-40, 41)
    assert abs(w.sum() - 1.0) < 1e-15
    assert abs(np.sum(w * k**2) - 25.0) < 1e-9


def test_bad_arguments_are_refused():
    x = np.zeros(5)
    with pytest.raises(ValidationError, match="size"):
        filters1d.minimum_filter1d(x, 0)
    with pytest.raises(ValidationError, match="mode"):
        filters1d.uniform_filter1d(x, 3, mode="wrap")
    with pytest.raises(ValidationError, match="sigma"):
        filters1d.gaussian_filter1d(x, 0.0)
    with pytest.raises(ValidationError, match="one-dimensional"):
        filters1d.maximum_filter1d(np.zeros((2, 2)), 3)
