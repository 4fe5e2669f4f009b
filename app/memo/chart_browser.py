"""The chart browser: one system Chromium, driven through kaleido, that draws plotly figures as SVG.

One Chromium runs on a private event-loop thread and is reused for many figures;
:func:`start_chart_exporter` keeps one per process, so a workbench that started it prints a memo
without waiting for a browser. Everything that can go wrong with the browser (missing, hanging,
crashing at start or half-way) ends in :class:`ChartsUnavailable`, whose message names the fix,
within the timeout, and with the browser's whole process group killed: no orphans.

Speed and memory choices, each measured on the sample memo (12 charts, 2 cores):

- kaleido reloads its page (plotly.js) after every figure; within one batch the page is reused
  and reloaded once afterwards, in the background: 2.5 s -> about 1.2 s per memo;
- Chromium runs with one renderer process and in-process GPU code (fewer processes; the
  whole memo command's peak fell from about 690 MB to about 600 MB);
- plotly.js's own cartesian bundle (1.5 MB) instead of the full one (4.8 MB), when it is the same
  version: the browser is ready about 0.4 s sooner.
"""

from __future__ import annotations

import asyncio
import atexit
import logging
import os
import re
import signal
import threading
import time
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from obligor_memo.app import settings

log = logging.getLogger(__name__)

BROWSER_CANDIDATES = ("/usr/bin/chromium", "/usr/bin/chromium-browser", "/usr/bin/google-chrome")
TIMEOUT_VARIABLE = settings.CHART_TIMEOUT
DEFAULT_TIMEOUT_SECONDS = 30.0
MAX_TIMEOUT_SECONDS = 600.0
NO_CHART_FIX = (
    "install Chromium (for example 'apt-get install chromium'), or set BROWSER_PATH to "
    "a Chrome or Chromium executable, or print without charts with --no-charts"
)
# Fewer browser processes: one renderer for every tab, GPU code inside the browser process.
# The old-space cap bounds the renderer's heap; a memo's figures need a few tens of MB.
BROWSER_FLAGS = (
    "--renderer-process-limit=1",
    "--in-process-gpu",
    "--disable-extensions",
    "--js-flags=--max-old-space-size=192",
    "--disable-features=Translate,MediaRouter",
)


class ChartsUnavailable(RuntimeError):
    """Charts were asked for but cannot be drawn; the message names the fix."""


def chart_timeout() -> float:
    """Seconds allowed for the browser to start, and again for one batch of figures [s].

    From the environment variable OBLIGOR_MEMO_CHART_TIMEOUT when set, else 30 s.

    Returns
    -------
    float
        The timeout [s], in (0, 600].

    Raises
    ------
    ChartsUnavailable
        If the variable is not a number in (0, 600].
    """
    text = settings.current().chart_timeout
    if text is None:
        return DEFAULT_TIMEOUT_SECONDS
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not 0 < value <= MAX_TIMEOUT_SECONDS:
        raise ChartsUnavailable(
            f"{TIMEOUT_VARIABLE}: got {text!r}; allowed: a number of seconds "
            f"greater than 0 and at most {MAX_TIMEOUT_SECONDS:g}."
        )
    return value


def find_browser() -> str:
    """BROWSER_PATH if set, else the first usual install path; raise naming the fix.

    Returns
    -------
    str
        Path of an executable Chrome or Chromium.

    Raises
    ------
    ChartsUnavailable
        If BROWSER_PATH names no executable file, or, without it, none of
        :data:`BROWSER_CANDIDATES` is one.
    """
    chosen = settings.current().browser_path
    if chosen:
        if os.path.isfile(chosen) and os.access(chosen, os.X_OK):
            return chosen
        raise ChartsUnavailable(
            f"BROWSER_PATH is set to {chosen!r}, which is not an executable "
            f"file. Charts need a Chrome or Chromium browser: {NO_CHART_FIX}."
        )
    for path in BROWSER_CANDIDATES:
        if os.path.isfile(path) and os.access(path, os.X_OK):
            return path
    raise ChartsUnavailable(
        "No Chrome or Chromium browser was found (looked at BROWSER_PATH and "
        f"{', '.join(BROWSER_CANDIDATES)}). Charts need one: {NO_CHART_FIX}."
    )


