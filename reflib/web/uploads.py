"""Uploaded spectra, read from the bytes of the request: an upload's file name is shown as
text and never used as a path (nothing is written to disk)."""

from __future__ import annotations

import hashlib
import re
from typing import Any

from reflib.errors import ReadError, ValidationError

#: Characters kept of an upload's name when it is shown (everything else becomes ``_``).
_SAFE = re.compile(r"[^A-Za-z0-9._+ -]")


class TooLarge(Exception):
    """An upload over the server's limit (answered with 413)."""


def display_name(filename: str | None) -> str:
    """The last path part of an upload's name, reduced to safe characters, for display only."""
    name = re.split(r"[\\/]", str(filename or ""))[-1].strip()
    name = _SAFE.sub("_", name)[:120].lstrip(".")
    return name or "upload"


def parse_upload(data: bytes, filename: str | None) -> Any:
    """The one spectrum or peak list in uploaded bytes (the checks of ``reflib.io``)."""
    from reflib.io import parse_all

    name = display_name(filename)
    if not data.strip():
        raise ReadError("file is empty", path=name)
    if b"\x00" in data[:4096]:
        raise ReadError(
            "binary file; reflib reads JCAMP-DX, delimited text and peak lists", path=name
        )
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = data.decode("latin-1")
    objs = parse_all(text, source=name)
    if len(objs) != 1:
        raise ReadError(f"holds {len(objs)} infrared blocks; upload one at a time", path=name)
    obj = objs[0]
    obj.meta.source_file = name
    obj.meta.sha256 = hashlib.sha256(data).hexdigest()
    return obj


async def read_form(request, limit: int) -> tuple[dict[str, str], tuple[bytes, str] | None]:
    """The text fields and the ``file`` part (bytes, name) of a multipart or url-encoded form."""
    length = request.headers.get("content-length")
    if length and length.isdigit() and int(length) > limit:
        raise TooLarge()
    try:
        form = await request.form(max_files=1, max_fields=50, max_part_size=limit)
    except TooLarge:
        raise
    except Exception as exc:  # Starlette's multipart errors: a bad request, not a bug
        if "too large" in str(exc).lower() or "exceed" in str(exc).lower():
            raise TooLarge() from None
        raise ValidationError(f"cannot read the form: {exc}") from None
    fields: dict[str, str] = {}
    upload = None
    for key, value in form.multi_items():
        if hasattr(value, "read"):
            if key == "file" and value.filename:
                data = await value.read()
                if len(data) > limit:
                    raise TooLarge()
                if data:
                    upload = (data, value.filename)
        else:
            fields[key] = str(value)
    await form.close()
    return fields, upload


def need_file(upload: tuple[bytes, str] | None) -> Any:
    if upload is None:
        raise ValidationError("choose a spectrum file to upload (form field 'file')")
    return parse_upload(*upload)
