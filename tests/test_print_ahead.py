"""The print-ahead worker with a fake print: keys, the cancel rule, steps, failures, the bound, one at a time."""

from __future__ import annotations

import threading

import pytest
from obligor_memo.app.workbench.print_ahead import KEPT, STEPS, Printer

WAIT = 10  # seconds: a generous bound for anything that should happen at once


@pytest.fixture()
def printer():
    p = Printer()
    yield p
    p.clear(timeout=WAIT)


def key(n: int, *, charts: bool = True, annex: bool = False) -> tuple[str, bool, bool]:
    return (f"fingerprint-{n}", charts, annex)


class Gate:
    """A fake print that waits for ``release`` (after telling ``entered``) and counts its calls."""

    def __init__(self, pdf: bytes = b"%PDF-fake") -> None:
        self.entered = threading.Event()
        self.release = threading.Event()
        self.calls = 0
        self.pdf = pdf

    def __call__(self, progress):
        self.calls += 1
        self.entered.set()
        assert self.release.wait(WAIT)
        return self.pdf


def done(pdf: bytes = b"%PDF-fake"):
    return lambda progress: pdf


def test_the_same_key_returns_the_same_job(printer):
    gate = Gate()
    first = printer.submit(key(1), "a", gate)
    again = printer.submit(key(1), "b", gate)
    assert again is first
    gate.release.set()
    assert first.result(timeout=WAIT) == b"%PDF-fake"
    assert printer.submit(key(1), "a", gate) is first  # done, still kept: no second print
    assert gate.calls == 1
    assert printer.submit(key(1, annex=True), "a", done()) is not first  # the annex is part of the key


def test_a_new_key_from_the_same_session_cancels_its_queued_job(printer):
    busy = Gate()
    printer.submit(key(0), "other", busy)
    assert busy.entered.wait(WAIT)  # the worker is busy: what follows waits in the queue
    calls = []
    queued = [printer.submit(key(n), "typist", lambda progress, n=n: calls.append(n) or b"%PDF") for n in (1, 2, 3)]
    assert [job.future.cancelled() for job in queued] == [True, True, False]
    assert printer.keys() == [key(0), key(3)]  # the cancelled ones are forgotten
    busy.release.set()
    assert queued[-1].result(timeout=WAIT) == b"%PDF"
    assert calls == [3]  # ten edits queue one print, not ten


def test_a_queued_job_another_session_asked_for_is_not_cancelled(printer):
    busy = Gate()
    printer.submit(key(0), "other", busy)
    assert busy.entered.wait(WAIT)
    shared = printer.submit(key(1), "tab 1", done())
    assert printer.submit(key(1), "tab 2", done()) is shared
    printer.submit(key(2), "tab 1", done())
    assert not shared.future.cancelled()  # tab 2 still wants it
    busy.release.set()
    assert shared.result(timeout=WAIT) == b"%PDF-fake"


def test_a_started_job_is_not_cancelled_by_a_new_key(printer):
    gate = Gate()
    running = printer.submit(key(1), "a", gate)
    assert gate.entered.wait(WAIT)
    assert running.started() and not running.cancel()
    printer.submit(key(2), "a", done())
    gate.release.set()
    assert running.result(timeout=WAIT) == b"%PDF-fake"


def test_steps_are_recorded_in_order(printer):
    midway = threading.Event()
    gate = threading.Event()

    def render(progress):
        for step in ("layout", "charts"):
            progress(step)
        midway.set()
        assert gate.wait(WAIT)
        progress("writing")
        progress("not a step")  # ignored
        progress("layout")  # reached already: not recorded twice
        return b"%PDF"

    job = printer.submit(key(1), "a", render)
    assert midway.wait(WAIT)
    assert job.steps() == ("analysis", "layout", "charts")  # what the click shows while it waits
    assert not job.future.done()
    gate.set()
    assert job.result(timeout=WAIT) == b"%PDF"
    assert job.steps() == STEPS


def test_a_failure_reaches_the_waiter_and_is_logged(printer, caplog):
    class ChartsGone(RuntimeError):
        pass

    def render(progress):
        progress("layout")
        raise ChartsGone("no browser could draw the charts")

    job = printer.submit(key(1), "a", render)
    with pytest.raises(ChartsGone, match="no browser could draw the charts"):
        job.result(timeout=WAIT)
    assert job.steps() == ("analysis", "layout")
    assert printer.submit(key(1), "a", done()) is job  # kept: the failure is not retried on its own
    with pytest.raises(ChartsGone):
        job.result(timeout=WAIT)
    assert any("ChartsGone" in r.getMessage() and r.exc_info for r in caplog.records)
    printer.forget(job)  # what the click does once it showed the failure
    again = printer.submit(key(1), "a", done())
    assert again is not job and again.result(timeout=WAIT) == b"%PDF-fake"


def test_the_bound_on_kept_jobs_holds(printer):
    jobs = [printer.submit(key(n), f"session {n}", done(bytes(n))) for n in range(KEPT + 5)]
    for job in jobs[-KEPT:]:
        job.result(timeout=WAIT)
    assert printer.keys() == [key(n) for n in range(5, KEPT + 5)]
    assert printer.job(key(0)) is None and printer.job(key(KEPT + 4)) is jobs[-1]
    printer.submit(key(5), "session 5", done())  # found again: now the newest
    printer.submit(key(99), "session 99", done())
    assert printer.job(key(6)) is None and printer.job(key(5)) is not None
    assert len(printer.keys()) == KEPT


def test_the_worker_prints_one_memo_at_a_time(printer):
    lock = threading.Lock()
    now = 0
    most = 0

    def render(progress):
        nonlocal now, most
        with lock:
            now += 1
            most = max(most, now)
        threading.Event().wait(0.02)
        with lock:
            now -= 1
        return b"%PDF"

    jobs = [printer.submit(key(n), f"session {n}", render) for n in range(6)]
    assert [job.result(timeout=WAIT) for job in jobs] == [b"%PDF"] * 6
    assert most == 1


def test_the_process_has_one_printer():
    from obligor_memo.app.workbench import print_ahead

    assert print_ahead.printer() is print_ahead.printer()
