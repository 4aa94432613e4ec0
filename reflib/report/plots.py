"""Pictures and self-contained HTML reports of searches, comparisons, leftover and mixture checks.

Every plot shares one layout: panels stacked top to bottom on one wavenumber axis (cm-1) that
runs from high to low wavenumber, as infrared spectra are drawn in the trade; the sample (the
unknown) on top, the references below it. Between the unknown and each reference a thin *band
ladder* links the bands that matched (upper row: the sample's band, lower row: the reference's),
marks the sample's bands the reference lacks (open triangle) and the reference's bands the sample
lacks (cross). Regions the preparations or the air spoil are hatched (dense: dropped, open:
down-weighted) and lettered; the key under the plot gives each letter's range and reason. Colour
is never the only cue: traces sit in their own panels, markers differ in shape, and the palette
(:data:`COLOURS`) keeps its steps apart in luminance, so a greyscale print reads the same.

matplotlib is imported only when a picture is drawn, with the non-interactive Agg backend. Each
``plot_*`` function writes ``out`` (format by suffix: .png, .svg, .pdf) and returns its path, or
returns the SVG text when ``out`` is None. :func:`html_report` wraps that SVG, the tables and the
query's provenance into one HTML file that needs no network and no scripts; all text is escaped.

Example (with a library ``lib`` and an unknown ``query``)::

    res = lib.search(query, prep="nujol")
    refs = {h.spectrum_id: reference_data(lib, h.spectrum_id) for h in res.hits}
    plot_search(res, query, refs, "crude.png")
    svg = plot_search(res, query, refs)  # out=None: the SVG text
    html_report("search", res, svg, provenance_of(query), "crude.html")
"""

from __future__ import annotations

import textwrap
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from reflib.errors import ValidationError
from reflib.report.common import (
    COLOURS,
    FIG_WIDTH_IN,
    LINESTYLES,
    MAX_PLOT_HITS,
    PNG_DPI,
    Data,
    check_plot_path,
    name_of,
    pct,
    range_of,
    tokens_of,
)

# --- matplotlib, lazily --------------------------------------------------------------------------


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


_RC = {
    "font.size": 9.5,
    "axes.labelsize": 10,
    "axes.titlesize": 10,
    "xtick.labelsize": 9,
    "ytick.labelsize": 8.5,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.linewidth": 0.7,
    "xtick.major.width": 0.7,
    "ytick.major.width": 0.7,
    "lines.linewidth": 1.0,
    "hatch.linewidth": 0.6,
    "svg.fonttype": "none",
    "pdf.fonttype": 42,
}


def _save(fig, out: str | Path | None) -> str | Path:
    plt = _plt()
    try:
        if out is None:
            import io

            buf = io.StringIO()
            fig.savefig(buf, format="svg", metadata={"Date": None})
            return buf.getvalue()
        p = check_plot_path(out)
        fmt = p.suffix.lower()[1:]
        meta = {"svg": {"Date": None}, "pdf": {"CreationDate": None}}.get(fmt)
        fig.savefig(p, format=fmt, dpi=PNG_DPI, metadata=meta)
        return p
    finally:
        plt.close(fig)


# --- traces ------------------------------------------------------------------------------------


@dataclass
class _Trace:
    x: Any  # cm-1 ascending
    y: Any  # absorbance, or transmittance in percent
    sticks: bool  # a peak list drawn as sticks
    down: bool  # bands point down (transmittance)
    ylabel: str


def _trace(data: Data, y: str) -> _Trace:
    import numpy as np

    from reflib.spectrum import PeakList, Spectrum

    if y not in ("absorbance", "transmittance"):
        raise ValidationError(f"y must be 'absorbance' or 'transmittance', got {y!r}")
    if isinstance(data, Spectrum):
        if y == "absorbance":
            s = data.to_absorbance()
            return _Trace(s.x, s.y, False, False, "absorbance")
        s = data.to_transmittance()
        return _Trace(s.x, 100.0 * s.y, False, True, "transmittance (%)")
    if isinstance(data, PeakList):
        rel = np.asarray(data.intensities, float)
        if y == "absorbance":
            return _Trace(data.positions, rel, True, False, "relative (peak list)")
        # a band of relative intensity r drawn as absorbance r: T = 10^-r
        return _Trace(data.positions, 100.0 * 10.0 ** (-rel), True, True, "%T (peak list)")
    raise ValidationError(f"expected a Spectrum or PeakList to draw, got {type(data).__name__}")


def _tip(tr: _Trace, pos: float, reach: float = 6.0) -> float:
    """The trace's value at a band's tip near ``pos`` (cm-1): the extreme within ``reach``."""
    import numpy as np

    x, y = tr.x, tr.y
    if tr.sticks:
        if len(x) == 0:
            return 0.0
        i = int(np.argmin(np.abs(x - pos)))
        return float(y[i]) if abs(x[i] - pos) <= reach else (100.0 if tr.down else 0.0)
    m = (x >= pos - reach) & (x <= pos + reach)
    if not m.any():
        return float(np.interp(pos, x, y))
    return float(y[m].min() if tr.down else y[m].max())


