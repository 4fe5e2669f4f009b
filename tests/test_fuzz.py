"""Property-based fuzzing of case input: every case evaluates, or is refused field by field.

The contract under test: whatever a user hands in (a mapping, YAML or JSON text, a case file
on the command line), the engine either returns results whose JSON is finite, or raises
``CaseError`` whose every problem names a field, the value and what is allowed. Nothing else
escapes: no other exception type, no traceback, no NaN or infinity.

Cases are generated two ways: mutations of valid cases (the sample borrower with its statements
inlined, and the minimal case) and random structures. Runs are derandomised so CI is
reproducible. Defects the fuzzing once found are reproduced by tests at the end of the file.
"""

from __future__ import annotations

import copy
import json
import math
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
import yaml
from click.testing import CliRunner
from conftest import SAMPLE_CASE, minimal_case_dict
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loading import load_case_text, parse_text, resolve_statements

FUZZ = settings(
    derandomize=True,
    deadline=None,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)


def _sample_case_dict() -> dict[str, Any]:
    data = parse_text(SAMPLE_CASE.read_text(encoding="utf-8"), SAMPLE_CASE.name)
    return resolve_statements(data, SAMPLE_CASE.parent)


SAMPLE = _sample_case_dict()
BASES = {"sample": SAMPLE, "minimal": minimal_case_dict()}

# ------------------------------------------------------------------ hostile values

EDGE_NUMBERS: list[Any] = [
    math.nan,
    math.inf,
    -math.inf,
    1e308,
    -1e308,
    5e-324,
    -5e-324,
    0,
    0.0,
    -0.0,
    -1,
    -1e-9,
    1,
    1.0000001,
    0.9999999,
    0.5,
    2,
    3,
    5,
    30,
    50,
    100,
    1900,
    2200,
    2201,
    1e15,
    1.0000001e15,
    10**400,
    -(10**400),
    2**63,
    2**64 + 1,
]
EDGE_TEXT: list[str] = [
    "",
    " ",
    "\u200f",
    "\u200b",
    "\u202e",
    "\ufeff",
    "\U0001f600",
    "\x00",
    "a\x00b",
    "\ud7ff",
    "x" * 100_000,
    "\u05e9\u05dc\u05d5\u05dd",
    "NaN",
    "inf",
    "-1",
    "1e6",
    "1,5",
    "null",
    "true",
    "=cmd|' /C calc'!A0",
    "../../etc/passwd",
    "{{ 7*7 }}",
    "<script>alert(1)</script>",
    "EUR",
    "market",
    "balance_sheet",
    "term_loan",
    "senior_secured",
    "comonotonic",
]
scalars = st.one_of(
    st.sampled_from(EDGE_NUMBERS),
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(min_value=-2, max_value=2),
    st.integers(min_value=-(2**70), max_value=2**70),
    st.booleans(),
    st.none(),
    st.sampled_from(EDGE_TEXT),
    st.text(max_size=30),
)
hostile = st.one_of(
    scalars,
    st.lists(scalars, max_size=3),
    st.dictionaries(st.text(max_size=10), scalars, max_size=3),
)
# Numbers that a careful user might type: the edges of the allowed ranges and plain values.
plausible_numbers = st.one_of(
    st.sampled_from(
        [
            0,
            0.0,
            5e-324,
            1e-300,
            1e-12,
            1e-6,
            0.001,
            0.01,
            0.5,
            0.999999,
            1,
            1.0,
            2.5,
            3,
            5,
            29.999,
            30,
            49.9,
            50,
            100,
            1e6,
            1e12,
            1e15,
        ]
    ),
    st.floats(min_value=0, max_value=1),
    st.floats(min_value=0, max_value=1e15),
)

# ------------------------------------------------------------------ walking and mutating documents


