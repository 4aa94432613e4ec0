"""Worker processes end with their parent; pools fall back to this process where they must.

Real processes throughout, nothing mocked. The facts relied on: a SIGKILLed process cannot run
any clean-up of its own (signal(7)), so only the kernel's parent-death signal (prctl(2),
PR_SET_PDEATHSIG) or the workers' own watchdog can end its workers; Python refuses children to
a daemonic process ("daemonic processes are not allowed to have children", multiprocessing
documentation). Peak positions come from seeded random numbers: mechanics, not chemistry.
"""

from __future__ import annotations

import multiprocessing
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from reflib.library import workers
from reflib.spectrum import Spectrum

linux_only = pytest.mark.skipif(
    not Path("/proc/self/stat").exists(), reason="reads the process table from /proc"
)


def _children(pid: int) -> list[int]:
    out = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                stat = (d / "stat").read_text()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == pid:
                out.append(int(d.name))
    return out


def _alive(pid: int) -> bool:
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return False
    return stat.rsplit(")", 1)[1].split()[0] != "Z"  # a zombie has ended


def _write_files(folder: Path, n: int) -> None:
    rng = np.random.default_rng(8)
    grid = np.arange(500, 3600)
    folder.mkdir()
    for i in range(n):
        pos = sorted(rng.choice(grid, size=10, replace=False).tolist(), reverse=True)
        (folder / f"c{i:05d}.txt").write_text(", ".join(f"{p} s" for p in pos) + " cm-1\n")


@linux_only
def test_killed_import_leaves_no_worker_alive(tmp_path):
    folder = tmp_path / "files"
    _write_files(folder, 6000)
    lib = tmp_path / "lib.sqlite"
    run = [sys.executable, "-m", "reflib.cli"]
    assert subprocess.run([*run, "init", lib], capture_output=True).returncode == 0
    env = {**os.environ, "REFLIB_WORKERS": "2"}
    proc = subprocess.Popen(
        [*run, "import", "-L", lib, folder],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        env=env,
    )
    kids: list[int] = []
    deadline = time.monotonic() + 120
    while len(kids) < 2 and proc.poll() is None and time.monotonic() < deadline:
        kids = _children(proc.pid)
        time.sleep(0.02)
    assert proc.poll() is None and len(kids) >= 2, "the import never started its workers"
    time.sleep(0.3)  # let the workers get busy
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()
    time.sleep(5)
    assert [k for k in kids if _alive(k)] == []


def _add_in_daemon(path: str, queue) -> None:
    from reflib.library import Library

    x = np.arange(400.0, 4000.0, 2.0)
    items = []
    for i in range(40):  # enough full spectra that a pool would be started outside a daemon
        centre = 800.0 + 60.0 * i
        y = (
            0.05
            + np.exp(-0.5 * ((x - centre) / 6.0) ** 2)
            + 0.5 * np.exp(-0.5 * ((x - 2950.0) / 8.0) ** 2)
        )
        items.append({"data": Spectrum(x, y, "absorbance"), "name": f"s{i}"})
    try:
        with Library.create(path) as lib:
            queue.put(("ok", len(lib.add_many(items))))
    except Exception as exc:  # reported to the test, which fails on it
        queue.put(("error", repr(exc)))


def test_add_many_works_inside_a_daemonic_process(tmp_path):
    assert multiprocessing.current_process().daemon is False
    ctx = multiprocessing.get_context("spawn")
    queue = ctx.Queue()
    proc = ctx.Process(target=_add_in_daemon, args=(str(tmp_path / "d.sqlite"), queue))
    proc.daemon = True
    proc.start()
    result = queue.get(timeout=120)
    proc.join(60)
    assert result == ("ok", 40)


def test_worker_count_falls_back_to_this_process(monkeypatch):
    monkeypatch.delenv(workers.ENV_WORKERS, raising=False)
    monkeypatch.setattr(workers, "cores", lambda: 2)
    assert workers.worker_count(None, 1000, 32) == 2
    assert workers.worker_count(None, 10, 32) == 1  # too few tasks
    assert workers.worker_count(3, 1000, 32) == 3
    monkeypatch.setenv(workers.ENV_WORKERS, "1")
    assert workers.worker_count(None, 1000, 32) == 1
    assert workers.worker_count(4, 1000, 32) == 1  # the variable caps an explicit request
    monkeypatch.setenv(workers.ENV_WORKERS, "two")
    with pytest.raises(Exception, match="REFLIB_WORKERS"):
        workers.worker_count(None, 1000, 32)
    monkeypatch.delenv(workers.ENV_WORKERS)
    monkeypatch.setattr(workers, "cores", lambda: 1)
    assert workers.worker_count(None, 1000, 32) == 1  # a single core
    monkeypatch.setattr(workers, "cores", lambda: 2)
    monkeypatch.setattr(workers, "can_have_children", lambda: False)
    assert workers.worker_count(2, 1000, 32) == 1  # a daemonic process


def test_import_with_reflib_workers_1_starts_no_process(tmp_path, monkeypatch):
    from reflib.library import Library
    from reflib.library.importer import plan_import, run_import

    folder = tmp_path / "files"
    _write_files(folder, 80)

    def no_pool(*args, **kwargs):
        raise AssertionError("a worker pool was started")

    monkeypatch.setattr(workers, "cores", lambda: 2)
    monkeypatch.setattr(workers, "start_pool", no_pool)
    lib = Library.create(tmp_path / "a.sqlite")
    with pytest.raises(AssertionError, match="pool was started"):
        run_import(lib, plan_import(folder))  # without the variable, workers would be used
    monkeypatch.setenv(workers.ENV_WORKERS, "1")
    report = run_import(lib, plan_import(folder))
    assert report.added == 80 and report.failures == []
    lib.close()