# --- masked regions ------------------------------------------------------------------------------


@dataclass
class _Mask:
    lo: float
    hi: float
    reason: str
    weight: float
    letter: str

    @property
    def words(self) -> str:
        if self.weight <= 0:
            return "dropped"
        return f"weight x{self.weight:.1f}"


def _masks(masked: Iterable[tuple[float, float, str]], tokens: Iterable[str]) -> list[_Mask]:
    import numpy as np

    from reflib.chem import prep as prep_mod

    toks = list(tokens)
    out = []
    for k, (lo, hi, why) in enumerate(sorted(masked, key=lambda m: -m[1])):
        grid = np.linspace(lo, hi, 25)
        w = float(prep_mod.weight_profile(grid, toks, air=True, taper_cm1=0.0).max())
        out.append(_Mask(float(lo), float(hi), str(why), w, _letter(k)))
    return out


def _letter(k: int) -> str:
    s = ""
    k += 1
    while k:
        k, r = divmod(k - 1, 26)
        s = chr(97 + r) + s
    return s


def _shade(ax, masks: Sequence[_Mask]) -> None:
    """Hatch the masked regions: dense for dropped and strongly down-weighted (weight < 0.5),
    none for lightly down-weighted ones (those are only in the strip and the key)."""
    for m in masks:
        if m.weight >= 0.5:
            continue
        ax.axvspan(
            m.lo,
            m.hi,
            facecolor=COLOURS["mask_fill"] if m.weight <= 0 else "none",
            edgecolor=COLOURS["mask_edge"],
            hatch="////" if m.weight <= 0 else "//",
            linewidth=0.0,
            alpha=0.55 if m.weight <= 0 else 0.8,
            zorder=0.5,
        )


def _mask_strip(ax, masks: Sequence[_Mask]) -> None:
    """A thin strip above the plot: one bar per masked region, its letter above the bar."""
    ax.set_ylim(0, 1)
    ax.set_yticks([])
    for side in ("left", "bottom", "top", "right"):
        ax.spines[side].set_visible(False)
    ax.tick_params(axis="x", which="both", bottom=False, labelbottom=False)
    for m in masks:
        dense = m.weight < 0.5
        ax.axvspan(
            m.lo,
            m.hi,
            ymin=0.05,
            ymax=0.45,
            facecolor=COLOURS["mask_fill"] if m.weight <= 0 else "white",
            edgecolor=COLOURS["mask_edge"],
            hatch="////" if dense else "..",
            linewidth=0.6,
        )
        ax.text(
            0.5 * (m.lo + m.hi),
            0.55,
            m.letter,
            ha="center",
            va="bottom",
            fontsize=8.5,
            color=COLOURS["muted"],
        )
    if masks:
        ax.text(
            0.0,
            0.5,
            "masked ",
            transform=ax.transAxes,
            ha="right",
            va="center",
            fontsize=8,
            color=COLOURS["muted"],
        )


def _key_lines(masks: Sequence[_Mask], width: int = 72) -> list[list[str]]:
    """The key's entries, each a list of lines (the reason wrapped under its head)."""
    entries = []
    for m in masks:
        lines = []
        head = f"{m.letter}  {m.hi:.0f}-{m.lo:.0f} cm-1 ({m.words}): "
        body = textwrap.wrap(
            m.reason, width=width - len(head), break_long_words=False, break_on_hyphens=False
        )
        lines.append(head + (body[0] if body else ""))
        lines += [" " * len(head) + b for b in body[1:]]
        entries.append(lines)
    return entries


# --- layout ------------------------------------------------------------------------------------


@dataclass
class _Layout:
    fig: Any
    strip: Any
    axes: list  # row axes in order (panels and ladders)
    kinds: list  # "panel" or "ladder" per row
    note_y: float  # figure y of the line under the x axis (for a note at the right)


