"""How far the PD and the expected loss move when one assumption moves: one-way table and PD grid.

One-way sensitivity: each assumption is set down and up by an absolute step
(``case.sensitivity.steps``), clipped to its allowed range, and the whole case is evaluated again
through :func:`engine.scenarios.apply_overrides` and :func:`engine.evaluate.evaluate`, so every
input validation and every step of the chain applies to the perturbed cases exactly as to the
base. Rows are sorted by the swing |EL(up) - EL(down)|, the order of a tornado chart.

Two-way PD grid: the model PD over the default point's long-term share (x) and a volatility (y),
computed in one numpy pass. Balance-sheet method (Merton 1974 on book assets, physical drift):

    DP(b) = a STL + b LTL,  DD = (ln(V / DP) + g T) / (s sqrt T),  PD = N(-DD)

with V the latest total assets, g the asset growth in use (the log-asset drift, since the
expected return is mu = g + s^2/2) and a the short-term share in use. Market method: asset value
and asset volatility are outputs of the Merton solve, not inputs, so the y axis is the equity
volatility and every cell re-solves E = V N(d1) - DP e^{-rT} N(d2), sE E = N(d1) s V
(``engine.market.solve_merton_many``, vectorised).

Units: shares and rates [fraction], growth [1/year], volatility [1/sqrt(year)], horizon [years],
money [currency units].
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from obligor_memo.engine.case import Case, GridAxis
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import PdResult, Results, estimate_pd, evaluate
from obligor_memo.engine.market import solve_merton_many
from obligor_memo.engine.recovery import MAX_UPPER
from obligor_memo.engine.scenarios import apply_overrides, checked_base
from obligor_memo.engine.structural import distance_to_default, pd_from_distance
from obligor_memo.engine.whatif_types import FacilityShift, OneWaySensitivity, PdGrid, SensitivityRow

ASSUMPTIONS = (
    "short_term_share",
    "long_term_share",
    "asset_growth",
    "asset_volatility",
    "horizon_years",
    "ccf",
    "recovery_mean",
)

# Open lower bounds of the schema (volatility > 0, horizon > 0) need a concrete floor to clip to:
# the same 1 % volatility floor as the PD grid's default axis, and one month of horizon.
MIN_ASSET_VOLATILITY = 0.01
MIN_HORIZON_YEARS = 1.0 / 12.0
# A beta recovery law needs std^2 < mean (upper - mean); clipped means keep this relative margin.
_FEASIBILITY_MARGIN = 1e-6

# name -> (override path, lowest, highest, unit, label)
_CASE_LEVEL: dict[str, tuple[str, float, float, str, str]] = {
    "short_term_share": (
        "pd.default_point.short_term_share",
        0.0,
        1.0,
        "[fraction]",
        "Default point: share of short-term liabilities",
    ),
    "long_term_share": (
        "pd.default_point.long_term_share",
        0.0,
        1.0,
        "[fraction]",
        "Default point: share of long-term liabilities",
    ),
    "asset_growth": ("pd.asset_growth", -1.0, 1.0, "[1/year]", "Asset growth"),
    "asset_volatility": ("pd.asset_volatility", MIN_ASSET_VOLATILITY, 3.0, "[1/sqrt(year)]", "Asset volatility"),
    "horizon_years": ("pd.horizon_years", MIN_HORIZON_YEARS, 30.0, "[years]", "PD horizon"),
}
_PD_INPUTS = ("short_term_share", "long_term_share", "asset_growth", "asset_volatility", "horizon_years")


def _clip_pair(base: float, step: float, lowest: float, highest: float) -> tuple[float, float, bool]:
    """(base - step, base + step) clipped to [lowest, highest], never crossing the base."""
    low = min(base, max(lowest, base - step))
    high = max(base, min(highest, base + step))
    return low, high, (low != base - step) or (high != base + step)


def feasible_recovery_means(*, std: float, upper: float) -> tuple[float, float]:
    """The interval of mean recovery [fraction] for which a beta law with ``std`` on [0, upper] exists.

    The law needs mean (upper - mean) > std^2 (moment fit, see engine.recovery); a small margin is kept.

    Parameters
    ----------
    std : float
        Standard deviation of the recovery [fraction of EAD].
    upper : float
        Top of the recovery law's support [fraction of EAD].

    Returns
    -------
    tuple[float, float]
        (lowest, highest) mean recovery [fraction].

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if not (0 < upper <= MAX_UPPER):
        raise ValueError(f"upper: got {upper!r}; allowed: a number above 0 and at most {MAX_UPPER:g}")
    if not (0 <= std < upper / 2):
        raise ValueError(f"std: got {std!r}; allowed: a number from 0 to below upper/2 = {upper / 2:g}")
    if std == 0:
        return 0.0, upper
    half = upper / 2
    # A std within the margin of its limit (mean near upper / 2) leaves no room to move: reach 0.
    reach = math.sqrt(max(half * half - std * std * (1 + _FEASIBILITY_MARGIN), 0.0))
    return half - reach, half + reach


