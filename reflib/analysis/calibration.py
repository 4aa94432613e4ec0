"""The calibrated verdict: perturbed queries from a library's own references, search features,
a small model of the probability that the top hit is right, and the thresholds on it.

Numerical core, no I/O. :mod:`reflib.library.calibrate` runs it on a library; a search only
evaluates a stored :class:`CalibratedModel` with numpy (scikit-learn is imported inside
:func:`fit` alone).

The model is two logistic regressions over :data:`FEATURES` (plus a few transforms, see
:func:`design`, and their pairwise products, :func:`expand`), each followed by an isotonic map:
``confidence`` is the probability that the top hit is the query's compound, ``p_any`` the
probability that the query's compound is in the library at all. Both are stored as plain
numbers (means, scales, coefficients, intercepts, isotonic knots); a library file never runs
code.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np

from reflib.chem import prep as prep_mod
from reflib.spectrum import PeakList

#: Version of the stored model layout; a library with another version falls back to the rule.
MODEL_VERSION = 3

#: Search features the model reads (names as in :attr:`SearchResult.features`).
FEATURES = (
    "score",
    "margin",
    "strong_new",
    "strong_missing",
    "matched_strength",
    "mask_share",
    "n_query_bands",
    "crowding",
    "pair",
    "crowd_seen",
    "offset_sd",
    "offset_sd_fp",
    "height_sd",
)

#: Features that a search may lack (fewer than four matched bands): a stored median stands in.
MAY_LACK = ("crowding", "offset_sd", "offset_sd_fp", "height_sd")

#: A library needs this many compounds before it can be calibrated: with fewer, a left-out
#: compound has too few analogs to stand for a real unknown (a judgement, common practice of
#: leave-one-out estimates, no source).
MIN_COMPOUNDS = 20

#: Recalibrate when the number of spectra has changed by this share since the last calibration.
RECALIBRATE_CHANGE = 0.2

#: Calibration aims at this many queries in each setting (compound in, compound left out).
TARGET_QUERIES = 1200

#: At most this many references are perturbed (a random sample of a bigger library): the cost of
#: a calibration stops growing with the library except for the neighbour pass.
MAX_REFERENCES = 2000

#: Share of searches assumed to be of a compound the library holds (weights the left-out
#: queries in the fit). A group mostly measures what it has made before; a judgement, no source.
PRIOR_IN_LIBRARY = 0.8

#: The preparations a query is re-made in (the trade's common ones; solutions in cells).
QUERY_PREPS: tuple[tuple[str, ...], ...] = (
    ("film",),
    ("atr",),
    ("kbr",),
    ("nujol",),
    ("chcl3", "nacl"),
    ("ccl4", "kbr-window"),
    ("ch2cl2", "nacl"),
    ("cdcl3", "caf2"),
)

#: Perturbation sizes (cm-1 and relative): a measurement on another day, instrument or
#: preparation (common practice, no source).
#: The reference itself is one measurement already, so these are larger than one day-to-day
#: change: two measurements differ by about sqrt(2) times one.
GLOBAL_SHIFT_SD = 3.0
BAND_JITTER_SD = 2.0
INTENSITY_LOG_SD = 0.25
WIDTH_LOG_SD = 0.15
DROP_WEAK_BELOW = 0.15
DROP_WEAK_P = 0.35
DROP_ANY_P = 0.03
#: Re-measurements range from careful (the same instrument and cell a day later) to careless
#: (another instrument, another hand): each query draws a factor from this range and scales the
#: sizes above by it. A careful measurement of a close analog is the hardest query to turn down,
#: and the threshold must hold for it too (common practice, no source).
CARE_RANGE = (0.35, 1.0)
#: The same factor for a query searched with its compound left out. It stands for a fresh
#: measurement of a compound the library lacks, compared with its analogs' references; the
#: reference it is made from is already one measurement of its compound, so little is added
#: beyond the change of preparation (the distance to the analogs already holds one
#: measurement's change on each side; a property of adding independent errors, no source).
LEFT_OUT_CARE = (0.0, 0.5)
SPURIOUS_MEAN = 1.5
#: Dilute solution frees part of a hydrogen-bonded O-H: a sharp band near 3610-3630 cm-1
#: appears and the broad 3200-3550 band weakens (common practice, no source).
FREE_OH = (3610.0, 3630.0)
#: The axis a perturbed query is drawn on and picked from (cm-1).
AXIS_STEP = 2.0
NOISE_SD = (0.001, 0.004)  # of an absorbance whose strongest band is about 0.8
BASELINE_MAX = 0.03


# --- perturbed queries ------------------------------------------------------------------------


def perturb(
    peaks: PeakList,
    ref_tokens: list[str] | tuple[str, ...],
    query_tokens: list[str] | tuple[str, ...],
    rng: np.random.Generator,
    *,
    care: float | None = None,
) -> PeakList:
    """A peak list as another measurement of the same compound in ``query_tokens`` might give.

    ``care`` scales the random changes (0: none beyond the preparation's own, 1: the full
    sizes below); drawn from :data:`CARE_RANGE` when None.

    Global shift and per-band jitter, intensity and width changes, weak bands lost, a few
    spurious weak bands (noise, baseline wiggles), ATR's intensity slope added or removed, the
    query preparation's own bands added, and nothing left where the preparation spoils the
    spectrum entirely (weight 0: opaque solvent regions, below a window's cut-off).
    """
    n = len(peaks)
    c = float(rng.uniform(*CARE_RANGE)) if care is None else float(care)
    pos = (
        peaks.positions
        + rng.normal(0.0, c * GLOBAL_SHIFT_SD)
        + rng.normal(0.0, c * BAND_JITTER_SD, n)
    )
    inten = peaks.intensities * np.exp(rng.normal(0.0, c * INTENSITY_LOG_SD, n))
    widths = np.where(np.isfinite(peaks.widths), peaks.widths, 10.0)
    widths = widths * np.exp(rng.normal(0.0, c * WIDTH_LOG_SD, n))
    broad = peaks.broad.copy()
    q_atr, r_atr = "atr" in query_tokens, "atr" in ref_tokens
    if q_atr != r_atr:  # ATR bands grow toward low wavenumber (prep.atr_correction)
        inten = inten * (1000.0 / pos if q_atr else pos / 1000.0)
    inten = inten / max(float(inten.max()), 1e-12) if n else inten
    keep = rng.random(n) >= c * np.where(inten < DROP_WEAK_BELOW, DROP_WEAK_P, DROP_ANY_P)
    pos, inten, widths, broad = pos[keep], inten[keep], widths[keep], broad[keep]
    k = int(rng.poisson(SPURIOUS_MEAN))
    extra = [
        (float(rng.uniform(450.0, 3900.0)), float(rng.uniform(0.02, 0.12)), 8.0, False)
        for _ in range(k)
    ]
    scale = float(rng.uniform(0.3, 1.0))
    extra += [(p, i * scale, f, False) for p, i, f, _t in prep_mod.own_bands(list(query_tokens))]
    if extra:
        e = np.array([x[:3] for x in extra], dtype=float)
        pos = np.concatenate([pos, e[:, 0]])
        inten = np.concatenate([inten, e[:, 1]])
        widths = np.concatenate([widths, e[:, 2]])
        broad = np.concatenate([broad, np.array([x[3] for x in extra], dtype=bool)])
    if any(prep_mod.PREPARATIONS[t].kind == "solution" for t in query_tokens):
        oh = broad & (pos >= 3200.0) & (pos <= 3560.0)
        for i in np.flatnonzero(oh):
            kept = float(rng.uniform(0.3, 0.6))
            pos = np.append(pos, rng.uniform(*FREE_OH))
            inten = np.append(inten, inten[i] * (1.0 - kept) * 1.5)
            widths = np.append(widths, rng.uniform(15.0, 25.0))
            broad = np.append(broad, False)
            inten[i] *= kept
    seen = prep_mod.weight_profile(pos, list(query_tokens), air=False) > 0
    seen &= (pos > 0) & (inten > 0)
    order = np.argsort(pos[seen])
    return PeakList(
        pos[seen][order],
        np.clip(inten[seen][order], 1e-6, None),
        widths[seen][order],
        None,
        broad[seen][order],
    )


def measure(peaks: PeakList, rng: np.random.Generator) -> PeakList:
    """The bands a spectrometer and the peak picker would report for ``peaks``: drawn as
    absorbance (half Lorentzian, half Gaussian bands) on a 400-4000 cm-1 axis with a sloping
    baseline and noise, then picked by :func:`reflib.signal.peaks.pick_peaks` as any added
    spectrum is (close bands merge, weak ones sink in the noise)."""
    from reflib.signal.peaks import pick_peaks
    from reflib.spectrum import Spectrum

    x = np.arange(400.0, 4000.0 + AXIS_STEP / 2, AXIS_STEP)
    y = np.zeros_like(x)
    fw = np.where(np.isfinite(peaks.widths), peaks.widths, 12.0)
    for p, a, f in zip(peaks.positions, peaks.intensities, fw):
        d = (x - p) / (max(f, 2.0) / 2.0)
        y += a * (0.5 / (1.0 + d * d) + 0.5 * np.exp(-np.log(2.0) * d * d))
    y *= 0.8 / max(float(y.max()), 1e-9)
    y += float(rng.uniform(0.0, BASELINE_MAX)) * (0.5 + 0.5 * (x - 400.0) / 3600.0)
    y += rng.normal(0.0, float(rng.uniform(*NOISE_SD)), x.size)
    return pick_peaks(Spectrum(x, y))


def mask_share(w: np.ndarray) -> float:
    """Share of the spectrum a comparison still uses: the mean of the weights, each at most 1."""
    w = np.asarray(w, dtype=float)
    return float(np.clip(w, 0.0, 1.0).mean()) if w.size else 0.0


def distinct_top2(scores: np.ndarray, compound_ids: np.ndarray) -> tuple[np.ndarray, ...]:
    """Per column of an (n, m) score matrix: row of the best reference, its score, the best
    score of any *other* compound (0 when there is none) and that reference's row (-1 when
    there is none)."""
    cols = np.arange(scores.shape[1])
    top = np.argmax(scores, axis=0)
    s1 = scores[top, cols]
    if not scores.shape[0]:
        return top, s1.astype(float), s1.astype(float) * 0, np.full(cols.size, -1)
    other = np.where(compound_ids[:, None] != compound_ids[top][None, :], scores, -1.0)
    second = np.argmax(other, axis=0)
    s2 = np.maximum(other[second, cols], 0.0)
    second = np.where(other[second, cols] >= 0.0, second, -1)
    return top, s1.astype(float), s2.astype(float), second


def pair_score(v1: np.ndarray, v2: np.ndarray, w: np.ndarray) -> float:
    """Weighted cosine of two library vectors (the top hit and the runner-up) under the
    query's comparison weights ``w``: how alike the two candidates are where the query is
    seen. A query of the top hit's compound is about as far from the runner-up as the top hit
    is; a query of an absent compound that lies between them is nearer to both (a property of
    the geometry, no source). 0 when either vector is empty there."""
    a = np.asarray(v1, dtype=np.float64)
    b = np.asarray(v2, dtype=np.float64)
    w = np.asarray(w, dtype=np.float64)
    na = math.sqrt(float(np.dot(a * w, a)))
    nb = math.sqrt(float(np.dot(b * w, b)))
    if na <= 0.0 or nb <= 0.0:
        return 0.0
    return float(np.clip(np.dot(a * w, b) / (na * nb), 0.0, 1.0))


def candidates_alike(enc, v1, prep1, v2, prep2, w) -> float:
    """:func:`pair_score` of two library vectors in preparations ``prep1`` and ``prep2``, the
    ATR one corrected for the penetration depth when exactly one of them is ATR (as a search
    corrects an ATR query, :func:`reflib.analysis.search.atr_factor`)."""
    from reflib.analysis.search import atr_factor, atr_side

    side = atr_side(list(prep1), list(prep2))
    if side == "query":
        v1 = np.asarray(v1, dtype=np.float64) * atr_factor(enc)
    elif side is not None:
        v2 = np.asarray(v2, dtype=np.float64) * atr_factor(enc)
    return pair_score(v1, v2, w)


# --- the model -------------------------------------------------------------------------------


def design(f: np.ndarray) -> np.ndarray:
    """Model inputs from raw features (columns in :data:`FEATURES` order).

    The raw features, the log of the band counts, how far the top score stands above the top
    hit's own nearest neighbour (a top hit in a crowded family needs more), also where the
    query is seen, and how far the runner-up's score stands above the likeness of the two
    candidates themselves (a query between two analogs, nearer to each than they are to each
    other, is probably neither); the band offsets' and heights' spreads as they are.
    """
    f = np.atleast_2d(np.asarray(f, dtype=float))
    score, margin, new, missing, strength, share, nbands, crowd, pair = f.T[:9]
    crowd_seen, off, off_fp, height = f.T[9:13]
    second = score - margin
    return np.column_stack(
        [
            score,
            margin,
            np.log1p(np.maximum(new, 0.0)),
            np.log1p(np.maximum(missing, 0.0)),
            strength,
            share,
            np.log1p(np.maximum(nbands, 0.0)),
            crowd,
            score - crowd,
            np.sqrt(np.maximum(margin, 0.0)),
            pair,
            second - pair,
            score - pair,
            crowd_seen,
            score - crowd_seen,
            off,
            off_fp,
            height,
        ]
    )


def expand(x: np.ndarray, degree: int) -> np.ndarray:
    """Standardised design columns, and for ``degree`` 2 also every product of two of them
    (each pair once, squares included, in the order (0,0), (0,1), .., (1,1), ..): a logistic
    regression on these can let one feature's weight depend on another (a high score means
    less behind heavy masks), which a plain one cannot."""
    x = np.atleast_2d(x)
    if degree == 1:
        return x
    i, j = np.triu_indices(x.shape[1])
    return np.hstack([x, x[:, i] * x[:, j]])


@dataclass
class Logistic:
    """A fitted logistic regression on standardised :func:`design` columns (and their pairwise
    products for ``degree`` 2, :func:`expand`), then an isotonic map given by knots (raw
    probability -> observed frequency), interpolated linearly."""

    mean: list[float]
    scale: list[float]
    coef: list[float]
    intercept: float
    knots_x: list[float]
    knots_y: list[float]
    degree: int = 1

    def raw(self, f: np.ndarray) -> np.ndarray:
        x = (design(f) - np.asarray(self.mean)) / np.asarray(self.scale)
        z = expand(x, self.degree) @ np.asarray(self.coef) + self.intercept
        return 1.0 / (1.0 + np.exp(-np.clip(z, -40.0, 40.0)))

    def calibrate(self, p: np.ndarray) -> np.ndarray:
        if not self.knots_x:
            return np.asarray(p, dtype=float)
        return np.interp(p, self.knots_x, self.knots_y)

    def predict(self, f: np.ndarray) -> np.ndarray:
        return self.calibrate(self.raw(f))


@dataclass
class CalibratedModel:
    """What a calibration stores in the library (as JSON in the meta table)."""

    correct: Logistic
    present: Logistic
    confident_at: float  # on the raw probability of ``correct``
    no_match_below: float  # on ``present``
    defaults: dict[str, float]  # medians of :data:`MAY_LACK` in the calibration queries
    encoding_key: str
    n_compounds: int
    n_spectra: int
    max_false_rate: float
    date: str
    measured: dict[str, Any] = field(default_factory=dict)
    version: int = MODEL_VERSION

    def to_json(self) -> str:
        return json.dumps(asdict(self), sort_keys=True)

    @classmethod
    def from_json(cls, text: str) -> CalibratedModel | None:
        """The stored model, or None when absent, of another version, or unreadable."""
        try:
            d = json.loads(text)
            if not isinstance(d, dict) or d.get("version") != MODEL_VERSION:
                return None
            d["correct"] = Logistic(**d["correct"])
            d["present"] = Logistic(**d["present"])
            return cls(**d)
        except (TypeError, ValueError, KeyError):
            return None

    def row(self, features: dict[str, float]) -> np.ndarray:
        f = dict(features)
        for k in MAY_LACK:
            if not math.isfinite(float(f.get(k, float("nan")))):
                f[k] = self.defaults[k]
        f.setdefault("pair", 0.0)  # a search with a single candidate
        f.setdefault("crowd_seen", 0.0)
        return np.array([[float(f[k]) for k in FEATURES]])

    def decide(self, features: dict[str, float]) -> tuple[str, str, float]:
        """Verdict, reason and confidence of one search's features."""
        x = self.row(features)
        raw = float(self.correct.raw(x)[0])
        conf = float(self.correct.calibrate(np.array([raw]))[0])
        need = float(self.correct.calibrate(np.array([self.confident_at]))[0])
        if raw >= self.confident_at:
            return (
                "confident",
                (
                    f"confidence {conf:.2f} (at least {need:.2f} is called confident on this "
                    "library: its held-out analogs reached it at most "
                    f"{100 * self.max_false_rate:g} % of the time)"
                ),
                conf,
            )
        p_any = float(self.present.predict(x)[0])
        if p_any < self.no_match_below:
            return (
                "no-match",
                (
                    f"confidence {conf:.2f}; the chance that any library compound is the answer is "
                    f"only {p_any:.2f}: probably not in the library"
                ),
                conf,
            )
        return (
            "ambiguous",
            (
                f"confidence {conf:.2f} is below the {need:.2f} needed: the top hit, a close "
                "candidate, or an analog not in the library; see the distinguishing bands"
            ),
            conf,
        )


