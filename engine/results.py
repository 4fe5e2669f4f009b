"""The frozen results of one evaluation: per facility, for the borrower, and the JSON of both.

Units: money [currency], rates and shares [fraction], times [years]. "Horizon" figures use the
PD over ``pd.horizon_years``; capital, the IRB EL and RAROC use the one-year PD (CRE32.3).
The what-if layers (sensitivity, PD grid, scenarios) are typed in :mod:`engine.whatif_types`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, fields, is_dataclass
from typing import Any

from obligor_memo.engine.case import Case, ScenarioValue, case_to_dict
from obligor_memo.engine.covenants import CovenantTest
from obligor_memo.engine.credit_metrics import CreditYear
from obligor_memo.engine.deal_pricing import DealPricing
from obligor_memo.engine.decision import CrossCheckGrade
from obligor_memo.engine.errors import Caution
from obligor_memo.engine.lossdist import LossDistribution
from obligor_memo.engine.pd_estimate import MarketResult, PdResult
from obligor_memo.engine.recovery import RecoveryLaw
from obligor_memo.engine.statements import YearRatios
from obligor_memo.engine.structural import PdTermStructure
from obligor_memo.engine.trend import AssetTrend
from obligor_memo.engine.whatif_types import Headline, HeadlineDelta, OneWaySensitivity, PdGrid
from obligor_memo.engine.zscore import ZScore


@dataclass(frozen=True)
class FacilityResult:
    """One facility: exposure, recovery, loss and capital."""

    id: str
    """The facility's id."""
    kind: str
    """The facility kind, e.g. ``revolver``."""
    seniority: str
    """``senior_secured``, ``senior_unsecured`` or ``subordinated``."""
    maturity_years: float
    """[years]"""
    drawn: float
    """[currency]"""
    committed: float
    """[currency]"""
    undrawn: float
    """[currency]"""
    ccf: float
    """[fraction]"""
    ccf_source: str
    """Where the CCF came from, in words."""
    ead: float
    """[currency]"""
    recovery_mean: float
    """Mean of the unsecured law [fraction]."""
    recovery_std: float
    """[fraction]"""
    recovery_upper: float
    """Top of the unsecured law's support [fraction]."""
    recovery_source: str
    """Where the unsecured law's mean came from, in words."""
    collateral_value: float
    """After haircut [currency]."""
    collateral_cover: float
    """Share of EAD covered [fraction]."""
    secured_lgd: float
    """LGD of the covered part (LGD_S) [fraction]; applies to collateral_cover of the EAD."""
    alpha: float | None
    """Beta shape of the unsecured law (None: point mass)."""
    beta: float | None
    """The other beta shape of the unsecured law (None: point mass)."""
    recovery_quantiles: dict[str, float]
    """Quantiles of the effective recovery law at 5, 25, 50, 75 and 95 % (keys q05 .. q95) [fraction]."""
    lgd: float
    """1 - effective mean recovery [fraction]; negative possible with recoveries above par."""
    lgd_std: float
    """[fraction]"""
    downturn_lgd: float
    """Downturn LGD before the [0, 1] bounds of the risk weight [fraction]."""
    expected_loss: float
    """Horizon EL: horizon PD x LGD x EAD [currency]."""
    expected_loss_one_year: float
    """One-year PD x LGD x EAD [currency/year]; the EL of RAROC."""
    unexpected_loss: float
    """Standard deviation of the horizon loss [currency]."""
    lifetime_expected_loss: float
    """Sum over years to maturity of marginal PD x LGD x EAD [currency]."""
    capital_pd: float
    """One-year PD in force after the floor [fraction]."""
    capital_ead: float
    """EAD of the risk weight (see capital.capital_ccf) [currency]."""
    capital_ccf: float
    """CCF of capital_ead [fraction]."""
    capital_lgd: float
    """LGD of the risk weight: downturn LGD bounded to [0, 1] [fraction]."""
    capital_maturity: float
    """Effective maturity M: 2.5 (foundation) or own, clamped to [1, 5] [years]."""
    correlation: float
    """IRB asset correlation (after any firm-size adjustment) [fraction]."""
    maturity_adjustment: float
    """IRB maturity adjustment of the risk weight."""
    capital_k: float
    """IRB capital per unit EAD, before the scaling factor [fraction]."""
    risk_weight: float
    """12.5 x K (x 1.06 when chosen) [fraction]."""
    rwa: float
    """risk weight x capital EAD [currency]."""
    regulatory_capital: float
    """8 % of RWA = K x scaling factor x capital EAD [currency]."""
    regulatory_expected_loss: float
    """IRB EL: one-year PD (floored when capital.el_pd_floor) x capital LGD x capital EAD [currency]."""
    economic_correlation: float
    """Asset correlation of the single-factor capital [fraction]."""
    economic_capital_single_factor: float
    """One-year one-factor capital [currency]."""
    economic_capital: float
    """One-year economic capital on the case's method; standalone: the borrower's figure
    allocated in proportion to EAD x LGD [currency]."""


