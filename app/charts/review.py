"""The waterfall of a figure's change since the last review, one bar per cause."""

from __future__ import annotations

from typing import Any

import plotly.graph_objects as go
from obligor_memo.app.charts.style import COPPER, INK, MILLION, MOSS, layout_dict


def review_waterfall_figure(results: Any, figure: str = "expected_loss") -> go.Figure | None:
    """OLD's figure, each block's share, NEW's figure (money in millions, PD in percent).

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).
    figure : str, optional
        Name of the compared figure (a key of ``obligor_memo.engine.compare.FIGURE_BY_NAME``).

    Returns
    -------
    go.Figure | None
        The waterfall of :func:`waterfall_figure`; None when the case records no previous
        review with its inputs, or the figure has no change (not reported then or now).

    Raises
    ------
    CaseError
        If the previous review's case no longer validates.
    """
    from obligor_memo.app.present.compare_report import review_comparison

    comparison = review_comparison(results)
    if comparison is None or comparison.change.get(figure) is None:
        return None
    return waterfall_figure(comparison, figure, results.case.borrower.currency)


def waterfall_figure(comparison: Any, figure: str, currency: str) -> go.Figure:
    """The waterfall of one figure's change: last review, one bar per cause, now.

    The two ends stand on zero; each cause's bar starts where the one before it ended, copper
    when it raises the figure and moss when it lowers it. The causes shown are the blocks that
    changed an input, and the engine block.

    Parameters
    ----------
    comparison : Any
        The comparison (:class:`obligor_memo.engine.compare.Comparison`).
    figure : str
        Name of the compared figure (a key of ``obligor_memo.engine.compare.FIGURE_BY_NAME``).
    currency : str
        Currency code of the money axis.

    Returns
    -------
    go.Figure
        The bars, money in millions of ``currency`` and other figures in percent, each labelled
        with its value (the causes signed).
    """
    from obligor_memo.engine.compare import FIGURE_BY_NAME

    spec = FIGURE_BY_NAME[figure]
    scale, unit = (1 / MILLION, f"[{currency} m]") if spec.kind == "money" else (100.0, "[%]")
    rows = [b for b in comparison.attribution if b.changes or b.block == "engine"]
    labels = ["last review"] + [b.label for b in rows] + ["now"]
    values = (
        [comparison.old[figure] * scale]
        + [(b.deltas.get(figure) or 0.0) * scale for b in rows]
        + [comparison.new[figure] * scale]
    )
    # Drawn as floating bars (the memo's plotly bundle has no waterfall trace): each cause's bar
    # starts where the previous one ended; the ends stand on zero.
    kinds = ["end"] + ["step"] * len(rows) + ["end"]
    bases, level = [], 0.0
    for value, kind in zip(values, kinds):
        bases.append(0.0 if kind == "end" else level)
        level = value if kind == "end" else level + value
    heights = values
    colours = [INK if k == "end" else (COPPER if v > 0 else MOSS) for v, k in zip(values, kinds)]
    trace = go.Bar(
        x=labels,
        y=heights,
        base=bases,
        marker={"color": colours},
        text=[f"{v:+,.3f}" if k == "step" else f"{v:,.3f}" for v, k in zip(values, kinds)],
        textposition="outside",
        showlegend=False,
        hovertemplate="%{x}: %{text}<extra></extra>",
    )
    look = layout_dict(
        title=f"{spec.label}: last review to now, by cause",
        x_title="",
        y_title=f"{spec.label} {unit}",
        height=420,
        legend_below=False,
    )
    return go.Figure(data=[trace], layout=look)
