"""The web page's HTML: plain server-rendered pages and one style sheet, no script needed.

Every text that comes from a library, an upload or a user goes through :func:`e` (HTML
escaping); plots are embedded as ``data:image/svg+xml`` images, so nothing inside them can run.
"""

from __future__ import annotations

import base64
import html
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

from reflib.analysis.search import CAUTION

SAFETY = (
    "Solvents such as chloroform are handled under your local safety rules (fume hood, "
    "gloves, waste stream)."
)

STYLE = """
:root { --ink: #1f2a30; --paper: #f6f4ee; --card: #ffffff; --rule: #d8d3c4; --accent: #1d6b6a;
  --accent-soft: #e3efee; --warn: #8a5a00; --warn-soft: #fbf1dc; --good: #2f6b2a;
  --good-soft: #e6f1e2; --mute: #5d676c; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink);
  font: 16px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", sans-serif; }
header { background: var(--ink); color: #f6f4ee; padding: 0.7rem 1.5rem; display: flex;
  align-items: baseline; gap: 2rem; flex-wrap: wrap; }
header .mark { font-weight: 700; letter-spacing: 0.04em; font-size: 1.15rem; }
header .mark span { color: #8fd0cc; font-weight: 400; }
nav a { color: #f6f4ee; text-decoration: none; margin-right: 1.2rem; padding-bottom: 2px;
  border-bottom: 2px solid transparent; }
nav a:hover, nav a.here { border-bottom-color: #8fd0cc; }
header .who { margin-left: auto; color: #c9c4b5; font-size: 0.9rem; }
main { max-width: 1180px; margin: 0 auto; padding: 1.2rem 1.5rem 3rem; }
h1 { font-size: 1.45rem; margin: 0.6rem 0 1rem; }
h2 { font-size: 1.15rem; margin: 1.6rem 0 0.6rem; border-bottom: 1px solid var(--rule);
  padding-bottom: 0.2rem; }
.card { background: var(--card); border: 1px solid var(--rule); border-radius: 6px;
  padding: 1rem 1.2rem; margin: 0 0 1rem; }
form.grid { display: grid; grid-template-columns: 11rem 1fr; gap: 0.55rem 1rem;
  align-items: center; }
form.grid .wide { grid-column: 1 / -1; }
label { font-weight: 600; font-size: 0.95rem; }
input[type=text], input[type=password], select { width: 100%; max-width: 28rem;
  padding: 0.35rem 0.5rem; border: 1px solid #b9b3a2; border-radius: 4px; font: inherit;
  background: #fffefa; }
input[type=file] { font: inherit; }
button { background: var(--accent); color: #fff; border: 0; border-radius: 4px;
  padding: 0.45rem 1.1rem; font: inherit; font-weight: 600; cursor: pointer; }
button:hover { background: #165453; }
.hint { color: var(--mute); font-size: 0.85rem; }
details.filters { grid-column: 1 / -1; }
details.filters summary { cursor: pointer; color: var(--accent); font-weight: 600; }
details.filters .grid2 { display: grid; grid-template-columns: 11rem 1fr; gap: 0.5rem 1rem;
  margin-top: 0.6rem; align-items: center; }
.caution { border-left: 5px solid var(--warn); background: var(--warn-soft);
  padding: 0.6rem 1rem; margin: 0 0 1rem; border-radius: 0 6px 6px 0; font-size: 0.95rem; }
.verdict { display: flex; gap: 1rem; align-items: center; flex-wrap: wrap; }
.badge { display: inline-block; padding: 0.25rem 0.8rem; border-radius: 999px;
  font-weight: 700; letter-spacing: 0.03em; text-transform: uppercase; font-size: 0.9rem; }
.badge.confident, .badge.detected-no { background: var(--good-soft); color: var(--good);
  border: 1px solid #9cc493; }
.badge.ambiguous, .badge.detected-yes { background: var(--warn-soft); color: var(--warn);
  border: 1px solid #e0c07a; }
.badge.no-match { background: #ecebe6; color: var(--mute); border: 1px solid #c8c4b8; }
table { border-collapse: collapse; width: 100%; background: var(--card); font-size: 0.95rem; }
th, td { text-align: left; padding: 0.4rem 0.6rem; border-bottom: 1px solid #ebe7dc;
  vertical-align: top; }
th { background: var(--accent-soft); font-weight: 600; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.plot { background: #fff; border: 1px solid var(--rule); border-radius: 6px; padding: 0.5rem; }
.plot img { width: 100%; height: auto; display: block; }
.error { border-left: 5px solid #a33; background: #fbe9e7; padding: 0.6rem 1rem;
  border-radius: 0 6px 6px 0; }
.ok { border-left: 5px solid var(--good); background: var(--good-soft); padding: 0.6rem 1rem;
  border-radius: 0 6px 6px 0; }
footer { max-width: 1180px; margin: 0 auto; padding: 0 1.5rem 2rem; color: var(--mute);
  font-size: 0.85rem; }
a { color: var(--accent); }
details.bands { margin: 0.6rem 0; }
details.bands summary { cursor: pointer; color: var(--accent); font-weight: 600; }
td span[title] { border-bottom: 1px dotted var(--mute); }
code { background: #efece3; padding: 0 0.25rem; border-radius: 3px; }
"""