def _layout(rows: Sequence[str], masks: Sequence[_Mask], title_lines: int, xlim) -> _Layout:
    """Stacked rows (``"panel"`` or ``"ladder"``) on one reversed wavenumber axis, a mask strip
    on top, the mask key (two columns) at the bottom."""
    plt = _plt()
    key = _key_lines(masks)
    n_lines = sum(len(e) for e in key)
    cols: tuple[list[str], list[str]] = ([], [])
    for e in key:  # whole entries, the first column filled to about half the lines
        cols[0 if len(cols[0]) < (n_lines + 1) // 2 else 1].extend(e)
    half = max(len(cols[0]), len(cols[1]))
    heights = {"panel": 1.0, "tall": 2.3, "ladder": 0.34}
    total_rows = sum(heights[r] for r in rows)
    top_in = 0.32 + 0.2 * title_lines + 0.3  # title and the strip
    key_in = 0.68 + 0.155 * half if key else 0.62
    body_in = max(4.2, 1.45 * total_rows)
    height = min(top_in + body_in + key_in, 8.0)
    body_in = height - top_in - key_in
    fig = plt.figure(figsize=(FIG_WIDTH_IN, height))
    left, right = 0.075, 0.985
    bottom = key_in / height
    top = 1.0 - (0.32 + 0.2 * title_lines) / height
    strip_h = 0.3 / height
    strip = fig.add_axes((left, top - strip_h, right - left, strip_h))
    gs = fig.add_gridspec(
        len(rows),
        1,
        left=left,
        right=right,
        bottom=bottom,
        top=top - strip_h,
        height_ratios=[heights[r] for r in rows],
        hspace=0.08,
    )
    axes = []
    for i, _r in enumerate(rows):
        ax = fig.add_subplot(gs[i, 0], sharex=strip)
        axes.append(ax)
    strip.set_xlim(*xlim)  # high to low wavenumber
    _mask_strip(strip, masks)
    kinds = ["ladder" if r == "ladder" else "panel" for r in rows]
    for i, (ax, kind) in enumerate(zip(axes, kinds)):
        _shade(ax, masks)
        last = i == len(axes) - 1
        if kind == "ladder":
            ax.set_ylim(0, 1)
            ax.set_yticks([])
            ax.spines["left"].set_visible(False)
            ax.spines["bottom"].set_visible(False)
            ax.tick_params(axis="x", which="both", bottom=False, labelbottom=False)
        else:
            ax.tick_params(axis="x", which="both", labelbottom=last)
            ax.grid(False)
        if last:
            from matplotlib.ticker import MultipleLocator

            ax.xaxis.set_major_locator(MultipleLocator(500))
            ax.xaxis.set_minor_locator(MultipleLocator(100))
            ax.set_xlabel("wavenumber (cm\u207b\u00b9)")
    if key:
        for c, lines in enumerate(cols):
            fig.text(
                left + c * 0.46,
                (key_in - 0.62) / height,
                "\n".join(lines),
                ha="left",
                va="top",
                fontsize=7.8,
                family="DejaVu Sans Mono",
                color=COLOURS["muted"],
            )
        fig.text(
            left,
            (key_in - 0.58) / height,
            "masked or down-weighted regions (letters above):",
            ha="left",
            va="bottom",
            fontsize=8,
            color=COLOURS["muted"],
        )
    return _Layout(fig, strip, axes, kinds, (key_in - 0.58) / height)


def _note(lay: _Layout, text: str) -> None:
    """A one-line note under the x axis, right-aligned."""
    lay.fig.text(
        0.985, lay.note_y, text, ha="right", va="bottom", fontsize=8, color=COLOURS["muted"]
    )


def _title(fig, lines: Sequence[str]) -> None:
    h = fig.get_figheight()
    for i, line in enumerate(lines):
        fig.text(
            0.075,
            1.0 - (0.14 + 0.22 * i) / h,
            line,
            ha="left",
            va="top",
            fontsize=11.5 if i == 0 else 9.5,
            weight="bold" if i == 0 else "normal",
            color=COLOURS["text"],
        )


def _draw(
    ax,
    tr: _Trace,
    colour: str,
    style: str,
    masks: Sequence[_Mask],
    xlim,
    label: str | None,
    *,
    headroom: float = 0.3,
    ylabel: str | None = None,
) -> float:
    """One trace in its panel, y limits from the part outside dropped regions (a saturated
    solvent band or the mull oil does not squash the rest), its label at the top left.
    ``headroom`` is the space above the bands (below, for transmittance) as a fraction of the
    data's span, for labels. Returns the extreme of the data (top for absorbance, bottom
    for transmittance)."""
    import numpy as np

    hi_x, lo_x = xlim
    if tr.sticks:
        base = 100.0 if tr.down else 0.0
        ax.vlines(tr.x, base, tr.y, colors=colour, linewidth=1.3, linestyles=style)
        ax.axhline(base, color=colour, linewidth=0.5)
        vals = np.asarray(tr.y)
    else:
        ax.plot(tr.x, tr.y, color=colour, linestyle=style, linewidth=0.9)
        keep = (tr.x >= lo_x) & (tr.x <= hi_x)
        for m in masks:  # dropped regions (mull oil, opaque solvent) do not set the scale
            if m.weight <= 0:
                keep &= ~((tr.x >= m.lo) & (tr.x <= m.hi))
        vals = np.asarray(tr.y)[keep] if keep.any() else np.asarray(tr.y)
    if tr.down:
        lo = min(float(vals.min()) if vals.size else 0.0, 100.0)
        top = max(100.0, float(np.percentile(vals, 99.8)) if vals.size else 100.0)
        span = max(top - lo, 1.0)
        ax.set_ylim(lo - headroom * span, top + 0.04 * span)
        extreme = lo
    else:
        top = float(vals.max()) if vals.size else 1.0
        bot = min(0.0, float(np.percentile(vals, 0.2)) if vals.size else 0.0)
        span = max(top - bot, 1e-6)
        ax.set_ylim(bot - 0.04 * span, top + headroom * span)
        extreme = top
    ax.set_ylabel(ylabel or tr.ylabel, fontsize=8.5, color=COLOURS["muted"])
    # no tick marks in the empty space kept for labels
    d_lo, d_hi = (lo, top) if tr.down else (bot, top)
    pad = 0.05 * (d_hi - d_lo)
    ax.set_yticks([t for t in ax.get_yticks() if d_lo - pad <= t <= d_hi + pad])
    if label:  # where the trace is empty: above the bands, below them for transmittance
        ax.text(
            0.006,
            0.06 if tr.down else 0.95,
            label,
            transform=ax.transAxes,
            ha="left",
            va="bottom" if tr.down else "top",
            fontsize=9.5,
            color=colour,
            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.85, "pad": 1.5},
        )
    return extreme


