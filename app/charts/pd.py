"""The PD step's figures: asset trend, liabilities, PD term structure.

Total assets and their fits, the liabilities against the default point, and the cumulative and
marginal PD by year.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import plotly.graph_objects as go
from obligor_memo.app.charts.style import (
    COPPER,
    INK,
    MILLION,
    MOSS,
    PLUM,
    SAND,
    STEEL,
    apply_layout,
    currency,
    money_axis,
    new_figure,
    r2_text,
    year_step,
)
from obligor_memo.app.present.formatting import millions, pct, pd_pct

# --------------------------------------------------------------------------- asset trend


def asset_trend_figure(results: Any) -> go.Figure:
    """Total assets by year, the log-linear and straight-line fits with R^2, the default point.

    Years inside the trend window are filled markers, those outside it open ones; the fits are
    drawn over the window when it holds two years or more.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    go.Figure
        The figure, amounts in millions of the case's currency.
    """
    fig = new_figure()
    cur = currency(results)
    statements = results.case.statements
    trend = results.trend
    window = set(trend.years) if trend is not None else {r.year for r in statements}
    inside = [r for r in statements if r.year in window]
    outside = [r for r in statements if r.year not in window]
    fig.add_trace(
        go.Scatter(
            x=[r.year for r in inside],
            y=[r.total_assets / MILLION for r in inside],
            mode="markers",
            name="Total assets (in window)",
            marker={"color": INK, "size": 9, "symbol": "circle"},
            hovertemplate="%{x}: " + cur + " %{y:,.1f}m<extra></extra>",
        )
    )
    if outside:
        fig.add_trace(
            go.Scatter(
                x=[r.year for r in outside],
                y=[r.total_assets / MILLION for r in outside],
                mode="markers",
                name="Total assets (outside window)",
                marker={"color": STEEL, "size": 9, "symbol": "circle-open", "line": {"width": 2}},
                hovertemplate="%{x}: " + cur + " %{y:,.1f}m<extra></extra>",
            )
        )
    if trend is not None and len(trend.years) >= 2:
        grid = np.linspace(min(trend.years), max(trend.years), 60)
        log_line = np.exp(trend.log_fit.slope * grid + trend.log_fit.intercept) / MILLION
        level_line = (trend.level_fit.slope * grid + trend.level_fit.intercept) / MILLION
        fig.add_trace(
            go.Scatter(
                x=grid,
                y=log_line,
                mode="lines",
                line={"color": COPPER, "width": 2.5, "dash": "solid"},
                name=f"Log-linear fit, growth {pct(trend.log_fit.slope)}/yr, "
                f"R\u00b2 = {r2_text(trend.log_fit.r_squared)}",
                hovertemplate="log-linear fit %{x:.0f}: " + cur + " %{y:,.1f}m<extra></extra>",
            )
        )
        fig.add_trace(
            go.Scatter(
                x=grid,
                y=level_line,
                mode="lines",
                line={"color": MOSS, "width": 2, "dash": "dash"},
                name=f"Straight-line fit, {millions(trend.level_fit.slope, cur)}/yr, "
                f"R\u00b2 = {r2_text(trend.level_fit.r_squared)}",
                hovertemplate="straight-line fit %{x:.0f}: " + cur + " %{y:,.1f}m<extra></extra>",
            )
        )
    years = [r.year for r in statements]
    fig.add_trace(
        go.Scatter(
            x=[min(years) - 0.3, max(years) + 0.3],
            y=[results.pd.default_point / MILLION] * 2,
            mode="lines",
            line={"color": PLUM, "width": 2, "dash": "dot"},
            name=f"Default point {millions(results.pd.default_point, cur)} "
            f"({pct(results.pd.short_term_share, 0)} of ST + {pct(results.pd.long_term_share, 0)} of LT)",
            hovertemplate="default point: " + cur + " %{y:,.1f}m<extra></extra>",
        )
    )
    apply_layout(
        fig, title="Asset trend and default point", x_title="Year", y_title=f"Total assets {money_axis(results)}"
    )
    fig.update_xaxes(dtick=year_step(max(years) - min(years)), tickformat="d")
    return fig


def liabilities_figure(results: Any) -> go.Figure:
    """Short- and long-term liabilities by year, stacked, with the default point in force.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    go.Figure
        The figure, amounts in millions of the case's currency; the default point is one
        marker on the latest year.
    """
    cur = currency(results)
    rows = results.case.statements
    years = [r.year for r in rows]
    fig = new_figure()
    fig.add_trace(
        go.Bar(
            x=years,
            y=[r.short_term_liabilities / MILLION for r in rows],
            name="Short-term liabilities",
            marker={"color": INK, "line": {"color": INK, "width": 1}},
            hovertemplate="%{x} short-term: " + cur + " %{y:,.1f}m<extra></extra>",
        )
    )
    fig.add_trace(
        go.Bar(
            x=years,
            y=[r.long_term_liabilities / MILLION for r in rows],
            name="Long-term liabilities",
            marker={
                "color": SAND,
                "pattern": {"shape": "/", "fgcolor": INK, "size": 6},
                "line": {"color": INK, "width": 1},
            },
            hovertemplate="%{x} long-term: " + cur + " %{y:,.1f}m<extra></extra>",
        )
    )
    fig.add_trace(
        go.Scatter(
            x=[years[-1]],
            y=[results.pd.default_point / MILLION],
            mode="markers",
            marker={"symbol": "diamond", "size": 13, "color": COPPER, "line": {"color": INK, "width": 1.5}},
            name=f"Default point, latest year ({millions(results.pd.default_point, cur)})",
            hovertemplate="default point: " + cur + " %{y:,.1f}m<extra></extra>",
        )
    )
    fig.update_layout(barmode="stack", bargap=0.3)
    apply_layout(fig, title="Liabilities by year", x_title="Year", y_title=f"Liabilities {money_axis(results)}")
    fig.update_xaxes(dtick=year_step(years[-1] - years[0]), tickformat="d")
    return fig


# --------------------------------------------------------------------------- PD term structure


def term_structure_figure(results: Any) -> go.Figure:
    """Cumulative PD (line) and marginal PD per year (bars), both in percent.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    go.Figure
        The figure over the years of ``results.term_structure``, titled with its basis.
    """
    ts = results.term_structure
    fig = new_figure()
    fig.add_trace(
        go.Bar(
            x=list(ts.years),
            y=list(ts.marginal),
            name="Marginal PD in the year",
            marker={"color": SAND, "line": {"color": INK, "width": 1}},
            customdata=[pd_pct(v) for v in ts.marginal],
            hovertemplate="year %{x:g}: marginal PD %{customdata}<extra></extra>",
        )
    )
    fig.add_trace(
        go.Scatter(
            x=list(ts.years),
            y=list(ts.cumulative),
            name="Cumulative PD",
            mode="lines+markers",
            line={"color": INK, "width": 2.5},
            marker={"symbol": "square", "size": 8, "color": INK},
            customdata=[pd_pct(v) for v in ts.cumulative],
            hovertemplate="to year %{x:g}: cumulative PD %{customdata}<extra></extra>",
        )
    )
    apply_layout(
        fig,
        title=f"PD term structure ({ts.basis})",
        x_title="Years from today [years]",
        y_title="Probability of default [%]",
    )
    fig.update_xaxes(dtick=year_step(max(ts.years) - min(ts.years) if ts.years else 1))
    fig.update_yaxes(tickformat=".2%", rangemode="tozero")
    fig.update_layout(title={"font": {"size": 14}})
    return fig
