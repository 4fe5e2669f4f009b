"""Exposure at default: EAD = drawn + CCF x max(committed - drawn, 0).

The credit conversion factor (CCF) comes, in this order, from the facility's own ``ccf``, from
the case's CCF-by-grade table (a row for the facility's kind before a row for any kind), or from
the preset for the facility's kind in the Basel standardised approach:

Basel III final (BCBS, "Basel III: Finalising post-crisis reforms", December 2017, standardised
approach for credit risk, off-balance-sheet items; consolidated framework CRE20.93-CRE20.101):
commitments 40 % whatever their maturity, unconditionally cancellable commitments 10 %, direct
credit substitutes such as general guarantees of indebtedness 100 %, short-term self-liquidating
trade letters of credit 20 %.
Basel II (BCBS, "International Convergence of Capital Measurement and Capital Standards",
June 2006, paragraphs 82-85): commitments with an original maturity up to one year 20 %, over one
year 50 %, unconditionally cancellable 0 %; direct credit substitutes 100 %; trade letters of
credit 20 %. Paragraph numbers are given from memory.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

FacilityKind = Literal["bond", "term_loan", "revolver", "guarantee", "letter_of_credit"]
Standard = Literal["basel_iii", "basel_ii"]

_B3 = "Basel III final (Dec 2017), standardised approach, CRE20.93-101"
_B2 = "Basel II (June 2006), paras 82-85"


def ccf_preset(
    kind: FacilityKind, *, standard: Standard = "basel_iii", maturity_years: float = 1.0, cancellable: bool = False
) -> tuple[float, str]:
    """The standardised-approach CCF for a facility kind, with the source it comes from.

    ``maturity_years`` stands in for the original maturity (Basel II's 1-year boundary).
    A bond's unsettled amount is a forward purchase commitment, converted at 100 %.

    Parameters
    ----------
    kind : FacilityKind
        Facility kind: bond, term_loan, revolver, guarantee or letter_of_credit.
    standard : Standard, optional
        Basel standard: ``basel_iii`` or ``basel_ii``.
    maturity_years : float, optional
        Original maturity of the commitment [years] (Basel II's one-year boundary).
    cancellable : bool, optional
        True for an unconditionally cancellable commitment.

    Returns
    -------
    tuple[float, str]
        The CCF [fraction] and its source.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if standard not in ("basel_iii", "basel_ii"):
        raise ValueError(f"exposure.ccf_standard: got {standard!r}; allowed: 'basel_iii' or 'basel_ii'")
    b3 = standard == "basel_iii"
    src = _B3 if b3 else _B2
    if kind in ("term_loan", "revolver"):
        if cancellable:
            return (
                (0.10, f"{src}: unconditionally cancellable commitment")
                if b3
                else (0.0, f"{src}: unconditionally cancellable commitment")
            )
        if b3:
            return 0.40, f"{src}: commitment"
        if maturity_years <= 1:
            return 0.20, f"{src}: commitment, original maturity up to one year"
        return 0.50, f"{src}: commitment, original maturity over one year"
    if kind == "guarantee":
        return 1.00, f"{src}: direct credit substitute (guarantee of indebtedness)"
    if kind == "letter_of_credit":
        return 0.20, f"{src}: short-term self-liquidating trade letter of credit"
    if kind == "bond":
        return 1.00, f"{src}: forward asset purchase (unsettled bond amount)"
    raise ValueError(f"facilities.kind: got {kind!r}; allowed: bond, term_loan, revolver, guarantee, letter_of_credit")


def exposure_at_default(*, drawn: float, committed: float, ccf: float) -> float:
    """EAD = drawn + CCF x max(committed - drawn, 0) [currency units].

    Parameters
    ----------
    drawn : float
        Drawn amount [currency units].
    committed : float
        Committed amount [currency units].
    ccf : float
        Credit conversion factor [fraction], in [0, 1].

    Returns
    -------
    float
        EAD [currency units].

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if drawn < 0 or committed < 0:
        raise ValueError(f"drawn and committed must be >= 0 (got {drawn!r}, {committed!r})")
    if not 0 <= ccf <= 1:
        raise ValueError(f"ccf: got {ccf!r}; allowed: a number from 0 to 1")
    return drawn + ccf * max(committed - drawn, 0.0)


@dataclass(frozen=True)
class FacilityExposure:
    """One facility's exposure at default and the CCF it rests on."""

    id: str
    """Facility id."""
    kind: FacilityKind
    """Facility kind."""
    drawn: float
    """[currency units]"""
    committed: float
    """[currency units]"""
    undrawn: float
    """max(committed - drawn, 0) [currency units]"""
    ccf: float
    """[fraction]"""
    ccf_source: str
    """"facility", "grade table (grade X)" or the preset's citation."""
    ead: float
    """[currency units]"""


def resolve_ccf(
    *,
    kind: FacilityKind,
    own_ccf: float | None,
    grade: str | None,
    grade_table: list[tuple[str, float, str | None]] | None,
    standard: Standard,
    maturity_years: float,
    cancellable: bool,
) -> tuple[float, str]:
    """The CCF in force and where it came from (facility > grade table > preset).

    Parameters
    ----------
    kind : FacilityKind
        Facility kind: bond, term_loan, revolver, guarantee or letter_of_credit.
    own_ccf : float | None
        The CCF set on the facility [fraction]; None for none.
    grade : str | None
        The borrower's grade; None when not graded.
    grade_table : list[tuple[str, float, str | None]] | None
        The case's CCF-by-grade rows (grade, CCF [fraction], kind or None for any kind); None for none.
    standard : Standard
        Basel standard: ``basel_iii`` or ``basel_ii``.
    maturity_years : float
        Maturity of the facility [years].
    cancellable : bool
        True for an unconditionally cancellable commitment.

    Returns
    -------
    tuple[float, str]
        The CCF in force [fraction] and where it came from.
    """
    if own_ccf is not None:
        return own_ccf, "set on the facility"
    if grade_table and grade is not None:
        for row_grade, row_ccf, row_kind in grade_table:
            if row_grade == grade and row_kind == kind:
                return row_ccf, f"CCF-by-grade table (grade {grade}, {kind})"
        for row_grade, row_ccf, row_kind in grade_table:
            if row_grade == grade and row_kind is None:
                return row_ccf, f"CCF-by-grade table (grade {grade})"
    return ccf_preset(kind, standard=standard, maturity_years=maturity_years, cancellable=cancellable)


def facility_exposure(
    *, id: str, kind: FacilityKind, drawn: float, committed: float, ccf: float, ccf_source: str
) -> FacilityExposure:
    """Build a facility's exposure: undrawn amount and EAD = drawn + CCF x max(committed - drawn, 0).

    Parameters
    ----------
    id : str
        Facility id.
    kind : FacilityKind
        Facility kind: bond, term_loan, revolver, guarantee or letter_of_credit.
    drawn : float
        Drawn amount [currency units], >= 0.
    committed : float
        Committed amount [currency units], >= 0.
    ccf : float
        Credit conversion factor [fraction], in [0, 1].
    ccf_source : str
        Where the CCF came from, in words.

    Returns
    -------
    FacilityExposure
        The facility's amounts, CCF and EAD.

    Raises
    ------
    ValueError
        If an amount is negative or the CCF is outside [0, 1].
    """
    return FacilityExposure(
        id=id,
        kind=kind,
        drawn=drawn,
        committed=committed,
        undrawn=max(committed - drawn, 0.0),
        ccf=ccf,
        ccf_source=ccf_source,
        ead=exposure_at_default(drawn=drawn, committed=committed, ccf=ccf),
    )
