"""Shared use of one library file by real processes: concurrent writers, readers, kills, backups.

Everything here runs separate Python processes against one SQLite file; nothing is mocked.
Peak positions are generated from seeded random numbers: these are mechanics tests, not
chemistry. The guarantees tested are SQLite's documented WAL behaviour (readers see a snapshot,
one writer at a time, a committed transaction survives the process being killed) as reflib uses
it (sqlite.org/wal.html and sqlite.org/atomiccommit.html).
"""

from __future__ import annotations

import json
import os
import random
import signal
import sqlite3
import subprocess
import sys
import textwrap
import threading
import time
from pathlib import Path

import numpy as np
import pytest

from reflib.errors import LibraryError
from reflib.library import Library
from reflib.library import store as store_mod
from reflib.library.store import Store
from reflib.spectrum import PeakList

WRITER = textwrap.dedent(
    """
    import json, sys, time
    from pathlib import Path
    import numpy as np
    from reflib.library import store as store_mod
    from reflib.library import Library
    from reflib.spectrum import PeakList

    path, worker, n, busy_ms, go = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), \\
        float(sys.argv[4]), Path(sys.argv[5])
    shared = len(sys.argv) > 6  # all workers add to the same compound names
    store_mod.BUSY_TIMEOUT_S = busy_ms / 1000.0
    sleeps = [0]
    real_sleep = time.sleep
    def counting_sleep(s):
        sleeps[0] += 1
        real_sleep(s)
    store_mod.time.sleep = counting_sleep  # counts the retry loop's backoff waits
    rng = np.random.default_rng(1000 + worker)
    errors = []
    Path(f"{go}.ready{worker}").touch()
    while not go.exists():  # start together
        real_sleep(0.005)
    with Library.open(path) as lib:
        for i in range(n):
            if i == n // 2 and not shared:  # halfway: wait until a search saw a partial library
                t_end = time.monotonic() + 60
                while not Path(f"{go}.partial").exists() and time.monotonic() < t_end:
                    real_sleep(0.005)
            pos = rng.choice(np.arange(500, 3600, 3), size=8, replace=False).astype(float)
            pl = PeakList(pos, rng.uniform(0.1, 1.0, 8))
            try:
                name = f"shared-{i:02d}" if shared else f"w{worker}-{i:02d}"
                lib.add(pl, name=name, check_similar=False)
            except Exception as exc:
                errors.append(f"{type(exc).__name__}: {exc}")
            real_sleep(0.005)  # people do not add in a tight loop
    print(json.dumps({"errors": errors, "retries": sleeps[0]}))
    """
)

SEARCHER = textwrap.dedent(
    """
    import json, sys, time
    from pathlib import Path
    import numpy as np
    from reflib.library import Library
    from reflib.spectrum import PeakList

    path, stop, ready, go = sys.argv[1], Path(sys.argv[2]), Path(sys.argv[3]), sys.argv[4]
    rng = np.random.default_rng(5)
    n = 0
    errors = []
    seen = []
    with Library.open(path) as lib:
        while not stop.exists() or n < 3:
            if n == 1:
                ready.touch()  # imported and searching: the writers may start
            pos = rng.choice(np.arange(500, 3600, 3), size=8, replace=False).astype(float)
            try:
                res = lib.search(PeakList(pos, np.ones(8)), top=3)
                for h in res.hits:  # every hit must be a whole spectrum of that snapshot
                    assert len(lib.peaks(h.spectrum_id)) == 8
                seen.append(lib.store.counts()["spectra"])
                if 0 < seen[-1]:  # writers are paused halfway until this flag: a partial view
                    Path(f"{go}.partial").touch()
            except Exception as exc:
                errors.append(f"{type(exc).__name__}: {exc}")
            n += 1
    print(json.dumps({"errors": errors, "searches": n, "seen": seen}))
    """
)


def _spawn(script: str, *args) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-c", script, *map(str, args)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )


def _result(proc: subprocess.Popen, timeout: float = 240) -> dict:
    out, err = proc.communicate(timeout=timeout)
    assert proc.returncode == 0, err
    return json.loads(out.strip().splitlines()[-1])


