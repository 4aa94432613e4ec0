"""Speed and scale benchmark of reflib on INVENTED peak lists (mechanics data, not spectra).

One command, not a test::

    python scripts/bench_speed.py            # libraries of 1 000, 10 000, 20 000 and 100 000 refs
    python scripts/bench_speed.py --quick    # 1 000 and 5 000 references, for a quick look

The references are random peak lists that look like condensed-phase infrared peak lists (15-40
bands: a few C-H stretches, often a carbonyl, sometimes a nitrile, aromatic ring modes, broad
O-H or N-H stretches in some, the rest in the fingerprint region; relative intensities 0.05-1;
group-frequency ranges from memory) in five preparations. They measure speed only: the
accuracy benchmark is scripts/bench_accuracy.py.

For each library size, in one run, this prints:

* whole-process ``reflib import --no-calibrate`` of typed peak-list files from a manifest
  (target 2 000/s) and of full JCAMP-DX spectra at 1 cm-1, with the same files imported
  without workers and the in-process ``add_bulk`` of the already-read lists as baselines, and
  the ``reflib calibrate`` that a plain ``reflib import`` would run after the lists;
* bulk add rate through :func:`reflib.library.bulk.add_bulk` (one transaction per 1 000 items), and
  ``Library.add_many(check_similar=False)`` (one transaction per item) on a few hundred items;
* index build time (:func:`reflib.library.index.load` with no cache file) and the cached reload;
* single-query latency, median of at least 50 queries: ``lib.search`` on a PeakList, the pure
  scoring step :func:`reflib.analysis.search.score_index` on an encoded vector, the floor (one
  float32
  dense matrix-vector product over a matrix of the same shape) and the baseline (scikit-learn
  ``NearestNeighbors(metric="cosine", algorithm="brute").kneighbors``, unweighted);
* a batch of 1 000 queries: ``lib.search_many`` and ``score_index`` with a (1000, bins) matrix,
  against the floor of one dense float32 matrix-matrix product of the same shapes;
* peak resident memory of a fresh process that loads the index and scores (VmHWM), against the
  size of the stored float32 matrix;
* at the 10 000 size, whole-process wall time of ``reflib search`` (first run building the index
  cache, second run reusing it) and of ``reflib --help``, and what ``--help`` imports;
* at the largest size, exact alternatives of ``score_block`` measured against the current one
  (block size, BLAS threads, float32 post-processing, cached weighted norms), with a check that
  the ranking is unchanged; a profile of bulk add and of one search;
* the arithmetic for 1 000 000 references.

The machine is shared: the load average is printed at the start and the end; read the ratios
(measured in the same run) rather than the absolute times.
"""

from __future__ import annotations

import argparse
import contextlib
import cProfile
import io
import json
import os
import pstats
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from reflib.spectrum import PeakList

PREPS = (["film"], ["atr"], ["kbr"], ["nujol"], ["chcl3", "nacl"])
PREP_WEIGHTS = (0.35, 0.3, 0.2, 0.1, 0.05)

#: Targets of the speed issue.
TARGET_SINGLE_VS_FLOOR = 1.5
#: Whole ``Library.search`` (scoring, explanation, labels) against the same floor, at >= 20 000.
TARGET_SEARCH_VS_FLOOR = 2.0
TARGET_SEARCH_FROM = 20_000
#: ``reflib import`` of typed peak-list files, process start to exit.
TARGET_IMPORT_RATE = 2000.0
TARGET_BATCH_VS_FLOOR = 3.0
TARGET_ADD_RATE = 2000.0
TARGET_MEMORY_VS_MATRIX = 1.5
TARGET_CLI_SEARCH_S = 1.0
TARGET_CLI_HELP_S = 0.3
#: Growth from the smallest to the largest size counts as linear when the per-reference cost at
#: the largest size is at most this multiple of the per-reference cost at the middle size.
TARGET_LINEAR_SLACK = 1.5


# --- invented peak lists ---------------------------------------------------------------------


def synthetic_peaks(rng: np.random.Generator) -> tuple[PeakList, list[str]]:
    """One invented peak list (cm-1, relative intensity) and its preparation tokens.

    Ranges from memory: C-H stretches 2850-3100, carbonyl 1650-1780, nitrile 2210-2260, ring
    modes 1450-1620, O-H 3200-3550 (broad), N-H 3300-3500, fingerprint 600-1500 cm-1.
    """
    pos: list[float] = []
    broad: list[bool] = []
    widths: list[float] = []

    def band(lo: float, hi: float, k: int = 1, width: float | None = None) -> None:
        for p in rng.uniform(lo, hi, k):
            pos.append(float(p))
            broad.append(width is not None)
            widths.append(float(width) if width is not None else np.nan)

    band(2850, 3100, int(rng.integers(2, 6)))
    if rng.random() < 0.6:
        band(1650, 1780, int(rng.integers(1, 3)))
    if rng.random() < 0.1:
        band(2210, 2260)
    if rng.random() < 0.5:
        band(1450, 1620, int(rng.integers(2, 5)))
    if rng.random() < 0.25:
        band(3200, 3550, 1, width=float(rng.uniform(150, 350)))
    if rng.random() < 0.15:
        band(3300, 3500, int(rng.integers(1, 3)), width=float(rng.uniform(60, 120)))
    total = int(rng.integers(15, 41))
    band(600, 1500, max(total - len(pos), 5))
    inten = rng.uniform(0.05, 1.0, len(pos))
    inten[int(rng.integers(len(pos)))] = 1.0
    prep = PREPS[int(rng.choice(len(PREPS), p=PREP_WEIGHTS))]
    return PeakList(np.array(pos), inten, widths=widths, broad=broad), list(prep)


