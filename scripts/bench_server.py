"""Benchmark of the group server and of merging, in one run (invented peak lists, seeded).

1. Search through the server: ``reflib serve`` on a free 127.0.0.1 port over a library of
   ``--refs`` invented references (default 20 000); ``--rounds`` rounds of ``--concurrent``
   simultaneous ``POST /api/search`` requests (default 3 x 20), each uploading the demo crude
   demo_data/crudes/AO-214-03-crude-nujol.jdx. Reported: median and 95th percentile latency,
   one request alone (the baseline a concurrent request is compared with), and the same search
   through the CLI (``reflib search --json``, a new process each time) in the same run.
2. Merge: two libraries of ``--merge-refs`` references each (default 10 000), sharing
   ``--overlap`` (default 20 %) of their spectra file for file; time of ``reflib merge`` (API
   call) and the counts before and after, then the time of merging the same library again
   (must add nothing).

Traffic stays on the loopback interface. ``--quick`` runs 2 000 / 1 000 references.

    python scripts/bench_server.py [--quick]
"""

from __future__ import annotations

import argparse
import concurrent.futures as cf
import hashlib
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "scripts"))

from bench_speed import synthetic_items  # noqa: E402
from web_browser import running_server  # noqa: E402

QUERY = ROOT / "demo_data" / "crudes" / "AO-214-03-crude-nujol.jdx"


def _stamp(items: list[dict]) -> list[dict]:
    """Give each invented peak list a file hash, as a file read from disk has."""
    for it in items:
        key = it["name"] + ",".join(f"{p:.3f}" for p in it["data"].positions)
        it["data"].meta.sha256 = hashlib.sha256(key.encode()).hexdigest()
    return items


def build(path: Path, items: list[dict]) -> None:
    from reflib.library import Library
    from reflib.library.bulk import add_bulk

    with Library.create(path) as lib:
        add_bulk(lib, items)


def multipart(fields: dict[str, str], file_name: str, data: bytes) -> tuple[bytes, str]:
    boundary = "reflib-bench-boundary-7f3a"
    parts = []
    for k, v in fields.items():
        parts.append(
            f'--{boundary}\r\nContent-Disposition: form-data; name="{k}"\r\n\r\n{v}\r\n'.encode()
        )
    parts.append(
        f'--{boundary}\r\nContent-Disposition: form-data; name="file"; filename="{file_name}"'
        f"\r\nContent-Type: application/octet-stream\r\n\r\n".encode()
        + data
        + b"\r\n"
    )
    parts.append(f"--{boundary}--\r\n".encode())
    return b"".join(parts), f"multipart/form-data; boundary={boundary}"


def one_request(url: str, body: bytes, ctype: str) -> tuple[float, dict]:
    req = urllib.request.Request(
        url + "/api/search", data=body, headers={"Content-Type": ctype}, method="POST"
    )
    t = time.perf_counter()
    with urllib.request.urlopen(req, timeout=300) as resp:
        out = json.loads(resp.read())
    return time.perf_counter() - t, out


def p95(values: list[float]) -> float:
    s = sorted(values)
    return s[min(len(s) - 1, int(round(0.95 * (len(s) - 1))))]


def bench_search(tmp: Path, n: int, concurrent: int, rounds: int) -> dict:
    lib = tmp / "server.sqlite"
    t = time.perf_counter()
    build(lib, _stamp(synthetic_items(n, seed=17)))
    build_s = time.perf_counter() - t
    body, ctype = multipart({"prep": "nujol"}, QUERY.name, QUERY.read_bytes())
    res: dict = {"refs": n, "build_s": build_s, "concurrent": concurrent, "rounds": rounds}
    with running_server(lib) as url:
        one_request(url, body, ctype)  # warm-up: first plot-free search, caches
        alone = [one_request(url, body, ctype)[0] for _ in range(5)]
        lat: list[float] = []
        walls = []
        answers = []
        with cf.ThreadPoolExecutor(max_workers=concurrent) as pool:
            for _ in range(rounds):
                t = time.perf_counter()
                futs = [pool.submit(one_request, url, body, ctype) for _ in range(concurrent)]
                for f in futs:
                    dt, out = f.result()
                    lat.append(dt)
                    answers.append(out)
                walls.append(time.perf_counter() - t)
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    cmd = [sys.executable, "-m", "reflib", "search", str(QUERY), "--prep", "nujol", "--json",
           "-L", str(lib)]  # fmt: skip
    cli = []
    cli_out = None
    for _ in range(3):
        t = time.perf_counter()
        r = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True)
        cli.append(time.perf_counter() - t)
        cli_out = json.loads(r.stdout)
    res.update(
        alone_median_s=statistics.median(alone),
        median_s=statistics.median(lat),
        p95_s=p95(lat),
        round_wall_s=statistics.median(walls),
        cli_median_s=statistics.median(cli),
        same_answer=all(a == cli_out for a in answers),
        verdict=cli_out["verdict"],
    )
    return res


