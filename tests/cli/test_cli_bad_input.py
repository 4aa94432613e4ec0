"""Bad input at every boundary: the real ``reflib`` process exits 2 with one line on stderr.

Each case is a user mistake (a broken file, a wrong option, a library that is not one); the
expected fragment is what tells the user what was expected. The rule "one line, exit 2, no
traceback" is the project's CLI contract (common practice, no source). Band positions in the
typed peak lists are condensed-phase values from memory.
"""

from __future__ import annotations

import json
import sqlite3
import subprocess
import sys

import numpy as np
import pytest

from reflib.errors import ValidationError
from reflib.library.store import MAX_STORED_PEAKS, MAX_STORED_POINTS, SCHEMA_VERSION, Store
from reflib.spectrum import PeakList, Spectrum

ACETONE = "IR (film): 3005 w, 1715 vs, 1420 m, 1365 s, 1220 s, 1092 w, 530 m cm-1\n"

JCAMP_HEAD = (
    "##TITLE=x\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED SPECTRUM\n##XUNITS={xu}\n##YUNITS={yu}\n"
    "##FIRSTX=1000\n##LASTX=1003\n##NPOINTS={n}\n##XFACTOR=1\n##YFACTOR=1\n"
    "##XYDATA=(X++(Y..Y))\n1000 1 2 3 4\n##END=\n"
)


def _columns(x, y, header="wavenumber,absorbance") -> str:
    return header + "\n" + "".join(f"{a},{b}\n" for a, b in zip(x, y))


X12 = list(range(4000, 399, -300))  # 4000..400 cm-1, 13 points
Y12 = [round(0.1 + 0.05 * (i % 4), 2) for i in range(len(X12))]


def _with(values, i, v):
    out = list(values)
    out[i] = v
    return out


# file name -> content (str or bytes); written into the test folder
FILES: dict[str, str | bytes] = {
    "empty.txt": "",
    "blank.txt": "   \n\n\t\n",
    "binary.dat": b"\x00\x01\x02\x03binary\xff\xfe" * 20,
    "nan.csv": _columns(X12, _with(Y12, 3, "nan")),
    "inf.csv": _columns(X12, _with(Y12, 3, "inf")),
    "nonmonotonic.csv": _columns(_with(X12, 4, 3800), Y12),
    "duplicate-x.csv": _columns(_with(X12, 4, X12[3]), Y12),
    "hertz.jdx": JCAMP_HEAD.format(xu="HZ", yu="ABSORBANCE", n=4),
    "furlongs.jdx": JCAMP_HEAD.format(xu="1/CM", yu="FURLONGS", n=4),
    "too-many-points.jdx": JCAMP_HEAD.format(xu="1/CM", yu="ABSORBANCE", n=10_000_000),
    "out-of-range.txt": "IR: 9000 s, 1715 vs\n",
    "given-twice.txt": "IR: 1715 s, 1240 s, 1715 m\n",
    "words.txt": "the sample was a yellow oil, no spectrum taken\n",
    "acetone.txt": ACETONE,
    "manifest-nofile.csv": "name,prep\nacetone,film\n",
}


