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

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator, model_validator

from obligor_memo.engine.case_errors import CaseProblems, FieldError, problems_from_validation
from obligor_memo.engine.errors import CaseError, Problem

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


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)


# --------------------------------------------------------------------------- borrower, statements


class Borrower(_Model):
    name: Annotated[str, Field(min_length=1, max_length=200)]
    currency: Annotated[str, Field(pattern=r"^[A-Z]{3}$")]
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


# --------------------------------------------------------------------------- market, PD


class Market(_Model):
    """Listed borrowers: market value of equity and its volatility."""

    equity_value: PositiveMoney
    equity_volatility: Annotated[float, Field(gt=0, le=5)]
    risk_free_rate: Annotated[float, Field(ge=-0.1, le=0.5)]
    asset_drift: Annotated[float, Field(ge=-1, le=1)] | None = None
    trailing_equity_return: Annotated[float, Field(ge=-1, le=10)] | None = None


class DefaultPoint(_Model):
    short_term_share: Fraction = 1.0
    long_term_share: Fraction = 0.5


class GradeRow(_Model):
    grade: Annotated[str, Field(min_length=1, max_length=20)]
    pd_upper: Annotated[float, Field(gt=0, le=1)]


class PdSettings(_Model):
    method: PdMethod = "balance_sheet"
    horizon_years: Annotated[float, Field(gt=0, le=30)] = 1.0
    window_years: Annotated[int, Field(ge=2, le=100)] | None = None
    asset_growth: Annotated[float, Field(ge=-1, le=1)] | None = None
    asset_volatility: Annotated[float, Field(gt=0, le=3)] | None = None
    default_point: DefaultPoint = DefaultPoint()
    measure: Literal["risk_neutral", "physical"] = "risk_neutral"
    override: Annotated[float, Field(gt=0, le=1)] | None = None
    override_reason: Text | None = None
    master_scale: list[GradeRow] | None = None

    @model_validator(mode="after")
    def _valid_master_scale(self) -> "PdSettings":
        if self.master_scale is not None:
            from obligor_memo.engine.grading import master_scale_from_rows

            try:
                master_scale_from_rows([row.model_dump() for row in self.master_scale])
            except ValueError as exc:
                raise FieldError("master_scale", [r.model_dump() for r in self.master_scale],
                                  str(exc)) from None
        return self

    @model_validator(mode="after")
    def _override_needs_reason(self) -> "PdSettings":
        if self.override is not None and not (self.override_reason or "").strip():
            raise FieldError("override_reason", self.override_reason,
                              "a non-empty reason whenever pd.override is set")
        return self


# --------------------------------------------------------------------------- exposure, recovery


class Recovery(_Model):
    """Recovery-rate law on [0, upper], fitted by moments to a beta distribution."""

    mean: Fraction
    std: Annotated[float, Field(ge=0, le=1)]
    upper: Annotated[float, Field(gt=0, le=1)] = 1.0

    @model_validator(mode="after")
    def _feasible(self) -> "Recovery":
        if self.mean > self.upper:
            raise FieldError("mean", self.mean, f"a recovery mean at most upper = {self.upper:g}")
        if 0 < self.std < 1e-6:
            raise FieldError("std", self.std, "0 (a fixed recovery) or at least 0.000001")
        m = self.mean / self.upper
        limit = self.upper * math.sqrt(m * (1 - m))
        if self.std > 0 and self.std >= limit:
            allowed = (f"a std below {limit:.4f} for mean {self.mean:g} on [0, {self.upper:g}] "
                       "(a beta law needs std^2 < mean(upper - mean))")
            if limit == 0:
                allowed = (f"std 0: a mean of {self.mean:g} on [0, {self.upper:g}] "
                           "leaves no room for spread")
            raise FieldError("std", self.std, allowed)
        return self


class Collateral(_Model):
    value: Money
    haircut: Annotated[float, Field(ge=0, lt=1)] = 0.0
    description: ShortText = ""


