"""The case: every input of one borrower's memo, validated once at the edge.

The schema is written with pydantic (strict types, unknown keys forbidden, no NaN or infinity).
:func:`parse_case` turns a plain mapping into a frozen :class:`Case` or raises
:class:`~engine.errors.CaseError` naming each bad field, the value and what is allowed; an unknown
key gets the nearest valid key suggested, so a typo never silently drops an input.

Units: money in the borrower's currency [currency]; rates and shares as fractions [fraction];
times in years [years].
"""

from __future__ import annotations

import math
from typing import Annotated, Any, Literal

from obligor_memo.engine.case_errors import CaseProblems, FieldError, problems_from_validation
from obligor_memo.engine.errors import CaseError, Problem
from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator, model_validator

FacilityKind = Literal["bond", "term_loan", "revolver", "guarantee", "letter_of_credit"]
Seniority = Literal["senior_secured", "senior_unsecured", "subordinated"]
PdMethod = Literal["balance_sheet", "market"]
Standard = Literal["basel_iii", "basel_ii"]

Money = Annotated[float, Field(ge=0, le=1e15)]
PositiveMoney = Annotated[float, Field(gt=0, le=1e15)]
SignedMoney = Annotated[float, Field(ge=-1e15, le=1e15)]
Fraction = Annotated[float, Field(ge=0, le=1)]
Text = Annotated[str, Field(max_length=20_000)]
FacilityStatus = Literal["new", "renewal", "increase", "unchanged"]
ShortText = Annotated[str, Field(max_length=200)]


# Every list and mapping of a case has a limit, so no file can make a run slow (README: Limits).
# Measured on the 2-core machine (2026-12-03): 100 facilities take 0.32 s of full analysis, 50 scenarios
# 0.28 s (the sample alone 0.05 s); the grids and tables are bounded by their own schema fields.
LIMITS = {
    "statements": 200,  # statement years
    "facilities": 100,
    "scenarios": 50,
    "scenarios[].set": 50,  # inputs one scenario changes
    "pd.master_scale": 30,  # grade rows
    "exposure.ccf_by_grade": 200,  # CCF rows by grade
    "covenants": 20,  # financial covenants tested on the latest year
}


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)


# --------------------------------------------------------------------------- borrower, statements


class Borrower(_Model):
    """Who the memo is about: name, currency of every amount, sector and country."""

    name: Annotated[str, Field(min_length=1, max_length=200)]
    currency: Annotated[str, Field(pattern=r"^[A-Z]{3}$")]
    """ISO 4217 code of the currency every amount of the case is in (three capital letters)."""
    sector: ShortText = ""
    country: ShortText = ""


class StatementRow(_Model):
    """One financial year [currency]. Optional columns feed the Altman Z-score cross-check."""

    year: Annotated[int, Field(ge=1900, le=2200)]
    total_assets: PositiveMoney
    short_term_liabilities: Money
    long_term_liabilities: Money
    working_capital: SignedMoney | None = None
    retained_earnings: SignedMoney | None = None
    ebit: SignedMoney | None = None
    sales: Money | None = None
    book_equity: SignedMoney | None = None
    total_liabilities: PositiveMoney | None = None
    ebitda: SignedMoney | None = None
    interest_expense: Money | None = None
    cash: Money | None = None
    total_debt: Money | None = None
    operating_cash_flow: SignedMoney | None = None
    capital_expenditure: Money | None = None


# --------------------------------------------------------------------------- market, PD


class Market(_Model):
    """Listed borrowers: market value of equity and its volatility."""

    equity_value: PositiveMoney
    equity_volatility: Annotated[float, Field(gt=0, le=5)]
    risk_free_rate: Annotated[float, Field(ge=-0.1, le=0.5)]
    asset_drift: Annotated[float, Field(ge=-1, le=1)] | None = None
    trailing_equity_return: Annotated[float, Field(ge=-1, le=10)] | None = None


