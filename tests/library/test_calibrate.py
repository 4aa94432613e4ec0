"""Self-calibration of the verdict on a library: stored as plain numbers, used by search, kept
fresh. Peak lists are INVENTED (random bands in families of close analogs) and exercise the
mechanics; what the calibration is worth is measured by scripts/bench_accuracy.py --calibrate.
"""

from __future__ import annotations

import json
import sqlite3

import numpy as np
import pytest
from typer.testing import CliRunner

from reflib.analysis import calibration as cal
from reflib.cli import app
from reflib.errors import ValidationError
from reflib.library import Library
from reflib.library.calibrate import calibrate, load_model, needs_calibration
from reflib.spectrum import PeakList


def _family_members(rng, n_families=8, per_family=3):
    """Invented peak lists: each family shares a core of bands, members differ in a few."""
    out = []
    for f in range(n_families):
        core = rng.uniform(500.0, 3500.0, 12)
        core_i = rng.uniform(0.1, 1.0, 12)
        for m in range(per_family):
            own = rng.uniform(500.0, 3500.0, 3)
            pos = np.concatenate([core + rng.normal(0, 1.0, 12), own])
            inten = np.concatenate([core_i, rng.uniform(0.2, 0.8, 3)])
            out.append((f"family{f}-member{m}", PeakList(pos, inten, widths=np.full(15, 12.0))))
    return out


@pytest.fixture()
def big(tmp_path):
    rng = np.random.default_rng(7)
    lib = Library.create(tmp_path / "big.sqlite")
    members = _family_members(rng)
    lib.add_many([{"data": pl, "name": name, "prep": "film"} for name, pl in members])
    yield lib, members
    lib.close()


def test_a_small_library_keeps_the_fixed_rule_and_says_so(tmp_path):
    rng = np.random.default_rng(8)
    lib = Library.create(tmp_path / "small.sqlite")
    members = _family_members(rng, n_families=2, per_family=2)
    lib.add_many([{"data": pl, "name": name, "prep": "film"} for name, pl in members])
    with pytest.raises(ValidationError, match=str(cal.MIN_COMPOUNDS)):
        calibrate(lib)
    assert not needs_calibration(lib)
    d = lib.search(members[0][1]).to_dict()
    assert d["confidence"] is None and "fixed rule" in d["verdict_reason"]
    lib.close()


def test_calibration_stores_plain_numbers_and_searches_use_them(big):
    lib, members = big
    rev = lib.revision
    assert needs_calibration(lib)
    done = calibrate(lib, target_queries=150)
    assert lib.revision == rev  # references unchanged: the index stays valid
    text = lib.store.get_meta("calibration")
    stored = json.loads(text)  # JSON numbers, nothing that could run
    assert stored["version"] == cal.MODEL_VERSION and stored["n_compounds"] == 24
    assert all(isinstance(c, float) for c in stored["correct"]["coef"])
    n = lib.store.conn.execute("SELECT COUNT(*) FROM neighbours").fetchone()[0]
    assert n == 24
    m = done.measured
    assert m["queries"] == m["in_library_queries"] + m["held_out_queries"] > 250
    assert m["held_out_confident"] <= 0.01 + 1e-9  # the threshold's own definition
    assert not needs_calibration(lib)
    q = members[5][1]
    res = lib.search(PeakList(q.positions + 2.0, q.intensities, widths=q.widths))
    d = res.to_dict()
    assert 0.0 <= d["confidence"] <= 1.0
    assert d["verdict"] in ("confident", "ambiguous", "no-match")
    assert f"confidence {res.confidence:.2f}" in d["verdict_reason"]


def test_removing_a_compound_takes_its_neighbour_row_and_growth_asks_for_recalibration(big):
    lib, members = big
    calibrate(lib, target_queries=100)
    lib.remove(members[0][0])
    n = lib.store.conn.execute("SELECT COUNT(*) FROM neighbours").fetchone()[0]
    assert n == 23
    rng = np.random.default_rng(9)
    extra = _family_members(rng, n_families=2, per_family=3)
    lib.add_many([{"data": pl, "name": "new-" + name, "prep": "film"} for name, pl in extra])
    assert needs_calibration(lib)  # 23 -> 29 spectra: more than 20 % changed
    reason = lib.search(extra[0][1]).reason
    assert "run 'reflib calibrate'" in reason
    assert load_model(lib.store) is not None  # still used until recalibrated


def test_a_model_for_another_encoding_is_not_used(big):
    from reflib.analysis.encode import Encoding

    lib, members = big
    calibrate(lib, target_queries=100)
    lib.reindex(Encoding(broadening=20.0))
    res = lib.search(members[3][1])
    assert res.confidence is None and "fixed rule" in res.reason