@dataclass(frozen=True)
class Totals:
    """The borrower: sums and the joint loss distribution."""

    ead: float
    """[currency]"""
    horizon_years: float
    """Horizon of the horizon figures [years]."""
    pd_horizon: float
    """PD in force over the horizon [fraction]."""
    pd_one_year: float
    """One-year PD in force: capital, IRB EL, RAROC [fraction]."""
    expected_loss: float
    """Horizon EL [currency]."""
    expected_loss_one_year: float
    """[currency/year]"""
    regulatory_expected_loss: float
    """IRB EL [currency]."""
    el_rate: float
    """Horizon EL / EAD [fraction]."""
    unexpected_loss: float
    """Std of the borrower's horizon loss, recoveries joined as the case says [currency]."""
    unexpected_loss_sum: float
    """Sum of the facilities' ULs (the perfect-correlation figure) [currency]."""
    lifetime_expected_loss: float
    """[currency]"""
    rwa: float
    """[currency]"""
    regulatory_capital: float
    """8 % of RWA (scaling factor included when chosen) [currency]."""
    value_at_risk: float
    """Confidence quantile of the borrower's horizon loss [currency]."""
    expected_shortfall: float
    """[currency]"""
    economic_method: str
    """"single_factor" or "standalone"."""
    economic_basis: str
    """The method in words, with the reason for the default."""
    economic_capital: float
    """One-year economic capital on ``economic_method`` [currency]."""
    economic_capital_single_factor: float
    """Sum of the facilities' one-factor capital [currency]."""
    economic_capital_standalone: float
    """One-year standalone quantile less EL, max(VaR - EL, 0) [currency]."""
    economic_capital_floored: bool
    """The standalone figure is floored at zero."""


@dataclass(frozen=True)
class Results:
    """Everything one evaluation produced; ``to_dict`` is the JSON contract."""

    engine_version: str
    """The engine version that computed the results."""
    fingerprint: str
    """SHA-256 of the canonical case JSON."""
    case: Case
    """The case evaluated."""
    trend: AssetTrend | None
    """The asset trend of the statements; None where it cannot be fitted (a caution says why)."""
    ratios: tuple[YearRatios, ...]
    """Balance-sheet ratios by year."""
    pd: PdResult
    """The PD in force, its grade and how it was reached."""
    market: MarketResult | None
    """When the case has a market block."""
    master_scale_source: str
    """"case file" or "illustrative default"."""
    zscores: tuple[ZScore, ...]
    """Latest year."""
    zscore_history: tuple[tuple[int, str, float | None, str | None], ...]
    """(year, variant, score, zone)."""
    term_structure: PdTermStructure
    """Cumulative and marginal PD by year to the longest maturity (at least the horizon)."""
    facilities: tuple[FacilityResult, ...]
    """One per facility, in the case's order."""
    total: Totals
    """The borrower's figures."""
    loss_distribution: LossDistribution
    """Horizon loss distribution."""
    pricing: DealPricing | None
    """RAROC and minimum spread; None without a pricing block."""
    cautions: tuple[Caution, ...]
    """What the reader should know about the results."""
    laws: dict[str, RecoveryLaw] = field(repr=False, compare=False)
    """Effective recovery law by facility id (not in the JSON)."""
    sensitivity: OneWaySensitivity | None = None
    """Attached by engine.analysis.analyse (None after a plain evaluate)."""
    pd_grid: PdGrid | None = None
    """Attached by engine.analysis.analyse."""
    scenarios: tuple[ScenarioResult, ...] | None = None
    """Attached by engine.analysis.analyse."""
    credit_metrics: tuple[CreditYear, ...] = ()
    """Leverage, cover and cash flow by year, where the statements give the lines."""
    covenants: tuple[CovenantTest, ...] = ()
    """Each covenant of the case on the latest year: value, headroom, EBITDA fall to breach."""
    cross_checks: tuple[CrossCheckGrade, ...] = ()
    """Z-score zones and market PDs graded on the master scale against the grade in force."""

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready data: the contract of ``evaluate --json`` plus every intermediate.

        Returns
        -------
        dict[str, Any]
            Every field but the recovery laws, as plain data (non-finite floats as None).
        """
        out: dict[str, Any] = {"engine_version": self.engine_version, "fingerprint": self.fingerprint}
        for f in fields(self):
            if f.name in ("engine_version", "fingerprint", "laws"):
                continue
            value = getattr(self, f.name)
            out[f.name] = case_to_dict(value) if isinstance(value, Case) else plain_data(value)
        return out


@dataclass(frozen=True)
class ScenarioResult:
    """One scenario evaluated: its changes, its headline figures, and the change from the base."""

    name: str
    """The scenario's name."""
    description: str
    """The scenario's description."""
    overrides: tuple[tuple[str, ScenarioValue], ...]
    """(path, value) as written in the case."""
    figures: Headline
    """The scenario's headline figures."""
    base: Headline
    """The base case's headline figures."""
    delta: HeadlineDelta
    """Scenario minus base."""
    results: Results = field(repr=False, compare=False)
    """The full evaluation, every intermediate."""


def plain_data(value: Any) -> Any:
    """Dataclasses, mappings, sequences and numpy values as JSON-ready Python data.

    Parameters
    ----------
    value : Any
        A result record (a frozen dataclass), or anything it holds.

    Returns
    -------
    Any
        Dicts, lists, numbers, strings and None: fields declared ``repr=False`` are left out,
        non-finite floats become None.
    """
    if is_dataclass(value) and not isinstance(value, type):
        return {f.name: plain_data(getattr(value, f.name)) for f in fields(value) if f.repr}
    if isinstance(value, Mapping):
        return {str(k): plain_data(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain_data(v) for v in value]
    if hasattr(value, "tolist"):  # numpy arrays and scalars
        return plain_data(value.tolist())
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value
