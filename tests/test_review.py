"""Roll-forward: a last review (case file or memo PDF) starts the new case and records itself."""

from __future__ import annotations

import copy

import pytest
from click.testing import CliRunner
from obligor_memo.app.cli import main
from obligor_memo.app.memo.reading import printed_number, read_last_review, read_last_review_path, roll_forward_review
from obligor_memo.app.present.compare_report import review_view
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.evaluate import evaluate, fingerprint
from obligor_memo.engine.review import roll_forward


def add_year_and_ccf(d):
    d = copy.deepcopy(d)
    last = dict(d["statements"][-1])
    last["year"] += 1
    last["total_assets"] *= 1.04
    last["short_term_liabilities"] *= 1.08
    d["statements"].append(last)
    d["facilities"][1]["ccf"] = 0.9
    return d


def test_roll_forward_records_the_previous_review(sample_case):
    d = roll_forward(sample_case, approved_on="2025-11-28")
    prev = d["review"]["previous"]
    assert prev["fingerprint"] == fingerprint(sample_case)
    assert prev["approved_on"] == "2025-11-28"
    assert prev["figures"]["expected_loss"] == evaluate(sample_case).total.expected_loss
    assert d["memo"]["approved_by"] == "" and d["review"]["history"] == []
    case = parse_case(d)
    # two years on, the chain is kept without the older inputs
    again = roll_forward(case, approved_on="2026-11-27")
    assert again["review"]["history"][0]["approved_on"] == "2025-11-28"
    assert "case" not in again["review"]["history"][0]
    assert "review" not in parse_case(again).review.previous.case  # no nesting of inputs


def test_the_memo_view_shows_both_years_and_the_cause(sample_case):
    results = evaluate(parse_case(add_year_and_ccf(roll_forward(sample_case, approved_on="2025-11-28"))))
    view = review_view(results)
    assert view["available"] and view["approved_on"] == "2025-11-28"
    assert "mainly facilities" in view["headline"]
    assert any(c["changes"] == ["facilities[RCF-1].ccf"] for c in view["causes"])
    assert review_view(evaluate(sample_case)) is None


def test_a_memo_pdf_opens_as_last_review(tmp_path, sample_case_path, sample_case):
    pdf = tmp_path / "last.pdf"
    assert CliRunner().invoke(main, ["memo", str(sample_case_path), "-o", str(pdf), "--no-charts"]).exit_code == 0
    last = read_last_review(pdf.read_bytes(), "last.pdf")
    assert last.case == sample_case and last.recorded is not None
    assert last.recorded.figures["grade"] == evaluate(sample_case).pd.grade
    new = roll_forward_review(last)
    assert new["review"]["previous"]["fingerprint"] == fingerprint(sample_case)
    assert new["review"]["previous"]["approved_on"] == last.printed_on
    assert read_last_review_path(sample_case_path).case == sample_case


@pytest.mark.parametrize(
    "text, value",
    [
        ("EUR 1,234,567", 1234567.0),
        ("0.2123 %", 0.002123),
        ("41.5 %", 0.415),
        ("4", 4.0),
        ("n/a", None),
        ("BB+", "BB+"),
    ],
)
def test_printed_figures_read_back(text, value):
    got = printed_number(text)
    assert got == (pytest.approx(value) if isinstance(value, float) else value)


@pytest.mark.parametrize(
    "change, field, allowed",
    [
        ({"approved_on": "30/11/2025"}, "review.previous.approved_on", "YYYY-MM-DD"),
        ({"fingerprint": "abc"}, "review.previous.fingerprint", "64 lower-case hex digits"),
        ({"figures": {"Expected Loss": 1.0}}, "review.previous.figures.Expected Loss", "lower-case"),
        ({"engine_version": ""}, "review.previous.engine_version", "at least 1"),
    ],
)
def test_bad_review_keys_name_the_field(sample_case, change, field, allowed):
    from obligor_memo.engine.case import case_to_dict
    from obligor_memo.engine.errors import CaseError

    d = case_to_dict(sample_case)
    d["review"] = {"previous": {"fingerprint": "0" * 64, "engine_version": "0.1.0", **change}}
    with pytest.raises(CaseError) as err:
        parse_case(d)
    problem = err.value.problems[0]
    assert problem.field == field and allowed in problem.allowed


def test_a_previous_case_that_no_longer_validates_is_said_plainly(sample_case):
    d = roll_forward(sample_case)
    d["review"]["previous"]["case"]["facilities"] = []
    view = review_view(evaluate(parse_case(d)))
    assert view["available"] is False and "facilities" in view["note"]


def test_compare_of_unreadable_input_is_a_paragraph_not_a_traceback(tmp_path, sample_case_path):
    bad = tmp_path / "not_a_memo.pdf"
    bad.write_bytes(b"%PDF-1.7 garbage")
    res = CliRunner().invoke(main, ["compare", str(bad), str(sample_case_path)])
    assert res.exit_code == 2 and "Traceback" not in res.output
