"""The comparison of two cases: figures, changes and the Shapley split by block of inputs.

Outside checks: the Shapley value's axioms (Shapley, "A value for n-person games", 1953:
efficiency, symmetry, null player), checked on synthetic games with hypothesis and on the
engine's game; the figures against two independent ``evaluate --json`` runs of the command.
"""

from __future__ import annotations

import copy
import io
import itertools
import json
import math
from fractions import Fraction

import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.app.cli import main
from obligor_memo.engine import compare as cmp
from obligor_memo.engine.case import case_to_dict, parse_case
from obligor_memo.engine.compare import RecordedFigures, compare_cases, shapley_values
from obligor_memo.engine.errors import CaseError


def rolled(sample_dict, *, ccf=0.9, add_year=True):
    d = copy.deepcopy(sample_dict)
    if add_year:
        last = dict(d["statements"][-1])
        last["year"] += 1
        last["total_assets"] *= 1.04
        last["short_term_liabilities"] *= 1.08
        d["statements"].append(last)
    if ccf is not None:
        d["facilities"][1]["ccf"] = ccf
    return d


@pytest.fixture(scope="module")
def sample_dict(sample_case):
    return case_to_dict(sample_case)


def assert_sums(comparison):
    for name, total in comparison.change.items():
        parts = [b.deltas[name] for b in comparison.attribution]
        if total is None or any(p is None for p in parts):
            continue
        scale = max(abs(total), 1e-300)
        assert abs(math.fsum(parts) - total) <= 1e-9 * scale, (name, parts, total)


def test_a_case_compared_with_itself_changes_nothing(sample_case):
    c = compare_cases(sample_case, sample_case)
    assert all(v == 0 for v in c.change.values())
    assert all(v == 0 for b in c.attribution for v in b.deltas.values())
    assert all(not b.changes for b in c.attribution)
    assert c.grade["direction"] == "unchanged"


def test_a_change_in_one_block_is_attributed_wholly_to_it(sample_case, sample_dict):
    new = parse_case(rolled(sample_dict, add_year=False))
    c = compare_cases(sample_case, new)
    facilities = next(b for b in c.attribution if b.block == "facilities")
    assert facilities.changes == ("facilities[RCF-1].ccf",)
    for name, total in c.change.items():
        assert facilities.deltas[name] == total
        assert all(b.deltas[name] == 0 for b in c.attribution if b.block != "facilities")


def test_every_figure_sums_to_its_change_across_many_blocks(sample_case, sample_dict):
    d = rolled(sample_dict)
    d["facilities"][0]["recovery"]["mean"] = 0.5
    d["pd"]["window_years"] = 8
    d["pricing"]["proposed_spread"] = 0.03
    d["capital"]["confidence"] = 0.995
    d["facilities"].append({**d["facilities"][3], "id": "GTE-2", "committed": 5e6})
    c = compare_cases(sample_case, parse_case(d))
    assert c.evaluations == 32
    assert_sums(c)
    assert {b.block for b in c.attribution if b.changes} == {
        "statements",
        "pd",
        "facilities",
        "recovery",
        "capital_pricing",
    }
    # pricing moves RAROC only; the PD is moved only by statements and PD assumptions
    pricing = next(b for b in c.attribution if b.block == "capital_pricing")
    assert next(b for b in c.attribution if b.block == "recovery").deltas["pd"] == 0
    assert pricing.deltas["pd"] == 0


def test_the_split_does_not_depend_on_the_order_of_the_blocks(sample_case, sample_dict, monkeypatch):
    d = rolled(sample_dict)
    d["facilities"][0]["recovery"]["mean"] = 0.5
    d["pd"]["default_point"]["long_term_share"] = 0.6
    new = parse_case(d)
    base = compare_cases(sample_case, new)
    shares = {b.block: b.deltas for b in base.attribution}
    for order in list(itertools.permutations(cmp.BLOCKS[:5]))[::17]:
        monkeypatch.setattr(cmp, "BLOCKS", tuple(order) + cmp.BLOCKS[5:])
        other = {b.block: b.deltas for b in compare_cases(sample_case, new).attribution}
        for block, deltas in shares.items():
            for name, value in deltas.items():
                assert other[block][name] == pytest.approx(value, rel=1e-12, abs=1e-12)


def test_figures_match_two_evaluate_json_runs(tmp_path, sample_case_path, sample_dict):
    new_path = tmp_path / "new.json"
    new_path.write_text(json.dumps(rolled(sample_dict)))
    runner = CliRunner()
    res = runner.invoke(main, ["compare", str(sample_case_path), str(new_path), "--json"])
    assert res.exit_code == 0, res.output
    out = json.loads(res.output)
    assert out["method"] == "shapley"
    old_eval = json.loads(runner.invoke(main, ["evaluate", str(sample_case_path), "--json"]).output)
    new_eval = json.loads(runner.invoke(main, ["evaluate", str(new_path), "--json"]).output)
    for side, ev in (("old", old_eval), ("new", new_eval)):
        assert out[side]["pd"] == ev["pd"]["pd"]
        assert out[side]["grade"] == ev["pd"]["grade"]
        for name in ("ead", "expected_loss", "unexpected_loss", "rwa", "economic_capital"):
            assert out[side][name] == ev["total"][name]
        assert out[side]["raroc"] == ev["pricing"]["raroc"]
        assert out[side]["minimum_spread"] == ev["pricing"]["minimum_spread"]
    assert out["change"]["expected_loss"] == new_eval["total"]["expected_loss"] - old_eval["total"]["expected_loss"]
    for name, total in out["change"].items():
        assert abs(math.fsum(row[name] for row in out["attribution"]) - total) <= 1e-9 * abs(total)
    text = runner.invoke(main, ["compare", str(sample_case_path), str(new_path)])
    assert text.exit_code == 0 and "facilities[RCF-1].ccf" in text.output and "Shapley" in text.output