#: Degrees of the model (:func:`expand`) and regularisations (scikit-learn's C) a calibration
#: chooses from, for each library, by the share of right top hits the cross-fitted model calls
#: confident at the threshold: pairwise products let the weight of the score depend on the
#: masks and on the candidates' likeness, which pays in a large crowded library, and cost
#: restraint in a small one. DEGREE and LOGISTIC_C are the defaults of a single fit; FOLDS the
#: number of compound folds of the cross-fit.
DEGREES = (1, 2)
C_CHOICES = (0.03, 0.1, 0.3, 1.0)
DEGREE = 2
LOGISTIC_C = 1.0
FOLDS = 5


def _folds(groups: np.ndarray, seed: int, k: int = FOLDS) -> np.ndarray:
    """Fold number of every row; all rows of a compound share one fold."""
    ids = np.unique(groups)
    rng = np.random.default_rng(seed)
    order = rng.permutation(ids.size)
    fold_of = dict(zip(ids[order].tolist(), (np.arange(ids.size) % k).tolist()))
    return np.array([fold_of[g] for g in groups.tolist()])


def _logistic(X, y, w, degree: int, c: float | None = None) -> Logistic:
    from sklearn.linear_model import LogisticRegression

    D = design(X)
    mean = D.mean(axis=0)
    scale = D.std(axis=0)
    scale[scale <= 1e-12] = 1.0
    lr = LogisticRegression(C=LOGISTIC_C if c is None else c, max_iter=5000)
    if np.unique(y).size < 2:  # one class only: a constant
        p = float(np.clip(np.average(y, weights=w), 1e-6, 1 - 1e-6))
        n = expand(np.zeros((1, D.shape[1])), degree).shape[1]
        return Logistic(mean.tolist(), scale.tolist(), [0.0] * n, math.log(p / (1 - p)), [], [])
    lr.fit(expand((D - mean) / scale, degree), y, sample_weight=w)
    return Logistic(
        mean.tolist(),
        scale.tolist(),
        lr.coef_[0].tolist(),
        float(lr.intercept_[0]),
        [],
        [],
        degree,
    )