class _Runner:
    """Evaluates override sets once each; a set that changes nothing reuses the base results."""

    def __init__(self, case: Case, base: Results):
        self.case, self.base, self.evaluations = case, base, 0
        self._seen: dict[tuple[tuple[str, Any], ...], Results | ValueError] = {}

    def run(self, overrides: dict[str, Any], where: str) -> Results | ValueError:
        """Evaluate the case with ``overrides``, or return the error that stopped this point.

        A case that does not validate gives its CaseError: one extreme point must not sink the
        whole table, and the row reports it.

        Parameters
        ----------
        overrides : dict[str, Any]
            Dotted case path -> new value.
        where : str
            Which point this is, named in messages (e.g. ``sensitivity.ccf.down``).

        Returns
        -------
        Results | ValueError
            The evaluation of the case with ``overrides`` applied, or the error that stopped it.
        """
        key = tuple(sorted(overrides.items()))
        if key not in self._seen:
            try:
                changed = apply_overrides(self.case, overrides, where=where)
                self._seen[key] = self.base if changed == self.case else self._evaluate(changed)
            except ValueError as exc:
                self._seen[key] = exc
        return self._seen[key]

    def _evaluate(self, case: Case) -> Results:
        self.evaluations += 1
        return evaluate(case, detail=False)  # headline figures only: same numbers, less work


def _case_level_base(name: str, pd: PdResult) -> float | None:
    return {
        "short_term_share": pd.short_term_share,
        "long_term_share": pd.long_term_share,
        "asset_growth": pd.asset_growth,
        "asset_volatility": pd.asset_volatility,
        "horizon_years": pd.horizon_years,
    }[name]


def _growth_drives_market(case: Case) -> bool:
    """The physical market PD takes its drift from the asset trend when no drift is given."""
    return case.pd.measure == "physical" and case.market is not None and case.market.asset_drift is None


