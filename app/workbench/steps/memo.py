"""Step 7: the memo's narrative, sign-off, and the files to keep (case file, PDF memo)."""

from __future__ import annotations

import importlib
import logging
import re
import uuid
from collections.abc import Callable
from typing import Any

import streamlit as st
from obligor_memo.app import settings
from obligor_memo.app.present.covenants import covenant_sentence
from obligor_memo.app.workbench import grids, print_ahead, state
from obligor_memo.app.workbench import ui as _ui

log = logging.getLogger(__name__)

PRESTART_VARIABLE = settings.CHART_PRESTART


def _memo_module() -> Any | None:
    """The memo renderer (``app.memo``), or None when it cannot be imported (the reason is logged)."""
    try:
        return importlib.import_module("obligor_memo.app.memo")
    except Exception:  # the renderer's own dependencies (WeasyPrint, kaleido) may be missing
        log.warning("the memo renderer could not be loaded", exc_info=True)
        return None


@st.cache_resource(show_spinner=False)
def _chart_browser_started() -> bool:
    """Once per server: the chart browser and the layout worker start in the background.

    So memos print warm. False when the memo renderer cannot be loaded. A failure is not cached
    (st.cache_resource keeps only returned values): the next visit tries again, and the print
    button reports the reason.
    """
    memo_module = _memo_module()
    if memo_module is None:
        return False
    memo_module.start_chart_exporter(wait=False)
    return True


STEPS = {
    "analysis": "Analysis: sensitivities, PD grid and scenarios",
    "layout": "Layout of the pages",
    "charts": "Charts drawn and placed",
    "writing": "Writing the PDF",
}


def _results_workbook(case: Any) -> Callable[[], bytes]:
    """The results workbook of the last valid case, built when the button is clicked.

    The full analysis and the workbook take a moment; the page does not wait for them (the
    download button calls the function returned).
    """

    def build() -> bytes:
        from obligor_memo.app.present.export import export_workbook

        return export_workbook(_ui.analysed(case))

    return build


POLL_SECONDS = 0.05  # how often the click looks at a print ahead's progress [s]


def _session_token() -> str:
    """The browser session's name for the print-ahead worker (a session cancels only its own jobs)."""
    ss = st.session_state
    if "memo_print_session" not in ss:
        ss.memo_print_session = uuid.uuid4().hex
    return str(ss.memo_print_session)


def _waited(job: print_ahead.PrintJob, say: Callable[[str], None]) -> bytes:
    """The PDF of a print ahead that has started, each step told as the job reaches it.

    Parameters
    ----------
    job : print_ahead.PrintJob
        A job the worker has taken (printing, or finished).
    say : Callable[[str], None]
        Told each step's name once, in order.

    Returns
    -------
    bytes
        The memo's PDF.

    Raises
    ------
    Exception
        The print's own failure, as the job raised it.
    """
    shown = 0
    while True:
        steps = job.steps()
        for step in steps[shown:]:
            say(step)
        shown = len(steps)
        if job.future.done():
            return job.result()
        job.wait(POLL_SECONDS)


def _failed(printer: print_ahead.Printer, job: print_ahead.PrintJob | None, key: print_ahead.Key) -> None:
    """After a failed print: not printed ahead again for this key, and its job (if any) forgotten.

    Parameters
    ----------
    printer : print_ahead.Printer
        The process's print worker.
    job : print_ahead.PrintJob | None
        The print ahead the click waited for, if it did.
    key : print_ahead.Key
        (fingerprint, charts, annex) of the print.
    """
    st.session_state.memo_print_failed = key  # the next click prints afresh, here
    if job is not None:
        printer.forget(job)