def synthetic_items(n: int, seed: int, prefix: str = "ref") -> list[dict]:
    rng = np.random.default_rng(seed)
    items = []
    for i in range(n):
        pl, prep = synthetic_peaks(rng)
        items.append({"data": pl, "name": f"{prefix}-{i:07d}", "prep": prep})
    return items


def query_list(n: int, seed: int) -> list[PeakList]:
    rng = np.random.default_rng(seed)
    return [synthetic_peaks(rng)[0] for _ in range(n)]


# --- small helpers ---------------------------------------------------------------------------


def median_time(fn, repeat: int) -> float:
    """Median wall time of ``fn()`` in seconds over ``repeat`` calls (after one warm-up)."""
    fn()
    ts = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t)
    return statistics.median(ts)


def interleaved(fns: dict, repeat: int) -> dict:
    """Median wall time (s) of each function over ``repeat`` rounds, one call of each per
    round (after one warm-up call each): a ratio of two of them is then measured under the same
    load, even when the machine's load changes during the run."""
    for fn in fns.values():
        fn()
    times: dict = {k: [] for k in fns}
    for _ in range(repeat):
        for k, fn in fns.items():
            t = time.perf_counter()
            fn()
            times[k].append(time.perf_counter() - t)
    return {k: statistics.median(v) for k, v in times.items()}


def vm_hwm_mb() -> float:
    """Peak resident memory of this process (MB), from /proc or getrusage."""
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024.0
    except OSError:
        pass
    import resource

    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def load_text() -> str:
    a, b, c = os.getloadavg()
    return f"load average {a:.2f} {b:.2f} {c:.2f} on {os.cpu_count()} cores"


def ok(flag: bool) -> str:
    return "ok" if flag else "MISS"


def profile_text(fn, top: int = 10) -> str:
    pr = cProfile.Profile()
    pr.enable()
    fn()
    pr.disable()
    out = io.StringIO()
    st = pstats.Stats(pr, stream=out)
    st.sort_stats("tottime").print_stats(top)
    lines = [ln for ln in out.getvalue().splitlines() if ln.strip()]
    keep = [ln for ln in lines if "function calls" in ln or "ncalls" in ln or "(" in ln]
    return "\n".join("    " + ln.replace(str(Path.cwd()) + "/", "") for ln in keep[: top + 2])


# --- exact alternatives of score_block, measured against the current one ----------------------


class NormCache:
    """Weighted reference norms cached per (row range, weight vector): a query with a weight
    vector seen before costs one matrix-vector product. Exact: the same numbers, computed once."""

    def __init__(self):
        self.norms: dict[tuple, np.ndarray] = {}

    def score_block(self, q, refs, w, out=None, key=None):
        import reflib.analysis.search as search_mod

        q = np.atleast_2d(np.asarray(q, dtype=np.float64))
        w64 = np.asarray(w, dtype=np.float64)
        k = (key, w64.tobytes())
        rn = self.norms.get(k)
        if rn is None:
            rn = search_mod.weighted_norms(refs, w64).astype(np.float32)
            self.norms[k] = rn
        wq = (q * w64).astype(np.float32).T.copy()
        qn = np.sqrt(np.einsum("ij,ij->i", q * w64, q))
        num = np.asarray(refs) @ wq
        den = rn[:, None] * qn[None, :]
        with np.errstate(invalid="ignore", divide="ignore"):
            s = np.where(den > 0, num / np.where(den > 0, den, 1.0), 0.0)
        scores = np.empty((refs.shape[0], q.shape[0])) if out is None else out
        scores[...] = np.clip(s, 0.0, 1.0)
        return scores


def score_index_with(block_fn, q, index, enc, query_prep, query_range, profile=None):
    """reflib.analysis.search.score_index with another score_block."""
    from reflib.analysis.search import comparison_weights

    q = np.atleast_2d(q)
    scores = np.zeros((index.size, q.shape[0]), dtype=np.float64)
    for g in index.groups:
        w = comparison_weights(enc, query_prep, g.prep, query_range, (g.lo, g.hi), profile)
        block_fn(q, index.matrix[g.start : g.stop], w, scores[g.start : g.stop], g)
    return scores


