"""The printed credit memo: results -> HTML (Jinja2) -> PDF (WeasyPrint), charts as vector forms.

The charts are the workbench's own plotly figures (:mod:`obligor_memo.app.charts`), exported to
SVG through kaleido and a system Chromium, made PDF pages and placed in their boxes after layout
(:mod:`.chart_pages`). Chromium starts once per memo (every figure goes through one session)
or once per process when the workbench keeps :func:`start_chart_exporter` running.

Safety: Jinja2 autoescapes and fails on any undefined name; WeasyPrint fetches nothing except
the data: URIs this module generated and files inside the package's own asset folder.
Reproducibility: PDF dates, identifiers and attachment dates are fixed; only the printed
generation time (and the record that repeats it) differs between two runs on the same case.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from datetime import UTC, datetime
from typing import Any

from obligor_memo.app.memo import layout
from obligor_memo.app.memo import record as pdfcase
from obligor_memo.app.memo.chart_browser import ChartExporter, ChartsUnavailable, figure_size
from obligor_memo.app.memo.chart_pages import ChartPagesError
from obligor_memo.app.memo.fetch import CHART_SCHEME, memo_fetcher
from obligor_memo.app.memo.figures import ChartJob, export_charts
from obligor_memo.app.memo.templates import PAGE_SIZES
from obligor_memo.app.memo.view import memo_html
from obligor_memo.app.memo.weasy import weasyprint

# Any fixed instant works; a PDF reader shows it as the document date, so it is stated plainly.
FIXED_PDF_DATE = datetime(2000, 1, 1, tzinfo=UTC)


def render_memo_html(
    results: Any,
    *,
    charts: bool = True,
    page_size: str | None = None,
    generated_at: datetime | None = None,
    annex: bool = False,
) -> str:
    """The memo's HTML with the charts inline as SVG data URIs (for reading or another renderer).

    :func:`render_memo_pdf` references the charts instead and draws them while laying out.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    charts : bool, optional
        Whether to draw the charts; False prints a note in each chart's place.
    page_size : str | None, optional
        "A4" or "Letter"; None takes the case's ``memo.page_size``.
    generated_at : datetime | None, optional
        The print time shown; None for now.
    annex : bool, optional
        Whether to add the technical annex.

    Returns
    -------
    str
        The HTML document.

    Raises
    ------
    ValueError
        If the page size is not allowed.
    ChartsUnavailable
        If charts are asked for and no browser can draw them.
    """
    size = _page_size(results, page_size)
    results = as_printed(results, size)
    svgs, notes = export_charts(results, annex) if charts else ({}, {})
    return memo_html(
        results,
        charts=svgs,
        notes=notes,
        charts_requested=charts,
        page_size=size,
        stamp=_stamp(generated_at),
        annex=annex,
    )


def _stamp(generated_at: datetime | None) -> str:
    stamp = (generated_at or datetime.now(UTC)).astimezone(UTC)
    return stamp.strftime("%Y-%m-%d %H:%M:%S UTC")


def _page_size(results: Any, page_size: str | None) -> str:
    size = page_size or results.case.memo.page_size
    if size not in PAGE_SIZES:
        raise ValueError(f"page_size: got {size!r}; allowed: {', '.join(PAGE_SIZES)}")
    return size


def as_printed(results: Any, size: str) -> Any:
    """The results with the case saying the paper it is printed on.

    A memo printed on Letter from an A4 case embeds, lists and fingerprints
    ``memo.page_size: Letter`` (no figure depends on it).

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    size : str
        The paper size printed on, "A4" or "Letter".

    Returns
    -------
    Any
        ``results`` itself when the case already says ``size``, else a copy whose case says it
        and whose fingerprint is computed again.
    """
    if results.case.memo.page_size == size:
        return results
    import dataclasses

    from obligor_memo.engine.evaluate import fingerprint

    case = printed_case(results.case, size)
    return dataclasses.replace(results, case=case, fingerprint=fingerprint(case))


def printed_case(case: Any, size: str) -> Any:
    """The case as a memo on ``size`` paper embeds it: ``memo.page_size`` set to the paper.

    Parameters
    ----------
    case : Any
        A validated case (``engine.case.Case``).
    size : str
        The paper size printed on, "A4" or "Letter".

    Returns
    -------
    Any
        ``case`` itself when it says ``size`` already, else a copy that does.
    """
    if case.memo.page_size == size:
        return case
    return case.model_copy(update={"memo": case.memo.model_copy(update={"page_size": size})})


def html_to_pdf(
    html: str,
    *,
    results: Any,
    page_size: str,
    generated_at: str,
    allowed_data_uris: set[str],
    url_fetcher: Any = None,
    charts: ChartJob | None = None,
    progress: Callable[[str], None] | None = None,
) -> bytes:
    """Lay out and write the PDF, then put each chart in its place.

    The layout never waits for the charts: ``<img src="memo-chart:N" id="memo-chart-N">`` is laid
    out as an empty image of chart N's own size, and chart N's PDF page (drawn meanwhile from its
    SVG, off this thread) is placed in that box after writing. The charts are vector forms, as
    they would be had WeasyPrint drawn the SVG itself, which cost about 0.6 s of this thread's
    time on the sample memo. The case and the printed figures are attached for ``verify``, and
    the PDF's identifier is derived from the case's fingerprint.

    Parameters
    ----------
    html : str
        The memo's HTML.
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    page_size : str
        The paper size, "A4" or "Letter".
    generated_at : str
        The print time, as the memo shows it and the record repeats it.
    allowed_data_uris : set[str]
        The data URIs the HTML may load.
    url_fetcher : Any, optional
        The WeasyPrint URL fetcher; None uses :func:`memo_fetcher`.
    charts : ChartJob | None, optional
        The charts being drawn; None for a memo without charts.
    progress : Callable[[str], None] | None, optional
        Told each step as it starts: "layout", "charts" (waiting for the drawings), "writing"
        (placing them).

    Returns
    -------
    bytes
        The memo's PDF.

    Raises
    ------
    ChartsUnavailable
        If the charts could not be drawn or placed.
    """
    Attachment = weasyprint().Attachment

    sizes = [figure_size(fig) for fig in charts.figures.values()] if charts is not None else []
    fetcher = url_fetcher or memo_fetcher(allowed_data_uris, sizes)
    attachments = [
        Attachment(
            string=pdfcase.canonical_case_json(results).decode("ascii"),
            name=pdfcase.CASE_FILE,
            description="The case this memo was computed from (canonical JSON)",
            created=FIXED_PDF_DATE,
            modified=FIXED_PDF_DATE,
            url_fetcher=fetcher,
        ),
        Attachment(
            string=pdfcase.figures_record(results, generated_at=generated_at).decode("ascii"),
            name=pdfcase.FIGURES_FILE,
            description="Figures as printed, for obligor-memo verify",
            created=FIXED_PDF_DATE,
            modified=FIXED_PDF_DATE,
            url_fetcher=fetcher,
        ),
    ]
    identifier = hashlib.sha256(results.fingerprint.encode("ascii")).hexdigest()[:32].encode("ascii")
    say = progress or (lambda step: None)
    say("layout")
    laid_out = layout.lay_out(
        html,
        chart_sizes=sizes,
        page_size=page_size,
        fetcher=fetcher,
        write_options={"attachments": attachments, "pdf_identifier": identifier},
    )
    if charts is None or not laid_out.placements:
        return laid_out.pdf
    say("charts")
    pages = charts.pages()  # waits for the drawings; raises why not
    say("writing")
    try:
        return layout.place_charts(laid_out, pages)
    except ChartPagesError as exc:
        raise ChartsUnavailable(
            f"The charts could not be placed in the memo ({exc}). Try again, or print with --no-charts."
        ) from None


def render_memo_pdf(
    results: Any,
    *,
    charts: bool = True,
    page_size: str | None = None,
    generated_at: datetime | None = None,
    exporter: ChartExporter | None = None,
    progress: Callable[[str], None] | None = None,
    annex: bool = False,
) -> bytes:
    """The memo as PDF bytes (the committee memo; ``annex=True`` adds the technical annex).

    The charts are drawn by the browser, and made into PDF pages, while this thread writes the
    HTML and WeasyPrint lays it out and writes it; they are then placed in their boxes.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    charts : bool, optional
        Whether to draw the charts; False prints a note in each chart's place.
    page_size : str | None, optional
        "A4" or "Letter"; None takes the case's ``memo.page_size``.
    generated_at : datetime | None, optional
        The print time shown; None for now.
    exporter : ChartExporter | None, optional
        A browser started for this memo alone, closed once its charts are drawn (without
        charts, once the memo is written).
    progress : Callable[[str], None] | None, optional
        Told each step as it starts: "layout", "charts" (waiting for the drawings), "writing"
        (placing them).
    annex : bool, optional
        Whether to add the technical annex.

    Returns
    -------
    bytes
        The memo's PDF, carrying its case and printed figures.

    Raises
    ------
    ValueError
        If the page size is not allowed.
    ChartsUnavailable
        When charts are asked for and no browser can draw them (the message names the fix).
    """
    size = _page_size(results, page_size)
    results = as_printed(results, size)
    stamp = _stamp(generated_at)
    with layout.objects_set_aside():  # plotly's figure building makes many objects too
        job = ChartJob(results, exporter=exporter, annex=annex) if charts else None
    try:
        placeholders = {key: f"{CHART_SCHEME}{i}" for i, key in enumerate(job.figures)} if job else {}
        html = memo_html(
            results,
            charts=placeholders,
            notes=job.notes if job else {},
            charts_requested=charts,
            page_size=size,
            stamp=stamp,
            annex=annex,
        )
        return html_to_pdf(
            html,
            results=results,
            page_size=size,
            generated_at=stamp,
            allowed_data_uris=set(),
            charts=job,
            progress=progress,
        )
    finally:
        if job is not None:
            job.finish()  # the browser this memo started is closed before returning
        elif exporter is not None:
            exporter.close()
