"""The printed credit memo: results -> view -> HTML (Jinja2) -> PDF (WeasyPrint).

The charts are placed as vector forms, and the case and the printed figures are embedded for
``verify``.

How a memo is printed: :class:`.figures.ChartJob` has Chromium draw the plotly figures as SVG
(cached) and ``rsvg-convert`` make them PDF pages, on a thread; meanwhile :mod:`.view` builds
the HTML and :mod:`.layout` lays it out around same-size empty boxes; the chart pages are then
drawn into their boxes (:mod:`.chart_pages`) and the record is attached (:mod:`.record`).
"""

from obligor_memo.app.memo.chart_browser import (
    ChartExporter,
    ChartsUnavailable,
    running_exporter,
    start_chart_exporter,
    stop_chart_exporter,
)
from obligor_memo.app.memo.record import MemoRecordError, VerifyReport, verify_memo
from obligor_memo.app.memo.render import render_memo_html, render_memo_pdf

__all__ = [
    "ChartExporter",
    "ChartsUnavailable",
    "MemoRecordError",
    "VerifyReport",
    "render_memo_html",
    "render_memo_pdf",
    "running_exporter",
    "start_chart_exporter",
    "stop_chart_exporter",
    "verify_memo",
]