class Facility(_Model):
    id: Annotated[str, Field(min_length=1, max_length=40)]
    kind: FacilityKind
    committed: Money
    drawn: Money
    ccf: Fraction | None = None
    cancellable: bool = False
    seniority: Seniority
    maturity_years: Annotated[float, Field(gt=0, le=50)]
    recovery: Recovery | None = None
    collateral: Collateral | None = None
    description: ShortText = ""
    status: FacilityStatus | None = None


class CcfGradeRow(_Model):
    grade: Annotated[str, Field(min_length=1, max_length=20)]
    ccf: Fraction
    kind: FacilityKind | None = None


class ExposureSettings(_Model):
    ccf_standard: Standard = "basel_iii"
    ccf_by_grade: list[CcfGradeRow] | None = None


class Downturn(_Model):
    method: Literal["none", "quantile", "add_on"] = "none"
    quantile: Annotated[float, Field(ge=0.5, lt=1)] = 0.9
    add_on: Annotated[float, Field(ge=0, le=0.5)] = 0.0


class LgdSettings(_Model):
    standard: Standard = "basel_iii"
    default_recovery_std: Annotated[float, Field(ge=0, le=0.5)] = 0.25
    downturn: Downturn = Downturn()

    @model_validator(mode="after")
    def _not_vanishing(self) -> "LgdSettings":
        if 0 < self.default_recovery_std < 1e-6:
            raise FieldError("default_recovery_std", self.default_recovery_std,
                              "0 (fixed recoveries) or at least 0.000001")
        return self


# --------------------------------------------------------------------------- capital, pricing


class CapitalSettings(_Model):
    confidence: Annotated[float, Field(gt=0.5, lt=1)] = 0.999
    pd_floor: Annotated[float, Field(ge=0.00001, le=0.01)] = 0.0005
    scaling_factor: bool = False
    annual_sales_eur_millions: Annotated[float, Field(gt=0, le=1e7)] | None = None
    recovery_join: Literal["comonotonic", "independent"] = "comonotonic"


class Pricing(_Model):
    """Annual rates as fractions of EAD [fraction/year]."""

    proposed_spread: Annotated[float, Field(ge=-0.05, le=0.5)]
    fee_rate: Annotated[float, Field(ge=0, le=0.2)] = 0.0
    base_rate: Annotated[float, Field(ge=-0.1, le=0.5)] = 0.0
    funding_spread: Annotated[float, Field(ge=-0.05, le=0.5)] = 0.0
    operating_cost_rate: Annotated[float, Field(ge=0, le=0.2)] = 0.0
    capital_return_rate: Annotated[float, Field(ge=-0.1, le=0.5)] = 0.0
    hurdle_rate: Annotated[float, Field(ge=0, le=1)] = 0.12
    capital_basis: Literal["economic", "regulatory"] = "economic"


# --------------------------------------------------------------------------- sensitivity, scenarios


class SensitivitySteps(_Model):
    short_term_share: Annotated[float, Field(gt=0, le=1)] = 0.10
    long_term_share: Annotated[float, Field(gt=0, le=1)] = 0.10
    asset_growth: Annotated[float, Field(gt=0, le=0.5)] = 0.02
    asset_volatility: Annotated[float, Field(gt=0, le=0.5)] = 0.02
    horizon_years: Annotated[float, Field(gt=0, le=5)] = 0.5
    ccf: Annotated[float, Field(gt=0, le=1)] = 0.10
    recovery_mean: Annotated[float, Field(gt=0, le=0.5)] = 0.05


class GridAxis(_Model):
    start: Annotated[float, Field(ge=0, le=3)]
    stop: Annotated[float, Field(ge=0, le=3)]
    points: Annotated[int, Field(ge=2, le=101)] = 21

    @model_validator(mode="after")
    def _ordered(self) -> "GridAxis":
        if self.stop <= self.start:
            raise FieldError("stop", self.stop, f"a value above start = {self.start:g}")
        return self


class Sensitivity(_Model):
    steps: SensitivitySteps = SensitivitySteps()
    long_term_share_axis: GridAxis = GridAxis(start=0.0, stop=1.0, points=21)
    asset_volatility_axis: GridAxis | None = None  # None: centred on the estimate


ScenarioValue = float | int | bool | str | None


