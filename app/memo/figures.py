"""The memo's charts: the workbench's plotly figures, drawn as SVG, cached, made PDF pages.

The chart browser (:mod:`.chart_browser`) draws them, and the PDF pages are made while the memo
is laid out.

- the figures print in the memo's own font (DejaVu Sans), so chart labels match the text;
- each SVG is slimmed once when drawn (:func:`slim_svg`: 1981 -> 866 elements over the sample's
  ten charts, pixel-identical pages), so the PDF pages are made from less.
"""

from __future__ import annotations

import base64
import hashlib
import threading
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from obligor_memo.app.memo import chart_cache
from obligor_memo.app.memo.chart_browser import (
    ChartExporter,
    ChartsUnavailable,
    chart_timeout,
    is_timeout,
    running_exporter,
)
from obligor_memo.app.memo.svg_slim import slim_svg

PRINT_FONT = "DejaVu Sans"
# Chart text is at least 7 pt on the printed page. A chart is exported ``width`` px wide and
# scaled into its box: the A4 text column (210 - 2 x 16 mm = 178 mm = 504.6 pt; Letter's is
# wider) or half of it for a small chart (49 %). One px of font prints as box / width pt.
PRINT_MIN_PT = 7.2
COLUMN_PT = 178 / 25.4 * 72
SMALL_SHARE = 0.49


def min_font_px(width_px: int) -> int:
    """The smallest font [px] that prints at PRINT_MIN_PT once the chart is scaled into its box.

    Parameters
    ----------
    width_px : int
        The chart's export width [px]; below 700 it prints at half the column, else across it.

    Returns
    -------
    int
        The font size, rounded up [px].
    """
    import math

    box = COLUMN_PT * (SMALL_SHARE if width_px < 700 else 1.0)
    return math.ceil(PRINT_MIN_PT * width_px / box)


def raise_small_text(fig: Any, min_px: int) -> None:
    """Every font of the figure at least ``min_px``, changing the figure in place.

    Raised are the base font (ticks, legend, axis titles inherit it), and annotations and trace
    text set smaller on their own; larger fonts are kept.

    Parameters
    ----------
    fig : Any
        The plotly figure.
    min_px : int
        The smallest font size [px].
    """
    base = fig.layout.font.size or 12
    fig.update_layout(font_size=max(base, min_px))
    for annotation in fig.layout.annotations or ():
        if annotation.font.size is not None and annotation.font.size < min_px:
            annotation.font.size = min_px
    for trace in fig.data:
        font = getattr(trace, "textfont", None)
        if font is not None and font.size is not None and not isinstance(font.size, tuple) and font.size < min_px:
            trace.textfont.size = min_px


# --------------------------------------------------------------------------- figures


@dataclass(frozen=True)
class ChartSpec:
    """One chart of the memo: its key, the figure function that builds it, and its export width."""

    key: str
    """Key of the chart, e.g. ``asset_trend`` or ``recovery:<facility id>``."""
    builder: str
    """Function name in app.charts."""
    args: tuple[Any, ...] = ()
    """Arguments passed to the builder after the results."""
    width: int = 760
    """Export width [px]; the page scales it to the column."""


# Charts printed only in the technical annex (the sections of view.ANNEX_SECTIONS).
ANNEX_CHARTS = ("term_structure", "exposure", "recovery:", "loss_distribution")


def chart_specs(results: Any, annex: bool = True) -> list[ChartSpec]:
    """The memo's charts in the order the memo prints them (the first are drawn first).

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    annex : bool, optional
        Whether the technical annex is printed; without it, only the charts the committee memo
        prints.

    Returns
    -------
    list[ChartSpec]
        The charts: one recovery chart per facility, and the two review waterfalls only when
        the case records a previous review.
    """
    specs = _all_specs(results)
    if annex:
        return specs
    return [spec for spec in specs if not spec.key.startswith(ANNEX_CHARTS)]