class DefaultPoint(_Model):
    """Shares of the latest liabilities in the default point DP = a x STL + b x LTL."""

    short_term_share: Fraction = 1.0
    """Share a of short-term liabilities [fraction]."""
    long_term_share: Fraction = 0.5
    """Share b of long-term liabilities [fraction]."""


class GradeRow(_Model):
    """One band of the case's own master scale."""

    grade: Annotated[str, Field(min_length=1, max_length=20)]
    pd_upper: Annotated[float, Field(gt=0, le=1)]
    """Top of the band's one-year PD [fraction]; the last row reaches 1."""


class PdSettings(_Model):
    """How the PD is estimated: method, horizon, asset trend inputs, default point, override."""

    method: PdMethod = "balance_sheet"
    """``balance_sheet`` (asset trend of the statements) or ``market`` (needs the market block)."""
    horizon_years: Annotated[float, Field(gt=0, le=30)] = 1.0
    """Horizon of the PD [years]."""
    window_years: Annotated[int, Field(ge=2, le=100)] | None = None
    """The latest N statement years the asset trend uses; None: all years."""
    asset_growth: Annotated[float, Field(ge=-1, le=1)] | None = None
    """Asset growth g [1/year]; None: estimated from the statements."""
    asset_volatility: Annotated[float, Field(gt=0, le=3)] | None = None
    """Asset volatility s [1/sqrt(year)]; None: estimated from the statements."""
    default_point: DefaultPoint = DefaultPoint()
    measure: Literal["risk_neutral", "physical"] = "risk_neutral"
    """Measure of the market PD (market method only)."""
    override: Annotated[float, Field(gt=0, le=1)] | None = None
    """The analyst's PD [fraction]; None: the model's."""
    override_reason: Text | None = None
    """Why the override is set; required with it and printed in the memo."""
    override_horizon_years: Annotated[float, Field(gt=0, le=30)] | None = None
    """Horizon the override PD is stated for [years]; None: the case's ``horizon_years``."""
    master_scale: Annotated[list[GradeRow], Field(max_length=LIMITS["pd.master_scale"])] | None = None
    """The case's own master scale; None: the illustrative default scale."""

    @model_validator(mode="after")
    def _valid_master_scale(self) -> PdSettings:
        if self.master_scale is not None:
            from obligor_memo.engine.grading import master_scale_from_rows

            try:
                master_scale_from_rows([row.model_dump() for row in self.master_scale])
            except ValueError as exc:
                raise FieldError("master_scale", [r.model_dump() for r in self.master_scale], str(exc)) from None
        return self

    @model_validator(mode="after")
    def _override_needs_reason(self) -> PdSettings:
        if self.override is not None and not (self.override_reason or "").strip():
            raise FieldError("override_reason", self.override_reason, "a non-empty reason whenever pd.override is set")
        return self


# --------------------------------------------------------------------------- exposure, recovery


class Recovery(_Model):
    """Recovery-rate law on [0, upper], fitted by moments to a beta distribution."""

    mean: Fraction
    """Mean recovery [fraction of EAD], at most ``upper``."""
    std: Annotated[float, Field(ge=0, le=1)]
    """Standard deviation of the recovery [fraction of EAD]; 0: a fixed recovery."""
    upper: Annotated[float, Field(gt=0, le=1.5)] = 1.0
    """Top of the recovery law's support [fraction of EAD]; above 1 (bonds: accrued interest,
    post-default prices above par) a caution is shown and LGD outcomes may be negative."""

    @model_validator(mode="after")
    def _feasible(self) -> Recovery:
        if self.mean > self.upper:
            raise FieldError("mean", self.mean, f"a recovery mean at most upper = {self.upper:g}")
        if 0 < self.std < 1e-6:
            raise FieldError("std", self.std, "0 (a fixed recovery) or at least 0.000001")
        m = self.mean / self.upper
        limit = self.upper * math.sqrt(m * (1 - m))
        if self.std > 0 and self.std >= limit:
            allowed = (
                f"a std below {limit:.4f} for mean {self.mean:g} on [0, {self.upper:g}] "
                "(a beta law needs std^2 < mean(upper - mean))"
            )
            if limit == 0:
                allowed = f"std 0: a mean of {self.mean:g} on [0, {self.upper:g}] leaves no room for spread"
            raise FieldError("std", self.std, allowed)
        return self


