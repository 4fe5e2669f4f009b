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


# --------------------------------------------------------------------------- the memo page


class MemoPage:
    """The workbench's memo page with a fake renderer: it counts its calls and may be held (``gate``)."""

    def __init__(self) -> None:
        self.calls: list[str] = []
        self.gate = threading.Event()
        self.gate.set()  # open unless a test closes it
        self.entered = threading.Event()
        self.at = None

    def render(self, results, *, charts, progress, annex):
        self.calls.append(results.fingerprint)
        self.entered.set()
        for step in ("layout", "charts", "writing"):
            progress(step)
        assert self.gate.wait(WAIT)
        return b"%PDF-fake " + results.fingerprint.encode()

    def open(self):
        from pathlib import Path

        from streamlit.testing.v1 import AppTest

        main = Path(__file__).resolve().parent.parent / "app" / "workbench" / "main.py"
        self.at = AppTest.from_file(str(main), default_timeout=60)
        self.at.run()
        self.at.switch_page("steps/memo.py")
        self.at.run()
        assert not self.at.exception
        return self.at


@pytest.fixture()
def memo_page(tmp_path, monkeypatch):
    """The memo page of the sample case, not yet opened; the memo renderer replaced by a fake."""
    from obligor_memo.app import memo
    from obligor_memo.app.workbench.state import WORKDIR_ENV

    page = MemoPage()
    monkeypatch.setattr(memo, "render_memo_pdf", page.render)
    monkeypatch.setenv("OBLIGOR_MEMO_CHART_PRESTART", "0")
    monkeypatch.setenv(WORKDIR_ENV, str(tmp_path / "work"))
    yield page
    page.gate.set()


def _click_print(at):
    [b for b in at.button if b.label == "Print the memo (PDF)"][0].click().run()
    assert not at.exception, [e.value for e in at.exception]


def _pdf_downloads(at) -> list[str]:
    return [d.proto.label for d in at.get("download_button") if "(PDF)" in d.proto.label]


def _review(at, name: str) -> None:
    [w for w in at.text_input if w.label == "Reviewed by"][0].set_value(name).run()
    assert not at.exception


SHOWN = (  # the steps as the click's status box words them
    "Analysis: sensitivities, PD grid and scenarios",
    "Layout of the pages",
    "Charts drawn and placed",
    "Writing the PDF",
)


def test_the_memo_page_prints_ahead_and_the_click_takes_that_print(memo_page):
    from obligor_memo.app.workbench import print_ahead

    at, calls = memo_page.open(), memo_page.calls
    [ahead] = print_ahead.printer().keys()  # opening the page started the print
    fingerprint, charts, annex = ahead
    assert (charts, annex) == (True, False)
    assert print_ahead.printer().job(ahead).result(timeout=WAIT) == b"%PDF-fake " + fingerprint.encode()
    assert not _pdf_downloads(at)  # nothing is offered before the click
    _click_print(at)
    assert _pdf_downloads(at) == ["Memo (PDF)"]
    assert at.session_state["memo_pdf"][:1] == (fingerprint,)
    assert calls == [fingerprint]  # the click printed nothing itself
    shown = [m.value for m in at.markdown]
    assert all(text in shown for text in SHOWN)  # the steps reached, shown at the click

    # An edit makes another case: the old PDF is not offered, and the new case prints ahead.
    _review(at, "R. Second")
    assert not _pdf_downloads(at)
    assert any("case changed since the memo was printed" in c.value for c in at.caption)
    edited = [k for k in print_ahead.printer().keys() if k[0] != fingerprint]
    assert [k[1:] for k in edited] == [(True, False)]
    print_ahead.printer().job(edited[0]).result(timeout=WAIT)
    _click_print(at)
    assert _pdf_downloads(at) == ["Memo (PDF)"]
    assert at.session_state["memo_pdf"][0] == edited[0][0] != fingerprint
    assert at.session_state["memo_pdf"][1] == b"%PDF-fake " + edited[0][0].encode()
    assert calls == [fingerprint, edited[0][0]]
    at.run()  # a rerun with the memo held starts nothing more
    assert calls == [fingerprint, edited[0][0]]


def test_a_print_ahead_started_before_an_edit_is_never_offered_for_the_edited_case(memo_page):
    from obligor_memo.app.workbench import print_ahead

    calls, gate = memo_page.calls, memo_page.gate
    gate.clear()  # the print of the case as opened holds the worker
    at = memo_page.open()
    [before] = print_ahead.printer().keys()
    assert memo_page.entered.wait(WAIT)  # the worker is printing the case as opened
    _review(at, "R. Third")  # the edited case's print ahead waits in the queue
    [after] = [k for k in print_ahead.printer().keys() if k != before]
    assert not print_ahead.printer().job(after).started()
    threading.Timer(0.3, gate.set).start()  # the old print ends while the click waits its turn
    _click_print(at)
    # The click cancelled the queued print and printed the edited case itself.
    assert print_ahead.printer().job(after) is None
    assert at.session_state["memo_pdf"][0] == after[0] != before[0]
    assert at.session_state["memo_pdf"][1] == b"%PDF-fake " + after[0].encode()
    assert calls == [before[0], after[0]]
    assert _pdf_downloads(at) == ["Memo (PDF)"]


