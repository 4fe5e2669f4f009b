"""The figures draw what the engine computed, checked against numpy/scipy computing it another way,
with units on every axis and series told apart without colour."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest
from obligor_memo.app import charts
from obligor_memo.app.charts import whatif as charts_whatif
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loading import load_case
from scipy import integrate, stats

SAMPLE = Path(__file__).resolve().parent.parent / "sample_data" / "hollowmere.yaml"


@pytest.fixture(scope="module")
def results():
    return evaluate(load_case(SAMPLE))


def _all_figures(results):
    figures = {name: build(results) for name, build in charts.FIGURES.items()}
    for f in results.facilities:
        figures[f"recovery {f.id}"] = charts.recovery_figure(results, f.id)
    return figures


def _trace(fig, starts: str):
    return next(t for t in fig.data if (t.name or "").startswith(starts))


def test_every_axis_has_a_unit_and_money_axes_name_the_currency(results):
    for name, fig in _all_figures(results).items():
        x_title, y_title = fig.layout.xaxis.title.text, fig.layout.yaxis.title.text
        for title in (x_title, y_title):
            assert title, f"{name}: an axis without a title"
        # Unit in brackets or a stated scale, the convention of the whole project.
        assert any(("[" in t) or ("log scale" in t) or ("Facility" == t) for t in (x_title, y_title)), name
        if "[EUR m]" in x_title + y_title:
            assert results.case.borrower.currency == "EUR"


def test_series_differ_by_more_than_colour(results):
    """Grayscale print: two series of one figure never share dash, marker and fill pattern."""
    for name, fig in _all_figures(results).items():
        looks = []
        for t in fig.data:
            line = getattr(t, "line", None)
            marker = getattr(t, "marker", None)
            pattern = getattr(marker, "pattern", None) if marker is not None else None
            looks.append(
                (
                    t.type,
                    getattr(t, "mode", None),
                    getattr(line, "dash", None) if line else None,
                    str(getattr(marker, "symbol", None)) if marker is not None else None,
                    getattr(pattern, "shape", None) if pattern is not None else None,
                    getattr(marker, "color", None) if t.type == "bar" else None,
                )
            )
        assert len(set(looks)) == len(looks), f"{name}: two series look alike in grayscale"


def test_log_fit_line_and_r2_match_numpy(results):
    fig = charts.asset_trend_figure(results)
    years = np.array(results.trend.years, dtype=float)
    assets = np.array(results.trend.total_assets)
    slope, intercept = np.polyfit(years, np.log(assets), 1)  # least squares by numpy
    line = _trace(fig, "Log-linear fit")
    np.testing.assert_allclose(line.y, np.exp(slope * np.asarray(line.x) + intercept) / 1e6, rtol=1e-9)
    r2 = np.corrcoef(years, np.log(assets))[0, 1] ** 2  # R^2 of a one-regressor fit = r^2
    assert f"R\u00b2 = {r2:.3f}" in line.name
    r2_level = np.corrcoef(years, assets)[0, 1] ** 2
    assert f"R\u00b2 = {r2_level:.3f}" in _trace(fig, "Straight-line fit").name
    dp = _trace(fig, "Default point")
    latest = results.case.statements[-1]
    # Default point = 1 x short-term + 0.5 x long-term liabilities (common practice).
    assert dp.y[0] == pytest.approx((latest.short_term_liabilities + 0.5 * latest.long_term_liabilities) / 1e6)


def test_liabilities_are_stacked_from_the_statements(results):
    fig = charts.liabilities_figure(results)
    assert fig.layout.barmode == "stack"
    st_bar, lt_bar = fig.data[0], fig.data[1]
    np.testing.assert_allclose(st_bar.y, [r.short_term_liabilities / 1e6 for r in results.case.statements])
    np.testing.assert_allclose(lt_bar.y, [r.long_term_liabilities / 1e6 for r in results.case.statements])


def test_term_structure_cumulative_is_the_running_sum_of_marginals(results):
    fig = charts.term_structure_figure(results)
    marginal, cumulative = fig.data[0].y, fig.data[1].y
    np.testing.assert_allclose(np.cumsum(marginal), cumulative, rtol=1e-12)  # numpy, by definition
    assert cumulative[0] == pytest.approx(results.pd.pd)


@pytest.mark.parametrize("facility_id", ["TL-A", "RCF-1", "NOTE-29"])
def test_recovery_density_matches_scipy_beta(results, facility_id):
    fig = charts.recovery_figure(results, facility_id)
    fac = next(f for f in results.facilities if f.id == facility_id)
    law = results.laws[facility_id]
    # scipy's own beta law; the support starts at the covered part's recovery c (1 - LGD_S)
    ref = stats.beta(fac.alpha, fac.beta, loc=law.offset, scale=law.scale)
    density = fig.data[0]
    x, y = np.asarray(density.x), np.asarray(density.y)
    inside = (x > law.offset + 1e-9) & (x < law.offset + law.scale - 1e-9)
    np.testing.assert_allclose(y[inside], ref.pdf(x[inside]), rtol=1e-9)
    # The drawn density holds the mass scipy's cdf puts between the first and last inner grid
    # points (an alpha or beta below 1 makes the density run to infinity at an end, so the ends
    # themselves are left out); 400 trapezoids: 1 % tolerance.
    xi, yi = x[inside], y[inside]
    assert integrate.trapezoid(yi, xi) == pytest.approx(ref.cdf(xi[-1]) - ref.cdf(xi[0]), rel=0.01)
    for key, q in (("5 %", 0.05), ("50 %", 0.50), ("95 %", 0.95)):
        mark = _trace(fig, f"{key} quantile")
        assert mark.x[0] == pytest.approx(ref.ppf(q), rel=1e-9)
    assert _trace(fig, "Expected recovery").x[0] == pytest.approx(ref.mean(), rel=1e-9)


def test_point_mass_is_drawn_as_a_spike(results):
    law = dataclasses.replace(results.laws["RCF-1"], alpha=None, beta=None, unsecured_std=0.0)
    point = dataclasses.replace(results, laws={**results.laws, "RCF-1": law})
    fig = charts.recovery_figure(point, "RCF-1")
    spike = fig.data[0]
    assert spike.name.startswith("Point mass") and spike.x[0] == spike.x[1] == pytest.approx(0.6)


def test_unknown_facility_is_named_in_the_error(results):
    with pytest.raises(ValueError, match="facility_id: got 'NOPE'"):
        charts.recovery_figure(results, "NOPE")


def test_exposure_bars_add_up_to_ead_from_the_inputs(results):
    fig = charts.exposure_figure(results)
    drawn, converted, left_out = fig.data[0].x, fig.data[1].x, fig.data[2].x
    for i, f in enumerate(results.case.facilities):
        ccf = results.facilities[i].ccf
        # EAD = drawn + CCF x undrawn (Basel standardised approach, credit conversion factors).
        ead = f.drawn + ccf * max(f.committed - f.drawn, 0.0)
        assert drawn[i] + converted[i] == pytest.approx(ead / 1e6, rel=1e-12)
        assert drawn[i] + converted[i] + left_out[i] == pytest.approx(max(f.committed, f.drawn) / 1e6)


def test_loss_curve_crosses_the_tail_level_at_var(results):
    fig = charts.loss_distribution_figure(results)
    curve = fig.data[0]
    dist = results.loss_distribution
    x, exceed = np.asarray(curve.x), np.asarray(curve.y)
    # VaR is the q-quantile, so P(L > VaR) = 1 - q; read off the drawn curve by numpy
    # interpolation (200-point grid: 2 % tolerance on the probability).
    at_var = np.interp(dist.var / 1e6, x, exceed)
    assert at_var == pytest.approx(1 - dist.confidence, rel=0.02)
    assert exceed[0] == pytest.approx(results.pd.pd, rel=1e-6)  # P(L > 0) = PD: no default, no loss
    ec = _trace(fig, "Economic capital")
    # The bar is the chart distribution's standalone capital, VaR - EL (the single-factor
    # capital in force is not a feature of this one name's loss distribution).
    assert ec.x[1] - ec.x[0] == pytest.approx(dist.economic_capital / 1e6, rel=1e-9)


def test_what_if_figures_say_what_is_missing(results):
    # A plain evaluate() carries no sensitivity, grid or scenarios: the message names the field.
    assert results.sensitivity is None
    with pytest.raises(ValueError, match="results.sensitivity"):
        charts.sensitivity_figure(results)
    with pytest.raises(ValueError, match="results.pd_grid"):
        charts.pd_grid_figure(results)
    with pytest.raises(ValueError, match="results.scenarios"):
        charts.scenarios_figure(results)


# --------------------------------------------------------------------------- what-if figures


@pytest.fixture(scope="module")
def analysed():
    from obligor_memo.engine.analysis import analyse

    return analyse(load_case(SAMPLE))


def test_what_if_figures_have_units_and_differ_by_more_than_colour(analysed):
    for name, build in charts.ANALYSIS_FIGURES.items():
        fig = build(analysed)
        titles = [fig.layout.xaxis.title.text or "", fig.layout.yaxis.title.text or ""]
        if name == "scenarios":
            titles.append(fig.layout.xaxis2.title.text)
        assert any("[" in t for t in titles), (name, titles)
        looks = [
            (
                t.type,
                getattr(t, "mode", None),
                str(getattr(getattr(t, "marker", None), "symbol", None)),
                getattr(getattr(getattr(t, "marker", None), "pattern", None), "shape", None),
                getattr(getattr(t, "line", None), "dash", None),
                t.xaxis,
            )
            for t in fig.data
        ]
        assert len(set(looks)) == len(looks), f"{name}: two series look alike in grayscale"


@pytest.mark.parametrize("measure, low, high", [("el", "el_low", "el_high"), ("pd", "pd_low", "pd_high")])
def test_tornado_bar_ends_are_the_tables_values(analysed, measure, low, high):
    fig = charts.sensitivity_figure(analysed, measure=measure)
    title = fig.layout.xaxis.title.text
    # The axis says its unit: money in EUR thousands or millions, PD as a fraction shown in %.
    scale = {"[EUR m]": 1e6, "[EUR k]": 1e3, "[%]": 1.0}[title[title.index("[") :]]
    down, up = fig.data[0], fig.data[1]
    table = {charts_whatif._row_label(r): r for r in analysed.sensitivity.rows}
    base = (analysed.sensitivity.el_base if measure == "el" else analysed.sensitivity.pd_base) / scale
    assert down.base == pytest.approx(base) and up.base == pytest.approx(base)
    for label, dx, ux in zip(down.y, down.x, up.x):
        row = table[label]
        # Bar end = base + length: exactly the engine's value (rel 1e-12: float addition only).
        assert down.base + dx == pytest.approx(getattr(row, low) / scale, rel=1e-12)
        assert up.base + ux == pytest.approx(getattr(row, high) / scale, rel=1e-12)
    swings = [abs(getattr(table[y], high) - getattr(table[y], low)) for y in down.y]
    assert swings == sorted(swings)  # plotly's first row is the bottom: largest on top


def test_tornado_labels_name_the_moved_input(analysed):
    fig = charts.sensitivity_figure(analysed)
    down, up = fig.data[0], fig.data[1]
    rows = {charts_whatif._row_label(r): r for r in analysed.sensitivity.rows}
    horizon = next(y for y in down.y if rows[y].assumption == "horizon_years")
    i = list(down.y).index(horizon)
    row = rows[horizon]
    assert down.text[i] == f"{row.low_value:g} y" and up.text[i] == f"{row.high_value:g} y"
    vol = next(y for y in down.y if rows[y].assumption == "asset_volatility")
    j = list(down.y).index(vol)
    assert up.text[j] == f"{rows[vol].high_value * 100:.1f} %"
    # The sample's EL moves below EUR 1m: the axis reads in thousands, the base in whole euros.
    assert fig.layout.xaxis.title.text == "Expected loss [EUR k]"
    assert fig.data[2].name == f"Base EUR {analysed.total.expected_loss:,.0f}"
    with pytest.raises(ValueError, match="measure: got 'lgd'"):
        charts.sensitivity_figure(analysed, measure="lgd")


def test_tornado_row_whose_point_failed_shows_the_note(analysed):
    sens = analysed.sensitivity
    row = dataclasses.replace(
        sens.rows[0], el_high=None, pd_high=None, note="the up case does not validate: pd.horizon_years too long"
    )
    broken = dataclasses.replace(analysed, sensitivity=dataclasses.replace(sens, rows=(row,) + sens.rows[1:]))
    fig = charts.sensitivity_figure(broken)
    label = charts_whatif._row_label(row)
    i = list(fig.data[1].y).index(label)
    assert fig.data[1].x[i] is None and fig.data[1].text[i] == ""
    assert any("does not validate" in a.text and a.y == label for a in fig.layout.annotations)


def test_heat_map_z_is_the_grids_pd(analysed):
    grid = analysed.pd_grid
    fig = charts.pd_grid_figure(analysed)
    heat = fig.data[0]
    pd = np.array(grid.pd, dtype=float)
    np.testing.assert_array_equal(np.asarray(heat.customdata, dtype=float), pd)
    floor = charts_whatif.PD_COLOUR_FLOOR
    np.testing.assert_allclose(10.0 ** np.asarray(heat.z), np.maximum(pd, floor), rtol=1e-12)
    np.testing.assert_array_equal(heat.x, grid.x_values)
    np.testing.assert_array_equal(heat.y, grid.y_values)
    assert "volatility" in fig.layout.yaxis.title.text.lower() and "[" in fig.layout.yaxis.title.text
    marker = fig.data[1]
    assert (marker.x[0], marker.y[0]) == (grid.base_x, grid.base_y)


def test_heat_map_cells_match_merton_distance_to_default_by_scipy(analysed):
    """Balance-sheet PD = N(-DD), DD = (ln(V/DP) + g T) / (s sqrt T) (Merton 1974 on book assets,
    log drift g), recomputed with scipy's normal law for a few cells of the drawn grid."""
    grid, p = analysed.pd_grid, analysed.pd
    heat = charts.pd_grid_figure(analysed).data[0]
    latest = analysed.case.statements[-1]
    for iy, ix in ((0, 0), (10, 10), (20, 15), (5, 20)):
        s, b = grid.y_values[iy], grid.x_values[ix]
        dp = p.short_term_share * latest.short_term_liabilities + b * latest.long_term_liabilities
        dd = (np.log(p.asset_value / dp) + p.asset_growth * p.horizon_years) / (s * np.sqrt(p.horizon_years))
        # rel 1e-9 in the log: two routes to the same normal tail.
        assert heat.z[iy][ix] == pytest.approx(
            np.log10(max(stats.norm.sf(dd), charts_whatif.PD_COLOUR_FLOOR)), rel=1e-9
        )


def test_heat_map_log_scale_ticks_are_decades(analysed):
    bar = charts.pd_grid_figure(analysed).data[0].colorbar
    vals = np.asarray(bar.tickvals)
    assert np.allclose(vals, np.round(vals)) and len(vals) >= 2
    assert bar.ticktext[0].startswith("\u2264")  # the floor is an "at most", not an exact PD


def test_scenarios_figure_shows_the_engines_scenarios(analysed):
    fig = charts.scenarios_figure(analysed)
    pd_dots, el_dots = fig.data[1], fig.data[3]
    names = ["Base case"] + [s.name for s in analysed.scenarios]
    assert list(pd_dots.y) == names and list(el_dots.y) == names
    assert list(pd_dots.x) == [analysed.pd.pd] + [s.figures.pd for s in analysed.scenarios]
    np.testing.assert_allclose(
        el_dots.x,
        [analysed.total.expected_loss / 1e6] + [s.figures.expected_loss / 1e6 for s in analysed.scenarios],
        rtol=1e-12,
    )
    assert "EUR m" in fig.layout.xaxis2.title.text
