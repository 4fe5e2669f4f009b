"""Risk-adjusted pricing of a facility: RAROC and the minimum price that meets a hurdle.

Risk-adjusted return on capital over one year (Crouhy, Galai and Mark,
"Risk Management", McGraw-Hill, 2001, chapter on capital allocation and RAROC):

    RAROC = (income - funding cost - operating cost - expected loss
             + return on the capital itself) / capital

The capital is assumed invested at a risk-free rate (capital_return_rate), which
is why that term appears in the numerator. Solving RAROC = hurdle for income
gives the minimum income:

    income_min = hurdle C + funding + operating cost + EL - C capital_return_rate

Rates are fractions of the exposure per year; amounts are in the case's currency.
The capital basis (regulatory K x EAD, or economic capital) is the caller's
choice and is carried through unchanged.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from obligor_memo.engine import ENGINE_VERSION


@dataclass(frozen=True)
class RarocResult:
    """RAROC per unit of exposure, with every term of the numerator."""

    income_rate: float
    """Interest and fee income [fraction of exposure/year]."""
    funding_cost_rate: float
    """Cost of funding the exposure [fraction of exposure/year]."""
    operating_cost_rate: float
    """Operating cost [fraction of exposure/year]."""
    expected_loss_rate: float
    """Expected loss, PD x LGD [fraction of exposure/year]."""
    capital_rate: float
    """Capital held [fraction of exposure]."""
    capital_return_rate: float
    """Return earned on the capital held [fraction/year]."""
    capital_benefit_rate: float
    """capital_rate x capital_return_rate [fraction of exposure/year]."""
    risk_adjusted_return_rate: float
    """The RAROC numerator [fraction of exposure/year]."""
    raroc: float
    """risk_adjusted_return_rate / capital_rate [fraction/year]."""
    engine_version: str
    """Version of the engine that produced the result."""


@dataclass(frozen=True)
class PricingResult:
    """RAROC of a proposed price in amounts, and the spread the hurdle requires."""

    exposure: float
    """Exposure priced, usually the EAD [currency units]."""
    base_rate: float
    """Reference rate the spread is quoted over [fraction/year]."""
    proposed_spread: float
    """Margin over base_rate offered [fraction/year]."""
    fee_rate: float
    """Annualised fees [fraction of exposure/year]."""
    funding_spread: float
    """The lender's funding margin over base_rate [fraction/year]."""
    operating_cost_rate: float
    """Operating cost [fraction of exposure/year]."""
    capital_return_rate: float
    """Return earned on the capital held [fraction/year]."""
    hurdle_rate: float
    """RAROC the facility must reach [fraction/year]."""
    income: float
    """(base_rate + proposed_spread + fee_rate) x exposure [currency/year]."""
    funding_cost: float
    """(base_rate + funding_spread) x exposure [currency/year]."""
    operating_cost: float
    """operating_cost_rate x exposure [currency/year]."""
    expected_loss: float
    """Expected loss [currency/year]."""
    capital: float
    """Capital held against the exposure [currency units]."""
    capital_benefit: float
    """Capital x capital_return_rate [currency/year]."""
    risk_adjusted_return: float
    """The RAROC numerator [currency/year]."""
    raroc: float
    """risk_adjusted_return / capital [fraction/year]."""
    minimum_income: float
    """Income at which RAROC equals the hurdle [currency/year]."""
    minimum_spread: float
    """Spread over base_rate at which RAROC equals the hurdle, fees held at fee_rate [fraction/year]."""
    spread_shortfall: float
    """minimum_spread - proposed_spread; negative is a cushion above the hurdle [fraction/year]."""
    meets_hurdle: bool
    """True when spread_shortfall <= 0, i.e. RAROC >= hurdle."""
    engine_version: str
    """Version of the engine that produced the result."""


def _number(name: str, value: float, *, low: float, high: float, unit: str) -> float:
    """Return value as float, or raise ValueError naming it when outside [low, high]."""
    try:
        number = float(value)
    except (TypeError, ValueError) as error:
        raise ValueError(f"{name} = {value!r} is not a number; allowed range [{low:g}, {high:g}] {unit}") from error
    if not (low <= number <= high):  # also rejects NaN
        raise ValueError(f"{name} = {number!r} is outside the allowed range [{low:g}, {high:g}] {unit}")
    return number


def _positive(name: str, value: float, *, high: float, unit: str, reason: str = "") -> float:
    """Return value as float, or raise ValueError naming it unless 0 < value <= high, finite."""
    try:
        number = float(value)
    except (TypeError, ValueError) as error:
        raise ValueError(f"{name} = {value!r} is not a number; allowed range (0, {high:g}] {unit}") from error
    if not (0.0 < number <= high and math.isfinite(number)):  # also rejects NaN
        why = reason if number <= 0.0 else ""
        raise ValueError(f"{name} = {number!r} is outside the allowed range (0, {high:g}] {unit}{why}")
    return number