@pytest.mark.parametrize("busy_ms", [30000.0, 1.0], ids=["busy-timeout-30s", "busy-timeout-1ms"])
def test_four_writers_add_fifty_each_while_a_search_runs(tmp_path, busy_ms):
    """200 spectra from 4 simultaneous processes, zero errors; a parallel search never fails.

    With a 1 ms busy timeout SQLite gives up on a held lock at once, so reflib's own
    retry-with-backoff has to do all the waiting. The writers pause halfway until the searcher
    has seen a partial library, so reads and writes do overlap however the machine schedules.
    """
    lib = tmp_path / "lib.sqlite"
    Store.create(lib).close()
    go, stop, ready = tmp_path / "go", tmp_path / "stop", tmp_path / "ready"
    writers = [_spawn(WRITER, lib, k, 50, busy_ms, go) for k in range(4)]
    searcher = _spawn(SEARCHER, lib, stop, ready, go)
    deadline = time.monotonic() + 120
    flags = [ready, *(Path(f"{go}.ready{k}") for k in range(4))]
    while not all(f.exists() for f in flags) and time.monotonic() < deadline:
        time.sleep(0.01)
    go.touch()
    results = [_result(w) for w in writers]
    stop.touch()
    search = _result(searcher)
    assert [r["errors"] for r in results] == [[], [], [], []]
    assert search["errors"] == [] and search["searches"] >= 3
    assert search["seen"] == sorted(search["seen"])  # snapshots only move forward
    # not left to scheduling: the writers wait halfway until the searcher has seen a partial
    # library (up to 60 s), so this fails only if reads and writes could not overlap
    assert any(0 < n < 200 for n in search["seen"])
    con = sqlite3.connect(lib)
    assert con.execute("SELECT COUNT(*) FROM spectra").fetchone()[0] == 200
    assert con.execute("SELECT COUNT(*) FROM compounds").fetchone()[0] == 200
    assert con.execute("SELECT COUNT(*) FROM peaks").fetchone()[0] == 200 * 8
    assert con.execute("SELECT COUNT(*) FROM vectors").fetchone()[0] == 200
    assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    revision = int(con.execute("SELECT value FROM meta WHERE key='revision'").fetchone()[0])
    assert revision == 200  # every add was exactly one write transaction
    con.close()


def test_writers_adding_to_the_same_compounds(tmp_path):
    """Three people adding spectra of the same 30 compounds at once: 30 compounds, 90 spectra.

    The name is looked up again inside the write transaction, so a compound another process
    created a moment ago gets the spectrum instead of a unique-name error.
    """
    lib = tmp_path / "lib.sqlite"
    Store.create(lib).close()
    go = tmp_path / "go"
    writers = [_spawn(WRITER, lib, k, 30, 30000.0, go, "shared") for k in range(3)]
    go.touch()
    assert [_result(w)["errors"] for w in writers] == [[], [], []]
    con = sqlite3.connect(lib)
    assert con.execute("SELECT COUNT(*) FROM compounds").fetchone()[0] == 30
    per = con.execute("SELECT COUNT(*) FROM spectra GROUP BY compound_id").fetchall()
    assert sorted(n for (n,) in per) == [3] * 30
    con.close()


def _hold_write_lock(path: Path, seconds: float, started: threading.Event) -> None:
    con = sqlite3.connect(path, isolation_level=None)
    con.execute("BEGIN IMMEDIATE")
    started.set()
    time.sleep(seconds)
    con.execute("COMMIT")
    con.close()


def test_writer_waits_for_a_held_lock_then_succeeds(tmp_path, monkeypatch):
    p = tmp_path / "lib.sqlite"
    Store.create(p).close()
    monkeypatch.setattr(store_mod, "BUSY_TIMEOUT_S", 0.01)
    s = Store.open(p)
    started = threading.Event()
    t = threading.Thread(target=_hold_write_lock, args=(p, 0.6, started))
    t.start()
    started.wait()
    t0 = time.monotonic()
    with s.write():
        s.insert_compound({"name": "late", "role": "other"})
    waited = time.monotonic() - t0
    t.join()
    assert waited > 0.3  # it did wait for the other writer instead of failing
    assert s.counts()["compounds"] == 1
    s.close()