def _print(memo_module: Any, results: Any, *, charts: bool) -> None:
    """Print the memo into the session, its steps shown as they run; a failure leaves a message.

    A print ahead of this case (same fingerprint, charts and annex) that has started is waited
    for; one still queued is cancelled and the memo printed here.
    """
    ss = st.session_state
    annex = bool(ss.get("memo_annex", False))
    key = (results.fingerprint, charts, annex)
    ss.memo_chart_problem = None
    if ss.get("memo_print_failed") == key:  # tried again: it may print ahead again if this works
        ss.memo_print_failed = None
    printer = print_ahead.printer()
    job = printer.job(key) if charts else None
    if job is not None and job.cancel():  # still queued behind another print: print it here
        printer.forget(job)
        job = None
    with st.status("Printing the memo..." if charts else "Printing the memo without charts...") as status:

        def say(step: str) -> None:
            if step in STEPS and (charts or step != "charts"):
                status.write(STEPS[step])

        try:
            if job is not None:
                pdf = _waited(job, say)
            else:
                say("analysis")
                full = _ui.analysed(results.case)
                with print_ahead.PRINTING:
                    pdf = memo_module.render_memo_pdf(full, charts=charts, progress=say, annex=annex)
            ss.memo_pdf = (results.fingerprint, pdf, charts, annex)
            if charts:
                ss.memo_charts_failed = False
            status.update(label="The memo is printed: download it below.", state="complete")
        except memo_module.ChartsUnavailable as exc:
            ss.memo_chart_problem = str(exc)
            ss.memo_charts_failed = True  # no print ahead with charts until one prints here
            _failed(printer, job, key)
            status.update(label="The charts could not be drawn.", state="error")
        except Exception as exc:  # the renderer's failure must not reach the screen raw
            log.exception("the memo could not be printed")
            _failed(printer, job, key)
            status.update(label="The memo could not be printed.", state="error")
            st.error(f"The memo could not be printed ({type(exc).__name__}: {exc}). Your inputs are kept.")


def _print_ahead(results: Any) -> bool:
    """Start printing the memo of this case on the worker, unless it is printed or cannot be.

    The worker analyses the case first (:func:`ui.analysed`, shared with this page), so the
    print starts as soon as the page is drawn rather than after the analysis.

    Parameters
    ----------
    results : Any
        The page's results (their fingerprint names the case).

    Returns
    -------
    bool
        Whether the worker has a print of this case (queued, printing or printed).
    """
    ss = st.session_state
    annex = bool(ss.get("memo_annex", False))
    key = (results.fingerprint, True, annex)
    held = ss.get("memo_pdf")
    if held and (held[0], held[2], held[3]) == key:
        return False  # printed already
    if ss.get("memo_print_failed") == key or ss.get("memo_charts_failed"):
        # The click showed why it failed; the next click prints again itself. After the charts
        # failed, a print without charts (or any edit) must not start the browser again ahead.
        return False
    memo_module = _memo_module()
    if memo_module is None:
        return False
    render, case, analysed = memo_module.render_memo_pdf, results.case, _ui.analysed

    def job(progress: Callable[[str], None]) -> bytes:
        progress("analysis")
        full = analysed(case)
        if full.fingerprint != key[0]:  # never print one case under another's name
            raise RuntimeError("the analysed case does not match the page's case")
        return bytes(render(full, charts=True, progress=progress, annex=annex))

    print_ahead.printer().submit(key, _session_token(), job)
    return True


def _memo_print_panel(results: Any, stem: str) -> None:
    """The memo's print buttons, the technical annex choice, and the download of the memo printed for this case."""
    ss = st.session_state
    memo_module = _memo_module()
    if memo_module is None or results is None:
        st.caption("The PDF memo appears here once the memo renderer is installed and the case is valid.")
        return
    if settings.current().chart_prestart:
        try:
            _chart_browser_started()
        except Exception:  # reported when the memo is printed, with the fix
            log.info("the chart browser did not start ahead of printing", exc_info=True)
    st.checkbox(
        "Technical annex",
        key="memo_annex",
        help="Add the model's workings for a validator or second reader: PD term structure, "
        "exposure, recovery, loss and capital, methods and sources, and every input listed. "
        "The committee memo without it has the decision page, the body, pricing, sensitivities "
        "and scenarios, cautions and the record.",
    )
    if st.button("Print the memo (PDF)", icon=":material/picture_as_pdf:", key="memo_print"):
        _print(memo_module, results, charts=True)
    if ss.get("memo_chart_problem"):
        st.error(
            f"The charts could not be drawn, so no memo was printed. {ss.memo_chart_problem} "
            "Here, you can also print the memo without charts: each chart's place then "
            "carries a note.",
            icon=":material/error:",
        )
        if st.button("Print the memo without charts", key="memo_print_plain"):
            _print(memo_module, results, charts=False)
    pdf = ss.get("memo_pdf")
    if pdf and pdf[0] == results.fingerprint and pdf[3] == bool(ss.get("memo_annex", False)):
        label = {
            (True, False): "Memo (PDF)",
            (False, False): "Memo without charts (PDF)",
            (True, True): "Memo with annex (PDF)",
            (False, True): "Memo with annex, without charts (PDF)",
        }[(pdf[2], pdf[3])]
        st.download_button(
            label,
            pdf[1],
            file_name=f"{stem}_memo.pdf",
            mime="application/pdf",
            icon=":material/download:",
            key="memo_download",
            on_click="ignore",  # the download needs no rerun of the page
        )
    elif pdf and pdf[0] == results.fingerprint:
        st.caption("The technical annex was switched since the memo was printed: print it again.")
    elif pdf:
        st.caption("The case changed since the memo was printed: print it again.")


