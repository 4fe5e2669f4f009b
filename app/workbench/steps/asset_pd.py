"""Step 2: the asset trend, the default point and the PD (with the market and Z-score checks)."""

from __future__ import annotations

import streamlit as st
from obligor_memo.app.present.formatting import millions, num, pct, pd_pct, years
from obligor_memo.app.workbench import entry
from obligor_memo.app.workbench import ui as _ui

results = _ui.header(
    "Asset trend and PD", "Judge the trend, set and defend the default point, read the PD and its grade."
)
ss = st.session_state
cur = _ui.currency()
n_years = len(ss.raw.get("statements") or [])

controls, chart = st.columns([1, 2.2])
with controls:
    st.subheader("Trend window")
    _ui.number_field(
        "Window (years; empty = all years)",
        "pd.window_years",
        unit=entry.INTEGER,
        optional=True,
        placeholder=f"all {n_years} years",
        help="Fit over the latest N years only.",
    )
    st.subheader("Estimates and overrides")
    trend = results.trend if results else None
    _ui.number_field(
        "Asset growth override (% a year)",
        "pd.asset_growth",
        unit=entry.PERCENT,
        optional=True,
        placeholder=f"estimated: {pct(trend.growth_estimate) if trend else 'n/a'}",
        help="Empty: the slope of the log-linear fit. A number replaces it.",
    )
    _ui.number_field(
        "Asset volatility override (% a year)",
        "pd.asset_volatility",
        unit=entry.PERCENT,
        optional=True,
        placeholder=f"estimated: {pct(trend.volatility_estimate) if trend else 'n/a'}",
        help="Empty: the sample std of annual log changes of total assets.",
    )
    st.subheader("Default point")
    c1, c2 = st.columns(2)
    below = st.container()
    _ui.number_field(
        "Short-term share (%)", "pd.default_point.short_term_share", where=c1, unit=entry.PERCENT, messages=below
    )
    _ui.number_field(
        "Long-term share (%)", "pd.default_point.long_term_share", where=c2, unit=entry.PERCENT, messages=below
    )
    _ui.number_field("Horizon (years)", "pd.horizon_years", unit=entry.YEARS)
    methods = ["balance_sheet", "market"] if ss.raw.get("market") else ["balance_sheet"]
    _ui.select_field(
        "PD method",
        "pd.method",
        methods,
        labels={"balance_sheet": "Balance sheet (asset trend)", "market": "Market (equity value and volatility)"},
    )
    # A section holding an error stays open.
    with st.expander("Analyst's PD override", expanded=bool(_ui.state.problems_at(ss.problems, "pd.override"))):
        _ui.number_field(
            "PD override (%; empty = the model's)",
            "pd.override",
            unit=entry.PERCENT,
            optional=True,
            placeholder="not set: the model's PD",
        )
        _ui.text_field(
            "Reason (required with an override; printed in the memo)", "pd.override_reason", area=True, height=80
        )

with chart:
    if results is None:
        st.error("No valid case yet: fix the messages on the Borrower page.")
        st.stop()
    _ui.chart(st, _ui.figure("asset_trend_figure", results), key="asset_trend")
    p = results.pd
    shown = [
        ("Distance to default", num(p.distance_to_default, 2), None),
        ("PD in force", pd_pct(p.pd), "The override where one is set, else the model's."),
        ("Grade", p.grade or "n/a", None),
        ("Default point", millions(p.default_point, cur), None),
        ("Asset value", millions(p.asset_value, cur), None),
    ]
    if trend is not None:
        shown += [
            ("Growth used" + (" (override)" if trend.growth_overridden else ""), pct(trend.growth_used), None),
            (
                "Volatility used" + (" (override)" if trend.volatility_overridden else ""),
                pct(trend.volatility_used),
                None,
            ),
            ("Expected asset return", pct(trend.expected_return), None),
            ("Window", years(trend.window_years), None),
        ]
    _ui.metric_rows(st, shown, per_row=3)
    if p.overridden:
        st.warning(f"Model PD {pd_pct(p.model_pd)} replaced by the analyst's {pd_pct(p.pd)}: {p.override_reason}")
    for caution in results.cautions:
        if caution.code.startswith(("trend", "pd", "statements", "market", "grade")):
            st.caption(f":material/info: {caution.message}")

st.divider()
left, right = st.columns([1.3, 1])
with left:
    _ui.chart(st, _ui.figure("term_structure_figure", results), key="term_structure")
with right:
    _ui.chart(st, _ui.figure("liabilities_figure", results), key="liabilities")

market = getattr(results, "market", None)
if market is not None:
    st.subheader("Market-implied PD")
    st.caption(
        "Merton (1974): asset value and volatility solved from the equity value and its "
        "volatility; cross-checked by the naive distance to default of Bharath and Shumway (2008)."
    )
    merton = market.merton
    _ui.metric_rows(
        st,
        [
            ("Asset value (Merton)", millions(merton.asset_value, cur) if merton else "n/a", None),
            ("Asset volatility (Merton)", pct(merton.asset_volatility) if merton else "n/a", None),
            ("Distance to default (Merton)", num(merton.distance_to_default, 2) if merton else "n/a", None),
            ("PD (Merton)", pd_pct(merton.pd) if merton else "n/a", None),
            (
                "PD (naive cross-check)",
                pd_pct(float(market.naive.pd)),
                f"Naive DD {num(float(market.naive.distance_to_default), 2)}; drift from "
                f"{market.naive.drift_source.replace('_', ' ')}",
            ),
        ],
        per_row=5,
    )
    if market.message:
        st.warning(market.message)

zscores = getattr(results, "zscores", None)
if zscores:
    st.subheader("Z-score cross-check (latest year)")
    st.dataframe(
        [
            {
                "variant": z.variant,
                "score": num(z.score, 2) if z.score is not None else "n/a",
                "zone": z.zone or "n/a",
                "missing columns": ", ".join(z.missing) if z.missing else "",
                "source": z.source,
            }
            for z in zscores
        ],
        hide_index=True,
    )
