"""The calibration's numerical core: perturbed queries, calibration error, thresholds, the model.

Facts used: ATR band intensities grow toward low wavenumber because the penetration depth grows
with the wavelength (physical law of the evanescent wave); NaCl windows pass no light below
about 650 cm-1 (common practice, no source); a mineral-oil mull hides 3000-2800 cm-1 (reflib's
preparation table). The rest are properties of the statistics (definitions, no source).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from reflib.analysis import calibration as cal
from reflib.spectrum import PeakList

# an invented ester-like peak list (cm-1, relative intensity): mechanics, not accuracy
BANDS = PeakList(
    np.array([2980.0, 2940.0, 1740.0, 1450.0, 1375.0, 1240.0, 1050.0, 940.0, 850.0, 600.0]),
    np.array([0.3, 0.2, 1.0, 0.3, 0.4, 0.9, 0.6, 0.1, 0.08, 0.2]),
)


def test_perturbed_bands_stay_near_their_reference_bands():
    rng = np.random.default_rng(11)
    for _ in range(20):
        q = cal.perturb(BANDS, ["film"], ["film"], rng)
        strong = q.positions[q.intensities >= 0.3]
        d = np.abs(strong[:, None] - BANDS.positions[None, :]).min(axis=1)
        # shift sd 2 + jitter sd 1.5 cm-1: 12 cm-1 is beyond 3 sd of their sum; spurious
        # bands are weak (< 0.12) and film has no bands of its own
        assert np.all(d < 12.0)


def test_weak_bands_are_lost_more_often_than_strong_ones():
    rng = np.random.default_rng(12)
    kept = np.zeros(len(BANDS))
    for _ in range(300):
        q = cal.perturb(BANDS, ["film"], ["film"], rng)
        d = np.abs(BANDS.positions[:, None] - q.positions[None, :]).min(axis=1)
        kept += d < 12.0
    weak = BANDS.intensities < cal.DROP_WEAK_BELOW
    assert kept[weak].mean() < kept[~weak].mean() - 30


def test_a_mull_hides_the_ch_stretch_region_and_nacl_cuts_off_below_650():
    rng = np.random.default_rng(13)
    q = cal.perturb(BANDS, ["film"], ["nujol"], rng)
    assert not np.any((q.positions >= 2800) & (q.positions <= 3000))
    q = cal.perturb(BANDS, ["film"], ["chcl3", "nacl"], rng)
    assert not np.any(q.positions < 650.0)


def test_going_to_atr_strengthens_low_wavenumber_bands():
    rng_a, rng_b = np.random.default_rng(14), np.random.default_rng(14)
    ratios = []
    for _ in range(40):
        film = cal.perturb(BANDS, ["film"], ["film"], rng_a)
        atr = cal.perturb(BANDS, ["film"], ["atr"], rng_b)

        def ratio(pl):
            lo = pl.intensities[np.abs(pl.positions - 1050) < 12]
            hi = pl.intensities[np.abs(pl.positions - 2980) < 12]
            return lo.max() / hi.max() if lo.size and hi.size else np.nan

        ratios.append(ratio(atr) / ratio(film))
    assert np.nanmedian(ratios) > 2.0  # about 2980/1050 = 2.8 from the wavelength ratio


def test_ece_is_small_for_calibrated_and_large_for_overconfident_predictions():
    rng = np.random.default_rng(15)
    p = rng.random(20000)
    y = rng.random(20000) < p
    assert cal.ece(p, y) < 0.02
    assert cal.ece(np.where(p > 0.5, 1.0, 0.0), y) > 0.2
    rows = cal.reliability(p, y)
    assert sum(r["n"] for r in rows) == 20000
    assert abs(sum(r["share"] for r in rows) - 1.0) < 1e-9


def test_threshold_lets_at_most_the_rate_of_negatives_through():
    rng = np.random.default_rng(16)
    neg = rng.random(1000)
    t = cal._threshold(neg, 0.01)
    assert (neg >= t).mean() <= 0.01
    assert (neg >= np.nextafter(np.sort(neg)[-11], 0)).mean() > 0.01  # and not more strictly


def _synthetic(n, rng):
    """Invented search features: right top hits score high with a margin, left-out ones lower."""
    present = np.arange(n) % 2 == 0
    right = present & (rng.random(n) < 0.95)
    score = np.where(right, rng.normal(0.93, 0.04, n), rng.normal(0.80, 0.07, n))
    margin = np.where(right, rng.gamma(2.0, 0.05, n), rng.gamma(1.0, 0.02, n))
    new = rng.poisson(np.where(right, 0.3, 1.5))
    missing = rng.poisson(np.where(right, 0.3, 1.5))
    strength = np.clip(score + rng.normal(0.0, 0.05, n), 0.0, 1.0)
    share = rng.uniform(0.6, 0.95, n)
    nb = rng.integers(8, 30, n)
    crowd = rng.uniform(0.6, 0.9, n)
    X = np.column_stack([score, margin, new, missing, strength, share, nb, crowd])
    return X, right, present, np.arange(n) // 4


def test_fit_keeps_false_confidence_at_the_rate_and_round_trips_as_plain_json():
    rng = np.random.default_rng(17)
    X, right, present, groups = _synthetic(2000, rng)
    pieces, measured = cal.fit(
        X, right, present, groups, max_false_rate=0.02, seed=1, compare_boosting=False
    )
    assert measured["held_out_confident"] <= 0.02
    assert measured["in_library_right_confident"] > 0.5
    model = cal.CalibratedModel(
        **pieces,
        encoding_key="k",
        n_compounds=750,
        n_spectra=750,
        max_false_rate=0.02,
        date="2026-01-01",
        measured=measured,
    )
    text = model.to_json()
    assert isinstance(json.loads(text)["correct"]["coef"], list)  # numbers, no code
    back = cal.CalibratedModel.from_json(text)
    assert back is not None
    np.testing.assert_allclose(back.correct.predict(X[:50]), model.correct.predict(X[:50]))
    # fresh draws from the same process: still at most about the rate, within sampling error
    X2, right2, present2, _ = _synthetic(3000, rng)
    called = back.correct.raw(X2) >= back.confident_at
    assert called[~present2].mean() <= 0.035
    verdicts = {back.decide(dict(zip(cal.FEATURES, row)))[0] for row in X2[:400]}
    assert verdicts == {"confident", "ambiguous", "no-match"}


def test_a_model_of_another_layout_version_is_ignored():
    assert cal.CalibratedModel.from_json(json.dumps({"version": 999})) is None
    assert cal.CalibratedModel.from_json("not json") is None


def test_confidence_rises_with_the_score():
    rng = np.random.default_rng(18)
    X, right, present, groups = _synthetic(1000, rng)
    pieces, _ = cal.fit(X, right, present, groups, seed=2, compare_boosting=False)
    row = np.array([[0.80, 0.05, 1, 0, 0.8, 0.8, 15, 0.75]])
    hi = row.copy()
    hi[0, 0] = 0.95
    assert pieces["correct"].predict(hi)[0] >= pieces["correct"].predict(row)[0]


@pytest.mark.parametrize("bad", [0.0, 0.7])
def test_distinct_top2_needs_other_compounds(bad):
    s = np.array([[0.9], [0.8], [bad]])
    top, s1, s2 = cal.distinct_top2(s, np.array([1, 1, 2]))
    assert top[0] == 0 and s1[0] == pytest.approx(0.9) and s2[0] == pytest.approx(bad)