def process_group_members(group: int) -> list[int]:
    """Live process ids in a process group (Linux /proc); the browser runs in its own group.

    Parameters
    ----------
    group : int
        The process group id.

    Returns
    -------
    list[int]
        Ids of the processes in the group that have not exited (zombies left out).
    """
    members = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat", "rb") as f:
                fields = f.read().rsplit(b")", 1)[1].split()
        except OSError:
            continue
        # fields[0] is the state, fields[2] the process group; zombies are already dead.
        if int(fields[2]) == group and fields[0] != b"Z":
            members.append(int(entry))
    return members


def _kill_group(group: int | None) -> None:
    if group is None:
        return
    try:
        os.killpg(group, signal.SIGKILL)
    except (ProcessLookupError, PermissionError) as exc:  # already gone, or not ours to kill
        log.debug("browser process group %s not killed: %s", group, exc)


# The chart browser runs at this niceness (lower priority than the layout).
BROWSER_NICENESS = 10


def _lower_priority() -> None:
    """In the browser's process, before it starts: a lower CPU priority (niceness)."""
    os.nice(BROWSER_NICENESS)


def _browser_classes() -> tuple[type, type]:
    """Kaleido's browser class with our flags, and its exporter class without the reload after every figure."""
    from choreographer.browsers.chromium import Chromium
    from kaleido import Kaleido

    class PrintChromium(Chromium):
        def get_cli(self) -> list[str]:
            return [*super().get_cli(), *BROWSER_FLAGS]

        def get_popen_args(self) -> Mapping[str, Any]:
            # The browser draws the charts while this process lays the memo out, and the charts
            # are needed only once the layout is done: on two cores, Chromium's start-up (several
            # processes) took CPU from the layout. A lower priority gives the layout the CPU
            # first; the browser still has the other core (children inherit the niceness).
            args = dict(super().get_popen_args())
            if hasattr(os, "nice"):
                args["preexec_fn"] = _lower_priority
            return args

    class BatchKaleido(Kaleido):
        async def _return_kaleido_tab(self, tab: Any) -> None:
            # kaleido reloads plotly.js after each figure (60 % of the time of one figure);
            # the exporter reloads once after the whole batch instead.
            await self.tabs_ready.put(tab)

    if not hasattr(Kaleido, "_return_kaleido_tab"):
        return PrintChromium, Kaleido  # another kaleido version: keep its own, slower, behaviour
    return PrintChromium, BatchKaleido


PARTIAL_BUNDLE = Path(__file__).resolve().parent.parent / "assets" / "plotly" / "plotly-cartesian.min.js"
_VERSION = re.compile(rb"plotly\.js[^\n]*? v(\d+\.\d+\.\d+)")


def bundle_version(path: Path) -> str | None:
    """The plotly.js version a bundle's licence header names, or None.

    Parameters
    ----------
    path : Path
        The bundle file; only its first 400 bytes are read.

    Returns
    -------
    str | None
        The version, e.g. "3.0.1"; None when the file cannot be read or names none.
    """
    try:
        with open(path, "rb") as f:
            found = _VERSION.search(f.read(400))
    except OSError:
        return None
    return found.group(1).decode("ascii") if found else None


def plotly_bundle() -> str | None:
    """The plotly.js the browser loads: the package's cartesian bundle, or None for the full one.

    The cartesian bundle (1.5 MB) holds every trace the memo draws; with it the browser is ready
    about 0.4 s sooner.

    Returns
    -------
    str | None
        Path of the package's cartesian bundle when it is the very version plotly.py ships, else
        None, meaning kaleido's default, plotly.py's full bundle (4.8 MB).
    """
    import plotly

    full = Path(plotly.__file__).resolve().parent / "package_data" / "plotly.min.js"
    version = bundle_version(PARTIAL_BUNDLE)
    return str(PARTIAL_BUNDLE) if version is not None and version == bundle_version(full) else None