def test_memo_pdfs_are_read_as_inputs(tmp_path, sample_case_path, sample_dict):
    pdf = tmp_path / "last.pdf"
    runner = CliRunner()
    assert runner.invoke(main, ["memo", str(sample_case_path), "-o", str(pdf), "--no-charts"]).exit_code == 0
    new_path = tmp_path / "new.json"
    new_path.write_text(json.dumps(rolled(sample_dict)))
    from_pdf = json.loads(runner.invoke(main, ["compare", str(pdf), str(new_path), "--json"]).output)
    from_yaml = json.loads(runner.invoke(main, ["compare", str(sample_case_path), str(new_path), "--json"]).output)
    assert from_pdf == from_yaml  # same engine version: OLD recomputed exactly
    same = json.loads(runner.invoke(main, ["compare", str(pdf), str(pdf), "--json"]).output)
    assert all(v == 0 for v in same["change"].values())


def test_an_older_engine_shows_the_method_effect_as_its_own_block(sample_case, sample_dict):
    from obligor_memo.engine.evaluate import evaluate

    figures = cmp.key_figures(evaluate(sample_case, detail=False))
    printed = {k: (v * 1.01 if isinstance(v, float) else v) for k, v in figures.items()}
    c = compare_cases(sample_case, parse_case(rolled(sample_dict)), old_recorded=RecordedFigures("0.0.9", printed))
    engine = c.attribution[-1]
    assert engine.block == "engine" and "0.0.9" in engine.label
    assert engine.deltas["expected_loss"] == pytest.approx(figures["expected_loss"] - printed["expected_loss"])
    assert c.old["expected_loss"] == printed["expected_loss"]
    assert_sums(c)


def test_a_hybrid_that_does_not_validate_joins_its_blocks(make_case):
    old_d = make_case()
    new_d = copy.deepcopy(old_d)
    new_d["statements"].append(
        {"year": 2024, "total_assets": 125.0, "short_term_liabilities": 82.0, "long_term_liabilities": 30.0}
    )
    new_d["pd"] = {"window_years": 5}  # longer than OLD's four years: that hybrid is invalid
    c = compare_cases(parse_case(old_d), parse_case(new_d))
    assert [b.block for b in c.attribution if b.changes] == ["statements+pd"]
    assert any("Joined" in n for n in c.notes)
    assert_sums(c)


def test_a_new_facility_with_its_own_recovery_is_a_facilities_change(sample_case, sample_dict):
    d = copy.deepcopy(sample_dict)
    d["facilities"].append({**d["facilities"][2], "id": "NOTE-31"})
    c = compare_cases(sample_case, parse_case(d))
    assert [b.block for b in c.attribution if b.changes] == ["facilities"]
    assert_sums(c)


def test_different_currencies_are_refused_naming_the_field(sample_case, sample_dict):
    d = copy.deepcopy(sample_dict)
    d["borrower"]["currency"] = "USD"
    with pytest.raises(CaseError) as err:
        compare_cases(sample_case, parse_case(d))
    assert err.value.problems[0].field == "borrower.currency"


# --------------------------------------------------------------------------- Shapley axioms


def games(max_players=6):
    return st.integers(1, max_players).flatmap(
        lambda n: st.tuples(st.just(n), st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=2**n, max_size=2**n))
    )


def as_game(n, values):
    table = {frozenset(p for p in range(n) if mask >> p & 1): v for mask, v in enumerate(values)}
    return list(range(n)), table


@settings(max_examples=60, deadline=None)
@given(games())
def test_efficiency_the_values_sum_to_the_grand_coalition(game):
    players, table = as_game(*game)
    phi = shapley_values(players, table.__getitem__)
    assert sum(phi.values()) == Fraction(table[frozenset(players)]) - Fraction(table[frozenset()])


@settings(max_examples=60, deadline=None)
@given(games(5), st.data())
def test_symmetry_interchangeable_players_get_equal_values(game, data):
    n, values = game
    if n < 2:
        return
    players, table = as_game(n, values)
    # make players 0 and 1 interchangeable: v(S + 0) = v(S + 1) for every S without both
    for s in list(table):
        if 1 in s and 0 not in s:
            table[s] = table[(s - {1}) | {0}]
    phi = shapley_values(players, table.__getitem__)
    assert phi[0] == phi[1]


@settings(max_examples=40, deadline=None)
@given(games(5))
def test_a_null_player_gets_zero(game):
    n, values = game
    players, table = as_game(n, values)
    for s in list(table):
        if 0 in s:
            table[s] = table[s - {0}]
    assert shapley_values(players, table.__getitem__)[0] == 0


def test_a_two_player_game_by_hand():
    # v({}) = 0, v({a}) = 1, v({b}) = 2, v({a, b}) = 6: phi_a = (1 + 4)/2, phi_b = (2 + 5)/2
    table = {frozenset(): 0, frozenset("a"): 1, frozenset("b"): 2, frozenset("ab"): 6}
    assert shapley_values(["a", "b"], table.__getitem__) == {"a": Fraction(5, 2), "b": Fraction(7, 2)}
