"""Step 1: the borrower and its statements: open the sample or a case file, upload, edit."""

from __future__ import annotations

import streamlit as st
from obligor_memo.app.present.credit import credit_rows, latest_years
from obligor_memo.app.workbench import grids, state
from obligor_memo.app.workbench import mapping as _mapping
from obligor_memo.app.workbench import review as _review
from obligor_memo.app.workbench import ui as _ui
from obligor_memo.engine.case import StatementRow
from obligor_memo.engine.credit_metrics import metric_trends
from obligor_memo.engine.errors import CaseError

COLUMNS = list(StatementRow.model_fields)
REQUIRED = ("year", "total_assets", "short_term_liabilities", "long_term_liabilities")


def _open_sample() -> None:
    """Replace the case with the invented sample borrower (the button's callback)."""
    _ui.replace_case(state.sample_case_dict(), "Opened the sample borrower.")


def _read_upload(key: str, reader):
    """The uploaded file read by ``reader``, and its name.

    (None, None) when nothing is uploaded, or when ``reader`` refuses the file: the message is then
    kept for the page.
    """
    upload = st.session_state.get(key)
    if upload is None:
        return None, None
    try:
        data = reader(upload.getvalue(), upload.name)
    except CaseError as exc:
        st.session_state.upload_error = exc.paragraph()
        return None, None
    st.session_state.upload_error = None
    return data, upload.name


def _open_case_file(key: str) -> None:
    """Replace the case with the uploaded case file (the uploader's callback); a bad file leaves a message."""
    raw, name = _read_upload(key, state.case_dict_from_upload)
    if raw is not None:
        _ui.replace_case(raw, f"Opened {name}.")


def _upload_statements(key: str) -> None:
    """Read the uploaded statements table into the mapping preview (the uploader's callback)."""
    upload = st.session_state.get(key)
    if upload is not None:  # read into the mapping preview; the case changes on "Accept"
        _mapping.start(upload.getvalue(), upload.name)


_results = _ui.header("Borrower and statements", "Open a case, then check the statements: every later step reads them.")
ss = st.session_state

left, right = st.columns([1, 1])
with left:
    st.subheader("Open")
    st.button(
        "Open the sample borrower",
        on_click=_open_sample,
        icon=":material/restart_alt:",
        help="Replaces the case in this session with the invented sample borrower.",
    )
    st.file_uploader(
        "Open a case file (YAML or JSON)",
        type=["yaml", "yml", "json"],
        help="A case file saved by this workbench or written by hand; at most 2 MB.",
        key=f"case_upload{ss.gen}",
        on_change=_open_case_file,
        args=(f"case_upload{ss.gen}",),
    )
    st.file_uploader(
        "Replace the statements from a table (CSV or XLSX)",
        type=["csv", "xlsx"],
        key=f"stmt_upload{ss.gen}",
        on_change=_upload_statements,
        args=(f"stmt_upload{ss.gen}",),
        help="An analyst's table: years across the columns or down the rows, title rows above "
        "the header, the usual wording (Total assets, Current liabilities, Revenue...), amounts in "
        "units, thousands or millions. You check what was read before it replaces the statements. "
        "At most 200 years and 2 MB; formulas are not evaluated: paste values.",
    )
    if ss.get("upload_error"):
        st.error(ss.upload_error + " The case in the workbench is unchanged.", icon=":material/error:")
with right:
    st.subheader("Borrower")
    _ui.text_field("Name", "borrower.name")
    c1, c2 = st.columns(2)
    _ui.text_field("Currency (ISO 4217)", "borrower.currency", where=c1)
    _ui.text_field("Country", "borrower.country", where=c2)
    _ui.text_field("Sector", "borrower.sector")
_mapping.section()  # the preview of a statements upload, until accepted or cancelled

unit = state.get_path(ss.raw, "statements_source.unit", "units") or "units"
st.subheader(f"Statements (amounts in {_ui.currency()}{'' if unit == 'units' else ' ' + unit})")
st.caption(
    "Edit in place; add a row for a new year (amounts as 90,000,000 or 90m). Total assets and the "
    "two liability lines are required; the other lines feed the Z-score and the credit analysis. "
    "A change you regret: Undo the last change, in the sidebar."
)
_ui.grid("statements", grids.STATEMENT_COLUMNS, name="stmt_grid")
_ui.show_problems("statements")
years = latest_years(_results) if _results is not None else ()
if years:
    st.subheader(f"Credit metrics [{_ui.currency()} m; multiples in times]")
    rows = credit_rows(years, metric_trends(years))
    st.dataframe(
        rows,
        hide_index=True,
        width="stretch",
        height=35 * (len(rows) + 1) + 3,  # every year and the trend row, without a scroll bar
        column_config={h: st.column_config.TextColumn(h, alignment="right") for h in list(rows[0])[1:]},
    )
    st.caption(
        "As the memo prints them: net debt = total debt - cash; free cash flow = operating cash flow - "
        f"capital expenditure; the latest {len(years)} years, then the trend (growth a year for amounts, "
        "the change for the margin and the multiples)."
    )
_review.section(_results)