NAV = (("/", "Search"), ("/leftover", "Leftover check"), ("/library", "Library"),
       ("/add", "Add compound"))  # fmt: skip


def e(text: Any) -> str:
    """HTML-escaped text (quotes too); None is shown as an empty string."""
    return html.escape("" if text is None else str(text), quote=True)


def svg_image(svg: str, alt: str) -> str:
    """An SVG embedded as an image: shown, never run."""
    data = base64.b64encode(svg.encode("utf-8")).decode("ascii")
    return f'<div class="plot"><img alt="{e(alt)}" src="data:image/svg+xml;base64,{data}"></div>'


def layout(title: str, body: str, *, here: str = "/", user: str | None = None) -> str:
    current = ' class="here"'
    links = "".join(
        f'<a href="{href}"{current if href == here else ""}>{e(label)}</a>' for href, label in NAV
    )
    who = f'<span class="who">signed in as {e(user)}</span>' if user else ""
    return (
        '<!doctype html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{e(title)} · reflib</title><style>{STYLE}</style></head><body>"
        f'<header><div class="mark">reflib <span>group IR library</span></div>'
        f"<nav>{links}</nav>{who}</header><main>{body}</main>"
        f"<footer>{e(CAUTION)} {e(SAFETY)}</footer></body></html>"
    )


def caution() -> str:
    return f'<div class="caution"><strong>Caution.</strong> {e(CAUTION)} {e(SAFETY)}</div>'


def message(text: str, kind: str = "error") -> str:
    return f'<div class="{kind}" role="status">{e(text)}</div>'


def _options(values: Iterable[tuple[str, str]], selected: str | None = None) -> str:
    return "".join(
        f'<option value="{e(v)}"{" selected" if v == selected else ""}>{e(label)}</option>'
        for v, label in values
    )


def _prep_field(preps: Sequence[str], value: str | None = None) -> str:
    items = "".join(f'<option value="{e(p)}">' for p in preps)
    return (
        '<label for="prep">Preparation</label><div>'
        f'<input type="text" id="prep" name="prep" list="preps" value="{e(value or "")}" '
        'placeholder="e.g. nujol, film, kbr, chcl3,nacl">'
        f'<datalist id="preps">{items}</datalist>'
        '<div class="hint">How the sample was run; its spoiled regions are masked. Several: '
        "comma-separated.</div></div>"
    )


FILTER_FIELDS = (
    ("role", "Role", "e.g. product"),
    ("tag", "Tag", "a tag set with 'reflib edit --tag'"),
    ("has_group", "Has group", "functional group, e.g. ketone, nitrile"),
    ("smarts", "SMARTS", "substructure, e.g. C#C"),
    ("added_by", "Added by", "operator name"),
    ("since", "Added since", "date, e.g. 2026-01-31"),
)


def _filters(values: Mapping[str, str], open_: bool = False) -> str:
    rows = "".join(
        f'<label for="f-{k}">{e(label)}</label>'
        f'<input type="text" id="f-{k}" name="{k}" value="{e(values.get(k, ""))}" '
        f'placeholder="{e(hint)}">'
        for k, label, hint in FILTER_FIELDS
    )
    return (
        f'<details class="filters"{" open" if open_ else ""}><summary>Restrict the references'
        f'</summary><div class="grid2">{rows}</div></details>'
    )


