"""Scenario overrides and scenario evaluation.

References: a scenario must give exactly what the same change made by hand in the case data gives
(parse_case of a hand-edited dict, then evaluate()). Messages follow the engine's error contract:
field ``<where>.set['<path>']``, the value given, what is allowed.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.case import case_to_dict, parse_case
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loading import load_case
from obligor_memo.engine.scenarios import apply_overrides, evaluate_scenarios, headline_figures, valid_paths

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "hollowmere.yaml"
CASE = load_case(SAMPLE)
BASE = evaluate(CASE)
IDS = [f.id for f in CASE.facilities]


def _hand_edit(edit) -> object:
    data = case_to_dict(CASE)
    edit(data)
    return parse_case(data)


def _facility(data: dict, fid: str) -> dict:
    return next(f for f in data["facilities"] if f["id"] == fid)


# Each override and the same change written by hand into the case data.
HAND_EDITS = [
    ({"pd.asset_growth": -0.05}, lambda d: d["pd"].update(asset_growth=-0.05)),
    ({"pd.default_point.long_term_share": 1.0}, lambda d: d["pd"]["default_point"].update(long_term_share=1.0)),
    ({"capital.confidence": 0.995}, lambda d: d["capital"].update(confidence=0.995)),
    ({"lgd.standard": "basel_ii"}, lambda d: d["lgd"].update(standard="basel_ii")),
    ({"facilities.RCF-1.ccf": 1.0}, lambda d: _facility(d, "RCF-1").update(ccf=1.0)),
    ({"facilities.TL-A.recovery.mean": 0.40}, lambda d: _facility(d, "TL-A")["recovery"].update(mean=0.40)),
    ({"facilities.*.ccf": 0.5}, lambda d: [f.update(ccf=0.5) for f in d["facilities"]]),
    ({"pd.asset_volatility": None}, lambda d: d["pd"].update(asset_volatility=None)),
    ({"facilities.TL-A.recovery": None}, lambda d: _facility(d, "TL-A").update(recovery=None)),
    (
        {"facilities.GTE-SF.recovery.mean": 0.3, "facilities.GTE-SF.recovery.std": 0.2},
        lambda d: _facility(d, "GTE-SF").update(recovery={"mean": 0.3, "std": 0.2, "upper": 1.0}),
    ),
    ({"pricing.hurdle_rate": 0.15}, lambda d: d["pricing"].update(hurdle_rate=0.15)),
]


@pytest.mark.parametrize("overrides, edit", HAND_EDITS, ids=[str(o) for o, _ in HAND_EDITS])
def test_override_equals_hand_edit(overrides, edit):
    assert apply_overrides(CASE, overrides, where="scenarios[0]") == _hand_edit(edit)


def test_named_facility_wins_over_wildcard_in_either_order():
    expected = _hand_edit(
        lambda d: ([f.update(ccf=0.3) for f in d["facilities"]], _facility(d, "LC-IMP").update(ccf=0.9))
    )
    first = {"facilities.LC-IMP.ccf": 0.9, "facilities.*.ccf": 0.3}
    second = {"facilities.*.ccf": 0.3, "facilities.LC-IMP.ccf": 0.9}
    assert apply_overrides(CASE, first, where="s") == expected
    assert apply_overrides(CASE, second, where="s") == expected


def test_case_is_left_unchanged():
    before = case_to_dict(CASE)
    apply_overrides(CASE, {"facilities.*.ccf": 0.5, "pd.asset_growth": 0.2}, where="s")
    assert case_to_dict(CASE) == before


def test_facility_id_containing_a_dot_is_addressed_whole():
    data = case_to_dict(CASE)
    data["facilities"][0]["id"] = "TL.A"
    data["facilities"][1]["id"] = "TL"
    case = parse_case(data)
    out = apply_overrides(case, {"facilities.TL.A.ccf": 0.7}, where="s")
    assert out.facilities[0].ccf == 0.7 and out.facilities[1].ccf is None


# (overrides, bad path, words the message must carry)
BAD = [
    ({"pd.asset_grwth": 0.1}, "pd.asset_grwth", ["did you mean 'pd.asset_growth'"]),
    ({"facilities.RCF1.ccf": 0.5}, "facilities.RCF1.ccf", ["RCF-1", "did you mean"]),
    ({"facilities.XX.ccf": 0.5}, "facilities.XX.ccf", ["addressed by id", "TL-A"]),
    ({"statements.total_assets": 1.0}, "statements.total_assets", ["outside 'statements'"]),
    ({"scenarios.name": "x"}, "scenarios.name", ["outside 'scenarios'"]),
    ({"pd.default_point": 0.5}, "pd.default_point", ["block", "long_term_share"]),
    ({"pd.master_scale": 1}, "pd.master_scale", ["list"]),
    ({"facilities.TL-A.id": "Z"}, "facilities.TL-A.id", ["cannot change"]),
    ({"facilities.*.ccf": 1.5}, "facilities.*.ccf", ["from 0 to 1"]),
    ({"capital.confidence": 1.0}, "capital.confidence", ["0.5 (exclusive) to 1 (exclusive)"]),
    ({"pricing.hurdle_rate": "high"}, "pricing.hurdle_rate", ["a number"]),
    ({"lgd.standard": "basel_iv"}, "lgd.standard", ["basel_iii"]),
    ({"facilities.TL-A.recovery.std": 0.6}, "facilities.TL-A.recovery.std", ["below 0.4975"]),
    (
        {"facilities.RCF-1.recovery.mean": 0.3},
        "facilities.RCF-1.recovery.mean",
        ["not set in the case", "missing: std"],
    ),
]


@pytest.mark.parametrize("overrides, path, words", BAD, ids=[b[1] for b in BAD])
def test_bad_override_names_the_scenario_path_value_and_allowed(overrides, path, words):
    with pytest.raises(CaseError) as caught:
        apply_overrides(CASE, overrides, where="scenarios[2]")
    problems = caught.value.problems
    assert len(problems) == 1, "one problem per bad override (a wildcard reports once)"
    assert problems[0].field == f"scenarios[2].set['{path}']"
    assert problems[0].value is not None
    for word in words:
        assert word in problems[0].allowed


def test_cross_check_failure_names_every_override_involved():
    overrides = {"pd.default_point.short_term_share": 0.0, "pd.default_point.long_term_share": 0.0}
    with pytest.raises(CaseError) as caught:
        apply_overrides(CASE, overrides, where="scenarios[1]")
    (problem,) = caught.value.problems
    assert problem.field == "scenarios[1].set['pd.default_point.short_term_share']"
    assert "pd.default_point.long_term_share" in problem.allowed
    assert "default point above 0" in problem.allowed


def test_every_listed_path_is_accepted_with_its_current_value():
    data = case_to_dict(CASE)
    for path in valid_paths(CASE):
        if ".*." in path:
            continue
        node = data
        keys = (
            ["facilities", IDS.index(path.split(".")[1])] + path.split(".")[2:]
            if path.startswith("facilities.")
            else path.split(".")
        )
        for key in keys:
            node = node[key] if node is not None else None
        if node is None or isinstance(node, dict):
            continue  # an unset block: writing into it is a separate rule
        assert apply_overrides(CASE, {path: node}, where="s") == CASE, path


@settings(max_examples=40, deadline=None)
@given(ccf=st.floats(0, 1), growth=st.floats(-1, 1))
def test_wildcard_and_scalar_values_land_everywhere(ccf, growth):
    out = apply_overrides(CASE, {"facilities.*.ccf": ccf, "pd.asset_growth": growth}, where="s")
    assert all(f.ccf == ccf for f in out.facilities)
    assert out.pd.asset_growth == growth
    # Everything else is as it was.
    assert [f.committed for f in out.facilities] == [f.committed for f in CASE.facilities]
    assert out.statements == CASE.statements


# --------------------------------------------------------------------------- evaluation


def test_sample_scenarios_equal_evaluate_of_hand_edited_cases():
    hand = [
        _hand_edit(lambda d: d["pd"].update(asset_growth=-0.05, asset_volatility=0.18)),
        _hand_edit(lambda d: d["pd"]["default_point"].update(long_term_share=1.0)),
        _hand_edit(
            lambda d: (
                _facility(d, "RCF-1").update(ccf=1.0),
                d["lgd"].update(standard="basel_ii"),
                _facility(d, "TL-A")["recovery"].update(mean=0.40),
            )
        ),
    ]
    results = evaluate_scenarios(CASE, BASE)
    assert [r.name for r in results] == [s.name for s in CASE.scenarios]
    for result, case in zip(results, hand):
        expected = headline_figures(evaluate(case))
        assert result.figures == expected
        assert result.results.case == case
        assert result.overrides == tuple(CASE.scenarios[results.index(result)].set.items())


def test_deltas_are_scenario_minus_base():
    base = headline_figures(BASE)
    for result in evaluate_scenarios(CASE):  # also without a base given
        assert result.base == base
        for name in (
            "pd",
            "expected_loss",
            "el_rate",
            "ead",
            "rwa",
            "unexpected_loss",
            "economic_capital",
            "distance_to_default",
            "default_point",
        ):
            assert getattr(result.delta, name) == getattr(result.figures, name) - getattr(base, name)
        assert result.delta.grade_changed == (result.figures.grade != base.grade)


def test_headline_matches_the_results_it_summarises():
    h = headline_figures(BASE)
    assert (h.pd, h.model_pd, h.expected_loss, h.rwa) == (
        BASE.pd.pd,
        BASE.pd.model_pd,
        BASE.total.expected_loss,
        BASE.total.rwa,
    )
    assert h.raroc == BASE.pricing.raroc
    # EL rate is EL / EAD by definition (common practice).
    assert math.isclose(h.el_rate, h.expected_loss / h.ead, rel_tol=1e-12)


def test_direction_of_sample_scenarios():
    # Lower growth with higher volatility, or a higher default point, lowers DD and raises PD
    # (DD = (ln(V/DP) + g T)/(s sqrt T) with V > DP); a fuller revolver and weaker recovery
    # raise EL at the same PD.
    impaired, all_debt, drawn = evaluate_scenarios(CASE, BASE)
    assert impaired.delta.pd > 0 and impaired.delta.distance_to_default < 0
    assert all_debt.delta.default_point > 0 and all_debt.delta.pd > 0
    assert drawn.delta.pd == 0 and drawn.delta.ead > 0 and drawn.delta.expected_loss > 0


def test_no_scenarios_gives_empty_tuple():
    data = case_to_dict(CASE)
    data["scenarios"] = []
    assert evaluate_scenarios(parse_case(data)) == ()


def test_invalid_scenario_raises_naming_the_scenario():
    data = case_to_dict(CASE)
    data["scenarios"].append({"name": "Typo", "description": "", "set": {"pd.horizon": 2.0}})
    with pytest.raises(CaseError) as caught:
        evaluate_scenarios(parse_case(data), BASE)
    assert caught.value.fields == ("scenarios[3].set['pd.horizon']",)
    assert "Typo" in caught.value.source and "did you mean 'pd.horizon_years'" in str(caught.value)


def test_engine_level_failure_is_attributed_to_the_override():
    # The schema allows a default recovery std up to 0.5, but a beta law with the senior
    # unsecured preset mean 0.6 needs std < sqrt(0.6 x 0.4) = 0.4899: evaluate() refuses it.
    data = case_to_dict(CASE)
    data["scenarios"] = [{"name": "Wide", "description": "", "set": {"lgd.default_recovery_std": 0.5}}]
    with pytest.raises(CaseError) as caught:
        evaluate_scenarios(parse_case(data), BASE)
    assert caught.value.fields == ("scenarios[0].set['lgd.default_recovery_std']",)
    assert "Wide" in caught.value.source


def test_base_results_of_another_case_are_refused():
    other = evaluate(_hand_edit(lambda d: d["pd"].update(horizon_years=2.0)))
    with pytest.raises(ValueError, match="base: got the results of a different case"):
        evaluate_scenarios(CASE, other)
