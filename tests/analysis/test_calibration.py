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


def test_the_bounded_threshold_keeps_the_rate_with_confidence():
    # Clopper-Pearson (exact binomial) upper bound, textbook statistics: 0 of n negatives
    # gives a one-sided 90 % bound of 1 - 0.1 ** (1 / n), which first drops to 1 % at n = 230
    # (0.9961 %; 229 gives 1.0005 %); with 1 000 negatives the bound allows fewer than the
    # plain 10
    assert cal.allowed_false(230, 0.01, 0.9) == 0
    assert cal.allowed_false(229, 0.01, 0.9) == -1
    k = cal.allowed_false(1000, 0.01, 0.9)
    assert 0 < k < 10 and cal.allowed_false(1000, 0.01, None) == 10
    rng = np.random.default_rng(19)
    reached = []
    for _ in range(300):  # fresh negatives from the same law pass at most 1 % in ~90 % of runs
        t = cal._threshold(rng.random(1000), 0.01, 0.9)
        reached.append(1.0 - t)  # uniform negatives: the true share above t
    assert np.mean(np.array(reached) <= 0.01) >= 0.85
    few = rng.random(50)
    assert cal._threshold(few, 0.01, 0.9) > few.max()  # too few to promise 1 %: none passes


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
    pair = np.clip(score - margin - np.where(right, rng.normal(0.0, 0.03, n), 0.05), 0.0, 1.0)
    crowd_seen = np.clip(crowd + rng.normal(0.02, 0.03, n), 0.0, 1.0)
    offset = np.where(right, rng.gamma(4.0, 0.35, n), rng.gamma(4.0, 0.7, n))
    offset_fp = offset * rng.uniform(0.8, 1.3, n)
    offset_fp[rng.random(n) < 0.05] = np.nan  # fewer than four fingerprint pairs
    height = np.where(right, rng.gamma(4.0, 0.06, n), rng.gamma(4.0, 0.09, n))
    X = np.column_stack(
        [score, margin, new, missing, strength, share, nb, crowd, pair]
        + [crowd_seen, offset, offset_fp, height]
    )
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
    # a search with too few matched bands for the spreads still gets a verdict: the stored
    # medians stand in for what it lacks
    lacking = dict(zip(cal.FEATURES, X2[0]), offset_sd=np.nan, offset_sd_fp=np.nan)
    assert 0.0 <= back.decide(lacking)[2] <= 1.0
    assert set(back.defaults) == set(cal.MAY_LACK)
    assert all(np.isfinite(v) for v in back.defaults.values())


def test_a_model_of_another_layout_version_is_ignored():
    assert cal.CalibratedModel.from_json(json.dumps({"version": 999})) is None
    assert cal.CalibratedModel.from_json("not json") is None


def test_confidence_rises_with_the_score():
    rng = np.random.default_rng(18)
    X, right, present, groups = _synthetic(1000, rng)
    pieces, _ = cal.fit(X, right, present, groups, seed=2, compare_boosting=False)
    row = np.array([[0.80, 0.05, 1, 0, 0.8, 0.8, 15, 0.75, 0.70, 0.77, 2.0, 2.0, 0.3]])
    hi = row.copy()
    hi[0, 0] = 0.95
    # the same margin raises the runner-up too: raise the two candidates' likeness with it,
    # so only the top score changes how the query stands to them
    hi[0, 8] = 0.85
    assert pieces["correct"].predict(hi)[0] >= pieces["correct"].predict(row)[0]


@pytest.mark.parametrize("bad", [0.0, 0.7])
def test_distinct_top2_needs_other_compounds(bad):
    s = np.array([[0.9], [0.8], [bad]])
    top, s1, s2, second = cal.distinct_top2(s, np.array([1, 1, 2]))
    assert top[0] == 0 and s1[0] == pytest.approx(0.9) and s2[0] == pytest.approx(bad)
    assert second[0] == 2  # the runner-up is the other compound's row, not the same compound's
    _, _, s2, second = cal.distinct_top2(s[:2], np.array([1, 1]))
    assert s2[0] == 0.0 and second[0] == -1  # no other compound at all