def _band_labels(
    ax,
    tr: _Trace,
    extreme: float,
    items: Sequence[tuple[float, str | Sequence[str], str]],
    fontsize=7.8,
) -> None:
    """Rotated labels in the space above the bands (below for transmittance), spread apart so
    that they do not overlap and shortened word by word until they fit; a thin leader joins
    each label to its band's tip. ``items`` are (position cm-1, text, colour)."""
    if not items:
        return
    fig = ax.figure
    renderer = fig.canvas.get_renderer()
    x0, x1 = ax.get_xlim()  # x0 > x1 (reversed)
    bbox = ax.get_window_extent(renderer)
    px_per_cm = bbox.width / abs(x0 - x1)
    gap_cm = (fontsize * 1.5 * fig.dpi / 72.0) / px_per_cm
    order = sorted(items, key=lambda t: -t[0])  # left to right on the plot
    placed = _spread([p for p, _, _ in order], gap_cm, lo=min(x0, x1), hi=max(x0, x1))
    y0, y1 = ax.get_ylim()
    span = y1 - y0
    px_per_y = bbox.height / span
    anchor = y0 + 0.01 * span if tr.down else y1 - 0.01 * span
    xs, ys = _plotted(tr)
    for (p, texts, colour), px in zip(order, placed):
        variants = [texts] if isinstance(texts, str) else list(texts)
        # room down to the highest point of the trace near the band and the label (up, for
        # transmittance), so a label over a weak band may be longer
        near_x = (xs >= min(p, px) - gap_cm) & (xs <= max(p, px) + gap_cm)
        if near_x.any():
            local = float(ys[near_x].min() if tr.down else ys[near_x].max())
        else:
            local = _tip(tr, p)
        edge = local - 0.03 * span if tr.down else local + 0.03 * span
        room_px = abs(anchor - edge) * px_per_y
        t = ax.text(
            px,
            anchor,
            variants[0],
            rotation=90,
            ha="center",
            va="bottom" if tr.down else "top",
            fontsize=fontsize,
            color=colour,
        )
        for v in variants[1:]:
            if t.get_window_extent(renderer).height <= room_px:
                break
            t.set_text(v)
        length = t.get_window_extent(renderer).height / px_per_y
        end = anchor + length if tr.down else anchor - length
        tip = _tip(tr, p)
        near = tip - 0.02 * span if tr.down else tip + 0.02 * span
        bend = edge
        if (tr.down and bend > near) or (not tr.down and bend < near):
            bend = near
        if (tr.down and bend < end) or (not tr.down and bend > end):
            bend = end
        ax.plot([p, p, px], [near, bend, end], color=colour, linewidth=0.5, alpha=0.8)


def _plotted(tr: _Trace):
    """The points of a trace as drawn (sticks: their tips and the base line)."""
    import numpy as np

    return np.asarray(tr.x, float), np.asarray(tr.y, float)


def _variants(pos: float, annotation: str, word: str = "") -> list[str]:
    """Label texts from longest to shortest: position with every candidate group, with fewer,
    the position alone.

    >>> _variants(3306.0, "alkyne C-H? secondary amide N-H?")
    ['3306 alkyne C-H? secondary amide N-H?', '3306 alkyne C-H?', '3306']
    """
    head = f"{word} {pos:.0f}".strip()
    parts = [p.strip() + "?" for p in annotation.split("?") if p.strip()]
    out = [" ".join([head, *parts[:k]]) for k in range(len(parts), 0, -1)]
    return out + [head]