def _isotonic(raw, y, w) -> tuple[list, list]:
    from sklearn.isotonic import IsotonicRegression

    iso = IsotonicRegression(y_min=0.0, y_max=1.0, out_of_bounds="clip")
    iso.fit(raw, y, sample_weight=w)
    return _block_centres(raw, iso.predict(raw), w)


def _out_of_fold(X, y, w, folds, degree: int, c: float | None) -> np.ndarray:
    """Raw probabilities of every row from a regression fitted without its compound's fold."""
    from threadpoolctl import threadpool_limits

    oof = np.empty(len(y))
    with threadpool_limits(1):  # small problems: threads only thrash on a shared machine
        for k in np.unique(folds):
            te = folds == k
            oof[te] = _logistic(X[~te], y[~te], w[~te], degree, c).raw(X[te])
    return oof


def _fit_logistic(
    X, y, w, folds, degree: int | None = None, c: float | None = None
) -> tuple[Logistic, np.ndarray, np.ndarray]:
    """The model fitted on all rows, with its isotonic map fitted on cross-fitted raw
    probabilities (each row predicted by a regression that did not see its compound).

    Returns the model, those out-of-fold raw probabilities, and out-of-fold confidences (the
    isotonic map itself also cross-fitted, for an honest reliability table)."""
    degree = DEGREE if degree is None else degree
    oof = _out_of_fold(X, y, w, folds, degree, c)
    m = _logistic(X, y, w, degree, c)
    m.knots_x, m.knots_y = _isotonic(oof, y, w)
    conf = np.empty(len(y))
    for k in np.unique(folds):
        te = folds == k
        kx, ky = _isotonic(oof[~te], y[~te], w[~te])
        conf[te] = np.interp(oof[te], kx, ky)
    return m, oof, conf


