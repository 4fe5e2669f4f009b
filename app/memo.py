"""The printed credit memo: results -> HTML (Jinja2) -> PDF (WeasyPrint), charts as vector SVG.

The charts are the workbench's own plotly figures (:mod:`app.charts`), exported to SVG through
kaleido and a system Chromium. Chromium starts once per memo (every figure goes through one
session) or once per process when the workbench keeps :func:`start_chart_exporter` running.

Safety: Jinja2 autoescapes and fails on any undefined name; WeasyPrint fetches nothing except
the data: URIs this module generated and files inside the package's own asset folder.
Reproducibility: PDF dates, identifiers and attachment dates are fixed; only the printed
generation time (and the record that repeats it) differs between two runs on the same case.
"""

from __future__ import annotations

import asyncio
import base64
import hashlib
import os
import re
import threading
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Callable

from app import formatting as fmt
from app import pdfcase

TEMPLATES_DIR = Path(__file__).resolve().parent.parent / "templates"
ASSETS_DIR = Path(__file__).resolve().parent / "assets" / "memo"
BROWSER_CANDIDATES = ("/usr/bin/chromium", "/usr/bin/chromium-browser", "/usr/bin/google-chrome")
CHART_TIMEOUT_SECONDS = 60.0
PAGE_SIZES = {"A4": "A4", "Letter": "letter"}
# Any fixed instant works; a PDF reader shows it as the document date, so it is stated plainly.
_NESTED_IMAGE = re.compile(r'<image[^>]*?href="(data:image/png;base64,[A-Za-z0-9+/=]+)"')
FIXED_PDF_DATE = datetime(2000, 1, 1, tzinfo=timezone.utc)
NO_CHART_FIX = ("install Chromium (for example 'apt-get install chromium'), or set BROWSER_PATH to "
                "a Chrome or Chromium executable, or print without charts with --no-charts")


class ChartsUnavailable(RuntimeError):
    """Charts were asked for but cannot be drawn; the message names the fix."""


def find_browser() -> str:
    """BROWSER_PATH if set, else the first usual install path; raise naming the fix."""
    chosen = os.environ.get("BROWSER_PATH")
    if chosen:
        if os.path.isfile(chosen) and os.access(chosen, os.X_OK):
            return chosen
        raise ChartsUnavailable(f"BROWSER_PATH is set to {chosen!r}, which is not an executable "
                                f"file. Charts need a Chrome or Chromium browser: {NO_CHART_FIX}.")
    for path in BROWSER_CANDIDATES:
        if os.path.isfile(path) and os.access(path, os.X_OK):
            return path
    raise ChartsUnavailable("No Chrome or Chromium browser was found (looked at BROWSER_PATH and "
                            f"{', '.join(BROWSER_CANDIDATES)}). Charts need one: {NO_CHART_FIX}.")


