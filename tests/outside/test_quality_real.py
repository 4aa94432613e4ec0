"""The quality report on real spectra: the gas-phase infrared spectra of the jcamp 1.3.2 sdist.

Source: the ``data/infrared_spectra`` folder of the PyPI package jcamp 1.3.2 (see
tests/conftest.py). ``carbon dioxide.jdx`` (Dow Chemical, 4 cm-1, transmittance) has its
antisymmetric-stretch band (2349 cm-1, Herzberg's value from memory) flat at about 2 %T from about
2317 to 2380 cm-1 (read off the file's data).
"""

from __future__ import annotations

import pytest

from reflib.io import read_spectrum
from reflib.signal.quality import assess


def test_co2_band_reported_saturated(gas_phase):
    spec = read_spectrum(gas_phase / "carbon dioxide.jdx")
    checks = {f.check: f for f in assess(spec)}
    sat = checks["saturation"]
    assert sat.severity == "warn"
    (band,) = [b for b in sat.figures["bands"] if 2300 < b["centre_cm1"] < 2400]
    assert band["to_cm1"] == pytest.approx(2317.0, abs=6.0)
    assert band["from_cm1"] == pytest.approx(2380.0, abs=6.0)
    assert band["centre_cm1"] == pytest.approx(2349.0, abs=5.0)
    assert sat.figures["floor_percent_t"] == pytest.approx(2.0, abs=0.5)
    assert checks["resolution"].figures["stated_resolution_cm1"] == 4.0


def test_no_fringes_on_the_gas_phase_set(gas_phase):
    """Rotational lines are periodic only within one band: none of the files is called fringed
    at warn level."""
    from reflib.errors import ReflibError
    from reflib.io import read_all
    from reflib.spectrum import Spectrum

    fringed = []
    for path in sorted(gas_phase.glob("*.jdx")):
        try:
            blocks = read_all(path)
        except ReflibError:
            continue
        for b in blocks:
            if isinstance(b, Spectrum):
                found = [f for f in assess(b) if f.check == "fringes" and f.severity != "info"]
                if found:
                    fringed.append(path.stem)
    assert fringed == []