def _block_centres(raw: np.ndarray, level: np.ndarray, w: np.ndarray) -> tuple[list, list]:
    """Knots through the (weighted) centre of each isotonic block: the map rises strictly
    between centres instead of in steps, so equal confidences mean equal evidence."""
    xs, ys = [], []
    for v in np.unique(level):
        sel = level == v
        xs.append(float(np.average(raw[sel], weights=w[sel])))
        ys.append(float(v))
    order = np.argsort(xs)
    xs_a, ys_a = np.asarray(xs)[order], np.maximum.accumulate(np.asarray(ys)[order])
    return [0.0, *xs_a.tolist(), 1.0], [float(ys_a[0]), *ys_a.tolist(), float(ys_a[-1])]


def reliability(
    p: np.ndarray, y: np.ndarray, w: np.ndarray | None = None, bins: int = 10
) -> list[dict[str, float]]:
    """Predicted against observed in equal-width bins: lo, hi, n, share (of the weight),
    mean predicted, observed; ``w`` weighs the rows (default all 1)."""
    p, y = np.asarray(p, float), np.asarray(y, float)
    w = np.ones_like(p) if w is None else np.asarray(w, float)
    b = np.minimum((p * bins).astype(int), bins - 1)
    total = float(w.sum())
    out = []
    for k in range(bins):
        s = b == k
        if s.any() and w[s].sum() > 0:
            out.append(
                {
                    "lo": k / bins,
                    "hi": (k + 1) / bins,
                    "n": int(s.sum()),
                    "share": float(w[s].sum() / total),
                    "predicted": float(np.average(p[s], weights=w[s])),
                    "observed": float(np.average(y[s], weights=w[s])),
                }
            )
    return out


