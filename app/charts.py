"""Every figure of the workbench and the memo, built once from the engine's Results.

One function per figure, ``<name>_figure(results, ...) -> plotly.graph_objects.Figure``; no
Streamlit here, so the memo can export the same figures as SVG. The figures draw what the
engine computed: the only numbers made here are plotting grids and unit scaling.

Conventions: money axes in millions of the case's currency ("[EUR m]"), rates in percent,
years as calendar years or [years]. The palette is our own and reads in grayscale: every series
also differs by dash or marker, never by colour alone.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import plotly.graph_objects as go

from app.formatting import millions, num, pct, pd_pct

# Slate, copper, moss, sand, plum, steel: distinct hues whose lightness also steps apart.
INK = "#22303c"
COPPER = "#b3612a"
MOSS = "#55785a"
SAND = "#c8a75a"
PLUM = "#7a4e6e"
STEEL = "#8a96a3"
GRID = "#e3e6ea"
PALETTE = (INK, COPPER, MOSS, SAND, PLUM, STEEL)
DASHES = ("solid", "dash", "dot", "dashdot", "longdash", "longdashdot")
MARKERS = ("circle", "square", "diamond", "triangle-up", "x", "star")
FONT = "Inter, 'Helvetica Neue', Arial, sans-serif"
MILLION = 1e6


def _currency(results: Any) -> str:
    return results.case.borrower.currency


def _money_axis(results: Any) -> str:
    return f"[{_currency(results)} m]"


def new_figure() -> go.Figure:
    """An empty figure without plotly's default template: copying that template costs more
    than drawing the figure, and apply_layout sets every property it would have set."""
    return go.Figure(layout={"template": "none"})


def layout_dict(*, title: str, x_title: str, y_title: str, height: int = 420,
                legend_below: bool = True) -> dict[str, Any]:
    """The shared look of every figure as plain layout data: white ground, light grid, legend
    under the plot. Figures built in one go.Figure(data, layout) call merge into this."""
    axis = {"showgrid": True, "gridcolor": GRID, "zeroline": False, "linecolor": STEEL,
            "ticks": "outside", "tickcolor": STEEL, "showline": True}
    return {
        "template": "none",
        "title": {"text": title, "x": 0.0, "xanchor": "left", "font": {"size": 16, "color": INK}},
        "font": {"family": FONT, "size": 12, "color": INK},
        "paper_bgcolor": "white", "plot_bgcolor": "white", "height": height,
        "margin": {"l": 70, "r": 30, "t": 60, "b": 120 if legend_below else 50},
        "hoverlabel": {"font": {"family": FONT}},
        "legend": ({"orientation": "h", "yanchor": "top", "y": -0.24, "xanchor": "left", "x": 0.0}
                   if legend_below else {}),
        "xaxis": {**axis, "title": {"text": x_title}}, "yaxis": {**axis, "title": {"text": y_title}},
    }


def apply_layout(fig: go.Figure, *, title: str, x_title: str, y_title: str, height: int = 420,
                 legend_below: bool = True) -> go.Figure:
    """The shared look of every figure (see layout_dict)."""
    # One update_layout call: separate axis updates cost more than building the traces.
    look = layout_dict(title=title, x_title=x_title, y_title=y_title, height=height,
                       legend_below=legend_below)
    del look["template"]
    fig.update_layout(**look)
    return fig


def _r2_text(value: float | None) -> str:
    return "n/a" if value is None else num(value, 3)


# --------------------------------------------------------------------------- asset trend


def asset_trend_figure(results: Any) -> go.Figure:
    """Total assets by year, the log-linear and straight-line fits with R^2, the default point."""
    fig = new_figure()
    cur = _currency(results)
    statements = results.case.statements
    trend = results.trend
    window = set(trend.years) if trend is not None else {r.year for r in statements}
    inside = [r for r in statements if r.year in window]
    outside = [r for r in statements if r.year not in window]
    fig.add_trace(go.Scatter(
        x=[r.year for r in inside], y=[r.total_assets / MILLION for r in inside], mode="markers",
        name="Total assets (in window)", marker={"color": INK, "size": 9, "symbol": "circle"},
        hovertemplate="%{x}: " + cur + " %{y:,.1f}m<extra></extra>"))
    if outside:
        fig.add_trace(go.Scatter(
            x=[r.year for r in outside], y=[r.total_assets / MILLION for r in outside], mode="markers",
            name="Total assets (outside window)",
            marker={"color": STEEL, "size": 9, "symbol": "circle-open", "line": {"width": 2}},
            hovertemplate="%{x}: " + cur + " %{y:,.1f}m<extra></extra>"))
    if trend is not None and len(trend.years) >= 2:
        grid = np.linspace(min(trend.years), max(trend.years), 60)
        log_line = np.exp(trend.log_fit.slope * grid + trend.log_fit.intercept) / MILLION
        level_line = (trend.level_fit.slope * grid + trend.level_fit.intercept) / MILLION
        fig.add_trace(go.Scatter(
            x=grid, y=log_line, mode="lines", line={"color": COPPER, "width": 2.5, "dash": "solid"},
            name=f"Log-linear fit, growth {pct(trend.log_fit.slope)}/yr, "
                 f"R\u00b2 = {_r2_text(trend.log_fit.r_squared)}",
            hovertemplate="log-linear fit %{x:.0f}: " + cur + " %{y:,.1f}m<extra></extra>"))
        fig.add_trace(go.Scatter(
            x=grid, y=level_line, mode="lines", line={"color": MOSS, "width": 2, "dash": "dash"},
            name=f"Straight-line fit, {millions(trend.level_fit.slope, cur)}/yr, "
                 f"R\u00b2 = {_r2_text(trend.level_fit.r_squared)}",
            hovertemplate="straight-line fit %{x:.0f}: " + cur + " %{y:,.1f}m<extra></extra>"))
    years = [r.year for r in statements]
    fig.add_trace(go.Scatter(
        x=[min(years) - 0.3, max(years) + 0.3], y=[results.pd.default_point / MILLION] * 2,
        mode="lines", line={"color": PLUM, "width": 2, "dash": "dot"},
        name=f"Default point {millions(results.pd.default_point, cur)} "
             f"({num(results.pd.short_term_share)} x ST + {num(results.pd.long_term_share)} x LT)",
        hovertemplate="default point: " + cur + " %{y:,.1f}m<extra></extra>"))
    apply_layout(fig, title="Asset trend and default point", x_title="Year",
                 y_title=f"Total assets {_money_axis(results)}")
    fig.update_xaxes(dtick=1, tickformat="d")
    return fig


def liabilities_figure(results: Any) -> go.Figure:
    """Short- and long-term liabilities by year, stacked, with the default point in force."""
    cur = _currency(results)
    rows = results.case.statements
    years = [r.year for r in rows]
    fig = new_figure()
    fig.add_trace(go.Bar(
        x=years, y=[r.short_term_liabilities / MILLION for r in rows], name="Short-term liabilities",
        marker={"color": INK, "line": {"color": INK, "width": 1}},
        hovertemplate="%{x} short-term: " + cur + " %{y:,.1f}m<extra></extra>"))
    fig.add_trace(go.Bar(
        x=years, y=[r.long_term_liabilities / MILLION for r in rows], name="Long-term liabilities",
        marker={"color": SAND, "pattern": {"shape": "/", "fgcolor": INK, "size": 6},
                "line": {"color": INK, "width": 1}},
        hovertemplate="%{x} long-term: " + cur + " %{y:,.1f}m<extra></extra>"))
    fig.add_trace(go.Scatter(
        x=[years[-1]], y=[results.pd.default_point / MILLION], mode="markers",
        marker={"symbol": "diamond", "size": 13, "color": COPPER, "line": {"color": INK, "width": 1.5}},
        name=f"Default point, latest year ({millions(results.pd.default_point, cur)})",
        hovertemplate="default point: " + cur + " %{y:,.1f}m<extra></extra>"))
    fig.update_layout(barmode="stack", bargap=0.3)
    apply_layout(fig, title="Liabilities by year", x_title="Year",
                 y_title=f"Liabilities {_money_axis(results)}")
    fig.update_xaxes(dtick=1, tickformat="d")
    return fig


# --------------------------------------------------------------------------- PD term structure


def term_structure_figure(results: Any) -> go.Figure:
    """Cumulative PD (line) and marginal PD per year (bars), both in percent."""
    ts = results.term_structure
    fig = new_figure()
    fig.add_trace(go.Bar(
        x=list(ts.years), y=list(ts.marginal), name="Marginal PD in the year",
        marker={"color": SAND, "line": {"color": INK, "width": 1}},
        customdata=[pd_pct(v) for v in ts.marginal],
        hovertemplate="year %{x:g}: marginal PD %{customdata}<extra></extra>"))
    fig.add_trace(go.Scatter(
        x=list(ts.years), y=list(ts.cumulative), name="Cumulative PD", mode="lines+markers",
        line={"color": INK, "width": 2.5}, marker={"symbol": "square", "size": 8, "color": INK},
        customdata=[pd_pct(v) for v in ts.cumulative],
        hovertemplate="to year %{x:g}: cumulative PD %{customdata}<extra></extra>"))
    apply_layout(fig, title=f"PD term structure ({ts.basis})", x_title="Years from today [years]",
                 y_title="Probability of default [%]")
    fig.update_xaxes(dtick=1)
    fig.update_yaxes(tickformat=".2%", rangemode="tozero")
    fig.update_layout(title={"font": {"size": 14}})
    return fig


# --------------------------------------------------------------------------- recovery


def _facility(results: Any, facility_id: str) -> Any:
    for f in results.facilities:
        if f.id == facility_id:
            return f
    known = ", ".join(f.id for f in results.facilities)
    raise ValueError(f"facility_id: got {facility_id!r}; allowed: one of {known}")


def recovery_figure(results: Any, facility_id: str, *, points: int = 400) -> go.Figure:
    """The facility's recovery-rate density with its mean and 5/50/95 % quantiles.

    A point mass (std 0) is drawn as a single spike at the mean. Collateral shifts the law: the
    covered share recovers in full, so the density starts at the cover.
    """
    fac = _facility(results, facility_id)
    law = results.laws[facility_id]
    mean = law.mean()
    fig = new_figure()
    if law.point_mass:
        fig.add_trace(go.Scatter(
            x=[mean, mean], y=[0, 1], mode="lines+markers", name="Point mass (std 0)",
            line={"color": INK, "width": 3}, marker={"symbol": ["line-ew", "triangle-up"], "size": 12},
            hovertemplate="all recoveries at %{x:.1%}<extra></extra>"))
        y_title = "Probability (point mass)"
        top = 1.0
    else:
        low, high = law.floor, law.floor + law.scale
        grid = np.linspace(low, high, points)
        density = law.pdf(grid)
        finite = density[np.isfinite(density)]
        # A density with alpha or beta < 1 runs to infinity at an end: clip the view, not the data.
        top = float(min(finite.max() if finite.size else 1.0, 4 * np.nanmedian(finite) + 1e-9)) * 1.1
        fig.add_trace(go.Scatter(
            x=grid, y=density, mode="lines", name=f"Beta density, alpha {num(law.alpha)}, beta {num(law.beta)}",
            line={"color": INK, "width": 2.5}, fill="tozeroy", fillcolor="rgba(34,48,60,0.10)",
            hovertemplate="recovery %{x:.1%}: density %{y:.2f}<extra></extra>"))
        y_title = "Density [1 / unit of recovery rate]"
        fig.update_yaxes(range=[0, top])
    marks = [("mean", mean, COPPER, "solid", f"Mean recovery {pct(mean, 1)} (LGD {pct(fac.lgd, 1)})")]
    for key, label, colour, dash in (("q05", "5 %", MOSS, "dot"), ("q50", "50 %", PLUM, "dash"),
                                     ("q95", "95 %", MOSS, "dashdot")):
        value = fac.recovery_quantiles[key]
        marks.append((key, value, colour, dash, f"{label} quantile {pct(value, 1)}"))
    for _, value, colour, dash, label in marks:
        fig.add_trace(go.Scatter(x=[value, value], y=[0, top], mode="lines", name=label,
                                 line={"color": colour, "width": 2, "dash": dash},
                                 hovertemplate=label + "<extra></extra>"))
    if fac.collateral_cover > 0:
        fig.add_vrect(x0=0, x1=fac.collateral_cover, fillcolor=SAND, opacity=0.18, line_width=0,
                      annotation_text=f"collateral cover {pct(fac.collateral_cover, 1)}",
                      annotation_position="top left")
    apply_layout(fig, title=f"Recovery rate, facility {fac.id} ({fac.seniority.replace('_', ' ')})",
                 x_title="Recovery rate [% of EAD]", y_title=y_title)
    fig.update_xaxes(range=[0, 1], tickformat=".0%")
    return fig


# --------------------------------------------------------------------------- exposure


def exposure_figure(results: Any) -> go.Figure:
    """Per facility: drawn, the CCF-converted undrawn part, and the undrawn part left out of EAD."""
    cur = _currency(results)
    facs = list(results.facilities)
    ids = [f.id for f in facs]
    drawn_in_ead = [min(f.drawn, f.ead) / MILLION for f in facs]
    converted = [max(f.ead - f.drawn, 0.0) / MILLION for f in facs]
    left_out = [max(f.undrawn / MILLION - c, 0.0) for f, c in zip(facs, converted)]
    fig = new_figure()
    fig.add_trace(go.Bar(
        y=ids, x=drawn_in_ead, orientation="h", name="Drawn",
        marker={"color": INK, "line": {"color": INK, "width": 1}},
        hovertemplate="%{y} drawn: " + cur + " %{x:,.2f}m<extra></extra>"))
    fig.add_trace(go.Bar(
        y=ids, x=converted, orientation="h", name="Undrawn x CCF (in EAD)",
        marker={"color": COPPER, "pattern": {"shape": "/", "fgcolor": "white", "size": 6},
                "line": {"color": INK, "width": 1}},
        customdata=[pct(f.ccf, 0) for f in facs],
        hovertemplate="%{y} undrawn x CCF %{customdata}: " + cur + " %{x:,.2f}m<extra></extra>"))
    fig.add_trace(go.Bar(
        y=ids, x=left_out, orientation="h", name="Undrawn not converted",
        marker={"color": "white", "line": {"color": STEEL, "width": 1.5}},
        hovertemplate="%{y} undrawn, not in EAD: " + cur + " %{x:,.2f}m<extra></extra>"))
    fig.add_trace(go.Scatter(
        y=ids, x=[f.ead / MILLION for f in facs], mode="markers", name="EAD",
        marker={"symbol": "line-ns", "size": 18, "line": {"color": PLUM, "width": 3}},
        customdata=[millions(f.ead, cur) for f in facs],
        hovertemplate="%{y} EAD %{customdata}<extra></extra>"))
    fig.update_layout(barmode="stack", bargap=0.35, legend={"traceorder": "normal"})
    apply_layout(fig, title=f"Exposure at default by facility (total {millions(results.total.ead, cur)})",
                 x_title=f"Amount {_money_axis(results)}", y_title="Facility",
                 height=max(320, 90 + 55 * len(facs)))
    fig.update_yaxes(autorange="reversed", showgrid=False)
    return fig


# --------------------------------------------------------------------------- loss distribution


def loss_distribution_figure(results: Any) -> go.Figure:
    """Exceedance curve P(loss > x) of the borrower's loss, log scale, with EL, VaR and EC marked."""
    cur = _currency(results)
    dist = results.loss_distribution
    loss = np.asarray(dist.curve_loss, dtype=float) / MILLION
    exceed = 1.0 - np.asarray(dist.curve_cdf, dtype=float)
    positive = exceed > 0
    fig = new_figure()
    fig.add_trace(go.Scatter(
        x=loss[positive], y=exceed[positive], mode="lines", name="P(loss > x)",
        line={"color": INK, "width": 2.5},
        hovertemplate="P(loss > " + cur + " %{x:,.1f}m) = %{y:.3%}<extra></extra>"))
    tail = 1.0 - dist.confidence
    if positive.any():
        # Decades from a hundredth of the tail level to above the PD: the far tail beyond that
        # is numerically zero and would only stretch the axis.
        low_exp = math.floor(math.log10(max(min(float(exceed[positive].min()), tail), tail / 100)))
        high_exp = math.ceil(math.log10(max(float(exceed[positive].max()), tail) * 1.5))
        low, high = 10.0 ** low_exp, 10.0 ** high_exp
        ticks = [10.0 ** e for e in range(low_exp, high_exp + 1)]
        fig.update_yaxes(type="log", range=[low_exp, high_exp], tickvals=ticks,
                         ticktext=[pct(t, max(0, -e - 2)) for t, e in zip(ticks, range(low_exp, high_exp + 1))])
    y_mark = [low, high] if positive.any() else [0, 1]
    fig.add_trace(go.Scatter(
        x=[0, float(loss.max()) if loss.size else 1], y=[tail, tail], mode="lines",
        line={"color": STEEL, "width": 1.5, "dash": "dot"},
        name=f"1 - confidence = {pct(tail, 2)}", hoverinfo="skip"))
    for value, label, colour, dash in (
            (dist.expected_loss, f"EL {millions(dist.expected_loss, cur)}", MOSS, "dash"),
            (dist.var, f"VaR {pct(dist.confidence, 1)} {millions(dist.var, cur)}", COPPER, "solid")):
        fig.add_trace(go.Scatter(x=[value / MILLION] * 2, y=y_mark, mode="lines", name=label,
                                 line={"color": colour, "width": 2, "dash": dash},
                                 hovertemplate=label + "<extra></extra>"))
    ec_label = (f"Economic capital {millions(dist.economic_capital, cur)}"
                + (" (floored at zero)" if dist.capital_floored else " = VaR - EL"))
    fig.add_trace(go.Scatter(
        x=[dist.expected_loss / MILLION, max(dist.var, dist.expected_loss) / MILLION], y=[tail, tail],
        mode="lines+markers", name=ec_label, line={"color": PLUM, "width": 4},
        marker={"symbol": ["triangle-left", "triangle-right"], "size": 11, "color": PLUM},
        hovertemplate=ec_label + "<extra></extra>"))
    apply_layout(fig, title=f"Borrower loss over {num(results.pd.horizon_years, 1)} year(s), "
                            f"{dist.join} recoveries", x_title=f"Loss x {_money_axis(results)}",
                 y_title="Probability that loss exceeds x (log scale)")
    return fig


FIGURES = {
    "asset_trend": asset_trend_figure,
    "liabilities": liabilities_figure,
    "term_structure": term_structure_figure,
    "exposure": exposure_figure,
    "loss_distribution": loss_distribution_figure,
}

# The what-if figures live in their own module (this one would pass 400 lines); the memo and the
# pages find every figure here.
from app.charts_whatif import pd_grid_figure, scenarios_figure, sensitivity_figure  # noqa: E402

# Figures that need engine.analysis.analyse (sensitivity, PD grid, scenarios), not just evaluate.
ANALYSIS_FIGURES = {
    "sensitivity": sensitivity_figure,
    "pd_grid": pd_grid_figure,
    "scenarios": scenarios_figure,
}