def _facility_plan(
    name: str, case: Case, base: Results, step: float
) -> tuple[dict[str, Any], dict[str, Any], list[FacilityShift], list[str]]:
    low: dict[str, Any] = {}
    high: dict[str, Any] = {}
    shifts: list[FacilityShift] = []
    notes: list[str] = []
    preset: list[str] = []
    for given, result in zip(case.facilities, base.facilities):
        prefix = f"facilities.{given.id}"
        if name == "ccf":
            lo, hi, clipped = _clip_pair(result.ccf, step, 0.0, 1.0)
            low[f"{prefix}.ccf"], high[f"{prefix}.ccf"] = lo, hi
            shifts.append(FacilityShift(given.id, result.ccf, lo, hi, clipped))
            continue
        mean, std, upper = result.recovery_mean, result.recovery_std, result.recovery_upper
        lowest, highest = feasible_recovery_means(std=std, upper=upper)
        lo, hi, clipped = _clip_pair(mean, step, max(0.0, lowest), min(upper, highest))
        low[f"{prefix}.recovery.mean"], high[f"{prefix}.recovery.mean"] = lo, hi
        if given.recovery is None:
            for side in (low, high):
                side[f"{prefix}.recovery.std"], side[f"{prefix}.recovery.upper"] = std, upper
            preset.append(given.id)
        if clipped:
            notes.append(
                f"{given.id}: mean recovery kept within [{max(0.0, lowest):.4f}, "
                f"{min(upper, highest):.4f}], where a beta law with std {std:.2f} on "
                f"[0, {upper:.2f}] exists"
            )
        shifts.append(FacilityShift(given.id, mean, lo, hi, clipped))
    if preset:
        notes.insert(
            0,
            f"no recovery block on {', '.join(preset)}: the law in use (seniority "
            "preset mean and the case's default recovery std) was set explicitly and its mean moved",
        )
    if name == "ccf" and any(s.clipped for s in shifts):
        notes.append("CCFs kept within [0, 1]: " + ", ".join(s.facility_id for s in shifts if s.clipped))
    return low, high, shifts, notes


def one_way_sensitivity(case: Case, base: Results | None = None) -> OneWaySensitivity:
    """Move each assumption down and up by ``case.sensitivity.steps`` and record PD and EL.

    Assumptions: default-point shares, asset growth and volatility (around the value in use,
    estimate or override), horizon, every facility's CCF (around the CCF in force) and every
    facility's mean recovery (around the mean in use; kept where the beta law is feasible).
    ``base`` saves re-evaluating the case. Under an analyst PD override the model inputs move
    the model PD but not the PD in force, so PD and EL stay put on those rows (noted).

    Parameters
    ----------
    case : Case
        The validated case.
    base : Results | None, optional
        The case's evaluation, if already computed; None evaluates it here.

    Returns
    -------
    OneWaySensitivity
        The rows, largest EL swing first, and notes.
    """
    base = checked_base(case, base) if base is not None else evaluate(case)
    steps = case.sensitivity.steps
    runner = _Runner(case, base)
    overridden = base.pd.overridden
    notes: list[str] = []
    if overridden:
        notes.append(
            f"The PD in force is the analyst's override ({base.pd.pd:.4%}); default point, "
            "growth, volatility and horizon move only the model's PD, not PD or EL."
        )
    rows: list[SensitivityRow] = []
    for name in ASSUMPTIONS:
        step = float(getattr(steps, name))
        row_notes: list[str] = []
        shifts: list[FacilityShift] = []
        value: float | None
        low_value: float | None
        high_value: float | None
        if name in _CASE_LEVEL:
            path, lowest, highest, unit, label = _CASE_LEVEL[name]
            value = _case_level_base(name, base.pd)
            if base.pd.method == "market" and name == "asset_volatility":
                notes.append(
                    "Asset volatility is solved from the equity market in the market method, not an input: no row."
                )
                continue
            if base.pd.method == "market" and name == "asset_growth" and not _growth_drives_market(case):
                notes.append(
                    "Asset growth does not enter the market PD here (risk-neutral measure, "
                    "or market.asset_drift given): no row."
                )
                continue
            if value is None:
                continue
            low_value, high_value, clipped = _clip_pair(value, step, lowest, highest)
            low_set, high_set = {path: low_value}, {path: high_value}
            if clipped:
                row_notes.append(f"kept within [{lowest:g}, {highest:g}]")
            if name in ("asset_growth", "asset_volatility") and getattr(case.pd, name) is None:
                row_notes.append("base is the estimate from the statements; moved by overriding it")
        else:
            path = f"facilities.*.{'ccf' if name == 'ccf' else 'recovery.mean'}"
            unit = "[fraction]"
            label = "CCF (each facility)" if name == "ccf" else "Recovery mean, unsecured law (each facility)"
            value = low_value = high_value = None
            low_set, high_set, shifts, facility_notes = _facility_plan(name, case, base, step)
            row_notes.extend(facility_notes)
            clipped = any(s.clipped for s in shifts)
        if overridden and name in _PD_INPUTS:
            row_notes.append("PD is the analyst's override: the model PD moves, PD and EL do not")
        low = runner.run(low_set, f"sensitivity.{name}.down")
        high = runner.run(high_set, f"sensitivity.{name}.up")
        for side, outcome in (("down", low), ("up", high)):
            if isinstance(outcome, CaseError):
                row_notes.append(f"the {side} case does not validate: {outcome.paragraph()}")
            elif isinstance(outcome, ValueError):
                row_notes.append(f"the engine could not evaluate the {side} case: {outcome}")
        low_result = low if isinstance(low, Results) else None
        high_result = high if isinstance(high, Results) else None
        el_low = low_result.total.expected_loss if low_result is not None else None
        el_high = high_result.total.expected_loss if high_result is not None else None
        el_base = base.total.expected_loss
        rows.append(
            SensitivityRow(
                assumption=name,
                label=label,
                path=path,
                unit=unit,
                step=step,
                base_value=value,
                low_value=low_value,
                high_value=high_value,
                facilities=tuple(shifts),
                clipped=clipped,
                pd_base=base.pd.pd,
                pd_low=low_result.pd.pd if low_result is not None else None,
                pd_high=high_result.pd.pd if high_result is not None else None,
                model_pd_low=low_result.pd.model_pd if low_result is not None else None,
                model_pd_high=high_result.pd.model_pd if high_result is not None else None,
                el_base=el_base,
                el_low=el_low,
                el_high=el_high,
                el_swing=abs(
                    (el_high if el_high is not None else el_base) - (el_low if el_low is not None else el_base)
                ),
                note="; ".join(row_notes),
            )
        )
    ordered = sorted(rows, key=lambda r: -r.el_swing)  # stable: ties keep ASSUMPTIONS order
    return OneWaySensitivity(
        rows=tuple(ordered),
        pd_base=base.pd.pd,
        model_pd_base=base.pd.model_pd,
        el_base=base.total.expected_loss,
        pd_overridden=overridden,
        evaluations=runner.evaluations,
        notes=tuple(notes),
    )