def _spread(xs: Sequence[float], gap: float, lo: float, hi: float) -> list[float]:
    """Positions as near ``xs`` (descending, cm-1) as possible, at least ``gap`` apart.

    >>> [round(v) for v in _spread([1000.0, 995.0, 500.0], 20.0, 400.0, 4000.0)]
    [1008, 988, 500]
    """
    import numpy as np

    n = len(xs)
    if n == 0:
        return []
    # work in ascending order of plot position (descending wavenumber = left to right)
    pos = np.array([-x for x in xs], float)
    for _ in range(200):
        moved = False
        for i in range(n - 1):
            d = pos[i + 1] - pos[i]
            if d < gap - 1e-9:
                push = (gap - d) / 2
                pos[i] -= push
                pos[i + 1] += push
                moved = True
        if not moved:
            break
    pos = np.clip(pos, -hi + gap / 2, -lo - gap / 2)
    return [float(-p) for p in pos]


def _ladder(ax, matched, new_top, missing_bottom, top_label: str, bottom_label: str, colour):
    """Band ladder: matched pairs joined (upper x = sample's band, lower x = reference's), the
    sample's bands the reference lacks as open triangles (top), the reference's bands the
    sample lacks as crosses (bottom)."""
    from matplotlib.collections import LineCollection

    segs = [((a, 0.8), (b, 0.2)) for a, b in matched]
    if segs:
        ax.add_collection(LineCollection(segs, colors=COLOURS["link"], linewidths=0.7))
        ax.plot(
            [a for a, _ in matched],
            [0.8] * len(matched),
            "|",
            color=COLOURS["sample"],
            markersize=5,
            markeredgewidth=0.8,
        )
        ax.plot(
            [b for _, b in matched],
            [0.2] * len(matched),
            "|",
            color=colour,
            markersize=5,
            markeredgewidth=0.8,
        )
    if new_top:
        ax.plot(
            new_top,
            [0.8] * len(new_top),
            "v",
            markerfacecolor="white",
            markeredgecolor=COLOURS["new"],
            markersize=6,
            markeredgewidth=1.1,
            linestyle="none",
        )
    if missing_bottom:
        ax.plot(
            missing_bottom,
            [0.2] * len(missing_bottom),
            "x",
            color=COLOURS["missing"],
            markersize=5.5,
            markeredgewidth=1.1,
            linestyle="none",
        )
    ax.text(
        -0.004,
        0.8,
        top_label,
        transform=ax.transAxes,
        ha="right",
        va="center",
        fontsize=7,
        color=COLOURS["muted"],
    )
    ax.text(
        -0.004,
        0.2,
        bottom_label,
        transform=ax.transAxes,
        ha="right",
        va="center",
        fontsize=7,
        color=colour,
    )


def _legend(fig, entries: Sequence[tuple[str, dict]]) -> None:
    """A one-line legend of the markers, top right."""
    from matplotlib.lines import Line2D

    handles = [Line2D([], [], linestyle="none", **kw) for _, kw in entries]
    fig.legend(
        handles,
        [t for t, _ in entries],
        loc="upper right",
        bbox_to_anchor=(0.985, 0.999),
        ncol=len(entries),
        frameon=False,
        fontsize=8,
        handletextpad=0.3,
        columnspacing=1.2,
    )


_LADDER_LEGEND = [
    ("matched (linked)", {"marker": "|", "color": COLOURS["link"], "markersize": 7}),
    (
        "only in the sample",
        {
            "marker": "v",
            "markerfacecolor": "white",
            "markeredgecolor": COLOURS["new"],
            "markersize": 6,
        },
    ),
    ("only in the reference", {"marker": "x", "color": COLOURS["missing"], "markersize": 6}),
]


def _xlim(range_cm1: tuple[float, float]) -> tuple[float, float]:
    lo, hi = float(range_cm1[0]), float(range_cm1[1])
    return (hi, lo)


# --- the four plots ------------------------------------------------------------------------------

#: Space above the bands of a panel that carries band labels (fraction of the data's span).
LABEL_HEADROOM = 1.25
#: At most this many of the top hit's matched bands get their position written on the unknown.
MATCHED_LABELS = 10


def _strongest(tr: _Trace, positions: Iterable[float], n: int) -> list[float]:
    def height(p: float) -> float:
        v = _tip(tr, p)
        return -v if tr.down else v

    return sorted(positions, key=height, reverse=True)[:n]