class Collateral(_Model):
    """Collateral of one facility; after its haircut it covers part of the EAD."""

    value: Money
    """Value of the collateral [currency units]."""
    haircut: Annotated[float, Field(ge=0, lt=1)] = 0.0
    """Haircut H on the value [fraction]: C* = value x (1 - H)."""
    description: ShortText = ""


class Facility(_Model):
    """One facility of the borrower: amounts, CCF, seniority, maturity, recovery, collateral, pricing."""

    id: Annotated[str, Field(min_length=1, max_length=40)]
    """Unique within the case."""
    kind: FacilityKind
    committed: Money
    """Committed amount [currency units]."""
    drawn: Money
    """Drawn amount [currency units]."""
    ccf: Fraction | None = None
    """The facility's own CCF [fraction]; None: the grade table or the preset for the kind."""
    cancellable: bool = False
    """An unconditionally cancellable commitment."""
    seniority: Seniority
    maturity_years: Annotated[float, Field(gt=0, le=50)]
    """Maturity [years]."""
    recovery: Recovery | None = None
    """The facility's recovery law; None: the default for its seniority."""
    collateral: Collateral | None = None
    pricing: FacilityPricing | None = None
    description: ShortText = ""
    status: FacilityStatus | None = None


class CcfGradeRow(_Model):
    """One row of the CCF-by-grade table."""

    grade: Annotated[str, Field(min_length=1, max_length=20)]
    ccf: Fraction
    """CCF for the grade [fraction]."""
    kind: FacilityKind | None = None
    """The facility kind the row is for; None: every kind."""


class ExposureSettings(_Model):
    """Where CCFs come from when a facility has none of its own."""

    ccf_standard: Standard = "basel_iii"
    """The standard whose CCF presets by kind apply."""
    ccf_by_grade: Annotated[list[CcfGradeRow], Field(max_length=LIMITS["exposure.ccf_by_grade"])] | None = None


class Downturn(_Model):
    """Downturn LGD of the risk weights: the mean LGD, the LGD at a quantile of its law, or mean plus an add-on."""

    method: Literal["none", "quantile", "add_on"] = "none"
    quantile: Annotated[float, Field(ge=0.5, lt=1)] = 0.9
    """Quantile of the loss-given-default law for the ``quantile`` method [fraction]."""
    add_on: Annotated[float, Field(ge=0, le=0.5)] = 0.0
    """Added to the mean LGD by the ``add_on`` method, capped at LGD 1 [fraction]."""


class LgdSettings(_Model):
    """Default recoveries by seniority and the downturn LGD."""

    standard: Standard = "basel_iii"
    """The standard whose supervisory LGDs give the default recoveries by seniority."""
    default_recovery_std: Annotated[float, Field(ge=0, le=0.5)] = 0.25
    """Recovery std of facilities without a recovery block [fraction]."""
    downturn: Downturn = Downturn()

    @model_validator(mode="after")
    def _not_vanishing(self) -> LgdSettings:
        if 0 < self.default_recovery_std < 1e-6:
            raise FieldError(
                "default_recovery_std", self.default_recovery_std, "0 (fixed recoveries) or at least 0.000001"
            )
        return self


# --------------------------------------------------------------------------- capital, pricing


