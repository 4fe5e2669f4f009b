"""Every environment variable the front end reads, in one place (the README lists them).

:func:`current` reads the environment afresh on each call (tests and the workbench may change
it while a process runs) and returns a frozen :class:`Settings`. The values are the text as set,
stripped; the module that uses a value checks it and says what is allowed, because only it knows
the error its caller expects (a chart fault, a converter fault).
"""

from __future__ import annotations

import os
from dataclasses import dataclass, fields
from pathlib import Path

BROWSER_PATH = "BROWSER_PATH"
CHART_TIMEOUT = "OBLIGOR_MEMO_CHART_TIMEOUT"
SVG_CONVERTER = "OBLIGOR_MEMO_SVG_CONVERTER"
WORKDIR = "OBLIGOR_MEMO_WORKDIR"
CHART_PRESTART = "OBLIGOR_MEMO_CHART_PRESTART"
DEBUG = "OBLIGOR_MEMO_DEBUG"
CHART_CACHE = "OBLIGOR_MEMO_CHART_CACHE"
CACHE_HOME = "XDG_CACHE_HOME"


@dataclass(frozen=True)
class Settings:
    """The front end's settings as read from the environment (None: not set, or set empty)."""

    browser_path: str | None
    """``BROWSER_PATH``: the Chrome or Chromium that draws the charts; unset: the usual paths."""
    chart_timeout: str | None
    """``OBLIGOR_MEMO_CHART_TIMEOUT``: seconds for the browser to start and to draw [s]; unset: 30."""
    svg_converter: str | None
    """``OBLIGOR_MEMO_SVG_CONVERTER``: path of rsvg-convert, or 'none' for WeasyPrint; unset: PATH."""
    workdir: Path
    """``OBLIGOR_MEMO_WORKDIR``: the folder of autosaved cases; unset: ~/.obligor-memo."""
    chart_prestart: bool
    """``OBLIGOR_MEMO_CHART_PRESTART``: '0' keeps the workbench from starting the chart browser
    when the memo page opens (it then starts at the first print)."""
    debug: bool
    """``OBLIGOR_MEMO_DEBUG``: any value makes the command line print tracebacks of internal errors."""
    chart_cache: Path | None
    """``OBLIGOR_MEMO_CHART_CACHE``: the folder of kept chart drawings, 'off' for none; unset:
    ``$XDG_CACHE_HOME/obligor-memo/charts``, else ``~/.cache/obligor-memo/charts``."""


def _text(name: str) -> str | None:
    value = os.environ.get(name, "").strip()
    return value or None


def current() -> Settings:
    """The settings in force now.

    Returns
    -------
    Settings
        Every variable as set now, stripped; None where unset or empty (the folder and the two
        switches and the chart cache with their defaults applied).
    """
    workdir = _text(WORKDIR)
    cache = _text(CHART_CACHE)
    if cache is None:
        chart_cache: Path | None = (
            Path(_text(CACHE_HOME) or Path.home() / ".cache").expanduser() / "obligor-memo" / "charts"
        )
    else:
        chart_cache = None if cache.lower() == "off" else Path(cache).expanduser()
    return Settings(
        browser_path=_text(BROWSER_PATH),
        chart_timeout=_text(CHART_TIMEOUT),
        svg_converter=_text(SVG_CONVERTER),
        workdir=Path(workdir).expanduser() if workdir else Path.home() / ".obligor-memo",
        chart_prestart=_text(CHART_PRESTART) != "0",
        debug=_text(DEBUG) is not None,
        chart_cache=chart_cache,
    )


VARIABLES = {field.name: field for field in fields(Settings)}
