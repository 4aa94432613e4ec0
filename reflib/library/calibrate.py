"""Self-calibration of the verdict on a library's own references.

Each sampled reference is re-made as a query (:func:`reflib.analysis.calibration.perturb`: other
preparation, shifts, intensity changes, weak bands lost, spurious bands; then drawn with baseline
and noise and picked again, :func:`~reflib.analysis.calibration.measure`) and searched twice
against the library: as it is (its compound is there) and with its compound left out, done by
zeroing that compound's rows in the score vector (the same as a library without it, without
rebuilding anything). The features of both searches train the model of
:mod:`reflib.analysis.calibration`; the model goes into ``meta`` as JSON and each spectrum's
nearest-other-compound score into the ``neighbours`` table. Nothing here runs at search time.

Random numbers come from :data:`SEED_WORD` and the library's id, never from a caller's seed, so
that a calibration repeats on the same file and shares no random stream with a benchmark.
"""

from __future__ import annotations

import time
import zlib
from dataclasses import dataclass
from typing import Any

import numpy as np

from reflib.analysis import calibration as cal
from reflib.analysis.encode import comparable_peaks, encode
from reflib.analysis.search import (
    ATR_EXTRA_TOLERANCE,
    MATCH_TOLERANCE,
    atr_side,
    comparison_weights,
    explain,
    score_index,
)
from reflib.errors import ValidationError
from reflib.library.store import now

#: Mixed into the random seed of every calibration.
SEED_WORD = "reflib-calibrate-v1"

#: Queries scored together in one matrix product.
CHUNK = 64


@dataclass
class Calibration:
    """What one calibration made and measured."""

    model: cal.CalibratedModel
    seconds: float

    @property
    def measured(self) -> dict[str, Any]:
        return self.model.measured


def load_model(store) -> cal.CalibratedModel | None:
    """The stored model, or None (not calibrated, or an older layout)."""
    text = store.get_meta("calibration")
    return cal.CalibratedModel.from_json(text) if text else None


def stale(model: cal.CalibratedModel | None, n_spectra: int, encoding_key: str) -> bool:
    """True when the library has changed enough since ``model`` was made to calibrate again:
    spectra count moved by :data:`~reflib.analysis.calibration.RECALIBRATE_CHANGE` or more,
    or the encoding changed."""
    if model is None:
        return True
    if model.encoding_key != encoding_key:
        return True
    base = max(model.n_spectra, 1)
    return abs(n_spectra - model.n_spectra) >= cal.RECALIBRATE_CHANGE * base


def compound_count(store) -> int:
    return int(store.conn.execute("SELECT COUNT(*) FROM compounds").fetchone()[0])


def needs_calibration(lib) -> bool:
    """Big enough to calibrate and never calibrated or changed enough since."""
    if compound_count(lib.store) < cal.MIN_COMPOUNDS:
        return False
    n = int(lib.store.conn.execute("SELECT COUNT(*) FROM spectra").fetchone()[0])
    return stale(load_model(lib.store), n, lib.encoding.key())


def _seed(store) -> int:
    key = f"{SEED_WORD}:{store.get_meta('library_id') or ''}"
    return zlib.crc32(key.encode())


def _neighbours(idx, enc) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """For every index row: the best score of another compound (nn1), that compound, and the
    best score of a third compound (nn2: the neighbour when nn1's compound is left out)."""
    n = idx.size
    nn1 = np.zeros(n)
    nn1_cid = np.full(n, -1, dtype=np.int64)
    nn2 = np.zeros(n)
    cids = idx.compound_ids.astype(np.int64)
    for g in idx.groups:
        for c0 in range(g.start, g.stop, CHUNK):
            rows = np.arange(c0, min(c0 + CHUNK, g.stop))
            q = np.asarray(idx.matrix[rows], dtype=np.float64)
            s = score_index(q, idx, enc, list(g.prep), (g.lo, g.hi))
            s[cids[:, None] == cids[rows][None, :]] = 0.0
            top = np.argmax(s, axis=0)
            nn1[rows] = s[top, np.arange(rows.size)]
            nn1_cid[rows] = cids[top]
            s[cids[:, None] == cids[top][None, :]] = 0.0
            nn2[rows] = s.max(axis=0)
    return nn1, nn1_cid, nn2


