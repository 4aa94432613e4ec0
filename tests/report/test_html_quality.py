"""The HTML report shows the query's quality report as a table, escaped."""

from __future__ import annotations

from reflib.analysis.search import SearchResult
from reflib.report.html import html_report


def test_quality_table_in_search_report(tmp_path):
    res = SearchResult(
        "q.jdx",
        ["film"],
        (400.0, 4000.0),
        "no-match",
        "the library is empty",
        [],
        [],
        quality=[{"check": "saturation", "severity": "warn", "message": "flat <top> at 1715"}],
    )
    assert res.to_dict()["query"]["quality"][0]["check"] == "saturation"
    out = html_report("search", res, None, {"file": "q.jdx"}, tmp_path / "r.html")
    text = out.read_text(encoding="utf-8")
    assert "Quality of the query spectrum" in text
    assert "flat &lt;top&gt; at 1715" in text


def test_peak_list_query_has_no_quality_key():
    res = SearchResult(None, [], (400.0, 4000.0), "no-match", "r", [], [])
    assert "quality" not in res.to_dict()["query"]