def plot_search(
    result,
    query: Data,
    references: Mapping[int, Data],
    out: str | Path | None = None,
    *,
    y: str = "absorbance",
    max_hits: int = MAX_PLOT_HITS,
) -> str | Path:
    """Draw an unknown against its top hits: one stacked panel per hit, band ladders between.

    Parameters
    ----------
    result:
        A :class:`reflib.analysis.search.SearchResult`.
    query:
        The unknown (Spectrum, or PeakList drawn as sticks).
    references:
        spectrum_id -> Spectrum (full spectrum when the library holds one) or PeakList; hits
        without an entry are left out of the plot.
    out:
        .png, .svg or .pdf path; None returns the SVG text.
    y:
        ``"absorbance"`` or ``"transmittance"`` (percent).
    max_hits:
        At most this many hits are drawn (default 3).

    The title gives the verdict, its reason and the top score. On the unknown, the bands some
    drawn hit lacks are labelled with their position and candidate groups (the hits'
    ``annotations``, orange), the strongest bands the top hit matched with their position
    (grey).
    """
    if max_hits < 1:
        raise ValidationError(f"max_hits must be at least 1, got {max_hits}")
    hits = [h for h in result.hits if h.spectrum_id in references][:max_hits]
    masks = _masks(result.masked, result.query_prep)
    xlim = _xlim(result.range_cm1)
    rows = ["tall"] + ["ladder", "panel"] * len(hits)
    qname = result.query_file or name_of(query)
    prep = ", ".join(result.query_prep) or "no preparation given"
    head = f"Search: {qname} ({prep})"
    line2 = f"verdict: {result.verdict} ({result.reason})"
    if hits:
        line2 += f"; top hit {hits[0].name}, score {hits[0].score:.3f}"
    with _rc():
        lay = _layout(rows, masks, 2, xlim)
        _title(lay.fig, [head, _clip(line2, 170)])
        qtr = _trace(query, y)
        ax_q = lay.axes[0]
        q_top = _draw(
            ax_q,
            qtr,
            COLOURS["sample"],
            "-",
            masks,
            xlim,
            None,
            headroom=LABEL_HEADROOM,
            ylabel=f"unknown\n{qtr.ylabel}",
        )
        labels: dict[float, tuple[str, str]] = {}
        for i, h in enumerate(hits):
            ax_l, ax_r = lay.axes[1 + 2 * i], lay.axes[2 + 2 * i]
            colour = COLOURS["ref"][i % len(COLOURS["ref"])]
            rtr = _trace(references[h.spectrum_id], y)
            ref_prep = ", ".join(h.prep) or "no preparation given"
            kind = "peak list" if rtr.sticks else "spectrum"
            label = (
                f"#{h.rank}  {h.name}   score {h.score:.3f}   ({ref_prep}; {kind} {h.spectrum_id})"
            )
            _draw(ax_r, rtr, colour, LINESTYLES[i % len(LINESTYLES)], masks, xlim, label)
            _ladder(ax_l, h.matched, list(h.new), list(h.missing), "unknown", f"#{h.rank}", colour)
            for n in h.new:
                ann = h.annotations.get(f"{n:.1f}", "")
                labels.setdefault(round(n, 1), (_variants(n, ann), COLOURS["new"]))
        if hits:
            for a in _strongest(qtr, [a for a, _ in hits[0].matched], MATCHED_LABELS):
                labels.setdefault(round(a, 1), (f"{a:.0f}", COLOURS["muted"]))
        _band_labels(ax_q, qtr, q_top, [(p, t, c) for p, (t, c) in labels.items()])
        _legend(lay.fig, _LADDER_LEGEND)
        _note(
            lay,
            "labels on the unknown: grey, bands #1 matched; orange, bands a hit lacks "
            "(with candidate groups)",
        )
        return _save(lay.fig, out)


def plot_compare(
    comparison, a: Data, b: Data, out: str | Path | None = None, *, y: str = "absorbance"
) -> str | Path:
    """Draw a band-by-band comparison: A on top, B below, a band ladder between.

    Lost bands (in A only) are labelled on A, new bands (in B only) on B, each with its
    position and candidate groups; the title's second line is the comparison's summary.
    ``out`` as in :func:`plot_search`.
    """
    masks = _masks(comparison.masked, comparison.prep)
    xlim = _xlim(comparison.range_cm1)
    name_a = name_of(a, comparison.a)
    name_b = name_of(b, comparison.b)
    head = f"Compare: A {name_a}  vs  B {name_b}"
    line2 = "; ".join(comparison.summary[:3])
    with _rc():
        lay = _layout(["tall", "ladder", "tall"], masks, 2, xlim)
        _title(lay.fig, [head, _clip(line2, 170)])
        ta, tb = _trace(a, y), _trace(b, y)
        top_a = _draw(
            lay.axes[0],
            ta,
            COLOURS["sample"],
            "-",
            masks,
            xlim,
            None,
            headroom=LABEL_HEADROOM,
            ylabel=f"A\n{ta.ylabel}",
        )
        top_b = _draw(
            lay.axes[2],
            tb,
            COLOURS["ref"][0],
            "-",
            masks,
            xlim,
            None,
            headroom=LABEL_HEADROOM,
            ylabel=f"B\n{tb.ylabel}",
        )
        _ladder(
            lay.axes[1],
            [(m.a, m.b) for m in comparison.matched],
            [n.position for n in comparison.lost],
            [n.position for n in comparison.new],
            "A",
            "B",
            COLOURS["ref"][0],
        )
        _band_labels(
            lay.axes[0],
            ta,
            top_a,
            [
                (n.position, _band_text(n.position, n.groups, "lost"), COLOURS["new"])
                for n in comparison.lost
            ],
        )
        _band_labels(
            lay.axes[2],
            tb,
            top_b,
            [
                (n.position, _band_text(n.position, n.groups, "new"), COLOURS["missing"])
                for n in comparison.new
            ],
        )
        _legend(
            lay.fig,
            [
                ("matched (linked)", _LADDER_LEGEND[0][1]),
                ("only in A (lost)", _LADDER_LEGEND[1][1]),
                ("only in B (new)", _LADDER_LEGEND[2][1]),
            ],
        )
        return _save(lay.fig, out)


