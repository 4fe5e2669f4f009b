"""The look every figure shares: palette, fonts, axes and the layout defaults.

The palette is our own and reads in grayscale: every series also differs by dash or marker,
never by colour alone. Money axes are in millions of the case's currency ("[EUR m]").
"""

from __future__ import annotations

from typing import Any

import plotly.graph_objects as go
from obligor_memo.app.present.formatting import num

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


def currency(results: Any) -> str:
    """The case's currency code, as the axis titles print it.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    str
        ``results.case.borrower.currency``.
    """
    return results.case.borrower.currency


def money_axis(results: Any) -> str:
    """The unit of a money axis in millions of the case's currency: '[EUR m]'.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    str
        The unit in square brackets.
    """
    return f"[{currency(results)} m]"


def new_figure() -> go.Figure:
    """An empty figure without plotly's default template.

    Copying that template costs more than drawing the figure, and apply_layout sets every
    property it would have set.

    Returns
    -------
    go.Figure
        A figure with no data and the layout template "none".
    """
    return go.Figure(layout={"template": "none"})


def layout_dict(
    *, title: str, x_title: str, y_title: str, height: int = 420, legend_below: bool = True
) -> dict[str, Any]:
    """The shared look of every figure as plain layout data.

    White ground, light grid, legend under the plot. Figures built in one go.Figure(data,
    layout) call merge into this.

    Parameters
    ----------
    title : str
        Title of the figure, at its top left.
    x_title : str
        Title of the x axis.
    y_title : str
        Title of the y axis.
    height : int, optional
        Height of the figure [px].
    legend_below : bool, optional
        Whether the legend is a horizontal row under the plot (with a bottom margin to hold
        it); False leaves plotly's default legend.

    Returns
    -------
    dict[str, Any]
        The layout: template "none", title, font, colours, height, margins, legend and both axes.
    """
    axis = {
        "showgrid": True,
        "gridcolor": GRID,
        "zeroline": False,
        "linecolor": STEEL,
        "ticks": "outside",
        "tickcolor": STEEL,
        "showline": True,
        "automargin": True,  # the margin grows to hold long tick labels, so no title runs over them
    }
    bottom = 120 if legend_below else 50
    # The legend starts a fixed distance below the plot (past the tick labels and the x-axis
    # title, about 60 px at the base font), whatever the figure's height.
    plot_height = max(height - 60 - bottom, 60)
    return {
        "template": "none",
        "title": {"text": title, "x": 0.0, "xanchor": "left", "font": {"size": 16, "color": INK}},
        "font": {"family": FONT, "size": 12, "color": INK},
        "paper_bgcolor": "white",
        "plot_bgcolor": "white",
        "height": height,
        "margin": {"l": 70, "r": 30, "t": 60, "b": bottom},
        "hoverlabel": {"font": {"family": FONT}},
        "legend": (
            {"orientation": "h", "yanchor": "top", "y": -min(0.6, 60 / plot_height), "xanchor": "left", "x": 0.0}
            if legend_below
            else {}
        ),
        "xaxis": {**axis, "title": {"text": x_title}},
        "yaxis": {**axis, "title": {"text": y_title}},
    }


def apply_layout(
    fig: go.Figure, *, title: str, x_title: str, y_title: str, height: int = 420, legend_below: bool = True
) -> go.Figure:
    """The shared look of every figure (see layout_dict).

    Parameters
    ----------
    fig : go.Figure
        The figure to restyle, in place.
    title : str
        Title of the figure, at its top left.
    x_title : str
        Title of the x axis.
    y_title : str
        Title of the y axis.
    height : int, optional
        Height of the figure [px].
    legend_below : bool, optional
        Whether the legend is a horizontal row under the plot.

    Returns
    -------
    go.Figure
        ``fig`` itself, its layout updated (its template is left as it is).
    """
    # One update_layout call: separate axis updates cost more than building the traces.
    look = layout_dict(title=title, x_title=x_title, y_title=y_title, height=height, legend_below=legend_below)
    del look["template"]
    fig.update_layout(**look)
    return fig


def year_step(span: float, most: int = 12) -> int:
    """The step between year ticks: 1, 2 or 5 times a power of ten, so at most ``most`` ticks show.

    Parameters
    ----------
    span : float
        Years from the first tick to the last.
    most : int, optional
        The most ticks the axis may carry (a dozen year labels fit a chart's width).

    Returns
    -------
    int
        1 for up to ``most`` - 1 years; 2, 5, 10, 20, 50, ... beyond.
    """
    step, scale = 1, 1
    while span / step > most - 1:
        for factor in (2, 5, 10):
            step = factor * scale
            if span / step <= most - 1:
                return step
        scale *= 10
    return step


def r2_text(value: float | None) -> str:
    """A coefficient of determination (R^2) with three decimals, for a chart label.

    Parameters
    ----------
    value : float | None
        The R^2 [dimensionless]; None prints as 'n/a'.

    Returns
    -------
    str
        The value as printed.
    """
    return "n/a" if value is None else num(value, 3)
