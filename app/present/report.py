"""Plain-text summary and JSON for the command line. Formats only; the engine computes."""

from __future__ import annotations

from typing import Any

from obligor_memo.app.present import formatting as fmt


def contract_json(results) -> dict[str, Any]:
    """The ``evaluate --json`` object: the documented contract keys and every intermediate.

    Parameters
    ----------
    results
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    dict[str, Any]
        ``results.to_dict()``, ready for ``json.dumps``.
    """
    return results.to_dict()


def _table(headers: list[str], rows: list[list[str]]) -> str:
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(headers)]
    line = "  ".join(h.ljust(w) if i == 0 else h.rjust(w) for i, (h, w) in enumerate(zip(headers, widths)))
    out = [line, "  ".join("-" * w for w in widths)]
    for r in rows:
        out.append("  ".join(c.ljust(w) if i == 0 else c.rjust(w) for i, (c, w) in enumerate(zip(r, widths))))
    return "\n".join(out)


def summary_text(results) -> str:
    """The plain-text summary that ``evaluate`` prints without ``--json``.

    The PD and how it was reached, a table of the facilities and their total (EAD, CCF, LGD, EL,
    UL, and RW and RWA where the results carry them), the EL rate, the one-year and horizon PDs,
    regulatory and economic capital, the RAROC table when the case is priced, the cautions, and
    the closing reminder that this is a model estimate, not a credit decision.

    Parameters
    ----------
    results
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    str
        The summary, lines joined by newlines (no trailing newline).
    """
    case = results.case
    cur = case.borrower.currency
    pd = results.pd
    lines = [f"{case.borrower.name} ({cur})  engine {results.engine_version}", ""]
    lines.append("Probability of default")
    rows = [
        ["method", pd.method.replace("_", " ") + f" ({pd.measure.replace('_', '-')})"],
        ["asset value", fmt.money(pd.asset_value, cur)],
        ["asset growth", fmt.pct(pd.asset_growth) if pd.asset_growth is not None else "n/a"],
        ["asset volatility", fmt.pct(pd.asset_volatility)],
        [
            "default point",
            fmt.money(pd.default_point, cur)
            + f"  ({pd.short_term_share:g} x short-term + {pd.long_term_share:g} x long-term)",
        ],
        ["horizon", fmt.years(pd.horizon_years)],
        ["distance to default", fmt.num(pd.distance_to_default, 3)],
        ["model PD", fmt.pd_pct(pd.model_pd)],
        ["PD in force", fmt.pd_pct(pd.pd) + ("  (analyst override)" if pd.overridden else "")],
    ]
    if pd.grade is not None:
        rows.append(["grade", f"{pd.grade}  (PD band {fmt.pd_pct(pd.grade_lower)} - {fmt.pd_pct(pd.grade_upper)})"])
    width = max(len(r[0]) for r in rows)
    lines += [f"  {k.ljust(width)}  {v}" for k, v in rows]
    lines += ["", "Facilities"]
    has_rw = hasattr(results.facilities[0], "risk_weight")
    headers = ["id", "kind", "EAD", "CCF", "LGD", "EL", "UL"] + (["RW", "RWA"] if has_rw else [])
    table_rows = []
    for f in results.facilities:
        row = [
            f.id,
            f.kind,
            fmt.money(f.ead),
            fmt.pct(f.ccf, 0),
            fmt.pct(f.lgd, 1),
            fmt.money(f.expected_loss),
            fmt.money(f.unexpected_loss),
        ]
        if has_rw:
            row += [fmt.pct(f.risk_weight, 1), fmt.money(f.rwa)]
        table_rows.append(row)
    t = results.total
    total_row = ["total", "", fmt.money(t.ead), "", "", fmt.money(t.expected_loss), fmt.money(t.unexpected_loss)]
    if has_rw:
        total_row += ["", fmt.money(t.rwa)]
    table_rows.append(total_row)
    lines.append(_table(headers, table_rows))
    lines += ["", f"EL rate {fmt.pct(t.el_rate, 3)} of EAD over {fmt.years(t.horizon_years)}; amounts in {cur}."]
    lines.append(
        f"One-year PD (capital, IRB EL, RAROC): {fmt.pd_pct(t.pd_one_year)}; "
        f"horizon PD ({fmt.years(t.horizon_years)}): {fmt.pd_pct(t.pd_horizon)}"
    )
    lines.append(
        f"Regulatory capital (8 % of RWA): {fmt.money(t.regulatory_capital, cur)}; "
        f"IRB EL {fmt.money(t.regulatory_expected_loss, cur)}"
    )
    lines.append(
        f"Economic capital ({case.capital.confidence:.1%}, {t.economic_method.replace('_', '-')}, "
        f"one year): {fmt.money(t.economic_capital, cur)}"
    )
    lines.append(
        f"  single-factor {fmt.money(t.economic_capital_single_factor, cur)}; "
        f"standalone {fmt.money(t.economic_capital_standalone, cur)}"
    )
    p = results.pricing
    if p is not None:
        lines += ["", f"Pricing on {p.capital_basis_label}"]
        rows = [
            [
                f.id,
                fmt.pct(f.raroc, 1),
                fmt.pct(f.raroc_regulatory, 1),
                fmt.pct(f.raroc_economic, 1),
                fmt.pct(f.minimum_spread, 3),
            ]
            for f in (*p.facilities, p.relationship)
        ]
        lines.append(_table(["facility", "RAROC", "RAROC reg.", "RAROC econ.", "min. spread"], rows))
        if p.note:
            lines.append(f"  {p.note}")
    for c in results.cautions:
        lines.append(f"! {c.message}")
    lines += [
        "",
        "A model estimate, not a credit decision: the institution's approved models, credit "
        "policy and the local supervisor's rules prevail; a qualified credit officer must review it.",
    ]
    return "\n".join(lines)