def search_form(preps: Sequence[str], values: Mapping[str, str] | None = None) -> str:
    v = values or {}
    return (
        '<div class="card"><form class="grid" method="post" action="/search" '
        'enctype="multipart/form-data">'
        '<label for="file">Spectrum</label><div><input type="file" id="file" name="file" '
        'required><div class="hint">JCAMP-DX, CSV/TSV columns or a typed peak list.</div></div>'
        f"{_prep_field(preps, v.get('prep'))}"
        f"{_filters(v, open_=any(v.get(k) for k, _, _ in FILTER_FIELDS))}"
        '<div class="wide"><button type="submit" id="run-search">Search the library</button>'
        "</div></form></div>"
    )


def _bands(values: Iterable[float]) -> str:
    return ", ".join(f"{float(x):.0f}" for x in values) or "none"


def search_result(d: Mapping[str, Any], plot: str | None) -> str:
    """The verdict, hit table and overlay plot of one search (``d`` is the search JSON)."""
    q = d["query"]
    lo, hi = q["range_cm1"]
    verdict = d["verdict"]
    rows, notes = [], []
    for h in d["hits"]:
        labels = h.get("annotations", {})
        new_bands = ", ".join(
            f'<span title="{e(labels.get(f"{p:.1f}", ""))}">{p:.0f}</span>' for p in h["new"]
        )
        rows.append(
            f'<tr><td class="num">{h["rank"]}</td><td class="num">{h["score"]:.3f}</td>'
            f'<td><a href="/compound/{int(h["compound_id"])}">{e(h["name"])}</a></td>'
            f"<td>{e(h['role'])}</td><td>{e(', '.join(h['prep']) or '-')}</td>"
            f'<td class="num">{len(h["matched"])}</td>'
            f"<td>{e(_bands(h['missing']))}</td><td>{new_bands or 'none'}</td></tr>"
        )
        for p in h["new"]:
            if labels.get(f"{p:.1f}") and h["rank"] == 1:
                notes.append(f"<li>{p:.0f} cm⁻¹: {e(labels[f'{p:.1f}'])}</li>")
    table = (
        '<table id="hits"><thead><tr><th>#</th><th>score</th><th>compound</th><th>role</th>'
        "<th>reference prep.</th><th>bands matched</th><th>missing in the unknown (cm⁻¹)</th>"
        f"<th>new in the unknown (cm⁻¹)</th></tr></thead><tbody>{''.join(rows)}</tbody></table>"
        if rows
        else "<p>No reference to list.</p>"
    )
    if notes:
        table += (
            '<details class="bands"><summary>What the new bands of the unknown could be '
            f"(candidate groups, against hit #1)</summary><ul>{''.join(notes)}</ul></details>"
        )
    masked = "".join(
        f"<li>{lo_:.0f}–{hi_:.0f} cm⁻¹: {e(why)}</li>" for lo_, hi_, why in d["masked"]
    )
    dist = "".join(
        f"<li>only {e(name)}: {e(_bands(b))}</li>"
        for name, b in d.get("distinguishing", {}).items()
    )
    return (
        f"<h1>Search: {e(q['file'] or 'unknown')}</h1>{caution()}"
        '<div class="card verdict" id="verdict">'
        f'<span class="badge {e(verdict)}">{e(verdict)}</span>'
        f"<span>{e(d['verdict_reason'])}</span></div>"
        f'<p class="hint">Preparation: {e(", ".join(q["prep"]) or "none given")}; compared '
        f"{lo:.0f}–{hi:.0f} cm⁻¹.</p>"
        + (f'<h2>Overlay</h2><div id="plot">{plot}</div>' if plot else "")
        + f"<h2>Hits</h2>{table}"
        + (f"<h2>Bands that would tell the top two apart</h2><ul>{dist}</ul>" if dist else "")
        + (f"<h2>Masked or down-weighted regions</h2><ul>{masked}</ul>" if masked else "")
    )