class CapitalSettings(_Model):
    """Regulatory and economic capital settings."""

    confidence: Annotated[float, Field(gt=0.5, lt=1)] = 0.999
    """Confidence of the economic capital (VaR, ES, single-factor quantile) [fraction]."""
    pd_floor: Annotated[float, Field(ge=0.00001, le=0.01)] = 0.0005
    """Regulatory floor on the one-year PD [fraction] (CRE32.4: 0.05 %)."""
    scaling_factor: bool = False
    """Apply the 1.06 scaling factor to RWA and so to regulatory capital (8 % of RWA)."""
    annual_sales_eur_millions: Annotated[float, Field(gt=0, le=1e7)] | None = None
    """Annual sales for the firm-size adjustment of the correlation [EUR millions]; None: none."""
    recovery_join: Literal["comonotonic", "independent"] = "comonotonic"
    """How the facilities' recoveries are joined (one default event for all)."""
    economic_method: Literal["single_factor", "standalone"] = "single_factor"
    """Economic capital: one-factor portfolio contribution (smooth in PD) or the standalone
    loss quantile of this one name less EL."""
    economic_correlation: Annotated[float, Field(gt=0, lt=1)] | None = None
    """Asset correlation of the single-factor capital [fraction]; None: the IRB corporate
    correlation of the PD (with any firm-size adjustment)."""
    economic_maturity_adjustment: bool = False
    """Multiply the single-factor capital by the IRB maturity adjustment."""
    effective_maturity: Literal["foundation", "own"] = "foundation"
    """Effective maturity M in the risk weight: 2.5 years (foundation approach) or the
    facility's own maturity clamped to [1, 5] years."""
    capital_ccf: Literal["exposure", "foundation"] = "exposure"
    """CCFs of the capital EAD: those of the exposure step (standardised presets, grade table
    or own), or the foundation-IRB factors for commitments (Basel II: 75 %)."""
    el_pd_floor: bool = True
    """Apply the PD floor to the regulatory EL as well as to the risk weight (CRE32.4)."""


class FacilityPricing(_Model):
    """One facility's own rates, each overriding the deal's [fraction/year]; None: the deal's."""

    proposed_spread: Annotated[float, Field(ge=-0.05, le=0.5)] | None = None
    fee_rate: Annotated[float, Field(ge=0, le=0.2)] | None = None
    commitment_fee_rate: Annotated[float, Field(ge=0, le=0.2)] | None = None
    issuance_fee_rate: Annotated[float, Field(ge=0, le=0.2)] | None = None
    funding_spread: Annotated[float, Field(ge=-0.05, le=0.5)] | None = None
    operating_cost_rate: Annotated[float, Field(ge=0, le=0.2)] | None = None


class Pricing(_Model):
    """Annual rates [fraction/year], each on the amount it accrues on (see README)."""

    proposed_spread: Annotated[float, Field(ge=-0.05, le=0.5)]
    """Margin over the base rate on the drawn (funded) amount [fraction/year]."""
    fee_rate: Annotated[float, Field(ge=0, le=0.2)] = 0.0
    """Other annual fees on the EAD [fraction/year]."""
    commitment_fee_rate: Annotated[float, Field(ge=0, le=0.2)] = 0.0
    """Fee on the undrawn commitment of loans and revolvers [fraction/year]."""
    issuance_fee_rate: Annotated[float, Field(ge=0, le=0.2)] = 0.0
    """Fee on the amount issued of guarantees and letters of credit [fraction/year]."""
    base_rate: Annotated[float, Field(ge=-0.1, le=0.5)] = 0.0
    funding_spread: Annotated[float, Field(ge=-0.05, le=0.5)] = 0.0
    operating_cost_rate: Annotated[float, Field(ge=0, le=0.2)] = 0.0
    """Operating cost on the EAD [fraction/year]."""
    capital_return_rate: Annotated[float, Field(ge=-0.1, le=0.5)] = 0.0
    hurdle_rate: Annotated[float, Field(ge=0, le=1)] = 0.12
    capital_basis: Literal["economic", "regulatory"] = "economic"


# --------------------------------------------------------------------------- sensitivity, scenarios


class SensitivitySteps(_Model):
    """Step of each one-way move of the sensitivity table, in the input's own unit."""

    short_term_share: Annotated[float, Field(gt=0, le=1)] = 0.10
    long_term_share: Annotated[float, Field(gt=0, le=1)] = 0.10
    asset_growth: Annotated[float, Field(gt=0, le=0.5)] = 0.02
    asset_volatility: Annotated[float, Field(gt=0, le=0.5)] = 0.02
    horizon_years: Annotated[float, Field(gt=0, le=5)] = 0.5
    ccf: Annotated[float, Field(gt=0, le=1)] = 0.10
    recovery_mean: Annotated[float, Field(gt=0, le=0.5)] = 0.05


