"""Pictures and self-contained HTML reports of searches, comparisons, leftover and mixture checks.

``plots`` draws (matplotlib, imported only when a picture is drawn), ``html`` writes the report,
``common`` holds what both share and ``outputs`` what the command line calls. Imports the
analysis results it draws and the chemistry tables, never the CLI or the server.
"""

from reflib.report.common import (
    check_plot_path,
    check_report_path,
    numbered,
    provenance_of,
    reference_data,
)
from reflib.report.html import html_report
from reflib.report.outputs import compare_outputs, leftover_outputs, mixture_outputs, search_outputs
from reflib.report.plots import plot_compare, plot_leftover, plot_mixture, plot_search

__all__ = [
    "check_plot_path",
    "check_report_path",
    "compare_outputs",
    "html_report",
    "leftover_outputs",
    "mixture_outputs",
    "numbered",
    "plot_compare",
    "plot_leftover",
    "plot_mixture",
    "plot_search",
    "provenance_of",
    "reference_data",
    "search_outputs",
]
