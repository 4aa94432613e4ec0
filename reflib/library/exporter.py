"""Write a library's spectra out as files: JCAMP-DX (full spectra or peak tables) or CSV."""

from __future__ import annotations

import re
from pathlib import Path

from reflib.errors import ValidationError

FORMATS = ("jcamp", "csv")


def safe_stem(name: str) -> str:
    """A file-name-safe version of a compound name."""
    s = re.sub(r"[^A-Za-z0-9._+-]+", "_", name).strip("._")
    return s[:80] or "compound"


def export_library(lib, dest: str | Path, fmt: str = "jcamp") -> int:
    """Write every stored spectrum into ``dest``; returns the number of files written."""
    from reflib.io.delimited import write_delimited, write_peak_table
    from reflib.io.jcamp import write_jcamp

    if fmt not in FORMATS:
        raise ValidationError(f"unknown export format {fmt!r}; use one of {', '.join(FORMATS)}")
    out = Path(dest)
    out.mkdir(parents=True, exist_ok=True)
    n = 0
    for c in lib.compounds():
        for s in lib.store.spectra_of(int(c["id"])):
            sid = int(s["id"])
            full = lib.store.full_spectrum(sid)
            obj = full if full is not None else lib.peaks(sid)
            obj.meta.title = c["name"]
            stem = f"{safe_stem(c['name'])}-{sid}"
            if fmt == "jcamp":
                text = write_jcamp(obj)
                path = out / f"{stem}.jdx"
            elif full is not None:
                text = write_delimited(full)
                path = out / f"{stem}.csv"
            else:
                text = write_peak_table(obj)  # with a label column when the author gave labels
                path = out / f"{stem}-peaks.csv"
            path.write_text(text, encoding="utf-8")
            n += 1
    return n
