"""The memo's charts as PDF pages, and their placing on the laid-out memo.

WeasyPrint lays the memo out around empty boxes of each chart's exact size and writes it; the
charts themselves are turned from SVG into PDF pages apart from the layout, and each page is then
placed, as a vector form, in its box (pikepdf, on qpdf). Measured on the sample memo (12 charts,
2 cores): WeasyPrint drew the twelve SVGs in about 0.6 s of the memo's own CPU time; librsvg's
``rsvg-convert`` turns them into one 12-page PDF in about 0.09 s in a process of its own, while
the memo is still being laid out, and placing them takes about 0.04 s.

Without ``rsvg-convert`` the pages are drawn by WeasyPrint itself (the same picture, slower): a
memo never depends on an optional program to print its charts.

Reproducible: the converter runs with a fixed SOURCE_DATE_EPOCH, and the written PDF takes an
identifier computed from its content, so the same case prints the same bytes.
"""

from __future__ import annotations

import hashlib
import os
import re
import shutil
import subprocess
import tempfile
import threading
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from obligor_memo.app import settings
from obligor_memo.app.memo.weasy import weasyprint

CONVERTER_VARIABLE = settings.SVG_CONVERTER
CONVERTER_NAME = "rsvg-convert"
FIXED_EPOCH = "946684800"  # 2000-01-01T00:00:00Z, the memo's fixed PDF date
CSS_PX_IN_PT = 0.75  # 1 CSS px = 1/96 in = 0.75 pt
_REFERENCE = re.compile(r'\b(?:xlink:)?href\s*=\s*"([^"]*)"')


class ChartPagesError(RuntimeError):
    """The charts could not be made into PDF pages or placed; the message says why."""


def find_converter() -> str | None:
    """The SVG-to-PDF program, or None when WeasyPrint draws the pages.

    Returns
    -------
    str | None
        OBLIGOR_MEMO_SVG_CONVERTER (a path, or 'none' to use WeasyPrint), else ``rsvg-convert``
        on the PATH, else None.

    Raises
    ------
    ChartPagesError
        If OBLIGOR_MEMO_SVG_CONVERTER names no executable file.
    """
    chosen = settings.current().svg_converter or ""
    if chosen.lower() == "none":
        return None
    if chosen:
        if os.path.isfile(chosen) and os.access(chosen, os.X_OK):
            return chosen
        raise ChartPagesError(
            f"{CONVERTER_VARIABLE}: got {chosen!r}, which is not an executable file; "
            "allowed: the path of rsvg-convert, or 'none' to draw charts with WeasyPrint."
        )
    return shutil.which(CONVERTER_NAME)


def check_references(svg: str) -> None:
    """Refuse a chart that refers to anything but its own parts and inline PNG bitmaps.

    A chart may refer to its own parts ('#id') and carry bitmaps inline (plotly draws a heatmap's
    cells as a PNG data URI); anything else (a file, a web address) is refused, never loaded.

    Parameters
    ----------
    svg : str
        The chart's SVG text; its ``href`` and ``xlink:href`` values are checked.

    Raises
    ------
    ChartPagesError
        If a reference is neither '#...' nor a base64 PNG data URI.
    """
    for url in _REFERENCE.findall(svg):
        if not (url.startswith("#") or url.startswith("data:image/png;base64,")):
            raise ChartPagesError(f"a chart refers to {url[:60]!r}; charts may only use their own parts")


# --------------------------------------------------------------------------- SVG -> PDF pages

_PAGES_CACHE: dict[str, bytes] = {}
_PAGES_CACHE_SIZE = 8
_PAGES_LOCK = threading.Lock()


