"""The one orchestrator: a validated case in, frozen results out.

Runs the steps in order (trend -> PD -> one-year PD and grade -> exposure -> recovery -> loss ->
capital -> loss distribution -> pricing) and returns a new :class:`Results`; nothing else
changes. Every intermediate is kept so the workbench, the memo and the JSON can show their
working. The result types live in :mod:`engine.results`.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass

import numpy as np
from obligor_memo.engine import ENGINE_VERSION
from obligor_memo.engine.capital_step import allocate, capital_exposure, capital_figures, economic_basis
from obligor_memo.engine.case import Case, Facility, StatementRow, case_to_dict
from obligor_memo.engine.covenants import CovenantTest, covenant_tests
from obligor_memo.engine.credit_metrics import credit_metrics
from obligor_memo.engine.deal_pricing import DealPricing, PricingLine, deal_pricing, price_lines
from obligor_memo.engine.decision import CrossCheckGrade, cross_check_grades, unexplained_gaps
from obligor_memo.engine.errors import CaseError, Caution
from obligor_memo.engine.exposure import FacilityExposure, facility_exposure, resolve_ccf
from obligor_memo.engine.loss import borrower_unexpected_loss, expected_loss, unexpected_loss
from obligor_memo.engine.lossdist import loss_distribution
from obligor_memo.engine.pd_estimate import MarketResult, PdResult, engine_error, estimate_pd, grade_pd, term_structure
from obligor_memo.engine.recovery import (
    RecoveryLaw,
    collateral_cover,
    downturn_lgd,
    recovery_law,
    secured_supervisory_lgd,
    seniority_recovery_mean,
)
from obligor_memo.engine.results import FacilityResult, Results, Totals
from obligor_memo.engine.statements import statement_cautions, year_ratios
from obligor_memo.engine.structural import PdTermStructure
from obligor_memo.engine.zscore import Zone, ZScore, altman_scores

__all__ = ["Results", "FacilityResult", "Totals", "PdResult", "MarketResult", "evaluate", "estimate_pd", "fingerprint"]


@dataclass(frozen=True)
class PreparedFacility:
    """Exposure, recovery law and downturn LGD of one facility, before loss and capital."""

    exposure: FacilityExposure
    """Drawn, committed, CCF and EAD of the exposure step."""
    capital_exposure: FacilityExposure
    """On the CCFs of capital (``capital.capital_ccf``)."""
    law: RecoveryLaw
    """The effective recovery law (covered and uncovered parts)."""
    mean: float
    """Unsecured law's mean recovery [fraction]."""
    std: float
    """Unsecured law's recovery std [fraction]."""
    upper: float
    """Top of the unsecured law's support [fraction]."""
    source: str
    """Where the unsecured law's mean came from, in words."""
    collateral_value: float
    """After haircut [currency]."""
    cover: float
    """Share of EAD covered [fraction]."""
    secured_lgd: float
    """LGD of the covered part [fraction]."""
    downturn_lgd: float
    """Downturn LGD of the risk weight, before its [0, 1] bounds [fraction]."""


ZScoreYear = tuple[int, str, float | None, Zone | None]
"""One year's score of one Z-score variant: (year, variant, score, zone)."""


