"""What an opaque stretch does to a profile's baseline, and how a band of another shape still
bounds the starting material (start-only leftover)."""

import numpy as np

from reflib.analysis import leftover as lo
from reflib.analysis import profiles
from reflib.spectrum import Spectrum


def _chloroform_cell_sample(band_height: float) -> tuple[np.ndarray, Spectrum]:
    """A sample in a chloroform cell: no light below about 800 cm-1 (opaque, read as 4
    absorbance units), a flat zero baseline above it, one band at 900 cm-1 (chloroform's
    800-650 cm-1 opacity in a 0.1 mm cell: common practice, no source)."""
    x = np.arange(400.0, 4000.0, 2.0)
    rng = np.random.default_rng(7)
    # the cut-off rises over some 10-20 cm-1
    wall = 1.0 / (1.0 + np.exp(np.clip((x - 815.0) / 3.0, -50.0, 50.0)))
    band = band_height * np.exp(-0.5 * ((x - 900.0) / (12.0 / 2.3548)) ** 2)
    y = 4.0 * wall + band + rng.normal(0.0, 1e-3, x.size)
    return x, Spectrum(x, y, "absorbance")


def test_opaque_cell_range_does_not_lift_the_baseline_beside_it():
    """Where no light passes the trace says nothing about the baseline. Beside the opaque range
    the band-free trace must stay at zero and a band keep its height (an absorbance band's
    height over a flat baseline: Beer-Lambert, any spectroscopy text). Before the opaque stretch
    was bridged, the stiff baseline rose toward the plateau and pushed 850-1100 cm-1 about 0.15
    absorbance units below zero."""
    x, spec = _chloroform_cell_sample(0.05)
    grid = profiles.common_grid([spec])
    prof = profiles.profile(spec, grid, ["chcl3", "nacl"])
    free = (grid > 960.0) & (grid < 1100.0)
    assert abs(float(np.median(prof.y[free]))) < 0.005
    at_band = float(prof.y[np.searchsorted(grid, 900.0)])
    assert abs(at_band - 0.05) < 0.01


def test_bridge_leaves_a_trace_without_opaque_stretches_alone():
    """Nothing is bridged where the trace transmits light everywhere (common practice, no
    source: 1 % transmittance, 2 absorbance units, is the usual floor of a usable reading)."""
    y = np.linspace(0.0, 1.5, 50)
    assert profiles._bridge_opaque(y, np.zeros((0, 2), int), 8) is y


def _band(amount, sigma, ceiling, shape_ok, bound=float("inf"), pos=1000.0):
    return lo._StartBand(
        pos, 0.5, amount, sigma, 0.3, shape_ok, 0.0 if shape_ok else 9.0, 0.0, ceiling, False,
        bound=bound,
    )  # fmt: skip


def test_band_of_another_shape_still_bounds_the_amount():
    """Beer-Lambert: absorbances of the components add and none is negative, so whatever else
    absorbs at a starting-material band, the sample there holds at most what it shows. A band
    of another shape whose core shows room for 0.05 of the reference keeps two skeleton bands
    that read 1.0 (a product sharing the skeleton) out of the level, and the bands reading
    about zero set it."""
    bands = [
        _band(0.0, 1.0, 2.0, True),  # a weak band under a wide product band: says little
        _band(1.0, 0.05, 1.1, True, pos=1250.0),  # skeleton band the product shares
        _band(0.98, 0.05, 1.1, True, pos=1010.0),
        _band(0.03, 0.2, 9.0, False, bound=0.05, pos=1715.0),  # another shape on it
    ]
    group = lo.consistent_low_group(bands)
    assert not group[1] and not group[2]
    # without that limit the two skeleton bands join the level
    bands[3].bound = float("inf")
    group = lo.consistent_low_group(bands)
    assert group[1] and group[2]


def test_envelope_in_another_phase_bounds_nothing():
    """A hydrogen-bonded envelope measured in another phase than the sample cannot be compared
    (free O-H and N-H replace it in dilute solution; any spectroscopy text): no bound."""
    b = _band(0.0, 0.1, 0.01, False, bound=0.01)
    b.judged = False
    assert lo._bound(b) == float("inf")
