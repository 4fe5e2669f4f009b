"""The only fetcher the memo's layout gets: our own data URIs, the package's assets, chart stand-ins.

The stand-ins are empty SVGs of each chart's size; the charts are placed after layout
(:mod:`.chart_pages`).
"""

from __future__ import annotations

import base64
from pathlib import Path
from typing import Any

from obligor_memo.app.memo.templates import ASSETS_DIR
from obligor_memo.app.memo.weasy import weasyprint

CHART_SCHEME = "memo-chart:"
CHART_ANCHOR = "memo-chart-{}"  # the id of chart N's box in the HTML


def memo_fetcher(allowed_data_uris: set[str], chart_sizes: list[tuple[int, int]] | None = None) -> Any:
    """A WeasyPrint fetcher that serves only our own data: URIs, the package's asset files, charts' places.

    For ``memo-chart:N`` it serves an empty SVG of chart N's size (``chart_sizes``): the layout
    keeps each chart's place; the chart itself is put there after writing
    (:mod:`.chart_pages`). Any other URL is refused with a ValueError, which WeasyPrint reports
    and skips (the fetcher does not fail on errors).

    Parameters
    ----------
    allowed_data_uris : set[str]
        The ``data:`` URIs (base64) the HTML may load, each served decoded with its MIME type.
    chart_sizes : list[tuple[int, int]] | None, optional
        Width and height of each chart, in chart order [px]; None for no chart.

    Returns
    -------
    Any
        The fetcher, a ``weasyprint.urls.URLFetcher``.
    """
    weasyprint()  # imported with the quick library lookup
    from weasyprint.urls import URLFetcher, URLFetcherResponse

    allowed = set(allowed_data_uris)
    sizes = list(chart_sizes or [])

    class MemoFetcher(URLFetcher):
        def fetch(self, url: str, headers: Any = None) -> URLFetcherResponse:
            if url.startswith(CHART_SCHEME):
                index = url[len(CHART_SCHEME) :]
                if index.isdigit() and int(index) < len(sizes):
                    svg = stand_in(*sizes[int(index)])
                    return URLFetcherResponse(url, svg.encode("utf-8"), {"Content-Type": "image/svg+xml"})
            if url in allowed:
                head, _, payload = url.partition(",")
                mime = head[len("data:") :].split(";")[0]
                return URLFetcherResponse(url, base64.b64decode(payload), {"Content-Type": mime})
            if url.startswith("file:"):
                from urllib.request import url2pathname

                path = Path(url2pathname(url[len("file:") :].split("?")[0])).resolve()
                if path.is_relative_to(ASSETS_DIR.resolve()) and path.is_file():
                    return URLFetcherResponse(url, path.read_bytes())
            raise ValueError(f"refused to fetch {url[:80]!r}: the memo loads only its own assets")

    return MemoFetcher(fail_on_errors=False)


def stand_in(width: int, height: int) -> str:
    """An empty SVG of a chart's size, holding its place in the layout.

    Parameters
    ----------
    width : int
        Width of the chart [px].
    height : int
        Height of the chart [px].

    Returns
    -------
    str
        The SVG document, with a matching viewBox.
    """
    return f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" viewBox="0 0 {width} {height}"/>'
