"""Exposure, recovery and loss figures.

EAD per facility, each facility's recovery law, the borrower's loss distribution.
"""

from __future__ import annotations

import math
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
)
from obligor_memo.app.present.formatting import millions, num, pct

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

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).
    facility_id : str
        Id of the facility.
    points : int, optional
        Number of recovery rates at which the density is evaluated.

    Returns
    -------
    go.Figure
        The figure, recovery rate on [0, 1] in percent of EAD; a density that runs to infinity
        at an end is clipped in the view.

    Raises
    ------
    ValueError
        If no facility has the id ``facility_id`` (the message lists the ids there are).
    """
    fac = _facility(results, facility_id)
    law = results.laws[facility_id]
    mean = law.mean()
    fig = new_figure()
    if law.point_mass:
        fig.add_trace(
            go.Scatter(
                x=[mean, mean],
                y=[0, 1],
                mode="lines+markers",
                name="Point mass (std 0)",
                line={"color": INK, "width": 3},
                marker={"symbol": ["line-ew", "triangle-up"], "size": 12},
                hovertemplate="all recoveries at %{x:.1%}<extra></extra>",
            )
        )
        y_title = "Probability (point mass)"
        top = 1.0
    else:
        low, high = law.offset, law.offset + law.scale  # the covered part recovers offset = c (1 - LGD_S)
        grid = np.linspace(low, high, points)
        density = law.pdf(grid)
        finite = density[np.isfinite(density)]
        # A density with alpha or beta < 1 runs to infinity at an end: clip the view, not the data.
        top = float(min(finite.max() if finite.size else 1.0, 4 * np.nanmedian(finite) + 1e-9)) * 1.1
        fig.add_trace(
            go.Scatter(
                x=grid,
                y=density,
                mode="lines",
                name=f"Beta density, alpha {num(law.alpha)}, beta {num(law.beta)}",
                line={"color": INK, "width": 2.5},
                fill="tozeroy",
                fillcolor="rgba(34,48,60,0.10)",
                hovertemplate="recovery %{x:.1%}: density %{y:.2f}<extra></extra>",
            )
        )
        y_title = "Density [1 / unit]"  # per unit of recovery rate; short enough for a half-width chart
        fig.update_yaxes(range=[0, top])
    # The effective law's mean, 1 - LGD: distinct words from the unsecured law's mean (appendix C).
    expected = "Expected recovery with collateral" if fac.collateral_cover > 0 else "Expected recovery"
    marks = [("mean", mean, COPPER, "solid", f"{expected} {pct(mean, 1)} (LGD {pct(fac.lgd, 1)})")]
    for key, label, colour, dash in (
        ("q05", "5 %", MOSS, "dot"),
        ("q50", "50 %", PLUM, "dash"),
        ("q95", "95 %", MOSS, "dashdot"),
    ):
        value = fac.recovery_quantiles[key]
        marks.append((key, value, colour, dash, f"{label} quantile {pct(value, 1)}"))
    for _, value, colour, dash, label in marks:
        fig.add_trace(
            go.Scatter(
                x=[value, value],
                y=[0, top],
                mode="lines",
                name=label,
                line={"color": colour, "width": 2, "dash": dash},
                hovertemplate=label + "<extra></extra>",
            )
        )
    if fac.collateral_cover > 0:
        fig.add_vrect(
            x0=0,
            x1=fac.collateral_cover,
            fillcolor=SAND,
            opacity=0.18,
            line_width=0,
            annotation_text=f"collateral cover {pct(fac.collateral_cover, 1)}",
            annotation_position="top left",
        )
    apply_layout(
        fig,
        title=f"Recovery rate, facility {fac.id} ({fac.seniority.replace('_', ' ')})",
        x_title="Recovery rate [% of EAD]",
        y_title=y_title,
    )
    fig.update_xaxes(range=[0, 1], tickformat=".0%")
    return fig


# --------------------------------------------------------------------------- exposure


def exposure_figure(results: Any) -> go.Figure:
    """Per facility: drawn, the CCF-converted undrawn part, and the undrawn part left out of EAD.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    go.Figure
        Horizontal stacked bars, one per facility in case order, with the EAD marked; amounts
        in millions of the case's currency, and the figure taller the more facilities there are.
    """
    cur = currency(results)
    facs = list(results.facilities)
    ids = [f.id for f in facs]
    drawn_in_ead = [min(f.drawn, f.ead) / MILLION for f in facs]
    converted = [max(f.ead - f.drawn, 0.0) / MILLION for f in facs]
    left_out = [max(f.undrawn / MILLION - c, 0.0) for f, c in zip(facs, converted)]
    fig = new_figure()
    fig.add_trace(
        go.Bar(
            y=ids,
            x=drawn_in_ead,
            orientation="h",
            name="Drawn",
            marker={"color": INK, "line": {"color": INK, "width": 1}},
            hovertemplate="%{y} drawn: " + cur + " %{x:,.2f}m<extra></extra>",
        )
    )
    fig.add_trace(
        go.Bar(
            y=ids,
            x=converted,
            orientation="h",
            name="Undrawn x CCF (in EAD)",
            marker={
                "color": COPPER,
                "pattern": {"shape": "/", "fgcolor": "white", "size": 6},
                "line": {"color": INK, "width": 1},
            },
            customdata=[pct(f.ccf, 0) for f in facs],
            hovertemplate="%{y} undrawn x CCF %{customdata}: " + cur + " %{x:,.2f}m<extra></extra>",
        )
    )
    fig.add_trace(
        go.Bar(
            y=ids,
            x=left_out,
            orientation="h",
            name="Undrawn not converted",
            marker={"color": "white", "line": {"color": STEEL, "width": 1.5}},
            hovertemplate="%{y} undrawn, not in EAD: " + cur + " %{x:,.2f}m<extra></extra>",
        )
    )
    fig.add_trace(
        go.Scatter(
            y=ids,
            x=[f.ead / MILLION for f in facs],
            mode="markers",
            name="EAD",
            marker={"symbol": "line-ns", "size": 18, "line": {"color": PLUM, "width": 3}},
            customdata=[millions(f.ead, cur) for f in facs],
            hovertemplate="%{y} EAD %{customdata}<extra></extra>",
        )
    )
    fig.update_layout(barmode="stack", bargap=0.35, legend={"traceorder": "normal"})
    apply_layout(
        fig,
        title=f"Exposure at default by facility (total {millions(results.total.ead, cur)})",
        x_title=f"Amount {money_axis(results)}",
        y_title="Facility",
        height=max(320, 90 + 55 * len(facs)),
    )
    fig.update_yaxes(autorange="reversed", showgrid=False)
    return fig


# --------------------------------------------------------------------------- loss distribution


def loss_distribution_figure(results: Any) -> go.Figure:
    """Exceedance curve P(loss > x) of the borrower's loss, log scale, with EL, VaR and EC marked.

    The economic capital shown is the standalone one of this distribution (VaR - EL, floored at
    zero); the single-factor capital in force is not on the chart.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    go.Figure
        The figure, losses in millions of the case's currency, with the tail level
        (1 - confidence) as a dotted line.
    """
    cur = currency(results)
    dist = results.loss_distribution
    loss = np.asarray(dist.curve_loss, dtype=float) / MILLION
    exceed = 1.0 - np.asarray(dist.curve_cdf, dtype=float)
    positive = exceed > 0
    fig = new_figure()
    fig.add_trace(
        go.Scatter(
            x=loss[positive],
            y=exceed[positive],
            mode="lines",
            name="P(loss > x)",
            line={"color": INK, "width": 2.5},
            hovertemplate="P(loss > " + cur + " %{x:,.1f}m) = %{y:.3%}<extra></extra>",
        )
    )
    tail = 1.0 - dist.confidence
    if positive.any():
        # Decades from a hundredth of the tail level to above the PD: the far tail beyond that
        # is numerically zero and would only stretch the axis.
        low_exp = math.floor(math.log10(max(min(float(exceed[positive].min()), tail), tail / 100)))
        high_exp = math.ceil(math.log10(max(float(exceed[positive].max()), tail) * 1.5))
        low, high = 10.0**low_exp, 10.0**high_exp
        ticks = [10.0**e for e in range(low_exp, high_exp + 1)]
        fig.update_yaxes(
            type="log",
            range=[low_exp, high_exp],
            tickvals=ticks,
            ticktext=[pct(t, max(0, -e - 2)) for t, e in zip(ticks, range(low_exp, high_exp + 1))],
        )
    y_mark = [low, high] if positive.any() else [0, 1]
    fig.add_trace(
        go.Scatter(
            x=[0, float(loss.max()) if loss.size else 1],
            y=[tail, tail],
            mode="lines",
            line={"color": STEEL, "width": 1.5, "dash": "dot"},
            name=f"1 - confidence = {pct(tail, 2)}",
            hoverinfo="skip",
        )
    )
    for value, label, colour, dash in (
        (dist.expected_loss, f"EL {millions(dist.expected_loss, cur)}", MOSS, "dash"),
        (dist.var, f"VaR {pct(dist.confidence, 1)} {millions(dist.var, cur)}", COPPER, "solid"),
    ):
        fig.add_trace(
            go.Scatter(
                x=[value / MILLION] * 2,
                y=y_mark,
                mode="lines",
                name=label,
                line={"color": colour, "width": 2, "dash": dash},
                hovertemplate=label + "<extra></extra>",
            )
        )
    # The chart's own distribution gives the standalone figure (VaR - EL of this one name);
    # the single-factor capital in force is printed beside the chart, not on it.
    ec_label = f"Economic capital, standalone {millions(dist.economic_capital, cur)}" + (
        " (floored at zero)" if dist.capital_floored else " = VaR - EL"
    )
    fig.add_trace(
        go.Scatter(
            x=[dist.expected_loss / MILLION, max(dist.var, dist.expected_loss) / MILLION],
            y=[tail, tail],
            mode="lines+markers",
            name=ec_label,
            line={"color": PLUM, "width": 4},
            marker={"symbol": ["triangle-left", "triangle-right"], "size": 11, "color": PLUM},
            hovertemplate=ec_label + "<extra></extra>",
        )
    )
    apply_layout(
        fig,
        title=f"Borrower loss over {num(results.pd.horizon_years, 1)} year(s), {dist.join} recoveries",
        x_title=f"Loss x {money_axis(results)}",
        y_title="P(loss > x) [log scale]",
    )
    return fig