def _paths(doc: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    """Every location in a nested document, the root included (keys and list indices)."""
    out = [prefix]
    if isinstance(doc, dict):
        for key, value in doc.items():
            out += _paths(value, prefix + (key,))
    elif isinstance(doc, list):
        for index, value in enumerate(doc):
            out += _paths(value, prefix + (index,))
    return out


def _get(doc: Any, path: tuple[Any, ...]) -> Any:
    for part in path:
        doc = doc[part]
    return doc


def _set(doc: Any, path: tuple[Any, ...], value: Any) -> Any:
    if not path:
        return value
    _get(doc, path[:-1])[path[-1]] = value
    return doc


def _near_miss(key: str) -> str:
    """A typo of an existing key: the schema should suggest the right one."""
    return key[:-1] if len(key) > 1 else key + "s"


@st.composite
def _random_path(draw: st.DrawFn, doc: Any) -> tuple[Any, ...]:
    """A location reached by descending from the root, stopping at each level with chance 1/4
    (cheaper than listing every location of the sample case on each draw)."""
    path: tuple[Any, ...] = ()
    while isinstance(doc, (dict, list)) and doc and draw(st.integers(min_value=0, max_value=3)):
        key = draw(st.sampled_from(list(doc) if isinstance(doc, dict) else range(len(doc))))
        path, doc = path + (key,), doc[key]
    return path


OPERATIONS = ("drop", "replace", "stringify", "listify", "extra", "duplicate", "empty", "scale")


@st.composite
def mutated_cases(draw: st.DrawFn, max_mutations: int = 4) -> dict[str, Any]:
    """A valid base case with one to ``max_mutations`` hostile edits anywhere in it."""
    doc: Any = copy.deepcopy(BASES[draw(st.sampled_from(sorted(BASES)))])
    for _ in range(draw(st.integers(min_value=1, max_value=max_mutations))):
        path = draw(_random_path(doc))
        operation = draw(st.sampled_from(OPERATIONS))
        target = _get(doc, path)
        if operation == "drop" and path:
            del _get(doc, path[:-1])[path[-1]]
        elif operation == "replace":
            doc = _set(doc, path, draw(hostile))
        elif operation == "stringify" and not isinstance(target, (dict, list)):
            doc = _set(doc, path, str(target))
        elif operation == "listify":
            doc = _set(doc, path, [target])
        elif operation == "extra" and isinstance(target, dict):
            keys = [str(k) for k in target] or ["key"]
            key = draw(
                st.one_of(
                    st.sampled_from([_near_miss(k) for k in keys]),
                    st.sampled_from(EDGE_TEXT),
                    st.text(min_size=1, max_size=12),
                )
            )
            target.setdefault(key, draw(hostile))
        elif operation == "duplicate" and isinstance(target, list) and target:
            target.append(copy.deepcopy(draw(st.sampled_from(target))))
        elif operation == "empty" and isinstance(target, (dict, list)):
            doc = _set(doc, path, type(target)())
        elif operation == "scale" and isinstance(target, (int, float)) and not isinstance(target, bool):
            factor = draw(st.sampled_from([-1, 0, 1e-300, 1e300, 1e10, 1e-10, 1.0000001]))
            doc = _set(doc, path, target * factor)
    return doc


@st.composite
def numeric_variants(draw: st.DrawFn) -> dict[str, Any]:
    """A base case whose numbers are replaced by plausible numbers: mostly valid cases."""
    name = draw(st.sampled_from(sorted(BASES)))
    doc = copy.deepcopy(BASES[name])
    for path in draw(st.lists(st.sampled_from(NUMERIC_PATHS[name]), min_size=1, max_size=4, unique=True)):
        _set(doc, path, draw(plausible_numbers))
    return doc


NUMERIC_PATHS = {
    name: [
        p
        for p in _paths(doc)
        if isinstance(_get(doc, p), (int, float)) and not isinstance(_get(doc, p), bool) and "year" not in p
    ]
    for name, doc in BASES.items()
}

json_like = st.recursive(
    scalars,
    lambda inner: st.one_of(st.lists(inner, max_size=4), st.dictionaries(st.text(max_size=12), inner, max_size=4)),
    max_leaves=12,
)


@st.composite
def random_cases(draw: st.DrawFn) -> Any:
    """Random structures, often with the top-level keys a case has, to reach the deeper checks."""
    if draw(st.booleans()):
        return draw(json_like)
    keys = [
        "borrower",
        "statements",
        "facilities",
        "market",
        "pd",
        "capital",
        "exposure",
        "lgd",
        "pricing",
        "sensitivity",
        "scenarios",
        "memo",
    ]
    chosen = draw(st.lists(st.sampled_from(keys), unique=True, max_size=len(keys)))
    return {key: draw(json_like) for key in chosen}


# ------------------------------------------------------------------ the contract


# The documented keys of ``evaluate --json`` that are numbers: each must be a finite number.
CONTRACT_NUMBERS = {
    "pd": ("asset_value", "asset_volatility", "default_point", "pd", "horizon_years"),
    "facilities": ("ead", "ccf", "lgd", "expected_loss", "unexpected_loss", "risk_weight", "rwa"),
    "total": ("ead", "expected_loss", "unexpected_loss", "rwa", "economic_capital"),
}


def _assert_finite_contract(results: Any) -> None:
    out = json.loads(json.dumps(results.to_dict(), allow_nan=False))
    for block, keys in CONTRACT_NUMBERS.items():
        for row in out[block] if isinstance(out[block], list) else [out[block]]:
            for key in keys:
                value = row[key]
                assert isinstance(value, (int, float)) and math.isfinite(value), (block, key, value)


def check_contract(make: Callable[[], Any], run: Callable[[Any], Any] = evaluate, tolerate_known: bool = False) -> str:
    """Run one input through validation and evaluation; assert the contract; say what happened.

    Returns "accepted" or "rejected"; any other exception fails the test. (``tolerate_known`` is
    kept for the call sites: the defects it once tolerated are fixed and tested below.)
    """
    try:
        results = run(make())
    except CaseError as exc:
        assert exc.problems, "a CaseError with no problems"
        for problem in exc.problems:
            assert isinstance(problem.allowed, str) and problem.allowed.strip(), problem
            assert isinstance(problem.field, str) and problem.field.strip(), problem
        assert exc.paragraph()
        return "rejected"
    _assert_finite_contract(results)
    return "accepted"


OUTCOMES: dict[str, dict[str, int]] = {}


def _tally(test: str, outcome: str) -> None:
    counts = OUTCOMES.setdefault(test, {})
    counts[outcome] = counts.get(outcome, 0) + 1


# ------------------------------------------------------------------ fuzz tests


@settings(FUZZ, max_examples=2200)
@given(data=mutated_cases())
def test_mutated_cases_evaluate_or_name_the_field(data: dict[str, Any]) -> None:
    _tally("mutated", check_contract(lambda: parse_case(data)))


@settings(FUZZ, max_examples=1000)
@given(data=numeric_variants())
def test_plausible_numbers_evaluate_or_name_the_field(data: dict[str, Any]) -> None:
    _tally("numeric", check_contract(lambda: parse_case(data)))


@settings(FUZZ, max_examples=700)
@given(data=random_cases())
def test_random_structures_are_refused_field_by_field(data: Any) -> None:
    _tally("random", check_contract(lambda: parse_case(data)))


YAML_NASTIES = [
    "",
    "---\n...\n",
    "- 1\n- 2\n",
    "just text",
    "a: b: c",
    "a: [1, 2",
    "\t- x",
    "? [a, b]\n: 1\n",
    "!!python/object/apply:os.system ['true']\n",
    "a: !!binary aGVsbG8=\n",
    "a: 2024-01-31\n",
    "a: &x 1\nb: *x\n",
    "a: *undefined\n",
    "<<: {a: 1}\n",
    "--- 1\n--- 2\n",
    "a: 1\na: 2\n",
    "%YAML 9.9\n--- a\n",
    "a: &a [x, x]\nb: &b [*a, *a]\nc: [*b, *b]\n",
    "borrower: {name: \x00}\n",
    "\ufeffborrower: {}\n",
    "[" * 5000 + "]" * 5000,
    '{"a": NaN, "b": Infinity}',
    '{"a": 1, "a": 2}',
    "{" * 5000,
    '{"a": 1e400}',
]


def _corrupt(text: str, draw: st.DrawFn) -> str:
    """Truncate, splice in random characters, or cut a slice: a half-saved or hand-edited file."""
    kind = draw(st.sampled_from(["none", "truncate", "insert", "cut"]))
    if kind == "none" or not text:
        return text
    at = draw(st.integers(min_value=0, max_value=len(text)))
    if kind == "truncate":
        return text[:at]
    if kind == "insert":
        return (
            text[:at]
            + draw(st.one_of(st.text(min_size=1, max_size=5), st.sampled_from(list(":-[]{}&*!|>#'\"\t\n%@`"))))
            + text[at:]
        )
    return text[:at] + text[at + draw(st.integers(min_value=1, max_value=40)) :]


@st.composite
def case_texts(draw: st.DrawFn) -> tuple[str, str]:
    """(text, name): YAML or JSON dumps of mutated cases, corrupted or not; or nasty fragments."""
    source = draw(st.sampled_from(["yaml", "json", "nasty", "random"]))
    if source == "nasty":
        return draw(st.sampled_from(YAML_NASTIES)), draw(st.sampled_from(["c.yaml", "c.json"]))
    if source == "random":
        return draw(st.text(max_size=200)), draw(st.sampled_from(["c.yaml", "c.yml", "c.json"]))
    doc = draw(mutated_cases(max_mutations=2))
    if source == "json":
        return _corrupt(json.dumps(doc, allow_nan=True), draw), "c.json"
    text = yaml.dump(doc, Dumper=yaml.CSafeDumper, sort_keys=False, allow_unicode=True)
    return _corrupt(text, draw), "c.yaml"


@settings(FUZZ, max_examples=1100)
@given(item=case_texts())
def test_case_text_evaluates_or_names_the_field(item: tuple[str, str]) -> None:
    text, name = item
    _tally("text", check_contract(lambda: load_case_text(text, name)))


# The command line: a sample of cases through the console script, in-process.
_CLI_DIR = Path(tempfile.mkdtemp(prefix="obligor-fuzz-"))


@settings(FUZZ, max_examples=80)
@given(data=mutated_cases(max_mutations=2), as_yaml=st.booleans())
def test_command_line_exits_0_or_2_without_traceback(data: dict[str, Any], as_yaml: bool) -> None:
    from obligor_memo.app.cli import main

    path = _CLI_DIR / ("case.yaml" if as_yaml else "case.json")
    if as_yaml:
        path.write_text(yaml.dump(data, Dumper=yaml.CSafeDumper, allow_unicode=True), encoding="utf-8")
    else:
        path.write_text(json.dumps(data, allow_nan=True), encoding="utf-8")
    result = CliRunner().invoke(main, ["evaluate", str(path), "--json"])
    assert "Traceback" not in result.output
    assert result.exit_code in (0, 2), (result.exit_code, result.output[-2000:])
    if result.exit_code == 0:
        json.loads(result.stdout, parse_constant=lambda token: pytest.fail(f"{token} in JSON"))
    else:
        assert "allowed:" in result.output
    _tally("cli", f"exit {result.exit_code}")


# Scenarios re-validate dotted-path overrides against the schema and re-run the engine: the full
# analysis (sensitivities, PD grid, scenarios) is held to the same contract.
_ODD_PATHS = [
    "",
    ".",
    "..",
    "pd",
    "pd..override",
    "facilities",
    "facilities.*",
    "facilities.NOPE.ccf",
    "facilities.F1.id",
    "facilities.*.recovery",
    "facilities.F1.recovery.std",
    "statements",
    "statements.0.year",
    "scenarios",
    "borrower.name",
    "market.equity_value",
    "pricing.proposed_spread",
    "capital.confidence",
    "\u200b",
    "x" * 300,
]


@st.composite
def scenario_cases(draw: st.DrawFn) -> dict[str, Any]:
    from obligor_memo.engine.scenarios import valid_paths

    doc = minimal_case_dict()
    valid = list(valid_paths(parse_case(doc)))
    # Mostly valid paths with plausible numbers, so that many scenarios get evaluated.
    keys = st.one_of(st.sampled_from(valid), st.sampled_from(valid), st.sampled_from(_ODD_PATHS))
    values = st.one_of(plausible_numbers, plausible_numbers, plausible_numbers, scalars)
    overrides = draw(st.dictionaries(keys, values, min_size=1, max_size=2))
    doc["scenarios"] = [{"name": "what if", "set": overrides}]
    return doc


@settings(FUZZ, max_examples=200)
@given(data=scenario_cases())
def test_scenarios_in_the_full_analysis_evaluate_or_name_the_field(data: dict[str, Any]) -> None:
    from obligor_memo.engine.analysis import analyse

    _tally("scenarios", check_contract(lambda: parse_case(data), run=analyse))


def test_fuzz_reached_both_outcomes() -> None:
    """The generators are worth their time only if they reach evaluation as well as refusal."""
    if not OUTCOMES:
        pytest.skip("run together with the fuzz tests above")
    print("fuzz outcomes:", json.dumps(OUTCOMES, sort_keys=True))  # shown with -s or -rA
    for name in ("mutated", "numeric", "text", "scenarios"):
        counts = OUTCOMES.get(name, {})
        if counts:
            assert counts.get("accepted", 0) > 0 and counts.get("rejected", 0) > 0, (name, counts)


# ------------------------------------------------------------------ defects the fuzzing found
# Each reproduces one failure the fuzzing once found, now fixed; they guard against its return.


def _strict(reason: str) -> pytest.MarkDecorator:
    return pytest.mark.xfail(reason=reason, strict=True)


def _minimal_with(**changes: Any) -> Callable[[], Any]:
    doc = minimal_case_dict()
    for dotted, value in changes.items():
        _set(doc, tuple(int(p) if p.isdigit() else p for p in dotted.split("__")), value)
    return lambda: parse_case(doc)


@pytest.mark.parametrize(
    "text, name",
    [
        ("[" * 100_000 + "]" * 100_000, "c.json"),
        ("[" * 3_000 + "]" * 3_000, "c.yaml"),
        ("a: " + "{b: " * 3_000 + "1" + "}" * 3_000, "c.yaml"),
    ],
)
def test_deeply_nested_text_is_refused_with_a_message(text: str, name: str) -> None:
    with pytest.raises(CaseError) as caught:
        load_case_text(text, name)
    assert any(name in field for field in caught.value.fields)


@pytest.mark.parametrize("text", ["? [a, b]\n: 1\n", "borrower:\n  ? {a: 1}\n  : 1\n"])
def test_yaml_key_that_is_a_list_or_mapping_is_refused(text: str) -> None:
    with pytest.raises(CaseError) as caught:
        load_case_text(text, "c.yaml")
    assert all(field.strip() for field in caught.value.fields)


def test_recovery_std_whose_square_underflows() -> None:
    check_contract(_minimal_with(facilities__0__recovery={"mean": 0.5, "std": 1e-170}), tolerate_known=False)


def test_total_assets_that_collapse_by_300_orders_of_magnitude() -> None:
    check_contract(
        _minimal_with(
            statements__2__total_assets=1e15,
            statements__3__total_assets=1e-310,
            pd={"asset_volatility": 0.2, "asset_growth": 0.0},
        ),
        tolerate_known=False,
    )


def test_tiny_assets_against_the_default_point() -> None:
    check_contract(
        _minimal_with(statements__3__total_assets=5e-324, pd={"asset_volatility": 0.2, "asset_growth": 0.0}),
        tolerate_known=False,
    )


def test_z_score_whose_sum_overflows() -> None:
    doc = copy.deepcopy(SAMPLE)
    doc["statements"][-1].update(total_assets=1e-300, sales=1e15)
    doc["pd"].update(override=0.01, override_reason="fuzz")
    check_contract(lambda: parse_case(doc), tolerate_known=False)


@pytest.mark.parametrize("key", [" ", "\x1c", "\xa0\x0c", "\t"])
def test_unknown_blank_key_is_visible_in_the_field(key: str) -> None:
    doc = minimal_case_dict()
    doc[key] = 1
    with pytest.raises(CaseError) as caught:
        parse_case(doc)
    assert all(field.strip() for field in caught.value.fields), caught.value.fields


def test_full_analysis_of_statements_with_wild_swings() -> None:
    from obligor_memo.engine.analysis import analyse

    make = _minimal_with(
        statements__0__total_assets=1.0,
        statements__1__total_assets=1e15,
        statements__2__total_assets=1.0,
        statements__3__total_assets=1e15,
    )
    # An estimated asset volatility beyond 300 % a year is refused at evaluation, naming the field.
    with pytest.raises(CaseError) as caught:
        evaluate(make())
    assert caught.value.fields == ("pd.asset_volatility",)
    assert check_contract(make, run=analyse, tolerate_known=False) == "rejected"


def _alias_bomb(levels: int) -> str:
    """A few hundred bytes of YAML whose aliases stand for 9**levels strings (shared, not copied)."""
    lines = ["lol:", "  a0: &a0 [x, x, x, x, x, x, x, x, x]"]
    lines += [f"  a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 9) + "]" for i in range(1, levels)]
    return "\n".join(lines + [f"borrower: {{name: *a{levels - 1}, currency: EUR}}", ""])


def test_yaml_alias_bomb_is_refused_quickly() -> None:
    text = _alias_bomb(7)
    assert len(text) < 500
    started = time.perf_counter()
    with pytest.raises(CaseError):
        load_case_text(text, "c.yaml")
    # A bounded rendering takes about a millisecond; the full repr of 9**7 strings takes seconds.
    assert time.perf_counter() - started < 0.25
