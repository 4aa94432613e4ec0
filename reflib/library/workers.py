"""Worker processes for bulk work that end when their parent ends, or none at all.

:func:`worker_count` says how many processes a job should use; 1 means "work in this process",
which is what happens where children cannot be started or would not help:

* inside a daemonic process (a worker of someone else's pool: Python forbids it children),
* on a machine (or CPU affinity mask) with a single core,
* when the environment variable ``REFLIB_WORKERS`` says 1 (it caps the count: ``2`` allows at
  most two workers),
* when the job is too small to pay for starting processes.

:func:`start_pool` starts a :class:`concurrent.futures.ProcessPoolExecutor` whose workers do not
outlive the process that started them: on Linux each worker asks the kernel for SIGKILL when its
parent dies (``prctl(PR_SET_PDEATHSIG)``, through ctypes); elsewhere, or if that call fails, a
watchdog thread in each worker checks the parent's pid twice a second and ends the worker when
it has gone. A killed ``reflib import`` therefore leaves no worker behind.
"""

from __future__ import annotations

import os
import sys
import threading
from typing import Any

from reflib.errors import ValidationError

#: Environment variable capping the number of worker processes (1: no workers).
ENV_WORKERS = "REFLIB_WORKERS"
#: Seconds between two checks of the watchdog thread.
WATCHDOG_S = 0.5

_PR_SET_PDEATHSIG = 1
_SIGKILL = 9


def cores() -> int:
    """Cores this process may run on (its CPU affinity where the platform tells it)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def env_cap() -> int | None:
    """The cap ``REFLIB_WORKERS`` sets, or None; a bad value is a clear error."""
    raw = os.environ.get(ENV_WORKERS, "").strip()
    if not raw:
        return None
    if not raw.isdigit() or int(raw) < 1:
        raise ValidationError(f"{ENV_WORKERS} must be a whole number of at least 1, got {raw!r}")
    return int(raw)


def can_have_children() -> bool:
    """False inside a daemonic process (a pool worker), which may not start processes."""
    import multiprocessing

    return not multiprocessing.current_process().daemon


def worker_count(requested: int | None, n_tasks: int, min_tasks: int = 1) -> int:
    """How many worker processes to use for ``n_tasks`` tasks; 1 means in this process.

    ``requested`` is the caller's wish (None: one per core); fewer than ``min_tasks`` tasks are
    done in this process.
    """
    if requested is not None and requested < 1:
        raise ValidationError(f"workers must be at least 1, got {requested}")
    n = requested if requested is not None else cores()
    cap = env_cap()
    if cap is not None:
        n = min(n, cap)
    if requested is None and cores() < 2:
        n = 1
    if n_tasks < max(min_tasks, 2) or not can_have_children():
        n = 1
    return max(1, min(n, max(n_tasks, 1)))


def _end_with_parent() -> None:
    """Pool initializer: this worker ends when its parent does (see the module notes).

    The parent is the process that forked this one: the caller, or a fork server that itself
    ends with the caller.
    """
    parent = os.getppid()
    if parent == 1:  # already orphaned
        os._exit(1)
    armed = False
    if sys.platform.startswith("linux"):
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            armed = libc.prctl(_PR_SET_PDEATHSIG, _SIGKILL, 0, 0, 0) == 0
        except (OSError, AttributeError):
            armed = False
    if os.getppid() != parent:  # the parent died before the signal was armed
        os._exit(1)
    if not armed:
        threading.Thread(target=_watch, args=(parent,), daemon=True, name="reflib-watchdog").start()


def _watch(parent: int) -> None:
    import time

    while True:
        time.sleep(WATCHDOG_S)
        if os.getppid() != parent:
            os._exit(1)


def _init(initializer: Any, initargs: tuple) -> None:
    _end_with_parent()
    if initializer is not None:
        initializer(*initargs)


def start_pool(n_workers: int, initializer: Any = None, initargs: tuple = ()):
    """A process pool of ``n_workers`` whose workers end when this process ends."""
    from concurrent.futures import ProcessPoolExecutor

    return ProcessPoolExecutor(
        max_workers=n_workers,
        initializer=_init,
        initargs=(initializer, initargs),
    )


def _run_many(fn: Any, items: list) -> list:
    return [fn(x) for x in items]


def ordered_map(pool: Any, fn: Any, items: Any, *, chunksize: int = 16, ahead: int = 16):
    """``fn`` of every item, in order, from ``pool``: ``chunksize`` items per task and at most
    ``ahead`` tasks in flight, so that results never pile up faster than they are used."""
    from collections import deque
    from itertools import islice

    it = iter(items)
    pending: deque = deque()

    def submit() -> bool:
        part = list(islice(it, chunksize))
        if part:
            pending.append(pool.submit(_run_many, fn, part))
        return bool(part)

    for _ in range(ahead):
        if not submit():
            break
    while pending:
        results = pending.popleft().result()
        submit()
        yield from results