def library_table(rows: Sequence[Mapping[str, Any]], values: Mapping[str, str]) -> str:
    body = "".join(
        f'<tr><td class="num">{int(r["id"])}</td>'
        f'<td><a href="/compound/{int(r["id"])}">{e(r["name"])}</a></td>'
        f"<td>{e(r['role'])}</td><td>{e(r.get('formula') or '')}</td>"
        f'<td>{e(", ".join(r.get("tags") or []))}</td><td class="num">{r["n_spectra"]}</td>'
        f"<td>{e(', '.join(r['preps']) or '-')}</td><td>{e(r.get('added_by') or '')}</td></tr>"
        for r in rows
    )
    match = e(values.get("match", ""))
    form = (
        '<div class="card"><form class="grid" method="get" action="/library">'
        f'<label for="match">Name contains</label><input type="text" id="match" name="match" '
        f'value="{match}">{_filters(values, open_=True)}'
        '<div class="wide"><button type="submit">Filter</button></div></form></div>'
    )
    table = (
        '<table id="compounds"><thead><tr><th>id</th><th>name</th><th>role</th>'
        "<th>formula</th><th>tags</th><th>spectra</th><th>preparations</th><th>added by</th>"
        f"</tr></thead><tbody>{body}</tbody></table>"
        if rows
        else "<p>No compound matches.</p>"
    )
    return f'<h1>Library</h1>{form}<p class="hint">{len(rows)} compounds</p>{table}'


def compound_page(c: Mapping[str, Any], history: Sequence[Mapping[str, Any]]) -> str:
    facts = "".join(
        f"<tr><th>{e(k.replace('_', ' '))}</th><td>{e(c.get(k))}</td></tr>"
        for k in (
            "role",
            "smiles",
            "formula",
            "inchikey",
            "notebook",
            "notes",
            "added_by",
            "added_at",
        )  # fmt: skip
        if c.get(k)
    )
    tags = ", ".join(c.get("tags") or [])
    spectra = "".join(
        f'<tr><td class="num">{int(s["id"])}</td><td>{e(s["kind"])}</td>'
        f"<td>{e(', '.join(s['prep']) or '-')}</td><td>{e(s.get('source_file') or '-')}</td>"
        f"<td>{e(s.get('operator') or '')}</td><td>{e(s.get('added_at'))}</td>"
        f"<td>{e(_bands(p['position'] for p in s['peaks']))}</td></tr>"
        for s in c["spectra"]
    )
    hist = "".join(
        f"<tr><td>{e(h['at'])}</td><td>{e(h['operator'])}</td><td>{e(h['action'])}</td>"
        f"<td>{e(h.get('field') or '')}</td><td>{e(h.get('old') or '')}</td>"
        f"<td>{e(h.get('new') or '')}</td><td>{e(h.get('detail') or '')}</td></tr>"
        for h in history
    )
    return (
        f'<h1>{e(c["name"])}</h1><div class="card"><table>{facts}'
        + (f"<tr><th>tags</th><td>{e(tags)}</td></tr>" if tags else "")
        + "</table></div><h2>Spectra</h2><table><thead><tr><th>id</th><th>kind</th>"
        "<th>preparation</th><th>file</th><th>operator</th><th>added</th><th>bands (cm⁻¹)</th>"
        f"</tr></thead><tbody>{spectra}</tbody></table>"
        "<h2>History</h2><table><thead><tr><th>when (UTC)</th><th>who</th><th>what</th>"
        "<th>field</th><th>old</th><th>new</th><th>detail</th></tr></thead>"
        f"<tbody>{hist}</tbody></table>"
    )


ROLE_CHOICES = ("product", "intermediate", "starting material", "reagent", "solvent", "other")


def add_form(preps: Sequence[str], values: Mapping[str, str] | None = None) -> str:
    v = values or {}
    roles = _options(((r, r) for r in ROLE_CHOICES), v.get("role") or "product")
    return (
        "<h1>Add a confirmed compound</h1>"
        '<p class="hint">Only compounds whose identity is confirmed by independent data. The '
        "spectrum is checked against the structure and against the library.</p>"
        '<div class="card"><form class="grid" method="post" action="/add" '
        'enctype="multipart/form-data">'
        '<label for="add-file">Spectrum</label><input type="file" id="add-file" name="file" '
        "required>"
        f'<label for="name">Name</label><input type="text" id="name" name="name" required '
        f'value="{e(v.get("name", ""))}">'
        f'<label for="smiles">Structure (SMILES)</label><input type="text" id="smiles" '
        f'name="smiles" value="{e(v.get("smiles", ""))}" placeholder="e.g. CC(=O)c1ccccc1">'
        f'<label for="role">Role</label><select id="role" name="role">{roles}</select>'
        f"{_prep_field(preps, v.get('prep'))}"
        f'<label for="notebook">Notebook</label><input type="text" id="notebook" '
        f'name="notebook" value="{e(v.get("notebook", ""))}" placeholder="e.g. AO-214-05">'
        f'<label for="note">Note</label><input type="text" id="note" name="note" '
        f'value="{e(v.get("note", ""))}">'
        '<div class="wide"><button type="submit" id="run-add">Add to the library</button></div>'
        "</form></div>"
    )


