"""reflib.signal.assignment against the general-purpose reference library, SciPy.

``reflib.signal.assignment.linear_sum_assignment`` stands in for
``scipy.optimize.linear_sum_assignment``
(band matching in reflib.analysis.search) so that a search need not import scipy.optimize. It must
return
the same pairing as SciPy, not merely one of the same cost: band matching gives many equal costs
(every pair beyond the tolerance costs the same large number), and a different optimal pairing
would change which bands a hit list calls matched. So every check compares the indices exactly,
on random matrices, integer matrices full of ties, wide and tall ones, matrices shaped like those
of band matching, with forbidden (infinite) entries, and maximisation.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize

from reflib.errors import ValidationError
from reflib.signal.assignment import linear_sum_assignment


def _same(cost: np.ndarray, maximize: bool = False) -> tuple[np.ndarray, np.ndarray]:
    rows, cols = linear_sum_assignment(cost, maximize=maximize)
    ref_rows, ref_cols = optimize.linear_sum_assignment(cost, maximize=maximize)
    assert rows.tolist() == ref_rows.tolist()
    assert cols.tolist() == ref_cols.tolist()
    return rows, cols


def test_random_real_matrices_of_every_shape():
    rng = np.random.default_rng(11)
    for _ in range(300):
        n, m = (int(v) for v in rng.integers(1, 25, 2))
        _same(rng.uniform(0.0, 10.0, (n, m)))


def test_integer_matrices_full_of_ties():
    rng = np.random.default_rng(12)
    for _ in range(300):
        n, m = (int(v) for v in rng.integers(1, 15, 2))
        cost = rng.integers(0, 3, (n, m)).astype(float)
        _same(cost)
        _same(cost, maximize=True)


def test_constant_matrices():
    for shape in [(1, 1), (3, 3), (2, 5), (6, 4)]:
        _same(np.ones(shape))


def test_band_matching_shaped_matrices():
    # Distances in cm-1 between two peak lists, with every pair beyond a 10 cm-1 tolerance
    # set to one large cost, as reflib.analysis.search.match_bands builds them.
    rng = np.random.default_rng(13)
    for _ in range(200):
        q = np.sort(rng.uniform(400.0, 4000.0, int(rng.integers(1, 45))))
        r = np.sort(rng.uniform(400.0, 4000.0, int(rng.integers(1, 45))))
        r[: min(q.size, r.size) // 2] = q[: min(q.size, r.size) // 2] + rng.normal(0, 3.0)
        d = np.abs(q[:, None] - r[None, :])
        _same(np.where(d <= 10.0, d, 1e6))


def test_forbidden_pairs_are_avoided():
    cost = np.array([[np.inf, 1.0, 5.0], [2.0, np.inf, 1.0], [1.0, 3.0, np.inf]])
    rows, cols = _same(cost)
    assert np.isfinite(cost[rows, cols]).all()
    with pytest.raises(ValidationError, match="no complete pairing"):
        linear_sum_assignment(np.array([[np.inf, np.inf], [1.0, 2.0]]))


def test_the_optimum_of_a_small_problem_is_the_least_total():
    # Exhaustive check over all 4! pairings (enumeration, no source needed).
    from itertools import permutations

    rng = np.random.default_rng(14)
    cost = rng.uniform(0, 1, (4, 4))
    rows, cols = linear_sum_assignment(cost)
    best = min(sum(cost[i, p[i]] for i in range(4)) for p in permutations(range(4)))
    assert abs(cost[rows, cols].sum() - best) < 1e-12


def test_bad_matrices_are_refused():
    with pytest.raises(ValidationError, match="2-D"):
        linear_sum_assignment(np.zeros(3))
    with pytest.raises(ValidationError, match="NaN"):
        linear_sum_assignment(np.array([[np.nan, 1.0]]))
    rows, cols = linear_sum_assignment(np.zeros((0, 3)))
    assert rows.size == 0 and cols.size == 0