def ece(p: np.ndarray, y: np.ndarray, w: np.ndarray | None = None, bins: int = 10) -> float:
    """Expected calibration error: the share-weighted mean |predicted - observed| over
    equal-width probability bins (``w`` weighs the rows)."""
    if np.asarray(p).size == 0:
        return float("nan")
    rows = reliability(p, y, w, bins)
    return float(sum(r["share"] * abs(r["predicted"] - r["observed"]) for r in rows))


#: The confident threshold keeps the false rate at most ``--max-false-rate`` with this
#: confidence (one-sided upper binomial bound, Clopper-Pearson), not just on average: with a
#: thousand held-out queries a dozen more or fewer is chance, and the rate is a promise.
BOUND_LEVEL = 0.9


def allowed_false(n: int, rate: float, level: float | None = BOUND_LEVEL) -> int:
    """How many of ``n`` negatives may reach the threshold: ``floor(rate * n)`` when ``level``
    is None, else the most whose one-sided ``level`` upper bound on the rate (exact binomial,
    Clopper-Pearson) is still at most ``rate`` (-1: not even none would do)."""
    if level is None:
        return int(math.floor(rate * n))
    from scipy.stats import beta

    k = int(math.floor(rate * n))
    while k >= 0 and (k >= n or float(beta.ppf(level, k + 1, n - k)) > rate):
        k -= 1
    return k


