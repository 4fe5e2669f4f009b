"""Step 3: the facilities, their CCFs (preset or the analyst's) and the EAD of each."""

from __future__ import annotations

import pandas as pd
import streamlit as st
from obligor_memo.app import charts
from obligor_memo.app.present.formatting import money, pct
from obligor_memo.app.workbench import state
from obligor_memo.app.workbench import ui as _ui

KINDS = ["term_loan", "revolver", "bond", "guarantee", "letter_of_credit"]
SENIORITIES = ["senior_secured", "senior_unsecured", "subordinated"]
COLUMNS = ["id", "kind", "committed", "drawn", "ccf", "cancellable", "seniority", "maturity_years", "description"]

results = _ui.header(
    "Facilities and exposure", "EAD = drawn + CCF x undrawn. Leave CCF empty for the preset of the kind."
)
ss = st.session_state
cur = _ui.currency()

_ui.select_field(
    "CCF presets from",
    "exposure.ccf_standard",
    ["basel_iii", "basel_ii"],
    labels={
        "basel_iii": "Basel III final standardised approach (2017)",
        "basel_ii": "Basel II standardised approach (2006)",
    },
)

base_key = f"fac_base{ss.gen}"
facilities_raw = [f for f in (ss.raw.get("facilities") or []) if isinstance(f, dict)]
# The grid's widget state is dropped when the page unmounts; rebuild its base from the case
# then, so edits already committed to the case are shown (and never reverted by a stale base).
if base_key not in ss or f"fac_editor{ss.gen}" not in ss:
    ss[base_key] = pd.DataFrame([{c: f.get(c) for c in COLUMNS} for f in facilities_raw], columns=COLUMNS)
money_col = {"format": "localized", "step": 1000.0, "min_value": None}
edited = st.data_editor(
    ss[base_key],
    key=f"fac_editor{ss.gen}",
    num_rows="dynamic",
    hide_index=True,
    column_config={
        "id": st.column_config.TextColumn("id", required=True, max_chars=40),
        "kind": st.column_config.SelectboxColumn("kind", options=KINDS, required=True),
        "committed": st.column_config.NumberColumn(f"committed [{cur}]", required=True, **money_col),
        "drawn": st.column_config.NumberColumn(f"drawn [{cur}]", required=True, **money_col),
        "ccf": st.column_config.NumberColumn("CCF [fraction] (empty = preset)", format="%.2f", step=0.05),
        "cancellable": st.column_config.CheckboxColumn("cancellable"),
        "seniority": st.column_config.SelectboxColumn("seniority", options=SENIORITIES, required=True),
        "maturity_years": st.column_config.NumberColumn("maturity [years]", format="%.2f", step=0.5, required=True),
        "description": st.column_config.TextColumn("description"),
    },
)
by_id = {f.get("id"): f for f in facilities_raw}
records = []
for row in state.plain(edited.to_dict("records")):
    merged = dict(by_id.get(row.get("id"), {}))
    merged.update(row)
    merged["cancellable"] = bool(merged.get("cancellable"))
    merged["description"] = merged.get("description") or ""
    records.append(merged)
if records != facilities_raw:
    _ui.commit(state.set_path(ss.raw, "facilities", records))
    st.rerun()
for problem in state.problems_at(ss.problems, "facilities"):
    parts = state.split_path(problem.field)
    where = problem.field
    if len(parts) >= 3 and isinstance(parts[1], int) and parts[1] < len(records):
        where = f"row {parts[1] + 1} ({records[parts[1]].get('id')}), {'.'.join(map(str, parts[2:]))}"
    st.error(
        f"Facilities, {where}: got {_ui.show_value(problem.value)}; allowed: {problem.allowed}.",
        icon=":material/error:",
    )

if results is None:
    st.stop()
st.subheader(f"Exposure at default [{cur}]")
st.dataframe(
    pd.DataFrame(
        [
            {
                "facility": f.id,
                "kind": f.kind.replace("_", " "),
                "drawn": money(f.drawn),
                "undrawn": money(f.undrawn),
                "CCF": pct(f.ccf, 0),
                "CCF source": f.ccf_source,
                "EAD": money(f.ead),
            }
            for f in results.facilities
        ]
        + [
            {
                "facility": "Total",
                "kind": "",
                "drawn": "",
                "undrawn": "",
                "CCF": "",
                "CCF source": "",
                "EAD": money(results.total.ead),
            }
        ]
    ),
    hide_index=True,
)
_ui.chart(st, charts.exposure_figure(results), key="exposure")
for caution in results.cautions:
    if caution.code.startswith("exposure"):
        st.caption(f":material/info: {caution.message}")
