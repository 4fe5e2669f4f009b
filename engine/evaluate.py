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

from obligor_memo.engine import ENGINE_VERSION
from obligor_memo.engine.capital import irb_corporate_capital
from obligor_memo.engine.case import Case, case_to_dict
from obligor_memo.engine.errors import CaseError, Caution
from obligor_memo.engine.exposure import facility_exposure, resolve_ccf
from obligor_memo.engine.loss import borrower_unexpected_loss, expected_loss, unexpected_loss
from obligor_memo.engine.lossdist import LossDistribution, loss_distribution
from obligor_memo.engine.pd_estimate import (MarketResult, PdResult, engine_error, estimate_pd, grade_pd,
                                term_structure)
from obligor_memo.engine.pricing import PricingResult, price_borrower
from obligor_memo.engine.recovery import (RecoveryLaw, collateral_cover, downturn_lgd, recovery_law,
                             seniority_recovery_mean)
from obligor_memo.engine.statements import YearRatios, year_ratios
from obligor_memo.engine.structural import PdTermStructure
from obligor_memo.engine.trend import AssetTrend
from obligor_memo.engine.zscore import ZScore, altman_scores

__all__ = ["Results", "FacilityResult", "Totals", "PdResult", "MarketResult", "evaluate", "estimate_pd",
           "fingerprint"]


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
    unexpected_loss: float           # std of the borrower's loss, recoveries joined as the case says
    unexpected_loss_sum: float       # sum of the facilities' ULs (the perfect-correlation figure)
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


def canonical_case_json(case: Case) -> bytes:
    """The case as fingerprinted (and embedded in the memo): sorted keys, compact, ASCII."""
    text = json.dumps(case_to_dict(case), sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return text.encode("ascii")


def fingerprint(case: Case) -> str:
    """SHA-256 of :func:`canonical_case_json`."""
    return hashlib.sha256(canonical_case_json(case)).hexdigest()


def _lifetime_pd_share(ts: PdTermStructure, maturity_years: float) -> float:
    """Cumulative PD to maturity, interpolating the final part-year linearly in the marginal PD."""
    whole = int(math.floor(maturity_years + 1e-9))
    part = maturity_years - whole
    total = sum(ts.marginal[:whole])
    if part > 1e-9 and whole < len(ts.marginal):
        total += part * ts.marginal[whole]
    return total


def evaluate(case: Case, *, detail: bool = True) -> Results:
    """Run every step on a validated case. User mistakes surface as CaseError, never tracebacks.

    ``detail=False`` is for loops that read only the headline figures (sensitivities): it skips
    the Z-scores, the market cross-check of a balance-sheet PD and the charted loss curve; every
    headline figure (PD, EAD, EL, UL, RWA, VaR, economic capital, RAROC) is the same.
    """
    cautions: list[Caution] = []
    trend, pd, pd_cautions, market = estimate_pd(case, cross_check=detail)
    cautions.extend(pd_cautions)
    pd, scale_source = grade_pd(case, pd)
    ts = term_structure(case, pd)
    zscores, z_history, z_cautions = _zscores(case) if detail else ((), (), [])
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
                             n_curve=61 if detail else 2)
    if dist.capital_floored:
        cautions.append(Caution("capital.economic_floor", "Economic capital is floored at zero: the "
                                f"PD in force ({pd.pd:.4%}) is at or below 1 - confidence "
                                f"({1 - case.capital.confidence:.2%}), so the loss quantile is zero.",
                                "capital.confidence"))
    total = Totals(
        ead=total_ead, expected_loss=total_el, el_rate=total_el / total_ead if total_ead > 0 else 0.0,
        unexpected_loss=borrower_unexpected_loss(
            eads=[f.ead for f in facilities], lgds=[f.lgd for f in facilities],
            lgd_stds=[f.lgd_std for f in facilities], pd=pd.pd, join=case.capital.recovery_join,
            laws=[laws[f.id] for f in facilities]),
        unexpected_loss_sum=sum(f.unexpected_loss for f in facilities),
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
        raise engine_error("statements", exc) from None
    unscored = [z.variant for z in latest if z.score is None and not z.missing]
    if unscored:
        cautions.append(Caution("zscore.not_finite", f"{', '.join(unscored)} not computed: the "
                                "ratios of the latest year are too extreme to give a finite score.",
                                "statements"))
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
