"""The figures as the memo prints them: label -> text, defined once.

The memo's template prints these strings, ``record`` attaches them (``printed-figures.json``) and
``verify`` formats them again from a recomputation and compares, so all three agree by
construction.
"""

from __future__ import annotations

from typing import Any

from obligor_memo.app.present import formatting as fmt
from obligor_memo.app.present.covenants import covenant_line

CASE_FILE = "case.json"
"""The attachment holding the case the memo was computed from."""
FIGURES_FILE = "printed-figures.json"
"""The attachment holding every recorded figure as printed."""

__all__ = ["covenant_line", "printed_figures"]


def printed_figures(results: Any) -> dict[str, str]:
    """Every figure the memo prints and verify re-checks: label -> text as printed.

    Summary amounts carry the currency; per-facility amounts are printed in tables whose header
    names the currency, so they are recorded without it, as printed.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`);
        covenants, Z-scores, market figures, scenarios and sensitivity rows are recorded when
        the results carry them.

    Returns
    -------
    dict[str, str]
        Label -> text as printed, in a fixed order (the summary, then each facility, pricing,
        covenants, Z-scores, market PD, scenarios and sensitivity).
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