class ChartExporter:
    """One Chromium (through kaleido) on a private event-loop thread, reused for many figures.

    ``start(wait=False)`` launches the browser in the background, so its start-up overlaps the
    analysis and the figure building; the first export waits for it. ``timeout`` [s] bounds the
    start-up and, separately, each batch of figures; past it the browser is killed.

    Parameters
    ----------
    browser_path : str | None, optional
        The Chrome or Chromium to run; None finds one (:func:`find_browser`).
    timeout : float | None, optional
        Timeout [s], in (0, 600]; None reads it from the environment (:func:`chart_timeout`).
    tabs : int, optional
        Browser tabs drawing figures side by side, 1 to 8.

    Raises
    ------
    ValueError
        If ``timeout`` or ``tabs`` is out of range.
    ChartsUnavailable
        If no browser is found, or the timeout set in the environment is not allowed.
    """

    def __init__(self, *, browser_path: str | None = None, timeout: float | None = None, tabs: int = 1):
        if timeout is not None and not 0 < timeout <= MAX_TIMEOUT_SECONDS:
            raise ValueError(f"timeout: got {timeout!r}; allowed: 0 < timeout <= {MAX_TIMEOUT_SECONDS:g} s")
        if not 1 <= tabs <= 8:
            raise ValueError(f"tabs: got {tabs!r}; allowed: 1 to 8")
        self.browser_path = browser_path or find_browser()
        self.timeout = chart_timeout() if timeout is None else timeout
        self.tabs = tabs
        self._loop: asyncio.AbstractEventLoop | None = None
        self._thread: threading.Thread | None = None
        self._opening: Any = None  # concurrent.futures.Future of the open browser
        self._kaleido: Any = None  # the open browser, once ready
        self._browser: Any = None  # the browser object from the moment it is created
        self._refresh: Any = None  # the background page reload after a batch
        self._lock = threading.RLock()

    @property
    def running(self) -> bool:
        """Started (or starting) and not closed."""
        return self._opening is not None

    @property
    def process_group(self) -> int | None:
        """The browser's process group id (its launcher starts a new session), once launched."""
        process = getattr(self._browser, "subprocess", None)
        return None if process is None else process.pid

    def start(self, *, wait: bool = True) -> ChartExporter:
        """Launch the browser on the exporter's own event-loop thread (once; later calls reuse it).

        Parameters
        ----------
        wait : bool, optional
            Whether to wait until the browser is ready; False returns at once and the first
            export waits instead.

        Returns
        -------
        ChartExporter
            The exporter itself.

        Raises
        ------
        ChartsUnavailable
            With ``wait``, if the browser does not start within the timeout or fails to start
            (it is then killed and the exporter closed).
        """
        with self._lock:
            if self._opening is None:
                from kaleido import PageGenerator

                chromium, kaleido_class = _browser_classes()
                loop = asyncio.new_event_loop()
                # A browser killed on purpose leaves failed tasks behind: nothing to print.
                loop.set_exception_handler(lambda _loop, _context: None)
                self._loop = loop
                self._thread = threading.Thread(target=loop.run_forever, name="memo-chart-exporter", daemon=True)
                self._thread.start()

                async def _open() -> Any:
                    # mathjax off: the default would load it from a CDN, and no chart needs TeX.
                    generator = PageGenerator(mathjax=False, plotly=plotly_bundle())
                    browser = kaleido_class(
                        n=self.tabs,
                        timeout=self.timeout,
                        page_generator=generator,
                        path=self.browser_path,
                        browser_cls=chromium,
                    )
                    self._browser = browser
                    await browser.open()
                    return browser

                self._opening = asyncio.run_coroutine_threadsafe(_open(), loop)
        if wait:
            self._ready()
        return self

    def _ready(self) -> Any:
        if self._kaleido is None:
            opening = self._opening
            try:
                if opening is None:
                    raise RuntimeError("the exporter was closed")
                self._kaleido = opening.result(timeout=self.timeout)
            except BaseException as exc:
                if is_timeout(exc):
                    reason = f"it did not answer within {self.timeout:g} s"
                    fix = f"on a busy machine raise {TIMEOUT_VARIABLE} (seconds); otherwise {NO_CHART_FIX}"
                else:
                    reason = f"{type(exc).__name__}: {' '.join(str(exc).split())[:300]}"
                    fix = NO_CHART_FIX
                self.close(force=True)
                raise ChartsUnavailable(
                    f"Chromium at {self.browser_path} could not be started for chart export ({reason}). Fix: {fix}."
                ) from None
        return self._kaleido

    def export_svg(self, figures: dict[str, Any]) -> dict[str, str]:
        """Every figure as SVG text, in one browser session; the whole batch gets the timeout.

        A page that fails while drawing (a script error in a busy browser, seen rarely) is given
        one more try in a freshly started browser; a timeout or a failed start is not retried.
        The browser is started first if it is not running.

        Parameters
        ----------
        figures : dict[str, Any]
            Plotly figures by key, each exported at :func:`figure_size`.

        Returns
        -------
        dict[str, str]
            The SVG text of each figure, by the same keys.

        Raises
        ------
        ChartsUnavailable
            If the browser cannot be started, the batch takes longer than the timeout, or the
            drawing fails twice (the browser is then killed).
        """
        try:
            return self._export_once(figures)
        except ChartsUnavailable as exc:
            if not str(exc).startswith(_DRAWING_FAILED):
                raise
            return self._export_once(figures)

    def _export_once(self, figures: dict[str, Any]) -> dict[str, str]:
        with self._lock:
            if self._opening is None:
                self.start(wait=False)
            started = time.monotonic()
            kaleido = self._ready()
            loop = self._loop
            assert loop is not None

            async def _one(fig: Any) -> str:
                width, height = figure_size(fig)
                opts = {"format": "svg", "width": width, "height": height}
                data = await kaleido.calc_fig(fig, opts=opts)
                return data.decode("utf-8") if isinstance(data, bytes) else str(data)

            async def _all() -> dict[str, str]:
                refresh = self._refresh
                if refresh is not None:
                    await asyncio.wrap_future(refresh)
                svgs = await asyncio.gather(*(_one(fig) for fig in figures.values()))
                return dict(zip(figures, svgs))

            future = asyncio.run_coroutine_threadsafe(_all(), loop)
            remaining = max(self.timeout - (time.monotonic() - started), 1e-3)
            try:
                svgs = future.result(timeout=remaining)
            except BaseException as exc:
                future.cancel()
                self.close(force=True)
                if is_timeout(exc):
                    raise ChartsUnavailable(
                        f"Chart export took longer than {self.timeout:g} s and "
                        f"was stopped. Try again, raise {TIMEOUT_VARIABLE}, or "
                        "print with --no-charts."
                    ) from None
                raise ChartsUnavailable(
                    f"{_DRAWING_FAILED} ("
                    f"{type(exc).__name__}: {' '.join(str(exc).split())[:300]}). "
                    f"Try again, or {NO_CHART_FIX}."
                ) from None
            self._refresh = asyncio.run_coroutine_threadsafe(self._reload_tabs(kaleido), loop)
            return svgs

    async def _reload_tabs(self, kaleido: Any) -> None:
        """A fresh page for the next batch, while the caller lays out this one."""
        try:
            tabs = [await kaleido.tabs_ready.get() for _ in range(kaleido.tabs_ready.qsize())]
            try:
                await asyncio.gather(*(tab.reload() for tab in tabs))
            finally:
                for tab in tabs:
                    await kaleido.tabs_ready.put(tab)
        except Exception:  # a stale page still draws; the next failure is reported by export_svg
            log.debug("reloading the chart pages failed", exc_info=True)

    def close(self, *, force: bool = False) -> None:
        """Close the browser and stop the thread.

        Whatever still runs in the browser's process group afterwards is killed. The exporter
        can be started again.

        Parameters
        ----------
        force : bool, optional
            Whether to kill the browser's process group first (it hangs or has failed);
            otherwise it is asked to quit and killed if it lingers.
        """
        with self._lock:
            loop, browser, group = self._loop, self._browser, self.process_group
            self._kaleido = self._opening = self._browser = self._refresh = None
            self._loop = None
            if force:
                _kill_group(group)
            if loop is not None and browser is not None:
                # Tidies the pipes and temporary folders; quick when the browser is dead.
                _run_on(loop, browser.close(), 1 if force else 10, "the chart browser did not close cleanly")
            _kill_group(group)  # whatever still runs in the browser's group
            if loop is not None:

                async def _cancel_rest() -> None:
                    tasks = [t for t in asyncio.all_tasks() if t is not asyncio.current_task()]
                    for task in tasks:
                        task.cancel()
                    await asyncio.wait(tasks, timeout=1) if tasks else None

                _run_on(loop, _cancel_rest(), 2, "the chart browser's tasks did not cancel in time")
                loop.call_soon_threadsafe(loop.stop)
                if self._thread is not None:
                    self._thread.join(timeout=5)
                if not loop.is_running():
                    loop.close()
            self._thread = None


