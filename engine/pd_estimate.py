"""Probability of default: asset trend, balance-sheet or market-implied PD, override, grade, term structure.

One step of the chain run by :mod:`engine.evaluate`.

The balance-sheet PD follows :mod:`engine.structural`; the market-implied PD solves the Merton
model (:mod:`engine.market`) with the balance-sheet default point as the debt barrier; the PD in
force is the analyst's override where one is set (a reason is required) and is graded on the
case's master scale or the illustrative default (:mod:`engine.grading`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from obligor_memo.engine.case import Case, PdSettings
from obligor_memo.engine.errors import CaseError, Caution, InputError
from obligor_memo.engine.grading import DEFAULT_MASTER_SCALE, assign_grade, master_scale_from_rows
from obligor_memo.engine.market import MertonSolution, solve_merton
from obligor_memo.engine.naive_dd import NaiveDD, naive_distance_to_default
from obligor_memo.engine.structural import (
    BalanceSheetPd,
    PdTermStructure,
    balance_sheet_pd,
    constant_hazard_term_structure,
    distance_to_default,
    pd_from_distance,
    structural_term_structure,
)
from obligor_memo.engine.trend import AssetTrend, fit_asset_trend


@dataclass(frozen=True)
class PdResult:
    """The PD in force and how it was reached. Rates [fraction], money [currency units]."""

    method: str
    """balance_sheet | market"""
    measure: str
    """physical | risk_neutral"""
    asset_value: float
    """V [currency units]."""
    asset_growth: float | None
    """[1/year] (balance sheet)."""
    asset_volatility: float
    """[1/sqrt(year)]."""
    asset_return: float
    """Drift used in DD [1/year]."""
    default_point: float
    """DP [currency units]."""
    short_term_share: float
    """a [fraction]."""
    long_term_share: float
    """b [fraction]."""
    horizon_years: float
    """[years]"""
    distance_to_default: float
    """DD over the horizon [standard deviations]."""
    model_pd: float
    """The model's PD over the horizon [fraction]."""
    pd: float
    """The PD in force over the horizon (override where set, converted to the horizon) [fraction]."""
    overridden: bool
    """True when the analyst's PD is in force."""
    override_reason: str | None
    """The analyst's reason for the override; None without one."""
    grade: str | None
    """Grade of the one-year PD; None before grading."""
    grade_lower: float | None
    """Band (lower, upper] of the grade."""
    grade_upper: float | None
    """Upper bound of the band [fraction]."""
    pd_one_year: float = math.nan
    """One-year PD in force [fraction]: the PD of capital, IRB EL and RAROC (CRE32.3)."""
    one_year_basis: str = ""
    """How ``pd_one_year`` was obtained from the model or the override."""
    override_input: float | None = None
    """The analyst's PD as typed [fraction], before any horizon conversion."""
    override_horizon_years: float | None = None
    """Horizon the override is stated for [years] (None: no override)."""


@dataclass(frozen=True)
class MarketResult:
    """Market-implied PD (Merton 1974) and the naive cross-check (Bharath and Shumway 2008)."""

    default_point: float
    """the debt barrier D [currency units]"""
    merton: MertonSolution | None
    """None when the solve failed (see message)"""
    naive: NaiveDD
    """The naive distance to default, the cross-check."""
    message: str
    """"" or why the Merton solve failed"""


def engine_error(field: str, exc: ValueError) -> CaseError:
    """A step's error as a CaseError.

    An :class:`InputError` keeps its own field, value and allowed text; any other ValueError (a
    step's internal limit) is reported on ``field`` with its message as what is allowed.

    Parameters
    ----------
    field : str
        Dotted path of the case field the error is reported on.
    exc : ValueError
        The step's error.

    Returns
    -------
    CaseError
        The error as a case error.
    """
    if isinstance(exc, InputError):
        return CaseError([exc.problem])
    return CaseError.single(field, "", str(exc))


