"""Plots and HTML reports (reflib.report), drawn for the invented demo data.

The demo data is invented (demo_data/README.md); these tests check the drawing, not the chemistry:
the pictures are not blank, the SVG keeps the labels a chemist reads (names, band positions,
mask reasons) as text, and the HTML report is one parseable, escaped, script-free page.
Conventions checked: infrared spectra are drawn from high to low wavenumber (common practice, no
source); the mull oil's C-H stretches near 2920/2850 cm-1 are masked for a nujol mull (facts of
the trade, see reflib/data/preparations.csv for the table's sources).
"""

from __future__ import annotations

import shutil
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from typer.testing import CliRunner

from reflib import report
from reflib.analysis.search import CAUTION
from reflib.cli import app
from reflib.errors import ValidationError
from reflib.io import read_spectrum
from reflib.library import Library
from reflib.library.importer import plan_import, run_import
from reflib.library.lookup import compare_in_library, leftover_in_library, mixture_in_library
from reflib.spectrum import PeakList

DEMO = Path(__file__).resolve().parents[2] / "demo_data"
NUJOL = DEMO / "crudes" / "AO-214-03-crude-nujol.jdx"
FILM = DEMO / "crudes" / "AO-214-04-crude-film.jdx"
KETONE = "1-(4-ethynylphenyl)ethan-1-one"
CARBINOL = "1-(4-ethynylphenyl)ethan-1-ol"
runner = CliRunner()


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    path = tmp_path_factory.mktemp("demo") / "demo.sqlite"
    with Library.create(path) as lib:
        run_import(lib, plan_import(DEMO / "manifest.csv"))
    lib = Library.open(path)
    yield lib, path
    lib.close()


def _refs(lib, res):
    return {h.spectrum_id: report.reference_data(lib, h.spectrum_id) for h in res.hits}


def _png_ok(path: Path) -> None:
    import matplotlib.image as mpimg

    img = mpimg.imread(path)
    h, w = img.shape[:2]
    assert w <= 1200 and h <= 800, (w, h)
    grey = img[..., :3].mean(axis=2)
    assert grey.var() > 1e-3, "the picture is blank"
    assert (grey < 0.3).mean() > 0.002, "hardly any ink on the picture"


def _svg_texts(svg: str) -> str:
    """All text content of an SVG (labels stay text with svg.fonttype = none)."""

    class P(HTMLParser):
        def __init__(self):
            super().__init__()
            self.parts: list[str] = []

        def handle_data(self, data):
            self.parts.append(data)

    p = P()
    p.feed(svg)
    return " ".join(p.parts)


def test_search_plot_png_and_svg(demo, tmp_path):
    lib, _ = demo
    q = read_spectrum(NUJOL)
    res = lib.search(q, prep="nujol", top=3)
    png = report.plot_search(res, q, _refs(lib, res), tmp_path / "s.png")
    _png_ok(png)
    svg = report.plot_search(res, q, _refs(lib, res), tmp_path / "s.svg").read_text()
    text = _svg_texts(svg)
    for h in res.hits:
        assert h.name in text
    assert "confident" in text
    assert "mineral oil C-H stretches (nujol mull)" in text  # the mask's reason, in the key
    assert "3000-2800 cm-1 (dropped)" in text
    # a matched band of the top hit and a new band of a lower hit, written at their positions
    assert f"{res.hits[0].matched[0][0]:.0f}" in text
    new = res.hits[1].new[0]
    assert f"{new:.0f}" in text


def test_search_plot_axis_runs_high_to_low(demo, monkeypatch):
    """IR spectra are drawn from high to low wavenumber (common practice, no source)."""
    lib, _ = demo
    q = read_spectrum(NUJOL)
    res = lib.search(q, prep="nujol", top=2)
    seen = {}
    real_save = report.plots._save

    def grab(fig, out):
        seen["xlim"] = [ax.get_xlim() for ax in fig.axes]
        return real_save(fig, out)

    monkeypatch.setattr(report.plots, "_save", grab)
    report.plot_search(res, q, _refs(lib, res))
    assert all(a > b for a, b in seen["xlim"])
    assert seen["xlim"][0] == (4000.0, 400.0)


def test_search_plot_transmittance_and_peak_list_reference(demo, tmp_path):
    lib, _ = demo
    q = read_spectrum(NUJOL)
    res = lib.search(q, prep="nujol", top=3)
    refs = _refs(lib, res)
    # draw the top hit from its peak list instead of its full spectrum: sticks
    sid = res.hits[0].spectrum_id
    refs[sid] = lib.store.peaks_of(sid)
    svg = report.plot_search(res, q, refs, y="transmittance")
    text = _svg_texts(svg)
    assert "transmittance (%)" in text and "peak list" in text
    with pytest.raises(ValidationError, match="absorbance"):
        report.plot_search(res, q, refs, y="percent")
    with pytest.raises(ValidationError, match=".png, .svg or .pdf"):
        report.plot_search(res, q, refs, tmp_path / "s.jpg")


