"""The cross-check rule: a Z-score zone or a market PD graded more than two notches from the grade
in force needs the analyst's explanation; without one the case carries a caution (not a refusal)."""

from __future__ import annotations

import pytest
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.decision import ZONE_PD, cross_check_grades, unexplained_gaps
from obligor_memo.engine.evaluate import evaluate


def _without_explanation(case):
    return case.model_copy(update={"memo": case.memo.model_copy(update={"cross_check_explanation": ""})})


def test_sample_cross_checks_graded_by_hand(sample_case):
    r = evaluate(sample_case)
    by_source = {c.source: c for c in r.cross_checks}
    assert r.pd.grade == "4"
    naive = by_source["naive market PD"]
    # Default scale: grade 8 is the band (3.5569 %, 7.2403 %]; the naive PD 4.58 % lies in it.
    assert 0.0355 < naive.pd <= 0.0725 and naive.grade == "8"
    assert naive.notches == 8 - 4
    z = by_source["Z (1968) zone"]
    # Distress zone read as PD 5 %: inside grade 8's band too, 4 notches from grade 4.
    assert (z.reading, z.pd, z.grade, z.notches) == ("distress", ZONE_PD["distress"], "8", 4)
    grey = by_source["Z' (private firms) zone"]
    # Grey zone read as 1 %: grade 6's band (0.8584 %, 1.7474 %]; 2 notches: within the tolerance.
    assert (grey.grade, grey.notches) == ("6", 2)
    # The sample gives an explanation: no caution.
    assert not [c for c in r.cautions if c.code == "pd.cross_check_unexplained"]


def test_empty_explanation_is_a_caution_naming_the_field(sample_case):
    r = evaluate(_without_explanation(sample_case))
    (caution,) = [c for c in r.cautions if c.code == "pd.cross_check_unexplained"]
    assert caution.field == "memo.cross_check_explanation"
    assert "naive market PD: grade 8, 4 notches worse" in caution.message
    assert "Z (1968) zone distress: grade 8, 4 notches worse" in caution.message
    assert "grey" not in caution.message  # two notches are within the rule
    # Whitespace only is no explanation either.
    case = sample_case.model_copy(
        update={"memo": sample_case.memo.model_copy(update={"cross_check_explanation": "  \n "})}
    )
    assert any(c.code == "pd.cross_check_unexplained" for c in evaluate(case).cautions)


def test_within_two_notches_needs_no_explanation(make_case):
    # A case with no market block and no Z-score columns: nothing to cross-check, no caution.
    r = evaluate(parse_case(make_case()))
    assert r.cross_checks == ()
    assert not [c for c in r.cautions if c.code == "pd.cross_check_unexplained"]


def test_rule_on_a_case_master_scale(sample_case):
    # A coarse three-grade scale: A up to 1 %, B up to 10 %, D the rest. Model PD 0.21 % is A;
    # the naive PD 4.58 % and the distress zone (5 %) are B: one notch, within the rule.
    scale = [{"grade": "A", "pd_upper": 0.01}, {"grade": "B", "pd_upper": 0.10}, {"grade": "D", "pd_upper": 1.0}]
    data = sample_case.model_dump(mode="json")
    data["pd"]["master_scale"] = scale
    data["memo"]["cross_check_explanation"] = ""
    r = evaluate(parse_case(data))
    assert r.pd.grade == "A"
    assert {c.source: (c.grade, c.notches) for c in r.cross_checks}["naive market PD"] == ("B", 1)
    assert not [c for c in r.cautions if c.code == "pd.cross_check_unexplained"]


@pytest.mark.parametrize(("notches", "flagged"), [(2, False), (3, True), (-3, True), (-2, False)])
def test_more_than_two_notches_either_way(notches, flagged):
    from obligor_memo.engine.decision import CrossCheckGrade

    check = CrossCheckGrade("naive market PD", "", 0.01, "x", notches)
    assert bool(unexplained_gaps((check,), "")) is flagged
    assert unexplained_gaps((check,), "explained") == ()


def test_no_grade_no_cross_check(sample_case):
    r = evaluate(sample_case)
    from dataclasses import replace

    assert cross_check_grades(sample_case, replace(r.pd, grade=None), r.zscores, r.market) == ()