def _threshold(raw_neg: np.ndarray, rate: float, level: float | None = None) -> float:
    """Smallest raw probability that at most ``rate`` of the negatives reach (with an upper
    bound at ``level`` when given, :func:`allowed_false`)."""
    if raw_neg.size == 0:
        return 0.5
    s = np.sort(raw_neg)[::-1]
    allowed = allowed_false(s.size, rate, level)
    if allowed >= s.size:
        return 0.0
    if allowed < 0:
        return float(np.nextafter(s[0], 2.0))
    return float(np.nextafter(s[allowed], 1.0))


def fit(
    X: np.ndarray,
    correct: np.ndarray,
    present: np.ndarray,
    groups: np.ndarray,
    *,
    max_false_rate: float = 0.01,
    prior_in_library: float = PRIOR_IN_LIBRARY,
    seed: int = 0,
    compare_boosting: bool = True,
) -> tuple[dict[str, Any], dict[str, Any]]:
    """Fit both models on the features ``X`` (rows in :data:`FEATURES` order) of calibration
    queries and choose the thresholds.

    Missing values (NaN) of :data:`MAY_LACK` are replaced by their medians, which the model
    keeps for searches that lack them. ``correct``: the top hit was the query's compound;
    ``present``: the compound was in the library; ``groups``: the query's compound (folds
    never split a compound). The stored regressions are fitted on all rows; their isotonic
    maps, the thresholds and everything measured come from cross-fitted predictions
    (:data:`FOLDS` folds of compounds, each row predicted by a regression that did not see
    its compound). Returns the pieces of a
    :class:`CalibratedModel` and what was measured.
    """
    X = np.array(X, dtype=float)
    defaults = {}
    for k in MAY_LACK:
        j = FEATURES.index(k)
        col = X[:, j]
        ok = np.isfinite(col)
        defaults[k] = float(np.median(col[ok])) if ok.any() else 0.0
        X[~ok, j] = defaults[k]
    correct = np.asarray(correct, bool)
    present = np.asarray(present, bool)
    groups = np.asarray(groups)
    folds = _folds(groups, seed)
    n_in, n_out = present.sum(), (~present).sum()
    w = np.where(present, prior_in_library / max(n_in, 1), (1 - prior_in_library) / max(n_out, 1))
    w = w * X.shape[0]
    neg = ~correct  # held-out analogs and wrong in-library top hits
    wrong_in = neg & present
    right_in = present & correct

    def threshold(raw):
        t = _threshold(raw[neg & ~present], max_false_rate, BOUND_LEVEL)
        if wrong_in.any():
            t = max(t, _threshold(raw[wrong_in], max_false_rate, BOUND_LEVEL))
        return t

    best = None
    for degree in DEGREES:  # the plain model first: the other must do better to be taken
        for c in C_CHOICES:
            oof = _out_of_fold(X, correct, w, folds, degree, c)
            reach = float((oof[right_in] >= threshold(oof)).mean())
            if best is None or reach > best[0] + 1e-9:
                best = (reach, degree, c)
    _, degree, chosen_c = best
    m_correct, raw, conf = _fit_logistic(X, correct, w, folds, degree, chosen_c)
    m_present, raw_p, _ = _fit_logistic(X, present, w, folds, degree, chosen_c)
    confident_at = threshold(raw)
    p_any = m_present.calibrate(raw_p)
    no_match_below = float(min(0.5, np.quantile(p_any[right_in], 0.05))) if right_in.any() else 0.2
    called = raw >= confident_at
    measured: dict[str, Any] = {
        "queries": int(X.shape[0]),
        "in_library_queries": int(n_in),
        "held_out_queries": int(n_out),
        "in_library_right_confident": float(called[right_in].mean()) if right_in.any() else 0.0,
        "in_library_confident": float(called[present].mean()) if n_in else 0.0,
        "held_out_confident": float(called[~present].mean()) if n_out else 0.0,
        "confident_wrong": float((called & neg & present).sum() / max(n_in, 1)),
        "top1_in_library": float(correct[present].mean()) if n_in else 0.0,
        "ece_evaluation": ece(conf, correct, w),
        "reliability": reliability(conf, correct, w),
        "evaluation_queries": int(X.shape[0]),
        "model": f"logistic regression, degree {degree}, C {chosen_c:g}, isotonic map",
    }
    if compare_boosting:
        measured["model_comparison"] = _compare(X, correct, w, folds, conf)
    model = {
        "correct": m_correct,
        "present": m_present,
        "confident_at": float(confident_at),
        "no_match_below": no_match_below,
        "defaults": defaults,
    }
    return model, measured


