"""The memo's layout: WeasyPrint lays the HTML out, then the chart pages are drawn into their boxes.

The HTML is laid out in one piece, around an empty box of each chart's size; the chart pages are
then drawn into their boxes as vector forms (pikepdf).
"""

from __future__ import annotations

import gc
import io
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Any

from obligor_memo.app.memo import chart_pages
from obligor_memo.app.memo.chart_pages import Placement
from obligor_memo.app.memo.fetch import CHART_ANCHOR, memo_fetcher
from obligor_memo.app.memo.templates import ASSETS_DIR, PAGE_SIZES, TEMPLATES_DIR
from obligor_memo.app.memo.weasy import weasyprint

# Fonts subset (the PDF stays small), no hinting (not needed on paper), images as they are.
WRITE_OPTIONS: dict[str, Any] = {"full_fonts": False, "hinting": False, "optimize_images": False}
STYLESHEETS = ("memo.css", "memo_running.css")


@dataclass
class LaidOut:
    """A laid-out and written memo: its PDF, its page count and where its charts' boxes are."""

    pdf: bytes
    """The written memo, charts not yet placed."""
    pages: int
    """Number of pages."""
    placements: list[Placement] = field(default_factory=list)
    """Where each chart found in the layout goes."""


@contextmanager
def objects_set_aside() -> Iterator[None]:
    """Within the block, the objects the process already holds are kept out of garbage collection.

    The layout builds tens of thousands of long-lived boxes, which keeps triggering full
    garbage collections; each one would walk every object the process already holds (plotly's
    figure classes alone are a large heap). Frozen objects are skipped by the collector, so only
    the memo's own objects are scanned: layout 1.8 s -> 1.3 s of CPU on the sample memo.
    Everything is handed back to the collector afterwards; nothing is kept alive longer.

    Yields
    ------
    None
        Control, once the existing objects are frozen (``gc.freeze``).
    """
    gc.freeze()
    try:
        yield
    finally:
        gc.unfreeze()


def _sheets(page_size: str, fetcher: Any) -> list[Any]:
    CSS = weasyprint().CSS

    sheets = [
        CSS(string=(TEMPLATES_DIR / name).read_text(encoding="utf-8"), url_fetcher=fetcher) for name in STYLESHEETS
    ]
    return sheets + [CSS(string=f"@page {{ size: {PAGE_SIZES[page_size]}; }}", url_fetcher=fetcher)]


def lay_out(
    html: str,
    *,
    chart_sizes: Sequence[tuple[int, int]],
    page_size: str,
    fetcher: Any = None,
    write_options: dict[str, Any] | None = None,
) -> LaidOut:
    """Lay out and write the memo; chart N's box is the element with id memo-chart-N.

    Parameters
    ----------
    html : str
        The memo's HTML (relative URLs resolve in the package's asset folder).
    chart_sizes : Sequence[tuple[int, int]]
        Width and height of each chart, in chart order [px].
    page_size : str
        The paper size, "A4" or "Letter".
    fetcher : Any, optional
        The WeasyPrint URL fetcher; None uses :func:`memo_fetcher` with no data URIs.
    write_options : dict[str, Any] | None, optional
        Options of ``write_pdf`` on top of :data:`WRITE_OPTIONS` (attachments, identifier).

    Returns
    -------
    LaidOut
        The written PDF, its page count and the placement of each chart's box.

    Raises
    ------
    ChartPagesError
        If this WeasyPrint does not report box sizes (before version 70).
    """
    HTML = weasyprint().HTML

    fetcher = fetcher or memo_fetcher(set(), list(chart_sizes))
    with objects_set_aside():
        document = HTML(string=html, base_url=ASSETS_DIR.as_uri() + "/", url_fetcher=fetcher)
        laid_out = document.render(stylesheets=_sheets(page_size, fetcher))
        anchors = [CHART_ANCHOR.format(i) for i in range(len(chart_sizes))]
        placements = chart_pages.chart_placements(laid_out, anchors)
        data = laid_out.write_pdf(**{**WRITE_OPTIONS, **(write_options or {})})
    return LaidOut(data, len(laid_out.pages), placements)


def place_charts(memo: LaidOut, charts: bytes) -> bytes:
    """The memo with each chart page drawn, as a vector form XObject, into its box.

    Saved with a content-derived id so the same case gives the same bytes.

    Parameters
    ----------
    memo : LaidOut
        The laid-out memo.
    charts : bytes
        The charts PDF, a page per chart in chart order.

    Returns
    -------
    bytes
        The memo's PDF with the charts in place.

    Raises
    ------
    ChartPagesError
        If the charts PDF has fewer pages than the charts to place.
    """
    import pikepdf

    with pikepdf.open(io.BytesIO(memo.pdf)) as pdf, pikepdf.open(io.BytesIO(charts)) as source:
        operators: dict[int, list[bytes]] = {}
        for placement in sorted(memo.placements, key=lambda p: p.chart_page):
            chart, number = placement.chart_page, placement.page
            if chart >= len(source.pages):
                raise chart_pages.ChartPagesError(
                    f"the charts PDF has {len(source.pages)} pages, fewer than the charts to place"
                )
            operators.setdefault(number, []).append(
                chart_pages.form_operators(
                    pdf,
                    pdf.pages[number],
                    chart_pages.as_form(pdf, source.pages[chart]),
                    placement.box,
                    pikepdf.Name(f"/MemoChart{chart}"),
                )
            )
        for number, ops in operators.items():
            chart_pages.append_drawing(pdf.pages[number], ops)
        out = io.BytesIO()
        pdf.save(
            out,
            deterministic_id=True,
            fix_metadata_version=False,
            compress_streams=True,
            object_stream_mode=pikepdf.ObjectStreamMode.generate,
        )
        return out.getvalue()