class GridAxis(_Model):
    """One axis of the PD grid: ``points`` evenly spaced values from start to stop."""

    start: Annotated[float, Field(ge=0, le=3)]
    stop: Annotated[float, Field(ge=0, le=3)]
    """Last value, above start."""
    points: Annotated[int, Field(ge=2, le=101)] = 21

    @model_validator(mode="after")
    def _ordered(self) -> GridAxis:
        if self.stop <= self.start:
            raise FieldError("stop", self.stop, f"a value above start = {self.start:g}")
        return self


class Sensitivity(_Model):
    """The one-way steps and the axes of the two-way PD grid."""

    steps: SensitivitySteps = SensitivitySteps()
    long_term_share_axis: GridAxis = GridAxis(start=0.0, stop=1.0, points=21)
    """Long-term share of the default point [fraction]."""
    asset_volatility_axis: GridAxis | None = None
    """Asset volatility [1/sqrt(year)]; None: centred on the volatility in use."""


ScenarioValue = float | int | bool | str | None


class Scenario(_Model):
    """A named set of overrides, evaluated beside the base case."""

    name: Annotated[str, Field(min_length=1, max_length=60)]
    """Unique within the case."""
    description: Text = ""
    set: dict[str, ScenarioValue] = Field(default_factory=dict, max_length=LIMITS["scenarios[].set"])
    """Input by dotted path (facilities by id, e.g. ``facilities.RCF-1.ccf``) -> its value."""


class RiskItem(_Model):
    """One key risk and what mitigates it (the decision page prints the first three)."""

    risk: Annotated[str, Field(min_length=1, max_length=300)]
    mitigant: Annotated[str, Field(max_length=300)] = ""


class MemoText(_Model):
    """Free text, printed exactly as typed; every field has a length limit the page can hold."""

    prepared_by: Annotated[str, Field(max_length=200)] = ""
    reviewed_by: Annotated[str, Field(max_length=200)] = ""
    approved_by: Annotated[str, Field(max_length=200)] = ""
    request: Annotated[str, Field(max_length=5_000)] = ""
    summary: Annotated[str, Field(max_length=4_000)] = ""
    recommendation: Annotated[str, Field(max_length=1_000)] = ""
    conditions: Annotated[str, Field(max_length=2_000)] = ""
    rationale: Annotated[str, Field(max_length=300)] = ""
    default_point_reason: Annotated[str, Field(max_length=1_500)] = ""
    cross_check_explanation: Annotated[str, Field(max_length=1_500)] = ""
    risks: list[RiskItem] = Field(default_factory=list, max_length=10)
    page_size: Literal["A4", "Letter"] = "A4"


# --------------------------------------------------------------------------- covenants

CovenantMetric = Literal["net_debt_to_ebitda", "interest_cover", "debt_to_equity", "ebitda_margin"]
# The direction each metric's covenant takes (common practice: leverage is capped, cover floored).
COVENANT_DIRECTION = {
    "net_debt_to_ebitda": "max",
    "interest_cover": "min",
    "debt_to_equity": "max",
    "ebitda_margin": "min",
}


class Covenant(_Model):
    """One financial covenant, tested on the latest statement year (engine.covenants)."""

    metric: CovenantMetric
    threshold: Annotated[float, Field(gt=0, le=1000)]
    """The limit [times; a fraction for ebitda_margin]."""
    direction: Literal["max", "min"]
    """"max": the metric must stay at or below the threshold; "min": at or above it."""
    tested: Annotated[str, Field(min_length=1, max_length=60)] = "annual"
    """How often it is tested, in words (annual, half-yearly, quarterly, ...)."""

    @model_validator(mode="after")
    def _consistent(self) -> Covenant:
        expected = COVENANT_DIRECTION[self.metric]
        if self.direction != expected:
            kind = "cap" if expected == "max" else "floor"
            raise FieldError(
                "direction",
                self.direction,
                f"'{expected}' for {self.metric} (a covenant on it is a {kind}: "
                f"the metric must stay {'at or below' if expected == 'max' else 'at or above'} the threshold)",
            )
        if self.metric == "ebitda_margin" and self.threshold >= 1:
            raise FieldError("threshold", self.threshold, "a margin as a fraction above 0 and below 1, e.g. 0.15")
        if not self.tested.strip():
            raise FieldError("tested", self.tested, "how often it is tested, in words, e.g. annual or quarterly")
        return self