def _sample(idx, rng, target: int) -> tuple[np.ndarray, int]:
    """Rows to perturb and copies of each."""
    rows = np.arange(idx.size)
    if rows.size > cal.MAX_REFERENCES:
        rows = np.sort(rng.choice(rows, cal.MAX_REFERENCES, replace=False))
    copies = int(np.clip(round(target / max(rows.size, 1)), 1, 40))
    return rows, copies


def collect(
    lib, rng: np.random.Generator, target: int = cal.TARGET_QUERIES
) -> dict[str, np.ndarray]:
    """Make, search and describe the calibration queries (about ``target`` in each setting);
    returns the feature rows and labels."""
    store, enc = lib.store, lib.encoding
    grid = enc.grid()
    idx = lib.index()
    cids = idx.compound_ids.astype(np.int64)
    starts = np.array([g.start for g in idx.groups])

    def group_of(row: int):
        return idx.groups[int(np.searchsorted(starts, row, side="right")) - 1]

    nn1, nn1_cid, nn2 = _neighbours(idx, enc)
    rows, copies = _sample(idx, rng, target)
    ref_cache: dict[int, Any] = {}

    def ref_peaks(row: int):
        if row not in ref_cache:
            g = group_of(row)
            pl = store.peaks_of(int(idx.spectrum_ids[row]))
            ref_cache[row] = (pl, comparable_peaks(pl, g.prep, enc), g)
        return ref_cache[row]

    # one query for each setting: the one searched with its compound left out stands for a
    # fresh measurement of an absent compound, and the reference it is made from is already
    # one measurement of its compound, so it takes less added change (cal.LEFT_OUT_CARE);
    # grouped by preparation and setting so that each group is one matrix product per chunk
    # Every query's preparation, care and seed are drawn here, in one stream, so that the
    # queries are the same however many worker processes make them.
    tasks, keys = [], []
    for row in rows:
        raw, _, g = ref_peaks(int(row))
        for _ in range(copies):
            for left_out, care in ((False, cal.CARE_RANGE), (True, cal.LEFT_OUT_CARE)):
                tokens = cal.QUERY_PREPS[int(rng.integers(len(cal.QUERY_PREPS)))]
                c = float(rng.uniform(*care))
                seed = int(rng.integers(2**63))
                tasks.append((raw, tuple(g.prep), tokens, c, seed, enc))
                keys.append((int(row), tokens, left_out))
    by_prep: dict[tuple[tuple[str, ...], bool], list[tuple[int, Any]]] = {}
    for (row, tokens, left_out), q in zip(keys, _make_queries(tasks)):
        if len(q):
            by_prep.setdefault((tokens, left_out), []).append((row, q))
    feats, correct, present, groups = [], [], [], []
    w_cache: dict[tuple, np.ndarray] = {}
    for (tokens, left_out), items in by_prep.items():
        for c0 in range(0, len(items), CHUNK):
            chunk = items[c0 : c0 + CHUNK]
            qmat = np.vstack([encode(q, enc) for _, q in chunk])
            s = score_index(qmat, idx, enc, list(tokens), (None, None)).astype(np.float64)
            own = cids[:, None] == cids[[r for r, _ in chunk]][None, :]
            sc = np.where(own, 0.0, s) if left_out else s
            top, s1, s2, second = cal.distinct_top2(sc, cids)
            for j, (row, q) in enumerate(chunk):
                t = int(top[j])
                _, rp, g = ref_peaks(t)
                wkey = (tokens, g.prep, g.lo, g.hi)
                if wkey not in w_cache:
                    w_cache[wkey] = comparison_weights(
                        enc, list(tokens), g.prep, (None, None), (g.lo, g.hi)
                    )
                w = w_cache[wkey]
                # the band tolerance a search uses (Library._explain_hits)
                tol = MATCH_TOLERANCE + (
                    ATR_EXTRA_TOLERANCE if atr_side(tokens, g.prep) is not None else 0.0
                )
                ex = explain(q, rp, grid, w, tolerance=tol)
                crowd = nn1[t]
                if left_out and nn1_cid[t] == cids[row]:
                    crowd = nn2[t]
                u = int(second[j])
                pair = (
                    cal.candidates_alike(
                        enc, idx.matrix[t], g.prep, idx.matrix[u], group_of(u).prep, w
                    )
                    if u >= 0
                    else 0.0
                )
                near = cal.top_distinct(sc[:, j], cids, 1 + cal.NEIGHBOURS_SEEN)
                _, V = cal.in_one_frame(
                    enc, qmat[j], tokens, idx.matrix[near], [group_of(int(r)).prep for r in near]
                )
                offsets = cal.band_offsets(q, rp, ex.matched)
                feats.append(
                    [
                        s1[j],
                        s1[j] - s2[j],
                        ex.strong_new,
                        ex.strong_missing,
                        ex.matched_strength,
                        cal.mask_share(w),
                        len(q),
                        crowd,
                        pair,
                        cal.crowding_seen(V, w),
                        offsets["offset_sd"],
                        offsets["offset_sd_fp"],
                        offsets["height_sd"],
                    ]
                )
                correct.append((not left_out) and cids[t] == cids[row])
                present.append(not left_out)
                groups.append(cids[row])
    return {
        "X": np.array(feats, dtype=float),
        "correct": np.array(correct, bool),
        "present": np.array(present, bool),
        "groups": np.array(groups, np.int64),
        "nn1": nn1,
        "spectrum_ids": idx.spectrum_ids.astype(np.int64),
    }


