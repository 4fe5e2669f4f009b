"""The one orchestrator: a validated case in, frozen results out.

Runs the steps in order (trend -> PD -> grade -> exposure -> recovery -> loss -> capital ->
loss distribution -> pricing) and returns a new :class:`Results`; nothing else changes.
Every intermediate is kept so the workbench, the memo and the JSON can show their working.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass, field, fields, is_dataclass
from typing import Any

import numpy as np

from engine import ENGINE_VERSION
from engine.case import Case, case_to_dict
from engine.errors import CaseError, Caution
from engine.capital import irb_corporate_capital
from engine.market import MertonSolution, NaiveDD, naive_distance_to_default, solve_merton
from engine.grading import DEFAULT_MASTER_SCALE, assign_grade, master_scale_from_rows
from engine.exposure import facility_exposure, resolve_ccf
from engine.lossdist import LossDistribution, loss_distribution
from engine.pricing import PricingResult, price_borrower
from engine.loss import borrower_unexpected_loss, expected_loss, unexpected_loss
from engine.recovery import (RecoveryLaw, collateral_cover, downturn_lgd, recovery_law,
                             seniority_recovery_mean)
from engine.statements import YearRatios, year_ratios
from engine.structural import (PdTermStructure, balance_sheet_pd, constant_hazard_term_structure,
                               structural_term_structure)
from engine.trend import AssetTrend, fit_asset_trend
from engine.zscore import ZScore, altman_scores


@dataclass(frozen=True)
class PdResult:
    """The PD in force and how it was reached. Rates [fraction], money [currency]."""

    method: str                      # balance_sheet | market
    measure: str                     # physical | risk_neutral
    asset_value: float
    asset_growth: float | None       # [1/year] (balance sheet)
    asset_volatility: float          # [1/sqrt(year)]
    asset_return: float              # drift used in DD [1/year]
    default_point: float
    short_term_share: float
    long_term_share: float
    horizon_years: float
    distance_to_default: float
    model_pd: float                  # the model's PD
    pd: float                        # the PD in force (override where set)
    overridden: bool
    override_reason: str | None
    grade: str | None
    grade_lower: float | None        # band (lower, upper] of the grade
    grade_upper: float | None


@dataclass(frozen=True)
class MarketResult:
    """Market-implied PD (Merton 1974) and the naive cross-check (Bharath and Shumway 2008)."""

    default_point: float             # the debt barrier D [currency]
    merton: MertonSolution | None    # None when the solve failed (see message)
    naive: NaiveDD
    message: str                     # "" or why the Merton solve failed


@dataclass(frozen=True)
class FacilityResult:
    id: str
    kind: str
    seniority: str
    maturity_years: float
    drawn: float
    committed: float
    undrawn: float
    ccf: float
    ccf_source: str
    ead: float
    recovery_mean: float             # unsecured law's mean [fraction]
    recovery_std: float
    recovery_upper: float
    recovery_source: str
    collateral_value: float          # after haircut [currency]
    collateral_cover: float          # share of EAD covered [fraction]
    alpha: float | None              # beta law (None: point mass)
    beta: float | None
    recovery_quantiles: dict[str, float]   # of the effective recovery law
    lgd: float                       # 1 - effective mean recovery
    lgd_std: float
    downturn_lgd: float              # LGD used for capital
    expected_loss: float
    unexpected_loss: float
    lifetime_expected_loss: float    # sum over years to maturity of marginal PD x LGD x EAD
    capital_pd: float                # PD in force after the floor [fraction]
    capital_maturity: float          # M clamped to [1, 5] [years]
    correlation: float               # IRB asset correlation (after any firm-size adjustment)
    maturity_adjustment: float
    capital_k: float                 # capital per unit EAD [fraction]
    risk_weight: float               # 12.5 x K (x 1.06 when chosen) [fraction]
    rwa: float                       # risk weight x EAD [currency]
    regulatory_capital: float        # K x EAD [currency]


@dataclass(frozen=True)
class Totals:
    ead: float
    expected_loss: float
    el_rate: float                   # EL / EAD [fraction]
    unexpected_loss: float
    lifetime_expected_loss: float
    rwa: float
    regulatory_capital: float        # sum K x EAD (= 8 % of RWA without the scaling factor)
    value_at_risk: float             # q-quantile of the borrower's loss
    expected_shortfall: float
    economic_capital: float          # max(VaR - EL, 0)
    economic_capital_floored: bool


@dataclass(frozen=True)
class Results:
    engine_version: str
    fingerprint: str                 # SHA-256 of the canonical case JSON
    case: Case
    trend: AssetTrend | None
    ratios: tuple[YearRatios, ...]
    pd: PdResult
    market: MarketResult | None      # when the case has a market block
    master_scale_source: str         # "case file" or "illustrative default"
    zscores: tuple[ZScore, ...]      # latest year
    zscore_history: tuple[tuple[int, str, float | None, str | None], ...]  # (year, variant, score, zone)
    term_structure: PdTermStructure
    facilities: tuple[FacilityResult, ...]
    total: Totals
    loss_distribution: LossDistribution
    pricing: PricingResult | None
    cautions: tuple[Caution, ...]
    laws: dict[str, RecoveryLaw] = field(repr=False, compare=False)
    # What-if layers, attached by engine.analysis.analyse (None after a plain evaluate):
    sensitivity: Any = None          # engine.sensitivity.OneWaySensitivity
    pd_grid: Any = None              # engine.sensitivity.PdGrid
    scenarios: Any = None            # tuple[engine.scenarios.ScenarioResult, ...]

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready data: the contract of ``evaluate --json`` plus every intermediate."""
        out: dict[str, Any] = {"engine_version": self.engine_version, "fingerprint": self.fingerprint}
        for f in fields(self):
            if f.name in ("engine_version", "fingerprint", "laws"):
                continue
            value = getattr(self, f.name)
            out[f.name] = case_to_dict(value) if isinstance(value, Case) else _plain(value)
        return out


