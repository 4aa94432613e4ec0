"""The cheapest one-to-one pairing of rows and columns of a cost matrix, in numpy alone.

Band matching (:func:`reflib.analysis.search.match_bands`) pairs query bands with reference bands by
solving a linear assignment problem. SciPy's ``scipy.optimize.linear_sum_assignment`` does
this, but importing ``scipy.optimize`` costs about 0.4 s at every start of ``reflib search``.
:func:`linear_sum_assignment` here follows the same method as the general-purpose reference
library, SciPy: the shortest augmenting path scheme for rectangular problems (D. F. Crouse,
"On implementing 2D rectangular assignment algorithms", IEEE Trans. Aerospace and Electronic
Systems 52(4), 2016), with the same order of visiting columns, the same tie rule (of equally
short paths, one ending at a free column is preferred) and the same floating-point operations,
so that it returns the very pairing SciPy returns, also when several pairings cost the same
(tests/test_assignment.py compares them). Loops run over rows and path steps, not over matrix
entries; the matrices of band matching are at most a few dozen bands on a side.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from reflib.errors import ValidationError


def linear_sum_assignment(
    cost: np.ndarray, maximize: bool = False
) -> tuple[np.ndarray, np.ndarray]:
    """Row and column indices of the one-to-one pairing with the least total cost.

    ``cost`` is a 2-D array (any units); with ``n`` rows and ``m`` columns, ``min(n, m)`` pairs
    are returned, rows ascending. ``maximize=True`` finds the largest total instead. An entry of
    ``inf`` forbids that pair; NaN and ``-inf`` are refused. Same results as SciPy's
    ``scipy.optimize.linear_sum_assignment``.

    >>> rows, cols = linear_sum_assignment(np.array([[4.0, 1.0, 3.0], [2.0, 0.0, 5.0]]))
    >>> rows.tolist(), cols.tolist()
    ([0, 1], [1, 0])
    """
    c = np.asarray(cost, dtype=np.float64)
    if c.ndim != 2:
        raise ValidationError(f"a cost matrix must be 2-D, got shape {c.shape}")
    if c.size == 0:
        return np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp)
    transpose = c.shape[1] < c.shape[0]
    if transpose:
        c = c.T
    if maximize:
        c = -c
    if np.isnan(c).any() or np.isneginf(c).any():
        raise ValidationError("the cost matrix holds NaN or -inf entries")
    col4row = _solve(np.ascontiguousarray(c))
    if transpose:
        order = np.argsort(col4row)
        return col4row[order].astype(np.intp), order.astype(np.intp)
    return np.arange(c.shape[0], dtype=np.intp), col4row.astype(np.intp)


def _solve(c: np.ndarray) -> np.ndarray:
    """Column of each row for ``c`` with no more rows than columns."""
    nr, nc = c.shape
    u = np.zeros(nr)
    v = np.zeros(nc)
    path = np.full(nc, -1, dtype=np.intp)
    col4row = np.full(nr, -1, dtype=np.intp)
    row4col = np.full(nc, -1, dtype=np.intp)
    for cur in range(nr):  # one shortest augmenting path per row
        spc = np.full(nc, np.inf)
        sr = np.zeros(nr, dtype=bool)
        sc = np.zeros(nc, dtype=bool)
        remaining = np.arange(nc - 1, -1, -1, dtype=np.intp)  # columns, visited last first
        left = nc
        min_val = 0.0
        i = cur
        sink = -1
        while sink == -1:  # one step per column added to the path tree
            sr[i] = True
            rem = remaining[:left]
            r = min_val + c[i, rem] - u[i] - v[rem]
            better = r < spc[rem]
            path[rem[better]] = i
            spc[rem[better]] = r[better]
            s = spc[rem]
            lowest = float(s.min())
            if lowest == np.inf:
                raise ValidationError("the cost matrix allows no complete pairing")
            ties = np.flatnonzero(s == lowest)
            free = ties[row4col[rem[ties]] == -1]
            index = int(free[-1]) if free.size else int(ties[0])
            min_val = lowest
            j = int(rem[index])
            if row4col[j] == -1:
                sink = j
            else:
                i = int(row4col[j])
            sc[j] = True
            left -= 1
            remaining[index] = remaining[left]
        u[cur] += min_val
        others = sr.copy()
        others[cur] = False
        u[others] += min_val - spc[col4row[others]]
        v[sc] -= min_val - spc[sc]
        j = sink
        while True:  # flip the path: one step per pair on it
            i = int(path[j])
            row4col[j] = i
            col4row[i], j = j, int(col4row[i])
            if i == cur:
                break
    return col4row


__all__: Sequence[str] = ["linear_sum_assignment"]
