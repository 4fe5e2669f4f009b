"""The capital step of one evaluation: regulatory (Basel IRB, foundation options) and economic.

Every capital figure is a one-year figure on the one-year PD in force (CRE32.3; Basel II
para 285). Conventions, each chosen by the case (``capital.*``) and printed with the result:

* effective maturity: 2.5 years in the foundation approach (Basel II para 318; CRE32.44, from
  memory) unless ``capital.effective_maturity: own`` takes the facility's maturity in [1, 5];
* CCFs of the capital EAD: the exposure step's (``exposure``) or the foundation-IRB factors
  (``foundation``): Basel II para 311, commitments 75 % whatever their maturity, unconditionally
  cancellable 0 %; Basel III aligns the foundation CCFs with the standardised ones (CRE32.29,
  from memory), so ``foundation`` then equals the standardised presets;
* regulatory capital = 8 % of RWA = K x scaling factor x EAD: the 1.06 factor (Basel II para 44)
  scales RWA and so the capital, one definition everywhere;
* IRB EL = PD x LGD x EAD with the PD floor applied (CRE32.4 floors the PD of the EL too)
  unless ``capital.el_pd_floor: false``; the LGD is the risk weight's (downturn) LGD;
* economic capital ``single_factor`` (default): the one-factor (Vasicek / ASRF) capital at the
  confidence with the IRB corporate correlation of the one-year PD (or
  ``capital.economic_correlation``) and the mean LGD, per facility, the IRB maturity adjustment
  when ``capital.economic_maturity_adjustment``; ``standalone``: max(VaR - EL, 0) of this one
  name's one-year loss, allocated to the facilities in proportion to EAD x LGD.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from obligor_memo.engine.capital import irb_corporate_capital, irb_corporate_correlation, single_factor_capital
from obligor_memo.engine.case import Case, Facility
from obligor_memo.engine.errors import Caution
from obligor_memo.engine.exposure import FacilityExposure, FacilityKind, Standard, ccf_preset, facility_exposure

FOUNDATION_MATURITY_YEARS = 2.5
"""Foundation-approach effective maturity [years] (Basel II para 318)."""
FOUNDATION_COMMITMENT_CCF_BASEL_II = 0.75
"""Foundation-IRB CCF of commitments under Basel II [fraction] (para 311)."""


def foundation_ccf(
    kind: FacilityKind, *, standard: Standard, maturity_years: float, cancellable: bool
) -> tuple[float, str]:
    """The foundation-IRB CCF of a facility kind and its source (see the module docstring).

    Parameters
    ----------
    kind : FacilityKind
        Facility kind: bond, term_loan, revolver, guarantee or letter_of_credit.
    standard : Standard
        Basel standard: ``basel_iii`` or ``basel_ii``.
    maturity_years : float
        Maturity of the facility [years].
    cancellable : bool
        True for an unconditionally cancellable commitment.

    Returns
    -------
    tuple[float, str]
        The CCF [fraction] and its source.
    """
    if standard == "basel_ii" and kind in ("term_loan", "revolver"):
        if cancellable:
            return 0.0, "foundation IRB, Basel II para 312: unconditionally cancellable commitment"
        return FOUNDATION_COMMITMENT_CCF_BASEL_II, "foundation IRB, Basel II para 311: commitment"
    ccf, source = ccf_preset(
        kind,
        standard=standard,
        maturity_years=maturity_years,
        cancellable=cancellable,
    )
    return ccf, f"foundation IRB = standardised ({source})"


def capital_exposure(case: Case, facility: Facility, exposure: FacilityExposure) -> FacilityExposure:
    """The EAD of the risk weight: the exposure step's, or on the foundation-IRB CCF.

    Parameters
    ----------
    case : Case
        The validated case.
    facility : Facility
        The facility as in the case.
    exposure : FacilityExposure
        The facility's exposure from the exposure step.

    Returns
    -------
    FacilityExposure
        The exposure the risk weight applies to.
    """
    if case.capital.capital_ccf == "exposure":
        return exposure
    ccf, source = foundation_ccf(
        facility.kind,
        standard=case.exposure.ccf_standard,
        maturity_years=facility.maturity_years,
        cancellable=facility.cancellable,
    )
    return facility_exposure(
        id=exposure.id,
        kind=exposure.kind,
        drawn=exposure.drawn,
        committed=exposure.committed,
        ccf=ccf,
        ccf_source=source,
    )


@dataclass(frozen=True)
class CapitalFigures:
    """Per-facility capital arrays (one entry per facility, in case order)."""

    pd_used: np.ndarray
    """One-year PD after the floor [fraction]."""
    lgd: np.ndarray
    """Risk-weight LGD in [0, 1] [fraction]."""
    maturity: np.ndarray
    """Effective maturity used [years]."""
    correlation: np.ndarray
    """IRB asset correlation R [fraction]."""
    maturity_adjustment: np.ndarray
    """(1 + (M - 2.5) b) / (1 - 1.5 b) [dimensionless]."""
    k: np.ndarray
    """[fraction of EAD]"""
    risk_weight: np.ndarray
    """[fraction]"""
    regulatory_capital: np.ndarray
    """8 % of RWA [currency units]."""
    regulatory_expected_loss: np.ndarray
    """[currency units]"""
    economic_correlation: np.ndarray
    """Asset correlation of the economic capital [fraction]."""
    economic_single_factor: np.ndarray
    """[currency units]"""


def capital_figures(
    case: Case,
    *,
    pd_one_year: float,
    capital_eads: list[float],
    downturn_lgds: list[float],
    economic_eads: list[float],
    mean_lgds: list[float],
    cautions: list[Caution],
) -> CapitalFigures:
    """Regulatory and single-factor economic capital of every facility (one-year PD).

    Parameters
    ----------
    case : Case
        The validated case.
    pd_one_year : float
        One-year PD in force [fraction].
    capital_eads : list[float]
        EAD of the risk weight, per facility [currency units].
    downturn_lgds : list[float]
        Downturn LGD per facility [fraction].
    economic_eads : list[float]
        EAD of the economic capital, per facility [currency units].
    mean_lgds : list[float]
        Mean LGD per facility [fraction].
    cautions : list[Caution]
        Cautions of the evaluation; a binding PD floor or a negative LGD adds one.

    Returns
    -------
    CapitalFigures
        The per-facility capital arrays.
    """
    settings = case.capital
    n = len(case.facilities)
    own = np.array([f.maturity_years for f in case.facilities])
    maturity = own if settings.effective_maturity == "own" else np.full(n, FOUNDATION_MATURITY_YEARS)
    lgd = np.clip(np.array(downturn_lgds), 0.0, 1.0)
    if np.any(np.array(downturn_lgds) < 0):
        cautions.append(
            Caution(
                "capital.negative_lgd",
                "A downturn LGD below zero (recoveries above par) counts as 0 in the risk weight and the IRB EL.",
                "facilities",
            )
        )
    # A PD that underflows to 0 is below every floor; the floor then sets the capital PD.
    cap = irb_corporate_capital(
        pd=np.full(n, max(pd_one_year, 1e-300)),
        lgd=lgd,
        maturity_years=maturity,
        annual_sales_eur_millions=settings.annual_sales_eur_millions,
        pd_floor=settings.pd_floor,
        scaling_factor=1.06 if settings.scaling_factor else 1.0,
    )
    if bool(np.any(cap.floor_binds)):
        cautions.append(
            Caution(
                "capital.pd_floor",
                f"The PD floor of {settings.pd_floor:.2%} binds in the "
                f"risk weights{' and the IRB EL' if settings.el_pd_floor else ''} "
                f"(one-year PD in force {pd_one_year:.4%}).",
                "capital.pd_floor",
            )
        )
    ead = np.array(capital_eads)
    pd_el = np.asarray(cap.pd_used) if settings.el_pd_floor else np.full(n, pd_one_year)
    rho = settings.economic_correlation
    if rho is None:
        rho = float(irb_corporate_correlation(min(max(pd_one_year, 0.0), 1.0), settings.annual_sales_eur_millions))
    sf = single_factor_capital(
        pd=np.full(n, min(max(pd_one_year, 0.0), 1.0)),
        lgd=np.clip(np.array(mean_lgds), 0.0, 1.0),
        correlation=np.full(n, rho),
        confidence=settings.confidence,
        maturity_years=own if settings.economic_maturity_adjustment else None,
    )
    return CapitalFigures(
        pd_used=np.asarray(cap.pd_used),
        lgd=lgd,
        maturity=np.asarray(cap.maturity_used),
        correlation=np.asarray(cap.correlation),
        maturity_adjustment=np.asarray(cap.maturity_adjustment),
        k=np.asarray(cap.k),
        risk_weight=np.asarray(cap.risk_weight),
        regulatory_capital=np.asarray(cap.k) * cap.scaling_factor * ead,
        regulatory_expected_loss=pd_el * lgd * ead,
        economic_correlation=np.full(n, rho),
        economic_single_factor=np.asarray(sf) * np.array(economic_eads),
    )


def economic_basis(case: Case, correlation: float) -> str:
    """The economic-capital method in words, with the reason for the default.

    Parameters
    ----------
    case : Case
        The validated case.
    correlation : float
        Asset correlation of the economic capital [fraction].

    Returns
    -------
    str
        The method, for the memo.
    """
    q = case.capital.confidence
    if case.capital.economic_method == "single_factor":
        source = (
            "IRB corporate correlation of the PD" if case.capital.economic_correlation is None else "set in the case"
        )
        ma = ", with the IRB maturity adjustment" if case.capital.economic_maturity_adjustment else ""
        return (
            f"single-factor (Vasicek / ASRF) capital at {q:.1%}, asset correlation {correlation:.2%} "
            f"({source}), mean LGD{ma}: this name's contribution to a diversified portfolio, "
            "smooth in PD (the default: the standalone quantile of one name is 0 for PD <= "
            "1 - confidence and jumps above it)"
        )
    return (
        f"standalone {q:.1%} loss quantile of this one name less EL (no diversification; "
        "zero for PD <= 1 - confidence and a jump above it)"
    )


def allocate(total: float, weights: list[float]) -> list[float]:
    """``total`` split in proportion to the non-negative ``weights`` (equal split if all are 0).

    Parameters
    ----------
    total : float
        The amount to split [currency units].
    weights : list[float]
        Weight of each part; negative weights count as 0.

    Returns
    -------
    list[float]
        One part per weight [currency units], summing to ``total``.
    """
    w = np.maximum(np.array(weights, dtype=float), 0.0)
    if w.sum() <= 0:
        w = np.ones_like(w)
    return (total * w / w.sum()).tolist()
