"""One exception hierarchy for everything a user can get wrong.

The CLI turns any :class:`ReflibError` into one line on stderr and exit status 2.
Anything else escaping the library is a bug.
"""

from __future__ import annotations

from pathlib import Path


class ReflibError(Exception):
    """Base class of every error caused by input, options or the library file.

    Parameters
    ----------
    message:
        What is wrong, in words a chemist understands, ideally with what to do.
    path:
        The file concerned, when there is one.
    line:
        The 1-based line number in ``path`` where the problem was found, when known.
    """

    def __init__(self, message: str, *, path: str | Path | None = None, line: int | None = None):
        super().__init__(message)
        self.message = message
        self.path = str(path) if path is not None else None
        self.line = line

    def __str__(self) -> str:
        where = []
        if self.path:
            where.append(self.path)
        if self.line is not None:
            where.append(f"line {self.line}")
        prefix = ", ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message


class ReadError(ReflibError):
    """A file could not be read as a spectrum or peak list."""


class ValidationError(ReflibError):
    """A value or option is outside what reflib accepts (NaN, unknown token, bad range...)."""


class LibraryError(ReflibError):
    """The library file is missing, of an unsupported version, or inconsistent."""


class NotFoundError(ReflibError):
    """A compound or spectrum named by the user is not in the library."""