def estimate_pd(
    case: Case, *, cross_check: bool = True
) -> tuple[AssetTrend | None, PdResult, list[Caution], MarketResult | None]:
    """Asset trend, the balance-sheet PD, and the market-implied PD where market data exist.

    ``cross_check=False`` skips the market cross-check when the PD does not come from it.

    Parameters
    ----------
    case : Case
        The validated case.
    cross_check : bool, optional
        False skips the market cross-check when the PD does not come from it.

    Returns
    -------
    tuple[AssetTrend | None, PdResult, list[Caution], MarketResult | None]
        The asset trend (None if not available), the PD result, the cautions and the market result (None without
        market data or cross-check).

    Raises
    ------
    CaseError
        If the case cannot be read or evaluated (each problem names its field).
    """
    settings = case.pd
    if settings.method == "market":
        trend, cautions = None, []
        try:
            trend, _, _ = _balance_sheet(case)
        except CaseError as exc:  # the trend is context only here: say why it is missing
            cautions.append(Caution("trend.unavailable", "No asset trend: " + exc.problems[0].allowed, "statements"))
        market = _market(case, required=True)
        m = market.merton
        mk = case.market
        # The schema requires market data for the market method; a required solve that fails raises.
        assert mk is not None and m is not None
        measure = settings.measure
        drift = mk.risk_free_rate
        if measure == "physical":
            physical_drift = (
                mk.asset_drift if mk.asset_drift is not None else (trend.expected_return if trend is not None else None)
            )
            if physical_drift is None:
                raise CaseError.single(
                    "pd.measure",
                    "physical",
                    "risk_neutral, or physical together with market.asset_drift or enough statements for a trend",
                )
            drift = physical_drift
            if mk.asset_drift is None:
                cautions.append(
                    Caution(
                        "market.drift_from_trend",
                        f"The physical market PD uses the balance-sheet asset return ({drift:.2%}) as its drift.",
                        "market.asset_drift",
                    )
                )
        result = PdResult(
            method="market",
            measure=measure,
            asset_value=m.asset_value,
            asset_growth=trend.growth_used if trend else None,
            asset_volatility=m.asset_volatility,
            asset_return=drift,
            default_point=market.default_point,
            short_term_share=settings.default_point.short_term_share,
            long_term_share=settings.default_point.long_term_share,
            horizon_years=settings.horizon_years,
            distance_to_default=m.distance_to_default
            if measure == "risk_neutral"
            else (
                math.log(m.asset_value / market.default_point)
                + (drift - m.asset_volatility**2 / 2) * settings.horizon_years
            )
            / (m.asset_volatility * math.sqrt(settings.horizon_years)),
            model_pd=0.0,
            pd=0.0,
            overridden=False,
            override_reason=None,
            grade=None,
            grade_lower=None,
            grade_upper=None,
        )
        model_pd = float(pd_from_distance(result.distance_to_default))
        result = replace(result, model_pd=model_pd, pd=model_pd)
        return trend, *_with_override(settings, result, cautions), market
    trend, bs, cautions = _balance_sheet(case)
    result = PdResult(
        method="balance_sheet",
        measure="physical",
        asset_value=bs.asset_value,
        asset_growth=bs.asset_growth,
        asset_volatility=bs.asset_volatility,
        asset_return=bs.asset_return,
        default_point=bs.default_point,
        short_term_share=bs.short_term_share,
        long_term_share=bs.long_term_share,
        horizon_years=bs.horizon_years,
        distance_to_default=bs.distance_to_default,
        model_pd=bs.pd,
        pd=bs.pd,
        overridden=False,
        override_reason=None,
        grade=None,
        grade_lower=None,
        grade_upper=None,
    )
    cross = _market(case, required=False) if (case.market is not None and cross_check) else None
    if cross is not None and cross.message:
        cautions.append(Caution("market.unsolved", cross.message, "market"))
    return trend, *_with_override(settings, result, cautions), cross


def hazard_convert(pd: float, *, from_years: float, to_years: float) -> float:
    """PD over ``to_years`` from a PD over ``from_years`` at a constant hazard [fraction].

    1 - (1 - PD)^(to / from): the constant-hazard rule of the term structure
    (``constant_hazard_term_structure``); the identity when the horizons agree.

    Parameters
    ----------
    pd : float
        PD over ``from_years`` [fraction], in [0, 1].
    from_years : float
        Horizon the PD is stated for [years].
    to_years : float
        Horizon wanted [years].

    Returns
    -------
    float
        PD over ``to_years`` [fraction].
    """
    if from_years == to_years or pd >= 1.0:
        return pd
    return -math.expm1(to_years / from_years * math.log1p(-pd))


def _with_override(settings: PdSettings, result: PdResult, cautions: list[Caution]) -> tuple[PdResult, list[Caution]]:
    """The PD in force over the horizon and over one year, the override converted where set."""
    horizon = settings.horizon_years
    if settings.override is None:
        if horizon == 1.0:
            one_year, basis = result.pd, "the model's PD (horizon one year)"
        else:
            dd1 = distance_to_default(
                asset_value=result.asset_value,
                default_point=result.default_point,
                asset_return=result.asset_return,
                asset_volatility=result.asset_volatility,
                horizon_years=1.0,
            )
            one_year = float(pd_from_distance(dd1))
            basis = (
                f"the model's PD at one year (same asset value, default point and drift; "
                f"the {horizon:g}-year PD is for the horizon figures)"
            )
        return replace(result, pd_one_year=one_year, one_year_basis=basis), cautions
    stated = settings.override_horizon_years or horizon
    in_force = hazard_convert(settings.override, from_years=stated, to_years=horizon)
    one_year = hazard_convert(settings.override, from_years=stated, to_years=1.0)
    converted = (
        ""
        if stated == horizon
        else f", stated over {stated:g} years and converted to the {horizon:g}-year horizon "
        f"({in_force:.4%}) at a constant hazard"
    )
    cautions.append(
        Caution(
            "pd.override",
            f"The analyst's PD of {settings.override:.4%} is used "
            f"instead of the model's {result.model_pd:.4%}{converted}. Reason: "
            f"{settings.override_reason}",
            "pd.override",
        )
    )
    basis = (
        "the analyst's override"
        if stated == 1.0
        else f"the analyst's {stated:g}-year override at a constant hazard: 1 - (1 - PD)^(1/{stated:g})"
    )
    return replace(
        result,
        pd=in_force,
        overridden=True,
        override_reason=settings.override_reason,
        pd_one_year=one_year,
        one_year_basis=basis,
        override_input=settings.override,
        override_horizon_years=stated,
    ), cautions


