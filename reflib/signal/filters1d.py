"""Running minimum, maximum, mean and Gaussian smoothing of a 1-D trace, in numpy alone.

The baseline and smoothing steps of the picker (:mod:`reflib.signal.peaks`) need only these four
filters, and importing ``scipy.ndimage`` for them costs about a quarter of a second at every
start of the command line. Their definitions and edge handling are those of the general-purpose
reference library, SciPy (``scipy.ndimage.minimum_filter1d``, ``maximum_filter1d``,
``uniform_filter1d`` and ``gaussian_filter1d``); the results are the same to the last bit on the
traces the picker sees (tests/test_filters1d.py compares them):

* a window of ``size`` points at point ``i`` covers ``i - size // 2`` to
  ``i + (size - 1) // 2`` (an even window reaches one point further left);
* outside the trace, ``mode="nearest"`` repeats the end points; ``mode="reflect"`` mirrors the
  trace about its ends, the end point included (``d c b a | a b c d | d c b a``);
* the minimum and maximum use blocks of ``size`` points (van Herk and Gil-Werman: prefix and
  suffix extrema in each block, two per output point), so the cost does not grow with the
  window; min and max are exact whatever the order;
* the mean is a running sum, updated by ``entering - leaving`` from point to point and divided
  by ``size`` at each point, in that order of operations, so that it rounds as the reference
  does;
* the Gaussian kernel has radius ``int(truncate * sigma + 0.5)`` points, weights
  ``exp(-x**2 / (2 sigma**2))`` divided by their sum, and each output point adds the mirrored
  pairs of input points times their weight, outermost pair first.

Traces are float64 and free of NaN. Units: ``size`` and ``sigma`` in points.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from reflib.errors import ValidationError

MODES = ("nearest", "reflect")


def minimum_filter1d(x: np.ndarray, size: int, *, mode: str = "nearest") -> np.ndarray:
    """Running minimum of ``x`` over ``size`` points (same shape and units as ``x``).

    >>> minimum_filter1d(np.array([3.0, 1.0, 4.0, 1.5, 5.0, 9.0]), 3).tolist()
    [1.0, 1.0, 1.0, 1.5, 1.5, 5.0]
    """
    return _running_extreme(x, size, mode, np.minimum, np.inf)


def maximum_filter1d(x: np.ndarray, size: int, *, mode: str = "nearest") -> np.ndarray:
    """Running maximum of ``x`` over ``size`` points (same shape and units as ``x``).

    >>> maximum_filter1d(np.array([3.0, 1.0, 4.0, 1.5, 5.0, 9.0]), 3).tolist()
    [3.0, 4.0, 4.0, 5.0, 9.0, 9.0]
    """
    return _running_extreme(x, size, mode, np.maximum, -np.inf)


def uniform_filter1d(x: np.ndarray, size: int, *, mode: str = "nearest") -> np.ndarray:
    """Running mean of ``x`` over ``size`` points (same shape and units as ``x``).

    >>> uniform_filter1d(np.array([0.0, 0.0, 3.0, 0.0, 0.0]), 3).tolist()
    [0.0, 1.0, 1.0, 1.0, 0.0]
    """
    x = _as_trace(x)
    size = _check_size(size)
    if x.size == 0:
        return x.copy()
    xp = _extend(x, size // 2, (size - 1) // 2, mode)
    steps = np.empty(x.size)
    steps[0] = np.cumsum(xp[:size])[-1]  # summed left to right, as a running sum
    steps[1:] = xp[size:] - xp[: x.size - 1]
    return np.cumsum(steps) / size


def gaussian_filter1d(
    x: np.ndarray, sigma: float, *, mode: str = "reflect", truncate: float = 4.0
) -> np.ndarray:
    """``x`` smoothed by a Gaussian of standard deviation ``sigma`` points, cut at
    ``truncate`` standard deviations (same shape and units as ``x``).

    >>> y = gaussian_filter1d(np.array([0.0, 0.0, 1.0, 0.0, 0.0]), 1.0)
    >>> [round(float(v), 4) for v in y]
    [0.0584, 0.2421, 0.3989, 0.2421, 0.0584]
    """
    x = _as_trace(x)
    if not (np.isfinite(sigma) and sigma > 0):
        raise ValidationError(f"sigma must be a positive number of points, got {sigma!r}")
    radius = int(truncate * float(sigma) + 0.5)
    weights = gaussian_kernel(sigma, radius)
    if x.size == 0:
        return x.copy()
    xp = _extend(x, radius, radius, mode)
    n = x.size
    out = xp[radius : radius + n] * weights[radius]
    for j in range(radius, 0, -1):  # one step per kernel point, outermost pair first
        out += (xp[radius - j : radius - j + n] + xp[radius + j : radius + j + n]) * weights[
            radius - j
        ]
    return out


def gaussian_kernel(sigma: float, radius: int) -> np.ndarray:
    """Normalised Gaussian weights at ``-radius .. radius`` points (they sum to 1).

    >>> gaussian_kernel(1.0, 1).round(4).tolist()
    [0.2741, 0.4519, 0.2741]
    """
    offsets = np.arange(-radius, radius + 1)
    phi = np.exp(-0.5 / (sigma * sigma) * offsets**2)
    return phi / phi.sum()


def _running_extreme(x, size, mode, op, pad_value) -> np.ndarray:
    x = _as_trace(x)
    size = _check_size(size)
    if x.size == 0 or size == 1:
        return x.copy()
    xp = _extend(x, size // 2, (size - 1) // 2, mode)  # n + size - 1 points
    blocks = -(-xp.size // size)
    padded = np.full(blocks * size, pad_value)
    padded[: xp.size] = xp
    b = padded.reshape(blocks, size)
    prefix = op.accumulate(b, axis=1).reshape(-1)
    suffix = op.accumulate(b[:, ::-1], axis=1)[:, ::-1].reshape(-1)
    n = x.size
    # Window [i, i + size - 1] of the extended trace: suffix from i, prefix up to its end.
    return op(suffix[:n], prefix[size - 1 : size - 1 + n])


def _extend(x: np.ndarray, left: int, right: int, mode: str) -> np.ndarray:
    if mode == "nearest":
        return np.pad(x, (left, right), mode="edge")
    if mode == "reflect":
        return np.pad(x, (left, right), mode="symmetric")
    raise ValidationError(f"unknown filter mode {mode!r}; expected one of {', '.join(MODES)}")


def _as_trace(x: np.ndarray) -> np.ndarray:
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 1:
        raise ValidationError(f"a trace must be one-dimensional, got shape {x.shape}")
    return x


def _check_size(size: int) -> int:
    if not (isinstance(size, (int, np.integer)) and size >= 1):
        raise ValidationError(f"filter size must be a whole number of points >= 1, got {size!r}")
    return int(size)


__all__: Sequence[str] = [
    "MODES",
    "gaussian_filter1d",
    "gaussian_kernel",
    "maximum_filter1d",
    "minimum_filter1d",
    "uniform_filter1d",
]
