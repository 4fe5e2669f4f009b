"""Step 3: the facilities, their CCFs (preset or the analyst's) and the EAD of each."""

from __future__ import annotations

import pandas as pd
import streamlit as st
from obligor_memo.app.present.formatting import money, pct
from obligor_memo.app.workbench import grids
from obligor_memo.app.workbench import ui as _ui

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
    grids.FACILITY_COLUMNS,
    name="fac_grid",
    defaults=grids.FACILITY_DEFAULTS,
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
                "Kind": grids.KINDS.get(f.kind, f.kind),
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
