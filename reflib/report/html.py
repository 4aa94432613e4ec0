"""The self-contained HTML report: inline SVG, tables, the query's provenance and the
caution, with every text escaped. No network, no scripts."""

from __future__ import annotations

import html
import re
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

from reflib.errors import ValidationError
from reflib.report.common import SAFETY, check_report_path, pct

# --- the HTML report -----------------------------------------------------------------------------

_CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;color:#1c1c1c;max-width:1240px;
margin:1.2em auto;padding:0 1em;line-height:1.4}
h1{font-size:1.35em;margin:.2em 0}h2{font-size:1.1em;margin:1.2em 0 .3em}
table{border-collapse:collapse;margin:.3em 0;font-size:.92em}
th,td{border-bottom:1px solid #ccc;padding:.2em .6em;text-align:left;vertical-align:top}
th{border-bottom:2px solid #555}td.num{text-align:right;font-variant-numeric:tabular-nums}
.verdict{font-size:1.1em;padding:.4em .7em;border-left:5px solid #2a63a6;background:#f2f5f9}
.caution{border:1px solid #c9640a;padding:.5em .8em;background:#fdf6ee}
figure{margin:.5em 0}figure svg{width:100%;height:auto}
code{font-family:ui-monospace,'DejaVu Sans Mono',monospace}
"""

_KINDS = ("search", "leftover", "mixture", "compare")


def _e(v: Any) -> str:
    return html.escape("" if v is None else str(v), quote=True)


def _table(head: Sequence[str], rows: Iterable[Sequence[Any]], num: Sequence[int] = ()) -> str:
    out = ["<table><thead><tr>" + "".join(f"<th>{_e(h)}</th>" for h in head) + "</tr></thead>"]
    out.append("<tbody>")
    for r in rows:
        cells = []
        for i, v in enumerate(r):
            cls = ' class="num"' if i in num else ""
            cells.append(f"<td{cls}>{_e(v)}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


def _clean_svg(svg_text: str) -> str:
    """The ``<svg>`` element of matplotlib's output, without the XML prolog; refuses SVG that
    carries a script or an event handler (the report must be readable without scripts)."""
    i = svg_text.find("<svg")
    if i < 0:
        raise ValidationError("the plot is not SVG text (no <svg> element found)")
    svg = re.sub(r"<metadata>.*?</metadata>\s*", "", svg_text[i:], flags=re.DOTALL)
    if re.search(r"<\s*script|\son[a-z]+\s*=|javascript:", svg, re.IGNORECASE):
        raise ValidationError("the SVG holds a script or an event handler; refusing to inline it")
    return svg


def _fmt_bands(vals: Iterable[float]) -> str:
    return ", ".join(f"{v:.0f}" for v in vals) or "none"


def _search_body(res) -> tuple[str, str, list[str]]:
    verdict = f"{res.verdict}: {res.reason}"
    rows = []
    for h in res.hits:
        new = []
        for n in h.new:
            ann = h.annotations.get(f"{n:.1f}")
            new.append(f"{n:.0f}" + (f" ({ann})" if ann else ""))
        rows.append(
            (
                h.rank,
                h.name,
                h.role,
                f"{h.score:.3f}",
                ", ".join(h.prep) or "-",
                _fmt_bands(a for a, _ in h.matched),
                _fmt_bands(h.missing),
                ", ".join(new) or "none",
            )
        )
    parts = [
        "<h2>Hit list</h2>",
        _table(
            [
                "rank",
                "name",
                "role",
                "score",
                "reference preparation",
                "matched (cm-1)",
                "missing in the unknown",
                "new in the unknown (candidate groups)",
            ],
            rows,
            num=(0, 3),
        ),
    ]
    if res.distinguishing:
        parts.append("<h2>Bands that would tell the top two apart</h2>")
        parts.append(
            _table(
                ["only in", "bands (cm-1)"],
                [(k, _fmt_bands(v)) for k, v in res.distinguishing.items()],
            )
        )
    return verdict, "\n".join(parts), []


def _leftover_body(res) -> tuple[str, str, list[str]]:
    verdict = (
        f"starting material {res.start.get('name')}: "
        + ("DETECTED" if res.detected else "not detected")
        + (f", share of the signal {pct(res.share)}" if res.share is not None else "")
    )
    iv = res.share_interval
    rows = [
        ("starting material", res.start.get("name")),
        ("product", (res.product or {}).get("name") or "not given"),
        ("detected", "yes" if res.detected else "no"),
        ("share of the signal", pct(res.share)),
        ("95 % interval", "-" if iv is None else f"{pct(iv[0])} - {pct(iv[1])}"),
        ("upper bound on the share (the most the sample leaves room for)", pct(res.upper_bound)),
        ("detection limit for this pair", pct(res.detection_limit)),
    ]
    parts = ["<h2>Result</h2>", _table(["", ""], rows)]
    parts.append("<h2>Diagnostic bands of the starting material</h2>")
    parts.append(
        _table(
            ["band (cm-1)", "seen in the sample", "height in the sample (relative)"],
            [
                (f"{b.position:.0f}", "yes" if b.seen else "no", f"{b.sample_intensity:.3f}")
                for b in res.diagnostic_bands
            ],
            num=(0, 2),
        )
    )
    return verdict, "\n".join(parts), list(res.notes)


def _mixture_body(res) -> tuple[str, str, list[str]]:
    verdict = f"explained {pct(res.explained)} of the sample's absorbance by " + (
        " + ".join(f"{c.info.get('name')} ({pct(c.share)})" for c in res.components) or "nothing"
    )
    parts = [
        "<h2>Components</h2>",
        _table(
            ["share of the signal", "name", "search score"],
            [(pct(c.share), c.info.get("name"), c.info.get("score", "-")) for c in res.components],
            num=(0, 2),
        ),
        "<h2>Strong bands nothing explains</h2>",
        _table(
            ["band (cm-1)", "relative intensity", "unexplained fraction", "candidate groups"],
            [
                (
                    f"{u.position:.0f}",
                    f"{u.intensity:.2f}",
                    f"{u.left:.2f}",
                    ", ".join(u.groups) or "-",
                )
                for u in res.unexplained
            ],
            num=(0, 1, 2),
        ),
    ]
    return verdict, "\n".join(parts), list(res.notes)


def _compare_body(res) -> tuple[str, str, list[str]]:
    verdict = f"A {res.a.get('name')} against B {res.b.get('name')}"
    parts = [
        "<h2>Summary</h2>",
        "<ul>" + "".join(f"<li>{_e(s)}</li>" for s in res.summary) + "</ul>",
    ]
    parts.append("<h2>Matched bands</h2>")
    parts.append(
        _table(
            ["A (cm-1)", "B (cm-1)", "shift (cm-1)", "intensity factor", "groups"],
            [
                (
                    f"{m.a:.1f}",
                    f"{m.b:.1f}",
                    f"{m.shift:+.1f}",
                    f"{m.factor:.2f}",
                    ", ".join(m.groups[:1]) or "-",
                )
                for m in res.matched
            ],
            num=(0, 1, 2, 3),
        )
    )
    for title, notes in (("Lost (in A only)", res.lost), ("New (in B only)", res.new)):
        parts.append(f"<h2>{_e(title)}</h2>")
        parts.append(
            _table(
                ["band (cm-1)", "relative intensity", "strength", "candidate groups"],
                [
                    (
                        f"{n.position:.0f}",
                        f"{n.intensity:.2f}",
                        n.strength + (", br" if n.broad else ""),
                        ", ".join(n.groups) or "-",
                    )
                    for n in notes
                ],
                num=(0, 1),
            )
        )
    return verdict, "\n".join(parts), []


def html_report(
    kind: str,
    result,
    svg_text: str | None,
    provenance: Mapping[str, Any],
    out: str | Path,
) -> Path:
    """Write one self-contained HTML report and return its path.

    Parameters
    ----------
    kind:
        ``"search"``, ``"leftover"``, ``"mixture"`` or ``"compare"`` (which result it is).
    result:
        The matching result object (SearchResult, LeftoverResult, MixtureResult, Comparison).
    svg_text:
        The plot as SVG text (a ``plot_*`` function with ``out=None``), inlined; None for none.
    provenance:
        What to say about the query: ``file``, ``sha256``, ``prep``, ``range_cm1`` (see
        :func:`provenance_of`); other keys are listed too.
    out:
        The .html file to write.

    The page holds the verdict and its reason, the plot, the tables, the masked regions, the
    provenance, the caution that a match is evidence, not proof, and the solvent safety line.
    All text is escaped; no script, no network.
    """
    from reflib.analysis.search import CAUTION

    if kind not in _KINDS:
        raise ValidationError(f"report kind must be one of {', '.join(_KINDS)}, got {kind!r}")
    p = check_report_path(out)
    body_fn = {
        "search": _search_body,
        "leftover": _leftover_body,
        "mixture": _mixture_body,
        "compare": _compare_body,
    }[kind]
    verdict, tables, notes = body_fn(result)
    titles = {
        "search": "Library search",
        "leftover": "Leftover starting material",
        "mixture": "Mixture",
        "compare": "Band-by-band comparison",
    }
    masked = list(getattr(result, "masked", None) or provenance.get("masked") or [])
    prov_rows = []
    labels = {
        "file": "file",
        "sha256": "SHA-256",
        "title": "title",
        "prep": "preparation",
        "range_cm1": "range compared (cm-1)",
        "kind": "kind",
        "y": "y",
    }
    for key, value in provenance.items():
        if key in ("masked", "quality") or value in (None, [], ""):
            continue
        if key == "prep":
            value = ", ".join(value) or "none given"
        elif key == "range_cm1":
            value = f"{float(value[0]):.0f}-{float(value[1]):.0f}"
        prov_rows.append((labels.get(key, key), value))
    if kind == "search" and not any(k == "range compared (cm-1)" for k, _ in prov_rows):
        lo, hi = result.range_cm1
        prov_rows.append(("range compared (cm-1)", f"{lo:.0f}-{hi:.0f}"))
    doc = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>reflib: {_e(titles[kind])}</title>",
        f"<style>{_CSS}</style></head><body>",
        f"<h1>reflib: {_e(titles[kind])}</h1>",
        f'<p class="verdict">{_e(verdict)}</p>',
    ]
    if svg_text:
        doc.append(f"<figure>{_clean_svg(svg_text)}</figure>")
    doc.append(tables)
    if notes:
        doc.append("<h2>Notes</h2><ul>" + "".join(f"<li>{_e(n)}</li>" for n in notes) + "</ul>")
    quality = getattr(result, "quality", None) or provenance.get("quality")
    if quality:
        doc.append("<h2>Quality of the query spectrum</h2>")
        doc.append(
            _table(
                ["check", "severity", "finding and remedy"],
                [(q["check"], q["severity"], q["message"]) for q in quality],
            )
        )
    doc.append("<h2>Masked or down-weighted regions</h2>")
    if masked:
        doc.append(
            _table(
                ["from (cm-1)", "to (cm-1)", "reason"],
                [
                    (f"{hi:.0f}", f"{lo:.0f}", why)
                    for lo, hi, why in sorted(masked, key=lambda m: -m[1])
                ],
                num=(0, 1),
            )
        )
    else:
        doc.append("<p>none</p>")
    doc.append("<h2>Provenance of the query</h2>")
    doc.append(_table(["", ""], prov_rows))
    doc.append(f'<p class="caution">{_e(CAUTION)}<br>{_e(SAFETY)}</p>')
    doc.append("<p><small>Written by reflib.</small></p></body></html>")
    p.write_text("\n".join(doc) + "\n", encoding="utf-8")
    return p
