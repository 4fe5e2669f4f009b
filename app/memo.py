"""The printed credit memo: results -> HTML (Jinja2) -> PDF (WeasyPrint), charts as vector forms.

The charts are the workbench's own plotly figures (:mod:`app.charts`), exported to SVG through
kaleido and a system Chromium, made PDF pages and placed in their boxes after layout
(:mod:`app.chart_pages`). Chromium starts once per memo (every figure goes through one session)
or once per process when the workbench keeps :func:`start_chart_exporter` running; the layout
itself may run in two parts at once (:mod:`app.memo_parts`).

Safety: Jinja2 autoescapes and fails on any undefined name; WeasyPrint fetches nothing except
the data: URIs this module generated and files inside the package's own asset folder.
Reproducibility: PDF dates, identifiers and attachment dates are fixed; only the printed
generation time (and the record that repeats it) differs between two runs on the same case.
"""

from __future__ import annotations

import base64
import functools
import gc
import hashlib
from contextlib import contextmanager
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Iterator

from app import formatting as fmt
from app import pdfcase
from app.chart_browser import (BROWSER_CANDIDATES, NO_CHART_FIX, ChartExporter,  # noqa: F401
                               ChartsUnavailable, chart_timeout, figure_size, find_browser,
                               start_chart_exporter, stop_chart_exporter)
from app.memo_charts import ChartJob, ChartSpec, build_figures, chart_specs, export_charts  # noqa: F401
from app.memo_parts import start_layout_worker, stop_layout_worker  # noqa: F401

def find_templates() -> Path:
    """The memo's templates: the repository's templates/ beside app/ (a checkout or an editable
    install), else the copy a wheel installs under <prefix>/share/obligor-memo/templates."""
    import sys

    candidates = [Path(__file__).resolve().parent.parent / "templates",
                  Path(sys.prefix) / "share" / "obligor-memo" / "templates",
                  Path(sys.base_prefix) / "share" / "obligor-memo" / "templates"]
    for folder in candidates:
        if (folder / "memo.html").is_file():
            return folder
    raise FileNotFoundError("The memo templates (memo.html) were not found; looked in "
                            + ", ".join(str(c) for c in candidates) + ". Reinstall obligor-memo.")


TEMPLATES_DIR = find_templates()
ASSETS_DIR = Path(__file__).resolve().parent / "assets" / "memo"
PAGE_SIZES = {"A4": "A4", "Letter": "letter"}
# Any fixed instant works; a PDF reader shows it as the document date, so it is stated plainly.
FIXED_PDF_DATE = datetime(2000, 1, 1, tzinfo=timezone.utc)


# --------------------------------------------------------------------------- HTML


@functools.lru_cache(maxsize=1)
def _environment() -> Any:
    """One Jinja2 environment per process: it keeps the compiled templates (compiling them
    took about 0.15 s of every memo) and recompiles a template whose file has changed."""
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


def inputs_yaml(case_data: dict[str, Any]) -> str:
    """The case's inputs as YAML, statements excepted (the appendix prints them as a table).

    Exactly the inputs: ``yaml.safe_load`` of this text gives back the same values. A narrow
    line width keeps it readable in two columns; long text wraps as YAML allows (still the same
    value when read back).
    """
    import yaml

    rest = {key: value for key, value in case_data.items() if key != "statements"}
    return yaml.safe_dump(rest, sort_keys=False, allow_unicode=True, default_flow_style=False,
                          width=56, indent=2)


def short_fingerprint(results: Any) -> str:
    """The inputs' fingerprint as the running footer and the summary page print it."""
    return results.fingerprint[:16]


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
        "chart_ids": {key: CHART_ANCHOR.format(src[len(CHART_SCHEME):]) for key, src in charts.items()
                      if src.startswith(CHART_SCHEME)},
        "spread_note": spread_note, "generated_at": generated_at, "page_size": page_size,
        "statement_keys": statement_keys, "statement_rows": case_data["statements"],
        "inputs_yaml": inputs_yaml(case_data), "window_years": window,
        "fingerprint_short": short_fingerprint(results),
        "author": case.memo.prepared_by or "obligor-memo",
    }


