"""The case schema: what a valid case becomes, what the errors look like, and the round trip."""

from __future__ import annotations

import dataclasses
import json

import pydantic
import pytest
from obligor_memo.engine.case import Case, case_to_dict, parse_case
from obligor_memo.engine.errors import CaseError, Caution, Problem, show_value


def test_minimal_case_gets_the_documented_defaults(make_case) -> None:
    case = parse_case(make_case())
    assert isinstance(case, Case)
    # DESIGN.md section 3 defaults; a = 1, b = 0.5 is common practice for the default point.
    assert case.pd.method == "balance_sheet"
    assert case.pd.horizon_years == 1.0
    assert case.pd.window_years is None
    assert (case.pd.default_point.short_term_share, case.pd.default_point.long_term_share) == (1.0, 0.5)
    assert case.pd.override is None
    assert case.capital.confidence == 0.999
    assert case.facilities[0].ccf is None
    assert case.market is None


def test_case_is_frozen(make_case) -> None:
    case = parse_case(make_case())
    with pytest.raises(pydantic.ValidationError):
        case.borrower.name = "Someone else"  # type: ignore[misc]


def test_statements_in_any_order_are_sorted_by_year(make_case) -> None:
    data = make_case()
    ordered = [row["year"] for row in data["statements"]]
    data["statements"] = [data["statements"][i] for i in (2, 0, 3, 1)]
    case = parse_case(data)
    assert [row.year for row in case.statements] == sorted(ordered)
    # Each year keeps its own figures after sorting.
    by_year = {row["year"]: row["total_assets"] for row in make_case()["statements"]}
    assert all(row.total_assets == by_year[row.year] for row in case.statements)


def test_round_trip_of_the_sample_is_exact(sample_case) -> None:
    again = parse_case(json.loads(json.dumps(case_to_dict(sample_case))))
    assert again == sample_case
    assert case_to_dict(again) == case_to_dict(sample_case)


def test_whole_numbers_are_accepted_for_amounts(make_case) -> None:
    data = make_case()
    data["facilities"][0]["committed"] = 50
    assert parse_case(data).facilities[0].committed == 50.0


@pytest.mark.parametrize("value", [["a list"], "text", 3, None])
def test_a_case_that_is_not_a_mapping_is_named(value) -> None:
    with pytest.raises(CaseError) as caught:
        parse_case(value)
    assert caught.value.fields == ("case",)
    assert "a mapping" in caught.value.problems[0].allowed


def test_problem_sentence_names_field_value_and_allowed() -> None:
    problem = Problem("facilities[1].recovery.std", 0.6, "a std below 0.5000")
    assert problem.sentence() == "facilities[1].recovery.std: got 0.6; allowed: a std below 0.5000."


def test_paragraph_counts_and_limits_problems() -> None:
    problems = [Problem(f"facilities[{i}].ccf", 1.5, "a number from 0 to 1") for i in range(10)]
    error = CaseError(problems, source="case file")
    text = error.paragraph(limit=3)
    assert text.startswith("The case file has 10 problems: ")
    assert text.count("allowed:") == 3
    assert text.endswith("(7 more not shown.)")
    assert "\n" not in text
    single = CaseError.single("borrower.currency", "euro", "a three-letter ISO 4217 code")
    assert single.paragraph().startswith("The case has 1 problem: ")
    assert isinstance(single, ValueError)


@pytest.mark.parametrize(
    ("value", "shown"),
    [
        ("euro", "'euro'"),
        (None, "empty (null)"),
        (0.1, "0.1"),
        (float("nan"), "nan"),
        (2019, "2019"),
    ],
)
def test_show_value_is_unambiguous(value, shown) -> None:
    assert show_value(value) == shown


def test_long_values_keep_both_ends() -> None:
    # The end of a long path (the file name) matters as much as its start.
    path = "/home/analyst/" + "reviews/" * 20 + "hollowmere_2025.yaml"
    text = show_value(path)
    assert len(text) < len(path) // 2
    assert text.startswith("'/home/analyst/") and text.endswith("hollowmere_2025.yaml'")
    assert "..." in text


def test_caution_is_a_frozen_record() -> None:
    caution = Caution("trend.short_history", "Only 3 years.", "pd.window_years")
    with pytest.raises(dataclasses.FrozenInstanceError):
        caution.code = "other"  # type: ignore[misc]


def test_unknown_key_lists_the_keys_allowed_there(make_case) -> None:
    data = make_case()
    data["facilities"][0]["seniorty"] = "senior_secured"
    with pytest.raises(CaseError) as caught:
        parse_case(data)
    problem = next(p for p in caught.value.problems if p.field == "facilities[0].seniorty")
    assert "did you mean 'seniority'?" in problem.allowed
    for key in ("committed", "drawn", "kind", "maturity_years"):
        assert key in problem.allowed


def test_override_with_reason_is_accepted(make_case) -> None:
    data = make_case()
    data["pd"] = {"override": 0.03, "override_reason": "Covenant breach in Q3"}
    case = parse_case(data)
    assert case.pd.override == 0.03


def test_two_years_are_enough_when_volatility_is_given(make_case) -> None:
    data = make_case()
    data["statements"] = data["statements"][:2]
    data["pd"] = {"asset_volatility": 0.2}
    assert len(parse_case(data).statements) == 2


def test_drawn_above_committed_is_allowed(make_case) -> None:
    # An overdrawn line is a fact to report (a caution in the results), not an input error.
    data = make_case()
    data["facilities"][0]["drawn"] = 60.0
    assert parse_case(data).facilities[0].drawn == 60.0