class Scenario(_Model):
    name: Annotated[str, Field(min_length=1, max_length=60)]
    description: Text = ""
    set: dict[str, ScenarioValue] = Field(default_factory=dict)


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


class Case(_Model):
    """One borrower's whole case. Statements are always held inline (a file is read at load)."""

    borrower: Borrower
    statements: Annotated[list[StatementRow], Field(min_length=1, max_length=200)]
    market: Market | None = None
    pd: PdSettings = PdSettings()
    capital: CapitalSettings = CapitalSettings()
    exposure: ExposureSettings = ExposureSettings()
    lgd: LgdSettings = LgdSettings()
    facilities: Annotated[list[Facility], Field(min_length=1, max_length=100)]
    pricing: Pricing | None = None
    sensitivity: Sensitivity = Sensitivity()
    scenarios: list[Scenario] = Field(default_factory=list, max_length=20)
    memo: MemoText = MemoText()

    @field_validator("statements", mode="after")
    @classmethod
    def _sorted_unique_years(cls, rows: list[StatementRow]) -> list[StatementRow]:
        seen: dict[int, int] = {}
        for index, row in enumerate(rows):
            if row.year in seen:
                raise FieldError(f"[{index}].year", row.year,
                                  f"each year once (year {row.year} also in row {seen[row.year]})")
            seen[row.year] = index
        return sorted(rows, key=lambda r: r.year)

    @model_validator(mode="after")
    def _cross_checks(self) -> "Case":
        problems: list[Problem] = []
        ids: dict[str, int] = {}
        for index, facility in enumerate(self.facilities):
            if facility.id in ids:
                problems.append(Problem(f"facilities[{index}].id", facility.id,
                                        f"a unique id (also used by facilities[{ids[facility.id]}])"))
            ids.setdefault(facility.id, index)
        if self.pd.method == "market" and self.market is None:
            problems.append(Problem("pd.method", "market",
                                    "'balance_sheet', or 'market' together with a market block "
                                    "(equity_value, equity_volatility, risk_free_rate)"))
        needs_history = self.pd.method == "balance_sheet" and self.pd.override is None
        window = self.pd.window_years
        years_used = min(window, len(self.statements)) if window else len(self.statements)
        if needs_history and self.pd.asset_volatility is None and years_used < 3:
            problems.append(Problem("statements", f"{years_used} year(s) in the window",
                                    "at least three years when asset volatility is estimated "
                                    "(or set pd.asset_volatility)"))
        if needs_history and self.pd.asset_growth is None and years_used < 2:
            problems.append(Problem("statements", f"{years_used} year(s) in the window",
                                    "at least two years when asset growth is estimated "
                                    "(or set pd.asset_growth)"))
        if window is not None and window > len(self.statements):
            problems.append(Problem("pd.window_years", window,
                                    f"at most the {len(self.statements)} years of statements given, "
                                    "or null for all years"))
        latest = self.statements[-1]
        dp = (self.pd.default_point.short_term_share * latest.short_term_liabilities
              + self.pd.default_point.long_term_share * latest.long_term_liabilities)
        if dp <= 0 and self.pd.override is None:
            problems.append(Problem("pd.default_point", f"{dp:g} {self.borrower.currency}",
                                    "shares and latest liabilities giving a default point above 0"))
        names = [s.name for s in self.scenarios]
        for index, name in enumerate(names):
            if name in names[:index]:
                problems.append(Problem(f"scenarios[{index}].name", name, "a unique scenario name"))
        if problems:
            raise CaseProblems(problems)
        return self


# --------------------------------------------------------------------------- parsing


def parse_case(data: Any, source: str = "case") -> Case:
    """Validate a plain mapping (from YAML, JSON or a form) into a frozen :class:`Case`."""
    if not isinstance(data, dict):
        raise CaseError.single("case", type(data).__name__,
                               "a mapping with keys borrower, statements, facilities, ...", source)
    try:
        return Case.model_validate(data)
    except ValidationError as exc:
        raise CaseError(problems_from_validation(Case, exc), source=source) from None


def case_to_dict(case: Case) -> dict[str, Any]:
    """The case as plain data (JSON/YAML-ready); parse_case(case_to_dict(c)) == c."""
    return case.model_dump(mode="json")