CASES = [
    # (id, argv with {lib} {dir} placeholders, fragment of the one stderr line)
    ("empty file", ["peaks", "{dir}/empty.txt"], "file is empty"),
    ("blank file", ["peaks", "{dir}/blank.txt"], "empty"),
    ("binary file", ["peaks", "{dir}/binary.dat"], "binary file"),
    ("NaN", ["peaks", "{dir}/nan.csv"], "NaN"),
    ("infinity", ["peaks", "{dir}/inf.csv"], "infinity"),
    ("non-monotonic x", ["peaks", "{dir}/nonmonotonic.csv"], "monotonic"),
    ("duplicate x", ["peaks", "{dir}/duplicate-x.csv"], "3100"),
    ("x units Hz", ["peaks", "{dir}/hertz.jdx"], "HZ"),
    ("y units", ["peaks", "{dir}/furlongs.jdx"], "FURLONGS"),
    ("point-count cap", ["peaks", "{dir}/too-many-points.jdx"], "at most 5000000 points"),
    ("file-size cap", ["peaks", "{dir}/huge.csv"], "up to 64 MB"),
    ("band out of range", ["peaks", "{dir}/out-of-range.txt"], "outside"),
    ("band given twice", ["peaks", "{dir}/given-twice.txt"], "given twice"),
    ("missing file", ["peaks", "{dir}/nope.jdx"], "no such file"),
    ("folder as file", ["peaks", "{dir}"], "folder"),
    ("add words", ["add", "-L", "{lib}", "--name", "x", "{dir}/words.txt"], "words.txt"),
    ("add no name", ["add", "-L", "{lib}", "--name", "  ", "{dir}/acetone.txt"], "needs a name"),
    ("add long name", ["add", "-L", "{lib}", "--name", "n" * 300, "--peaks", "1715 vs"], "200"),
    (
        "add bad role",
        ["add", "-L", "{lib}", "--name", "y", "--peaks", "1715", "--role", "z"],
        "role",
    ),
    (
        "add bad prep",
        ["add", "-L", "{lib}", "--name", "y", "--peaks", "1715", "--prep", "xx"],
        "xx",
    ),
    ("add duplicate", ["add", "-L", "{lib}", "--name", "again", "{dir}/acetone.txt"], "--force"),
    ("add nothing", ["add", "-L", "{lib}", "--name", "y"], "--peaks"),
    ("import missing", ["import", "-L", "{lib}", "{dir}/no-folder"], "no such file"),
    ("manifest no file col", ["import", "-L", "{lib}", "{dir}/manifest-nofile.csv"], "'file'"),
    ("library missing", ["list", "-L", "{dir}/missing.sqlite"], "reflib init"),
    ("library is junk", ["list", "-L", "{dir}/acetone.txt"], "not a reflib library"),
    ("library is folder", ["list", "-L", "{dir}"], "folder"),
    ("library too new", ["list", "-L", "{dir}/future.sqlite"], "upgrade reflib"),
    ("check missing lib", ["check", "-L", "{dir}/missing.sqlite"], "reflib init"),
    ("backup over file", ["backup", "-L", "{lib}", "{dir}/acetone.txt"], "already exists"),
    ("backup no folder", ["backup", "-L", "{lib}", "{dir}/no/such/b.sqlite"], "does not exist"),
    ("search bad top", ["search", "-L", "{lib}", "{dir}/acetone.txt", "--top", "0"], "--top"),
    ("search bad weights", ["search", "-L", "{lib}", "{dir}/acetone.txt", "--weights", "q"], "q"),
    ("show unknown", ["show", "-L", "{lib}", "'; DROP TABLE compounds; --"], "no compound"),
]


def reflib(*args, cwd=None):
    """The real console entry point in a subprocess, as a user runs it."""
    return subprocess.run(
        [sys.executable, "-m", "reflib.cli", *args], capture_output=True, text=True, cwd=cwd
    )


# Starting Python for each of ~35 cases costs a second apiece on a busy machine, so one child
# process runs them all, each exactly as ``python -m reflib.cli ARGS`` runs (runpy, fresh
# sys.argv, real stderr and exit status); test_batch_driver_matches_separate_processes checks
# that this gives the same exit status and line as separate processes.
BATCH_DRIVER = """
import contextlib, io, json, runpy, sys
out = []
for argv in json.loads(sys.stdin.read()):
    err, std = io.StringIO(), io.StringIO()
    sys.argv = ["reflib", *argv]
    for mod in [m for m in sys.modules if m.startswith("reflib.cli")]:
        del sys.modules[mod]  # as in a fresh process: the app is built anew
    code = 0
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(std):
        try:
            runpy.run_module("reflib.cli", run_name="__main__", alter_sys=True)
        except SystemExit as exc:
            code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
        except BaseException as exc:  # a traceback: report it as the user would see it
            import traceback
            code = "traceback"
            err.write(traceback.format_exc())
    out.append([code, std.getvalue(), err.getvalue()])
print(json.dumps(out))
"""


def run_batch(argvs: list[list[str]], cwd) -> list[tuple[int | str, str, str]]:
    """Run each argv in one child process; (exit status, stdout, stderr) for each."""
    batch = subprocess.run(
        [sys.executable, "-c", BATCH_DRIVER],
        input=json.dumps(argvs),
        capture_output=True,
        text=True,
        cwd=cwd,
    )
    assert batch.returncode == 0, batch.stderr
    return [tuple(r) for r in json.loads(batch.stdout)]


def _argv(argv, d, lib):
    return [a.format(lib=lib, dir=d) for a in argv]


@pytest.fixture(scope="module")
def world(tmp_path_factory):
    d = tmp_path_factory.mktemp("bad")
    for name, content in FILES.items():
        p = d / name
        if isinstance(content, bytes):
            p.write_bytes(content)
        else:
            p.write_text(content, encoding="utf-8")
    with open(d / "huge.csv", "wb") as fh:  # sparse: 65 MB on paper, nothing on disk
        fh.truncate(65 * 2**20)
    lib = d / "lib.sqlite"
    assert reflib("init", str(lib)).returncode == 0
    r = reflib("add", "-L", str(lib), "--name", "acetone", str(d / "acetone.txt"))
    assert r.returncode == 0, r.stderr
    future = Store.create(d / "future.sqlite")
    with future.write():
        future.set_meta("schema_version", str(SCHEMA_VERSION + 1))
        future.set_meta("reflib_version", "9.0")
    future.close()
    runs = run_batch([_argv(c[1], d, lib) for c in CASES], cwd=d)
    results = {c[0]: (code, err) for c, (code, _, err) in zip(CASES, runs)}
    return d, lib, results