def charts_pdf(svgs: Sequence[str], *, timeout: float = 60.0) -> bytes:
    """One PDF with a page per SVG, in order, each page the SVG's own size (px -> pt).

    Drawn by the converter of :func:`find_converter`, else by WeasyPrint; the last few results
    are cached by converter and SVG text.

    Parameters
    ----------
    svgs : Sequence[str]
        The charts' SVG text, each checked by :func:`check_references` first.
    timeout : float, optional
        Time the converter may take [s].

    Returns
    -------
    bytes
        The PDF.

    Raises
    ------
    ChartPagesError
        If a chart refers to something outside itself, the converter set is not executable,
        or the converter fails or takes longer than ``timeout``.
    """
    for svg in svgs:
        check_references(svg)
    converter = find_converter()
    key = hashlib.sha256("\0".join([converter or "weasyprint", *svgs]).encode("utf-8")).hexdigest()
    with _PAGES_LOCK:
        cached = _PAGES_CACHE.get(key)
    if cached is not None:
        return cached
    data = _with_converter(converter, svgs, timeout) if converter else _with_weasyprint(svgs)
    with _PAGES_LOCK:
        _PAGES_CACHE[key] = data
        while len(_PAGES_CACHE) > _PAGES_CACHE_SIZE:
            _PAGES_CACHE.pop(next(iter(_PAGES_CACHE)))
    return data


def _with_converter(converter: str, svgs: Sequence[str], timeout: float) -> bytes:
    with tempfile.TemporaryDirectory(prefix="obligor-memo-charts-") as folder:
        names = []
        for i, svg in enumerate(svgs):
            name = os.path.join(folder, f"chart-{i:03d}.svg")
            with open(name, "w", encoding="utf-8") as f:
                f.write(svg)
            names.append(name)
        out = os.path.join(folder, "charts.pdf")
        env = {**os.environ, "SOURCE_DATE_EPOCH": FIXED_EPOCH}
        try:
            run = subprocess.run(
                [converter, "--format=pdf", f"--output={out}", *names],
                env=env,
                capture_output=True,
                timeout=timeout,
                check=False,
            )
        except (OSError, subprocess.TimeoutExpired) as exc:
            raise ChartPagesError(
                f"{converter} could not turn the charts into PDF pages ({type(exc).__name__}: {exc})"
            ) from None
        if run.returncode != 0 or not os.path.isfile(out):
            message = " ".join(run.stderr.decode("utf-8", "replace").split())[:300]
            raise ChartPagesError(
                f"{converter} could not turn the charts into PDF pages "
                f"(exit code {run.returncode}: {message or 'no message'})"
            )
        with open(out, "rb") as f:
            return f.read()


def _with_weasyprint(svgs: Sequence[str]) -> bytes:
    """The same pages drawn by WeasyPrint: each SVG on a page of exactly its size."""
    from xml.etree import ElementTree

    from obligor_memo.app.memo.fetch import memo_fetcher

    HTML = weasyprint().HTML
    from weasyprint.urls import URLFetcher, URLFetcherResponse

    body = []
    for i, svg in enumerate(svgs):
        root = ElementTree.fromstring(svg.encode("utf-8"))
        width, height = float(root.get("width", "0")), float(root.get("height", "0"))
        body.append(
            f'<div style="page: c{i}"><img src="chart:{i}" style="display: block; '
            f'width: {width}px; height: {height}px"></div>'
            f"<style>@page c{i} {{ size: {width}px {height}px; margin: 0 }}</style>"
        )
    # The memo's own fetcher serves the bitmaps inline in the charts and refuses anything else.
    inline = memo_fetcher({url for svg in svgs for url in _REFERENCE.findall(svg) if url.startswith("data:")})

    class Fetcher(URLFetcher):
        def fetch(self, url: str, headers: Any = None) -> URLFetcherResponse:
            if url.startswith("chart:"):
                return URLFetcherResponse(url, svgs[int(url[6:])].encode("utf-8"), {"Content-Type": "image/svg+xml"})
            return inline.fetch(url, headers)

    html = "<html><body style='margin: 0'>" + "".join(body) + "</body></html>"
    return HTML(string=html, url_fetcher=Fetcher(fail_on_errors=False)).write_pdf()


# --------------------------------------------------------------------------- placing


@dataclass(frozen=True)
class Placement:
    """Where one chart goes: a page of the memo, a box on it, and the chart's page in the charts PDF."""

    page: int
    """Page of the memo, 0-based."""
    box: tuple[float, float, float, float]
    """The box's left, top, right and bottom from the page's top left, as WeasyPrint lays it out [CSS px]."""
    chart_page: int
    """Page of the chart in the charts PDF, 0-based (the chart's number)."""