results = _ui.header(
    "Memo and files",
    "Write the narrative as it should print; download the case file to archive or re-run it next year.",
)
ss = st.session_state
printing_ahead = False
if results is not None:  # the worker starts printing while the rest of the page is drawn
    try:
        printing_ahead = _print_ahead(results)
    except Exception:  # the click prints it then, and reports any failure
        log.warning("the memo could not be printed ahead", exc_info=True)

left, right = st.columns([2, 1])
with left:
    _ui.text_field("Request", "memo.request", area=True, height=80)
    _ui.text_field("Summary", "memo.summary", area=True, height=160)
    _ui.text_field("Recommendation", "memo.recommendation", area=True, height=100)
    _ui.text_field("Conditions", "memo.conditions", area=True, height=120)
    st.markdown(
        "**Covenants** (tested on the latest statement year; the memo prints headroom and the EBITDA fall to breach)"
    )
    _ui.grid(
        "covenants",
        grids.COVENANT_COLUMNS,
        name="covenant_grid",
        defaults={"tested": "annual"},
        complete=grids.complete_covenant,
    )
    _ui.show_problems("covenants")
    if results is not None and getattr(results, "covenants", None):
        for test in results.covenants:
            st.caption(covenant_sentence(test))
    _ui.text_field("Grade rationale (one line on the decision page)", "memo.rationale")
    st.markdown("**Key risks and mitigants** (the decision page prints the first three)")
    _ui.grid("memo.risks", grids.RISK_COLUMNS, name="risk_grid", defaults={"mitigant": ""})
    _ui.show_problems("memo.risks")
    _ui.text_field("Why this default point", "memo.default_point_reason", area=True, height=90)
    _ui.text_field(
        "Cross-checks reconciled (required when a cross-check's grade is more than two notches away)",
        "memo.cross_check_explanation",
        area=True,
        height=90,
    )
with right:
    _ui.text_field("Prepared by", "memo.prepared_by")
    _ui.text_field("Reviewed by", "memo.reviewed_by")
    _ui.text_field("Approved by", "memo.approved_by")
    _ui.select_field("Page size", "memo.page_size", ["A4", "Letter"])

    st.subheader("Files")
    stem = re.sub(r"[^A-Za-z0-9]+", "_", str(state.get_path(ss.raw, "borrower.name", "case"))).strip("_")
    stem = (stem or "case")[:60]
    if ss.problems:
        st.warning(
            "The case as typed has problems; the first download is the last valid case, the "
            "second keeps your edits as typed (it will show the same messages when opened)."
        )
        st.download_button(
            "Last valid case (YAML)",
            state.case_file_text(ss.valid, "yaml"),
            file_name=f"{stem}.yaml",
            mime="application/x-yaml",
        )
        st.download_button(
            "Case as typed (YAML)",
            state.case_file_text(ss.raw, "yaml"),
            file_name=f"{stem}_draft.yaml",
            mime="application/x-yaml",
        )
    else:
        st.download_button(
            "Case file (YAML)",
            state.case_file_text(ss.raw, "yaml"),
            file_name=f"{stem}.yaml",
            mime="application/x-yaml",
            icon=":material/download:",
        )
        st.download_button(
            "Case file (JSON)",
            state.case_file_text(ss.raw, "json"),
            file_name=f"{stem}.json",
            mime="application/json",
        )

    if results is not None:
        st.download_button(
            "Results (XLSX)",
            _results_workbook(results.case),
            file_name=f"{stem}_results.xlsx",
            mime="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
            icon=":material/table_view:",
            key="results_download",
            help="The inputs, the statements as read (with their unit), each facility's results, the "
            "totals, term structure, sensitivity, PD grid and scenarios: one sheet each, as "
            "`obligor-memo export` writes them.",
        )
    _memo_print_panel(results, stem)

# A print starts from the analysed case (sensitivity, PD grid, scenarios). The print ahead
# (above) analyses it on the worker; where none was started, the case is still analysed here,
# once the page is on screen, for the results workbook and a later click.
if results is not None and not printing_ahead:
    try:
        _ui.analysed(results.case)
    except Exception:  # the print reports it, with its message, when it is asked for
        log.info("the analysis ahead of printing failed", exc_info=True)
