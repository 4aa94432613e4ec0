"""The position index of the correlation table leaves out only rows that could not be kept.

Common practice, no source: an index that prunes a scan must give the scan's answer. The
reference here is the plain scan over every row of the table (what :func:`candidates` did
before the index), run on the same inputs.
"""

from __future__ import annotations

import numpy as np
import pytest

from reflib.chem import bands
from reflib.spectrum import Metadata, PeakList


def _full_scan(x: float, phase: str, min_score: float):
    return [(r, *r.range_for(phase)) for r in bands.table() if r.in_phase(phase)]


@pytest.mark.parametrize("phase", ["condensed", "gas"])
@pytest.mark.parametrize("min_score", [0.0, 0.1, 0.3, 0.7])
def test_candidates_same_as_full_scan(monkeypatch, phase, min_score):
    rng = np.random.default_rng(5)
    xs = np.concatenate([rng.uniform(400, 4000, 150), [r.lo_cm1 for r in bands.table()[:40]]])
    words = [None, "vs", "s", "m", "w", "vw"]
    args = [(float(x), words[i % 6], (None, True, False)[i % 3]) for i, x in enumerate(xs)]
    support = [float(x) for x in xs[:25]]

    def run():
        return [
            [
                a.to_dict()
                for a in bands.candidates(
                    x,
                    strength=s,
                    broad=b,
                    top=4,
                    phase=phase,
                    support=support,
                    min_score=min_score,
                    prep=["nujol"],
                )
            ]
            for x, s, b in args
        ]

    indexed = run()
    monkeypatch.setattr(bands, "_rows_near", _full_scan)
    assert indexed == run()
    assert any(indexed)  # the inputs do reach table rows


def test_describe_all_only_labels_the_bands_asked_for():
    peaks = PeakList(
        np.array([1240.0, 1745.0, 2960.0, 3350.0]),
        np.array([0.9, 1.0, 0.5, 0.7]),
        broad=[False, False, False, True],
        meta=Metadata(prep=["film"]),
    )
    full = bands.describe_all(peaks)
    some = bands.describe_all(peaks, only=[1745.0, 3350.0])
    assert some == ["", full[1], "", full[3]]
    assert full[1] and full[3]


@pytest.mark.parametrize("phase", ["condensed", "gas"])
def test_candidates_for_is_candidates_band_by_band(phase):
    """Common practice, no source: the batch form shares only the work that does not depend on
    the band, so it must give what :func:`candidates` gives for each band."""
    rng = np.random.default_rng(9)
    xs = rng.uniform(400, 4000, 120)
    words = [None, "vs", "s", "m", "w", "vw"]
    widths = [None, 8.0, 60.0, float("nan")]
    args = [
        (float(x), words[i % 6], (None, True, False)[i % 3], widths[i % 4])
        for i, x in enumerate(xs)
    ]
    support = [float(x) for x in xs[:30]]
    groups = {r.group for r in bands.table()[::3] if r.group}
    for kw in ({}, {"groups": groups, "support": support}, {"prep": ["nujol"], "top": 1}):
        one = [
            [
                a.to_dict()
                for a in bands.candidates(x, strength=s, broad=b, width=w, phase=phase, **kw)
            ]
            for x, s, b, w in args
        ]
        many = [[a.to_dict() for a in c] for c in bands.candidates_for(args, phase=phase, **kw)]
        assert many == one
        assert any(one)  # the check compares real candidate lists, not empty ones


def test_candidates_for_checks_its_bands():
    with pytest.raises(bands.ValidationError, match="positive cm-1"):
        bands.candidates_for([(1700.0, "s", None, None), (-5.0, "s", None, None)])
    with pytest.raises(bands.ValidationError, match="strength word"):
        bands.candidates_for([(1700.0, "strong", None, None)])