def chart_placements(document: Any, anchors: Sequence[str]) -> list[Placement]:
    """The laid-out box of every element whose id is in ``anchors``; chart N is ``anchors[N]``.

    The boxes are read from WeasyPrint's public ``Page.anchors`` (id -> (x1, y1, x2, y2) in CSS
    px); an id that appears on several pages is placed on the first.

    Parameters
    ----------
    document : Any
        The laid-out WeasyPrint document.
    anchors : Sequence[str]
        The ids of the charts' boxes, in chart order.

    Returns
    -------
    list[Placement]
        One placement per id found, in the order found (page by page); an id that is absent is
        left out.

    Raises
    ------
    ChartPagesError
        If this WeasyPrint reports anchors without box sizes (before version 70).
    """
    wanted = {name: i for i, name in enumerate(anchors)}
    found: dict[str, Placement] = {}
    for number, page in enumerate(document.pages):
        for name, corners in page.anchors.items():
            if name in wanted and name not in found:
                if len(corners) != 4:
                    raise ChartPagesError(
                        "this WeasyPrint version does not report box sizes "
                        "(Page.anchors); obligor-memo needs WeasyPrint 70 or later"
                    )
                left, top, right, bottom = (float(c) for c in corners)
                found[name] = Placement(number, (left, top, right, bottom), wanted[name])
    return list(found.values())


def as_form(pdf: Any, source_page: Any) -> Any:
    """A page of another PDF as a form XObject of ``pdf`` (copied once; usable on many pages).

    Parameters
    ----------
    pdf : Any
        The pikepdf PDF the form is copied into.
    source_page : Any
        The pikepdf page of the other PDF.

    Returns
    -------
    Any
        The form XObject, owned by ``pdf``.
    """
    return pdf.copy_foreign(source_page.as_form_xobject())


def form_operators(pdf: Any, page: Any, form: Any, box: tuple[float, float, float, float] | None, name: Any) -> bytes:
    """Register ``form`` as a resource of ``page`` and return the operators that draw it into ``box``.

    The form is scaled to fill the box (or the page) on both axes. Fixed names keep the bytes
    the same from run to run.

    Parameters
    ----------
    pdf : Any
        The pikepdf PDF that holds ``page`` (not used).
    page : Any
        The pikepdf page to draw on.
    form : Any
        The form XObject (see :func:`as_form`).
    box : tuple[float, float, float, float] | None
        Left, top, right and bottom from the page's top left [CSS px]; None for the whole page.
    name : Any
        The resource name, a ``pikepdf.Name`` such as ``/MemoChart0``.

    Returns
    -------
    bytes
        The content-stream operators, in their own graphics state (``q ... Q``).
    """
    page.add_resource(form, "/XObject", name)
    left, bottom, right, top = (float(v) for v in form.BBox)
    if box is None:
        x1, y2 = float(page.mediabox[0]), float(page.mediabox[1])
        sx = (float(page.mediabox[2]) - x1) / (right - left)
        sy = (float(page.mediabox[3]) - y2) / (top - bottom)
        e, f = x1 - left * sx, y2 - bottom * sy
    else:
        page_top = float(page.mediabox[3])
        x1, y1, x2, y2 = (c * CSS_PX_IN_PT for c in box)
        sx, sy = (x2 - x1) / (right - left), (y2 - y1) / (top - bottom)
        e, f = x1 - left * sx, page_top - y2 - bottom * sy
    return f"q {sx:.6f} 0 0 {sy:.6f} {e:.4f} {f:.4f} cm {name} Do Q\n".encode("ascii")


def append_drawing(page: Any, operators: Sequence[bytes]) -> None:
    """Draw after the page's own content, from a clean graphics state.

    Parameters
    ----------
    page : Any
        The pikepdf page.
    operators : Sequence[bytes]
        Content-stream operators (see :func:`form_operators`), drawn in order.
    """
    page.contents_add(b"q\n", prepend=True)  # the page's own state ends before ours
    page.contents_add(b"Q\n" + b"".join(operators))