def render_memo_html(results: Any, *, charts: bool = True, page_size: str | None = None,
                     generated_at: datetime | None = None) -> str:
    """The memo's HTML with the charts inline as SVG data URIs (for reading or another renderer;
    :func:`render_memo_pdf` references the charts instead and draws them while laying out)."""
    svgs, notes = export_charts(results) if charts else ({}, {})
    return _html(results, charts=svgs, notes=notes, charts_requested=charts,
                 page_size=_page_size(results, page_size), stamp=_stamp(generated_at))


def _stamp(generated_at: datetime | None) -> str:
    stamp = (generated_at or datetime.now(timezone.utc)).astimezone(timezone.utc)
    return stamp.strftime("%Y-%m-%d %H:%M:%S UTC")


def _html(results: Any, *, charts: dict[str, str], notes: dict[str, str], charts_requested: bool,
          page_size: str, stamp: str) -> str:
    view = build_view(results, charts=charts, chart_notes=notes, charts_requested=charts_requested,
                      generated_at=stamp, page_size=page_size)
    return _environment().get_template("memo.html").render(**view)


def _page_size(results: Any, page_size: str | None) -> str:
    size = page_size or results.case.memo.page_size
    if size not in PAGE_SIZES:
        raise ValueError(f"page_size: got {size!r}; allowed: {', '.join(PAGE_SIZES)}")
    return size


# --------------------------------------------------------------------------- PDF

CHART_SCHEME = "memo-chart:"
CHART_ANCHOR = "memo-chart-{}"       # the id of chart N's box in the HTML


def memo_fetcher(allowed_data_uris: set[str], chart_sizes: list[tuple[int, int]] | None = None) -> Any:
    """A WeasyPrint fetcher that serves only our own data: URIs, the package's asset files and,
    for ``memo-chart:N``, an empty SVG of chart N's size (``chart_sizes``): the layout keeps each
    chart's place; the chart itself is put there after writing (:mod:`app.chart_pages`)."""
    from weasyprint.urls import URLFetcher, URLFetcherResponse

    allowed = set(allowed_data_uris)
    sizes = list(chart_sizes or [])

    class MemoFetcher(URLFetcher):
        def fetch(self, url: str, headers: Any = None) -> URLFetcherResponse:
            if url.startswith(CHART_SCHEME):
                index = url[len(CHART_SCHEME):]
                if index.isdigit() and int(index) < len(sizes):
                    svg = _stand_in(*sizes[int(index)])
                    return URLFetcherResponse(url, svg.encode("utf-8"), {"Content-Type": "image/svg+xml"})
            if url in allowed:
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
                allowed_data_uris: set[str], url_fetcher: Any = None,
                charts: ChartJob | None = None) -> bytes:
    """Lay out and write the PDF, then put each chart in its place; a failed chart drawing
    raises :class:`ChartsUnavailable`.

    The layout never waits for the charts: ``<img src="memo-chart:N" id="memo-chart-N">`` is laid
    out as an empty image of chart N's own size, and chart N's PDF page (drawn meanwhile from its
    SVG, off this thread) is placed in that box after writing. The charts are vector forms, as
    they would be had WeasyPrint drawn the SVG itself, which cost about 0.6 s of this thread's
    time on the sample memo. With a layout worker running (:mod:`app.memo_parts`), the second
    part of the memo is laid out there at the same time as the first part here."""
    from weasyprint import Attachment

    from app import chart_pages, memo_parts

    sizes = [figure_size(fig) for fig in charts.figures.values()] if charts is not None else []
    fetcher = url_fetcher or memo_fetcher(allowed_data_uris, sizes)
    attachments = [
        Attachment(string=pdfcase.canonical_case_json(results).decode("ascii"), name=pdfcase.CASE_FILE,
                   description="The case this memo was computed from (canonical JSON)",
                   created=FIXED_PDF_DATE, modified=FIXED_PDF_DATE, url_fetcher=fetcher),
        Attachment(string=pdfcase.figures_record(results, generated_at=generated_at).decode("ascii"),
                   name=pdfcase.FIGURES_FILE, description="Figures as printed, for obligor-memo verify",
                   created=FIXED_PDF_DATE, modified=FIXED_PDF_DATE, url_fetcher=fetcher),
    ]
    identifier = hashlib.sha256(results.fingerprint.encode("ascii")).hexdigest()[:32].encode("ascii")
    record = {"attachments": attachments, "pdf_identifier": identifier}
    worker = memo_parts.ready_worker() if url_fetcher is None and not allowed_data_uris else None
    halves = memo_parts.split_html(html) if worker is not None else None
    running = None
    if halves is None:
        parts = [memo_parts.lay_out(html, chart_sizes=sizes, page_size=page_size, running=True,
                                    fetcher=fetcher, write_options=record)]
    else:
        pending = worker.submit(halves[1], chart_sizes=sizes, page_size=page_size)
        first = memo_parts.lay_out(halves[0], chart_sizes=sizes, page_size=page_size, running=False,
                                   fetcher=fetcher, write_options=record)
        try:
            second = pending.result()
        except RuntimeError:        # the worker failed or is gone: the second part is laid out here
            second = memo_parts.lay_out(halves[1], chart_sizes=sizes, page_size=page_size, running=False,
                                        fetcher=fetcher)
        parts = [first, second]
        running = memo_parts.running_pages(pages=first.pages + second.pages, borrower=results.case.borrower.name,
                                           fingerprint=short_fingerprint(results), page_size=page_size)
    placed = any(part.placements for part in parts)
    if running is None and (charts is None or not placed):
        return parts[0].pdf
    pages = charts.pages() if charts is not None and placed else None   # waits; raises why not
    try:
        return memo_parts.assemble(parts, running=running, charts=pages)
    except chart_pages.ChartPagesError as exc:
        raise ChartsUnavailable(f"The charts could not be placed in the memo ({exc}). "
                                "Try again, or print with --no-charts.") from None