def variants(idx, enc, qvecs, repeat: int) -> list[dict]:
    """Time exact alternatives of score_block on the same index and queries."""
    import threadpoolctl

    import reflib.analysis.search as search_mod

    prep = ["film"]
    rng_ = (None, None)

    def cur(q, r, w, out, g):
        search_mod.score_block(q, r, w, out=out)

    # the reference scores come from the same loop as the variants' (score_index_with, which
    # leaves out score_index's ATR correction): like is compared with like
    ref = score_index_with(cur, qvecs[0], idx, enc, prep, rng_)

    cache = NormCache()
    inv: dict = {}

    def runs(q, r, w, out, g):  # what a search does: cached norms, the query's columns only
        k = (g.start, w.tobytes())
        if k not in inv:
            inv[k] = search_mod.inverse_norms(search_mod.weighted_norms(r, w))
        search_mod.score_block(q, r, w, out=out, inv_norms=inv[k])

    def full(q, r, w, out, g):  # cached norms, every column read
        cache.score_block(q, r, w, out, key=(g.start, g.stop))

    cands = []
    for threads in (None, 1):
        t = ", 1 BLAS thread" if threads else ""
        cands.append((f"norms computed each query (1st of a prep){t}", threads, cur))
        cands.append((f"norms cached, every column{t}", threads, full))
        cands.append((f"norms cached, query's runs (current){t}", threads, runs))
    out = []
    qs = iter(range(10**9))
    for label, threads, fn in cands:
        with threadpoolctl.threadpool_limits(threads) if threads else contextlib.nullcontext():

            def one(fn=fn):
                i = next(qs) % len(qvecs)
                return score_index_with(fn, qvecs[i], idx, enc, prep, rng_)

            t = median_time(one, repeat)
            s = score_index_with(fn, qvecs[0], idx, enc, prep, rng_)
        top_ref = np.argsort(-ref[:, 0], kind="stable")[:20]
        top_new = np.argsort(-s[:, 0], kind="stable")[:20]
        out.append(
            {
                "variant": label,
                "ms": t * 1e3,
                "same_top20": bool(np.array_equal(top_ref, top_new)),
                "max_abs_diff": float(np.max(np.abs(s - ref))),
            }
        )
    return out


# --- the measuring subprocess ----------------------------------------------------------------