def test_leftover_plot(demo, tmp_path):
    lib, _ = demo
    s = read_spectrum(FILM)
    res = leftover_in_library(lib, s, KETONE, CARBINOL, prep="film")
    start = report.reference_data(lib, res.start["spectrum_id"])
    product = report.reference_data(lib, res.product["spectrum_id"])
    _png_ok(report.plot_leftover(res, s, start, product, tmp_path / "l.png", prep="film"))
    text = _svg_texts(report.plot_leftover(res, s, start, product, prep="film"))
    assert KETONE in text and CARBINOL in text and "DETECTED" in text
    assert f"{100 * res.share:.1f} %" in text  # the fitted share, in the title
    for b in res.diagnostic_bands:
        assert f"{b.position:.0f} {'seen' if b.seen else 'not seen'}" in text
    # without the product: the bound instead of a share
    res2 = leftover_in_library(lib, s, KETONE, None, prep="film")
    text2 = _svg_texts(report.plot_leftover(res2, s, start, None, prep="film"))
    assert "upper bound" in text2
    # issue 16: start only, a detected leftover gets a share from its own bands, else none
    if res2.detected:
        assert "share from its own bands" in text2 and f"{100 * res2.share:.1f} %" in text2
    else:
        assert "share not fitted" in text2


def test_mixture_and_compare_plots(demo, tmp_path):
    lib, _ = demo
    s = read_spectrum(FILM)
    mix = mixture_in_library(lib, s, prep="film")
    comps = {
        c.info["spectrum_id"]: report.reference_data(lib, c.info["spectrum_id"])
        for c in mix.components
    }
    _png_ok(report.plot_mixture(mix, s, comps, tmp_path / "m.png", prep="film"))
    text = _svg_texts(report.plot_mixture(mix, s, comps, prep="film"))
    for c in mix.components:
        assert c.info["name"] in text and f"{100 * c.share:.1f} %" in text
    cmp = compare_in_library(lib, KETONE, CARBINOL)
    a = report.reference_data(lib, cmp.a["spectrum_id"])
    b = report.reference_data(lib, cmp.b["spectrum_id"])
    _png_ok(report.plot_compare(cmp, a, b, tmp_path / "c.png"))
    text = _svg_texts(report.plot_compare(cmp, a, b))
    assert KETONE in text and CARBINOL in text
    assert cmp.lost and f"lost {cmp.lost[0].position:.0f}" in text  # the ketone's C=O goes
    assert cmp.new and f"new {cmp.new[0].position:.0f}" in text
    pdf = report.plot_compare(cmp, a, b, tmp_path / "c.pdf")
    assert pdf.read_bytes()[:5] == b"%PDF-"


class _Page(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: list[str] = []
        self.stack: list[str] = []
        self.cells: list[str] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.stack.append(tag)
        for k, v in attrs:
            assert not k.startswith("on"), f"event handler {k} in the report"
            assert not (v or "").lower().startswith("javascript:")

    def handle_endtag(self, tag):
        if self.stack and self.stack[-1] == tag:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)
        if self.stack and self.stack[-1] == "td":
            self.cells.append(data)


def _parse(path: Path) -> _Page:
    p = _Page()
    p.feed(path.read_text(encoding="utf-8"))
    p.close()
    return p


def test_html_report_of_a_search(demo, tmp_path):
    lib, _ = demo
    q = read_spectrum(NUJOL)
    res = lib.search(q, prep="nujol", top=3)
    out = report.search_outputs(lib, res, q, report=tmp_path / "r.html")[0]
    page = _parse(out)
    text = " ".join(page.text)
    assert "script" not in page.tags and "link" not in page.tags and "img" not in page.tags
    assert page.tags.count("svg") == 1 and "table" in page.tags
    for h in res.hits:
        assert h.name in page.cells
    assert f"{res.hits[0].score:.3f}" in page.cells
    assert res.verdict in text and res.reason in text
    assert CAUTION in text and report.common.SAFETY in text
    assert q.meta.sha256 in page.cells and NUJOL.name in page.cells
    assert "mineral oil C-H stretches (nujol mull)" in page.cells
    assert "http://" not in out.read_text().replace("http://www.w3.org", "")


def test_html_report_escapes_a_hostile_name(tmp_path):
    """A compound name is user text: it must show as text, never run."""
    name = '<script>alert("x")</script> & <b>ketone</b>'
    pl = PeakList([1715.0, 1365.0, 1220.0, 2960.0], [1.0, 0.5, 0.6, 0.3])
    with Library.create(tmp_path / "h.sqlite") as lib:
        lib.add(pl, name=name, prep="film")
        res = lib.search(pl, prep="film", top=1)
        out = report.search_outputs(
            lib, res, pl, report=tmp_path / "h.html", plot=tmp_path / "h.svg"
        )
    html_path = next(p for p in out if p.suffix == ".html")
    page = _parse(html_path)
    assert "script" not in page.tags and "b" not in page.tags
    assert name in page.cells  # shown as the text it is
    raw = html_path.read_text()
    assert "&lt;script&gt;" in raw and "<script" not in raw
    assert name in _svg_texts((tmp_path / "h.svg").read_text())


