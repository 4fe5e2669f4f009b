"""Chart drawings kept on disk, so a memo printed again in a new process needs no browser.

A reprint after a narrative edit, a second copy on Letter paper, or the workbench after a restart
draws the same figures as before. Chromium is then the slowest part of a cold memo (its start
alone is about 1.5 s of CPU beside the layout), so the slimmed SVG of each figure is kept in a
folder, under the same key the in-process cache uses: the figure's JSON, its export width, and
the versions of everything that shapes the drawing (see :func:`drawing_versions`).

- Folder: ``OBLIGOR_MEMO_CHART_CACHE`` when set (``off`` keeps nothing on disk), else
  ``$XDG_CACHE_HOME/obligor-memo/charts`` (``~/.cache/obligor-memo/charts``).
- Files are written whole (a temporary file renamed into place), so two processes printing at
  once never read half a drawing; the newest :data:`MAX_FILES` are kept.
- A folder that cannot be written costs the speed only: the memo prints, the reason is logged.
- Each memo also leaves a small list of its figures' keys under the case's own key, so that the
  command line can tell before the analysis whether it will need a browser at all
  (:func:`memo_drawn`); the list is a hint, the figures' own keys decide.
"""

from __future__ import annotations

import functools
import hashlib
import json
import logging
import os
import tempfile
from collections.abc import Iterable
from pathlib import Path

from obligor_memo.app import settings

log = logging.getLogger(__name__)

MAX_FILES = 512
"""Drawings kept; the least recently used go first (a memo has 4 to 14 charts)."""
SUFFIX = ".svg"
INDEX_SUFFIX = ".memo.json"


def cache_dir() -> Path | None:
    """The folder of kept drawings, or None when keeping them is switched off.

    Returns
    -------
    Path | None
        ``OBLIGOR_MEMO_CHART_CACHE`` as set, the default folder when unset, None for ``off``.
    """
    return settings.current().chart_cache


def drawing_versions() -> str:
    """What shapes a drawing besides the figure: plotly, kaleido, the browser, the slimming code.

    The browser is looked up on each call (a changed ``BROWSER_PATH`` is a different browser);
    the package versions and the slimming digest are read once per process.

    Returns
    -------
    str
        The plotly and kaleido versions, the browser's path, size and modification time (a
        browser update draws text a little differently), and a digest of the SVG slimming
        module (its output is what is kept).
    """
    from obligor_memo.app.memo.chart_browser import ChartsUnavailable, find_browser

    try:
        browser = find_browser()
        stat = os.stat(browser)
        browser_id = f"{browser}:{stat.st_size}:{int(stat.st_mtime)}"
    except (ChartsUnavailable, OSError):
        browser_id = "no browser"
    return _versions(browser_id)


@functools.cache
def _versions(browser_id: str) -> str:
    from importlib.metadata import version

    from obligor_memo.app.memo import svg_slim

    slimming = hashlib.sha256(Path(svg_slim.__file__).read_bytes()).hexdigest()[:16]
    return f"plotly {version('plotly')}|kaleido {version('kaleido')}|{browser_id}|slim {slimming}"


def _is_drawing(text: str) -> bool:
    body = text.strip()
    return body.startswith(("<svg", "<?xml")) and body.endswith("</svg>")


def read(keys: Iterable[str]) -> dict[str, str]:
    """The kept drawings of those keys that are on disk (others are simply absent).

    Parameters
    ----------
    keys : Iterable[str]
        Figure keys (:func:`obligor_memo.app.memo.figures.figure_key`).

    Returns
    -------
    dict[str, str]
        The SVG text by key; a file that is not a whole drawing is left out (and drawn again).
    """
    folder = cache_dir()
    found: dict[str, str] = {}
    if folder is None:
        return found
    for key in keys:
        path = folder / f"{key}{SUFFIX}"
        try:
            text = path.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError):
            continue
        if _is_drawing(text):
            found[key] = text
            try:
                os.utime(path)  # recently used: kept longest
            except OSError:
                pass
    return found


def _write_text(path: Path, text: str) -> None:
    handle, temporary = tempfile.mkstemp(dir=path.parent, prefix=".", suffix=".tmp")
    try:
        with os.fdopen(handle, "w", encoding="utf-8") as out:
            out.write(text)
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


def write(drawings: dict[str, str]) -> None:
    """Keep these drawings, then drop the least recently used beyond :data:`MAX_FILES`.

    Parameters
    ----------
    drawings : dict[str, str]
        SVG text by figure key.
    """
    folder = cache_dir()
    if folder is None or not drawings:
        return
    try:
        folder.mkdir(parents=True, exist_ok=True)
        for key, svg in drawings.items():
            _write_text(folder / f"{key}{SUFFIX}", svg)
        _prune(folder)
    except OSError as exc:
        log.info("chart drawings not kept in %s (%s); the next cold memo draws them again", folder, exc)


def _prune(folder: Path) -> None:
    entries = []
    for path in folder.iterdir():
        if path.suffix == SUFFIX or path.name.endswith(INDEX_SUFFIX):
            try:
                entries.append((path.stat().st_mtime, path))
            except OSError:
                continue
    entries.sort(reverse=True)
    for _, path in entries[MAX_FILES:]:
        path.unlink(missing_ok=True)


def memo_key(fingerprint: str, *, annex: bool) -> str:
    """The key of one memo's list of figures: its case as printed, and its annex choice.

    Parameters
    ----------
    fingerprint : str
        The fingerprint of the case as printed (its ``memo.page_size`` the paper printed on;
        see :func:`obligor_memo.app.memo.render.printed_case`).
    annex : bool
        Whether the technical annex is printed.

    Returns
    -------
    str
        A SHA-256 hex digest.
    """
    text = f"{fingerprint}|annex={annex}|{drawing_versions()}"
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def remember_memo(key: str, figure_keys: Iterable[str]) -> None:
    """Note which figures the memo of ``key`` drew (see :func:`memo_drawn`).

    Parameters
    ----------
    key : str
        The memo's key (:func:`memo_key`).
    figure_keys : Iterable[str]
        Its figures' keys.
    """
    folder = cache_dir()
    if folder is None:
        return
    try:
        folder.mkdir(parents=True, exist_ok=True)
        _write_text(folder / f"{key}{INDEX_SUFFIX}", json.dumps(sorted(figure_keys)))
    except OSError as exc:
        log.info("the memo's list of charts was not kept in %s (%s)", folder, exc)


def memo_drawn(key: str) -> bool:
    """Whether every figure the memo of ``key`` drew last time is still kept.

    Parameters
    ----------
    key : str
        The memo's key (:func:`memo_key`).

    Returns
    -------
    bool
        True when the list exists and each of its drawings is on disk.
    """
    folder = cache_dir()
    if folder is None:
        return False
    try:
        keys = json.loads((folder / f"{key}{INDEX_SUFFIX}").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return (
        isinstance(keys, list)
        and bool(keys)
        and all(isinstance(k, str) and (folder / f"{k}{SUFFIX}").is_file() for k in keys)
    )