def _run_on(loop: asyncio.AbstractEventLoop, coroutine: Any, timeout: float, failure: str) -> None:
    """Run a closing step on the browser's loop; whatever goes wrong, closing goes on.

    A coroutine that never started (the loop had already stopped) is closed here, so that it is
    not left for the garbage collector to report as never awaited.
    """
    import inspect

    try:
        asyncio.run_coroutine_threadsafe(coroutine, loop).result(timeout=timeout)
    except BaseException:  # closing must go on: the group is killed and the loop stopped next
        log.debug(failure, exc_info=True)
        if inspect.iscoroutine(coroutine) and inspect.getcoroutinestate(coroutine) == inspect.CORO_CREATED:
            coroutine.close()


_DRAWING_FAILED = "The browser failed while drawing the charts"


def figure_size(fig: Any) -> tuple[int, int]:
    """Width and height [px] a figure is exported at (the SVG's own size).

    Parameters
    ----------
    fig : Any
        A plotly figure; the memo sets its export width as ``_memo_width``.

    Returns
    -------
    tuple[int, int]
        Width (760 unless set) and height (the layout's, else 420) [px].
    """
    return int(getattr(fig, "_memo_width", 760)), int(fig.layout.height or 420)


def is_timeout(exc: BaseException) -> bool:
    """Whether an exception is a timeout of any of the kinds the exporter's waits raise.

    Parameters
    ----------
    exc : BaseException
        The exception caught.

    Returns
    -------
    bool
        True for the builtin, asyncio and concurrent.futures timeout errors.
    """
    import concurrent.futures

    return isinstance(exc, (TimeoutError, asyncio.TimeoutError, concurrent.futures.TimeoutError))