class ChartExporter:
    """One Chromium (through kaleido) on a private event-loop thread, reused for many figures.

    ``start(wait=False)`` launches the browser in the background, so its start-up overlaps the
    analysis and the figure building; the first export waits for it.
    """

    def __init__(self, *, browser_path: str | None = None, timeout: float = CHART_TIMEOUT_SECONDS,
                 tabs: int = 1):
        self.browser_path = browser_path or find_browser()
        self.timeout = timeout
        self.tabs = tabs
        self._loop: asyncio.AbstractEventLoop | None = None
        self._thread: threading.Thread | None = None
        self._opening: Any = None            # concurrent.futures.Future of the open browser
        self._kaleido: Any = None
        self._lock = threading.Lock()

    @property
    def running(self) -> bool:
        """Started (or starting) and not closed."""
        return self._opening is not None

    def start(self, *, wait: bool = True) -> "ChartExporter":
        if self._opening is None:
            from kaleido import Kaleido, PageGenerator

            loop = asyncio.new_event_loop()
            self._loop = loop
            self._thread = threading.Thread(target=loop.run_forever, name="memo-chart-exporter",
                                            daemon=True)
            self._thread.start()

            async def _open() -> Any:
                # mathjax off: the default would load it from a CDN, and no chart needs TeX.
                # Extensions off: fewer browser processes, less memory, nothing loaded from outside.
                k = Kaleido(n=self.tabs, timeout=self.timeout,
                            page_generator=PageGenerator(mathjax=False), path=self.browser_path,
                            enable_extensions=False)
                await k.open()
                return k

            self._opening = asyncio.run_coroutine_threadsafe(_open(), loop)
        if wait:
            self._ready()
        return self

    def _ready(self) -> Any:
        if self._kaleido is None:
            try:
                self._kaleido = self._opening.result(timeout=self.timeout)
            except BaseException as exc:
                self.close()
                raise ChartsUnavailable(f"Chromium at {self.browser_path} could not be started for "
                                        f"chart export ({type(exc).__name__}: {exc}). Fix: "
                                        f"{NO_CHART_FIX}.") from None
        return self._kaleido

    def export_svg(self, figures: dict[str, Any]) -> dict[str, str]:
        """Every figure as SVG text, in one browser session; the whole batch gets the timeout."""
        with self._lock:
            if self._opening is None:
                self.start(wait=False)
            kaleido = self._ready()

            async def _one(fig: Any) -> str:
                opts = {"format": "svg", "width": int(getattr(fig, "_memo_width", 760)),
                        "height": int(fig.layout.height or 420)}
                data = await kaleido.calc_fig(fig, opts=opts)
                return data.decode("utf-8") if isinstance(data, bytes) else str(data)

            async def _all() -> dict[str, str]:
                # The browser's tabs render concurrently; results keep the figures' order.
                svgs = await asyncio.gather(*(_one(fig) for fig in figures.values()))
                return dict(zip(figures, svgs))

            assert self._loop is not None
            future = asyncio.run_coroutine_threadsafe(_all(), self._loop)
            try:
                return future.result(timeout=self.timeout)
            except TimeoutError:
                future.cancel()
                self.close()
                raise ChartsUnavailable(f"Chart export took longer than {self.timeout:g} s and was "
                                        "stopped. Try again, or print with --no-charts.") from None

    def close(self) -> None:
        loop, opening = self._loop, self._opening
        self._kaleido = self._opening = None
        if loop is not None and opening is not None:
            try:
                # A browser still starting is waited for, so that no Chromium is left behind.
                k = opening.result(timeout=self.timeout)
                asyncio.run_coroutine_threadsafe(k.close(), loop).result(timeout=10)
            except Exception:  # the browser may already be gone; the loop still has to stop
                pass
        if loop is not None:
            loop.call_soon_threadsafe(loop.stop)
            if self._thread is not None:
                self._thread.join(timeout=5)
            loop.close()
        self._loop = self._thread = None


_EXPORTER: ChartExporter | None = None


def start_chart_exporter(*, wait: bool = True) -> ChartExporter:
    """Start (once) the process-wide exporter; later memos reuse its browser. With
    ``wait=False`` the browser starts in the background while the caller gets on with its work."""
    global _EXPORTER
    if _EXPORTER is None or not _EXPORTER.running:
        _EXPORTER = ChartExporter().start(wait=wait)
    return _EXPORTER


def stop_chart_exporter() -> None:
    global _EXPORTER
    if _EXPORTER is not None:
        _EXPORTER.close()
        _EXPORTER = None


# --------------------------------------------------------------------------- charts


@dataclass(frozen=True)
class ChartSpec:
    key: str
    builder: str                 # function name in app.charts
    args: tuple[Any, ...] = ()
    width: int = 760             # export width [px]; the page scales it to the column


def chart_specs(results: Any) -> list[ChartSpec]:
    specs = [ChartSpec("asset_trend", "asset_trend_figure"), ChartSpec("liabilities", "liabilities_figure"),
             ChartSpec("term_structure", "term_structure_figure"), ChartSpec("exposure", "exposure_figure")]
    specs += [ChartSpec(f"recovery:{f.id}", "recovery_figure", (f.id,), width=520) for f in results.facilities]
    specs += [ChartSpec("loss_distribution", "loss_distribution_figure"),
              ChartSpec("sensitivity", "sensitivity_figure"), ChartSpec("pd_grid", "pd_grid_figure")]
    return specs


