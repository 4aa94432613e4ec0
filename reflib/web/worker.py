"""Every library call of the server runs on one thread, one call at a time.

The library's SQLite connection belongs to the thread that opened it, and one writer at a time
is what the file wants: so the server opens the :class:`~reflib.library.Library` on a
single-thread executor and sends every read and write there. The search index stays in memory
in that Library, so a search costs no process start and no index load. Parsing uploads and
drawing plots run elsewhere (in Starlette's thread pool), in parallel.
"""

from __future__ import annotations

import asyncio
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import Any, TypeVar

T = TypeVar("T")


class LibraryWorker:
    """Owns one Library; :meth:`call` runs ``fn(lib)`` on the library thread."""

    def __init__(self, path: str):
        self._pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="reflib-library")
        self.path = path
        self.lib: Any = self._pool.submit(self._open).result()

    def _open(self):
        from reflib.library import Library

        lib = Library.open(self.path)
        lib.index()  # load the index now, not on the first search
        return lib

    async def call(self, fn: Callable[[Any], T]) -> T:
        loop = asyncio.get_running_loop()
        return await loop.run_in_executor(self._pool, fn, self.lib)

    def call_sync(self, fn: Callable[[Any], T]) -> T:
        return self._pool.submit(fn, self.lib).result()

    def close(self) -> None:
        try:
            self._pool.submit(self.lib.close).result()
        finally:
            self._pool.shutdown(wait=True)