def measure(lib_path: str, n_single: int, n_batch: int, with_variants: bool) -> dict:
    """Run in a fresh process: load the index and score; every figure of one library size."""
    res: dict = {"hwm_start_mb": vm_hwm_mb()}
    from sklearn.neighbors import NearestNeighbors

    from reflib.analysis.encode import comparable_peaks, encode
    from reflib.analysis.search import score_index
    from reflib.library import Library

    lib = Library.open(lib_path)
    enc = lib.encoding
    res["hwm_imports_mb"] = vm_hwm_mb()
    t = time.perf_counter()
    idx = lib.index()
    res["index_open_s"] = time.perf_counter() - t
    n, bins = idx.matrix.shape
    res.update(n=int(n), bins=int(bins), groups=len(idx.groups))
    res["matrix_mb"] = n * bins * 4 / 2**20
    queries = query_list(max(n_single, n_batch), seed=12345)
    qvecs = [encode(comparable_peaks(p, ["film"], enc), enc) for p in queries]

    # single queries: ours first, so the memory high-water mark is ours
    i_s = iter(range(10**9))

    def one_search():
        lib.search(queries[next(i_s) % n_single], prep="film", top=5)

    i_j = iter(range(10**9))

    def one_search_json():  # every hit explained: what 'reflib search --json' prints
        lib.search(queries[next(i_j) % n_single], prep="film", top=5).to_dict()

    i_v = iter(range(10**9))

    def one_score():
        score_index(qvecs[next(i_v) % n_single], idx, enc, ["film"], (None, None))

    res["search_s"] = median_time(one_search, n_single)
    res["score_s"] = median_time(one_score, n_single)
    res["hwm_single_mb"] = vm_hwm_mb()

    # batch
    qmat = np.vstack(qvecs[:n_batch])
    t = time.perf_counter()
    lib.search_many(queries[:n_batch], prep="film", top=5)
    res["batch_search_s"] = time.perf_counter() - t
    t = time.perf_counter()
    score_index(qmat, idx, enc, ["film"], (None, None))
    res["batch_score_s"] = time.perf_counter() - t
    res["hwm_batch_mb"] = vm_hwm_mb()

    # floors and the baseline, on an in-memory row-major copy of the same shape and dtype (the
    # index itself is column-major)
    dense = np.ascontiguousarray(idx.matrix, dtype=np.float32)
    qv32 = [v.astype(np.float32) for v in qvecs]
    i_f = iter(range(10**9))
    from threadpoolctl import ThreadpoolController

    blas = ThreadpoolController()  # made once: making one looks up every loaded library

    def floor_default():
        dense @ qv32[next(i_f) % n_single]

    def floor_one_thread():
        with blas.limit(limits=1, user_api="blas"):
            dense @ qv32[next(i_f) % n_single]

    # the search, the scoring and both floors again, taking turns call by call, so that the
    # other jobs of a shared machine weigh on all four alike; these medians are the figures
    timed = interleaved(
        {
            "search_s": one_search,
            "search_json_s": one_search_json,
            "score_s": one_score,
            "floor_default_s": floor_default,
            "floor_one_thread_s": floor_one_thread,
        },
        n_single,
    )
    res.update(timed)
    # the floor is the faster of the two: BLAS's own threads, or one (on a busy machine one
    # thread can be the faster; see docs/speed.md)
    res["floor_single_s"] = min(res["floor_default_s"], res["floor_one_thread_s"])
    q32 = qmat.astype(np.float32)
    t = time.perf_counter()
    _ = dense @ q32.T
    res["floor_batch_s"] = time.perf_counter() - t
    nn = NearestNeighbors(metric="cosine", algorithm="brute", n_neighbors=5).fit(dense)
    i_k = iter(range(10**9))
    n_sk = n_single if n <= 20_000 else max(10, n_single // 5)
    res["sklearn_single_s"] = median_time(
        lambda: nn.kneighbors(qv32[next(i_k) % n_single][None, :]), n_sk
    )
    res["sklearn_repeats"] = n_sk
    t = time.perf_counter()
    nn.kneighbors(q32)
    res["sklearn_batch_s"] = time.perf_counter() - t
    dense = nn = None  # free the copies before the variants

    if with_variants:
        res["variants"] = variants(idx, enc, qvecs[:n_single], repeat=max(10, n_single // 2))
        res["profile_search"] = profile_text(
            lambda: [lib.search(q, prep="film", top=5) for q in queries[:10]]
        )
    lib.close()
    return res


# --- the orchestrator ------------------------------------------------------------------------


def build(path: Path, n: int, seed: int) -> dict:
    """Build one library through the bulk path; time items, the add and the index."""
    from reflib.library import Library
    from reflib.library import index as index_mod
    from reflib.library.bulk import add_bulk

    t = time.perf_counter()
    items = synthetic_items(n, seed)
    gen_s = time.perf_counter() - t
    lib = Library.create(path)
    t = time.perf_counter()
    add_bulk(lib, items)
    add_s = time.perf_counter() - t
    del items
    t = time.perf_counter()
    index_mod.load(lib.store)
    index_build_s = time.perf_counter() - t
    t = time.perf_counter()
    index_mod.load(lib.store)
    index_reload_s = time.perf_counter() - t
    lib.close()
    return {
        "n": n,
        "gen_s": gen_s,
        "bulk_rate": n / add_s,
        "index_build_s": index_build_s,
        "index_reload_s": index_reload_s,
        "file_mb": path.stat().st_size / 2**20,
    }


def add_many_rate(path: Path, k: int, seed: int) -> float:
    """Library.add_many(check_similar=False) of ``k`` more items on an existing library."""
    from reflib.library import Library

    items = synthetic_items(k, seed, prefix="extra")
    with Library.open(path) as lib:
        t = time.perf_counter()
        lib.add_many(items, check_similar=False)
        return k / (time.perf_counter() - t)


def run_measure(path: Path, n_single: int, n_batch: int, with_variants: bool) -> dict:
    cmd = [
        sys.executable,
        __file__,
        "--_measure",
        str(path),
        str(n_single),
        str(n_batch),
        "1" if with_variants else "0",
    ]
    out = subprocess.run(cmd, check=True, capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def wall(cmd: list[str], cwd: Path | None = None) -> float:
    t = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, cwd=cwd, text=True)
    took = time.perf_counter() - t
    if done.returncode != 0:
        raise SystemExit(f"{' '.join(cmd)} failed:\n{done.stderr}")
    return took


def cli_times(lib_path: Path, work: Path) -> dict:
    """Whole-process wall times of ``reflib search`` and ``reflib --help``."""
    from reflib.library import index as index_mod

    q = query_list(1, seed=999)[0]
    qfile = work / "unknown.txt"
    bands = ", ".join(f"{p.position:.1f} ({p.words()})" for p in q.descending())
    qfile.write_text(f"IR (film): {bands} cm-1\n")
    index_mod.index_path(lib_path).unlink(missing_ok=True)
    py = [sys.executable, "-m", "reflib.cli"]
    search = py + ["search", "-L", str(lib_path), str(qfile)]
    first = wall(search)
    second = wall(search)
    third = wall(search)
    helps = [wall(py + ["--help"]) for _ in range(5)]
    bare = [wall([sys.executable, "-c", "pass"]) for _ in range(3)]
    imp = subprocess.run(
        py[:1] + ["-X", "importtime"] + py[1:] + ["--help"], capture_output=True, text=True
    ).stderr
    return {
        "search_first_s": first,
        "search_second_s": second,
        "search_third_s": third,
        "help_s": statistics.median(helps),
        "help_min_s": min(helps),
        "python_s": min(bare),
        "importtime": summarise_importtime(imp),
    }


def summarise_importtime(text: str, top: int = 12) -> list[tuple[str, float]]:
    """Top-level packages by cumulative import time (ms) from ``-X importtime`` output.

    Lines read ``import time: SELF | CUMULATIVE | <two spaces per level>NAME``; only the
    modules imported at the top level (one space after the bar) are summed, by root package.
    """
    per: dict[str, float] = {}
    for line in text.splitlines():
        if not line.startswith("import time:"):
            continue
        parts = line[len("import time:") :].split("|")
        if len(parts) != 3 or not parts[1].strip().isdigit():
            continue
        raw = parts[2].rstrip()
        if len(raw) - len(raw.lstrip(" ")) != 1:
            continue
        root = raw.strip().split(".")[0]
        per[root] = per.get(root, 0.0) + int(parts[1]) / 1000.0
    return sorted(per.items(), key=lambda kv: -kv[1])[:top]


def write_peak_files(folder: Path, n: int, seed: int) -> list[PeakList]:
    """``n`` typed peak lists, one text file each ('1715 (s), 1240 (m, br) cm-1')."""
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    lists = []
    for i in range(n):
        pl, prep = synthetic_peaks(rng)
        texts = {f"{p.position:.1f}": p.words() for p in pl.descending()}
        bands = ", ".join(f"{k} ({w})" for k, w in texts.items())  # each position once
        (folder / f"p{i:06d}.txt").write_text(f"IR ({prep[0]}): {bands} cm-1\n")
        lists.append(pl)
    return lists


def write_jcamp_files(folder: Path, n: int, seed: int) -> None:
    """``n`` full invented absorbance spectra, 400-4000 cm-1 at 1 cm-1, as JCAMP-DX files:
    Lorentzian bands at the positions of :func:`synthetic_peaks` plus a little noise."""
    from reflib.io.jcamp import write_jcamp
    from reflib.spectrum import Metadata, Spectrum

    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    x = np.arange(400.0, 4000.5, 1.0)
    for i in range(n):
        pl, prep = synthetic_peaks(rng)
        hw = np.where(pl.broad, np.nan_to_num(pl.widths, nan=8.0) / 2, rng.uniform(4, 8, len(pl)))
        y = (
            pl.intensities[:, None]
            / (1 + ((x[None, :] - pl.positions[:, None]) / hw[:, None]) ** 2)
        ).sum(0)
        y = y / y.max() + rng.normal(0, 0.002, x.size)
        meta = Metadata(title=f"invented-{i:05d}", prep=list(prep))
        text = write_jcamp(Spectrum(x, y, "absorbance", meta=meta))
        (folder / f"s{i:05d}.jdx").write_text(text)


def import_times(work: Path, n_lists: int, n_spectra: int) -> dict:
    """Whole-process ``reflib import`` of a folder of typed peak lists and of JCAMP-DX spectra,
    against the in-process bulk path (:func:`add_bulk` of the same peak lists) in this run."""
    from reflib.io import read_spectrum
    from reflib.library import Library
    from reflib.library.bulk import add_bulk

    py = [sys.executable, "-m", "reflib.cli"]
    out: dict = {"n_lists": n_lists, "n_spectra": n_spectra}
    lists_dir = work / "import-lists"
    write_peak_files(lists_dir, n_lists, seed=31)
    manifest = work / "import-lists.csv"
    files = sorted(lists_dir.iterdir())
    manifest.write_text(
        "file,name\n" + "".join(f"{lists_dir.name}/{f.name},{f.stem}\n" for f in files)
    )
    lib = work / "import-lists.sqlite"
    wall(py + ["init", str(lib)])
    no_cal = ["--no-calibrate"]
    out["cli_lists_s"] = wall(py + ["import", "-L", str(lib), str(manifest)] + no_cal)
    out["cli_calibrate_s"] = wall(py + ["calibrate", "-L", str(lib)])
    out["cli_lists_rerun_s"] = wall(py + ["import", "-L", str(lib), str(manifest)])
    env1 = {**os.environ, "REFLIB_WORKERS": "1"}
    lib1 = work / "import-lists-1.sqlite"
    wall(py + ["init", str(lib1)])
    t = time.perf_counter()
    subprocess.run(
        py + ["import", "-L", str(lib1), str(manifest)] + no_cal,
        env=env1,
        check=True,
        capture_output=True,
    )
    out["cli_lists_1worker_s"] = time.perf_counter() - t
    items = [{"data": read_spectrum(f), "name": f.stem} for f in files]
    with Library.create(work / "import-baseline.sqlite") as blib:
        t = time.perf_counter()
        add_bulk(blib, items)
        out["bulk_lists_s"] = time.perf_counter() - t
    del items
    spectra_dir = work / "import-jcamp"
    write_jcamp_files(spectra_dir, n_spectra, seed=32)
    slib = work / "import-jcamp.sqlite"
    wall(py + ["init", str(slib)])
    out["cli_spectra_s"] = wall(py + ["import", "-L", str(slib), str(spectra_dir)] + no_cal)
    out["spectra_mb"] = sum(f.stat().st_size for f in spectra_dir.iterdir()) / 2**20
    for d in (lists_dir, spectra_dir):
        shutil.rmtree(d, ignore_errors=True)
    return out


def bulk_profile(work: Path, n: int) -> str:
    from reflib.library import Library
    from reflib.library.bulk import add_bulk

    items = synthetic_items(n, seed=7, prefix="prof")
    lib = Library.create(work / "profile.sqlite")
    text = profile_text(lambda: add_bulk(lib, items))
    lib.close()
    return text


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--quick", action="store_true", help="1 000 and 5 000 references")
    ap.add_argument("--sizes", help="comma list of library sizes (overrides the default)")
    ap.add_argument("--keep", metavar="DIR", help="build the libraries in DIR and keep them")
    ap.add_argument("--import-files", type=int, help="typed peak-list files to import")
    ap.add_argument("--import-spectra", type=int, help="JCAMP-DX spectra (1 cm-1) to import")
    args = ap.parse_args()
    sizes = [1000, 5000] if args.quick else [1000, 10_000, 20_000, 100_000]
    if args.sizes:
        sizes = [int(s) for s in args.sizes.split(",")]
    n_single = 50
    n_batch = 200 if args.quick else 1000
    work = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="reflib-speed-"))
    work.mkdir(parents=True, exist_ok=True)
    t0 = time.perf_counter()
    print(f"reflib speed benchmark on invented peak lists (mechanics data); {load_text()}")
    import numpy

    print(f"numpy {numpy.__version__}, python {sys.version.split()[0]}")
    rows = []
    cli = None
    cli_size = max([s for s in sizes if s <= 10_000], default=sizes[0])
    for n in sizes:
        path = work / f"lib-{n}.sqlite"
        for p in work.glob(f"lib-{n}.sqlite*"):
            p.unlink()
        print(f"  building {n} references ...", flush=True)
        b = build(path, n, seed=n)
        m = run_measure(path, n_single, n_batch, with_variants=(n == sizes[-1]))
        if n == cli_size:
            cli = cli_times(path, work)
        b["add_many_rate"] = add_many_rate(path, 200, seed=n + 1)
        rows.append({**b, **m})
        print(f"  {n} done at {time.perf_counter() - t0:.0f} s ({load_text()})", flush=True)
    prof_bulk = bulk_profile(work, 5000)
    n_files = args.import_files or (2000 if args.quick else 20_000)
    n_spectra = args.import_spectra or (200 if args.quick else 2000)
    print(f"  importing {n_files} peak-list files and {n_spectra} spectra ...", flush=True)
    imports = import_times(work, n_files, n_spectra)
    report(rows, cli, cli_size, n_batch, prof_bulk)
    report_imports(imports)
    print(f"\ntotal {time.perf_counter() - t0:.0f} s; {load_text()}")
    if not args.keep:
        shutil.rmtree(work, ignore_errors=True)


def report(rows: list[dict], cli: dict | None, cli_size: int, n_batch: int, prof_bulk: str):
    big = rows[-1]
    bins = big["bins"]
    print("\n== build ==")
    print(
        f"{'refs':>8} {'bulk add/s':>10} {'add_many/s':>10} {'index build s':>13} "
        f"{'cached reload ms':>16} {'file MB':>8}  bulk >= {TARGET_ADD_RATE:.0f}/s"
    )
    for r in rows:
        print(
            f"{r['n']:>8} {r['bulk_rate']:>10.0f} {r['add_many_rate']:>10.0f} "
            f"{r['index_build_s']:>13.2f} {r['index_reload_s'] * 1e3:>16.1f} "
            f"{r['file_mb']:>8.0f}  {ok(r['bulk_rate'] >= TARGET_ADD_RATE)}"
        )
    print("(add_many: 200 more items on the built library, one transaction each)")

    print("\n== single query (median of 50; ms) ==")
    print(
        f"{'refs':>8} {'search':>8} {'score':>8} {'floor':>8} {'sklearn':>8} "
        f"{'score/floor':>11} {'sklearn/score':>13}  target  {'search/floor':>12}  target"
    )
    for r in rows:
        ratio = r["score_s"] / r["floor_single_s"]
        sk = r["sklearn_single_s"] / r["score_s"]
        flag = ok(ratio <= TARGET_SINGLE_VS_FLOOR and sk > 1.0)
        whole = r["search_s"] / r["floor_single_s"]
        wflag = ok(whole <= TARGET_SEARCH_VS_FLOOR)
        print(
            f"{r['n']:>8} {r['search_s'] * 1e3:>8.2f} {r['score_s'] * 1e3:>8.2f} "
            f"{r['floor_single_s'] * 1e3:>8.2f} {r['sklearn_single_s'] * 1e3:>8.2f} "
            f"{ratio:>11.2f} {sk:>13.2f}  {flag if r is big else '(' + flag + ')'}"
            f"  {whole:>12.2f}  {wflag if r['n'] >= TARGET_SEARCH_FROM else '(' + wflag + ')'}"
        )
    print(
        f"(search/floor: the whole lib.search, scoring and the explanation of the top 5, within "
        f"{TARGET_SEARCH_VS_FLOOR}x the floor from {TARGET_SEARCH_FROM} references on; the hits "
        "below the third are explained when read: a text report prints the first three)"
    )
    print(
        "(with every hit explained, as the JSON output reads them: "
        + ", ".join(
            f"{r['n']}: {r['search_json_s'] * 1e3:.2f} ms = "
            f"{r['search_json_s'] / r['floor_single_s']:.2f}x the floor"
            for r in rows
            if "search_json_s" in r
        )
        + ")"
    )
    print(
        "(floor: one float32 matrix-vector product of the same shape, the faster of BLAS's "
        "default threads and one thread: "
        + ", ".join(
            f"{r['n']}: {r['floor_default_s'] * 1e3:.2f} / {r['floor_one_thread_s'] * 1e3:.2f} ms"
            for r in rows
        )
        + ")"
    )
    print(
        f"(target at {big['n']}: score within {TARGET_SINGLE_VS_FLOOR}x the float32 matrix-vector"
        " floor and below scikit-learn; smaller sizes shown in brackets)"
    )

    print(f"\n== batch of {n_batch} queries (s) ==")
    print(
        f"{'refs':>8} {'search_many':>11} {'score':>8} {'floor':>8} {'sklearn':>8} "
        f"{'score/floor':>11}  within {TARGET_BATCH_VS_FLOOR}x"
    )
    for r in rows:
        ratio = r["batch_score_s"] / r["floor_batch_s"]
        print(
            f"{r['n']:>8} {r['batch_search_s']:>11.2f} {r['batch_score_s']:>8.2f} "
            f"{r['floor_batch_s']:>8.2f} {r['sklearn_batch_s']:>8.2f} {ratio:>11.2f}  "
            f"{ok(ratio <= TARGET_BATCH_VS_FLOOR)}"
        )

    print("\n== peak resident memory of a fresh scoring process (MB) ==")
    print(
        f"{'refs':>8} {'matrix':>8} {'imports':>8} {'single':>8} {'batch':>8} "
        f"{'single/matrix':>13} {'(single-imports)/matrix':>23}  within {TARGET_MEMORY_VS_MATRIX}x"
    )
    for r in rows:
        ratio = r["hwm_single_mb"] / r["matrix_mb"]
        inc = (r["hwm_single_mb"] - r["hwm_imports_mb"]) / r["matrix_mb"]
        flag = ok(ratio <= TARGET_MEMORY_VS_MATRIX)
        print(
            f"{r['n']:>8} {r['matrix_mb']:>8.1f} {r['hwm_imports_mb']:>8.0f} "
            f"{r['hwm_single_mb']:>8.0f} {r['hwm_batch_mb']:>8.0f} {ratio:>13.2f} {inc:>23.2f}  "
            f"{flag if r is big else '(' + flag + ')'}"
        )
    print(
        "(imports: numpy, scipy, scikit-learn and reflib loaded, library open; 'batch' holds the"
        f" (refs x {n_batch}) float64 score matrix)"
    )

    print("\n== growth (per-reference cost, ns) ==")
    print(f"{'refs':>8} {'score/ref':>10} {'floor/ref':>10} {'bulk add/ref':>12}")
    for r in rows:
        print(
            f"{r['n']:>8} {r['score_s'] / r['n'] * 1e9:>10.1f} "
            f"{r['floor_single_s'] / r['n'] * 1e9:>10.1f} {1e9 / r['bulk_rate']:>12.0f}"
        )
    if len(rows) >= 2:
        a, b = rows[-2], rows[-1]
        g = (b["score_s"] / b["n"]) / (a["score_s"] / a["n"])
        ga = a["bulk_rate"] / b["bulk_rate"]
        print(
            f"per-reference cost {a['n']} -> {b['n']}: scoring x{g:.2f}, bulk add x{ga:.2f} "
            f"(linear = 1.00; ok up to {TARGET_LINEAR_SLACK}): "
            f"{ok(g <= TARGET_LINEAR_SLACK and ga <= TARGET_LINEAR_SLACK)}"
        )

    if cli is not None:
        print(f"\n== whole process, {cli_size} references (s) ==")
        print(
            f"reflib search, 1st run (builds the index cache): {cli['search_first_s']:.2f}  "
            f"{ok(cli['search_first_s'] < TARGET_CLI_SEARCH_S)}"
        )
        print(
            f"reflib search, 2nd / 3rd run (cache reused): {cli['search_second_s']:.2f} / "
            f"{cli['search_third_s']:.2f}  {ok(cli['search_second_s'] < TARGET_CLI_SEARCH_S)}"
        )
        print(
            f"reflib --help: median {cli['help_s']:.2f}, best {cli['help_min_s']:.2f} of 5  "
            f"{ok(cli['help_s'] < TARGET_CLI_HELP_S)}  (bare python start {cli['python_s']:.2f})"
        )
        print("what --help imports (top-level packages, cumulative ms):")
        print("  " + ", ".join(f"{k} {v:.0f}" for k, v in cli["importtime"]))

    if "variants" in big:
        base = big["score_s"] * 1e3
        floor = big["floor_single_s"] * 1e3
        print(f"\n== exact scoring variants, {big['n']} references, one query (ms) ==")
        print(f"{'variant':<48} {'ms':>8} {'/floor':>7} {'/current':>8} {'same top 20':>11}")
        for v in big["variants"]:
            print(
                f"{v['variant']:<48} {v['ms']:>8.2f} {v['ms'] / floor:>7.2f} "
                f"{v['ms'] / base:>8.2f} {str(v['same_top20']):>11}   "
                f"max |diff| {v['max_abs_diff']:.1e}"
            )
        print(f"(current score_index {base:.2f} ms, floor {floor:.2f} ms, measured just before)")
        print("\n== profile: 10 lib.search calls at the largest size (tottime) ==")
        print(big["profile_search"])
    print("\n== profile: add_bulk of 5 000 items (tottime) ==")
    print(prof_bulk)

    per_ref = big["score_s"] / big["n"]
    per_ref_floor = big["floor_single_s"] / big["n"]
    gb = 1e6 * bins * 4 / 1e9
    bw = big["n"] * bins * 4 / big["floor_single_s"] / 1e9
    print("\n== 1 000 000 references, extrapolated ==")
    print(
        f"matrix: 1 000 000 x {bins} bins x 4 bytes (float32) = {gb:.2f} GB "
        f"(float16 would halve it)"
    )
    print(
        f"one query: {per_ref * 1e9:.1f} ns/reference x 1e6 = {per_ref * 1e6:.2f} s "
        f"(floor {per_ref_floor * 1e9:.1f} ns/reference = {per_ref_floor * 1e6:.2f} s, "
        f"i.e. {bw:.1f} GB/s of matrix read)"
    )
    bq = big["batch_score_s"] / big["n"] / n_batch
    print(
        f"batch: {bq * 1e9:.2f} ns per reference and query: 1 000 queries against 1e6 references"
        f" = {bq * 1e9:.0f} s (plus {n_batch} x 1e6 x 8 bytes = {n_batch * 8e6 / 1e9:.0f} GB of "
        "float64 scores unless the queries are scored in chunks)"
    )


def report_imports(m: dict) -> None:
    n, k = m["n_lists"], m["n_spectra"]
    rate = n / m["cli_lists_s"]
    print(f"\n== reflib import, whole process (start to exit), {load_text()} ==")
    print(
        f"{n} typed peak-list files from a manifest, --no-calibrate: {m['cli_lists_s']:.1f} s = "
        f"{rate:.0f} files/s  (>= {TARGET_IMPORT_RATE:.0f}/s: {ok(rate >= TARGET_IMPORT_RATE)})"
    )
    cal_s = m["cli_calibrate_s"]
    print(
        f"  then reflib calibrate (what a plain import runs after them): {cal_s:.1f} s; "
        f"import and calibration together {n / (m['cli_lists_s'] + cal_s):.0f} files/s"
    )
    print(
        f"  same files with REFLIB_WORKERS=1 (no workers): {n / m['cli_lists_1worker_s']:.0f}/s;"
        f" in-process add_bulk of the already-read lists (baseline): {n / m['bulk_lists_s']:.0f}/s"
        f"; import / baseline {m['bulk_lists_s'] / m['cli_lists_s']:.2f}"
    )
    print(f"  rerun (every file already in, skipped by hash): {m['cli_lists_rerun_s']:.1f} s")
    print(
        f"{k} JCAMP-DX spectra, 400-4000 cm-1 at 1 cm-1 ({m['spectra_mb']:.0f} MB), "
        "--no-calibrate: "
        f"{m['cli_spectra_s']:.1f} s = {k / m['cli_spectra_s']:.0f} spectra/s"
    )


if __name__ == "__main__":
    if len(sys.argv) > 1 and sys.argv[1] == "--_measure":
        _, _, lib_arg, ns, nb, wv = sys.argv
        print(json.dumps(measure(lib_arg, int(ns), int(nb), wv == "1")))
    else:
        main()