@pytest.mark.parametrize("case, argv, fragment", CASES, ids=[c[0] for c in CASES])
def test_bad_input_exits_2_with_one_line(world, case, argv, fragment):
    d, lib, results = world
    code, stderr = results[case]
    assert code == 2, (case, stderr)
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, stderr
    assert "Traceback" not in stderr and lines[0].startswith("reflib: ")
    assert fragment in lines[0], lines[0]


def test_refused_adds_leave_the_library_as_it_was(world):
    d, lib, _ = world
    con = sqlite3.connect(lib)
    assert con.execute("SELECT COUNT(*) FROM spectra").fetchone()[0] == 1
    assert con.execute("SELECT name FROM compounds").fetchall() == [("acetone",)]
    con.close()


@pytest.mark.parametrize("case", ["NaN", "add duplicate", "library too new"])
def test_batch_driver_matches_separate_processes(world, case):
    d, lib, results = world
    argv = next(c[1] for c in CASES if c[0] == case)
    r = reflib(*_argv(argv, d, lib), cwd=d)
    assert (r.returncode, r.stderr) == results[case]


def test_names_and_notes_are_stored_and_shown_verbatim(tmp_path):
    """Quotes, SQL metacharacters and Unicode survive add -> show --json unchanged.

    Values are bound as SQL parameters, never interpolated (common practice, no source).
    """
    lib = tmp_path / "lib.sqlite"
    names = [
        "'; DROP TABLE compounds; --",
        'Robert"); DELETE FROM spectra; --',
        "2′,4′-dihydroxy-α-methylchalcone (E/Z)",
        "50% ester_1 \\ back\\slash",
        "<b>bold</b> & amp;",
    ]
    note = "line one; 'quoted' \"double\" -- comment /* c */ ∆G‡ 😀"
    argvs = [["init", str(lib)]]
    for i, name in enumerate(names):
        bands = f"{1700 + 10 * i} vs, {2900 + 7 * i} m, {1100 + 13 * i} s"
        argvs.append(["add", "-L", str(lib), "--name", name, "--note", note, "--peaks", bands])
    argvs += [["show", "-L", str(lib), name, "--json"] for name in names]
    argvs.append(["list", "-L", str(lib), "--json"])
    runs = run_batch(argvs, cwd=tmp_path)
    assert all(code == 0 for code, _, _ in runs), runs
    for name, (_, out, _) in zip(names, runs[1 + len(names) : 1 + 2 * len(names)]):
        shown = json.loads(out)
        assert shown["name"] == name and shown["notes"] == note
    assert sorted(c["name"] for c in json.loads(runs[-1][1])) == sorted(names)
    con = sqlite3.connect(lib)
    tables = {t[0] for t in con.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    assert {"compounds", "spectra", "peaks", "vectors", "meta"} <= tables
    con.close()


def test_store_caps_points_and_bands(tmp_path):
    """The library refuses absurd sizes even from API callers that bypass the readers."""
    s = Store.create(tmp_path / "lib.sqlite")
    n = MAX_STORED_POINTS + 1
    x = np.linspace(400.0, 4000.0, n)
    spec = Spectrum(x, np.zeros(n), "absorbance")
    few = PeakList([1715.0], [1.0])
    with s.write():
        cid = s.insert_compound({"name": "a", "role": "other"})
    with pytest.raises(ValidationError, match=f"at most {MAX_STORED_POINTS}"):
        with s.write():
            s.insert_spectrum(cid, spec, few, np.zeros(s.encoding.size), "k", prep=[])
    many = PeakList(np.linspace(400.0, 4000.0, MAX_STORED_PEAKS + 1), np.ones(MAX_STORED_PEAKS + 1))
    with pytest.raises(ValidationError, match=f"at most {MAX_STORED_PEAKS}"):
        with s.write():
            s.insert_spectrum(cid, many, many, np.zeros(s.encoding.size), "k", prep=[])
    assert s.counts()["spectra"] == 0
    s.close()


OVERFLOW_PEAK_TABLE = (
    "##TITLE=t\n##JCAMP-DX=5.01\n##DATA TYPE=INFRARED PEAK TABLE\n##XUNITS=1/CM\n"
    "##YUNITS=ARBITRARY UNITS\n##XFACTOR=-1e308\n##YFACTOR=1\n##NPOINTS=3\n"
    "##PEAK TABLE=(XYW..XYW)\n1240,0.7,20 1715,1,12 2950,0.4,0\n##END=\n"
)


def test_overflowing_factor_still_gives_one_line(tmp_path):
    f = tmp_path / "overflow.jdx"
    f.write_text(OVERFLOW_PEAK_TABLE)
    r = reflib("peaks", str(f))
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1, r.stderr