def canonical_case_json(case: Case) -> bytes:
    """The case as fingerprinted (and embedded in the memo): sorted keys, compact, ASCII.

    Parameters
    ----------
    case : Case
        A validated case.

    Returns
    -------
    bytes
        Its JSON (keys sorted, no blanks between items, non-ASCII escaped), ASCII-encoded.
    """
    text = json.dumps(case_to_dict(case), sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return text.encode("ascii")


def fingerprint(case: Case) -> str:
    """SHA-256 of :func:`canonical_case_json`.

    Parameters
    ----------
    case : Case
        A validated case.

    Returns
    -------
    str
        The digest as 64 lower-case hex digits.
    """
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

    Parameters
    ----------
    case : Case
        A validated case.
    detail : bool, optional
        Compute the Z-scores, the market cross-check and the charted loss curve as well.

    Returns
    -------
    Results
        Every step's figures, the cautions and the case itself.

    Raises
    ------
    CaseError
        If the inputs cannot be evaluated together (the message names the field, its value and what is allowed).
    """
    cautions: list[Caution] = statement_cautions(case)
    trend, pd, pd_cautions, market = estimate_pd(case, cross_check=detail)
    cautions.extend(pd_cautions)
    ts = term_structure(case, pd)
    pd, scale_source = grade_pd(case, pd)
    pd1 = pd.pd_one_year
    if pd.horizon_years != 1.0:
        cautions.append(
            Caution(
                "pd.one_year",
                f"Capital, the IRB EL and RAROC use the one-year PD "
                f"({pd1:.4%}, {pd.one_year_basis}); the {pd.horizon_years:g}-year PD "
                f"({pd.pd:.4%}) gives the horizon EL, UL, loss distribution and the grade "
                "is on the one-year PD.",
                "pd.horizon_years",
            )
        )
    if ts.running_max_from is not None:
        cautions.append(
            Caution(
                "pd.term_structure_flat",
                "The model's cumulative PD falls with time "
                f"after year {ts.running_max_from:g}; the term structure holds it at its "
                "running maximum (marginal PD 0 from there on), since a cumulative PD "
                "cannot fall.",
                "pd",
            )
        )
    zscores, z_history, z_cautions = _zscores(case) if detail else ((), (), [])
    cautions.extend(z_cautions)
    cross_checks = cross_check_grades(case, pd, zscores, market)
    cautions.extend(_cross_check_cautions(case, pd, cross_checks))

    prepared = [_prepare_facility(case, index, f, pd.grade, cautions) for index, f in enumerate(case.facilities)]
    laws = {item.exposure.id: item.law for item in prepared}
    cap = capital_figures(
        case,
        pd_one_year=pd1,
        capital_eads=[p.capital_exposure.ead for p in prepared],
        downturn_lgds=[p.downturn_lgd for p in prepared],
        economic_eads=[p.exposure.ead for p in prepared],
        mean_lgds=[p.law.lgd for p in prepared],
        cautions=cautions,
    )
    eads = [p.exposure.ead for p in prepared]
    law_list = [p.law for p in prepared]
    conf, join = case.capital.confidence, case.capital.recovery_join
    dist = loss_distribution(
        pd=pd.pd, exposures=eads, recovery_laws=law_list, confidence=conf, join=join, n_curve=61 if detail else 2
    )
    dist1 = (
        dist
        if pd1 == pd.pd
        else loss_distribution(pd=pd1, exposures=eads, recovery_laws=law_list, confidence=conf, join=join, n_curve=2)
    )
    if dist1.capital_floored:
        cautions.append(
            Caution(
                "capital.economic_floor",
                "The standalone economic capital is floored at "
                f"zero: the one-year PD ({pd1:.4%}) is at or below 1 - confidence "
                f"({1 - conf:.2%}), so the loss quantile is zero"
                + (
                    "; the single-factor capital in force is not."
                    if case.capital.economic_method == "single_factor"
                    else "."
                ),
                "capital.confidence",
            )
        )
    single_factor = [float(x) for x in cap.economic_single_factor]
    standalone = allocate(dist1.economic_capital, [p.exposure.ead * p.law.lgd for p in prepared])
    economic = single_factor if case.capital.economic_method == "single_factor" else standalone

    levels = [0.05, 0.25, 0.5, 0.75, 0.95]
    facilities: list[FacilityResult] = []
    for i, (f, item) in enumerate(zip(case.facilities, prepared)):
        exp, law, cexp = item.exposure, item.law, item.capital_exposure
        lgd, lgd_std = law.lgd, law.std()
        quantiles = {f"q{int(round(q * 100)):02d}": float(v) for q, v in zip(levels, np.atleast_1d(law.ppf(levels)))}
        facilities.append(
            FacilityResult(
                id=f.id,
                kind=f.kind,
                seniority=f.seniority,
                maturity_years=f.maturity_years,
                drawn=exp.drawn,
                committed=exp.committed,
                undrawn=exp.undrawn,
                ccf=exp.ccf,
                ccf_source=exp.ccf_source,
                ead=exp.ead,
                recovery_mean=item.mean,
                recovery_std=item.std,
                recovery_upper=item.upper,
                recovery_source=item.source,
                collateral_value=item.collateral_value,
                collateral_cover=item.cover,
                secured_lgd=item.secured_lgd,
                alpha=law.alpha,
                beta=law.beta,
                recovery_quantiles=quantiles,
                lgd=lgd,
                lgd_std=lgd_std,
                downturn_lgd=item.downturn_lgd,
                expected_loss=expected_loss(ead=exp.ead, pd=pd.pd, lgd=lgd),
                expected_loss_one_year=expected_loss(ead=exp.ead, pd=pd1, lgd=lgd),
                unexpected_loss=unexpected_loss(ead=exp.ead, pd=pd.pd, lgd=lgd, lgd_std=lgd_std),
                lifetime_expected_loss=exp.ead * lgd * _lifetime_pd_share(ts, f.maturity_years),
                capital_pd=float(cap.pd_used[i]),
                capital_ead=cexp.ead,
                capital_ccf=cexp.ccf,
                capital_lgd=float(cap.lgd[i]),
                capital_maturity=float(cap.maturity[i]),
                correlation=float(cap.correlation[i]),
                maturity_adjustment=float(cap.maturity_adjustment[i]),
                capital_k=float(cap.k[i]),
                risk_weight=float(cap.risk_weight[i]),
                rwa=float(cap.risk_weight[i]) * cexp.ead,
                regulatory_capital=float(cap.regulatory_capital[i]),
                regulatory_expected_loss=float(cap.regulatory_expected_loss[i]),
                economic_correlation=float(cap.economic_correlation[i]),
                economic_capital_single_factor=single_factor[i],
                economic_capital=economic[i],
            )
        )

    total_ead = sum(f.ead for f in facilities)
    total_el = sum(f.expected_loss for f in facilities)
    total = Totals(
        ead=total_ead,
        horizon_years=pd.horizon_years,
        pd_horizon=pd.pd,
        pd_one_year=pd1,
        expected_loss=total_el,
        expected_loss_one_year=sum(f.expected_loss_one_year for f in facilities),
        regulatory_expected_loss=sum(f.regulatory_expected_loss for f in facilities),
        el_rate=total_el / total_ead if total_ead > 0 else 0.0,
        unexpected_loss=borrower_unexpected_loss(
            eads=eads,
            lgds=[f.lgd for f in facilities],
            lgd_stds=[f.lgd_std for f in facilities],
            pd=pd.pd,
            join=join,
            laws=law_list,
        ),
        unexpected_loss_sum=sum(f.unexpected_loss for f in facilities),
        lifetime_expected_loss=sum(f.lifetime_expected_loss for f in facilities),
        rwa=sum(f.rwa for f in facilities),
        regulatory_capital=sum(f.regulatory_capital for f in facilities),
        value_at_risk=dist.var,
        expected_shortfall=dist.expected_shortfall,
        economic_method=case.capital.economic_method,
        economic_basis=economic_basis(case, float(cap.economic_correlation[0])),
        economic_capital=sum(economic),
        economic_capital_single_factor=sum(single_factor),
        economic_capital_standalone=dist1.economic_capital,
        economic_capital_floored=dist1.capital_floored,
    )
    pricing, pricing_cautions = _price(case, tuple(facilities), total)
    cautions.extend(pricing_cautions)
    covenants = covenant_tests(case.covenants, case.statements)
    cautions.extend(_covenant_cautions(covenants))
    return Results(
        engine_version=ENGINE_VERSION,
        fingerprint=fingerprint(case),
        case=case,
        trend=trend,
        ratios=year_ratios(case.statements),
        pd=pd,
        market=market,
        master_scale_source=scale_source,
        zscores=zscores,
        zscore_history=z_history,
        term_structure=ts,
        facilities=tuple(facilities),
        total=total,
        loss_distribution=dist,
        pricing=pricing,
        cautions=tuple(cautions),
        laws=laws,
        credit_metrics=credit_metrics(case.statements),
        covenants=covenants,
        cross_checks=cross_checks,
    )


def _cross_check_cautions(case: Case, pd: PdResult, checks: tuple[CrossCheckGrade, ...]) -> list[Caution]:
    """Cross-checks more than two notches from the grade need the analyst's explanation."""
    gaps = unexplained_gaps(checks, case.memo.cross_check_explanation)
    if not gaps:
        return []
    listed = "; ".join(
        f"{c.source}{' ' + c.reading if c.reading else ''}: grade {c.grade}, {abs(c.notches)} notches "
        f"{'worse' if c.notches > 0 else 'better'}"
        for c in gaps
    )
    return [
        Caution(
            "pd.cross_check_unexplained",
            f"The cross-checks differ from grade {pd.grade} by more than two notches ({listed}) and no "
            "explanation is recorded: the analyst must reconcile them in memo.cross_check_explanation.",
            "memo.cross_check_explanation",
        )
    ]


def _covenant_cautions(covenants: tuple[CovenantTest, ...]) -> list[Caution]:
    """A covenant breached on the latest year, or one the statements cannot test."""
    out = []
    for i, c in enumerate(covenants):
        limit = f"{'at most' if c.direction == 'max' else 'at least'} {c.threshold:g}"
        if c.breached:
            out.append(
                Caution(
                    "covenant.breached",
                    f"Covenant {c.label} {limit} is breached on {c.year}: the metric is {c.value:.2f}.",
                    f"covenants[{i}]",
                )
            )
        elif c.value is None:
            out.append(
                Caution("covenant.not_computable", f"Covenant {c.label} {limit}: {c.note}.", f"covenants[{i}].metric")
            )
    return out


def _prepare_facility(
    case: Case, index: int, f: Facility, grade: str | None, cautions: list[Caution]
) -> PreparedFacility:
    """Exposure, recovery law and downturn LGD of one facility."""
    ccf_table: list[tuple[str, float, str | None]] | None = (
        [(r.grade, r.ccf, r.kind) for r in case.exposure.ccf_by_grade] if case.exposure.ccf_by_grade else None
    )
    ccf, ccf_source = resolve_ccf(
        kind=f.kind,
        own_ccf=f.ccf,
        grade=grade,
        grade_table=ccf_table,
        standard=case.exposure.ccf_standard,
        maturity_years=f.maturity_years,
        cancellable=f.cancellable,
    )
    exp = facility_exposure(id=f.id, kind=f.kind, drawn=f.drawn, committed=f.committed, ccf=ccf, ccf_source=ccf_source)
    if f.drawn > f.committed:
        cautions.append(
            Caution(
                "exposure.overdrawn",
                f"Facility {f.id}: drawn exceeds committed; EAD is the drawn amount (no undrawn part).",
                f"facilities[{index}].drawn",
            )
        )
    coll = f.collateral
    if f.recovery is not None:
        mean, std, upper = f.recovery.mean, f.recovery.std, f.recovery.upper
        source = "set on the facility"
        if upper > 1.0:
            cautions.append(
                Caution(
                    "recovery.above_par",
                    f"Facility {f.id}: recoveries up to {upper:.0%} "
                    "of EAD (above par) are allowed, so the loss given default can be "
                    "negative in some outcomes; check the support against the "
                    "institution's recovery data.",
                    f"facilities[{index}].recovery.upper",
                )
            )
    else:
        # The uncovered part of a secured facility with a collateral block recovers as unsecured:
        # the secured LGD is applied to the covered part only (see engine.recovery).
        seniority = "senior_unsecured" if (f.seniority == "senior_secured" and coll) else f.seniority
        mean, source = seniority_recovery_mean(seniority, case.lgd.standard)
        std, upper = case.lgd.default_recovery_std, 1.0
        limit = math.sqrt(mean * (1 - mean))
        if std >= limit:
            raise CaseError.single(
                "lgd.default_recovery_std",
                std,
                f"below {limit:.4f} for the default mean recovery {mean:.2f} of facility {f.id}",
            )
    secured_lgd, _ = secured_supervisory_lgd(case.lgd.standard)
    cover = collateral_cover(collateral_value=coll.value, haircut=coll.haircut, ead=exp.ead) if coll else 0.0
    try:
        law = recovery_law(mean=mean, std=std, upper=upper, collateral_cover=cover, secured_recovery=1.0 - secured_lgd)
    except ValueError as exc:
        where = f"facilities[{index}].recovery" if f.recovery is not None else "lgd.default_recovery_std"
        raise engine_error(where, exc) from None
    dt = case.lgd.downturn
    return PreparedFacility(
        exposure=exp,
        capital_exposure=capital_exposure(case, f, exp),
        law=law,
        mean=mean,
        std=std,
        upper=upper,
        source=source,
        collateral_value=coll.value * (1 - coll.haircut) if coll else 0.0,
        cover=cover,
        secured_lgd=secured_lgd if cover > 0 else 0.0,
        downturn_lgd=downturn_lgd(law, method=dt.method, quantile=dt.quantile, add_on=dt.add_on),
    )


def _zscores(case: Case) -> tuple[tuple[ZScore, ...], tuple[ZScoreYear, ...], list[Caution]]:
    """Altman Z-scores for the latest year, and the book-based variants for every year."""
    cautions: list[Caution] = []
    equity = case.market.equity_value if case.market else None

    def scores(row: StatementRow, market_equity: float | None) -> tuple[ZScore, ...]:
        return altman_scores(
            total_assets=row.total_assets,
            working_capital=row.working_capital,
            retained_earnings=row.retained_earnings,
            ebit=row.ebit,
            sales=row.sales,
            market_equity=market_equity,
            book_equity=row.book_equity,
            total_liabilities=row.total_liabilities or (row.short_term_liabilities + row.long_term_liabilities),
        )

    try:
        latest = scores(case.statements[-1], equity)
        history = tuple(
            (row.year, z.variant, z.score, z.zone)
            for row in case.statements
            for z in scores(row, None)
            if z.score is not None
        )
    except ValueError as exc:
        raise engine_error("statements", exc) from None
    unscored = [z.variant for z in latest if z.score is None and not z.missing]
    if unscored:
        cautions.append(
            Caution(
                "zscore.not_finite",
                f"{', '.join(unscored)} not computed: the "
                "ratios of the latest year are too extreme to give a finite score.",
                "statements",
            )
        )
    missing = sorted({m for z in latest for m in z.missing})
    if missing:
        cautions.append(
            Caution(
                "zscore.missing",
                f"Z-score variants not computed for lack of the columns: {', '.join(missing)}.",
                "statements",
            )
        )
    return latest, history, cautions


def _price(
    case: Case, facilities: tuple[FacilityResult, ...], total: Totals
) -> tuple[DealPricing | None, list[Caution]]:
    """RAROC per facility and for the relationship, each rate on the amount it accrues on."""
    p = case.pricing
    if p is None:
        return None, []
    keys = (
        "proposed_spread",
        "fee_rate",
        "commitment_fee_rate",
        "issuance_fee_rate",
        "funding_spread",
        "operating_cost_rate",
    )
    lines = []
    for spec, f in zip(case.facilities, facilities):
        own = spec.pricing
        rate = {k: getattr(own, k) if own is not None and getattr(own, k) is not None else getattr(p, k) for k in keys}
        lines.append(
            PricingLine(
                id=f.id,
                kind=f.kind,
                drawn=f.drawn,
                undrawn=f.undrawn,
                ead=f.ead,
                expected_loss=f.expected_loss_one_year,
                capital_regulatory=f.regulatory_capital,
                capital_economic=f.economic_capital,
                **rate,
            )
        )
    per_facility, relationship = price_lines(
        lines,
        base_rate=p.base_rate,
        capital_return_rate=p.capital_return_rate,
        hurdle_rate=p.hurdle_rate,
        capital_basis=p.capital_basis,
        deal_spread=p.proposed_spread,
    )
    label = (
        "regulatory capital (8 % of RWA, one-year PD)"
        if p.capital_basis == "regulatory"
        else f"economic capital ({total.economic_method.replace('_', '-')}, one-year PD)"
    )
    cautions = []
    if relationship.raroc is None:
        cautions.append(
            Caution(
                "pricing.undefined",
                f"RAROC is undefined: the {p.capital_basis} capital "
                "is zero. The minimum spread is still computed; choose the other "
                "pricing.capital_basis or review the inputs.",
                "pricing.capital_basis",
            )
        )
    return deal_pricing(per_facility, relationship, rates={k: getattr(p, k) for k in keys}, label=label), cautions