def _plain(value: Any) -> Any:
    """Dataclasses, mappings, sequences and numpy values as JSON-ready Python data."""
    if is_dataclass(value) and not isinstance(value, type):
        return {f.name: _plain(getattr(value, f.name)) for f in fields(value) if f.repr}
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if hasattr(value, "tolist"):  # numpy arrays and scalars
        return _plain(value.tolist())
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def fingerprint(case: Case) -> str:
    canonical = json.dumps(case_to_dict(case), sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(canonical.encode("ascii")).hexdigest()


def _engine_error(field: str, exc: ValueError) -> CaseError:
    """A step's ValueError ("path: got V; allowed: A") as a CaseError on that path (else ``field``)."""
    text = str(exc)
    head, _, rest = text.partition(": ")
    if rest and " " not in head:
        field, text = head, rest
    value, allowed = "", text
    if text.startswith("got "):
        value_part, _, allowed_part = text[4:].partition("; allowed: ")
        value = value_part.split(" as the ")[0].split(" (")[0]
        allowed = allowed_part or text
    elif "allowed: " in text:
        allowed = text.split("allowed: ", 1)[1]
    return CaseError.single(field, value, allowed)


def estimate_pd(case: Case) -> tuple[AssetTrend | None, PdResult, MarketResult | None, list[Caution]]:
    """Asset trend, the balance-sheet PD, and the market-implied PD where market data exist."""
    settings = case.pd
    latest = case.statements[-1]
    if settings.method == "market":
        trend, cautions = None, []
        try:
            trend, _, _ = _balance_sheet(case)
        except CaseError as exc:  # the trend is context only here: say why it is missing
            cautions.append(Caution("trend.unavailable", "No asset trend: " + exc.problems[0].allowed,
                                    "statements"))
        market = _market(case, required=True)
        m = market.merton
        measure = settings.measure
        drift = case.market.risk_free_rate
        if measure == "physical":
            drift = case.market.asset_drift if case.market.asset_drift is not None else (
                trend.expected_return if trend is not None else None)
            if drift is None:
                raise CaseError.single("pd.measure", "physical", "risk_neutral, or physical together "
                                       "with market.asset_drift or enough statements for a trend")
            if case.market.asset_drift is None:
                cautions.append(Caution("market.drift_from_trend", "The physical market PD uses the "
                                        f"balance-sheet asset return ({drift:.2%}) as its drift.",
                                        "market.asset_drift"))
        result = PdResult(
            method="market", measure=measure, asset_value=m.asset_value,
            asset_growth=trend.growth_used if trend else None, asset_volatility=m.asset_volatility,
            asset_return=drift, default_point=market.default_point,
            short_term_share=settings.default_point.short_term_share,
            long_term_share=settings.default_point.long_term_share, horizon_years=settings.horizon_years,
            distance_to_default=m.distance_to_default if measure == "risk_neutral" else
            (math.log(m.asset_value / market.default_point) + (drift - m.asset_volatility**2 / 2)
             * settings.horizon_years) / (m.asset_volatility * math.sqrt(settings.horizon_years)),
            model_pd=0.0, pd=0.0, overridden=False, override_reason=None,
            grade=None, grade_lower=None, grade_upper=None)
        from dataclasses import replace
        from engine.structural import pd_from_distance

        model_pd = pd_from_distance(result.distance_to_default)
        result = replace(result, model_pd=model_pd, pd=model_pd)
        return trend, *_with_override(settings, result, cautions), market
    trend, bs, cautions = _balance_sheet(case)
    result = PdResult(
        method="balance_sheet", measure="physical", asset_value=bs.asset_value,
        asset_growth=bs.asset_growth, asset_volatility=bs.asset_volatility,
        asset_return=bs.asset_return, default_point=bs.default_point,
        short_term_share=bs.short_term_share, long_term_share=bs.long_term_share,
        horizon_years=bs.horizon_years, distance_to_default=bs.distance_to_default,
        model_pd=bs.pd, pd=bs.pd, overridden=False, override_reason=None,
        grade=None, grade_lower=None, grade_upper=None)
    market = _market(case, required=False) if case.market is not None else None
    if market is not None and market.message:
        cautions.append(Caution("market.unsolved", market.message, "market"))
    return trend, *_with_override(settings, result, cautions), market


def _with_override(settings, result: PdResult, cautions: list[Caution]) -> tuple[PdResult, list[Caution]]:
    from dataclasses import replace

    if settings.override is None:
        return result, cautions
    cautions.append(Caution("pd.override", f"The analyst's PD of {settings.override:.4%} is used "
                            f"instead of the model's {result.model_pd:.4%}. Reason: "
                            f"{settings.override_reason}", "pd.override"))
    return replace(result, pd=settings.override, overridden=True,
                   override_reason=settings.override_reason), cautions


def _market(case: Case, *, required: bool) -> MarketResult:
    """Solve the Merton model with the balance-sheet default point as the debt barrier."""
    mk = case.market
    latest = case.statements[-1]
    dp = (case.pd.default_point.short_term_share * latest.short_term_liabilities
          + case.pd.default_point.long_term_share * latest.long_term_liabilities)
    naive = naive_distance_to_default(equity_value=mk.equity_value, equity_volatility=mk.equity_volatility,
                                      face_value_debt=dp, horizon_years=case.pd.horizon_years,
                                      trailing_equity_return=mk.trailing_equity_return,
                                      risk_free_rate=mk.risk_free_rate)
    try:
        merton = solve_merton(equity_value=mk.equity_value, equity_volatility=mk.equity_volatility,
                              default_point=dp, risk_free_rate=mk.risk_free_rate,
                              horizon_years=case.pd.horizon_years)
        message = ""
    except ValueError as exc:
        if required:
            raise CaseError.single("market", f"equity {mk.equity_value:g}, volatility "
                                   f"{mk.equity_volatility:g}, default point {dp:g}",
                                   f"inputs for which the Merton equations have a solution ({exc})") from None
        merton, message = None, f"The Merton model could not be solved from the market data: {exc}"
    return MarketResult(default_point=dp, merton=merton, naive=naive, message=message)


def _balance_sheet(case: Case):
    """Asset trend and balance-sheet PD; user-facing errors as CaseError."""
    cautions: list[Caution] = []
    settings = case.pd
    latest = case.statements[-1]
    trend = None
    try:
        trend = fit_asset_trend(years=[r.year for r in case.statements],
                                total_assets=[r.total_assets for r in case.statements],
                                window_years=settings.window_years,
                                growth_override=settings.asset_growth,
                                volatility_override=settings.asset_volatility)
    except ValueError as exc:
        raise _engine_error("statements", exc) from None
    cautions.extend(trend.cautions)
    try:
        bs = balance_sheet_pd(asset_value=latest.total_assets, asset_growth=trend.growth_used,
                              asset_volatility=trend.volatility_used,
                              short_term_liabilities=latest.short_term_liabilities,
                              long_term_liabilities=latest.long_term_liabilities,
                              short_term_share=settings.default_point.short_term_share,
                              long_term_share=settings.default_point.long_term_share,
                              horizon_years=settings.horizon_years)
    except ValueError as exc:
        raise _engine_error("pd.default_point", exc) from None
    return trend, bs, cautions


def term_structure(case: Case, pd: PdResult) -> PdTermStructure:
    """Cumulative PD for each year up to the longest facility maturity (at least the horizon)."""
    longest = max([f.maturity_years for f in case.facilities] + [pd.horizon_years])
    years = max(1, math.ceil(longest - 1e-9))
    if pd.overridden:
        return constant_hazard_term_structure(pd=pd.pd, horizon_years=pd.horizon_years, years=years,
                                              basis="constant annual hazard from the override PD")
    log_drift = pd.asset_return - pd.asset_volatility**2 / 2
    return structural_term_structure(asset_value=pd.asset_value, default_point=pd.default_point,
                                     log_drift=log_drift, asset_volatility=pd.asset_volatility,
                                     years=years, basis=f"structural model ({pd.measure} drift), "
                                     "default point held at today's value")


def _lifetime_pd_share(ts: PdTermStructure, maturity_years: float) -> float:
    """Cumulative PD to maturity, interpolating the final part-year linearly in the marginal PD."""
    whole = int(math.floor(maturity_years + 1e-9))
    part = maturity_years - whole
    total = sum(ts.marginal[:whole])
    if part > 1e-9 and whole < len(ts.marginal):
        total += part * ts.marginal[whole]
    return total


def evaluate(case: Case) -> Results:
    """Run every step on a validated case. User mistakes surface as CaseError, never tracebacks."""
    cautions: list[Caution] = []
    trend, pd, pd_cautions, market = estimate_pd(case)
    cautions.extend(pd_cautions)
    pd, scale_source = _graded(case, pd)
    ts = term_structure(case, pd)
    zscores, z_history, z_cautions = _zscores(case)
    cautions.extend(z_cautions)

    prepared = [_prepare_facility(case, index, f, pd.grade, cautions)
                for index, f in enumerate(case.facilities)]
    laws = {item["exposure"].id: item["law"] for item in prepared}
    # One vectorised call for every facility's risk weight.
    # A PD that underflows to 0 is below every floor; the floor then sets the capital PD.
    cap = irb_corporate_capital(pd=np.full(len(prepared), max(pd.pd, 1e-300)),
                                lgd=np.array([item["downturn_lgd"] for item in prepared]),
                                maturity_years=np.array([f.maturity_years for f in case.facilities]),
                                annual_sales_eur_millions=case.capital.annual_sales_eur_millions,
                                pd_floor=case.capital.pd_floor,
                                scaling_factor=1.06 if case.capital.scaling_factor else 1.0)
    if bool(np.any(cap.floor_binds)):
        cautions.append(Caution("capital.pd_floor", f"The PD floor of {case.capital.pd_floor:.2%} "
                                f"binds in the risk weights (PD in force {pd.pd:.4%}).", "capital.pd_floor"))
    levels = np.array([0.05, 0.25, 0.5, 0.75, 0.95])
    facilities: list[FacilityResult] = []
    for i, (f, item) in enumerate(zip(case.facilities, prepared)):
        exp, law = item["exposure"], item["law"]
        lgd, lgd_std = law.lgd, law.std()
        quantiles = {f"q{int(round(q * 100)):02d}": float(v) for q, v in zip(levels, law.ppf(levels))}
        facilities.append(FacilityResult(
            id=f.id, kind=f.kind, seniority=f.seniority, maturity_years=f.maturity_years,
            drawn=exp.drawn, committed=exp.committed, undrawn=exp.undrawn, ccf=exp.ccf,
            ccf_source=exp.ccf_source, ead=exp.ead, recovery_mean=item["mean"], recovery_std=item["std"],
            recovery_upper=item["upper"], recovery_source=item["source"],
            collateral_value=item["collateral_value"], collateral_cover=item["cover"],
            alpha=law.alpha, beta=law.beta, recovery_quantiles=quantiles,
            lgd=lgd, lgd_std=lgd_std, downturn_lgd=item["downturn_lgd"],
            expected_loss=expected_loss(ead=exp.ead, pd=pd.pd, lgd=lgd),
            unexpected_loss=unexpected_loss(ead=exp.ead, pd=pd.pd, lgd=lgd, lgd_std=lgd_std),
            lifetime_expected_loss=exp.ead * lgd * _lifetime_pd_share(ts, f.maturity_years),
            capital_pd=float(cap.pd_used[i]), capital_maturity=float(cap.maturity_used[i]),
            correlation=float(cap.correlation[i]), maturity_adjustment=float(cap.maturity_adjustment[i]),
            capital_k=float(cap.k[i]), risk_weight=float(cap.risk_weight[i]),
            rwa=float(cap.risk_weight[i]) * exp.ead, regulatory_capital=float(cap.k[i]) * exp.ead,
        ))

    total_ead = sum(f.ead for f in facilities)
    total_el = sum(f.expected_loss for f in facilities)
    dist = loss_distribution(pd=pd.pd, exposures=[f.ead for f in facilities],
                             recovery_laws=[laws[f.id] for f in facilities],
                             confidence=case.capital.confidence, join=case.capital.recovery_join,
                             n_curve=121)
    if dist.capital_floored:
        cautions.append(Caution("capital.economic_floor", "Economic capital is floored at zero: the "
                                f"PD in force ({pd.pd:.4%}) is at or below 1 - confidence "
                                f"({1 - case.capital.confidence:.2%}), so the loss quantile is zero.",
                                "capital.confidence"))
    total = Totals(
        ead=total_ead, expected_loss=total_el, el_rate=total_el / total_ead if total_ead > 0 else 0.0,
        unexpected_loss=borrower_unexpected_loss(
            eads=[f.ead for f in facilities], lgds=[f.lgd for f in facilities],
            lgd_stds=[f.lgd_std for f in facilities], pd=pd.pd, join=case.capital.recovery_join),
        lifetime_expected_loss=sum(f.lifetime_expected_loss for f in facilities),
        rwa=sum(f.rwa for f in facilities),
        regulatory_capital=sum(f.regulatory_capital for f in facilities),
        value_at_risk=dist.var, expected_shortfall=dist.expected_shortfall,
        economic_capital=dist.economic_capital, economic_capital_floored=dist.capital_floored,
    )
    pricing, pricing_cautions = _price(case, total)
    cautions.extend(pricing_cautions)
    return Results(engine_version=ENGINE_VERSION, fingerprint=fingerprint(case), case=case, trend=trend,
                   ratios=year_ratios(case.statements), pd=pd, market=market, master_scale_source=scale_source,
                   zscores=zscores, zscore_history=z_history, term_structure=ts,
                   facilities=tuple(facilities), total=total, loss_distribution=dist, pricing=pricing,
                   cautions=tuple(cautions), laws=laws)


def _prepare_facility(case: Case, index: int, f, grade: str | None,
                      cautions: list[Caution]) -> dict[str, Any]:
    """Exposure, recovery law and downturn LGD of one facility."""
    ccf_table = ([(r.grade, r.ccf, r.kind) for r in case.exposure.ccf_by_grade]
                 if case.exposure.ccf_by_grade else None)
    ccf, ccf_source = resolve_ccf(kind=f.kind, own_ccf=f.ccf, grade=grade, grade_table=ccf_table,
                                  standard=case.exposure.ccf_standard,
                                  maturity_years=f.maturity_years, cancellable=f.cancellable)
    exp = facility_exposure(id=f.id, kind=f.kind, drawn=f.drawn, committed=f.committed, ccf=ccf,
                            ccf_source=ccf_source)
    if f.drawn > f.committed:
        cautions.append(Caution("exposure.overdrawn", f"Facility {f.id}: drawn exceeds committed; "
                                "EAD is the drawn amount (no undrawn part).", f"facilities[{index}].drawn"))
    if f.recovery is not None:
        mean, std, upper = f.recovery.mean, f.recovery.std, f.recovery.upper
        source = "set on the facility"
    else:
        mean, source = seniority_recovery_mean(f.seniority, case.lgd.standard)
        std, upper = case.lgd.default_recovery_std, 1.0
        limit = math.sqrt(mean * (1 - mean))
        if std >= limit:
            raise CaseError.single("lgd.default_recovery_std", std,
                                   f"below {limit:.4f} for the default mean recovery {mean:.2f} "
                                   f"of facility {f.id}")
    coll = f.collateral
    cover = collateral_cover(collateral_value=coll.value, haircut=coll.haircut, ead=exp.ead) if coll else 0.0
    law = recovery_law(mean=mean, std=std, upper=upper, collateral_cover=cover)
    dt = case.lgd.downturn
    return {"exposure": exp, "law": law, "mean": mean, "std": std, "upper": upper, "source": source,
            "collateral_value": coll.value * (1 - coll.haircut) if coll else 0.0, "cover": cover,
            "downturn_lgd": downturn_lgd(law, method=dt.method, quantile=dt.quantile, add_on=dt.add_on)}


def _graded(case: Case, pd: PdResult) -> tuple[PdResult, str]:
    """Grade the PD in force on the case's master scale (or the illustrative default)."""
    from dataclasses import replace

    if case.pd.master_scale is not None:
        scale = master_scale_from_rows([r.model_dump() for r in case.pd.master_scale])
        source = "case file"
    else:
        scale, source = DEFAULT_MASTER_SCALE, "illustrative default"
    # A PD that underflows to 0 belongs to the best grade (lower bounds are exclusive).
    grade = assign_grade(max(pd.pd, 1e-300), scale)
    return replace(pd, grade=grade.grade, grade_lower=grade.pd_lower, grade_upper=grade.pd_upper), source


def _zscores(case: Case):
    """Altman Z-scores for the latest year, and the book-based variants for every year."""
    cautions: list[Caution] = []
    equity = case.market.equity_value if case.market else None

    def scores(row, market_equity):
        return altman_scores(total_assets=row.total_assets, working_capital=row.working_capital,
                             retained_earnings=row.retained_earnings, ebit=row.ebit, sales=row.sales,
                             market_equity=market_equity, book_equity=row.book_equity,
                             total_liabilities=row.total_liabilities
                             or (row.short_term_liabilities + row.long_term_liabilities))
    try:
        latest = scores(case.statements[-1], equity)
        history = tuple((row.year, z.variant, z.score, z.zone)
                        for row in case.statements for z in scores(row, None) if z.score is not None)
    except ValueError as exc:
        raise _engine_error("statements", exc) from None
    missing = sorted({m for z in latest for m in z.missing})
    if missing:
        cautions.append(Caution("zscore.missing", "Z-score variants not computed for lack of the "
                                f"columns: {', '.join(missing)}.", "statements"))
    return latest, history, cautions


def _price(case: Case, total: Totals) -> tuple[PricingResult | None, list[Caution]]:
    """RAROC on the borrower's total EAD with the capital basis the case chooses."""
    p = case.pricing
    if p is None:
        return None, []
    capital = total.economic_capital if p.capital_basis == "economic" else total.regulatory_capital
    if capital <= 0 or total.ead <= 0:
        return None, [Caution("pricing.undefined", f"RAROC is undefined: {p.capital_basis} capital is "
                              "zero. Choose pricing.capital_basis: regulatory, or review the inputs.",
                              "pricing.capital_basis")]
    result = price_borrower(exposure=total.ead, proposed_spread=p.proposed_spread, fee_rate=p.fee_rate,
                            base_rate=p.base_rate, funding_spread=p.funding_spread,
                            operating_cost_rate=p.operating_cost_rate, expected_loss=total.expected_loss,
                            capital=min(capital, total.ead), capital_return_rate=p.capital_return_rate,
                            hurdle_rate=p.hurdle_rate)
    return result, []
