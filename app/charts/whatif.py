"""The what-if figures: one-way tornado, two-way PD heat map, scenarios against the base.

Built from the Results of ``engine.analysis.analyse`` (fields ``sensitivity``, ``pd_grid`` and
``scenarios``); re-exported by :mod:`app.charts`, whose layout and palette they share. No
Streamlit here: the memo exports the same figures to SVG.

PD colour scale of the heat map: log10 of the PD on a single-hue ramp from paper white to the
slate ink. A balance-sheet PD grid spans many orders of magnitude (from far below 0.01 % at a
light default point and low volatility to tens of percent at the other corner), so a linear
scale would paint one dark corner and leave the rest blank; the log scale also matches master
scales, whose grade bands are roughly geometric. One hue whose lightness falls monotonically
reads the same printed in grayscale.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import plotly.graph_objects as go
from obligor_memo.app.charts.style import COPPER, INK, MILLION, STEEL, currency, layout_dict, money_axis
from obligor_memo.app.present.formatting import input_value, millions, money, num, pd_pct

MEASURES = ("el", "pd")
# PDs below this are drawn in the lightest colour (log10 of 0 has no place on the scale); the
# hover text still gives the exact value.
PD_COLOUR_FLOOR = 1e-6
PD_SCALE = [[0.0, "#f7f8f9"], [0.25, "#cdd4db"], [0.5, "#8d9aa7"], [0.75, "#4c5d6d"], [1.0, "#16202a"]]


# --------------------------------------------------------------------------- tornado


def input_value_text(value: float | None, unit: str) -> str:
    """An assumption's value in the unit a credit analyst reads it in (as the memo's tables print it).

    Parameters
    ----------
    value : float | None
        The value in the engine's unit; None prints as 'n/a'.
    unit : str
        The engine's unit of the input.

    Returns
    -------
    str
        The value as printed (:func:`~obligor_memo.app.present.formatting.input_value`).
    """
    return input_value(value, unit)


def _moved_to(row: Any, side: str) -> str:
    """The bar label: where the input was moved to (per facility rows: by how much, each)."""
    if row.facilities:
        asked = -row.step if side == "low" else row.step
        moves = [getattr(s, f"{side}_value") - s.base_value for s in row.facilities]
        short = any(abs(m - asked) > 1e-12 for m in moves)
        return f"{asked:+.2f} each" + (" (some held at a limit)" if short else "")
    value = getattr(row, f"{side}_value")
    text = input_value_text(value, row.unit)
    return text + " (limit)" if value == row.base_value else text


def _row_label(row: Any) -> str:
    base = "" if row.base_value is None else f" (base {input_value_text(row.base_value, row.unit)})"
    return f"{row.label}{base}"


def _measure_values(row: Any, measure: str) -> tuple[float, float | None, float | None]:
    if measure == "el":
        return row.el_base, row.el_low, row.el_high
    return row.pd_base, row.pd_low, row.pd_high


def sensitivity_figure(results: Any, *, measure: str = "el") -> go.Figure:
    """Tornado of the one-way table: the EL (or PD in force) after each input moved down and up.

    Bars run from the base value to the value with the input moved; each bar is labelled with the
    value the input was moved to. Rows are sorted by the swing |high - low| of the chosen measure,
    largest on top. A side whose case did not validate has no bar and shows the engine's note.
    EL in millions of the case's currency (in thousands when no EL on the chart reaches a
    million), PD in percent.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    measure : str, optional
        "el" for the expected loss, "pd" for the PD in force.

    Returns
    -------
    go.Figure
        The tornado, with the base value as a dashed line; its title says when the PD is
        overridden (model inputs then move the model PD only).

    Raises
    ------
    ValueError
        If ``measure`` is neither "el" nor "pd", or the results carry no sensitivity table.
    """
    if measure not in MEASURES:
        raise ValueError(f"measure: got {measure!r}; allowed: 'el' or 'pd'")
    sens = getattr(results, "sensitivity", None)
    if sens is None:
        raise ValueError("results.sensitivity: got None; allowed: results of engine.analysis.analyse")
    # EL below a million reads in thousands: "0.013" of a million is no figure to read off.
    peak = max([sens.el_base] + [v for r in sens.rows for v in (r.el_low, r.el_high) if v is not None])
    scale = (MILLION if peak >= MILLION else 1e3) if measure == "el" else 1.0
    rows = sorted(sens.rows, key=lambda r: -_swing(r, measure))  # stable: ties keep the engine's order
    rows = rows[::-1]  # plotly draws the first row at the bottom
    labels = [_row_label(r) for r in rows]
    base_value = (sens.el_base if measure == "el" else sens.pd_base) / scale
    traces: list[dict[str, Any]] = []
    for side, name, colour, pattern in (
        ("low", "Input moved down", STEEL, ""),
        ("high", "Input moved up", COPPER, "/"),
    ):
        ends, texts, hover = [], [], []
        for r in rows:
            base, low, high = _measure_values(r, measure)
            end = low if side == "low" else high
            ends.append(None if end is None else end / scale)
            # A move that leaves the measure where it was gets no label: two labels would sit on
            # the base line on top of each other; the row's "no effect" note says it once.
            still = low == base and high == base
            texts.append(_moved_to(r, side) if end is not None and not still else "")
            hover.append(_value_text(end, measure, results))
        traces.append(
            {
                "type": "bar",
                "y": labels,
                "x": [None if e is None else e - base_value for e in ends],
                "base": base_value,
                "orientation": "h",
                "name": name,
                "text": texts,
                "textposition": "outside",
                "cliponaxis": False,
                "textfont": {"size": 11, "color": INK},
                "marker": {
                    "color": colour,
                    "line": {"color": INK, "width": 1},
                    "pattern": {"shape": pattern, "fgcolor": "white", "size": 6, "fillmode": "overlay"},
                },
                "customdata": [[t, h] for t, h in zip(texts, hover)],
                "hovertemplate": "%{y}<br>moved to %{customdata[0]}: %{customdata[1]}<extra>" + name + "</extra>",
            }
        )
    annotations = []
    for r, label in zip(rows, labels):
        base, low, high = _measure_values(r, measure)
        if (low is None or high is None) and r.note:
            annotations.append(
                {
                    "y": label,
                    "x": base_value,
                    "xref": "x",
                    "yref": "y",
                    "text": _short(r.note),
                    "showarrow": False,
                    "xanchor": "left",
                    "xshift": 8,
                    "font": {"size": 10, "color": INK},
                    "bgcolor": "rgba(255,255,255,0.85)",
                }
            )
        elif low == high == base:
            annotations.append(
                {
                    "y": label,
                    "x": base_value,
                    "xref": "x",
                    "yref": "y",
                    "showarrow": False,
                    "text": f"no effect on the {'EL' if measure == 'el' else 'PD'}",
                    "xanchor": "left",
                    "xshift": 8,
                    "font": {"size": 10, "color": STEEL},
                }
            )
    base_text = _value_text(sens.el_base, "el", results) if measure == "el" else pd_pct(sens.pd_base)
    traces.append(
        {
            "type": "scatter",
            "x": [base_value, base_value],
            "y": [labels[0], labels[-1]] if labels else [0, 1],
            "mode": "lines",
            "name": f"Base {base_text}",
            "line": {"color": INK, "width": 2, "dash": "dash"},
            "hoverinfo": "skip",
        }
    )
    what = "Expected loss" if measure == "el" else "PD in force"
    unit = (money_axis(results) if scale == MILLION else f"[{currency(results)} k]") if measure == "el" else "[%]"
    title = f"One-way sensitivity of the {what.lower() if measure == 'el' else 'PD in force'}"
    if sens.pd_overridden:
        title += " (PD overridden: model inputs move the model PD only)"
    layout = layout_dict(title=title, x_title=f"{what} {unit}", y_title="", height=max(340, 150 + 46 * len(rows)))
    layout.update(barmode="overlay", bargap=0.35, annotations=annotations)
    layout["margin"].update(l=10, r=60)
    layout["yaxis"].update(showgrid=False, automargin=True, ticks="", categoryorder="array", categoryarray=labels)
    layout["xaxis"].update(automargin=True, **_padded_axis(rows, measure, scale, base_value))
    # One constructor call: each later update_* call re-validates and costs more than the data.
    return go.Figure(data=traces, layout=layout)


def _swing(row: Any, measure: str) -> float:
    base, low, high = _measure_values(row, measure)
    return abs((high if high is not None else base) - (low if low is not None else base))


def _value_text(value: float | None, measure: str, results: Any) -> str:
    if value is None:
        return "not computed"
    if measure == "pd":
        return pd_pct(value)
    return millions(value, currency(results)) if abs(value) >= MILLION else money(value, currency(results))


def _short(note: str, limit: int = 90) -> str:
    return note if len(note) <= limit else note[: limit - 1] + "\u2026"


def _nice_step(span: float) -> float:
    raw = span / 5
    power = 10.0 ** math.floor(math.log10(raw))
    return next(m * power for m in (1, 2, 2.5, 5, 10) if m * power >= raw)


def _padded_axis(rows: list[Any], measure: str, scale: float, base_value: float) -> dict[str, Any]:
    """Room on both sides for the bar labels, ticks only where the measure can be (not below 0).

    Outside text is not counted by autorange; EL and PD are never negative.
    """
    values = [base_value] + [v / scale for r in rows for v in _measure_values(r, measure)[1:] if v is not None]
    low, high = min(values), max(values)
    span = (high - low) or abs(base_value) or 1.0
    left, right = low - 0.24 * span, high + 0.26 * span
    step = _nice_step(high - min(low, 0.0) or span)
    ticks = [k * step for k in range(math.ceil(max(left, 0.0) / step), math.floor(right / step) + 1)]
    return {
        "range": [left, right],
        "tickvals": ticks,
        "ticktext": [f"{t:.1%}" if measure == "pd" else f"{t:,.{_decimals(step)}f}" for t in ticks],
    }


def _decimals(step: float) -> int:
    """Decimals that write the tick step exactly (0.02 -> 2, 0.025 -> 3, 5 -> 0)."""
    text = f"{step:.6f}".rstrip("0").rstrip(".")
    return len(text.split(".")[1]) if "." in text else 0


# --------------------------------------------------------------------------- PD heat map


_Y_TITLES = {
    "asset_volatility": "Asset volatility [% per sqrt(year)]",
    "equity_volatility": "Equity volatility [% per sqrt(year)]",
}


def _decade_ticks(low: float, high: float) -> tuple[list[float], list[str]]:
    first, last = math.floor(low), math.ceil(high)
    vals = [float(e) for e in range(first, last + 1) if low - 1e-9 <= e <= high + 1e-9]
    if len(vals) < 2:  # a grid within one decade: mark its ends instead
        vals = [low, high]
    floor = math.log10(PD_COLOUR_FLOOR)
    return vals, [("\u2264 " if abs(v - floor) < 1e-9 else "") + f"{100 * 10.0**v:.3g} %" for v in vals]


def pd_grid_figure(results: Any) -> go.Figure:
    """Heat map of the model PD over the default point's long-term share (x) and a volatility (y).

    z is log10(PD) (floored at PD_COLOUR_FLOOR for the colour only); the hover text gives the PD,
    the distance to default and the default point of the cell. The case's own point is marked.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).

    Returns
    -------
    go.Figure
        The heat map, with the grid's notes on its range under the plot where the engine gives
        them.

    Raises
    ------
    ValueError
        If the results carry no PD grid.
    """
    grid = getattr(results, "pd_grid", None)
    if grid is None:
        raise ValueError("results.pd_grid: got None; allowed: results of engine.analysis.analyse")
    cur = currency(results)
    pd = np.array([[np.nan if v is None else v for v in row] for row in grid.pd], dtype=float)
    dd = np.array([[np.nan if v is None else v for v in row] for row in grid.distance_to_default], dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.log10(np.maximum(pd, PD_COLOUR_FLOOR))
    finite = z[np.isfinite(z)]
    zmin, zmax = (float(finite.min()), float(finite.max())) if finite.size else (-6.0, 0.0)
    if zmax - zmin < 1e-9:
        zmin, zmax = zmin - 0.5, zmax + 0.5
    tickvals, ticktext = _decade_ticks(zmin, zmax)
    dp_text = [millions(v, cur) for v in grid.default_point]
    hover = [
        [
            f"PD {pd_pct(p) if np.isfinite(p) else 'no solution'}<br>distance to default "
            f"{num(d, 2) if np.isfinite(d) else 'n/a'}<br>default point {dp_text[j]}"
            for j, (p, d) in enumerate(zip(prow, drow))
        ]
        for prow, drow in zip(pd, dd)
    ]
    y_title = _Y_TITLES.get(grid.y_name, grid.y_name.replace("_", " ") + " [1/sqrt(year)]")
    traces = [
        {
            "type": "heatmap",
            "x": np.asarray(grid.x_values),
            "y": np.asarray(grid.y_values),
            "z": z,
            "zmin": zmin,
            "zmax": zmax,
            "customdata": pd,
            "text": np.array(hover, dtype=object),
            "hovertemplate": "long-term share %{x:.2f}, volatility %{y:.1%}<br>%{text}<extra></extra>",
            "colorscale": PD_SCALE,
            "hoverongaps": False,
            "name": "Model PD",
            "colorbar": {
                "title": {"text": "Model PD<br>(log scale)", "side": "top"},
                "tickvals": tickvals,
                "ticktext": ticktext,
                "thickness": 14,
                "len": 0.9,
                "outlinewidth": 0,
            },
        },
        {
            "type": "scatter",
            "x": [grid.base_x],
            "y": [grid.base_y],
            "mode": "markers",
            "name": f"This case: model PD {pd_pct(grid.base_pd)}",
            "marker": {"symbol": "diamond", "size": 13, "color": "white", "line": {"color": COPPER, "width": 3}},
            "hovertemplate": f"this case: long-term share {grid.base_x:.2f}, volatility {grid.base_y:.1%}, "
            f"model PD {pd_pct(grid.base_pd)}<extra></extra>",
        },
    ]
    title = "Model PD by default point and volatility"
    if grid.method == "market":
        title += " (market method)"
    layout = layout_dict(
        title=title,
        x_title="Long-term share of the default point [fraction]",
        y_title=y_title,
        height=440,
        legend_below=False,
    )
    # The case's label sits on a white box: a gray cell of any darkness leaves it readable.
    right_half = grid.base_x > (min(grid.x_values) + max(grid.x_values)) / 2
    annotations = [
        {
            "x": grid.base_x,
            "y": grid.base_y,
            "text": f"this case: {pd_pct(grid.base_pd)}",
            "showarrow": False,
            "xanchor": "right" if right_half else "left",
            "xshift": -12 if right_half else 12,
            "bgcolor": "rgba(255,255,255,0.9)",
            "bordercolor": COPPER,
            "borderwidth": 1,
            "font": {"size": 11, "color": INK},
        }
    ]
    layout["xaxis"].update(showgrid=False, range=[min(grid.x_values), max(grid.x_values)], tickformat=".1f")
    layout["yaxis"].update(showgrid=False, tickformat=".0%")
    layout["margin"].update(r=20)
    if text := _grid_note(grid):
        layout["margin"].update(b=90)
        annotations.append(
            {
                "text": text,
                "xref": "paper",
                "yref": "paper",
                "x": 0,
                "y": -0.3,
                "showarrow": False,
                "xanchor": "left",
                "align": "left",
                "font": {"size": 10, "color": INK},
            }
        )
    layout["annotations"] = annotations
    return go.Figure(data=traces, layout=layout)


def _grid_note(grid: Any) -> str:
    notes = [n for n in grid.notes if n.startswith(("The grid shows", "Where the default"))]
    return "<br>".join(_short(n, 110) for n in notes)


# --------------------------------------------------------------------------- scenarios


def scenarios_figure(results: Any) -> go.Figure:
    """PD in force and EL of each named scenario beside the base case (two panels of dots).

    PD [%] on the left, EL [currency m] on the right; the base's values are repeated as a
    dotted reference line so the distance of each scenario from the base reads at a glance.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).

    Returns
    -------
    go.Figure
        The two panels, the base case on top and the scenarios in the engine's order below it,
        each dot labelled with its value and its change from the base.

    Raises
    ------
    ValueError
        If the results carry no scenarios.
    """
    scenarios = getattr(results, "scenarios", None)
    if scenarios is None:
        raise ValueError("results.scenarios: got None; allowed: results of engine.analysis.analyse")
    cur = currency(results)
    names = ["Base case"] + [s.name for s in scenarios]
    pds = [results.pd.pd] + [s.figures.pd for s in scenarios]
    els = [results.total.expected_loss / MILLION] + [s.figures.expected_loss / MILLION for s in scenarios]
    # The change from the base is the engine's HeadlineDelta, not recomputed here.
    pd_texts = [pd_pct(pds[0])] + [f"{pd_pct(s.figures.pd)} ({s.delta.pd * 100:+.2f} pp)" for s in scenarios]
    el_texts = [millions(els[0] * MILLION, cur)] + [
        f"{millions(s.figures.expected_loss, cur)} ({s.delta.expected_loss / MILLION:+,.2f}m)" for s in scenarios
    ]
    traces: list[dict[str, Any]] = []
    for axis, values, texts, colour, symbol, label in (
        ("x", pds, pd_texts, INK, "circle", "PD in force"),
        ("x2", els, el_texts, COPPER, "square", "Expected loss"),
    ):
        traces.append(
            {
                "type": "scatter",
                "xaxis": axis,
                "x": [values[0]] * 2,
                "y": [names[0], names[-1]],
                "mode": "lines",
                "showlegend": False,
                "hoverinfo": "skip",
                "line": {"color": STEEL, "width": 1, "dash": "dot"},
            }
        )
        traces.append(
            {
                "type": "scatter",
                "xaxis": axis,
                "x": values,
                "y": names,
                "mode": "markers+text",
                "name": label,
                "text": texts,
                "textposition": "middle right",
                "cliponaxis": False,
                "textfont": {"size": 11, "color": INK},
                "marker": {"symbol": symbol, "size": 12, "color": colour, "line": {"color": INK, "width": 1}},
                "hovertemplate": "%{y}: %{text}<extra>" + label + "</extra>",
            }
        )
    layout = layout_dict(
        title="Scenarios against the base case",
        x_title="PD in force [%]",
        y_title="",
        height=max(300, 150 + 48 * len(names)),
        legend_below=False,
    )
    layout.update(
        showlegend=False, xaxis2={**layout["xaxis"], "title": {"text": f"Expected loss {money_axis(results)}"}}
    )
    layout["margin"].update(l=10, r=40, b=60)
    # Two panels side by side on one shared row axis; right-hand room for the value and delta
    # labels, which autorange does not count.
    layout["xaxis"].update(domain=[0.0, 0.46], tickformat=".1%", range=[0, max(pds) * 1.8 or 1], rangemode="tozero")
    layout["xaxis2"].update(domain=[0.54, 1.0], range=[0, max(els) * 1.8 or 1], anchor="y", rangemode="tozero")
    layout["yaxis"].update(
        autorange="reversed", automargin=True, showgrid=False, ticks="outside", ticklen=8, tickcolor="white"
    )
    return go.Figure(data=traces, layout=layout)