def build_figures(results: Any) -> tuple[dict[str, Any], dict[str, str]]:
    """The workbench's figures for this memo, and a note for each one that cannot be built."""
    from app import charts

    figures: dict[str, Any] = {}
    notes: dict[str, str] = {}
    for spec in chart_specs(results):
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
        fig.update_layout(paper_bgcolor="white", plot_bgcolor="white")
        if spec.width < 700:
            # Half-width on paper: the legend wraps to one entry a line, so give it its own room
            # below the axis title instead of letting the two overlap.
            fig.update_layout(height=430, margin={"b": 135}, legend={"y": -0.28})
        object.__setattr__(fig, "_memo_width", spec.width)
        figures[spec.key] = fig
    return figures, notes


# A reprint after a narrative edit draws the same figures: reuse their SVG instead of the browser.
_SVG_CACHE: dict[str, str] = {}
_SVG_CACHE_SIZE = 64


def _figure_key(fig: Any) -> str:
    spec = fig.to_json() + f"|{getattr(fig, '_memo_width', 760)}|{_kaleido_version()}"
    return hashlib.sha256(spec.encode("utf-8")).hexdigest()


def _kaleido_version() -> str:
    from importlib.metadata import version

    return version("kaleido")


def _svg_data_uri(svg: str) -> str:
    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")


def export_charts(results: Any) -> tuple[dict[str, str], dict[str, str]]:
    """SVG data URIs for every chart, in one Chromium session; notes where a chart is absent."""
    if _EXPORTER is not None and _EXPORTER.running:
        exporter, own = _EXPORTER, False
    else:
        # Once per memo: the browser starts while the figures are being built.
        exporter, own = ChartExporter().start(wait=False), True
    try:
        figures, notes = build_figures(results)
        keys = {key: _figure_key(fig) for key, fig in figures.items()}
        missing = {key: fig for key, fig in figures.items() if keys[key] not in _SVG_CACHE}
        if missing:
            for key, svg in exporter.export_svg(missing).items():
                _SVG_CACHE[keys[key]] = svg
        svgs = {key: _SVG_CACHE[keys[key]] for key in figures}
        while len(_SVG_CACHE) > _SVG_CACHE_SIZE:
            _SVG_CACHE.pop(next(iter(_SVG_CACHE)))
    finally:
        if own:
            exporter.close()
    return {key: _svg_data_uri(svg) for key, svg in svgs.items()}, notes


# --------------------------------------------------------------------------- HTML