def test_pair_score_is_the_weighted_cosine_and_ignores_weightless_bins():
    # definition of the cosine (no source): identical vectors 1, orthogonal ones 0; a bin of
    # weight 0 (a masked region) cannot make two candidates alike or unlike
    a = np.array([1.0, 0.0, 2.0, 5.0])
    b = np.array([1.0, 3.0, 2.0, -7.0])
    w = np.array([1.0, 0.0, 1.0, 0.0])
    assert cal.pair_score(a, b, w) == pytest.approx(1.0)
    assert cal.pair_score(a, b, np.ones(4)) < 0.5
    assert cal.pair_score(np.array([1.0, 0.0]), np.array([0.0, 1.0]), np.ones(2)) == 0.0
    assert cal.pair_score(a, np.zeros(4), np.ones(4)) == 0.0


def test_a_query_between_two_analogs_is_told_from_a_query_of_one_of_them():
    # geometry of the cosine (no source): unit vectors t1, t2 at 40 degrees; a re-measurement of
    # t1 (10 degrees off, away from t2) is less alike t2 than t1 is, while a compound half way
    # between them is nearer to t2 than t1 is: second - pair separates them
    ang = np.radians

    def unit(deg):
        return np.array([np.cos(ang(deg)), np.sin(ang(deg)), 0.0])

    t1, t2 = unit(0.0), unit(40.0)
    w = np.ones(3)
    pair = cal.pair_score(t1, t2, w)
    for q, between in ((unit(-10.0), False), (unit(20.0), True)):
        s1 = cal.pair_score(q, t1, w)
        s2 = cal.pair_score(q, t2, w)
        assert (s2 - pair > 0) == between, (s1, s2, pair)


def test_band_offsets_ignore_one_common_shift_and_see_scattered_ones():
    # two measurements of one compound: the same bands, one common shift (a calibration
    # offset of the instrument, common practice, no source) and little jitter; a homologue's
    # coupled skeletal bands below 1500 cm-1 move by several cm-1 each, either way (from
    # memory)
    rng = np.random.default_rng(21)
    ref = np.sort(rng.uniform(500.0, 3100.0, 20))
    same = ref + 4.0 + rng.normal(0.0, 0.5, ref.size)
    analog = ref + np.where(ref < 1500.0, rng.normal(0.0, 5.0, ref.size), 0.0)
    heights = rng.uniform(0.1, 1.0, ref.size)
    r = PeakList(ref, heights)

    def spread(q):
        return cal.band_offsets(PeakList(q, heights), r, list(zip(q.tolist(), ref.tolist())))

    a, b = spread(same), spread(analog)
    assert a["offset_sd"] < 1.0 and a["offset_sd_fp"] < 1.0  # the 4 cm-1 shift is taken out
    assert b["offset_sd_fp"] > 2.0 > a["offset_sd_fp"]
    assert a["height_sd"] == pytest.approx(0.0, abs=1e-9)  # the same heights
    assert np.isnan(cal.band_offsets(r, r, [(1.0, 1.0)] * 3)["offset_sd"])  # too few pairs


def test_top_distinct_takes_each_compound_once_best_first():
    s = np.array([0.9, 0.95, 0.5, 0.7, 0.8])
    cids = np.array([1, 1, 2, 3, 2])
    assert cal.top_distinct(s, cids, 2).tolist() == [1, 4]
    assert cal.top_distinct(s, cids, 5).tolist() == [1, 4, 3]  # only three compounds


def test_crowding_seen_is_the_likeness_where_the_query_sees():
    # a mask (weight 0) over the only bins where two analogs differ makes them alike as the
    # query sees them (definition of the weighted cosine, no source)
    top = np.array([1.0, 1.0, 0.0, 1.0])
    other = np.array([1.0, 1.0, 1.0, 0.0])
    far = np.array([0.0, 0.0, 1.0, 0.0])
    vs = np.vstack([top, other, far])
    assert cal.crowding_seen(vs, np.ones(4)) == pytest.approx(2.0 / 3.0)
    assert cal.crowding_seen(vs, np.array([1.0, 1.0, 0.0, 0.0])) == pytest.approx(1.0)
    assert cal.crowding_seen(vs[:1], np.ones(4)) == 0.0  # no runner-up


def test_atr_vectors_are_corrected_into_the_transmission_frame():
    from reflib.analysis.encode import DEFAULT_ENCODING as enc
    from reflib.analysis.search import atr_factor

    v = np.ones(enc.size)
    q, vs = cal.in_one_frame(enc, v, ["atr"], np.vstack([v, v]), [("film",), ("atr",)])
    f = atr_factor(enc)
    np.testing.assert_allclose(q, f)
    np.testing.assert_allclose(vs[0], v)
    np.testing.assert_allclose(vs[1], f)