def _compare(X, y, w, folds, conf_stored) -> dict[str, float]:
    """Expected calibration error, Brier score and the share of right top hits reached at
    the threshold that lets 1 % of the negatives through, all cross-fitted over the same compound
    folds: the plain logistic regression (raw and with isotonic map), the stored one (degree
    :data:`DEGREE`, isotonic) and gradient boosting with an isotonic map."""
    from sklearn.ensemble import HistGradientBoostingClassifier
    from threadpoolctl import threadpool_limits

    _, raw1, conf1 = _fit_logistic(X, y, w, folds, degree=1)
    raw_gb = np.empty(len(y))
    with threadpool_limits(1):  # its threads only thrash on a shared machine at this size
        for k in np.unique(folds):
            te = folds == k
            gb = HistGradientBoostingClassifier(
                max_iter=100, learning_rate=0.1, min_samples_leaf=40, random_state=0
            )
            gb.fit(design(X[~te]), y[~te], sample_weight=w[~te])
            raw_gb[te] = gb.predict_proba(design(X[te]))[:, 1]
    conf_gb = np.empty(len(y))
    for k in np.unique(folds):
        te = folds == k
        kx, ky = _isotonic(raw_gb[~te], y[~te], w[~te])
        conf_gb[te] = np.interp(raw_gb[te], kx, ky)

    def brier(p):
        return float(np.average((p - y) ** 2, weights=w))

    def reach(p):
        t = _threshold(p[~y], 0.01)
        return float((p[y] >= t).mean()) if y.any() else 0.0

    out = {}
    for name, p in (
        ("logistic", raw1),
        ("logistic_isotonic", conf1),
        ("stored", conf_stored),
        ("boosting_isotonic", conf_gb),
    ):
        out[f"{name}_ece"] = ece(p, y, w)
        out[f"{name}_brier"] = brier(p)
        out[f"{name}_right_at_1pct"] = reach(p)
    return out


# --- the query among its top candidates -------------------------------------------------------

#: Runners-up (distinct compounds after the top hit) the top hit is compared with under the
#: query's weights (:func:`crowding_seen`): the query's own top candidates are the top hit's
#: near neighbours where the query is seen, without a pass over the library.
NEIGHBOURS_SEEN = 6


