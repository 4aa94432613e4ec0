"""Reading and writing spectra and peak lists.

:func:`read_spectrum` and :func:`read_all` decide the format from the content, never from the
file name: JCAMP-DX (labelled records starting ``##``), a typed peak list as chemists write it
(``3350 (br), 1715 (s) cm-1``), or delimited columns (CSV, TSV, semicolon, whitespace).
"""

from __future__ import annotations

import hashlib
import os
import re
from pathlib import Path

from reflib.errors import ReadError
from reflib.spectrum import PeakList, Spectrum

#: Files larger than this are refused before they are read (bytes).
MAX_FILE_BYTES = 64 * 1024 * 1024

_JCAMP_LABEL = re.compile(r"^\s*##[^=\n]*=", re.MULTILINE)

Readable = Spectrum | PeakList


def read_bytes(path: str | Path) -> bytes:
    """The bytes of a file, with clear errors for the usual mistakes (one open, one read)."""
    p = Path(path)
    try:
        with open(p, "rb") as fh:
            size = os.fstat(fh.fileno()).st_size
            if size > MAX_FILE_BYTES:
                raise ReadError(
                    f"file is {size / 1e6:.0f} MB; reflib reads spectra up to "
                    f"{MAX_FILE_BYTES // 2**20} MB",
                    path=p,
                )
            return fh.read()
    except FileNotFoundError:
        raise ReadError("no such file", path=p) from None
    except IsADirectoryError:
        raise ReadError("is a folder, not a file", path=p) from None
    except OSError as exc:
        if p.is_dir():
            raise ReadError("is a folder, not a file", path=p) from None
        raise ReadError(f"cannot read: {exc.strerror or exc}", path=p) from None


def _decode(data: bytes, path: Path) -> tuple[str, str]:
    """(text, sha256 hex) of a file's bytes, refusing an empty or binary file."""
    if not data.strip():
        raise ReadError("file is empty", path=path)
    if b"\x00" in data[:4096]:
        raise ReadError(
            "binary file; reflib reads JCAMP-DX, delimited text and peak lists", path=path
        )
    digest = hashlib.sha256(data).hexdigest()
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = data.decode("latin-1")
    return text, digest


#: File name endings of JCAMP-DX. The content decides the reader; these only let an error
#: say that a file so named is not JCAMP-DX.
JCAMP_SUFFIXES = frozenset({".jdx", ".dx", ".jcamp", ".jcm"})


def sniff_format(text: str) -> str:
    """Name the format of ``text``: ``'jcamp'``, ``'peaktext'`` or ``'delimited'``."""
    from reflib.io import peaktext

    if _JCAMP_LABEL.search(text[:20000]):
        return "jcamp"
    if peaktext.looks_like_peak_text(text):
        return "peaktext"
    return "delimited"


def parse_all(text: str, *, source: str | None = None, y_kind: str | None = None) -> list[Readable]:
    """Parse text of any supported format into every infrared block it holds."""
    fmt = sniff_format(text)
    if fmt == "jcamp":
        from reflib.io import jcamp

        return jcamp.parse_jcamp(text, source=source)
    if fmt == "peaktext":
        from reflib.io import peaktext

        return list(peaktext.parse_peak_texts(text, source=source))
    from reflib.io import delimited

    return [delimited.parse_delimited(text, source=source, y_kind=y_kind)]


def _stamp(objs: list[Readable], path: Path, digest: str) -> list[Readable]:
    for obj in objs:
        obj.meta.source_file = path.name
        obj.meta.sha256 = digest
    return objs


def read_all(
    path: str | Path, *, y_kind: str | None = None, data: bytes | None = None
) -> list[Readable]:
    """Every infrared spectrum or peak list in a file (several for a JCAMP-DX LINK file, or a
    characterisation line with two IR segments).

    ``y_kind`` ('absorbance' or 'transmittance') overrides the detection for delimited columns;
    ``data`` is the file's content when it was already read (:func:`read_bytes`: an import
    hashes and parses the same bytes). Raises :class:`~reflib.errors.ReadError` naming the
    file (and line, where known).
    """
    if data is None:
        data = read_bytes(path)
    p = Path(path)
    text, digest = _decode(data, p)
    try:
        objs = parse_all(text, source=str(p), y_kind=y_kind)
    except ReadError as exc:
        if exc.path is None:
            exc.path = str(p)
        if p.suffix.lower() in JCAMP_SUFFIXES and sniff_format(text) != "jcamp":
            exc.message += (  # the content decides the reader; the name only explains
                f" (the name ends in {p.suffix}, but the file holds no JCAMP-DX labels such as "
                "##TITLE=: a truncated file, or another format renamed?)"
            )
            exc.args = (exc.message,)
        raise
    return _stamp(objs, p, digest)


def read_spectrum(
    path: str | Path, *, y_kind: str | None = None, data: bytes | None = None
) -> Readable:
    """The one infrared spectrum or peak list in a file (``data``: its bytes, if already read).

    A file holding several infrared blocks is refused (use :func:`read_all`): reflib does not
    guess which one was meant. Example: ``read_spectrum("crude-42.jdx").range_cm1``.
    """
    objs = read_all(path, y_kind=y_kind, data=data)
    if len(objs) != 1:
        titles = "; ".join(
            o.meta.title or o.meta.extra.get("ir_segment") or "(untitled)" for o in objs
        )
        raise ReadError(
            f"holds {len(objs)} infrared blocks ({titles}); read them with read_all() "
            "or split the file",
            path=path,
        )
    return objs[0]


__all__ = [
    "read_spectrum",
    "read_all",
    "read_bytes",
    "parse_all",
    "sniff_format",
    "MAX_FILE_BYTES",
]
