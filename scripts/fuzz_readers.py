"""Long fuzzing run of every reader through files: only ReflibError may escape, each file < 2 s.

One command, not a test::

    python scripts/fuzz_readers.py                 # 12 000 cases
    python scripts/fuzz_readers.py --cases 50000 --seed 3

Each case is a file written to a temporary folder and read with ``reflib.io.read_all`` (the
content sniffer, then the JCAMP-DX, delimited or typed-peak reader). Cases are drawn by
hypothesis from seeds that reflib's own writers produce (an XYDATA file, a peak table, a LINK
file, a CSV export, a typed peak list), then mutated, truncated, spliced with binary bytes, given
huge or tiny numbers, or wrapped in deeply nested LINK blocks. A case fails when anything but a
ReflibError escapes, when a warning is emitted (at the CLI it would be a second line on
stderr), when an accepted result breaks the Spectrum/PeakList conventions, or when reading
takes longer than 2 s. The strategies are shared with tests/test_fuzz_readers.py.

Prints the number of cases, how many were accepted and refused, the slowest case and every
failure (with the file's first bytes); exits 1 when there was a failure.
"""

from __future__ import annotations

import argparse
import signal
import sys
import tempfile
import time
import warnings
from collections import Counter
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, Phase, given, seed, settings
from hypothesis import strategies as st

from reflib.errors import ReflibError
from reflib.io import read_all
from reflib.io.delimited import write_delimited
from reflib.io.jcamp import write_jcamp
from reflib.spectrum import Metadata, PeakList, Spectrum

#: Longest a single file may take to be read or refused (s); the issue's limit.
CASE_LIMIT_S = 2.0


def _seed_texts() -> dict[str, str]:
    """Valid files written by reflib's writers: the material the mutations start from."""
    x = np.linspace(400.0, 4000.0, 361)
    y = 0.05 + np.exp(-(((x - 1715) / 10) ** 2)) + 0.6 * np.exp(-(((x - 2950) / 25) ** 2))
    spec = Spectrum(x, y, "absorbance", Metadata(title="fuzz seed"))
    trans = Spectrum(x, 10 ** (-y), "transmittance", Metadata(title="fuzz seed T"))
    peaks = PeakList([1715.0, 2950.0, 1240.0], [1.0, 0.4, 0.7], [12.0, np.nan, 20.0])
    one = write_jcamp(spec, compression="difdup")
    two = write_jcamp(trans, compression="affn")
    link = (
        "##TITLE=linked\n##JCAMP-DX=5.01\n##DATA TYPE=LINK\n##BLOCKS=2\n"
        + one.replace("##TITLE=", "##BLOCK_ID=1\n##TITLE=", 1)
        + write_jcamp(peaks).replace("##TITLE=", "##BLOCK_ID=2\n##TITLE=", 1)
        + "##END=\n"
    )
    return {
        "xydata": one,
        "xydata_t": two,
        "peak_table": write_jcamp(peaks),
        "link": link,
        "csv": write_delimited(spec, sep=","),
        "tsv": write_delimited(trans, sep="\t"),
        "peaktext": "IR (KBr): 3350 (br, m), 2950 (s), 1715 (vs), 1600 w, 1240 s, 760 vs cm-1\n",
    }


SEEDS = _seed_texts()

TOKENS = [
    "##", "=", "##END=", "##TITLE=", "##XYDATA=(X++(Y..Y))", "##PEAK TABLE=(XY..XY)",
    "##NPOINTS=", "##FIRSTX=", "##LASTX=", "##XFACTOR=", "##YFACTOR=", "##DATA TYPE=LINK",
    "##BLOCKS=", "##XUNITS=MICROMETERS", "##YUNITS=%T", "$$", "@", "%", "J", "j", "S", "?",
    ",", ";", "\t", " ", "\n", "\r\n", "-", "+", ".", "e", "E", "nan", "inf", "-inf", "1e308",
    "-1e308", "1e-320", "9" * 40, "9" * 400, "0", "-0", "cm-1", "br", "vs", "(", ")", "\u2212",
    "\u00e9", "\ufeff", "\x1a", "\x0c",
]  # fmt: skip


def _mutate(draw, text: str) -> str:
    for _ in range(draw(st.integers(1, 8))):
        if not text:
            break
        i = draw(st.integers(0, len(text)))
        op = draw(st.sampled_from(["replace", "insert", "delete", "truncate", "dupline", "cut"]))
        tok = draw(st.sampled_from(TOKENS))
        if op == "replace":
            text = text[:i] + tok + text[i + 1 :]
        elif op == "insert":
            text = text[:i] + tok + text[i:]
        elif op == "delete":
            j = draw(st.integers(i, min(len(text), i + 50)))
            text = text[:i] + text[j:]
        elif op == "truncate":
            text = text[:i]
        elif op == "dupline":
            lines = text.splitlines(keepends=True)
            k = draw(st.integers(0, max(0, len(lines) - 1)))
            lines[k:k] = [lines[k]] * draw(st.integers(1, 5)) if lines else []
            text = "".join(lines)
        else:  # swap two halves
            text = text[i:] + text[:i]
    return text


