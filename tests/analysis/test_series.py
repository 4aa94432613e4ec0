"""A series of crudes (issue 16): measuring order from the files' JCAMP-DX date labels, the trend
of the leftover share and where it fell below the detection limit.

Date labels: JCAMP-DX 5.01 ``##LONGDATE=YYYY/MM/DD HH:MM:SS`` and the older ``##DATE=YY/MM/DD``
with ``##TIME=HH:MM:SS`` (from memory of the JCAMP-DX specification). Mixtures are Beer-Lambert
sums (physical law) of Gaussian bands at handbook group frequencies (from memory: ketone C=O
near 1715 cm-1, secondary-alcohol C-O near 1110 cm-1, broad hydrogen-bonded O-H near 3350).
"""

from __future__ import annotations

from datetime import datetime

import numpy as np

from reflib.analysis import leftover, series
from reflib.spectrum import Metadata, Spectrum

X = np.arange(400.0, 4000.0 + 1.0, 2.0)
SKELETON = [(2962, 0.5, 18), (2931, 0.6, 20), (1460, 0.3, 14), (1378, 0.25, 10), (960, 0.15, 12)]
KETONE = SKELETON + [(1715, 1.0, 18), (1360, 0.4, 10), (1220, 0.35, 16)]
ALCOHOL = SKELETON + [(3350, 0.45, 260), (1110, 0.6, 18), (1040, 0.3, 14)]


def bands(spec):
    y = np.zeros_like(X)
    for p, h, w in spec:
        y += h * np.exp(-0.5 * ((X - p) / (w / 2.3548)) ** 2)
    return y


def unit(spec):
    return bands(spec) / (sum(h * w / 2.3548 * np.sqrt(2 * np.pi) for _p, h, w in spec))


def crude(share, seed, extra=None):
    y = share * unit(KETONE) + (1 - share) * unit(ALCOHOL)
    y = 0.8 * y / y.max() + np.random.default_rng(seed).normal(0, 0.002, X.size)
    return Spectrum(X, y, "absorbance", Metadata(title=f"s{seed}", extra=dict(extra or {})))


def test_times_from_longdate_and_from_date_with_time():
    assert series.acquisition_time(
        Metadata(extra={"LONG DATE": "2024/03/05 14:30:00.00 +0100"})
    ) == datetime(2024, 3, 5, 14, 30)
    assert series.acquisition_time(
        Metadata(extra={"DATE": "98/07/21", "TIME": "09:05:10"})
    ) == datetime(1998, 7, 21, 9, 5, 10)
    assert series.acquisition_time(Metadata(extra={"DATE": "not a date"})) is None
    assert series.acquisition_time(Metadata()) is None


def test_order_by_time_when_every_file_has_one_else_natural_name_order():
    a = crude(0.0, 1, {"LONGDATE": "2024/03/05 16:00:00"})
    b = crude(0.0, 2, {"LONGDATE": "2024/03/05 09:00:00"})
    ordered, by = series.order_samples([("a.jdx", a), ("b.jdx", b)])
    assert by == "time" and [n for n, _ in ordered] == ["b.jdx", "a.jdx"]
    c = crude(0.0, 3)
    ordered, by = series.order_samples([("crude10", a), ("crude2", c), ("crude1", b)])
    assert by == "name" and [n for n, _ in ordered] == ["crude1", "crude2", "crude10"]


def test_falling_series_is_in_order_with_a_falling_trend_and_a_limit_point():
    """Aliquots at 20, 10, 5, 2 and 0 % taken an hour apart, start only: shares come back in
    order, each interval holds its true share, the trend falls and the last aliquot is below the
    detection limit."""
    start = Spectrum(X, bands(KETONE), "absorbance", Metadata(title="ketone"))
    shares = (0.2, 0.1, 0.05, 0.02, 0.0)
    items = [
        (f"x{k}", crude(s, 20 + k, {"LONGDATE": f"2024/03/05 {9 + k:02d}:00:00"}))
        for k, s in enumerate(shares)
    ]
    res = series.leftover_series(items[::-1], lambda d: leftover.leftover(d, start))
    assert res.ordered_by == "time" and [p.label for p in res.points] == [n for n, _ in items]
    got = [p.result for p in res.points]
    for s, r in zip(shares, got):
        if r.detected:
            assert r.share_interval[0] <= s <= r.share_interval[1], (s, r.share_interval)
    assert all(r.detected for r in got[:3]) and not got[-1].detected
    det = [r.share for r in got if r.detected]
    assert det == sorted(det, reverse=True)
    assert res.trend == "falling" and res.slope < 0
    docs = res.to_dicts()
    assert len(docs) == len(shares) + 1 and docs[-1]["summary"] is True
    assert docs[-1]["x"] == [0.0, 1.0, 2.0, 3.0, 4.0] and docs[-1]["x_unit"] == "hours"
    assert res.below_limit_from in ("x3", "x4")


def test_steady_share_is_flat_and_never_below_the_limit():
    """The same 10 % in four aliquots: no trend, and no point where it fell below the limit."""
    start = Spectrum(X, bands(KETONE), "absorbance", Metadata(title="ketone"))
    items = [(f"c{k}", crude(0.1, 40 + k)) for k in range(4)]
    res = series.leftover_series(items, lambda d: leftover.leftover(d, start))
    assert res.ordered_by == "name" and res.trend == "flat"
    assert res.below_limit_from is None and all(p.result.detected for p in res.points)
