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
