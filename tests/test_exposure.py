"""Exposure at default and the credit conversion factors of the Basel standardised approach."""

from __future__ import annotations

import pytest
from obligor_memo.engine.exposure import ccf_preset, exposure_at_default, facility_exposure, resolve_ccf


@pytest.mark.parametrize(
    ("drawn", "committed", "ccf", "expected"),
    [
        (30.0, 50.0, 0.4, 30.0 + 0.4 * 20.0),
        (0.0, 100.0, 1.0, 100.0),  # an undrawn guarantee converts in full
        (0.0, 100.0, 0.0, 0.0),
        (50.0, 50.0, 0.75, 50.0),  # fully drawn: nothing left to convert
        (60.0, 50.0, 0.4, 60.0),  # overdrawn: the undrawn part is max(committed - drawn, 0)
        (22e6, 60e6, 0.4, 37.2e6),
    ],
)
def test_ead_is_drawn_plus_ccf_times_undrawn(drawn, committed, ccf, expected) -> None:
    # EAD = drawn + CCF x max(committed - drawn, 0) (DESIGN.md section 4; common practice).
    assert exposure_at_default(drawn=drawn, committed=committed, ccf=ccf) == pytest.approx(expected, rel=1e-15)


# Presets, from memory of the Basel texts as cited in engine/exposure.py:
# Basel III final (BCBS, December 2017; CRE20.93-CRE20.101): commitments 40 %, unconditionally
# cancellable commitments 10 %, direct credit substitutes (guarantees) 100 %, short-term
# self-liquidating trade letters of credit 20 %.
# Basel II (BCBS, June 2006, paragraphs 82-85): commitments up to one year 20 %, over one year
# 50 %, unconditionally cancellable 0 %, direct credit substitutes 100 %, trade LCs 20 %.
# An unsettled bond purchase is a forward asset purchase, converted at 100 % in both.
PRESETS = [
    ("basel_iii", "term_loan", 3.0, False, 0.40),
    ("basel_iii", "revolver", 0.5, False, 0.40),
    ("basel_iii", "revolver", 3.0, True, 0.10),
    ("basel_iii", "term_loan", 3.0, True, 0.10),
    ("basel_iii", "guarantee", 2.0, False, 1.00),
    ("basel_iii", "letter_of_credit", 0.5, False, 0.20),
    ("basel_iii", "bond", 3.5, False, 1.00),
    ("basel_ii", "term_loan", 1.0, False, 0.20),
    ("basel_ii", "revolver", 0.5, False, 0.20),
    ("basel_ii", "revolver", 1.5, False, 0.50),
    ("basel_ii", "term_loan", 5.0, False, 0.50),
    ("basel_ii", "revolver", 5.0, True, 0.00),
    ("basel_ii", "guarantee", 2.0, False, 1.00),
    ("basel_ii", "letter_of_credit", 0.5, False, 0.20),
    ("basel_ii", "bond", 3.5, False, 1.00),
]


@pytest.mark.parametrize(("standard", "kind", "maturity", "cancellable", "expected"), PRESETS)
def test_ccf_presets(standard, kind, maturity, cancellable, expected) -> None:
    ccf, source = ccf_preset(kind, standard=standard, maturity_years=maturity, cancellable=cancellable)
    assert ccf == expected
    assert ("Basel III" if standard == "basel_iii" else "Basel II") in source


def test_ccf_preset_refuses_unknowns() -> None:
    with pytest.raises(ValueError, match="exposure.ccf_standard: got 'basel_iv'"):
        ccf_preset("term_loan", standard="basel_iv")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="facilities.kind: got 'overdraft'"):
        ccf_preset("overdraft")  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("drawn", "committed", "ccf"), [(-1.0, 10.0, 0.5), (1.0, -10.0, 0.5), (1.0, 10.0, 1.5), (1.0, 10.0, -0.1)]
)
def test_ead_refuses_bad_parameters(drawn, committed, ccf) -> None:
    with pytest.raises(ValueError):
        exposure_at_default(drawn=drawn, committed=committed, ccf=ccf)


GRADE_TABLE = [("5", 0.55, None), ("5", 0.65, "revolver"), ("6", 0.75, None)]


@pytest.mark.parametrize(
    ("own", "grade", "table", "kind", "expected", "source_fragment"),
    [
        (0.9, "5", GRADE_TABLE, "revolver", 0.9, "facility"),  # facility beats the table
        (None, "5", GRADE_TABLE, "revolver", 0.65, "grade 5, revolver"),  # kind row beats any-kind row
        (None, "5", GRADE_TABLE, "term_loan", 0.55, "grade 5"),
        (None, "6", GRADE_TABLE, "revolver", 0.75, "grade 6"),
        (None, "7", GRADE_TABLE, "revolver", 0.40, "commitment"),  # no row: the preset
        (None, None, GRADE_TABLE, "revolver", 0.40, "commitment"),  # no grade: the preset
        (None, "5", None, "revolver", 0.40, "commitment"),
        (0.0, "5", GRADE_TABLE, "revolver", 0.0, "facility"),  # a facility's 0 is a value, not "unset"
    ],
)
def test_ccf_precedence_facility_then_grade_table_then_preset(
    own, grade, table, kind, expected, source_fragment
) -> None:
    ccf, source = resolve_ccf(
        kind=kind,
        own_ccf=own,
        grade=grade,
        grade_table=table,
        standard="basel_iii",
        maturity_years=3.0,
        cancellable=False,
    )
    assert ccf == expected
    assert source_fragment in source


def test_facility_exposure_keeps_every_intermediate() -> None:
    exposure = facility_exposure(id="RCF", kind="revolver", drawn=22.0, committed=60.0, ccf=0.4, ccf_source="preset")
    assert (exposure.undrawn, exposure.ccf, exposure.ead) == (38.0, 0.4, pytest.approx(22.0 + 0.4 * 38.0))
    overdrawn = facility_exposure(id="X", kind="revolver", drawn=70.0, committed=60.0, ccf=0.4, ccf_source="preset")
    assert (overdrawn.undrawn, overdrawn.ead) == (0.0, 70.0)