_EXPORTER: ChartExporter | None = None
_EXPORTER_LOCK = threading.Lock()


def start_chart_exporter(*, wait: bool = True) -> ChartExporter:
    """Start (once) the process-wide exporter; later memos reuse its browser.

    It is stopped when the process exits, if no one stopped it before.

    Parameters
    ----------
    wait : bool, optional
        Whether to wait until the browser is ready; with False the browser starts in the
        background while the caller gets on with its work.

    Returns
    -------
    ChartExporter
        The process-wide exporter.

    Raises
    ------
    ChartsUnavailable
        If no browser is found, the timeout set in the environment is not allowed, or, with
        ``wait``, the browser does not start.
    """
    global _EXPORTER
    with _EXPORTER_LOCK:
        if _EXPORTER is None or not _EXPORTER.running:
            _EXPORTER = ChartExporter().start(wait=False)
            # A server or test process that exits without stopping it leaves no browser behind.
            atexit.unregister(stop_chart_exporter)
            atexit.register(stop_chart_exporter)
        exporter = _EXPORTER
    if wait:
        exporter._ready()
    return exporter


def stop_chart_exporter() -> None:
    """Close the process-wide exporter and its browser, if one was started."""
    global _EXPORTER
    with _EXPORTER_LOCK:
        exporter, _EXPORTER = _EXPORTER, None
    if exporter is not None:
        exporter.close()


def running_exporter() -> ChartExporter | None:
    """The process-wide exporter when it was started and is not closed, else None.

    Returns
    -------
    ChartExporter | None
        The running exporter, or None.
    """
    exporter = _EXPORTER
    return exporter if exporter is not None and exporter.running else None
