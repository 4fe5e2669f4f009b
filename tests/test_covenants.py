"""Covenants: the schema, the value on the latest year, the headroom and the EBITDA fall to breach.

Every expected figure is worked by hand from the statement lines in the test (the formula is in
the comment beside it). Definitions (common practice): headroom as a fraction of the threshold,
positive = room; EBITDA fall to breach = the fall of EBITDA, other lines held, at which the
metric reaches the threshold.
"""

from __future__ import annotations

import copy

import pytest
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.compare import key_figures
from obligor_memo.engine.covenants import covenant_tests
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import evaluate

# One year with every line a covenant needs; round numbers so the arithmetic is checkable.
_LINES = {
    "ebitda": 50.0,
    "total_debt": 230.0,
    "cash": 30.0,
    "interest_expense": 10.0,
    "sales": 400.0,
    "book_equity": 100.0,
}


def _case(make_case, covenants, **lines):
    data = make_case()
    for row in data["statements"]:
        row.update(_LINES)
    data["statements"][-1].update(lines)
    data["covenants"] = covenants
    return data


def _one(make_case, covenant, **lines):
    return evaluate(parse_case(_case(make_case, [covenant], **lines))).covenants[0]


def test_leverage_cap_headroom_and_breach_fall(make_case):
    c = _one(make_case, {"metric": "net_debt_to_ebitda", "threshold": 5.0, "direction": "max", "tested": "quarterly"})
    # net debt = 230 - 30 = 200; 200 / 50 = 4.0x
    assert c.value == pytest.approx(4.0)
    # headroom = (5.0 - 4.0) / 5.0 = 20 % of the threshold
    assert c.headroom == pytest.approx(0.20)
    # breach when EBITDA < 200 / 5.0 = 40; fall = (50 - 40) / 50 = 20 %
    assert c.ebitda_at_breach == pytest.approx(40.0)
    assert c.ebitda_fall_to_breach == pytest.approx(0.20)
    assert c.breached is False and c.note == "" and c.tested == "quarterly" and c.year == 2023


def test_interest_cover_floor_headroom_and_breach_fall(make_case):
    c = _one(make_case, {"metric": "interest_cover", "threshold": 4.0, "direction": "min"})
    # cover = 50 / 10 = 5.0x; headroom = (5.0 - 4.0) / 4.0 = 25 % of the threshold
    assert c.value == pytest.approx(5.0)
    assert c.headroom == pytest.approx(0.25)
    # breach when EBITDA < 4.0 x 10 = 40; fall = (50 - 40) / 50 = 20 % (not the headroom: 1 - T/value)
    assert c.ebitda_at_breach == pytest.approx(40.0)
    assert c.ebitda_fall_to_breach == pytest.approx(0.20)
    assert c.tested == "annual"  # the default


def test_margin_floor_breach_fall(make_case):
    c = _one(make_case, {"metric": "ebitda_margin", "threshold": 0.10, "direction": "min"})
    # margin = 50 / 400 = 12.5 %; headroom = (0.125 - 0.10) / 0.10 = 25 %
    assert c.value == pytest.approx(0.125)
    assert c.headroom == pytest.approx(0.25)
    # breach when EBITDA < 0.10 x 400 = 40; fall = 10 / 50 = 20 %
    assert c.ebitda_fall_to_breach == pytest.approx(0.20)


def test_debt_to_equity_is_not_ebitda_based(make_case):
    c = _one(make_case, {"metric": "debt_to_equity", "threshold": 2.0, "direction": "max"})
    # 230 / 100 = 2.3x against a cap of 2.0: headroom (2.0 - 2.3) / 2.0 = -15 %, breached
    assert c.value == pytest.approx(2.3)
    assert c.headroom == pytest.approx(-0.15)
    assert c.breached is True
    assert c.ebitda_fall_to_breach is None and c.ebitda_at_breach is None
    assert "not EBITDA-based" in c.note and "breached now" in c.note


def test_a_breach_is_a_caution_naming_the_covenant(make_case):
    data = _case(make_case, [{"metric": "net_debt_to_ebitda", "threshold": 3.0, "direction": "max"}])
    results = evaluate(parse_case(data))
    c = results.covenants[0]
    # 4.0x against a cap of 3.0x: headroom (3 - 4) / 3 = -1/3; the fall to breach is negative
    assert c.headroom == pytest.approx(-1 / 3)
    assert c.breached is True
    caution = [x for x in results.cautions if x.code == "covenant.breached"]
    assert len(caution) == 1 and caution[0].field == "covenants[0]" and "4.00" in caution[0].message


def test_negative_net_debt_cannot_be_breached_by_an_ebitda_fall(make_case):
    c = _one(make_case, {"metric": "net_debt_to_ebitda", "threshold": 3.0, "direction": "max"}, cash=300.0)
    # net debt = 230 - 300 = -70: -1.4x, room (3 + 1.4) / 3; no EBITDA level makes it exceed 3.0x
    assert c.value == pytest.approx(-1.4)
    assert c.headroom == pytest.approx(4.4 / 3)
    assert c.ebitda_fall_to_breach is None
    assert "net debt is zero or negative" in c.note


