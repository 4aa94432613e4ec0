"""Leftover across a series, start only, on REAL spectra: gas-phase infrared spectra of the
jcamp 1.3.2 sdist (``data/infrared_spectra``, fetched by scripts/fetch_reference_data.py; fixture
``gas_phase`` in tests/conftest.py). acetone, 2-butanone, ethyl acetate, isopropyl alcohol and
1-butanol share one absorbance axis, so mixtures can be made point by point.

Physical law: Beer-Lambert additivity. ``s * A1 / area1 + (1 - s) * A2 / area2`` holds a share
``s`` of its integrated absorbance from component 1. A reaction followed by aliquots is a series
of falling shares (20, 10, 5, 2, 0 %); without the product's spectrum the shares must come back
in order, each detected one within its 95 % interval, and the pure product not detected. Noise of
0.2 % of the strongest band is added (a re-measurement; common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.analysis import leftover, series
from reflib.io import read_spectrum
from reflib.spectrum import Metadata, Spectrum

pytestmark = pytest.mark.outside

PAIRS = [
    ("acetone", "isopropyl alcohol"),
    ("2-butanone", "1-butanol"),
    ("ethyl acetate", "isopropyl alcohol"),
]
SHARES = (0.20, 0.10, 0.05, 0.02, 0.0)


def _load(gas_phase, name: str) -> Spectrum:
    s = read_spectrum(gas_phase / f"{name}.jdx").to_absorbance()
    return Spectrum(s.x, s.y, "absorbance", Metadata(title=name))


def _unit(s: Spectrum) -> np.ndarray:
    return s.y / np.trapezoid(s.y, s.x)


@pytest.mark.parametrize("start,product", PAIRS)
def test_falling_series_comes_back_in_order_start_only(gas_phase, start, product):
    s, p = _load(gas_phase, start), _load(gas_phase, product)
    rng = np.random.default_rng(7)
    items = []
    for k, share in enumerate(SHARES):
        y = share * _unit(s) + (1 - share) * _unit(p)
        y = y + rng.normal(0, 0.002 * y.max(), y.size)
        meta = Metadata(title=f"aliquot {k}", extra={"LONGDATE": f"2024/05/01 {10 + k}:00:00"})
        items.append((f"aliquot-{k}.jdx", Spectrum(s.x, y, "absorbance", meta)))
    res = series.leftover_series(items, lambda d: leftover.leftover(d, s))
    got = [pt.result for pt in res.points]
    assert res.ordered_by == "time"
    # 20, 10 and 5 % are seen; the pure product is not
    assert all(r.detected for r in got[:3]) and not got[-1].detected
    for share, r in zip(SHARES, got):
        if r.detected:
            lo, hi = r.share_interval
            assert lo <= share <= hi, (share, r.share, r.share_interval)
        assert r.upper_bound >= share - 0.005, (share, r.upper_bound)
    found = [r.share for r in got if r.detected]
    assert found == sorted(found, reverse=True), found
    assert res.trend == "falling"
    assert res.below_limit_from in ("aliquot-3.jdx", "aliquot-4.jdx")