_RAROC_UNDEFINED = ": RAROC divides by the capital, so it is undefined unless this capital basis is > 0"


# Generous bounds: they catch percentages typed as whole numbers (4 for 4 %)
# while leaving room for negative base rates and unusual structures.
def _rate(name: str, value: float) -> float:
    return _number(name, value, low=-1.0, high=1.0, unit="[fraction/year]")


def _cost(name: str, value: float) -> float:
    return _number(name, value, low=0.0, high=1.0, unit="[fraction of exposure/year]")


def _cost_and_capital_rates(
    funding_cost_rate: float,
    operating_cost_rate: float,
    expected_loss_rate: float,
    capital_rate: float,
    capital_return_rate: float,
) -> tuple[float, float, float, float, float]:
    """The rates `raroc` and `minimum_income_rate` share, each checked against its range."""
    return (
        _rate("funding_cost_rate", funding_cost_rate),
        _cost("operating_cost_rate", operating_cost_rate),
        _cost("expected_loss_rate", expected_loss_rate),
        _positive("capital_rate", capital_rate, high=1.0, unit="[fraction of exposure]", reason=_RAROC_UNDEFINED),
        _rate("capital_return_rate", capital_return_rate),
    )


def raroc(
    *,
    income_rate: float,
    funding_cost_rate: float,
    operating_cost_rate: float,
    expected_loss_rate: float,
    capital_rate: float,
    capital_return_rate: float,
) -> RarocResult:
    """Risk-adjusted return on capital per unit of exposure, one year.

    RAROC = (income - funding - operating - EL + capital_rate x capital_return_rate)
            / capital_rate  (Crouhy, Galai and Mark, Risk Management, 2001).

    Parameters
    ----------
    income_rate : float
        Interest plus fees, in [-1, 1] [fraction of exposure/year].
    funding_cost_rate : float
        Funding cost, in [-1, 1] [fraction of exposure/year].
    operating_cost_rate : float
        Operating cost, in [0, 1] [fraction of exposure/year].
    expected_loss_rate : float
        Expected loss PD x LGD, in [0, 1] [fraction of exposure/year].
    capital_rate : float
        Capital held, in (0, 1] [fraction of exposure].
    capital_return_rate : float
        Return on the capital, usually the risk-free rate, in [-1, 1] [fraction/year].

    Returns
    -------
    RarocResult
        RarocResult; `raroc` [fraction/year].

    Raises
    ------
    ValueError
        An argument is outside its range; capital_rate <= 0 makes RAROC undefined.
    """
    income_rate = _rate("income_rate", income_rate)
    funding_cost_rate, operating_cost_rate, expected_loss_rate, capital_rate, capital_return_rate = (
        _cost_and_capital_rates(
            funding_cost_rate, operating_cost_rate, expected_loss_rate, capital_rate, capital_return_rate
        )
    )

    capital_benefit_rate = capital_rate * capital_return_rate
    numerator = income_rate - funding_cost_rate - operating_cost_rate - expected_loss_rate + capital_benefit_rate
    return RarocResult(
        income_rate=income_rate,
        funding_cost_rate=funding_cost_rate,
        operating_cost_rate=operating_cost_rate,
        expected_loss_rate=expected_loss_rate,
        capital_rate=capital_rate,
        capital_return_rate=capital_return_rate,
        capital_benefit_rate=capital_benefit_rate,
        risk_adjusted_return_rate=numerator,
        raroc=numerator / capital_rate,
        engine_version=ENGINE_VERSION,
    )


def minimum_income_rate(
    *,
    hurdle_rate: float,
    funding_cost_rate: float,
    operating_cost_rate: float,
    expected_loss_rate: float,
    capital_rate: float,
    capital_return_rate: float,
) -> float:
    """Income rate at which RAROC equals the hurdle.

    income_min = hurdle x C + funding + operating + EL - C x capital_return_rate,
    the RAROC definition (see `raroc`) solved for income.

    Parameters
    ----------
    hurdle_rate : float
        Required RAROC, in [0, 1] [fraction/year].
    funding_cost_rate : float
        As in :func:`raroc`.
    operating_cost_rate : float
        As in :func:`raroc`.
    expected_loss_rate : float
        As in :func:`raroc`.
    capital_rate : float
        As in :func:`raroc`.
    capital_return_rate : float
        As in :func:`raroc`.

    Returns
    -------
    float
        Minimum income rate [fraction of exposure/year].
    """
    hurdle_rate = _number("hurdle_rate", hurdle_rate, low=0.0, high=1.0, unit="[fraction/year]")
    funding_cost_rate, operating_cost_rate, expected_loss_rate, capital_rate, capital_return_rate = (
        _cost_and_capital_rates(
            funding_cost_rate, operating_cost_rate, expected_loss_rate, capital_rate, capital_return_rate
        )
    )
    return (
        hurdle_rate * capital_rate
        + funding_cost_rate
        + operating_cost_rate
        + expected_loss_rate
        - capital_rate * capital_return_rate
    )