def test_html_report_refuses_scripted_svg(demo, tmp_path):
    lib, _ = demo
    q = read_spectrum(NUJOL)
    res = lib.search(q, prep="nujol", top=1)
    bad = '<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>'
    with pytest.raises(ValidationError, match="script"):
        report.html_report("search", res, bad, report.provenance_of(q), tmp_path / "x.html")
    with pytest.raises(ValidationError, match="kind"):
        report.html_report("peaks", res, None, {}, tmp_path / "x.html")
    with pytest.raises(ValidationError, match=".html"):
        report.html_report("search", res, None, {}, tmp_path / "x.txt")


def test_html_reports_of_leftover_mixture_compare(demo, tmp_path):
    lib, _ = demo
    s = read_spectrum(FILM)
    lr = leftover_in_library(lib, s, KETONE, CARBINOL, prep="film")
    page = _parse(report.leftover_outputs(lib, lr, s, report=tmp_path / "l.html", prep="film")[0])
    assert f"{lr.diagnostic_bands[0].position:.0f}" in page.cells and "DETECTED" in " ".join(
        page.text
    )
    mix = mixture_in_library(lib, s, prep="film")
    page = _parse(report.mixture_outputs(lib, mix, s, report=tmp_path / "m.html", prep="film")[0])
    assert mix.components[0].info["name"] in page.cells
    cmp = compare_in_library(lib, KETONE, CARBINOL)
    a = report.reference_data(lib, cmp.a["spectrum_id"])
    b = report.reference_data(lib, cmp.b["spectrum_id"])
    page = _parse(report.compare_outputs(cmp, a, b, report=tmp_path / "c.html")[0])
    assert f"{cmp.matched[0].a:.1f}" in page.cells
    assert all(page.tags.count(t) == 0 for t in ("script", "link", "img"))


def test_cli_plot_and_report_options(demo, tmp_path):
    _, path = demo
    lib = tmp_path / "cli.sqlite"
    shutil.copy(path, lib)
    L = ["-L", str(lib)]
    png, html_out = tmp_path / "s.png", tmp_path / "s.html"
    r = runner.invoke(
        app,
        [
            "search",
            *L,
            str(NUJOL),
            "--prep",
            "nujol",
            "--plot",
            str(png),
            "--report",
            str(html_out),
        ],
    )
    assert r.exit_code == 0, r.output
    _png_ok(png)
    assert KETONE in _parse(html_out).cells
    # several queries: one numbered file per query
    r = runner.invoke(app, ["search", *L, str(NUJOL), str(FILM), "--plot", str(tmp_path / "b.svg")])
    assert r.exit_code == 0, r.output
    assert (tmp_path / "b-1.svg").is_file() and (tmp_path / "b-2.svg").is_file()
    r = runner.invoke(
        app,
        [
            "leftover",
            *L,
            str(FILM),
            "--start",
            KETONE,
            "--product",
            CARBINOL,
            "--prep",
            "film",
            "--plot",
            str(tmp_path / "l.png"),
            "--report",
            str(tmp_path / "l.html"),
        ],
    )
    assert r.exit_code == 0, r.output
    _png_ok(tmp_path / "l.png")
    assert (tmp_path / "l.html").is_file()
    r = runner.invoke(
        app, ["mixture", *L, str(FILM), "--prep", "film", "--plot", str(tmp_path / "m.svg")]
    )
    assert r.exit_code == 0, r.output
    assert CARBINOL in _svg_texts((tmp_path / "m.svg").read_text())
    r = runner.invoke(
        app,
        [
            "compare",
            *L,
            KETONE,
            CARBINOL,
            "--plot-y",
            "transmittance",
            "--report",
            str(tmp_path / "c.html"),
        ],
    )
    assert r.exit_code == 0, r.output
    assert "transmittance (%)" in (tmp_path / "c.html").read_text()


def test_cli_refuses_bad_picture_names(demo, tmp_path):
    _, path = demo
    for args in (
        ["search", "-L", str(path), str(NUJOL), "--plot", str(tmp_path / "x.jpg")],
        ["search", "-L", str(path), str(NUJOL), "--report", str(tmp_path / "x.pdf")],
        [
            "compare",
            "-L",
            str(path),
            KETONE,
            CARBINOL,
            "--plot",
            str(tmp_path / "x.png"),
            "--plot-y",
            "percent",
        ],
    ):
        r = runner.invoke(app, args)
        assert r.exit_code != 0
        assert isinstance(r.exception, ValidationError), r.output
    assert not list(tmp_path.glob("x.*"))


def test_numbered_and_spread_helpers():
    assert report.numbered("a/crude.png", 1, 1) == Path("a/crude.png")
    assert report.numbered("a/crude.png", 3, 4) == Path("a/crude-3.png")
    placed = report.plots._spread([1000.0, 999.0, 998.0, 500.0], 20.0, 400.0, 4000.0)
    gaps = -np.diff(placed)
    assert np.all(gaps >= 20.0 - 1e-6)
