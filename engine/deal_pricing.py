"""RAROC and the minimum spread of each facility and of the whole relationship.

Each rate accrues on the amount it is charged on (common practice in loan pricing):

* interest, base rate + spread, on the drawn (funded) amount;
* the commitment fee on the undrawn commitment of term loans and revolvers;
* the issuance fee on the amount issued and not called of guarantees and letters of credit;
* other fees (``fee_rate``) and the operating cost on the EAD;
* funding cost, base rate + funding spread, on the drawn (funded) amount only;
* one-year expected loss and one-year capital on the EAD.

RAROC = (income - funding - operating cost - EL + capital x capital_return_rate) / capital
(Crouhy, Galai and Mark, "Risk Management", McGraw-Hill, 2001, chapter on RAROC; the same
definition as :func:`engine.pricing.raroc`). RAROC is undefined where the capital is 0; the
minimum income (RAROC = hurdle solved for income) stays defined. The minimum spread is the
spread on the funded amount at which income equals the minimum income, fees held; it is
undefined where nothing is funded (a fully undrawn revolver, a guarantee not called).
"""

from __future__ import annotations

from dataclasses import dataclass

COMMITMENT_FEE_KINDS = ("term_loan", "revolver")
"""Kinds charged a commitment fee on the undrawn commitment."""
ISSUANCE_FEE_KINDS = ("guarantee", "letter_of_credit")
"""Kinds charged an issuance fee on the amount issued."""


@dataclass(frozen=True)
class PricingLine:
    """One facility's amounts and rates, the input of :func:`price_lines`."""

    id: str
    """Facility id."""
    kind: str
    """Facility kind."""
    drawn: float
    """Drawn (funded) amount [currency units]."""
    undrawn: float
    """Committed less drawn [currency units]."""
    ead: float
    """Exposure at default [currency units]."""
    proposed_spread: float
    """Margin over the base rate on the drawn amount [fraction/year]."""
    fee_rate: float
    """Other fees on the EAD [fraction/year]."""
    commitment_fee_rate: float
    """On the undrawn commitment (loans, revolvers) [fraction/year]."""
    issuance_fee_rate: float
    """On the amount issued (guarantees, letters of credit) [fraction/year]."""
    funding_spread: float
    """Funding margin over the base rate [fraction/year]."""
    operating_cost_rate: float
    """On the EAD [fraction/year]."""
    expected_loss: float
    """One-year expected loss [currency/year]."""
    capital_regulatory: float
    """One-year regulatory capital, 8 % of RWA [currency units]."""
    capital_economic: float
    """One-year economic capital (the case's method) [currency units]."""


@dataclass(frozen=True)
class FacilityPricing:
    """RAROC of one facility (or, with id "relationship", of all of them together)."""

    id: str
    """Facility id, or ``relationship`` for the whole relationship."""
    kind: str
    """Facility kind (empty for the relationship)."""
    capital_basis: str
    """"regulatory" or "economic": the capital RAROC and the minimum spread use."""
    funded: float
    """Amount earning interest and funded [currency units]."""
    commitment_fee_base: float
    """Undrawn commitment charged the commitment fee [currency units]."""
    issued: float
    """Amount issued charged the issuance fee [currency units]."""
    ead: float
    """[currency units]"""
    base_rate: float
    """[fraction/year]"""
    proposed_spread: float
    """On the funded amount; for the relationship the funded-weighted mean [fraction/year]."""
    interest_income: float
    """(base rate + spread) x funded [currency/year]."""
    commitment_fee_income: float
    """[currency/year]"""
    issuance_fee_income: float
    """[currency/year]"""
    other_fee_income: float
    """fee_rate x EAD [currency/year]."""
    income: float
    """All interest and fees [currency/year]."""
    funding_cost: float
    """(base rate + funding spread) x funded [currency/year]."""
    operating_cost: float
    """[currency/year]"""
    expected_loss: float
    """One-year EL [currency/year]."""
    capital: float
    """Capital on the chosen basis [currency units]."""
    capital_regulatory: float
    """[currency units]"""
    capital_economic: float
    """[currency units]"""
    capital_return_rate: float
    """[fraction/year]"""
    capital_benefit: float
    """capital x capital_return_rate [currency/year]."""
    risk_adjusted_return: float
    """The RAROC numerator [currency/year]."""
    raroc: float | None
    """On the chosen basis; None where that capital is 0 [fraction/year]."""
    raroc_regulatory: float | None
    """[fraction/year]"""
    raroc_economic: float | None
    """[fraction/year]"""
    hurdle_rate: float
    """[fraction/year]"""
    minimum_income: float
    """Income at which RAROC equals the hurdle [currency/year]."""
    minimum_spread: float | None
    """Spread on the funded amount meeting the hurdle; None when nothing is funded [fraction/year]."""
    spread_shortfall: float | None
    """minimum_spread - proposed_spread; negative is a cushion [fraction/year]."""
    meets_hurdle: bool
    """True when income >= minimum income (RAROC >= hurdle where defined)."""
    note: str
    """Why RAROC or the minimum spread is undefined, else ""."""