def top_distinct(scores: np.ndarray, compound_ids: np.ndarray, k: int) -> np.ndarray:
    """Rows of the best-scoring reference of each of the ``k`` best compounds in one score
    column (fewer when the library has fewer compounds), best first. Rows scored -inf (left
    out by a filtered search) never count."""
    s = np.asarray(scores)
    n = s.size
    m = min(n, max(4 * k, 32))
    while True:
        cand = np.argpartition(-s, m - 1)[:m] if m < n else np.arange(n)
        cand = cand[np.argsort(-s[cand], kind="stable")]
        out: list[int] = []
        seen: set[int] = set()
        for i, v, c in zip(cand.tolist(), s[cand].tolist(), compound_ids[cand].tolist()):
            if not math.isfinite(v):
                return np.array(out, dtype=np.int64)  # the rest are filtered out too
            if c not in seen:
                seen.add(c)
                out.append(i)
                if len(out) >= k:
                    return np.array(out, dtype=np.int64)
        if m >= n:
            return np.array(out, dtype=np.int64)
        m = min(n, 4 * m)


def crowding_seen(vs: np.ndarray, w: np.ndarray) -> float:
    """How crowded the top hit is where the query is seen: the highest weighted cosine, under
    the weights ``w`` of the query's comparison with the top hit, between the top hit's vector
    (first row of ``vs``) and a runner-up's (the other rows; vectors in one intensity frame,
    :func:`in_one_frame`). 0 without a runner-up.

    The library's own nearest-neighbour score (``crowding``) compares the top hit with its
    neighbours over their own shared range; behind a mull's or a solvent's masks two analogs
    can be much more alike, which is what the query meets (definition, no source).
    """
    V = np.array(vs, dtype=np.float64, ndmin=2)
    if V.shape[0] < 2:
        return 0.0
    w = np.asarray(w, dtype=np.float64)
    x = V[0] * w
    nx = math.sqrt(float(x @ V[0]))
    no = np.sqrt(np.maximum((V[1:] * V[1:]) @ w, 0.0))
    if nx <= 0.0 or not (no > 0).any():
        return 0.0
    cos = (V[1:] @ x)[no > 0] / (nx * no[no > 0])
    return float(np.clip(cos.max(), 0.0, 1.0))


def in_one_frame(enc, q, q_prep, vs, preps) -> tuple[np.ndarray, np.ndarray]:
    """The query and library vectors with every ATR one corrected for the penetration depth
    (:func:`reflib.analysis.search.atr_factor`), so that they can be compared with each other:
    how a search compares an ATR spectrum with a transmission one."""
    from reflib.analysis.search import atr_factor

    def atr(tokens) -> bool:
        return "atr" in tokens

    f = None
    q = np.asarray(q, np.float64)
    V = np.array(vs, dtype=np.float64, ndmin=2)
    if atr(q_prep) or any(atr(p) for p in preps):
        f = atr_factor(enc)
        if atr(q_prep):
            q = q * f
        for i, p in enumerate(preps):
            if atr(p):
                V[i] = V[i] * f
    return q, V


def band_offsets(query: PeakList, ref: PeakList, matched) -> dict[str, float]:
    """How the matched bands of a query and its top hit sit against each other, once one
    common shift (the median offset) is taken out: the robust spread of their position
    offsets (cm-1; all bands and the fingerprint ones below 1500 cm-1) and of the log ratio of
    their heights.

    Two measurements of one compound differ by a common shift and a little jitter per band; a
    homologue or isomer moves its coupled skeletal bands below about 1500 cm-1 by several cm-1
    each, in no common direction (common practice, no source). NaN with fewer than four pairs.
    """
    out = {"offset_sd": float("nan"), "offset_sd_fp": float("nan"), "height_sd": float("nan")}
    if len(matched) < 4:
        return out
    m = np.asarray(matched, dtype=float)
    qpos, rpos = m[:, 0], m[:, 1]
    d = qpos - rpos
    out["offset_sd"] = _robust_sd(d)
    fp = rpos < FINGERPRINT_BELOW
    if fp.sum() >= 4:
        out["offset_sd_fp"] = _robust_sd(d[fp])
    qi = np.searchsorted(query.positions, qpos).clip(0, max(len(query) - 1, 0))
    ri = np.searchsorted(ref.positions, rpos).clip(0, max(len(ref) - 1, 0))
    lr = np.log(np.clip(query.intensities[qi], 1e-6, None)) - np.log(
        np.clip(ref.intensities[ri], 1e-6, None)
    )
    out["height_sd"] = _robust_sd(lr)
    return out


#: Skeletal bands below this wavenumber (cm-1) couple across the molecule (common practice,
#: no source).
FINGERPRINT_BELOW = 1500.0


def _robust_sd(d: np.ndarray) -> float:
    """1.4826 times the median absolute deviation from the median (the sd of a normal
    sample, robust to a few mismatched pairs)."""
    import statistics

    v = [float(x) for x in d]  # a few dozen values: plain floats beat numpy's median here
    m = statistics.median(v)
    return 1.4826 * statistics.median([abs(x - m) for x in v])