# --------------------------------------------------------------------------- review (roll-forward)


class ReviewRecord(_Model):
    """One earlier approved review: what it was computed from and the key figures it showed."""

    fingerprint: str
    """SHA-256 of the case's canonical JSON (64 lower-case hex digits)."""
    engine_version: Annotated[str, Field(min_length=1, max_length=40)]
    approved_on: str | None = None
    """The committee's approval date, ISO (YYYY-MM-DD); None: not given."""
    figures: dict[str, float | str | None] = Field(default_factory=dict, max_length=60)
    """Key figures as then computed, by name; a missing figure is None."""

    @model_validator(mode="after")
    def _well_formed(self) -> ReviewRecord:
        import datetime

        if len(self.fingerprint) != 64 or any(ch not in "0123456789abcdef" for ch in self.fingerprint):
            raise FieldError(
                "fingerprint", self.fingerprint, "the SHA-256 of the previous case: 64 lower-case hex digits"
            )
        if self.approved_on is not None:
            try:
                ok = len(self.approved_on) == 10 and bool(datetime.date.fromisoformat(self.approved_on))
            except ValueError:
                ok = False
            if not ok:
                raise FieldError("approved_on", self.approved_on, "a date as YYYY-MM-DD, e.g. 2025-11-30, or null")
        for name in self.figures:
            if not (0 < len(name) <= 40 and name.replace("_", "").isalnum() and name == name.lower()):
                raise FieldError(
                    f"figures.{name}", name, "a figure name of lower-case letters, digits and _ (at most 40)"
                )
        return self


class PreviousReview(ReviewRecord):
    """The review this case rolls forward; ``case`` holds its inputs (validated when compared)."""

    case: dict[str, Any] | None = None


class Review(_Model):
    """The review this case rolls forward and the older ones."""

    previous: PreviousReview | None = None
    """None for a first review."""
    history: list[ReviewRecord] = Field(default_factory=list, max_length=50)
    """Older reviews, newest first."""


class StatementsSource(_Model):
    """How the statements were read from a file (set by the loader; the rows are in currency units)."""

    file: ShortText = ""
    unit: Literal["units", "thousands", "millions"] = "units"
    orientation: Literal["long", "wide"] = "long"
    header_row: Annotated[int, Field(ge=1, le=10_000)] = 1
    recognised: dict[str, str] = Field(default_factory=dict, max_length=200)
    unrecognised: list[str] = Field(default_factory=list, max_length=500)
    mapping: dict[str, str] = Field(default_factory=dict, max_length=200)