def _ratio(numerator: float, capital: float) -> float | None:
    return numerator / capital if capital > 0 else None


def _priced(
    *,
    id: str,
    kind: str,
    basis: str,
    funded: float,
    fee_base: float,
    issued: float,
    ead: float,
    base_rate: float,
    spread: float,
    interest: float,
    commitment: float,
    issuance: float,
    other: float,
    funding: float,
    operating: float,
    el: float,
    capital_regulatory: float,
    capital_economic: float,
    capital_return_rate: float,
    hurdle_rate: float,
) -> FacilityPricing:
    capital = capital_economic if basis == "economic" else capital_regulatory
    income = interest + commitment + issuance + other
    base_return = income - funding - operating - el
    benefit = capital * capital_return_rate
    minimum_income = hurdle_rate * capital + funding + operating + el - benefit
    fees = commitment + issuance + other
    minimum_spread = (minimum_income - fees) / funded - base_rate if funded > 0 else None
    notes = []
    if capital <= 0:
        notes.append(f"RAROC is undefined: the {basis} capital is zero")
    if funded <= 0:
        notes.append("no minimum spread: nothing is drawn, so no interest accrues")
    return FacilityPricing(
        id=id,
        kind=kind,
        capital_basis=basis,
        funded=funded,
        commitment_fee_base=fee_base,
        issued=issued,
        ead=ead,
        base_rate=base_rate,
        proposed_spread=spread,
        interest_income=interest,
        commitment_fee_income=commitment,
        issuance_fee_income=issuance,
        other_fee_income=other,
        income=income,
        funding_cost=funding,
        operating_cost=operating,
        expected_loss=el,
        capital=capital,
        capital_regulatory=capital_regulatory,
        capital_economic=capital_economic,
        capital_return_rate=capital_return_rate,
        capital_benefit=benefit,
        risk_adjusted_return=base_return + benefit,
        raroc=_ratio(base_return + benefit, capital),
        raroc_regulatory=_ratio(base_return + capital_regulatory * capital_return_rate, capital_regulatory),
        raroc_economic=_ratio(base_return + capital_economic * capital_return_rate, capital_economic),
        hurdle_rate=hurdle_rate,
        minimum_income=minimum_income,
        minimum_spread=minimum_spread,
        spread_shortfall=None if minimum_spread is None else minimum_spread - spread,
        meets_hurdle=income >= minimum_income - 1e-9 * max(abs(minimum_income), 1.0),
        note="; ".join(notes),
    )