def _band_text(pos: float, groups: Sequence[str], word: str) -> list[str]:
    # labels come from reflib.chem.groups and carry their own "?" where tentative
    return _variants(pos, "; ".join(groups[:2]), word)


def _clip(text: str, n: int) -> str:
    return text if len(text) <= n else text[: n - 3] + "..."


def plot_leftover(
    result,
    sample: Data,
    start: Data,
    product: Data | None = None,
    out: str | Path | None = None,
    *,
    y: str = "absorbance",
    prep: Iterable[str] | str | None = (),
) -> str | Path:
    """Draw a leftover check: the sample on top, the starting material and (when given) the
    pure product below; the starting material's diagnostic bands marked through every panel
    (filled diamond: seen in the sample above noise, open: not seen); the fitted share of the
    signal (or the upper bound) in the title. ``prep``: the sample's extra preparation tokens.
    ``out`` as in :func:`plot_search`.
    """
    from reflib.chem import prep as prep_mod

    items = [sample, start] + ([product] if product is not None else [])
    lo, hi = range_of(items)
    tokens = tokens_of(items, prep)
    masks = _masks(prep_mod.merged_regions(tokens, air=True, within=(lo, hi)), tokens)
    xlim = (hi, lo)
    sname = name_of(start, result.start)
    verdict = "DETECTED" if result.detected else "not detected"
    head = f"Leftover starting material {sname}: {verdict}"
    if result.share is not None:
        lo_s, hi_s = result.share_interval or (None, None)
        what = "fitted share" if product is not None else "share from its own bands"
        line2 = f"{what} of the signal {pct(result.share)} (95 %: {pct(lo_s)} - {pct(hi_s)})"
    else:
        line2 = "share not fitted" + (" (no pure product given)" if product is None else "")
    if result.upper_bound is not None:
        line2 += f"; upper bound {pct(result.upper_bound)}"
    line2 += f"; detection limit about {pct(result.detection_limit)}"
    rows = ["tall", "panel"] + (["panel"] if product is not None else [])
    start_colour = COLOURS["ref"][1]
    with _rc():
        lay = _layout(rows, masks, 2, xlim)
        _title(lay.fig, [head, line2])
        ts = _trace(sample, y)
        s_top = _draw(
            lay.axes[0],
            ts,
            COLOURS["sample"],
            "-",
            masks,
            xlim,
            None,
            headroom=0.45,
            ylabel=f"sample\n{ts.ylabel}",
        )
        tst = _trace(start, y)
        _draw(
            lay.axes[1],
            tst,
            start_colour,
            LINESTYLES[1],
            masks,
            xlim,
            f"starting material: {sname}",
        )
        if product is not None:
            _draw(
                lay.axes[2],
                _trace(product, y),
                COLOURS["ref"][0],
                "-",
                masks,
                xlim,
                f"product: {name_of(product, result.product)}",
            )
        for band in result.diagnostic_bands:
            for ax in lay.axes[1:]:  # on the sample, the label's leader marks the band
                ax.axvline(
                    band.position,
                    color=start_colour,
                    linestyle=(0, (4, 3)),
                    linewidth=0.7,
                    alpha=0.9,
                    zorder=0.8,
                )
            lay.axes[1].plot(
                [band.position], [_tip(tst, band.position)], "D", color=start_colour, markersize=4
            )
            lay.axes[0].plot(
                [band.position],
                [_tip(ts, band.position)],
                "D",
                markersize=5,
                markerfacecolor=start_colour if band.seen else "white",
                markeredgecolor=start_colour,
                markeredgewidth=1.0,
            )
        _band_labels(
            lay.axes[0],
            ts,
            s_top,
            [
                (b.position, f"{b.position:.0f} {'seen' if b.seen else 'not seen'}", start_colour)
                for b in result.diagnostic_bands
            ],
            fontsize=8.5,
        )
        _legend(
            lay.fig,
            [
                (
                    "starting material's diagnostic band, seen in the sample",
                    {"marker": "D", "color": start_colour, "markersize": 5},
                ),
                (
                    "not seen",
                    {
                        "marker": "D",
                        "markerfacecolor": "white",
                        "markeredgecolor": start_colour,
                        "markersize": 5,
                    },
                ),
            ],
        )
        return _save(lay.fig, out)