def _environment() -> Any:
    from jinja2 import Environment, FileSystemLoader, StrictUndefined

    env = Environment(loader=FileSystemLoader(str(TEMPLATES_DIR)), autoescape=True,
                      undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    env.filters.update({
        "money": fmt.money, "pct": fmt.pct, "pd_pct": fmt.pd_pct, "num": fmt.num, "years": fmt.years,
        "mn": _in_millions, "label": _label, "by_unit": _by_unit, "yes_no": lambda v: "yes" if v else "no",
        "or_dash": lambda v: "—" if v in (None, "") else v,
    })
    return env


def _in_millions(value: float | None, decimals: int = 1) -> str:
    """Amounts in a table headed '[CUR m]'."""
    if value is None:
        return "—"
    return fmt.num(value / 1e6, decimals)


def _by_unit(value: float | None, unit: str) -> str:
    """A sensitivity input in its own unit: rates and shares as percentages, times in years."""
    if value is None:
        return "—"
    if "year" in unit and "/" not in unit:
        return fmt.years(value)
    if unit in ("[fraction]", "[1/year]", "[1/sqrt(year)]"):
        return fmt.pct(value)
    return fmt.num(value, 4)


def _grid_view(grid: Any, points: int = 7) -> dict[str, Any] | None:
    """A readable excerpt of the two-way PD grid: evenly spaced rows and columns, the case's own
    point always among them (the chart shows the whole grid)."""
    if grid is None:
        return None

    def pick(values: tuple[float, ...], base: float) -> list[int]:
        n = len(values)
        chosen = {round(i * (n - 1) / (points - 1)) for i in range(points)} if n > points else set(range(n))
        chosen.add(min(range(n), key=lambda i: abs(values[i] - base)))
        return sorted(chosen)

    xs, ys = pick(grid.x_values, grid.base_x), pick(grid.y_values, grid.base_y)
    base_i = min(range(len(grid.x_values)), key=lambda i: abs(grid.x_values[i] - grid.base_x))
    base_j = min(range(len(grid.y_values)), key=lambda j: abs(grid.y_values[j] - grid.base_y))
    return {"x": [(grid.x_values[i], i == base_i) for i in xs],
            "rows": [(grid.y_values[j], j == base_j, [(grid.pd[j][i], i == base_i and j == base_j) for i in xs])
                     for j in ys]}


def _label(code: str | None) -> str:
    """An enumeration value as words: 'senior_unsecured' -> 'senior unsecured'."""
    return "—" if code is None else str(code).replace("_", " ")


def _input_text(value: Any) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return f"{value:,.10g}"
    return str(value)


def _flatten_inputs(data: Any, prefix: str = "") -> list[tuple[str, str]]:
    """Every input of the case as (path, value), statements excepted (printed as a table)."""
    rows: list[tuple[str, str]] = []
    if isinstance(data, dict):
        for key, value in data.items():
            if not prefix and key == "statements":
                continue
            rows += _flatten_inputs(value, f"{prefix}.{key}" if prefix else str(key))
    elif isinstance(data, list):
        if not data:
            rows.append((prefix, "[] (none)"))
        for index, value in enumerate(data):
            rows += _flatten_inputs(value, f"{prefix}[{index}]")
    else:
        rows.append((prefix, _input_text(data)))
    return rows


def build_view(results: Any, *, charts: dict[str, str], chart_notes: dict[str, str],
               charts_requested: bool, generated_at: str, page_size: str) -> dict[str, Any]:
    """Everything the template prints; small display values only, the engine computes the rest."""
    from engine.case import case_to_dict

    case = results.case
    pricing = results.pricing
    spread_note = None
    if pricing is not None:
        gap = pricing.spread_shortfall
        spread_note = (f"the proposed spread exceeds the minimum by {fmt.pct(-gap)}" if gap <= 0 else
                       f"the proposed spread falls short of the minimum by {fmt.pct(gap)}")
    case_data = case_to_dict(case)
    statement_keys = [k for k in case_data["statements"][0] if k != "year"]
    window = results.trend.window_years if results.trend is not None else None
    return {
        "r": results, "case": case, "memo": case.memo, "cur": case.borrower.currency,
        "figures": pdfcase.printed_figures(results), "market": getattr(results, "market", None),
        "sensitivity": getattr(results, "sensitivity", None), "scenarios": getattr(results, "scenarios", None),
        "pd_grid": getattr(results, "pd_grid", None), "grid": _grid_view(getattr(results, "pd_grid", None)),
        "zscores": getattr(results, "zscores", ()), "zscore_history": getattr(results, "zscore_history", ()),
        "master_scale_source": getattr(results, "master_scale_source", ""),
        "charts": charts, "chart_notes": chart_notes, "charts_requested": charts_requested,
        "spread_note": spread_note, "generated_at": generated_at, "page_size": page_size,
        "statement_keys": statement_keys, "statement_rows": case_data["statements"],
        "inputs": _flatten_inputs(case_data), "window_years": window,
        "fingerprint_short": results.fingerprint[:16],
        "author": case.memo.prepared_by or "obligor-memo",
    }


def render_memo_html(results: Any, *, charts: bool = True, page_size: str | None = None,
                     generated_at: datetime | None = None) -> str:
    """The memo's HTML (what WeasyPrint lays out); charts as SVG data URIs."""
    return _prepare(results, charts=charts, page_size=page_size, generated_at=generated_at)[0]


def _prepare(results: Any, *, charts: bool, page_size: str | None,
             generated_at: datetime | None) -> tuple[str, str, str, set[str]]:
    size = _page_size(results, page_size)
    stamp = (generated_at or datetime.now(timezone.utc)).astimezone(timezone.utc)
    text_stamp = stamp.strftime("%Y-%m-%d %H:%M:%S UTC")
    svgs, notes = export_charts(results) if charts else ({}, {})
    view = build_view(results, charts=svgs, chart_notes=notes, charts_requested=charts,
                      generated_at=text_stamp, page_size=size)
    html = _environment().get_template("memo.html").render(**view)
    return html, size, text_stamp, _allowed_uris(svgs)


def _allowed_uris(data_uris: dict[str, str]) -> set[str]:
    """Our chart URIs, plus the bitmaps plotly itself embeds in them (a heatmap's cells)."""
    allowed = set(data_uris.values())
    for uri in data_uris.values():
        svg = base64.b64decode(uri.partition(",")[2]).decode("utf-8")
        allowed.update(_NESTED_IMAGE.findall(svg))
    return allowed


def _page_size(results: Any, page_size: str | None) -> str:
    size = page_size or results.case.memo.page_size
    if size not in PAGE_SIZES:
        raise ValueError(f"page_size: got {size!r}; allowed: {', '.join(PAGE_SIZES)}")
    return size


# --------------------------------------------------------------------------- PDF


def memo_fetcher(allowed_data_uris: set[str]) -> Any:
    """A WeasyPrint fetcher that serves only our own data: URIs and the package's asset files."""
    from weasyprint.urls import URLFetcher, URLFetcherResponse

    class MemoFetcher(URLFetcher):
        def fetch(self, url: str, headers: Any = None) -> URLFetcherResponse:
            if url in allowed_data_uris:
                head, _, payload = url.partition(",")
                mime = head[len("data:"):].split(";")[0]
                return URLFetcherResponse(url, base64.b64decode(payload), {"Content-Type": mime})
            if url.startswith("file:"):
                from urllib.request import url2pathname

                path = Path(url2pathname(url[len("file:"):].split("?")[0])).resolve()
                if path.is_relative_to(ASSETS_DIR.resolve()) and path.is_file():
                    return URLFetcherResponse(url, path.read_bytes())
            raise ValueError(f"refused to fetch {url[:80]!r}: the memo loads only its own assets")

    return MemoFetcher(fail_on_errors=False)


def html_to_pdf(html: str, *, results: Any, page_size: str, generated_at: str,
                allowed_data_uris: set[str], url_fetcher: Any = None) -> bytes:
    from weasyprint import CSS, HTML, Attachment

    fetcher = url_fetcher or memo_fetcher(allowed_data_uris)
    css = (TEMPLATES_DIR / "memo.css").read_text(encoding="utf-8")
    sheets = [CSS(string=css, url_fetcher=fetcher),
              CSS(string=f"@page {{ size: {PAGE_SIZES[page_size]}; }}", url_fetcher=fetcher)]
    attachments = [
        Attachment(string=pdfcase.canonical_case_json(results).decode("ascii"), name=pdfcase.CASE_FILE,
                   description="The case this memo was computed from (canonical JSON)",
                   created=FIXED_PDF_DATE, modified=FIXED_PDF_DATE, url_fetcher=fetcher),
        Attachment(string=pdfcase.figures_record(results, generated_at=generated_at).decode("ascii"),
                   name=pdfcase.FIGURES_FILE, description="Figures as printed, for obligor-memo verify",
                   created=FIXED_PDF_DATE, modified=FIXED_PDF_DATE, url_fetcher=fetcher),
    ]
    identifier = hashlib.sha256(results.fingerprint.encode("ascii")).hexdigest()[:32].encode("ascii")
    document = HTML(string=html, base_url=ASSETS_DIR.as_uri() + "/", url_fetcher=fetcher)
    return document.write_pdf(stylesheets=sheets, attachments=attachments, pdf_identifier=identifier)


def render_memo_pdf(results: Any, *, charts: bool = True, page_size: str | None = None,
                    generated_at: datetime | None = None) -> bytes:
    """The memo as PDF bytes. Raises :class:`ChartsUnavailable` (naming the fix) when charts are
    asked for and no browser can draw them; ``charts=False`` prints a note in each chart's place."""
    html, size, stamp, data_uris = _prepare(results, charts=charts, page_size=page_size,
                                            generated_at=generated_at)
    return html_to_pdf(html, results=results, page_size=size, generated_at=stamp,
                       allowed_data_uris=data_uris)
