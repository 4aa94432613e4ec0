"""The real CO2 spectrum of the jcamp 1.3.2 source distribution (``carbon dioxide.jdx``, a
Coblentz chart digitised as transmittance): its antisymmetric stretch is flat near 2 %T from
about 2317 to 2380 cm-1.

The band origin is 2349 cm-1 (CO2 nu3, from memory; also in the design notes as the air's CO2
band). A chart flat at its floor cannot say where the deepest point is, so the picker reports the
plateau's centre and flags it saturated; before, it reported the lowest digitised point, 2326.5.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from reflib.analysis.encode import comparable_peaks
from reflib.io import read_spectrum
from reflib.signal.peaks import pick_peaks

pytestmark = pytest.mark.outside


def test_co2_flat_band_is_one_saturated_band_near_2349(gas_phase: Path) -> None:
    spectrum = read_spectrum(gas_phase / "carbon dioxide.jdx")
    pl = pick_peaks(spectrum)
    inside = np.flatnonzero((pl.positions > 2317.0) & (pl.positions < 2380.0))
    assert inside.size == 1, pl.to_text()
    assert float(pl.positions[inside[0]]) == pytest.approx(2349.0, abs=5.0)
    assert float(pl.meta.extra["saturated"]) == pytest.approx(2349.0, abs=5.0)
    # the comparison keeps the position and counts the band as strong
    cmp_ = comparable_peaks(pl, ["gas"])
    k = int(np.argmin(np.abs(cmp_.positions - 2349.0)))
    assert abs(float(cmp_.positions[k]) - 2349.0) <= 5.0 and float(cmp_.intensities[k]) == 1.0
