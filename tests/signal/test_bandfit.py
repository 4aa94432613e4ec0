"""Overlapping bands resolved by fitting, on constructed sums of bands whose positions, widths
and heights are known exactly (a mathematical check: common practice, no source)."""

from __future__ import annotations

import numpy as np
import pytest

from reflib.signal.bandfit import levenberg_marquardt, pseudo_voigt, resolve_overlaps


def test_levenberg_marquardt_recovers_an_exponential_decay() -> None:
    """y = 2 exp(-0.3 t) + 0.5 from a poor start: the parameters come back to 1e-6."""
    t = np.linspace(0.0, 10.0, 50)
    y = 2.0 * np.exp(-0.3 * t) + 0.5

    def fun(p):
        return p[0] * np.exp(-p[1] * t) + p[2] - y

    def jac(p):
        e = np.exp(-p[1] * t)
        return np.column_stack([e, -p[0] * t * e, np.ones_like(t)])

    p, r = levenberg_marquardt(fun, jac, [1.0, 1.0, 0.0], [0, 0, -5], [10, 5, 5], iterations=200)
    assert p == pytest.approx([2.0, 0.3, 0.5], abs=1e-6)
    assert float(np.max(np.abs(r))) < 1e-8


def test_levenberg_marquardt_keeps_to_its_bounds() -> None:
    """The unconstrained optimum (a = 3) lies outside the bounds: the fit stops at the bound."""
    t = np.linspace(0.0, 1.0, 20)
    p, _ = levenberg_marquardt(
        lambda p: p[0] * t - 3.0 * t, lambda p: t[:, None], [0.5], [0.0], [2.0]
    )
    assert float(p[0]) == pytest.approx(2.0)


@pytest.mark.parametrize("separation", [10.0, 12.0, 15.0])
@pytest.mark.parametrize("eta", [0.3, 0.5, 0.7])
def test_two_overlapping_bands_get_their_own_heights(separation: float, eta: float) -> None:
    """Two bands of FWHM 14 cm-1, heights 0.48 and 0.29, 10-15 cm-1 apart (a CH2/CH3 symmetric
    stretch pair): from rough starting values (the merged maximum's height, the curvature's
    lower bound for the other) the fit gives each band its height within 5 % and its position
    within 0.5 cm-1, whatever the true Lorentzian share."""
    x = np.arange(2700.0, 3100.0, 2.0)
    c1, c2 = 2856.0, 2856.0 + separation
    y = pseudo_voigt(x, c1, 14.0, 0.48, eta) + pseudo_voigt(x, c2, 14.0, 0.29, eta)
    y = y + np.random.default_rng(int(separation)).normal(0.0, 1e-3, x.size)
    pos, h, w, fitted = resolve_overlaps(
        x,
        y,
        np.array([c1 + 1.5, c2 + 1.0]),
        np.array([float(y.max()), 0.1]),
        np.array([20.0, 8.0]),
        np.ones(2, bool),
        np.full(x.size, 1e-3),
    )
    assert fitted.all()
    assert pos == pytest.approx([c1, c2], abs=0.5)
    assert h == pytest.approx([0.48, 0.29], rel=0.05)
    assert w == pytest.approx([14.0, 14.0], rel=0.1)


def test_isolated_bands_and_unusable_bands_are_left_as_found() -> None:
    """Bands far apart form no group, and a band marked unusable (saturated, beside a hole)
    never takes part: their values come back unchanged."""
    x = np.arange(1000.0, 2000.0, 2.0)
    y = pseudo_voigt(x, 1200.0, 14.0, 1.0) + pseudo_voigt(x, 1212.0, 14.0, 0.5)
    y = y + pseudo_voigt(x, 1700.0, 14.0, 0.7)
    pos0 = np.array([1200.0, 1212.0, 1700.0])
    h0 = np.array([1.1, 0.2, 0.7])
    w0 = np.array([18.0, 8.0, 14.0])
    pos, h, w, fitted = resolve_overlaps(
        x, y, pos0, h0, w0, np.array([False, True, True]), np.full(x.size, 1e-3)
    )
    assert not fitted.any()
    assert pos.tolist() == pos0.tolist() and h.tolist() == h0.tolist()


def test_a_fit_that_does_not_describe_the_trace_is_not_kept() -> None:
    """Three bands where only two were found: the two-band fit leaves a residual far above the
    noise, so the found values stand."""
    x = np.arange(1000.0, 2000.0, 2.0)
    y = sum(pseudo_voigt(x, c, 14.0, 1.0) for c in (1400.0, 1412.0, 1424.0))
    pos, h, _, fitted = resolve_overlaps(
        x,
        y,
        np.array([1400.0, 1424.0]),
        np.array([1.2, 1.2]),
        np.array([30.0, 30.0]),  # wide enough estimates to group them
        np.ones(2, bool),
        np.full(x.size, 1e-3),
    )
    assert not fitted.any()
    assert h.tolist() == [1.2, 1.2]