def price_borrower(
    *,
    exposure: float,
    proposed_spread: float,
    fee_rate: float,
    base_rate: float,
    funding_spread: float,
    operating_cost_rate: float,
    expected_loss: float,
    capital: float,
    capital_return_rate: float,
    hurdle_rate: float,
) -> PricingResult:
    """RAROC of a proposed spread and the minimum spread that meets the hurdle.

    income = (base_rate + proposed_spread + fee_rate) x exposure and
    funding cost = (base_rate + funding_spread) x exposure; RAROC as in `raroc`.
    The minimum spread solves RAROC = hurdle with fees held at fee_rate:
    minimum_spread = income_min / exposure - base_rate - fee_rate.

    Parameters
    ----------
    exposure : float
        Exposure priced, > 0, usually the EAD [currency units].
    proposed_spread : float
        Margin over base_rate, in [-1, 1] [fraction/year].
    fee_rate : float
        Annualised fees, in [0, 1] [fraction of exposure/year].
    base_rate : float
        Reference rate, in [-1, 1] [fraction/year].
    funding_spread : float
        The lender's funding margin over base_rate, in [-1, 1] [fraction/year].
    operating_cost_rate : float
        Operating cost, in [0, 1] [fraction of exposure/year].
    expected_loss : float
        Expected loss over the year, in [0, exposure] [currency/year].
    capital : float
        Capital held against the exposure, > 0 and <= exposure; the basis (regulatory or economic) is the
        caller's [currency units].
    capital_return_rate : float
        Return on the capital, in [-1, 1] [fraction/year].
    hurdle_rate : float
        Required RAROC, in [0, 1] [fraction/year].

    Returns
    -------
    PricingResult
        PricingResult with every amount; `raroc` [fraction/year], `minimum_spread` and
        `spread_shortfall` [fraction/year].

    Raises
    ------
    ValueError
        An argument is outside its range; capital <= 0 makes RAROC undefined.
    """
    exposure = _positive("exposure", exposure, high=math.inf, unit="[currency]")
    proposed_spread = _rate("proposed_spread", proposed_spread)
    fee_rate = _cost("fee_rate", fee_rate)
    base_rate = _rate("base_rate", base_rate)
    funding_spread = _rate("funding_spread", funding_spread)
    operating_cost_rate = _cost("operating_cost_rate", operating_cost_rate)
    expected_loss = _number("expected_loss", expected_loss, low=0.0, high=exposure, unit="[currency/year]")
    capital = _positive("capital", capital, high=exposure, unit="[currency]", reason=_RAROC_UNDEFINED)
    capital_return_rate = _rate("capital_return_rate", capital_return_rate)
    hurdle_rate = _number("hurdle_rate", hurdle_rate, low=0.0, high=1.0, unit="[fraction/year]")

    income = (base_rate + proposed_spread + fee_rate) * exposure
    funding_cost = (base_rate + funding_spread) * exposure
    operating_cost = operating_cost_rate * exposure
    capital_benefit = capital * capital_return_rate
    risk_adjusted_return = income - funding_cost - operating_cost - expected_loss + capital_benefit
    minimum_income = hurdle_rate * capital + funding_cost + operating_cost + expected_loss - capital_benefit
    minimum_spread = minimum_income / exposure - base_rate - fee_rate
    spread_shortfall = minimum_spread - proposed_spread
    return PricingResult(
        exposure=exposure,
        base_rate=base_rate,
        proposed_spread=proposed_spread,
        fee_rate=fee_rate,
        funding_spread=funding_spread,
        operating_cost_rate=operating_cost_rate,
        capital_return_rate=capital_return_rate,
        hurdle_rate=hurdle_rate,
        income=income,
        funding_cost=funding_cost,
        operating_cost=operating_cost,
        expected_loss=expected_loss,
        capital=capital,
        capital_benefit=capital_benefit,
        risk_adjusted_return=risk_adjusted_return,
        raroc=risk_adjusted_return / capital,
        minimum_income=minimum_income,
        minimum_spread=minimum_spread,
        spread_shortfall=spread_shortfall,
        meets_hurdle=spread_shortfall <= 0.0,
        engine_version=ENGINE_VERSION,
    )