def test_cli_prints_what_it_measured_and_refuses_a_small_library(big, tmp_path, monkeypatch):
    monkeypatch.setattr(cal, "TARGET_QUERIES", 150)  # a smaller run: the mechanics only
    lib, _ = big
    path = lib.path
    lib.close()
    runner = CliRunner()
    r = runner.invoke(app, ["calibrate", "-L", path, "--max-false-rate", "0.02"])
    assert r.exit_code == 0, r.output
    for words in ("queries made", "in-library queries called confident", "held-out analogs"):
        assert words in r.output
    assert "reliability" in r.output and "0.9-1.0" in r.output
    small = tmp_path / "empty.sqlite"
    Library.create(small).close()
    r = runner.invoke(app, ["calibrate", "-L", str(small)])
    assert r.exit_code != 0
    r = runner.invoke(app, ["calibrate", "-L", path, "--max-false-rate", "0.9"])
    assert r.exit_code != 0
    con = sqlite3.connect(path)
    assert json.loads(con.execute("SELECT value FROM meta WHERE key='calibration'").fetchone()[0])


def test_the_top_two_candidates_likeness_is_high_within_a_family(big):
    # invented families (12 shared core bands, 3 own): two members of one family share most of
    # their bands, so where the query is seen they are alike; members of two families share
    # none (definition of the weighted cosine, no source)
    from reflib.analysis.search import comparison_weights

    lib, members = big
    res = lib.search(members[4][1], prep="film")
    top, second = res.hits[0], res.hits[1]
    assert top.name.split("-")[0] == second.name.split("-")[0]  # the same family
    assert 0.5 < res.features["pair"] <= 1.0
    idx = lib.index()
    row = {int(s): i for i, s in enumerate(idx.spectrum_ids)}
    far = lib.search(members[0][1], prep="film").hits[0]  # family0-member0 itself
    assert far.name == members[0][0]
    other_sid = far.spectrum_id
    w = comparison_weights(lib.encoding, ["film"], ["film"])
    unlike = cal.candidates_alike(
        lib.encoding,
        idx.matrix[row[top.spectrum_id]],
        ["film"],
        idx.matrix[row[other_sid]],
        ["film"],
        w,
    )
    assert unlike < res.features["pair"] - 0.3


def test_a_search_sees_the_band_offsets_and_the_crowding_through_its_masks(big):
    # invented families as above: a member re-measured with one common shift of 4 cm-1 keeps
    # its bands' offsets together; the same member with each band moved by 4-8 cm-1 either way
    # (as a homologue's coupled bands move, from memory) spreads them. Its family's other
    # members share 12 of its 15 bands, so its crowding among its own candidates is high.
    lib, members = big
    name, pl = members[4]
    shifted = PeakList(pl.positions + 4.0, pl.intensities, widths=pl.widths)
    rng = np.random.default_rng(3)
    step = np.where(np.arange(len(pl)) % 2 == 0, 1.0, -1.0) * rng.uniform(4.0, 8.0, len(pl))
    moved = PeakList(pl.positions + step, pl.intensities, widths=pl.widths)
    a = lib.search(shifted, prep="film")
    b = lib.search(moved, prep="film")
    assert a.hits[0].name == name
    assert a.features["offset_sd"] < 1.0 < 2.5 < b.features["offset_sd"]
    assert 0.5 < a.features["crowd_seen"] <= 1.0


def test_calibration_queries_do_not_depend_on_the_worker_count(monkeypatch):
    """Each query has its own seed drawn in the calling process, so worker processes make the
    same queries as this process does (common practice, no source)."""
    from reflib.analysis.encode import DEFAULT_ENCODING
    from reflib.library import calibrate as calmod

    rng = np.random.default_rng(5)
    raw = PeakList([1715.0, 2950.0, 1450.0, 1200.0, 3350.0], [1.0, 0.5, 0.4, 0.6, 0.3])
    tasks = [
        (raw, ("film",), cal.QUERY_PREPS[k % len(cal.QUERY_PREPS)], 0.5, int(s), DEFAULT_ENCODING)
        for k, s in enumerate(rng.integers(2**63, size=12))
    ]
    here = [calmod._make_query(t) for t in tasks]
    monkeypatch.setattr(calmod, "PARALLEL_QUERIES", 2)
    monkeypatch.setenv("REFLIB_WORKERS", "2")
    pooled = calmod._make_queries(tasks)
    assert len(pooled) == len(here)
    for a, b in zip(here, pooled):
        assert np.array_equal(a.positions, b.positions)
        assert np.array_equal(a.intensities, b.intensities)
    assert len({tuple(q.positions.round(1)) for q in here}) > 1  # the seeds differ