@contextmanager
def _old_objects_set_aside() -> Iterator[None]:
    """The layout builds tens of thousands of long-lived boxes, which keeps triggering full
    garbage collections; each one would walk every object the process already holds (plotly's
    figure classes alone are a large heap). Frozen objects are skipped by the collector, so only
    the memo's own objects are scanned: layout 1.8 s -> 1.3 s of CPU on the sample memo.
    Everything is handed back to the collector afterwards; nothing is kept alive longer."""
    gc.freeze()
    try:
        yield
    finally:
        gc.unfreeze()


def _stand_in(width: int, height: int) -> str:
    return (f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" '
            f'viewBox="0 0 {width} {height}"/>')


# Fonts subset (the PDF stays small), no hinting (not needed on paper), images as they are.
WRITE_OPTIONS: dict[str, Any] = {"full_fonts": False, "hinting": False, "optimize_images": False}


def render_memo_pdf(results: Any, *, charts: bool = True, page_size: str | None = None,
                    generated_at: datetime | None = None, exporter: ChartExporter | None = None) -> bytes:
    """The memo as PDF bytes. Raises :class:`ChartsUnavailable` (naming the fix) when charts are
    asked for and no browser can draw them; ``charts=False`` prints a note in each chart's place.
    ``exporter``: a browser started for this memo alone, closed once its charts are drawn.

    The charts are drawn by the browser, and made into PDF pages, while this thread writes the
    HTML and WeasyPrint lays it out and writes it; they are then placed in their boxes.
    """
    size = _page_size(results, page_size)
    stamp = _stamp(generated_at)
    with _old_objects_set_aside():       # plotly's figure building makes many objects too
        job = ChartJob(results, exporter=exporter) if charts else None
    try:
        placeholders = {key: f"{CHART_SCHEME}{i}" for i, key in enumerate(job.figures)} if job else {}
        html = _html(results, charts=placeholders, notes=job.notes if job else {},
                     charts_requested=charts, page_size=size, stamp=stamp)
        return html_to_pdf(html, results=results, page_size=size, generated_at=stamp,
                           allowed_data_uris=set(), charts=job)
    finally:
        if job is not None:
            job.finish()     # the browser this memo started is closed before returning
        elif exporter is not None:
            exporter.close()