def _all_specs(results: Any) -> list[ChartSpec]:
    specs = [
        ChartSpec("asset_trend", "asset_trend_figure"),
        ChartSpec("liabilities", "liabilities_figure"),
        ChartSpec("term_structure", "term_structure_figure"),
        ChartSpec("exposure", "exposure_figure"),
    ]
    specs += [ChartSpec(f"recovery:{f.id}", "recovery_figure", (f.id,), width=440) for f in results.facilities]
    specs += [
        ChartSpec("loss_distribution", "loss_distribution_figure"),
        ChartSpec("sensitivity", "sensitivity_figure"),
        ChartSpec("pd_grid", "pd_grid_figure"),
    ]
    if getattr(getattr(results.case, "review", None), "previous", None) is not None:
        specs += [
            ChartSpec("review:expected_loss", "review_waterfall_figure", ("expected_loss",)),
            ChartSpec("review:pd", "review_waterfall_figure", ("pd",)),
        ]
    return specs


def build_figures(results: Any, annex: bool = True) -> tuple[dict[str, Any], dict[str, str]]:
    """The workbench's figures for this memo, and a note for each one that cannot be built.

    Each figure is set in the memo's font on white, its small text raised to print at least
    PRINT_MIN_PT, and its export width kept on it (``_memo_width``).

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    annex : bool, optional
        Whether the technical annex is printed (see :func:`chart_specs`).

    Returns
    -------
    tuple[dict[str, Any], dict[str, str]]
        The plotly figures by chart key, in print order, and for each chart that cannot be
        built the note printed in its place.
    """
    from obligor_memo.app import charts

    figures: dict[str, Any] = {}
    notes: dict[str, str] = {}
    for spec in chart_specs(results, annex):
        builder: Callable[..., Any] | None = getattr(charts, spec.builder, None)
        if builder is None:
            notes[spec.key] = f"This chart is not available in this version ({spec.builder} is missing)."
            continue
        try:
            fig = builder(results, *spec.args)
        except ValueError as exc:  # the results lack what this chart draws: say so on the page
            notes[spec.key] = f"This chart could not be drawn: {exc}."
            continue
        if fig is None:
            notes[spec.key] = "No chart: the results hold nothing to draw here."
            continue
        # The memo's own font: the same letters as the text, and no font fallback per label.
        fig.update_layout(paper_bgcolor="white", plot_bgcolor="white", font_family=PRINT_FONT)
        raise_small_text(fig, min_font_px(spec.width))
        if spec.width < 700:
            # Half-width on paper: the legend wraps to one entry a line, so give it its own room
            # below the axis title instead of letting the two overlap.
            fig.update_layout(height=470, margin={"b": 150}, legend={"y": -0.30})
        object.__setattr__(fig, "_memo_width", spec.width)
        figures[spec.key] = fig
    return figures, notes


# A reprint after a narrative edit draws the same figures: reuse their SVG instead of the browser.
_SVG_CACHE: dict[str, str] = {}
_SVG_CACHE_SIZE = 64
_CACHE_LOCK = threading.Lock()


def figure_key(fig: Any) -> str:
    """The SVG cache's key of a figure: its JSON, export width and the drawing tools' versions, hashed.

    Parameters
    ----------
    fig : Any
        The plotly figure.

    Returns
    -------
    str
        The SHA-256 hex digest.
    """
    spec = fig.to_json() + f"|{getattr(fig, '_memo_width', 760)}|{chart_cache.drawing_versions()}"
    return hashlib.sha256(spec.encode("utf-8")).hexdigest()


def svg_data_uri(svg: str) -> str:
    """An SVG as a base64 ``data:image/svg+xml`` URI.

    Parameters
    ----------
    svg : str
        The SVG text.

    Returns
    -------
    str
        The data URI.
    """
    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")


