"""Band matching takes bands with a single partner in reach directly and solves the rest.

Check against the whole assignment problem solved by SciPy (``scipy.optimize.
linear_sum_assignment``, the general-purpose reference): the same number of pairs and the same
total distance (a best pairing; of equally good pairings either may be returned).
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import linear_sum_assignment

from reflib.analysis.search import MATCH_TOLERANCE, match_bands
from reflib.spectrum import PeakList


def _best(q: PeakList, r: PeakList) -> tuple[int, float]:
    d = np.abs(q.positions[:, None] - r.positions[None, :])
    cost = np.where(d <= MATCH_TOLERANCE, d, 1e6)
    rows, cols = linear_sum_assignment(cost)
    keep = cost[rows, cols] < 1e6
    return int(keep.sum()), float(cost[rows, cols][keep].sum())


def test_match_bands_is_a_best_pairing():
    rng = np.random.default_rng(11)
    for _ in range(150):
        n, m = int(rng.integers(1, 40)), int(rng.integers(1, 40))
        q = PeakList(np.round(rng.uniform(600, 1800, n)), rng.uniform(0.05, 1, n))
        r = PeakList(np.round(rng.uniform(600, 1800, m)), rng.uniform(0.05, 1, m))
        pairs = match_bands(q, r)
        assert len({i for i, _ in pairs}) == len(pairs) == len({j for _, j in pairs})
        d = [abs(q.positions[i] - r.positions[j]) for i, j in pairs]
        assert all(x <= MATCH_TOLERANCE for x in d)
        count, total = _best(q, r)
        assert len(pairs) == count
        assert abs(sum(d) - total) < 1e-6
        assert pairs == sorted(pairs)


def test_pairing_with_broad_bands_and_any_order_is_a_best_pairing():
    """Broad bands reach half their width, and positions in any order: still a best pairing
    (checked against SciPy's solver of the whole problem)."""
    from reflib.analysis.search import pair_positions

    rng = np.random.default_rng(23)
    for _ in range(150):
        n, m = int(rng.integers(1, 30)), int(rng.integers(1, 30))
        qp, rp = np.round(rng.uniform(600, 1800, n)), np.round(rng.uniform(600, 1800, m))
        qhalf = np.where(rng.random(n) < 0.15, rng.uniform(10, 60, n), 0.0)
        rhalf = np.where(rng.random(m) < 0.15, rng.uniform(10, 60, m), 0.0)
        if rng.random() < 0.5:  # sorted, as PeakList keeps them, half of the time
            oq, orr = np.argsort(qp), np.argsort(rp)
            qp, qhalf, rp, rhalf = qp[oq], qhalf[oq], rp[orr], rhalf[orr]
        qi, rj = pair_positions(qp, qhalf, rp, rhalf, MATCH_TOLERANCE)
        assert len(set(qi.tolist())) == qi.size == len(set(rj.tolist()))
        d = np.abs(qp[:, None] - rp[None, :])
        reach = np.maximum(MATCH_TOLERANCE, np.maximum(qhalf[:, None], rhalf[None, :]))
        assert (d[qi, rj] <= reach[qi, rj]).all()
        cost = np.where(d <= reach, d, 1e6)
        rows, cols = linear_sum_assignment(cost)
        keep = cost[rows, cols] < 1e6
        assert qi.size == int(keep.sum())
        assert abs(d[qi, rj].sum() - cost[rows, cols][keep].sum()) < 1e-6
        assert (np.diff(qi) > 0).all()