def test_a_failed_print_ahead_is_reported_at_the_click_and_not_retried_on_its_own(memo_page, monkeypatch):
    from obligor_memo.app import memo
    from obligor_memo.app.workbench import print_ahead

    tries = []

    def no_charts(results, *, charts, progress, annex):
        tries.append(charts)
        progress("layout")
        if charts:
            raise memo.ChartsUnavailable("no browser here: install Chromium")
        return b"%PDF-plain"

    monkeypatch.setattr(memo, "render_memo_pdf", no_charts)
    at = memo_page.open()
    [job] = [print_ahead.printer().job(k) for k in print_ahead.printer().keys()]
    with pytest.raises(memo.ChartsUnavailable):
        job.result(timeout=WAIT)
    _click_print(at)
    message = " ".join(e.value for e in at.error)
    assert "charts could not be drawn" in message and "no browser here" in message
    assert tries == [True]  # the click showed the print ahead's failure
    assert print_ahead.printer().keys() == []  # shown, so forgotten; and not printed ahead again
    [b for b in at.button if b.label == "Print the memo without charts"][0].click().run()
    assert _pdf_downloads(at) == ["Memo without charts (PDF)"]
    assert tries == [True, False] and print_ahead.printer().keys() == []
    _click_print(at)  # the click tries again itself
    assert tries == [True, False, True]


# --------------------------------------------------------------------------- shared analyses


def test_a_value_asked_for_twice_at_once_is_computed_once():
    from obligor_memo.app.workbench.print_ahead import SharedValues

    values, gate, calls = SharedValues(), threading.Event(), []

    def compute():
        calls.append(1)
        assert gate.wait(WAIT)
        return object()

    got: list[object] = []
    threads = [threading.Thread(target=lambda: got.append(values.get("case", compute))) for _ in range(3)]
    for thread in threads:
        thread.start()
    gate.set()
    for thread in threads:
        thread.join(WAIT)
    assert len(calls) == 1 and len(got) == 3 and got[0] is got[1] is got[2]
    assert values.get("case", compute) is got[0] and len(calls) == 1  # kept


def test_a_failure_reaches_the_waiter_and_is_not_kept():
    from obligor_memo.app.workbench.print_ahead import SharedValues

    values, entered, release = SharedValues(), threading.Event(), threading.Event()

    def failing():
        entered.set()
        assert release.wait(WAIT)
        raise ValueError("statements: got no year; allowed: at least two years")

    first = threading.Thread(target=lambda: pytest.raises(ValueError, values.get, "case", failing))
    first.start()
    assert entered.wait(WAIT)
    waiter_errors: list[BaseException] = []

    def waiter():
        try:
            values.get("case", lambda: "never computed: the first caller computes it")
        except ValueError as exc:
            waiter_errors.append(exc)

    second = threading.Thread(target=waiter)
    second.start()
    release.set()
    first.join(WAIT)
    second.join(WAIT)
    assert [str(e) for e in waiter_errors] == ["statements: got no year; allowed: at least two years"]
    assert values.get("case", lambda: "fixed") == "fixed"  # the failure was not kept


def test_a_stopped_first_caller_leaves_the_value_to_the_next():
    from obligor_memo.app.workbench.print_ahead import SharedValues

    values, entered, release = SharedValues(), threading.Event(), threading.Event()

    class Stopped(BaseException):  # as a script run stopped by the framework
        pass

    def stopped():
        entered.set()
        assert release.wait(WAIT)
        raise Stopped

    first = threading.Thread(target=lambda: pytest.raises(Stopped, values.get, "case", stopped))
    first.start()
    assert entered.wait(WAIT)
    got: list[object] = []
    second = threading.Thread(target=lambda: got.append(values.get("case", lambda: "computed by the waiter")))
    second.start()
    release.set()
    first.join(WAIT)
    second.join(WAIT)
    assert got == ["computed by the waiter"]


def test_shared_values_keep_the_most_recent():
    from obligor_memo.app.workbench.print_ahead import SharedValues

    values = SharedValues(size=2)
    for name in ("a", "b", "c"):
        values.get(name, lambda name=name: name.upper())
    values.get("b", lambda: "not again")
    assert values.get("c", lambda: "not again") == "C"
    assert values.get("a", lambda: "again") == "again"  # the oldest went first