def add_result(d: Mapping[str, Any]) -> str:
    what = "New compound" if d["new_compound"] else "Another spectrum of"
    warn = "".join(f"<li>{e(w)}</li>" for w in d.get("warnings", []))
    return (
        message(
            f"{what} {d['name']}: compound {d['compound_id']}, spectrum {d['spectrum_id']}.",
            "ok",
        )
        + (f"<h2>Warnings</h2><ul>{warn}</ul>" if warn else "")
        + f'<p><a href="/compound/{int(d["compound_id"])}">Show it</a> · '
        '<a href="/library">Library</a></p>'
    )


def leftover_form(
    preps: Sequence[str], compounds: Sequence[Mapping[str, Any]], v: Mapping[str, str]
) -> str:
    choices = [(str(c["id"]), f"{c['name']} ({c['role']})") for c in compounds]
    start = _options(choices, v.get("start"))
    product = _options([("", "(not given)")] + choices, v.get("product", ""))
    return (
        "<h1>Leftover starting material</h1>"
        '<p class="hint">Is starting material left in a product, and how much of the signal is '
        "it? Give the pure product too for an estimate with an interval.</p>"
        '<div class="card"><form class="grid" method="post" action="/leftover" '
        'enctype="multipart/form-data">'
        '<label for="lo-file">Product spectrum</label><input type="file" id="lo-file" '
        'name="file" required>'
        f'<label for="start">Starting material</label><select id="start" name="start">{start}'
        "</select>"
        f'<label for="product">Pure product</label><select id="product" name="product">'
        f"{product}</select>"
        f"{_prep_field(preps, v.get('prep'))}"
        '<div class="wide"><button type="submit">Check for leftover</button></div>'
        "</form></div>"
    )


def _share(v: float | None) -> str:
    return "-" if v is None else f"{100 * v:.1f} %"


def leftover_result(d: Mapping[str, Any], plot: str | None) -> str:
    found = d["detected"]
    cls = "detected-yes" if found else "detected-no"
    word = "detected" if found else "not detected"
    lines = []
    if d["share"] is not None:
        lo, hi = d["share_interval"]
        lines.append(f"share of the signal {_share(d['share'])} (95 % {_share(lo)}–{_share(hi)})")
    if d["upper_bound"] is not None:
        room = _share(d["upper_bound"])
        lines.append(f"upper bound on the share (the most the sample leaves room for) {room}")
    lines.append(f"detection limit for this pair about {_share(d['detection_limit'])}")
    bands = "".join(
        f'<tr><td class="num">{b["position"]:.0f}</td><td>{"yes" if b["seen"] else "no"}</td>'
        f'<td class="num">{b["sample_intensity"]:.3f}</td></tr>'
        for b in d["diagnostic_bands"]
    )
    notes = "".join(f"<li>{e(n)}</li>" for n in d["notes"])
    prod = d["product"]["name"] if d["product"] else "not given"
    return (
        f"<h1>Leftover check: {e(d['start'].get('name'))}</h1>{caution()}"
        f'<div class="card verdict" id="verdict"><span class="badge {cls}">starting material '
        f"{word}</span><span>{e('; '.join(lines))}</span></div>"
        f'<p class="hint">Pure product: {e(prod)}.</p>'
        "<h2>Diagnostic bands of the starting material</h2><table><thead><tr><th>cm⁻¹</th>"
        f"<th>seen</th><th>in sample</th></tr></thead><tbody>{bands}</tbody></table>"
        + (f"<h2>Notes</h2><ul>{notes}</ul>" if notes else "")
        + (f'<h2>Plot</h2><div id="plot">{plot}</div>' if plot else "")
    )


def login_form(error: str | None = None) -> str:
    return (
        "<h1>Sign in</h1>"
        + (message(error) if error else "")
        + '<div class="card"><form class="grid" method="post" action="/login">'
        '<label for="token">Access token</label><input type="password" id="token" '
        'name="token" autocomplete="current-password" required>'
        '<div class="wide"><button type="submit">Sign in</button></div></form>'
        '<p class="hint">Ask whoever runs this server for your token.</p></div>'
    )