def _market(case: Case, *, required: bool) -> MarketResult:
    """Solve the Merton model with the balance-sheet default point as the debt barrier."""
    mk = case.market
    assert mk is not None  # called only when the case has market data
    latest = case.statements[-1]
    dp = (
        case.pd.default_point.short_term_share * latest.short_term_liabilities
        + case.pd.default_point.long_term_share * latest.long_term_liabilities
    )
    naive = naive_distance_to_default(
        equity_value=mk.equity_value,
        equity_volatility=mk.equity_volatility,
        face_value_debt=dp,
        horizon_years=case.pd.horizon_years,
        trailing_equity_return=mk.trailing_equity_return,
        risk_free_rate=mk.risk_free_rate,
    )
    try:
        merton = solve_merton(
            equity_value=mk.equity_value,
            equity_volatility=mk.equity_volatility,
            default_point=dp,
            risk_free_rate=mk.risk_free_rate,
            horizon_years=case.pd.horizon_years,
        )
        message = ""
    except ValueError as exc:
        if required:
            raise CaseError.single(
                "market",
                f"equity {mk.equity_value:g}, volatility {mk.equity_volatility:g}, default point {dp:g}",
                f"inputs for which the Merton equations have a solution ({exc})",
            ) from None
        merton, message = None, f"The Merton model could not be solved from the market data: {exc}"
    return MarketResult(default_point=dp, merton=merton, naive=naive, message=message)


def _balance_sheet(case: Case) -> tuple[AssetTrend, BalanceSheetPd, list[Caution]]:
    """Asset trend and balance-sheet PD; user-facing errors as CaseError."""
    cautions: list[Caution] = []
    settings = case.pd
    latest = case.statements[-1]
    trend = None
    try:
        trend = fit_asset_trend(
            years=[r.year for r in case.statements],
            total_assets=[r.total_assets for r in case.statements],
            window_years=settings.window_years,
            growth_override=settings.asset_growth,
            volatility_override=settings.asset_volatility,
        )
    except ValueError as exc:
        raise engine_error("statements", exc) from None
    cautions.extend(trend.cautions)
    try:
        bs = balance_sheet_pd(
            asset_value=latest.total_assets,
            asset_growth=trend.growth_used,
            asset_volatility=trend.volatility_used,
            short_term_liabilities=latest.short_term_liabilities,
            long_term_liabilities=latest.long_term_liabilities,
            short_term_share=settings.default_point.short_term_share,
            long_term_share=settings.default_point.long_term_share,
            horizon_years=settings.horizon_years,
        )
    except ValueError as exc:
        raise engine_error("pd.default_point", exc) from None
    return trend, bs, cautions


def term_structure(case: Case, pd: PdResult) -> PdTermStructure:
    """Cumulative PD for each year up to the longest facility maturity (at least the horizon).

    Parameters
    ----------
    case : Case
        The validated case.
    pd : PdResult
        The PD step's result.

    Returns
    -------
    PdTermStructure
        Cumulative, marginal and conditional PD by year [fraction].
    """
    longest = max([f.maturity_years for f in case.facilities] + [pd.horizon_years])
    years = max(1, math.ceil(longest - 1e-9))
    if pd.overridden:
        return constant_hazard_term_structure(
            pd=pd.pd, horizon_years=pd.horizon_years, years=years, basis="constant annual hazard from the override PD"
        )
    log_drift = pd.asset_return - pd.asset_volatility**2 / 2
    return structural_term_structure(
        asset_value=pd.asset_value,
        default_point=pd.default_point,
        log_drift=log_drift,
        asset_volatility=pd.asset_volatility,
        years=years,
        basis=f"structural model ({pd.measure} drift), default point held at today's value",
    )


def grade_pd(case: Case, pd: PdResult) -> tuple[PdResult, str]:
    """Grade the PD in force on the case's master scale (or the illustrative default).

    Parameters
    ----------
    case : Case
        The validated case.
    pd : PdResult
        The PD step's result.

    Returns
    -------
    tuple[PdResult, str]
        The PD result with its grade, and the scale's source (``case file`` or ``illustrative default``).
    """
    if case.pd.master_scale is not None:
        scale = master_scale_from_rows([r.model_dump() for r in case.pd.master_scale])
        source = "case file"
    else:
        scale, source = DEFAULT_MASTER_SCALE, "illustrative default"
    # Master scales are one-year scales: the one-year PD is graded.
    # A PD that underflows to 0 belongs to the best grade (lower bounds are exclusive).
    grade = assign_grade(max(pd.pd_one_year, 1e-300), scale)
    return replace(pd, grade=grade.grade, grade_lower=grade.pd_lower, grade_upper=grade.pd_upper), source
