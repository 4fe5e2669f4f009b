"""Step 7: the memo's narrative, sign-off, and the files to keep (case file, PDF memo)."""

from __future__ import annotations

import importlib
import re

import streamlit as st

from app import state
from app.pages import _ui

results = _ui.header("Memo and files",
                     "Write the narrative as it should print; download the case file to archive "
                     "or re-run it next year.")
ss = st.session_state

left, right = st.columns([2, 1])
with left:
    _ui.text_field("Request", "memo.request", area=True, height=80)
    _ui.text_field("Summary", "memo.summary", area=True, height=160)
    _ui.text_field("Recommendation", "memo.recommendation", area=True, height=100)
    _ui.text_field("Conditions", "memo.conditions", area=True, height=120)
with right:
    _ui.text_field("Prepared by", "memo.prepared_by")
    _ui.text_field("Reviewed by", "memo.reviewed_by")
    _ui.text_field("Approved by", "memo.approved_by")
    _ui.select_field("Page size", "memo.page_size", ["A4", "Letter"])

    st.subheader("Files")
    stem = re.sub(r"[^A-Za-z0-9]+", "_", str(state.get_path(ss.raw, "borrower.name", "case"))).strip("_")
    stem = (stem or "case")[:60]
    if ss.problems:
        st.warning("The case as typed has problems; the first download is the last valid case, the "
                   "second keeps your edits as typed (it will show the same messages when opened).")
        st.download_button("Download the last valid case (YAML)", state.case_file_text(ss.valid, "yaml"),
                           file_name=f"{stem}.yaml", mime="application/x-yaml")
        st.download_button("Download the case as typed (YAML)", state.case_file_text(ss.raw, "yaml"),
                           file_name=f"{stem}_draft.yaml", mime="application/x-yaml")
    else:
        st.download_button("Download the case file (YAML)", state.case_file_text(ss.raw, "yaml"),
                           file_name=f"{stem}.yaml", mime="application/x-yaml", icon=":material/download:")
        st.download_button("Download the case file (JSON)", state.case_file_text(ss.raw, "json"),
                           file_name=f"{stem}.json", mime="application/json")

    try:
        render = getattr(importlib.import_module("app.memo"), "render_memo_pdf", None)
    except Exception:  # the memo module is optional until it lands
        render = None
    if render is None or results is None:
        st.caption("The PDF memo appears here once the memo renderer is installed and the case is valid.")
    else:
        if st.button("Prepare the PDF memo", icon=":material/picture_as_pdf:"):
            try:
                with st.spinner("Rendering the memo..."):
                    ss.memo_pdf = (results.fingerprint, render(results))
            except Exception as exc:  # the renderer's failure must not reach the screen raw
                st.error(f"The memo could not be rendered ({type(exc).__name__}: {exc}).")
        pdf = ss.get("memo_pdf")
        if pdf and pdf[0] == results.fingerprint:
            st.download_button("Download the PDF memo", pdf[1], file_name=f"{stem}_memo.pdf",
                               mime="application/pdf", icon=":material/download:")
        elif pdf:
            st.caption("The case changed since the PDF was prepared: prepare it again.")