def test_writer_gives_up_with_a_clear_message(tmp_path, monkeypatch):
    p = tmp_path / "lib.sqlite"
    Store.create(p).close()
    monkeypatch.setattr(store_mod, "BUSY_TIMEOUT_S", 0.01)
    monkeypatch.setattr(store_mod, "WRITE_RETRY_S", 0.2)
    s = Store.open(p)
    started = threading.Event()
    t = threading.Thread(target=_hold_write_lock, args=(p, 1.0, started))
    t.start()
    started.wait()
    with pytest.raises(LibraryError, match="locked by another process"):
        with s.write():
            pass
    t.join()
    assert not s.conn.in_transaction
    s.close()


def test_read_transaction_sees_one_snapshot(tmp_path):
    p = tmp_path / "lib.sqlite"
    Store.create(p).close()
    reader, writer = Store.open(p), Store.open(p)
    pl = PeakList([1715.0, 2950.0], [1.0, 0.5])
    with reader.read():
        before = reader.counts()
        vs_before = reader.load_vectors(reader.encoding.key()).matrix.shape[0]
        with writer.write():
            cid = writer.insert_compound({"name": "a", "role": "other"})
            writer.insert_spectrum(cid, pl, pl, np.ones(writer.encoding.size), "x", prep=[])
        assert reader.counts() == before  # the write is invisible inside the snapshot
        assert reader.revision == 0 and vs_before == 0
    assert reader.counts()["spectra"] == 1 and reader.revision == 1
    with pytest.raises(RuntimeError, match="read transaction"):
        with reader.read():
            with reader.write():
                pass
    reader.close()
    writer.close()


# --- interrupted imports ----------------------------------------------------------------------

#: Enough files that an import writing a chunk of 256 per transaction is still running when killed.
N_FILES = 3000
N_KILLS = 3


def _write_peak_files(folder: Path, n: int, seed: int = 42) -> None:
    rng = np.random.default_rng(seed)
    grid = np.arange(500, 3600)
    for i in range(n):
        pos = sorted(rng.choice(grid, size=8, replace=False).tolist(), reverse=True)
        words = rng.choice(["vs", "s", "m", "w"], size=8)
        text = ", ".join(f"{p} {w}" for p, w in zip(pos, words))
        (folder / f"c{i:04d}.txt").write_text(f"IR (film): {text} cm-1\n")


def _count(lib: Path) -> int:
    con = sqlite3.connect(lib, timeout=30)
    try:
        return int(con.execute("SELECT COUNT(*) FROM spectra").fetchone()[0])
    finally:
        con.close()


def _assert_whole(lib: Path) -> None:
    """No half-written compound: every compound has spectra, every spectrum bands and a vector."""
    con = sqlite3.connect(lib)
    assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    assert con.execute("PRAGMA foreign_key_check").fetchall() == []
    q = {
        "compound without spectrum": "SELECT COUNT(*) FROM compounds WHERE id NOT IN "
        "(SELECT compound_id FROM spectra)",
        "spectrum without vector": "SELECT COUNT(*) FROM spectra WHERE id NOT IN "
        "(SELECT spectrum_id FROM vectors)",
        "spectrum with other than 8 bands": "SELECT COUNT(*) FROM (SELECT s.id FROM spectra s "
        "LEFT JOIN peaks p ON p.spectrum_id = s.id GROUP BY s.id HAVING COUNT(p.id) != 8)",
        "file twice": "SELECT COUNT(*) FROM (SELECT sha256 FROM spectra WHERE sha256 IS NOT NULL "
        "GROUP BY sha256 HAVING COUNT(*) > 1)",
    }
    bad = {k: con.execute(v).fetchone()[0] for k, v in q.items()}
    con.close()
    assert bad == dict.fromkeys(q, 0)


def _reflib(*args) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "reflib.cli", *map(str, args)], capture_output=True, text=True
    )