def plot_mixture(
    result,
    sample: Data,
    components: Mapping[Any, Data],
    out: str | Path | None = None,
    *,
    y: str = "absorbance",
    prep: Iterable[str] | str | None = (),
) -> str | Path:
    """Draw a mixture explanation: the sample on top, each chosen component below with its share
    of the signal; the strong bands nothing explains labelled on the sample with their candidate
    groups. ``components`` maps a component's spectrum_id (or name) to its data. ``out`` as in
    :func:`plot_search`.
    """
    from reflib.chem import prep as prep_mod

    comps = []
    for c in result.components:
        key = c.info.get("spectrum_id")
        data = components.get(key) if key is not None else None
        if data is None:
            data = components.get(c.info.get("name"))
        if data is not None:
            comps.append((c, data))
    items = [sample] + [d for _, d in comps]
    lo, hi = range_of(items)
    tokens = tokens_of([sample], prep)
    masks = _masks(prep_mod.merged_regions(tokens, air=True, within=(lo, hi)), tokens)
    xlim = (hi, lo)
    head = f"Mixture: {name_of(sample)}"
    parts = " + ".join(f"{pct(c.share)} {c.info.get('name')}" for c, _ in comps) or "nothing"
    line2 = f"explained {pct(result.explained)} of the absorbance: {parts}"
    with _rc():
        lay = _layout(["tall"] + ["panel"] * len(comps), masks, 2, xlim)
        _title(lay.fig, [head, _clip(line2, 170)])
        ts = _trace(sample, y)
        s_top = _draw(
            lay.axes[0],
            ts,
            COLOURS["sample"],
            "-",
            masks,
            xlim,
            None,
            headroom=LABEL_HEADROOM,
            ylabel=f"sample\n{ts.ylabel}",
        )
        for i, (c, data) in enumerate(comps):
            colour = COLOURS["ref"][i % len(COLOURS["ref"])]
            _draw(
                lay.axes[1 + i],
                _trace(data, y),
                colour,
                LINESTYLES[i % len(LINESTYLES)],
                masks,
                xlim,
                f"{pct(c.share)} of the signal: {c.info.get('name')}",
            )
        for u in result.unexplained:
            lay.axes[0].plot(
                [u.position],
                [_tip(ts, u.position)],
                "v",
                markersize=6,
                markerfacecolor="white",
                markeredgecolor=COLOURS["new"],
            )
        _band_labels(
            lay.axes[0],
            ts,
            s_top,
            [
                (u.position, _band_text(u.position, u.groups, "unexplained"), COLOURS["new"])
                for u in result.unexplained
            ],
        )
        return _save(lay.fig, out)


class _rc:
    """matplotlib rc settings of every reflib plot, for the duration of one drawing."""

    def __enter__(self):
        _plt()
        import matplotlib

        self._ctx = matplotlib.rc_context(_RC)
        self._ctx.__enter__()
        return self

    def __exit__(self, *exc):
        return self._ctx.__exit__(*exc)


def plot_series(result, out: str | Path | None = None) -> str | Path:
    """Draw a leftover series (:class:`reflib.analysis.series.SeriesResult`): the share of the
    signal against measuring time (hours) or order, with 95 % intervals; samples where the
    starting material was not detected are drawn as open markers at their upper bound, with the
    detection limit as a dotted line. ``out`` as in :func:`plot_search`."""
    docs = result.to_dicts()
    summary = docs[-1]
    x = summary["x"]
    with _rc():
        plt = _plt()
        fig, ax = plt.subplots(figsize=(7.0, 3.8))
        colour = COLOURS["ref"][1]
        for xi, d in zip(x, docs[:-1]):
            if d["detected"] and d["share"] is not None:
                lo, hi = d["share_interval"]
                s = 100 * d["share"]
                ax.errorbar(
                    [xi], [s], yerr=[[s - 100 * lo], [100 * hi - s]], fmt="o", color=colour,
                    capsize=3, ms=5,
                )  # fmt: skip
            elif d["upper_bound"] is not None:
                ax.plot([xi], [100 * d["upper_bound"]], "v", mfc="none", color=COLOURS["muted"])
        ax.plot(
            x, [100 * d["detection_limit"] for d in docs[:-1]], ":", color=COLOURS["muted"],
            label="detection limit",
        )  # fmt: skip
        ax.set_xlabel("hours since the first sample" if summary["x_unit"] == "hours" else "sample")
        if summary["x_unit"] != "hours":
            ax.set_xticks(x)
            ax.set_xticklabels([_clip(f, 14) for f in summary["files"]], rotation=30, ha="right")
        ax.set_ylabel("starting material, % of the signal")
        ax.set_ylim(bottom=0)
        trend = summary["trend"]
        if summary["below_limit_from"]:
            trend += f"; below the detection limit from {summary['below_limit_from']}"
        name = docs[0]["start"].get("name") or "starting material"
        ax.set_title(
            f"Leftover {_clip(str(name), 40)}: {trend}\n"
            "filled: detected (95 % interval); open: not detected, drawn at its upper bound",
            fontsize=9,
        )
        ax.legend(loc="upper right", frameon=False, fontsize=8)
        fig.tight_layout()
        return _save(fig, out)