def export_figures(figures: dict[str, Any], *, exporter: ChartExporter | None = None) -> dict[str, str]:
    """SVG text of each figure, from the cache or drawn by a chart browser.

    Figures in neither the process's cache nor the folder of kept drawings
    (:mod:`.chart_cache`) are drawn in one batch and slimmed (:func:`slim_svg`), then kept in
    both; the process keeps the last 64 drawings.

    Parameters
    ----------
    figures : dict[str, Any]
        Plotly figures by chart key.
    exporter : ChartExporter | None, optional
        The browser that draws them; None takes the process-wide one when running, else a
        browser started and closed for this call.

    Returns
    -------
    dict[str, str]
        The slimmed SVG text of each figure, by the same keys.

    Raises
    ------
    ChartsUnavailable
        If a figure must be drawn and the browser cannot draw it.
    """
    keys = {key: figure_key(fig) for key, fig in figures.items()}
    with _CACHE_LOCK:
        missing = {key: fig for key, fig in figures.items() if keys[key] not in _SVG_CACHE}
    if missing:  # drawn by an earlier process?
        kept = _load_kept([keys[key] for key in missing])
        missing = {key: fig for key, fig in missing.items() if keys[key] not in kept}
    if missing:
        own = None
        chosen = exporter or running_exporter()
        if chosen is None:
            chosen = own = ChartExporter().start(wait=False)
        try:
            drawn = chosen.export_svg(missing)
        finally:
            if own is not None:
                own.close()
        slimmed = {keys[key]: slim_svg(svg) for key, svg in drawn.items()}
        chart_cache.write(slimmed)
        with _CACHE_LOCK:
            _SVG_CACHE.update(slimmed)
            while len(_SVG_CACHE) > _SVG_CACHE_SIZE:
                _SVG_CACHE.pop(next(iter(_SVG_CACHE)))
    with _CACHE_LOCK:
        return {key: _SVG_CACHE[keys[key]] for key in figures}


def export_charts(results: Any, annex: bool = True) -> tuple[dict[str, str], dict[str, str]]:
    """SVG data URIs for every chart, in one Chromium session; notes where a chart is absent.

    Without the process-wide browser running, one is started for this call (it comes up while
    the figures are built) and closed at the end.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    annex : bool, optional
        Whether the technical annex is printed (see :func:`chart_specs`).

    Returns
    -------
    tuple[dict[str, str], dict[str, str]]
        The data URI of each chart by key, and the note of each chart that could not be built.

    Raises
    ------
    ChartsUnavailable
        If no browser can draw the charts.
    """
    own = None if running_exporter() is not None else ChartExporter().start(wait=False)
    try:
        # The browser (if started here) comes up while the figures are being built.
        figures, notes = build_figures(results, annex)
        svgs = export_figures(figures, exporter=own)
    finally:
        if own is not None:
            own.close()
    return {key: svg_data_uri(svg) for key, svg in svgs.items()}, notes


def _all_drawn(figures: dict[str, Any]) -> bool:
    """Every figure's SVG is in the process's cache or kept on disk already."""
    keys = [figure_key(fig) for fig in figures.values()]
    with _CACHE_LOCK:
        missing = [key for key in keys if key not in _SVG_CACHE]
    return len(_load_kept(missing)) == len(missing)


def _load_kept(keys: list[str]) -> set[str]:
    """Bring the drawings of ``keys`` kept on disk into the process's cache; the keys found."""
    kept = chart_cache.read(keys) if keys else {}
    with _CACHE_LOCK:
        _SVG_CACHE.update(kept)
    return set(kept)


