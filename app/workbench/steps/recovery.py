"""Step 4: recovery and LGD per facility: the beta law, seniority, collateral, downturn."""

from __future__ import annotations

import streamlit as st
from obligor_memo.app.present.formatting import money, num, pct
from obligor_memo.app.workbench import entry, state
from obligor_memo.app.workbench import ui as _ui

results = _ui.header(
    "Recovery and LGD",
    "Recovery rate as a beta law on [0, upper] fitted to its mean and std; "
    "collateral after haircut recovers in full. LGD = 1 - mean recovery.",
)
ss = st.session_state
cur = _ui.currency()
facilities_raw = [f for f in (ss.raw.get("facilities") or []) if isinstance(f, dict)]
ids = [str(f.get("id")) for f in facilities_raw]
if not ids:
    st.error("The case has no facilities: add one on the Facilities page.")
    st.stop()
chosen = st.selectbox("Facility", ids, key="recovery_facility")
index = ids.index(chosen)
base = f"facilities[{index}]"
fac_raw = facilities_raw[index]
fac_res = next((f for f in results.facilities if f.id == chosen), None) if results else None


def _toggle_recovery(key: str) -> None:
    """Give the facility its own recovery assumption, or drop it, as the toggle says (its callback)."""
    if st.session_state[key]:
        start = (
            {"mean": fac_res.recovery_mean, "std": fac_res.recovery_std, "upper": fac_res.recovery_upper}
            if fac_res
            else {"mean": 0.5, "std": 0.2, "upper": 1.0}
        )
        _ui.commit(state.set_path(st.session_state.raw, f"{base}.recovery", start))
    else:
        _ui.commit(state.set_path(st.session_state.raw, f"{base}.recovery", None))


def _toggle_collateral(key: str) -> None:
    """Give the facility an empty collateral block, or drop it, as the toggle says (its callback)."""
    value = {"value": 0.0, "haircut": 0.0, "description": ""} if st.session_state[key] else None
    _ui.commit(state.set_path(st.session_state.raw, f"{base}.collateral", value))


left, right = st.columns([1, 2.2])
with left:
    _ui.select_field(
        "Seniority",
        f"{base}.seniority",
        ["senior_secured", "senior_unsecured", "subordinated"],
        labels={
            "senior_secured": "Senior secured",
            "senior_unsecured": "Senior unsecured",
            "subordinated": "Subordinated",
        },
    )
    key = f"rec_on{ss.gen}:{index}"
    st.toggle(
        "Own recovery assumption (off: the supervisory LGD of the seniority)",
        value=fac_raw.get("recovery") is not None,
        key=key,
        on_change=_toggle_recovery,
        args=(key,),
    )
    if fac_raw.get("recovery") is not None:
        # One under the other: the left column is too narrow for three fields side by side.
        c1 = c2 = c3 = below = st.container()
        _ui.number_field("Recovery mean (%)", f"{base}.recovery.mean", where=c1, unit=entry.PERCENT, messages=below)
        _ui.number_field("Recovery std (%)", f"{base}.recovery.std", where=c2, unit=entry.PERCENT, messages=below)
        _ui.number_field("Upper bound (%)", f"{base}.recovery.upper", where=c3, unit=entry.PERCENT, messages=below)
    key = f"coll_on{ss.gen}:{index}"
    st.toggle(
        "Collateral", value=fac_raw.get("collateral") is not None, key=key, on_change=_toggle_collateral, args=(key,)
    )
    if fac_raw.get("collateral") is not None:
        c1, c2 = st.columns(2)
        below = st.container()
        _ui.number_field(
            f"Collateral value ({cur})", f"{base}.collateral.value", where=c1, unit=entry.MONEY, messages=below
        )
        _ui.number_field("Haircut (%)", f"{base}.collateral.haircut", where=c2, unit=entry.PERCENT, messages=below)
        _ui.text_field("Collateral description", f"{base}.collateral.description")
    st.subheader("For all facilities")
    _ui.select_field(
        "Supervisory LGD table",
        "lgd.standard",
        ["basel_iii", "basel_ii"],
        labels={"basel_iii": "Basel III final (2017)", "basel_ii": "Basel II (2006)"},
    )
    _ui.number_field("Default recovery std (%)", "lgd.default_recovery_std", unit=entry.PERCENT)
    _ui.select_field(
        "Downturn LGD for capital",
        "lgd.downturn.method",
        ["none", "quantile", "add_on"],
        labels={"none": "None (mean LGD)", "quantile": "Recovery quantile", "add_on": "Add-on to the mean LGD"},
    )
    method = state.get_path(ss.raw, "lgd.downturn.method", "none")
    if method == "quantile":
        _ui.number_field("Downturn quantile (%)", "lgd.downturn.quantile", unit=entry.PERCENT)
    elif method == "add_on":
        _ui.number_field("Add-on to the LGD (percentage points)", "lgd.downturn.add_on", unit=entry.PERCENT)

with right:
    if fac_res is None:
        st.error("No results for this facility yet: fix the messages beside its fields.")
        st.stop()
    _ui.chart(st, _ui.figure("recovery_figure", results, chosen), key="recovery")
    _ui.metric_rows(
        st,
        [
            ("LGD", pct(fac_res.lgd, 1), None),
            ("LGD std", pct(fac_res.lgd_std, 1), None),
            ("Downturn LGD (capital)", pct(fac_res.downturn_lgd, 1), None),
            ("Collateral cover", pct(fac_res.collateral_cover, 1), None),
        ],
        per_row=4,
    )
    law = (
        "point mass at the mean"
        if fac_res.alpha is None
        else f"beta(alpha {num(fac_res.alpha)}, beta {num(fac_res.beta)}) on [0, {num(fac_res.recovery_upper)}]"
    )
    st.caption(
        f"Unsecured part: mean {pct(fac_res.recovery_mean, 1)}, std {pct(fac_res.recovery_std, 1)}, "
        f"{law}; source: {fac_res.recovery_source}. Collateral after haircut "
        f"{money(fac_res.collateral_value, cur)}."
    )