def bench_merge(tmp: Path, n: int, overlap: float) -> dict:
    from reflib.library import Library

    shared = int(n * overlap)
    a_items = _stamp(synthetic_items(n, seed=101, prefix="a"))
    b_items = _stamp(synthetic_items(n, seed=101, prefix="a"))[:shared]
    b_items += _stamp(synthetic_items(n - shared, seed=202, prefix="b"))
    pa, pb = tmp / "a.sqlite", tmp / "b.sqlite"
    build(pa, a_items)
    build(pb, b_items)
    with Library.open(pa) as lib:
        t = time.perf_counter()
        rep = lib.merge(pb, operator="bench")
        first_s = time.perf_counter() - t
        t = time.perf_counter()
        rep2 = lib.merge(pb, operator="bench")
        second_s = time.perf_counter() - t
    return {
        "refs_each": n,
        "shared": shared,
        "merge_s": first_s,
        "rate_per_s": (n / first_s) if first_s else 0.0,
        "before": rep.before,
        "after": rep.after,
        "added": rep.spectra_added,
        "skipped": rep.spectra_skipped,
        "compounds_added": rep.compounds_added,
        "compounds_matched": rep.compounds_matched,
        "again_s": second_s,
        "again_added": rep2.spectra_added,
        "again_after": rep2.after,
    }


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--refs", type=int, default=20_000)
    ap.add_argument("--merge-refs", type=int, default=10_000)
    ap.add_argument("--overlap", type=float, default=0.2)
    ap.add_argument("--concurrent", type=int, default=20)
    ap.add_argument("--rounds", type=int, default=3)
    ap.add_argument("--quick", action="store_true", help="2 000 / 1 000 references")
    ap.add_argument("--json", action="store_true", help="print the figures as JSON too")
    args = ap.parse_args()
    if args.quick:
        args.refs, args.merge_refs = 2_000, 1_000
    with tempfile.TemporaryDirectory() as tmp:
        s = bench_search(Path(tmp), args.refs, args.concurrent, args.rounds)
        m = bench_merge(Path(tmp), args.merge_refs, args.overlap)
    print(f"search via the server: {s['refs']} references, {s['rounds']} rounds of "
          f"{s['concurrent']} concurrent POST /api/search (demo crude, nujol)")  # fmt: skip
    print(f"  one request alone   median {s['alone_median_s'] * 1000:8.0f} ms  (baseline)")
    print(
        f"  concurrent          median {s['median_s'] * 1000:8.0f} ms  p95 "
        f"{s['p95_s'] * 1000:.0f} ms  ({s['median_s'] / s['alone_median_s']:.1f} x alone; "
        f"a round of {s['concurrent']} took {s['round_wall_s']:.2f} s)"
    )
    print(
        f"  CLI reflib search   median {s['cli_median_s'] * 1000:8.0f} ms  "
        f"(server alone is {s['cli_median_s'] / s['alone_median_s']:.1f} x faster)"
    )
    print(f"  every answer equal to the CLI's JSON: {s['same_answer']} (verdict {s['verdict']})")
    print(
        f"merge: two libraries of {m['refs_each']} references sharing {m['shared']} files: "
        f"{m['merge_s']:.2f} s ({m['rate_per_s']:.0f} references/s)"
    )
    b, a = m["before"], m["after"]
    print(
        f"  before {b['compounds']} compounds / {b['spectra']} spectra; after "
        f"{a['compounds']} / {a['spectra']}; added {m['added']} spectra "
        f"({m['compounds_added']} new compounds, {m['compounds_matched']} matched), "
        f"skipped {m['skipped']}"
    )
    print(
        f"  merging again: {m['again_s']:.2f} s, added {m['again_added']}, after "
        f"{m['again_after']['spectra']} spectra"
    )
    if args.json:
        print(json.dumps({"search": s, "merge": m}, indent=2))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
