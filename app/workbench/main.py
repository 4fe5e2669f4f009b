"""The workbench's Streamlit entry: session, sidebar and the pages in the order of the job.

Run through ``obligor-memo app`` (see app/workbench/serve.py). Each browser session gets its own
case, autosaved under the working folder; the case id sits in the URL so a refresh finds it again.
"""

from __future__ import annotations

import logging
from pathlib import Path

import streamlit as st  # noqa: E402
from obligor_memo.app.workbench import ui as _ui  # noqa: E402

log = logging.getLogger(__name__)

st.set_page_config(page_title="obligor-memo workbench", page_icon=":material/balance:", layout="wide")
css = Path(__file__).resolve().parent / "workbench.css"
if css.is_file():
    st.markdown(f"<style>{css.read_text(encoding='utf-8')}</style>", unsafe_allow_html=True)

try:
    _ui.ensure_session()
except Exception as exc:  # nothing but a plain message may reach the screen
    log.exception("the workbench session could not start")
    st.error(f"The workbench could not start this session ({type(exc).__name__}: {exc}).")
    st.stop()

ss = st.session_state
if st.query_params.get("case") != ss.case_id:  # page switches clear the query string
    st.query_params["case"] = ss.case_id
with st.sidebar:
    st.markdown("### obligor-memo")
    borrower = _ui.state.get_path(ss.raw, "borrower.name", "(no name)")
    st.markdown(f"**{borrower}**")
    _ui.key_figures(st)
    if ss.problems:
        st.warning(f"{len(ss.problems)} input problem(s): results use the last valid case.")
    st.button(
        "Undo the last change",
        on_click=_ui.undo,
        icon=":material/undo:",
        disabled=not ss.get("undo"),
        key="undo_button",
        help="Brings back the case as it was before the last edit, upload or reload (up to 30 steps).",
    )
    if ss.get("save_error"):
        st.error(ss.save_error)
    elif ss.get("conflict"):
        st.error("Not saved: another tab saved this case. See the message at the top of the page.")
    else:
        st.caption(
            f"Autosaved (revision {ss.get('revision', 0)}) to `{ss.get('saved_to', '')}`. Bookmark this "
            "page's address to come back to this case."
        )
    if ss.get("restored_at"):
        st.caption(f"Restored from the autosave of {ss.restored_at}.")

pages = [
    st.Page(_ui.PAGE_FILES[title], title=title, icon=icon, default=(i == 0))
    for i, (_, title, icon) in enumerate(_ui.PAGES)
]
page = st.navigation(pages)
try:
    page.run()
except st.errors.StreamlitAPIException:
    raise
except Exception as exc:  # a page bug: say so plainly, keep the case
    log.exception("page %s failed", getattr(page, "title", "?"))
    st.error(
        f"This page hit an internal error ({type(exc).__name__}: {exc}). Your case is saved; other pages keep working."
    )
