"""Step 5: expected and unexpected loss, risk weights and capital, the minimum price."""

from __future__ import annotations

import pandas as pd
import streamlit as st
from obligor_memo.app.present.formatting import millions, money, pct, pd_pct
from obligor_memo.app.workbench import entry, state
from obligor_memo.app.workbench import ui as _ui

results = _ui.header(
    "Loss, capital and pricing",
    "EL = EAD x PD x LGD; risk weights from the Basel IRB corporate formula; "
    "capital, the IRB EL and RAROC on the one-year PD; economic capital by the method "
    "in force (one-factor, or standalone loss quantile - EL); RAROC on one-year EL and "
    "capital against the hurdle.",
)
ss = st.session_state
cur = _ui.currency()
if results is None:
    st.stop()

t = results.total
rows = [
    {
        "Facility": f.id,
        "EAD": money(f.ead),
        "PD": pd_pct(f.capital_pd),
        "LGD": pct(f.lgd, 1),
        "Downturn LGD": pct(f.downturn_lgd, 1),
        "EL": money(f.expected_loss),
        "UL": money(f.unexpected_loss),
        "M (years)": f"{f.capital_maturity:g}",
        "RW": pct(f.risk_weight, 1),
        "RWA": money(f.rwa),
        "Capital (8 % of RWA)": money(f.regulatory_capital),
    }
    for f in results.facilities
]
rows.append(
    {
        "Facility": "Total",
        "EAD": money(t.ead),
        "PD": pd_pct(results.pd.pd),
        "LGD": "",
        "Downturn LGD": "",
        "EL": money(t.expected_loss),
        "UL": money(t.unexpected_loss),
        "M (years)": "",
        "RW": "",
        "RWA": money(t.rwa),
        "Capital (8 % of RWA)": money(t.regulatory_capital),
    }
)
st.dataframe(pd.DataFrame(rows), hide_index=True)
st.caption(
    f"Amounts in {cur}. PD column: the PD used in the risk weight (after the floor). The total UL joins the "
    f"facilities' recoveries {state.get_path(ss.valid, 'capital.recovery_join', 'comonotonic')}."
)

m = st.columns(5)
m[0].metric("Expected loss", millions(t.expected_loss, cur), help=f"EL rate {pct(t.el_rate, 3)} of EAD")
m[1].metric("Unexpected loss", millions(t.unexpected_loss, cur))
m[2].metric(f"VaR {pct(results.loss_distribution.confidence, 1)}", millions(t.value_at_risk, cur))
m[3].metric("Economic capital", millions(t.economic_capital, cur), help=t.economic_basis)
m[4].metric("RWA", millions(t.rwa, cur))

left, right = st.columns([2, 1])
with left:
    _ui.chart(st, _ui.figure("loss_distribution_figure", results), key="loss_distribution")
with right:
    st.subheader("Capital settings")
    _ui.number_field("Confidence (%)", "capital.confidence", unit=entry.PERCENT, help="For example 99.9 (for 99.9 %).")
    _ui.select_field(
        "Recoveries of the facilities",
        "capital.recovery_join",
        ["comonotonic", "independent"],
        labels={"comonotonic": "Move together (conservative)", "independent": "Independent"},
    )
    _ui.number_field("PD floor (%)", "capital.pd_floor", unit=entry.PERCENT, help="For example 0.05 (for 0.05 %).")
    _ui.toggle_field("Apply the 1.06 scaling factor", "capital.scaling_factor")
    _ui.select_field(
        "Economic capital",
        "capital.economic_method",
        ["single_factor", "standalone"],
        labels={"single_factor": "One-factor (smooth in PD)", "standalone": "Standalone (this name alone)"},
    )
    st.caption(
        f"Standalone figure {millions(t.economic_capital_standalone, cur)}; one-factor figure "
        f"{millions(t.economic_capital_single_factor, cur)}."
    )
for caution in results.cautions:
    if caution.code.startswith("capital"):
        st.caption(f":material/info: {caution.message}")

st.divider()
st.subheader("Pricing")


def _add_pricing() -> None:
    """Add a pricing proposal to the case, a proposed spread of 2 % a year (the button's callback)."""
    _ui.commit(state.set_path(st.session_state.raw, "pricing", {"proposed_spread": 0.02}))


if ss.raw.get("pricing") is None:
    st.button("Add a pricing proposal", on_click=_add_pricing)
    st.stop()
c = st.columns(4)
below = st.container()
_ui.number_field(
    "Proposed spread (% a year)", "pricing.proposed_spread", where=c[0], unit=entry.PERCENT, messages=below
)
_ui.number_field("Fee rate (% a year)", "pricing.fee_rate", where=c[1], unit=entry.PERCENT, messages=below)
_ui.number_field("Hurdle rate (% a year)", "pricing.hurdle_rate", where=c[2], unit=entry.PERCENT, messages=below)
_ui.select_field(
    "Capital basis",
    "pricing.capital_basis",
    ["regulatory", "economic"],
    where=c[3],
    labels={"regulatory": "Regulatory capital", "economic": "Economic capital"},
)
c = st.columns(4)
below = st.container()
_ui.number_field("Base rate (% a year)", "pricing.base_rate", where=c[0], unit=entry.PERCENT, messages=below)
_ui.number_field("Funding spread (% a year)", "pricing.funding_spread", where=c[1], unit=entry.PERCENT, messages=below)
_ui.number_field(
    "Operating cost (% a year)", "pricing.operating_cost_rate", where=c[2], unit=entry.PERCENT, messages=below
)
_ui.number_field(
    "Return on capital held (% a year)", "pricing.capital_return_rate", where=c[3], unit=entry.PERCENT, messages=below
)
p = results.pricing
if p is None:
    for caution in results.cautions:
        if caution.code.startswith("pricing"):
            st.warning(caution.message)
else:
    priced = st.columns(4)
    priced[0].metric("RAROC", pct(p.raroc, 1), help=f"Hurdle {pct(p.hurdle_rate, 1)}")
    priced[1].metric("Minimum spread", pct(p.minimum_spread, 3))
    priced[2].metric("Proposed spread", pct(p.proposed_spread, 3))
    priced[3].metric("Capital charged", millions(p.capital, cur), help=p.capital_basis_label)
    verdict = (
        f"The proposal meets the hurdle: RAROC {pct(p.raroc, 1)} against {pct(p.hurdle_rate, 1)}; "
        f"the spread could fall to {pct(p.minimum_spread, 3)}."
        if p.meets_hurdle
        else f"The proposal falls short of the hurdle: RAROC {pct(p.raroc, 1)} against "
        f"{pct(p.hurdle_rate, 1)}; the spread must be at least {pct(p.minimum_spread, 3)}."
    )
    (st.success if p.meets_hurdle else st.error)(verdict)
