"""The figures as the memo prints them: label -> text, defined once.

The memo's template prints these strings, ``record`` attaches them (``printed-figures.json``) and
``verify`` formats them again from a recomputation and compares, so all three agree by
construction.
"""

from __future__ import annotations

from typing import Any

from obligor_memo.app.present import formatting as fmt


def covenant_line(c: Any) -> dict[str, str]:
    """One covenant as the memo prints it (the decision page and section 1 use these strings)."""
    value_fmt = (lambda v: fmt.pct(v, 1)) if c.metric == "ebitda_margin" else fmt.times
    if c.ebitda_fall_to_breach is not None and not c.breached:
        fall = fmt.pct(c.ebitda_fall_to_breach, 1)
    else:
        fall = c.note or "n/a"
    return {
        "label": c.label,
        "limit": f"{'at most' if c.direction == 'max' else 'at least'} {value_fmt(c.threshold)}",
        "tested": c.tested,
        "year": str(c.year) if c.year is not None else "n/a",
        "value": value_fmt(c.value) if c.value is not None else "not computable",
        "headroom": fmt.pct(c.headroom, 1) if c.headroom is not None else "n/a",
        "fall": fall,
        "ebitda_at_breach": fmt.money(c.ebitda_at_breach) if c.ebitda_at_breach is not None else "n/a",
        "status": "breached" if c.breached else "holds" if c.breached is False else "not tested",
    }


def printed_figures(results: Any) -> dict[str, str]:
    """Every figure the memo prints and verify re-checks: label -> text as printed.

    Summary amounts carry the currency; per-facility amounts are printed in tables whose header
    names the currency, so they are recorded without it, as printed.
    """
    cur = results.case.borrower.currency
    pd, t = results.pd, results.total
    out: dict[str, str] = {
        "PD in force": fmt.pd_pct(pd.pd),
        "Model PD": fmt.pd_pct(pd.model_pd),
        "Distance to default": fmt.num(pd.distance_to_default, 3),
        "Grade": pd.grade if pd.grade is not None else "not graded",
        "Asset value": fmt.money(pd.asset_value, cur),
        "Asset volatility": fmt.pct(pd.asset_volatility),
        "Default point": fmt.money(pd.default_point, cur),
        "Total EAD": fmt.money(t.ead, cur),
        "Total EL": fmt.money(t.expected_loss, cur),
        "EL rate": fmt.pct(t.el_rate, 3),
        "Total UL": fmt.money(t.unexpected_loss, cur),
        "Total RWA": fmt.money(t.rwa, cur),
        "Regulatory capital": fmt.money(t.regulatory_capital, cur),
        "Loss quantile (VaR)": fmt.money(t.value_at_risk, cur),
        "Economic capital": fmt.money(t.economic_capital, cur),
        "Economic capital (single factor)": fmt.money(t.economic_capital_single_factor, cur),
        "Economic capital (standalone)": fmt.money(t.economic_capital_standalone, cur),
        "One-year PD": fmt.pd_pct(pd.pd_one_year),
        "IRB EL": fmt.money(t.regulatory_expected_loss, cur),
        "Lifetime EL": fmt.money(t.lifetime_expected_loss),  # table headed [currency]
    }
    if pd.asset_growth is not None:
        out["Asset growth"] = fmt.pct(pd.asset_growth)
    for f in results.facilities:
        out[f"{f.id}: EAD"] = fmt.money(f.ead)
        out[f"{f.id}: CCF"] = fmt.pct(f.ccf, 0)
        out[f"{f.id}: LGD"] = fmt.pct(f.lgd, 1)
        out[f"{f.id}: EL"] = fmt.money(f.expected_loss)
        out[f"{f.id}: UL"] = fmt.money(f.unexpected_loss)
        out[f"{f.id}: risk weight"] = fmt.pct(f.risk_weight, 1)
        out[f"{f.id}: RWA"] = fmt.money(f.rwa)
    p = results.pricing
    if p is not None:
        out["Minimum spread"] = (
            fmt.pct(p.minimum_spread) if p.minimum_spread is not None else "not defined (nothing drawn)"
        )
        out["Proposed spread"] = fmt.pct(p.proposed_spread)
        out["RAROC"] = fmt.pct(p.raroc, 1) if p.raroc is not None else "undefined (capital 0)"
        out["RAROC (regulatory capital)"] = fmt.pct(p.raroc_regulatory, 1)
        out["RAROC (economic capital)"] = fmt.pct(p.raroc_economic, 1)
    for i, c in enumerate(getattr(results, "covenants", ())):
        line = covenant_line(c)
        name = f"Covenant {i + 1} {line['label']}"
        out[f"{name}: value"] = line["value"]
        out[f"{name}: headroom"] = line["headroom"]
        out[f"{name}: EBITDA fall to breach"] = line["fall"]
    for z in getattr(results, "zscores", ()):
        if z.score is not None:
            out[f"Z-score {z.variant}"] = fmt.num(z.score, 2)
    market = getattr(results, "market", None)
    if market is not None:
        if market.merton is not None:
            out["Market-implied PD"] = fmt.pd_pct(market.merton.pd)
            out["Market distance to default"] = fmt.num(market.merton.distance_to_default, 3)
        out["Naive market PD"] = fmt.pd_pct(float(market.naive.pd))
    for s in getattr(results, "scenarios", None) or ():
        out[f"Scenario {s.name}: PD"] = fmt.pd_pct(s.figures.pd)
        out[f"Scenario {s.name}: EL"] = fmt.money(s.figures.expected_loss)
        out[f"Scenario {s.name}: RWA"] = fmt.money(s.figures.rwa)
    sensitivity = getattr(results, "sensitivity", None)
    for row in sensitivity.rows if sensitivity is not None else ():
        out[f"Sensitivity {row.label}: EL low"] = fmt.money(row.el_low)
        out[f"Sensitivity {row.label}: EL high"] = fmt.money(row.el_high)
    return out
