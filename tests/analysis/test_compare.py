"""Band-by-band comparison of two spectra (reflib.analysis.compare).

Band positions are handbook group frequencies (from memory): ketone C=O near 1715 cm-1,
hydrogen-bonded O-H near 3350 cm-1 (broad), C-O stretch of an alcohol near 1050-1100 cm-1, C-H
stretches 2850-2960 cm-1. Mineral-oil (nujol) bands near 2920/2850/1460/1377 cm-1 are common
practice, no source (DESIGN.md, "facts of the trade").
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from reflib.analysis.compare import compare
from reflib.analysis.search import CAUTION
from reflib.errors import NotFoundError, ValidationError
from reflib.library import Library
from reflib.library.lookup import compare_in_library
from reflib.spectrum import Metadata, PeakList, Spectrum

KETONE = PeakList(
    [2962.0, 2931.0, 1715.0, 1460.0, 1360.0, 1220.0, 960.0],
    [0.5, 0.6, 1.0, 0.3, 0.4, 0.35, 0.2],
    widths=[18, 20, 18, 14, 10, 16, 12],
)
ALCOHOL = PeakList(
    [3350.0, 2964.0, 2929.0, 1462.0, 1375.0, 1110.0, 962.0],
    [0.45, 0.5, 0.6, 0.3, 0.2, 0.6, 0.45],
    widths=[260, 18, 20, 14, 10, 18, 12],
    broad=[True, False, False, False, False, False, False],
)


def test_reaction_reads_as_a_chemist_would_say_it():
    """Ketone -> alcohol: the 1715 C=O is gone, a broad 3350 O-H appeared, each annotated."""
    c = compare(KETONE, ALCOHOL)
    lost = {round(b.position): b for b in c.lost}
    new = {round(b.position): b for b in c.new}
    assert 1715 in lost and 1220 in lost
    assert 3350 in new and 1110 in new and new[3350].broad
    assert any("C=O" in g for g in lost[1715].groups)
    assert any("O-H" in g for g in new[3350].groups)
    text = " | ".join(c.summary)
    assert "the 1715 band" in text and "is gone" in text
    assert "broad 3350 band" in text and "appeared" in text


def test_each_side_is_labelled_with_its_own_preparation():
    """The ketone run as a KBr pellet, the alcohol as a film: the film's new O-H band near 3350
    is the alcohol's, not the pellet's absorbed water (which only a KBr pellet shows; common
    practice, no source)."""
    ketone = PeakList(
        KETONE.positions, KETONE.intensities, KETONE.widths, meta=Metadata(prep=["kbr"])
    )
    alcohol = PeakList(
        ALCOHOL.positions,
        ALCOHOL.intensities,
        ALCOHOL.widths,
        broad=ALCOHOL.broad,
        meta=Metadata(prep=["film"]),
    )
    c = compare(ketone, alcohol)
    new = {round(b.position): b for b in c.new}
    assert 3350 in new
    text = " ".join(new[3350].groups).lower()
    assert "o-h" in text and "preparation" not in text, new[3350].groups


def test_matched_bands_carry_their_shift_and_intensity_factor():
    """Shared skeleton bands match with the shift B - A; the 960 band grew 3.75x."""
    c = compare(KETONE, ALCOHOL)
    pairs = {round(m.a): m for m in c.matched}
    assert pairs[2962].shift == pytest.approx(2.0)
    assert pairs[1460].shift == pytest.approx(2.0)
    assert 1360 not in pairs  # 15 cm-1 from 1375: beyond the 12 cm-1 match tolerance
    assert pairs[960].factor == pytest.approx((0.45 / 0.6) / 0.2)  # lists are relative to 1
    assert any(round(m.a) == 960 for m in c.changed)
    assert all(m.factor >= 1.5 or m.factor <= 1 / 1.5 for m in c.changed)


def test_identical_spectra_have_nothing_lost_or_new():
    c = compare(KETONE, KETONE)
    assert not c.lost and not c.new and not c.changed
    assert len(c.matched) == len(KETONE)
    assert all(m.shift == 0 for m in c.matched)


def test_bands_in_masked_regions_are_left_out():
    """With a nujol mull the 2960/2930 C-H stretches are the oil's, not the sample's: an
    extra band there is not reported as new."""
    after = PeakList(
        [*KETONE.positions, 2855.0], [*KETONE.intensities, 0.9], widths=[*KETONE.widths, 14]
    )
    plain = compare(KETONE, after)
    assert any(round(b.position) == 2855 for b in plain.new)
    mulled = compare(KETONE, after, prep="nujol")
    assert not any(2800 <= b.position <= 3000 for b in mulled.new)
    assert not any(2800 <= m.a <= 3000 for m in mulled.matched)
    assert any(lo <= 2855 <= hi for lo, hi, _ in mulled.masked)


def test_full_spectra_are_picked_and_ranges_intersected():
    x = np.arange(600.0, 4000.0, 2.0)
    g = lambda c, w: np.exp(-0.5 * ((x - c) / (w / 2.3548)) ** 2)  # noqa: E731
    a = Spectrum(x, g(1715, 18) + 0.4 * g(1360, 10), meta=Metadata(title="before"))
    b = Spectrum(x, 0.5 * g(3350, 260) + 0.4 * g(1362, 10), meta=Metadata(title="after"))
    c = compare(a, b)
    assert [round(n.position) for n in c.lost] == [1715]
    assert [round(n.position) for n in c.new] == [3350]
    d = c.to_dict()
    assert d["a"]["name"] == "before" and d["caution"] == CAUTION
    assert d["range_cm1"] == [600.0, 3998.0]
    json.dumps(d)
    far = Spectrum(np.arange(400.0, 500.0, 2.0), np.zeros(50))
    with pytest.raises(ValidationError, match="share no wavenumber range"):
        compare(far, Spectrum(np.arange(600.0, 700.0, 2.0), np.zeros(50)))
    with pytest.raises(ValidationError, match="Spectrum or PeakList"):
        compare("a.jdx", KETONE)


def test_library_entries_by_name():
    lib = Library.create(":memory:")
    lib.add(KETONE, name="pentan-2-one", check_similar=False)
    lib.add(ALCOHOL, name="pentan-2-ol", check_similar=False)
    c = compare_in_library(lib, "pentan-2-one", "pentan-2-ol")
    assert c.a["name"] == "pentan-2-one" and c.b["compound_id"] == 2
    assert any(round(b.position) == 1715 for b in c.lost)
    c2 = compare_in_library(lib, KETONE, "2")
    assert c2.b["name"] == "pentan-2-ol"
    with pytest.raises(NotFoundError):
        compare_in_library(lib, "hexanal", KETONE)