def test_import_killed_three_times_then_completed(tmp_path):
    folder = tmp_path / "spectra"
    folder.mkdir()
    _write_peak_files(folder, N_FILES)
    lib = tmp_path / "lib.sqlite"
    assert _reflib("init", lib).returncode == 0
    rng = random.Random(7)
    counts = []
    for _ in range(N_KILLS):
        start = _count(lib)
        proc = subprocess.Popen(
            [sys.executable, "-m", "reflib.cli", "import", "-L", str(lib), str(folder)],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        deadline = time.monotonic() + 120
        while _count(lib) == start and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.01)  # wait until it is really importing
        time.sleep(rng.uniform(0.0, 0.25))
        still_running = proc.poll() is None
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
        assert still_running, "the import finished before it could be killed"
        _assert_whole(lib)
        counts.append(_count(lib))
        r = _reflib("check", "-L", lib)
        assert r.returncode == 0, r.stdout + r.stderr
    assert counts == sorted(counts) and counts[-1] < N_FILES
    r = _reflib("import", "-L", lib, folder)
    assert r.returncode == 0, r.stdout + r.stderr
    assert f"added {N_FILES - counts[-1]}, skipped {counts[-1]}" in r.stdout
    assert _count(lib) == N_FILES
    _assert_whole(lib)
    names = sqlite3.connect(lib).execute("SELECT name FROM compounds ORDER BY name").fetchall()
    assert [n[0] for n in names] == [f"c{i:04d}" for i in range(N_FILES)]


# --- backup while others write ------------------------------------------------------------


def test_backup_while_another_process_writes(tmp_path):
    lib = tmp_path / "lib.sqlite"
    Store.create(lib).close()
    go = tmp_path / "go"
    writer = _spawn(WRITER, lib, 1, 50, 30000.0, go)
    go.touch()
    copies = []
    deadline = time.monotonic() + 60
    while writer.poll() is None and len(copies) < 3 and time.monotonic() < deadline:
        if _count(lib) > 0:
            dest = tmp_path / f"copy{len(copies)}.sqlite"
            r = _reflib("backup", "-L", lib, dest)
            assert r.returncode == 0, r.stderr
            copies.append(dest)
            Path(f"{go}.partial").touch()  # the writer, paused halfway, goes on writing
    assert _result(writer)["errors"] == []
    assert copies, "no backup was taken while the writer ran"
    counts = [_count(c) for c in copies]
    assert counts[0] == 25  # the first copy was taken while the writer waited halfway
    for c in copies:
        _assert_whole(c)  # a consistent snapshot: whole spectra only
    r = _reflib("backup", "-L", lib, copies[0])
    assert r.returncode == 2 and "already exists" in r.stderr


REMOVER = textwrap.dedent(
    """
    import sys, time
    from pathlib import Path
    from reflib.library import Library

    path, go = sys.argv[1], Path(sys.argv[2])
    while not go.exists():
        time.sleep(0.005)
    with Library.open(path) as lib:
        compounds = lib.compounds()
        for k, c in enumerate(compounds):
            if k == len(compounds) // 2:  # halfway: wait until a search saw a partial library
                t_end = time.monotonic() + 60
                while not Path(f"{go}.partial").exists() and time.monotonic() < t_end:
                    time.sleep(0.005)
            lib.remove(int(c["id"]))
    """
)


def test_search_while_another_process_removes_compounds(tmp_path):
    """A hit's bands are read from the same snapshot as the index, so a compound removed by
    someone else mid-search never turns into a 'no spectrum' error."""
    lib = tmp_path / "lib.sqlite"
    rng = np.random.default_rng(11)
    with Library.create(lib) as first:
        for i in range(80):
            pos = rng.choice(np.arange(500, 3600, 3), size=8, replace=False).astype(float)
            first.add(PeakList(pos, rng.uniform(0.1, 1, 8)), name=f"r{i}", check_similar=False)
    go = tmp_path / "go"
    remover = _spawn(REMOVER, lib, go)
    errors, searches, partial = [], 0, False
    with Library.open(lib) as reader:
        go.touch()
        while remover.poll() is None or searches < 3:
            pos = rng.choice(np.arange(500, 3600, 3), size=8, replace=False).astype(float)
            try:
                for h in reader.search(PeakList(pos, np.ones(8)), top=5).hits:
                    assert h.spectrum_id > 0 and h.matched is not None
                if 0 < reader.store.counts()["spectra"] < 80:
                    partial = True
                    Path(f"{go}.partial").touch()
            except Exception as exc:  # noqa: BLE001 - any error is the finding
                errors.append(f"{type(exc).__name__}: {exc}")
            searches += 1
    remover.communicate(timeout=60)
    assert remover.returncode == 0
    assert errors == [] and searches >= 3 and partial
    assert _count(lib) == 0