class ChartJob:
    """The memo's figures, built now and drawn in the background while the memo is laid out.

    The browser (started here unless the process-wide one runs, and only if a figure is not in
    the SVG cache) comes up while the figures are built; on a worker thread the SVGs are then
    drawn and made one PDF of pages, while the memo is laid out. :meth:`svgs` and :meth:`pages`
    give the result or raise :class:`ChartsUnavailable`.

    Attributes
    ----------
    figures : dict[str, Any]
        The plotly figures by chart key, in print order (see :func:`build_figures`).
    notes : dict[str, str]
        The note printed in the place of each chart that could not be built.
    """

    def __init__(self, results: Any, *, exporter: ChartExporter | None = None, annex: bool = True):
        """Build the figures now and start drawing them on a worker thread.

        Parameters
        ----------
        results : Any
            The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
        exporter : ChartExporter | None, optional
            A browser the caller started for this memo alone (the command line starts it before
            the analysis); it is closed as soon as the charts are drawn, so its memory is given
            back before the PDF is written. None uses the process-wide browser, or one started
            here when a figure is not in the SVG cache.
        annex : bool, optional
            Whether the technical annex is printed (see :func:`chart_specs`).

        Raises
        ------
        ChartsUnavailable
            If a browser needed here cannot be created (none found, or a bad timeout set); the
            browser is closed when building the figures fails.
        """
        import concurrent.futures

        # The first memo of a process starts its browser at once, so that it comes up while the
        # figures are built. A later one (a reprint: its figures were probably drawn before)
        # builds them first and starts a browser only if one of them is not drawn yet; starting
        # and closing an unused browser cost about 1.5 s of CPU beside the layout. With drawings
        # kept on disk, any memo may be a reprint: the command line decides before the analysis
        # (see chart_cache.memo_drawn) and passes the browser it started, if any.
        early = exporter is None and running_exporter() is None and not _SVG_CACHE and chart_cache.cache_dir() is None
        own = exporter or (ChartExporter().start(wait=False) if early else None)
        try:
            self.figures, self.notes = build_figures(results, annex)
            if own is None and running_exporter() is None and not _all_drawn(self.figures):
                own = ChartExporter().start(wait=False)
        except BaseException:
            if own is not None:
                own.close(force=True)
            raise
        exporter = own or running_exporter()
        self._memo_key = chart_cache.memo_key(results.fingerprint, annex=annex) if chart_cache.cache_dir() else None
        self._timeout = exporter.timeout if exporter is not None else chart_timeout()
        self._future: concurrent.futures.Future[tuple[dict[str, str], bytes]] = concurrent.futures.Future()
        self._thread = threading.Thread(target=self._draw, args=(own,), name="memo-chart-job", daemon=True)
        self._thread.start()

    def _draw(self, own: ChartExporter | None) -> None:
        from obligor_memo.app.memo.chart_pages import ChartPagesError, charts_pdf

        try:
            svgs = export_figures(self.figures, exporter=own)
            if self._memo_key is not None:  # the next process printing this memo needs no browser
                chart_cache.remember_memo(self._memo_key, (figure_key(fig) for fig in self.figures.values()))
            if own is not None:
                own.close()  # the browser is not needed for the PDF pages
                own = None
            try:
                pages = charts_pdf([svgs[key] for key in self.figures], timeout=self._timeout)
            except ChartPagesError as exc:
                raise ChartsUnavailable(
                    f"The charts were drawn but could not be made into PDF pages "
                    f"({exc}). Fix: install librsvg2-bin (rsvg-convert), or set "
                    f"OBLIGOR_MEMO_SVG_CONVERTER=none, or print with --no-charts."
                ) from None
            self._future.set_result((svgs, pages))
        except BaseException as exc:
            self._future.set_exception(exc)
        finally:
            if own is not None:
                own.close()

    def done(self) -> bool:
        """The drawing has finished (well or not); :meth:`svgs` will not wait.

        Returns
        -------
        bool
            Whether the drawing has finished.
        """
        return self._future.done()

    def svgs(self) -> dict[str, str]:
        """Every drawn figure's SVG text by chart key, waiting for the drawing.

        Returns
        -------
        dict[str, str]
            The slimmed SVG text of each figure of :attr:`figures`.

        Raises
        ------
        ChartsUnavailable
            If the charts could not be drawn or made PDF pages, or the drawing did not finish
            within three times the timeout plus 30 s.
        """
        return self._result()[0]

    def pages(self) -> bytes:
        """The charts as one PDF, a page per figure in the order of :attr:`figures`, waiting for the drawing.

        Returns
        -------
        bytes
            The PDF.

        Raises
        ------
        ChartsUnavailable
            If the charts could not be drawn or made PDF pages, or the drawing did not finish
            within three times the timeout plus 30 s.
        """
        return self._result()[1]

    def _result(self) -> tuple[dict[str, str], bytes]:
        try:
            # The exporter bounds its own waits (start, batch, close); this is a last backstop.
            return self._future.result(timeout=3 * self._timeout + 30)
        except ChartsUnavailable:
            raise
        except BaseException as exc:
            if is_timeout(exc):
                raise ChartsUnavailable(
                    f"Chart export did not finish within {3 * self._timeout + 30:g} s. "
                    f"Try again, or print with --no-charts."
                ) from None
            raise

    def finish(self) -> None:
        """Wait for the worker (and the browser it may have started) to finish."""
        self._thread.join(timeout=3 * self._timeout + 30)