# --------------------------------------------------------------------------- two-way PD grid


def balance_sheet_pd_grid(
    *,
    asset_value: float,
    asset_growth: float,
    short_term_liabilities: float,
    long_term_liabilities: float,
    short_term_share: float,
    long_term_shares: Any,
    asset_volatilities: Any,
    horizon_years: float,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Balance-sheet PD over long-term shares (columns) x asset volatilities (rows).

    A column whose default point is 0 has DD = +inf and PD = 0: no debt to default on.

    Parameters
    ----------
    asset_value : float
        V, latest total assets [currency units].
    asset_growth : float
        g, annual growth of log assets (log drift; mu = g + s^2/2) [1/year].
    short_term_liabilities : float
        Short-term liabilities of the latest year [currency units].
    long_term_liabilities : float
        Long-term liabilities of the latest year [currency units].
    short_term_share : float
        Share a of short-term liabilities in the default point [fraction], in [0, 1].
    long_term_shares : Any
        Long-term shares b of the columns [fraction].
    asset_volatilities : Any
        Asset volatilities s of the rows [1/sqrt(year)], each > 0.
    horizon_years : float
        Horizon T of the PD [years].

    Returns
    -------
    tuple[np.ndarray, np.ndarray, np.ndarray]
        Default point per column [currency units], DD [rows, columns] [standard deviations] and PD [rows,
        columns] [fraction].

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    shares = np.asarray(long_term_shares, dtype=float).reshape(-1)
    vols = np.asarray(asset_volatilities, dtype=float).reshape(-1)
    if shares.size == 0 or np.any(~np.isfinite(shares)) or np.any((shares < 0) | (shares > 1)):
        raise ValueError(f"long_term_shares: got {shares!r}; allowed: numbers from 0 to 1")
    if vols.size == 0 or np.any(~np.isfinite(vols)) or np.any((vols <= 0) | (vols > 10)):
        raise ValueError(f"asset_volatilities: got {vols!r}; allowed: numbers above 0, at most 10")
    if not (0 <= short_term_share <= 1):
        raise ValueError(f"short_term_share: got {short_term_share!r}; allowed: a number from 0 to 1")
    if not (asset_value > 0 and math.isfinite(asset_value)):
        raise ValueError(f"asset_value: got {asset_value!r}; allowed: a finite amount above 0")
    dp = short_term_share * short_term_liabilities + shares * long_term_liabilities
    positive = dp > 0
    s = vols[:, None]
    # A default point tiny against the assets overflows V/DP to inf: DD = +inf, PD = 0 is the
    # right limit there, so the overflow warning carries no information.
    with np.errstate(over="ignore"):
        dd = distance_to_default(
            asset_value=asset_value,
            default_point=np.where(positive, dp, 1.0)[None, :],
            asset_return=asset_growth + s**2 / 2,
            asset_volatility=s,
            horizon_years=horizon_years,
        )
    dd = np.where(positive[None, :], dd, np.inf)
    return dp, dd, np.asarray(pd_from_distance(dd))


def _axis(axis: GridAxis, field: str, highest: float | None = None) -> np.ndarray:
    if highest is not None and axis.stop > highest:
        raise CaseError.single(f"{field}.stop", axis.stop, f"at most {highest:g} for this axis")
    return np.linspace(axis.start, axis.stop, axis.points)


def centred_volatility_axis(volatility: float, points: int = 21) -> np.ndarray:
    """Volatilities from max(0.01, s/2) to 2 s, evenly spaced in log(s).

    The middle point is s itself (whenever s/2 >= 0.01), so halving and doubling are equally far.

    Parameters
    ----------
    volatility : float
        The volatility s in use [1/sqrt(year)].
    points : int, optional
        Number of points, odd for s to be the middle one.

    Returns
    -------
    np.ndarray
        The volatilities [1/sqrt(year)].

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if not (volatility > 0 and math.isfinite(volatility)):
        raise ValueError(f"volatility: got {volatility!r}; allowed: a finite number above 0")
    if points < 2:
        raise ValueError(f"points: got {points!r}; allowed: a whole number of at least 2")
    low, high = max(0.01, volatility / 2), 2 * volatility
    return np.geomspace(low, high, points) if high > low else np.full(points, high)


def pd_grid(case: Case, base: Results | None = None) -> PdGrid:
    """The two-way model-PD grid of the case (see the module notes for both methods).

    ``base`` supplies the PD step's values in use; without it only the PD step is run.

    Parameters
    ----------
    case : Case
        The validated case.
    base : Results | None, optional
        The case's evaluation, if already computed; None evaluates it here.

    Returns
    -------
    PdGrid
        The model PD over the two axes.

    Raises
    ------
    CaseError
        If the case cannot be read or evaluated (each problem names its field).
    """
    pd = checked_base(case, base).pd if base is not None else estimate_pd(case)[1]
    settings = case.sensitivity
    x = _axis(settings.long_term_share_axis, "sensitivity.long_term_share_axis", highest=1.0)
    latest = case.statements[-1]
    notes: list[str] = []
    if pd.overridden:
        notes.append(f"The grid shows the model's PD; the PD in force is the analyst's override ({pd.pd:.4%}).")
    if case.pd.method == "market" and case.market is not None:
        return _market_grid(case, pd, x, notes)
    if settings.asset_volatility_axis is not None:
        if settings.asset_volatility_axis.start <= 0:
            raise CaseError.single(
                "sensitivity.asset_volatility_axis.start",
                settings.asset_volatility_axis.start,
                "a volatility above 0 (at 0 the distance to default is infinite)",
            )
        y = _axis(settings.asset_volatility_axis, "sensitivity.asset_volatility_axis")
    else:
        y = centred_volatility_axis(pd.asset_volatility)
    growth = pd.asset_growth if pd.asset_growth is not None else pd.asset_return - pd.asset_volatility**2 / 2
    dp, dd, pd_matrix = balance_sheet_pd_grid(
        asset_value=pd.asset_value,
        asset_growth=growth,
        short_term_liabilities=latest.short_term_liabilities,
        long_term_liabilities=latest.long_term_liabilities,
        short_term_share=pd.short_term_share,
        long_term_shares=x,
        asset_volatilities=y,
        horizon_years=pd.horizon_years,
    )
    if not np.all(dp > 0):
        notes.append("Where the default point is 0 the PD is 0 (no debt to default on).")
    return PdGrid(
        method="balance_sheet",
        x_name="long_term_share",
        x_values=tuple(x.tolist()),
        y_name="asset_volatility",
        y_values=tuple(y.tolist()),
        default_point=tuple(dp.tolist()),
        pd=_rows(pd_matrix),
        distance_to_default=_rows(dd),
        base_x=pd.long_term_share,
        base_y=pd.asset_volatility,
        base_pd=pd.model_pd,
        pd_overridden=pd.overridden,
        notes=tuple(notes),
    )


def _rows(matrix: np.ndarray, ok: np.ndarray | None = None) -> tuple[tuple[float | None, ...], ...]:
    mask = np.ones(matrix.shape, dtype=bool) if ok is None else ok
    return tuple(
        tuple(float(v) if good else None for v, good in zip(row, good_row)) for row, good_row in zip(matrix, mask)
    )


def _market_grid(case: Case, pd: PdResult, x: np.ndarray, notes: list[str]) -> PdGrid:
    market = case.market
    assert market is not None
    latest = case.statements[-1]
    share = case.pd.default_point.short_term_share
    y = centred_volatility_axis(market.equity_volatility)
    notes.append(
        "Market method: asset value and volatility are solved, so the y axis is the equity "
        "volatility and each cell re-solves the Merton equations; "
        "sensitivity.asset_volatility_axis applies to the balance-sheet method only."
    )
    # The engine's market PD carries its drift in asset_return (the risk-free rate when
    # risk-neutral); solve_merton_many takes None for the risk-neutral N(-d2).
    drift = pd.asset_return if pd.method == "market" and pd.measure == "physical" else None
    dp = share * latest.short_term_liabilities + x * latest.long_term_liabilities
    batch = solve_merton_many(
        equity_value=market.equity_value,
        equity_volatility=y[:, None],
        default_point=dp[None, :],
        risk_free_rate=market.risk_free_rate,
        horizon_years=case.pd.horizon_years,
        asset_drift=drift,
        invalid="flag",
    )
    ok = np.asarray(batch.converged)
    if not ok.all():
        notes.append(
            f"{int((~ok).sum())} cell(s) have no Merton solution and are left empty; first: {batch.failures[0][1]}"
        )
    return PdGrid(
        method="market",
        x_name="long_term_share",
        x_values=tuple(x.tolist()),
        y_name="equity_volatility",
        y_values=tuple(y.tolist()),
        default_point=tuple(dp.tolist()),
        pd=_rows(np.asarray(batch.pd), ok),
        distance_to_default=_rows(np.asarray(batch.distance_to_default), ok),
        base_x=case.pd.default_point.long_term_share,
        base_y=market.equity_volatility,
        base_pd=pd.model_pd,
        pd_overridden=pd.overridden,
        notes=tuple(notes),
    )
