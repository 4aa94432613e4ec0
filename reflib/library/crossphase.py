"""Gas against condensed phase in a library search: the references whose phase differs from the
query's are scored again with the rules of :mod:`reflib.analysis.phase` (gas bands moved to their
condensed-phase positions, a wider tolerance, the X-H stretches down-weighted)."""

from __future__ import annotations

import numpy as np

from reflib.analysis import phase
from reflib.analysis.encode import Encoding, comparable_peaks, encode
from reflib.analysis.search import comparison_weights, score_block
from reflib.spectrum import PeakList

#: At most this many references per group, the best by the ordinary score, are scored again
#: (a gas query against a large condensed-phase library stays fast).
RESCORE_LIMIT = 300


def rescore(
    store,
    enc: Encoding,
    idx,
    scores: np.ndarray,
    queries: list[PeakList],
    tokens: list[str],
    qrange: tuple[float | None, float | None],
    profile: str | None,
) -> np.ndarray:
    """``scores`` (references x queries) with the other-phase references scored again."""
    groups = [g for g in idx.groups if phase.gas_against_condensed(tokens, g.prep)]
    if not groups or not queries:
        return scores
    wide = phase.wide_encoding(enc)
    grid = enc.grid()
    qmat = np.vstack([encode(phase.as_condensed(p, tokens), wide) for p in queries])
    for g in groups:
        rows = np.arange(g.start, g.stop)
        if rows.size > RESCORE_LIMIT:
            best = np.max(scores[g.start : g.stop], axis=1)
            rows = rows[np.argsort(-best, kind="stable")[:RESCORE_LIMIT]]
        w = comparison_weights(enc, tokens, g.prep, qrange, (g.lo, g.hi), profile)
        w = phase.xh_weights(grid, w)
        refs = [
            phase.as_condensed(
                comparable_peaks(store.peaks_of(int(idx.spectrum_ids[i])), g.prep, enc), g.prep
            )
            for i in rows
        ]
        rmat = np.vstack([encode(r, wide) for r in refs]).astype(np.float32)
        scores[rows] = score_block(qmat, rmat, w)
    return scores


def explain_args(peaks: PeakList, ref_peaks: PeakList, tokens, ref_prep, grid, w) -> tuple:
    """(query peaks, reference peaks, weights, tolerance) for the band-by-band explanation."""
    from reflib.analysis.search import MATCH_TOLERANCE

    if not phase.gas_against_condensed(tokens, ref_prep):
        return peaks, ref_peaks, w, MATCH_TOLERANCE
    return (
        phase.as_condensed(peaks, tokens),
        phase.as_condensed(ref_peaks, ref_prep),
        phase.xh_weights(grid, w),
        phase.MATCH_TOLERANCE_CM1,
    )
