"""The "Since the last review" view: start the new case from the last review, see what changed.

Open last year's memo PDF or case file as the start of the new case, and see what changed since
then and why (grade migration, figures side by side, waterfalls of the EL and PD change by cause,
the changed inputs). Shown inside an existing page by :func:`section`; every number comes from
engine.compare, formatted by app.present.
"""

from __future__ import annotations

import datetime

import streamlit as st
from obligor_memo.app.charts.review import waterfall_figure
from obligor_memo.app.present import compare_report
from obligor_memo.app.workbench import ui
from obligor_memo.engine.errors import CaseError


def _open_last_review(key: str) -> None:
    """Start the new case from the uploaded last review (the uploader's callback); a bad file leaves a message."""
    from obligor_memo.app.memo.reading import read_last_review, roll_forward_review
    from obligor_memo.app.memo.record import MemoRecordError

    upload = st.session_state.get(key)
    if upload is None:
        return
    approved = st.session_state.get("review_approved_on")
    try:
        last = read_last_review(upload.getvalue(), upload.name)
        raw = roll_forward_review(last, approved_on=approved.isoformat() if approved else None)
    except (CaseError, MemoRecordError) as exc:
        st.session_state.review_error = exc.paragraph() if isinstance(exc, CaseError) else str(exc)
        return
    st.session_state.review_error = None
    ui.replace_case(
        raw,
        f"Started the new review from {upload.name}: add the year's statements, "
        "then update the facilities and assumptions.",
    )


def section(results) -> None:
    """The view, placed in a page with one call.

    Parameters
    ----------
    results : Any
        The results in force (what ``ui.header`` returns), or None while no case is valid: the
        uploader is shown, the comparison is not.
    """
    ss = st.session_state
    with st.expander("Since the last review", expanded=bool(results is not None and results.case.review)):
        c1, c2 = st.columns([2, 1])
        c2.date_input(
            "Last review approved on",
            value=None,
            key="review_approved_on",
            max_value=datetime.date.today(),
            help="The committee's approval date; a memo PDF proposes its print date.",
        )
        c1.file_uploader(
            "Open last review (memo PDF or case file) to start the new case",
            type=["pdf", "yaml", "yml", "json"],
            key=f"review_upload{ss.gen}",
            on_change=_open_last_review,
            args=(f"review_upload{ss.gen}",),
            help="Replaces the case in this session with the last review's inputs and records it as review.previous.",
        )
        if ss.get("review_error"):
            st.error(ss.review_error + " The case in the workbench is unchanged.", icon=":material/error:")
        if results is None:
            return
        view = compare_report.review_view(results)
        if view is None:
            st.caption("This case records no previous review.")
            return
        if not view["available"]:
            st.warning(view["note"])
            return
        comparison = compare_report.review_comparison(results)
        if comparison is None:  # the case records a previous review, so this does not happen
            return
        g = comparison.grade
        st.markdown(
            f"**Grade migration:** {g['old'] or 'n/a'} → {g['new'] or 'n/a'} "
            f"(last review approved {view['approved_on']})"
        )
        st.write(view["headline"])
        st.dataframe(
            [
                {"figure": r["label"], "last review": r["old"], "now": r["new"], "change": r["change"]}
                for r in view["figures"]
            ],
            hide_index=True,
        )
        cur = results.case.borrower.currency
        left, right = st.columns(2)
        for where, name in ((left, "expected_loss"), (right, "pd")):
            if comparison.change.get(name) is not None:
                ui.chart(where, waterfall_figure(comparison, name, cur), key=f"review_{name}")
        st.markdown("**Changed inputs**")
        st.dataframe(
            [
                {
                    "block": c["label"],
                    "inputs changed": ", ".join(c["changes"]) or "none",
                    "PD": c["pd"],
                    "EL": c["expected_loss"],
                }
                for c in view["causes"]
            ],
            hide_index=True,
        )
        for note in view["notes"]:
            st.caption(note)
