"""Gas against condensed phase: the shift, the weights, the verdict.

Gas-phase carbonyls absorb about 20 cm-1 above the liquid (correlation table's gas_shift_cm1,
from memory); C-H stretches barely move.
"""

from __future__ import annotations

import numpy as np

from reflib.analysis import phase
from reflib.analysis.encode import DEFAULT_ENCODING
from reflib.spectrum import PeakList


def test_gas_carbonyl_moves_down_ch_stays():
    moved = phase.to_condensed(PeakList([1737.0, 2965.0], [1.0, 0.6]))
    assert moved.positions.tolist() == [1717.0, 2965.0]


def test_only_a_gas_list_is_changed():
    pl = PeakList([1737.0, 1761.0], [1.0, 0.9])
    assert phase.as_condensed(pl, ["film"]) is pl
    gas = phase.as_condensed(pl, ["gas"])
    assert len(gas) == 1  # P and R merged at 1749, then moved down by the table's shift
    assert float(gas.positions[0]) < 1749.0


def test_gas_against_condensed_needs_exactly_one_gas():
    assert phase.gas_against_condensed(["gas"], ["film"])
    assert not phase.gas_against_condensed(["gas"], ["gas"])
    assert not phase.gas_against_condensed(["kbr"], ["atr"])


def test_xh_region_down_weighted_and_wider_encoding():
    grid = DEFAULT_ENCODING.grid()
    w = phase.xh_weights(grid, np.ones_like(grid))
    assert w[np.searchsorted(grid, 3400.0)] == 0.3 and w[np.searchsorted(grid, 2950.0)] == 1.0
    assert phase.wide_encoding(DEFAULT_ENCODING).broadening > DEFAULT_ENCODING.broadening


def test_strict_verdict_demotes_unclear_confidence():
    f = {"score": 0.88, "margin": 0.05, "strong_new": 0.0, "strong_missing": 1.0}
    assert phase.strict_verdict("confident", "r", f)[0] == "ambiguous"
    clear = {"score": 0.95, "margin": 0.12, "strong_new": 0.0, "strong_missing": 0.0}
    assert phase.strict_verdict("confident", "r", clear)[0] == "confident"
    assert phase.strict_verdict("no-match", "r", f) == ("no-match", "r")