def price_lines(
    lines: list[PricingLine],
    *,
    base_rate: float,
    capital_return_rate: float,
    hurdle_rate: float,
    capital_basis: str,
    deal_spread: float,
) -> tuple[tuple[FacilityPricing, ...], FacilityPricing]:
    """Each facility's pricing and the relationship's (sums; one uniform minimum spread).

    Parameters
    ----------
    lines : list[PricingLine]
        One :class:`PricingLine` per facility, rates already resolved (facility over deal).
    base_rate : float
        The deal's reference rate [fraction/year].
    capital_return_rate : float
        Return earned on the capital held [fraction/year].
    hurdle_rate : float
        RAROC the relationship must reach [fraction/year].
    capital_basis : str
        "regulatory" or "economic".
    deal_spread : float
        The deal's proposed spread, reported for a relationship with nothing funded [fraction/year].

    Returns
    -------
    tuple[tuple[FacilityPricing, ...], FacilityPricing]
        (per-facility results, relationship result). The relationship's minimum spread is the one spread on
        every funded amount at which the relationship meets the hurdle.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if capital_basis not in ("regulatory", "economic"):
        raise ValueError(f"pricing.capital_basis: got {capital_basis!r}; allowed: regulatory, economic")
    out = []
    for line in lines:
        # Every drawn amount is funded; on a guarantee or letter of credit it is a called claim.
        funded = line.drawn
        fee_base = line.undrawn if line.kind in COMMITMENT_FEE_KINDS else 0.0
        issued = line.undrawn if line.kind in ISSUANCE_FEE_KINDS else 0.0
        out.append(
            _priced(
                id=line.id,
                kind=line.kind,
                basis=capital_basis,
                funded=funded,
                fee_base=fee_base,
                issued=issued,
                ead=line.ead,
                base_rate=base_rate,
                spread=line.proposed_spread,
                interest=(base_rate + line.proposed_spread) * funded,
                commitment=line.commitment_fee_rate * fee_base,
                issuance=line.issuance_fee_rate * issued,
                other=line.fee_rate * line.ead,
                funding=(base_rate + line.funding_spread) * funded,
                operating=line.operating_cost_rate * line.ead,
                el=line.expected_loss,
                capital_regulatory=line.capital_regulatory,
                capital_economic=line.capital_economic,
                capital_return_rate=capital_return_rate,
                hurdle_rate=hurdle_rate,
            )
        )
    funded = sum(p.funded for p in out)
    spread = sum(p.proposed_spread * p.funded for p in out) / funded if funded > 0 else deal_spread
    total = _priced(
        id="relationship",
        kind="",
        basis=capital_basis,
        funded=funded,
        fee_base=sum(p.commitment_fee_base for p in out),
        issued=sum(p.issued for p in out),
        ead=sum(p.ead for p in out),
        base_rate=base_rate,
        spread=spread,
        interest=sum(p.interest_income for p in out),
        commitment=sum(p.commitment_fee_income for p in out),
        issuance=sum(p.issuance_fee_income for p in out),
        other=sum(p.other_fee_income for p in out),
        funding=sum(p.funding_cost for p in out),
        operating=sum(p.operating_cost for p in out),
        el=sum(p.expected_loss for p in out),
        capital_regulatory=sum(p.capital_regulatory for p in out),
        capital_economic=sum(p.capital_economic for p in out),
        capital_return_rate=capital_return_rate,
        hurdle_rate=hurdle_rate,
    )
    return tuple(out), total


@dataclass(frozen=True)
class DealPricing:
    """The relationship's pricing (headline fields) with every facility's and both capital bases."""

    capital_basis: str
    """"regulatory" (8 % of RWA, one-year PD) or "economic" (the case's economic method)."""
    capital_basis_label: str
    """The basis in words, as printed."""
    base_rate: float
    """[fraction/year]"""
    proposed_spread: float
    """Funded-weighted mean spread [fraction/year]."""
    fee_rate: float
    """Deal's other-fee rate on EAD [fraction/year]."""
    commitment_fee_rate: float
    """[fraction/year]"""
    issuance_fee_rate: float
    """[fraction/year]"""
    funding_spread: float
    """[fraction/year]"""
    operating_cost_rate: float
    """[fraction/year]"""
    capital_return_rate: float
    """[fraction/year]"""
    hurdle_rate: float
    """[fraction/year]"""
    exposure: float
    """Total EAD [currency units]."""
    funded: float
    """Total drawn [currency units]."""
    income: float
    """[currency/year]"""
    funding_cost: float
    """[currency/year]"""
    operating_cost: float
    """[currency/year]"""
    expected_loss: float
    """One-year EL [currency/year]."""
    capital: float
    """On the chosen basis [currency units]."""
    capital_regulatory: float
    """[currency units]"""
    capital_economic: float
    """[currency units]"""
    capital_benefit: float
    """[currency/year]"""
    risk_adjusted_return: float
    """[currency/year]"""
    raroc: float | None
    """None where the chosen capital is 0 [fraction/year]."""
    raroc_regulatory: float | None
    """[fraction/year]"""
    raroc_economic: float | None
    """[fraction/year]"""
    minimum_income: float
    """[currency/year]"""
    minimum_spread: float | None
    """One spread on every funded amount meeting the hurdle [fraction/year]."""
    spread_shortfall: float | None
    """[fraction/year]"""
    meets_hurdle: bool
    """True when the income reaches the minimum income."""
    note: str
    """Notes on the pricing, joined with semicolons."""
    facilities: tuple[FacilityPricing, ...]
    """Each facility's pricing, in case order."""
    relationship: FacilityPricing
    """The relationship's pricing (the sums)."""


def deal_pricing(
    facilities: tuple[FacilityPricing, ...], relationship: FacilityPricing, *, rates: dict[str, float], label: str
) -> DealPricing:
    """Assemble :class:`DealPricing` from :func:`price_lines` and the deal's rates.

    Parameters
    ----------
    facilities : tuple[FacilityPricing, ...]
        Each facility's pricing, from :func:`price_lines`.
    relationship : FacilityPricing
        The relationship's pricing, from :func:`price_lines`.
    rates : dict[str, float]
        The deal's rates by name [fraction/year].
    label : str
        What the pricing is of, in words.

    Returns
    -------
    DealPricing
        The deal's pricing.
    """
    r = relationship
    return DealPricing(
        capital_basis=r.capital_basis,
        capital_basis_label=label,
        base_rate=r.base_rate,
        proposed_spread=r.proposed_spread,
        fee_rate=rates["fee_rate"],
        commitment_fee_rate=rates["commitment_fee_rate"],
        issuance_fee_rate=rates["issuance_fee_rate"],
        funding_spread=rates["funding_spread"],
        operating_cost_rate=rates["operating_cost_rate"],
        capital_return_rate=r.capital_return_rate,
        hurdle_rate=r.hurdle_rate,
        exposure=r.ead,
        funded=r.funded,
        income=r.income,
        funding_cost=r.funding_cost,
        operating_cost=r.operating_cost,
        expected_loss=r.expected_loss,
        capital=r.capital,
        capital_regulatory=r.capital_regulatory,
        capital_economic=r.capital_economic,
        capital_benefit=r.capital_benefit,
        risk_adjusted_return=r.risk_adjusted_return,
        raroc=r.raroc,
        raroc_regulatory=r.raroc_regulatory,
        raroc_economic=r.raroc_economic,
        minimum_income=r.minimum_income,
        minimum_spread=r.minimum_spread,
        spread_shortfall=r.spread_shortfall,
        meets_hurdle=r.meets_hurdle,
        note=r.note,
        facilities=facilities,
        relationship=relationship,
    )
