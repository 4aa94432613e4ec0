"""Cost of ``reflib calibrate`` and what a calibration does to search latency, on INVENTED peak
lists (the random references of scripts/bench_speed.py; mechanics, not accuracy).

One command, not a test::

    python scripts/bench_calibrate.py            # 1 000 and 10 000 references
    python scripts/bench_calibrate.py --quick    # 300 and 1 000 references

For each size, in one run: the calibration's wall time (neighbour pass and queries together,
also as a multiple of one uncalibrated search timed in the same run), and
the median latency of ``lib.search`` on the same queries without and with the stored model
(interleaved rounds, the model removed and restored between them), as a ratio (the calibrated
verdict adds one row look-up and a few dozen multiplications per search).
The machine is shared: read the ratio measured in the same run, not the absolute times.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import bench_speed  # noqa: E402

#: A calibrated search may be at most this much slower than the uncalibrated one.
MAX_SEARCH_RATIO = 1.10


def one_size(n: int, work: Path, n_queries: int) -> dict:
    from reflib.library import Library
    from reflib.library.calibrate import calibrate

    path = work / f"cal-{n}.sqlite"
    lib = Library.create(path)
    lib.add_many(bench_speed.synthetic_items(n, seed=101))
    queries = bench_speed.query_list(n_queries, seed=202)
    lib.index()

    def searches():
        for q in queries:
            lib.search(q, top=5)

    searches()  # warm-up: index and norms cached
    t0 = time.perf_counter()
    cal = calibrate(lib)
    t_cal = time.perf_counter() - t0
    model = lib.store.get_meta("calibration")
    # with and without the stored model, interleaved, so that the shared machine's load drifts
    # the same way for both
    times: dict[bool, list[float]] = {False: [], True: []}
    for _ in range(3):
        for on in (False, True):
            with lib.store.write(bump=False):
                if on:
                    lib.store.set_meta("calibration", model)
                else:
                    lib.store.conn.execute("DELETE FROM meta WHERE key = 'calibration'")
            t = time.perf_counter()
            searches()
            times[on].append((time.perf_counter() - t) / n_queries)
    before, after = statistics.median(times[False]), statistics.median(times[True])
    lib.close()
    m = cal.measured
    return {
        "n": n,
        "calibrate_s": t_cal,
        "queries": m["queries"],
        "search_before_ms": 1000 * before,
        "search_after_ms": 1000 * after,
        "ratio": after / before,
        # the calibration's cost in units of one uncalibrated search measured in this run
        "searches_worth": t_cal / before,
    }


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--quick", action="store_true", help="300 and 1 000 references")
    ap.add_argument("--queries", type=int, default=30, help="searches timed per size")
    args = ap.parse_args(argv)
    sizes = [300, 1000] if args.quick else [1000, 10000]
    print(f"load average at start: {os.getloadavg()[0]:.1f}")
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in sizes:
            rows.append(one_size(n, Path(tmp), args.queries))
            r = rows[-1]
            print(
                f"{n:6d} references: calibrate {r['calibrate_s']:6.1f} s ({r['queries']} "
                f"queries, as long as {r['searches_worth']:.0f} searches); "
                f"search {r['search_before_ms']:.1f} ms -> {r['search_after_ms']:.1f} "
                f"ms per query (x{r['ratio']:.2f}, target <= x{MAX_SEARCH_RATIO:.2f}: "
                f"{bench_speed.ok(r['ratio'] <= MAX_SEARCH_RATIO)})"
            )
    print(f"load average at end: {os.getloadavg()[0]:.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