def _nested(draw) -> str:
    depth = draw(st.integers(1, 60))
    inner = draw(st.sampled_from([SEEDS["xydata"], SEEDS["peak_table"], "##TITLE=x\n##END=\n"]))
    head = "".join(f"##TITLE=level {k}\n##DATA TYPE=LINK\n##BLOCKS=1\n" for k in range(depth))
    ends = "##END=\n" * draw(st.integers(0, depth + 2))
    return head + inner + ends


@st.composite
def fuzz_files(draw) -> tuple[str, bytes]:
    """(kind, file content) for one case."""
    kind = draw(st.sampled_from(["mutated", "spliced", "binary", "huge", "nested", "tokens"]))
    base = SEEDS[draw(st.sampled_from(sorted(SEEDS)))]
    if kind == "mutated":
        data = _mutate(draw, base).encode("utf-8", "surrogatepass")
    elif kind == "spliced":  # text with raw bytes in it (NUL past the sniffed head, say)
        raw = draw(st.binary(min_size=1, max_size=200))
        i = draw(st.integers(0, len(base)))
        data = base.encode()[:i] + raw + base.encode()[i:]
    elif kind == "binary":
        data = draw(st.binary(max_size=600))
    elif kind == "huge":  # numbers far outside any sensible range, in place of real ones
        big = draw(st.sampled_from(["1e308", "-1e308", "1e-320", "9" * 400, "1" + "0" * 30]))
        text = base
        for _ in range(draw(st.integers(1, 6))):
            digits = [i for i, c in enumerate(text) if c.isdigit()]
            if not digits:
                break
            i = draw(st.sampled_from(digits))
            text = text[:i] + big + text[i + 1 :]
        data = text.encode()
    elif kind == "nested":
        data = _nested(draw).encode()
    else:
        data = "".join(draw(st.lists(st.sampled_from(TOKENS), max_size=80))).encode()
    return kind, data


def check_result(objs: list) -> None:
    """Whatever a reader accepts keeps reflib's conventions (raises AssertionError if not)."""
    assert isinstance(objs, list) and objs
    for o in objs:
        if isinstance(o, Spectrum):
            assert o.x.size >= 2 and np.all(np.diff(o.x) > 0) and o.x[0] > 0
            assert np.all(np.isfinite(o.x)) and np.all(np.isfinite(o.y))
            assert o.y_kind in ("absorbance", "transmittance")
        else:
            assert isinstance(o, PeakList)
            assert np.all(np.isfinite(o.positions)) and np.all(o.positions > 0)
            assert np.all((o.intensities >= 0) & (o.intensities <= 1))


class _Timeout(Exception):
    pass


def _alarm(signum, frame):  # pragma: no cover - only on a hang
    raise _Timeout()


def read_case(path: Path, data: bytes) -> str:
    """Write and read one file; 'accepted' or 'refused', or raise for a failure."""
    path.write_bytes(data)
    try:
        objs = read_all(path)
    except ReflibError:
        return "refused"
    check_result(objs)
    return "accepted"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=12_000)
    ap.add_argument("--seed", type=int, default=0)
    args = ap.parse_args(argv)
    tally: Counter[str] = Counter()
    kinds: Counter[str] = Counter()
    failures: list[str] = []
    slowest = (0.0, "")
    folder = Path(tempfile.mkdtemp(prefix="reflib-fuzz-"))
    path = folder / "case.dat"
    use_alarm = hasattr(signal, "SIGALRM")
    if use_alarm:
        signal.signal(signal.SIGALRM, _alarm)

    @seed(args.seed)
    @settings(
        max_examples=args.cases,
        deadline=None,
        database=None,
        phases=[Phase.generate],
        suppress_health_check=list(HealthCheck),
    )
    @given(fuzz_files())
    def one(case):
        nonlocal slowest
        kind, data = case
        kinds[kind] += 1
        t0 = time.perf_counter()
        if use_alarm:
            signal.alarm(10)
        try:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                tally[read_case(path, data)] += 1
            for w in caught[:1]:  # a warning is a second stderr line at the CLI
                failures.append(
                    f"{kind}: {w.category.__name__} at {Path(w.filename).name}:{w.lineno}: "
                    f"{w.message}; starts {data[:80]!r}"
                )
        except _Timeout:
            failures.append(f"{kind}: hung for over 10 s; starts {data[:80]!r}")
        except Exception as exc:  # noqa: BLE001 - any other exception is the finding
            failures.append(f"{kind}: {type(exc).__name__}: {exc}; starts {data[:80]!r}")
        finally:
            if use_alarm:
                signal.alarm(0)
        dt = time.perf_counter() - t0
        if dt > slowest[0]:
            slowest = (dt, kind)
        if dt > CASE_LIMIT_S:
            failures.append(f"{kind}: took {dt:.2f} s (limit {CASE_LIMIT_S} s)")

    t0 = time.perf_counter()
    one()
    total = time.perf_counter() - t0
    n = sum(kinds.values())
    print(f"cases: {n} ({', '.join(f'{k} {v}' for k, v in sorted(kinds.items()))})")
    print(f"accepted {tally['accepted']}, refused with ReflibError {tally['refused']}")
    print(f"slowest case {slowest[0] * 1000:.0f} ms ({slowest[1]}); total {total:.1f} s")
    print(f"failures: {len(failures)}")
    for f in failures[:50]:
        print("  " + f)
    path.unlink(missing_ok=True)
    folder.rmdir()
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
