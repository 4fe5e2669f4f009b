"""The memo printed ahead of the click: one process-wide worker thread, jobs kept by key.

The memo page hands the worker its analysed case once the page is drawn; the click on Print then
finds the PDF ready, or being printed, and waits only for the rest. No Streamlit here: the worker
thread has no script-run context, and the module is tested on its own.

Rules:

- One worker (a single thread) for the whole server: WeasyPrint must not lay out two memos at
  once in one process, and the server's cores are shared by every session. :data:`PRINTING` is
  held around every print, ahead or not, so a print in a script thread waits for the worker's.
- Jobs are kept by key, (case fingerprint, charts, annex); the last :data:`KEPT` are kept. A key
  already known returns its job.
- A session that submits a new key cancels its previous job if that has not started and no other
  session asked for it: ten edits of a narrative queue one print, not ten.
- Each job records the steps it has reached (:data:`STEPS`), so the click can show them.
- A failure stays on the job (the waiter gets the same exception) and is logged.
"""

from __future__ import annotations

import logging
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from concurrent.futures import Executor, Future, ThreadPoolExecutor
from concurrent.futures import wait as _wait_for

log = logging.getLogger(__name__)

KEPT = 8
"""How many jobs are kept (the oldest goes first; a memo's PDF is about 110 KB)."""

STEPS = ("analysis", "layout", "charts", "writing")
"""The progress steps a job records, in print order ("analysis": the analysed case handed in)."""

PRINTING = threading.Lock()
"""Held while a memo is printed, by the worker or by a script thread: one print at a time."""

Key = tuple[str, bool, bool]
"""(case fingerprint, charts, annex)."""

Render = Callable[[Callable[[str], None]], bytes]
"""A print: called with the progress callback (told each step's name), returns the PDF bytes."""


class PrintJob:
    """One memo printed on the worker: its key, the steps reached, and the PDF or the failure.

    Parameters
    ----------
    key : Key
        (case fingerprint, charts, annex).
    render : Render
        The print, run on the worker thread.
    executor : Executor
        The worker it is queued on.
    """

    def __init__(self, key: Key, render: Render, executor: Executor) -> None:
        self.key = key
        self.sessions: set[Hashable] = set()
        """The sessions that asked for it (it is cancelled only when none is left)."""
        self._render: Render | None = render
        self._steps: list[str] = []
        self._lock = threading.Lock()
        self.future: Future[bytes] = executor.submit(self._print)
        """The print's outcome (the executor's own future)."""

    def _reach(self, step: str) -> None:
        with self._lock:
            if step in STEPS and step not in self._steps:
                self._steps.append(step)

    def steps(self) -> tuple[str, ...]:
        """The steps reached so far, in the order they were reached.

        Returns
        -------
        tuple[str, ...]
            Names from :data:`STEPS`.
        """
        with self._lock:
            return tuple(self._steps)

    def started(self) -> bool:
        """Whether the worker has taken the job (it is printing, or has finished).

        Returns
        -------
        bool
            False while it waits in the queue, or once it was cancelled before starting.
        """
        return self.future.running() or (self.future.done() and not self.future.cancelled())

    def cancel(self) -> bool:
        """Cancel the job if the worker has not taken it yet.

        Returns
        -------
        bool
            True if it will not run (cancelled now or before); False if it has started.
        """
        cancelled = self.future.cancel()
        if cancelled:
            self._render = None  # the analysed case it held is let go at once
        return cancelled

    def wait(self, timeout: float | None = None) -> bool:
        """Wait until the job has finished, or for ``timeout``.

        Parameters
        ----------
        timeout : float | None, optional
            The longest wait [s]; None waits for the end.

        Returns
        -------
        bool
            Whether the job has finished (printed, failed or cancelled).
        """
        _wait_for([self.future], timeout=timeout)
        return self.future.done()

    def result(self, timeout: float | None = None) -> bytes:
        """The PDF, once printed.

        Parameters
        ----------
        timeout : float | None, optional
            The longest wait [s]; None waits for the end.

        Returns
        -------
        bytes
            The memo's PDF.

        Raises
        ------
        Exception
            The print's own failure (the same exception, e.g. ``ChartsUnavailable``).
        concurrent.futures.CancelledError
            If the job was cancelled before it started.
        TimeoutError
            If the job has not finished within ``timeout``.
        """
        return self.future.result(timeout=timeout)

    def _print(self) -> bytes:
        """Print on the worker thread (the executor skips it when cancelled first); log a failure."""
        render, self._render = self._render, None
        if render is None:  # cancelled, yet taken: cannot happen, as the executor checks first
            raise RuntimeError("the print was cancelled")
        self._reach("analysis")
        try:
            with PRINTING:
                return render(self._reach)
        except Exception as exc:  # kept on the future for the waiter, who reports it
            log.warning("the memo printed ahead failed (%s: %s)", type(exc).__name__, exc, exc_info=True)
            raise