class Case(_Model):
    """One borrower's whole case. Statements are always held inline (a file is read at load)."""

    borrower: Borrower
    statements: Annotated[list[StatementRow], Field(min_length=1, max_length=LIMITS["statements"])]
    market: Market | None = None
    pd: PdSettings = PdSettings()
    capital: CapitalSettings = CapitalSettings()
    exposure: ExposureSettings = ExposureSettings()
    lgd: LgdSettings = LgdSettings()
    facilities: Annotated[list[Facility], Field(min_length=1, max_length=LIMITS["facilities"])]
    pricing: Pricing | None = None
    sensitivity: Sensitivity = Sensitivity()
    scenarios: list[Scenario] = Field(default_factory=list, max_length=LIMITS["scenarios"])
    covenants: list[Covenant] = Field(default_factory=list, max_length=LIMITS["covenants"])
    statements_source: StatementsSource | None = None
    memo: MemoText = MemoText()
    review: Review | None = None

    @field_validator("statements", mode="after")
    @classmethod
    def _sorted_unique_years(cls, rows: list[StatementRow]) -> list[StatementRow]:
        seen: dict[int, int] = {}
        for index, row in enumerate(rows):
            if row.year in seen:
                raise FieldError(
                    f"[{index}].year", row.year, f"each year once (year {row.year} also in row {seen[row.year]})"
                )
            seen[row.year] = index
        return sorted(rows, key=lambda r: r.year)

    @model_validator(mode="after")
    def _cross_checks(self) -> Case:
        problems: list[Problem] = []
        ids: dict[str, int] = {}
        for index, facility in enumerate(self.facilities):
            if facility.id in ids:
                problems.append(
                    Problem(
                        f"facilities[{index}].id",
                        facility.id,
                        f"a unique id (also used by facilities[{ids[facility.id]}])",
                    )
                )
            ids.setdefault(facility.id, index)
        if self.pd.method == "market" and self.market is None:
            problems.append(
                Problem(
                    "pd.method",
                    "market",
                    "'balance_sheet', or 'market' together with a market block "
                    "(equity_value, equity_volatility, risk_free_rate)",
                )
            )
        needs_history = self.pd.method == "balance_sheet" and self.pd.override is None
        window = self.pd.window_years
        years_used = min(window, len(self.statements)) if window else len(self.statements)
        if needs_history and self.pd.asset_volatility is None and years_used < 3:
            problems.append(
                Problem(
                    "statements",
                    f"{years_used} year(s) in the window",
                    "at least three years when asset volatility is estimated (or set pd.asset_volatility)",
                )
            )
        if needs_history and self.pd.asset_growth is None and years_used < 2:
            problems.append(
                Problem(
                    "statements",
                    f"{years_used} year(s) in the window",
                    "at least two years when asset growth is estimated (or set pd.asset_growth)",
                )
            )
        if window is not None and window > len(self.statements):
            problems.append(
                Problem(
                    "pd.window_years",
                    window,
                    f"at most the {len(self.statements)} years of statements given, or null for all years",
                )
            )
        latest = self.statements[-1]
        dp = (
            self.pd.default_point.short_term_share * latest.short_term_liabilities
            + self.pd.default_point.long_term_share * latest.long_term_liabilities
        )
        if dp <= 0 and self.pd.override is None:
            problems.append(
                Problem(
                    "pd.default_point",
                    f"{dp:g} {self.borrower.currency}",
                    "shares and latest liabilities giving a default point above 0",
                )
            )
        names = [s.name for s in self.scenarios]
        for index, name in enumerate(names):
            if name in names[:index]:
                problems.append(Problem(f"scenarios[{index}].name", name, "a unique scenario name"))
        if problems:
            raise CaseProblems(problems)
        return self


# --------------------------------------------------------------------------- parsing


def parse_case(data: Any, source: str = "case") -> Case:
    """Validate a plain mapping (from YAML, JSON or a form) into a frozen :class:`Case`.

    Parameters
    ----------
    data : Any
        The case as plain data; anything but a mapping is refused.
    source : str, optional
        Where the data came from (a file name), named in the error.

    Returns
    -------
    Case
        The validated case.

    Raises
    ------
    CaseError
        If ``data`` is not a mapping or any field is invalid (each bad field, its value and what is allowed).
    """
    if not isinstance(data, dict):
        raise CaseError.single(
            "case", type(data).__name__, "a mapping with keys borrower, statements, facilities, ...", source
        )
    try:
        return Case.model_validate(data)
    except ValidationError as exc:
        raise CaseError(problems_from_validation(Case, exc), source=source) from None


def case_to_dict(case: Case) -> dict[str, Any]:
    """The case as plain data (JSON/YAML-ready); parse_case(case_to_dict(c)) == c.

    Parameters
    ----------
    case : Case
        A validated case.

    Returns
    -------
    dict[str, Any]
        Its fields as JSON-ready values.
    """
    return case.model_dump(mode="json")
