"""Spectrum and PeakList: conventions and validation at the boundary."""

import numpy as np
import pytest

from reflib.errors import ReflibError, ValidationError
from reflib.spectrum import (
    STRENGTH_WORDS,
    PeakList,
    Spectrum,
    absorbance_to_transmittance,
    micrometres_to_wavenumber,
    strength_word,
    transmittance_to_absorbance,
)


def test_descending_x_is_stored_ascending():
    s = Spectrum([4000.0, 3000.0, 2000.0], [0.1, 0.2, 0.3])
    assert s.x.tolist() == [2000.0, 3000.0, 4000.0]
    assert s.y.tolist() == [0.3, 0.2, 0.1]


@pytest.mark.parametrize(
    "x, y, fragment",
    [
        ([1.0, 2.0, 2.0], [0, 0, 0], "duplicate"),
        ([1.0, 3.0, 2.0], [0, 0, 0], "neither ascending"),
        ([1.0, np.nan], [0, 0], "non-finite"),
        ([1.0, 2.0], [0, np.inf], "non-finite"),
        ([1.0], [0], "at least 2"),
        ([1.0, 2.0], [0], "points"),
        ([-1.0, 2.0], [0, 0], "positive"),
    ],
)
def test_bad_arrays_are_refused_with_a_reason(x, y, fragment):
    with pytest.raises(ValidationError, match=fragment):
        Spectrum(x, y)


def test_transmittance_absorbance_round_trip():
    # A = -log10 T (Beer-Lambert, decadic absorbance: definition)
    t = np.array([1.0, 0.5, 0.1, 0.01])
    a = transmittance_to_absorbance(t)
    assert np.allclose(a, [0.0, 0.30103, 1.0, 2.0], atol=1e-5)
    assert np.allclose(absorbance_to_transmittance(a), t)
    # a saturated (zero-transmittance) band stays finite
    assert np.isfinite(transmittance_to_absorbance(np.array([0.0])))[0]


def test_micrometres_to_wavenumber():
    # wavenumber (cm-1) = 10^4 / wavelength (um): definition
    assert np.allclose(micrometres_to_wavenumber([2.5, 10.0, 25.0]), [4000.0, 1000.0, 400.0])
    with pytest.raises(ValidationError):
        micrometres_to_wavenumber([0.0])


def test_peaklist_normalises_sorts_and_names_strengths():
    pl = PeakList([1715.0, 3350.0, 1240.0], [2.0, 1.0, 0.2], broad=[False, True, False])
    assert pl.positions.tolist() == [1240.0, 1715.0, 3350.0]
    assert pl.intensities.max() == 1.0
    assert [p.strength for p in pl.descending()] == ["s", "vs", "w"]
    assert pl.to_text() == "3350 (s, br), 1715 (vs), 1240 (w) cm-1"


def test_strength_word_thresholds_are_ordered():
    values = [strength_word(v) for v in (1.0, 0.6, 0.3, 0.1, 0.01)]
    assert values == ["vs", "s", "m", "w", "vw"]


def test_peak_list_words_its_bands_as_strength_word_does():
    # the list words every band at once; each word must be the one the single-band rule gives,
    # on and either side of every threshold (common practice, no source: the strength words)
    edges = [lo for lo, _ in STRENGTH_WORDS.values()]
    values = sorted({min(max(e + d, 0.0), 1.0) for e in edges for d in (-1e-9, 0.0, 1e-9)} | {1.0})
    pl = PeakList(np.arange(1000.0, 1000.0 + 10 * len(values), 10.0), values)
    assert pl.intensities.tolist() == values  # the strongest is 1: nothing rescaled
    assert [p.strength for p in pl] == [strength_word(v) for v in pl.intensities]
    assert len(set(p.strength for p in pl)) == len(STRENGTH_WORDS)


def test_errors_name_file_and_line():
    err = ReflibError("bad Y check", path="a.jdx", line=12)
    assert str(err) == "a.jdx, line 12: bad Y check"


def test_peak_list_labels_follow_their_bands():
    pl = PeakList([1715.0, 3350.0, 1240.0], [1.0, 0.4, 0.6], labels=["C=O", " O-H ", ""])
    assert pl.labels == [None, "C=O", "O-H"]  # sorted with the positions, blanks made None
    assert [p.label for p in pl.descending()] == ["O-H", "C=O", None]
    assert pl.subset([1]).labels == ["C=O"]
    assert pl.to_text() == "3350 (m, O-H), 1715 (vs, C=O), 1240 (s) cm-1"
    assert [q.get("label") for q in pl.to_dict()["peaks"]] == ["O-H", "C=O", None]
    assert PeakList([1715.0], [1.0]).labels is None
    with pytest.raises(ValidationError, match="labels"):
        PeakList([1715.0, 1240.0], [1.0, 0.5], labels=["C=O"])
