"""What the plots and the HTML report share: the palette, the safety line, the output-path
checks, and the data and provenance of a stored spectrum. No matplotlib here."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from reflib.errors import ValidationError

#: Our palette: a dark ink for the sample, then a blue, an orange and a violet whose greyscale
#: lightness differs step by step (about 15, 40, 65 and 50 %), so references stay apart in a
#: greyscale print and for red-green colour-blind readers (blue against orange).
COLOURS = {
    "sample": "#1c1c1c",
    "ref": ("#2a63a6", "#c9640a", "#7a4b94", "#3d8a6e"),
    "link": "#6f6f6f",
    "new": "#c9640a",
    "missing": "#2a63a6",
    "mask_fill": "#d4d4d4",
    "mask_edge": "#8a8a8a",
    "text": "#1c1c1c",
    "muted": "#5c5c5c",
}
#: Line style of the trace in each reference panel (panels never overlap, the style is a second
#: cue beside the colour in overlays such as the leftover zooms).
LINESTYLES = ("-", "--", "-.", ":")

SAFETY = (
    "Chloroform, carbon tetrachloride and carbon disulfide are toxic; handle them under local "
    "safety rules."
)

#: Plot file formats by suffix.
PLOT_SUFFIXES = (".png", ".svg", ".pdf")
#: Report file suffixes.
REPORT_SUFFIXES = (".html", ".htm")
#: Figure size (inches) and PNG resolution: 12 x 8 inches at 100 dpi is 1200 x 800 pixels.
FIG_WIDTH_IN = 12.0
PNG_DPI = 100
#: At most this many hits are drawn in a search plot.
MAX_PLOT_HITS = 3

Data = Any  # reflib.spectrum.Spectrum | reflib.spectrum.PeakList (imported lazily)


# --- checks of the output paths ---------------------------------------------------------------


def check_plot_path(out: str | Path) -> Path:
    """``out`` as a Path, or a ValidationError when its suffix is not .png, .svg or .pdf."""
    p = Path(out)
    if p.suffix.lower() not in PLOT_SUFFIXES:
        raise ValidationError(
            f"--plot {p.name}: the file name must end in .png, .svg or .pdf "
            f"(got {p.suffix or 'no suffix'!r})"
        )
    return p


def check_report_path(out: str | Path) -> Path:
    """``out`` as a Path, or a ValidationError when its suffix is not .html."""
    p = Path(out)
    if p.suffix.lower() not in REPORT_SUFFIXES:
        raise ValidationError(
            f"--report {p.name}: the file name must end in .html (got {p.suffix or 'no suffix'!r})"
        )
    return p


def numbered(out: str | Path, k: int, n: int) -> Path:
    """``out`` itself when ``n == 1``, else ``out`` with ``-k`` before the suffix (k from 1).

    >>> str(numbered("crude.png", 2, 3))
    'crude-2.png'
    """
    p = Path(out)
    return p if n == 1 else p.with_name(f"{p.stem}-{k}{p.suffix}")


# --- data from a library --------------------------------------------------------------------


def reference_data(lib, spectrum_id: int) -> Data:
    """A stored spectrum's full data when the library has it, else its peak list."""
    full = lib.store.full_spectrum(int(spectrum_id))
    return full if full is not None else lib.store.peaks_of(int(spectrum_id))


def provenance_of(
    data: Data,
    *,
    prep: Iterable[str] | None = None,
    range_cm1: tuple[float, float] | None = None,
) -> dict[str, Any]:
    """What a report says about where a query came from: file name, SHA-256, preparation,
    wavenumber range (cm-1) and kind."""
    from reflib.spectrum import Spectrum

    m = data.meta
    d: dict[str, Any] = {
        "file": m.source_file,
        "sha256": m.sha256,
        "title": m.title,
        "prep": list(prep) if prep is not None else list(m.prep),
        "kind": "spectrum" if isinstance(data, Spectrum) else "peak list",
    }
    if range_cm1 is None and isinstance(data, Spectrum):
        range_cm1 = data.range_cm1
    if range_cm1 is not None:
        d["range_cm1"] = [round(float(range_cm1[0]), 1), round(float(range_cm1[1]), 1)]
    if isinstance(data, Spectrum):
        d["y"] = data.y_kind
    return d


# --- small helpers -------------------------------------------------------------------------


def range_of(items: Iterable[Data]) -> tuple[float, float]:
    from reflib.spectrum import Spectrum

    lo, hi = 400.0, 4000.0
    for d in items:
        if isinstance(d, Spectrum):
            lo, hi = max(lo, d.range_cm1[0]), min(hi, d.range_cm1[1])
    if hi <= lo:
        raise ValidationError(f"the spectra share no wavenumber range ({lo:.0f}-{hi:.0f} cm-1)")
    return lo, hi


def tokens_of(items: Iterable[Data], prep: Iterable[str] | str | None) -> list[str]:
    from reflib.chem import prep as prep_mod

    toks = list(prep_mod.parse_tokens(prep)) if prep else []
    for d in items:
        if d is not None:
            toks += prep_mod.parse_tokens(list(d.meta.prep))
    return list(dict.fromkeys(toks))


def pct(v: float | None) -> str:
    return "-" if v is None else f"{100 * v:.1f} %"


def name_of(data: Data, info: Mapping[str, Any] | None = None) -> str:
    if info and info.get("name"):
        return str(info["name"])
    return str(data.meta.title or data.meta.source_file or "sample")