#: Fewer calibration queries than this are made in this process (a pool costs about a second).
PARALLEL_QUERIES = 400


def _make_query(task: tuple) -> Any:
    """One calibration query: a reference's bands re-measured in another preparation (drawn,
    rendered and picked again), as the comparison sees them."""
    raw, ref_prep, tokens, care, seed, enc = task
    rng = np.random.default_rng(seed)
    q = cal.measure(cal.perturb(raw, list(ref_prep), tokens, rng, care=care), rng)
    return comparable_peaks(q, tokens, enc)


def _make_queries(tasks: list) -> list:
    """:func:`_make_query` of every task, in order: in worker processes (one per core) when
    there are many and this process may start them, else here."""
    import reflib.library.workers as workers

    n = workers.worker_count(None, len(tasks), min_tasks=PARALLEL_QUERIES)
    if n == 1:
        return [_make_query(t) for t in tasks]
    with workers.start_pool(n) as pool:
        return list(workers.ordered_map(pool, _make_query, tasks, chunksize=32))


def calibrate(
    lib, *, max_false_rate: float = 0.01, target_queries: int | None = None
) -> Calibration:
    """Calibrate the verdict of ``lib`` and store the model in it (the revision is not bumped:
    the references are unchanged, so the search index stays valid)."""
    if not 0.0 < max_false_rate < 0.5:
        raise ValidationError(f"--max-false-rate must be between 0 and 0.5, got {max_false_rate}")
    t0 = time.perf_counter()
    store = lib.store
    with store.read():
        n_compounds = compound_count(store)
        if n_compounds < cal.MIN_COMPOUNDS:
            raise ValidationError(
                f"the library has {n_compounds} compounds; calibration needs at least "
                f"{cal.MIN_COMPOUNDS} (until then the verdict uses the fixed rule)"
            )
        seed = _seed(store)
        target = cal.TARGET_QUERIES if target_queries is None else target_queries
        data = collect(lib, np.random.default_rng(seed), target)
        n_spectra = lib.index().size
    pieces, measured = cal.fit(
        data["X"],
        data["correct"],
        data["present"],
        data["groups"],
        max_false_rate=max_false_rate,
        seed=seed,
    )
    measured["references_perturbed"] = int(len(np.unique(data["groups"])))
    model = cal.CalibratedModel(
        **pieces,
        encoding_key=lib.encoding.key(),
        n_compounds=n_compounds,
        n_spectra=n_spectra,
        max_false_rate=max_false_rate,
        date=now(),
        measured=measured,
    )
    with store.write(bump=False):
        store.set_meta("calibration", model.to_json())
        store.conn.execute("DELETE FROM neighbours")
        store.conn.executemany(
            "INSERT INTO neighbours(spectrum_id, score) VALUES (?, ?)",
            zip(data["spectrum_ids"].tolist(), data["nn1"].tolist()),
        )
    lib.forget_calibration()
    return Calibration(model, time.perf_counter() - t0)


def maybe_calibrate(lib, *, max_false_rate: float | None = None) -> Calibration | None:
    """Calibrate when :func:`needs_calibration` says so (after an add or import); else None."""
    if not needs_calibration(lib):
        return None
    old = load_model(lib.store)
    rate = max_false_rate or (old.max_false_rate if old else 0.01)
    return calibrate(lib, max_false_rate=rate)
