"""Step 3: the facilities, their CCFs (preset or the analyst's) and the EAD of each."""

from __future__ import annotations

import pandas as pd
import streamlit as st
from obligor_memo.app.present.formatting import money, pct
from obligor_memo.app.workbench import entry
from obligor_memo.app.workbench import ui as _ui

KINDS = {
    "term_loan": "Term loan",
    "revolver": "Revolving credit",
    "bond": "Bond held",
    "guarantee": "Guarantee",
    "letter_of_credit": "Letter of credit",
}
SENIORITIES = {
    "senior_secured": "Senior secured",
    "senior_unsecured": "Senior unsecured",
    "subordinated": "Subordinated",
}
STATUSES = {"new": "New", "renewal": "Renewal", "increase": "Increase", "unchanged": "Unchanged"}
FACILITY_COLUMNS = (
    _ui.Column("id", "Id", kind="text", required=True, max_chars=40),
    _ui.Column("kind", "Kind", kind="select", options=KINDS, required=True),
    _ui.Column("status", "Request", kind="select", options=STATUSES),
    _ui.Column("committed", "Committed", unit=entry.MONEY, required=True),
    _ui.Column("drawn", "Drawn", unit=entry.MONEY, required=True),
    _ui.Column(
        "ccf",
        "CCF (%)",
        unit=entry.PERCENT,
        empty_text="preset",
        help="A percentage such as 75; 'preset' (or empty): the preset of the facility's kind.",
    ),
    _ui.Column("cancellable", "Cancellable", kind="check", default=False),
    _ui.Column("seniority", "Seniority", kind="select", options=SENIORITIES, required=True),
    _ui.Column("maturity_years", "Maturity (years)", unit=entry.YEARS, required=True),
    _ui.Column("description", "Description", kind="text", max_chars=300, default=""),
)

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

st.caption(
    "One row per facility; amounts as 60,000,000 or 60m, CCF in % (empty: the preset of the kind). "
    "Recovery and collateral are set on the Recovery page."
)
_ui.grid(
    "facilities",
    FACILITY_COLUMNS,
    name="fac_grid",
    defaults={"cancellable": False, "description": "", "status": "new"},
)
_ui.show_problems("facilities")

if results is None:
    st.stop()
st.subheader(f"Exposure at default ({cur})")
st.dataframe(
    pd.DataFrame(
        [
            {
                "Facility": f.id,
                "Kind": KINDS.get(f.kind, f.kind),
                "Drawn": money(f.drawn),
                "Undrawn": money(f.undrawn),
                "CCF": pct(f.ccf, 0),
                "EAD": money(f.ead),
                "CCF source": f.ccf_source,
            }
            for f in results.facilities
        ]
        + [
            {
                "Facility": "Total",
                "Kind": "",
                "Drawn": "",
                "Undrawn": "",
                "CCF": "",
                "EAD": money(results.total.ead),
                "CCF source": "",
            }
        ]
    ),
    hide_index=True,
    column_config={"CCF source": st.column_config.TextColumn("CCF source", width="large")},
)
_ui.chart(st, _ui.figure("exposure_figure", results), key="exposure")
for caution in results.cautions:
    if caution.code.startswith("exposure"):
        st.caption(f":material/info: {caution.message}")