def test_missing_lines_say_what_is_needed(make_case):
    data = make_case()  # no EBITDA, debt or cash lines at all
    data["covenants"] = [{"metric": "net_debt_to_ebitda", "threshold": 4.0, "direction": "max"}]
    results = evaluate(parse_case(data))
    c = results.covenants[0]
    assert c.value is None and c.headroom is None and c.breached is None
    assert "total_debt" in c.note
    assert any(x.code == "covenant.not_computable" for x in results.cautions)


def test_sample_leverage_covenant(sample_case):
    (c,) = evaluate(sample_case).covenants
    # 2025: net debt = 210,555,000 - 25,365,000 = 185,190,000; EBITDA 54,220,000
    # 185.19 / 54.22 = 3.4155x; headroom = (4.0 - 3.4155) / 4.0 = 14.61 %
    # EBITDA at breach = 185.19m / 4.0 = 46.2975m; fall = (54.22 - 46.2975) / 54.22 = 14.61 %
    assert c.year == 2025
    assert c.value == pytest.approx(185.19 / 54.22)
    assert c.headroom == pytest.approx((4.0 - 185.19 / 54.22) / 4.0)
    assert c.ebitda_at_breach == pytest.approx(46_297_500.0)
    assert c.ebitda_fall_to_breach == pytest.approx((54.22 - 46.2975) / 54.22)
    assert c.tested == "half-yearly"


def test_compare_reads_the_tightest_headroom(make_case):
    data = _case(
        make_case,
        [
            {"metric": "net_debt_to_ebitda", "threshold": 5.0, "direction": "max"},  # 20 %
            {"metric": "interest_cover", "threshold": 4.5, "direction": "min"},  # (5 - 4.5) / 4.5 = 11.1 %
        ],
    )
    figures = key_figures(evaluate(parse_case(data)))
    assert figures["covenant_headroom"] == pytest.approx(0.5 / 4.5)


def test_no_covenants_no_figure(make_case):
    results = evaluate(parse_case(make_case()))
    assert results.covenants == ()
    assert key_figures(results)["covenant_headroom"] is None
    assert covenant_tests([], []) == ()


def test_covenants_in_the_json(make_case):
    data = _case(make_case, [{"metric": "interest_cover", "threshold": 4.0, "direction": "min"}])
    out = evaluate(parse_case(data)).to_dict()
    assert out["covenants"][0]["headroom"] == pytest.approx(0.25)
    assert out["case"]["covenants"][0]["metric"] == "interest_cover"


# --------------------------------------------------------------------------- bad input


def _problem(make_case, covenant):
    data = make_case()
    data["covenants"] = [covenant]
    with pytest.raises(CaseError) as caught:
        parse_case(copy.deepcopy(data))
    (problem,) = caught.value.problems
    return problem


_GOOD = {"metric": "net_debt_to_ebitda", "threshold": 4.0, "direction": "max", "tested": "annual"}


@pytest.mark.parametrize(
    ("change", "field", "allowed_part"),
    [
        ({"metric": "leverage"}, "covenants[0].metric", "net_debt_to_ebitda"),
        ({"direction": "below"}, "covenants[0].direction", "max"),
        ({"direction": "min"}, "covenants[0].direction", "'max' for net_debt_to_ebitda"),
        ({"threshold": 0}, "covenants[0].threshold", "0"),
        ({"threshold": -4.0}, "covenants[0].threshold", "0"),
        ({"threshold": "4x"}, "covenants[0].threshold", "number"),
        ({"tested": ""}, "covenants[0].tested", "1"),
        ({"tested": "   "}, "covenants[0].tested", "in words"),
        ({"tested": "x" * 61}, "covenants[0].tested", "60"),
        ({"metric": "ebitda_margin", "direction": "min", "threshold": 15}, "covenants[0].threshold", "fraction"),
        ({"headroom": 0.2}, "covenants[0].headroom", ""),
    ],
)
def test_bad_covenant_names_field_value_and_allowed(make_case, change, field, allowed_part):
    problem = _problem(make_case, {**_GOOD, **change})
    assert problem.field == field
    assert allowed_part.lower() in problem.allowed.lower()
    assert problem.value is not None or "headroom" in field


def test_missing_threshold_is_named(make_case):
    problem = _problem(make_case, {"metric": "interest_cover", "direction": "min"})
    assert problem.field == "covenants[0].threshold"


def test_too_many_covenants(make_case):
    from obligor_memo.engine.case import LIMITS

    data = make_case()
    data["covenants"] = [_GOOD] * (LIMITS["covenants"] + 1)
    with pytest.raises(CaseError) as caught:
        parse_case(data)
    assert caught.value.problems[0].field == "covenants"
    assert str(LIMITS["covenants"]) in caught.value.problems[0].allowed