class Printer:
    """The worker and its kept jobs.

    Parameters
    ----------
    kept : int, optional
        How many jobs to keep [jobs].
    """

    def __init__(self, kept: int = KEPT) -> None:
        self.kept = kept
        self._executor = ThreadPoolExecutor(max_workers=1, thread_name_prefix="memo-print-ahead")
        self._jobs: OrderedDict[Key, PrintJob] = OrderedDict()
        self._latest: dict[Hashable, Key] = {}
        self._lock = threading.Lock()

    def submit(self, key: Key, session: Hashable, render: Render) -> PrintJob:
        """Queue a print for ``key`` (or return the job already known for it).

        The session's previous job, if it has not started and no other session asked for it, is
        cancelled and forgotten.

        Parameters
        ----------
        key : Key
            (case fingerprint, charts, annex).
        session : Hashable
            Who asks (one browser session).
        render : Render
            The print, called on the worker with the progress callback.

        Returns
        -------
        PrintJob
            The job for ``key``.
        """
        with self._lock:
            previous = self._latest.get(session)
            self._latest[session] = key
            if previous is not None and previous != key:
                old = self._jobs.get(previous)
                if old is not None:
                    old.sessions.discard(session)
                    if not old.sessions and old.cancel():
                        del self._jobs[previous]
            job = self._jobs.get(key)
            if job is None:
                job = PrintJob(key, render, self._executor)
                self._jobs[key] = job
                self._trim()
            else:
                self._jobs.move_to_end(key)
            job.sessions.add(session)
            return job

    def _trim(self) -> None:
        """Forget the oldest jobs beyond the bound (one not started yet is cancelled: none could find it)."""
        while len(self._jobs) > self.kept:
            _, job = self._jobs.popitem(last=False)
            job.cancel()

    def job(self, key: Key) -> PrintJob | None:
        """The job kept for ``key``, if any.

        Parameters
        ----------
        key : Key
            (case fingerprint, charts, annex).

        Returns
        -------
        PrintJob | None
            The job, or None when none is kept.
        """
        with self._lock:
            return self._jobs.get(key)

    def forget(self, job: PrintJob) -> None:
        """Drop ``job`` from the kept ones (if it is still the one kept for its key).

        Parameters
        ----------
        job : PrintJob
            The job to drop; it is cancelled if it has not started.
        """
        with self._lock:
            if self._jobs.get(job.key) is job:
                del self._jobs[job.key]
        job.cancel()

    def keys(self) -> list[Key]:
        """The keys kept, oldest first.

        Returns
        -------
        list[Key]
            The kept jobs' keys.
        """
        with self._lock:
            return list(self._jobs)

    def clear(self, timeout: float | None = None) -> None:
        """Cancel what waits, wait for what runs, and forget every job.

        Parameters
        ----------
        timeout : float | None, optional
            The longest wait for the running job [s]; None waits for its end.
        """
        with self._lock:
            jobs = list(self._jobs.values())
            self._jobs.clear()
            self._latest.clear()
        for job in jobs:
            job.cancel()
        _wait_for([job.future for job in jobs], timeout=timeout)


_PRINTER: Printer | None = None
_PRINTER_LOCK = threading.Lock()


def printer() -> Printer:
    """The process-wide printer (created at the first call).

    Returns
    -------
    Printer
        The one worker shared by every session.
    """
    global _PRINTER
    with _PRINTER_LOCK:
        if _PRINTER is None:
            _PRINTER = Printer()
        return _PRINTER


class _Interrupted(Exception):
    """The caller computing a value stopped without a result or an error of its own."""


class SharedValues:
    """Values computed once per key and shared by every thread; a second caller waits for the first.

    The analysed case is needed by the memo page's script thread and by the print worker at
    about the same moment: whichever asks first computes it, the other waits for that result
    instead of computing it a second time beside it. A failure is not kept (the next caller
    tries again) and reaches every caller waiting for it. The last ``size`` values are kept.

    Parameters
    ----------
    size : int, optional
        How many values are kept.
    """

    def __init__(self, size: int = 32) -> None:
        self._size = size
        self._lock = threading.Lock()
        self._values: OrderedDict[Hashable, Future[object]] = OrderedDict()

    def get(self, key: Hashable, compute: Callable[[], object]) -> object:
        """The value of ``key``, computed by ``compute`` unless kept or being computed.

        Parameters
        ----------
        key : Hashable
            The value's key.
        compute : Callable[[], object]
            Computes it (called at most once at a time per key).

        Returns
        -------
        object
            The value.

        Raises
        ------
        Exception
            What ``compute`` raised, in this caller or the one it waited for.
        """
        while True:
            with self._lock:
                future = self._values.get(key)
                owner = future is None
                if future is None:
                    future = self._values[key] = Future()
                    while len(self._values) > self._size:
                        self._values.popitem(last=False)
                else:
                    self._values.move_to_end(key)
            if owner:
                return self._compute(key, future, compute)
            try:
                return future.result()
            except _Interrupted:
                continue  # the first caller was stopped: compute it here

    def _compute(self, key: Hashable, future: Future[object], compute: Callable[[], object]) -> object:
        try:
            value = compute()
        except BaseException as exc:
            with self._lock:
                if self._values.get(key) is future:
                    del self._values[key]
            future.set_exception(exc if isinstance(exc, Exception) else _Interrupted(repr(exc)))
            raise
        future.set_result(value)
        return value

    def clear(self) -> None:
        """Forget every kept value (values being computed still reach their waiters)."""
        with self._lock:
            self._values.clear()
