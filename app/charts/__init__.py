"""Every figure of the workbench and the memo, built once from the engine's Results.

One function per figure, ``<name>_figure(results, ...) -> plotly.graph_objects.Figure``; no
Streamlit here, so the memo can export the same figures as SVG. The figures draw what the
engine computed: the only numbers made here are plotting grids and unit scaling.

Conventions: money axes in millions of the case's currency ("[EUR m]"), rates in percent,
years as calendar years or [years]. The palette is our own and reads in grayscale: every series
also differs by dash or marker, never by colour alone.
"""

from obligor_memo.app.charts.loss import exposure_figure, loss_distribution_figure, recovery_figure
from obligor_memo.app.charts.pd import asset_trend_figure, liabilities_figure, term_structure_figure
from obligor_memo.app.charts.review import review_waterfall_figure
from obligor_memo.app.charts.style import apply_layout, layout_dict, new_figure
from obligor_memo.app.charts.whatif import pd_grid_figure, scenarios_figure, sensitivity_figure

__all__ = [
    "FIGURES",
    "ANALYSIS_FIGURES",
    "READS",
    "asset_trend_figure",
    "liabilities_figure",
    "term_structure_figure",
    "recovery_figure",
    "exposure_figure",
    "loss_distribution_figure",
    "sensitivity_figure",
    "pd_grid_figure",
    "scenarios_figure",
    "review_waterfall_figure",
    "apply_layout",
    "layout_dict",
    "new_figure",
]

# Figures drawn from evaluate()'s Results (the recovery figure is per facility: not listed).
FIGURES = {
    "asset_trend": asset_trend_figure,
    "liabilities": liabilities_figure,
    "term_structure": term_structure_figure,
    "exposure": exposure_figure,
    "loss_distribution": loss_distribution_figure,
}

# Figures that need engine.analysis.analyse (sensitivity, PD grid, scenarios), not just evaluate.
ANALYSIS_FIGURES = {
    "sensitivity": sensitivity_figure,
    "pd_grid": pd_grid_figure,
    "scenarios": scenarios_figure,
}

# What some figures read from Results, as dotted attribute paths: the workbench keys its figure
# cache by these values instead of the whole case, so an edit that does not touch them (a spread,
# a hurdle rate) reuses the figure. tests/test_chart_reads.py builds each figure from an object
# holding only these paths: a figure that reads anything else fails there.
READS: dict[str, tuple[str, ...]] = {
    "loss_distribution_figure": ("loss_distribution", "pd.horizon_years", "case.borrower.currency"),
    "exposure_figure": ("facilities", "total.ead", "case.borrower.currency"),
}
