"""Fuzzing at scale: huge numbers, long lists, many unknown keys, extreme but valid inputs.

The contract is that of tests/test_fuzz.py (results with finite JSON, or a CaseError whose every
problem names a field), plus a time budget: no case may take more than TIME_BUDGET seconds to
be read, validated and analysed (engine.analysis.analyse, what the command line and the memo
run). A hang fails the test: an interval timer interrupts any case still running after
HARD_STOP seconds, so one slow case cannot stall the suite.
"""

from __future__ import annotations

import copy
import json
import signal
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any

import pytest
import yaml
from conftest import SAMPLE_CASE, minimal_case_dict
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from obligor_memo.engine.analysis import analyse
from obligor_memo.engine.case import LIMITS, parse_case
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.loading import load_case_text, parse_text, resolve_statements

TIME_BUDGET = 2.0  # seconds, the budget for a valid case on the 2-core machine
SAMPLE_MULTIPLE = 5  # on a slower machine: no case may cost more than five analyses of the sample at 100 facilities
HARD_STOP = 30.0  # a case still running then is a hang
FUZZ = settings(
    derandomize=True,
    deadline=None,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)

SAMPLE = resolve_statements(parse_text(SAMPLE_CASE.read_text(encoding="utf-8"), SAMPLE_CASE.name), SAMPLE_CASE.parent)
BASES = {"sample": SAMPLE, "minimal": minimal_case_dict()}
TIMINGS: list[float] = []


class _Hang(Exception):
    pass


@contextmanager
def _hard_stop(seconds: float) -> Iterator[None]:
    def interrupt(signum: int, frame: Any) -> None:
        raise _Hang(f"a case ran longer than {seconds:g} s")

    previous = signal.signal(signal.SIGALRM, interrupt)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def _budget() -> float:
    """The time budget on this machine: 2 s, or five analyses of the sample case grown to the
    facility limit when the machine is slower than the one the budget was set on (the speed is
    measured in this run, so a slow or busy machine does not fail the suite; bench/ reports the
    absolute times)."""
    if not _SAMPLE_SECONDS:
        doc = copy.deepcopy(SAMPLE)
        doc["facilities"] = [
            dict(copy.deepcopy(doc["facilities"][i % len(doc["facilities"])]), id=f"X{i}")
            for i in range(LIMITS["facilities"])
        ]
        doc["scenarios"] = [s for s in doc.get("scenarios", []) if "facilities." not in json.dumps(s)]
        case = parse_case(doc, source="sample")
        analyse(case)  # warm: the first call pays for imports and quadrature caches
        start = time.perf_counter()
        analyse(case)
        _SAMPLE_SECONDS.append(time.perf_counter() - start)
    return max(TIME_BUDGET, SAMPLE_MULTIPLE * _SAMPLE_SECONDS[0])


_SAMPLE_SECONDS: list[float] = []


def _run(make: Callable[[], Any]) -> tuple[str, float]:
    """Read/validate with ``make`` and analyse once, asserting the contract: (outcome, seconds)."""
    start = time.perf_counter()
    try:
        with _hard_stop(HARD_STOP):
            try:
                results = analyse(make())
                outcome = "accepted"
                json.dumps(results.to_dict(), allow_nan=False)
            except CaseError as exc:
                assert exc.problems
                for problem in exc.problems:
                    assert problem.field.strip() and problem.allowed.strip(), problem
                assert "Traceback" not in exc.paragraph()
                outcome = "rejected"
    except _Hang as hang:
        pytest.fail(str(hang))
    return outcome, time.perf_counter() - start


def _check(make: Callable[[], Any]) -> str:
    """Read/validate with ``make`` and analyse; assert the contract and the time budget.

    A case over the budget is timed once more and the faster run counts: a case slow by its
    nature is slow both times, a moment when another process held the cores is not.
    """
    outcome, elapsed = _run(make)
    if elapsed > _budget():
        elapsed = min(elapsed, _run(make)[1])
    TIMINGS.append(elapsed)
    assert elapsed <= _budget(), f"{outcome} case took {elapsed:.2f} s (budget {_budget():.2f} s)"
    return outcome


def _lists(doc: Any, path: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    found = []
    if isinstance(doc, dict):
        for key, value in doc.items():
            found += _lists(value, path + (key,))
    elif isinstance(doc, list):
        found.append(path)
        for i, value in enumerate(doc):
            found += _lists(value, path + (i,))
    return found


def _mappings(doc: Any, path: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    found = [path] if isinstance(doc, dict) else []
    children = doc.items() if isinstance(doc, dict) else enumerate(doc) if isinstance(doc, list) else ()
    for key, value in children:
        found += _mappings(value, path + (key,))
    return found


def _at(doc: Any, path: tuple[Any, ...]) -> Any:
    for part in path:
        doc = doc[part]
    return doc


@st.composite
def long_lists(draw: st.DrawFn) -> dict[str, Any]:
    doc = copy.deepcopy(BASES[draw(st.sampled_from(sorted(BASES)))])
    target = _at(doc, draw(st.sampled_from(_lists(doc))))
    if target:
        count = draw(st.sampled_from([2, 10, 51, 201, 1000, 5000]))
        target.extend(copy.deepcopy(target[i % len(target)]) for i in range(count))
    return doc


@st.composite
def many_unknown_keys(draw: st.DrawFn) -> dict[str, Any]:
    doc = copy.deepcopy(BASES[draw(st.sampled_from(sorted(BASES)))])
    target = _at(doc, draw(st.sampled_from(_mappings(doc))))
    count = draw(st.sampled_from([1, 11, 500, 5000]))
    length = draw(st.sampled_from([3, 40, 5000]))
    for i in range(count):
        target[f"{i}".rjust(length, "x")] = i
    return doc


# Extreme but valid: each numeric input at or near the ends of its allowed range.
EXTREMES: dict[tuple[Any, ...], list[Any]] = {
    ("pd", "horizon_years"): [0.01, 1, 10, 30],
    ("pd", "asset_volatility"): [1e-9, 1e-4, 0.5, 2.999],
    ("pd", "asset_growth"): [-0.999, -0.5, 0.0, 0.999],
    ("pd", "override"): [1e-12, 1e-6, 0.5, 1.0],
    ("pd", "default_point", "long_term_share"): [0.0, 1.0],
    ("pd", "default_point", "short_term_share"): [0.0, 1.0],
    ("capital", "confidence"): [0.5, 0.9, 0.99999],
    ("capital", "recovery_join"): ["independent", "comonotonic"],
    ("pd", "override_horizon_years"): [0.1, 30],
}


@st.composite
def extreme_valid(draw: st.DrawFn) -> dict[str, Any]:
    doc = copy.deepcopy(SAMPLE)
    for path in draw(st.lists(st.sampled_from(sorted(EXTREMES)), min_size=1, max_size=4, unique=True)):
        holder = doc
        for part in path[:-1]:
            holder = holder.setdefault(part, {})
        holder[path[-1]] = draw(st.sampled_from(EXTREMES[path]))
        if path in (("pd", "override"), ("pd", "override_horizon_years")):
            doc["pd"].setdefault("override", 0.01)
            doc["pd"]["override_reason"] = "analyst's view"
    if draw(st.booleans()):  # facilities at scale too
        facilities = doc["facilities"]
        doc["facilities"] = [
            dict(copy.deepcopy(facilities[i % len(facilities)]), id=f"X{i}")
            for i in range(draw(st.sampled_from([20, LIMITS["facilities"]])))
        ]
        doc["scenarios"] = [s for s in doc.get("scenarios", []) if "facilities." not in json.dumps(s)]
    return doc


SENTINEL = 123456789.25


def _number_leaves(node: Any) -> list[tuple[Any, Any]]:
    """(container, key) of every number value in a case document."""
    found: list[tuple[Any, Any]] = []
    items = node.items() if isinstance(node, dict) else enumerate(node) if isinstance(node, list) else ()
    for key, value in items:
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            found.append((node, key))
        else:
            found.extend(_number_leaves(value))
    return found


@st.composite
def huge_number_texts(draw: st.DrawFn) -> tuple[str, str]:
    """A case as YAML or JSON text with one number token replaced by a very long one."""
    as_yaml = draw(st.booleans())
    data = copy.deepcopy(BASES[draw(st.sampled_from(sorted(BASES)))])
    digits = draw(st.sampled_from([51, 400, 4300, 5000, 20000]))
    token = draw(st.sampled_from(["9" * digits, "-" + "1" * digits, "1." + "5" * digits, "1" * digits + "e5"]))
    # One number value of the case (never a number inside free text) becomes the long token: it is
    # set to a sentinel, the case is written, and the sentinel's spelling is replaced.
    leaves = _number_leaves(data)
    if leaves:
        holder, key = leaves[draw(st.integers(0, len(leaves) - 1))]
        holder[key] = SENTINEL
    text = yaml.safe_dump(data, sort_keys=False) if as_yaml else json.dumps(data)
    text = text.replace(repr(SENTINEL), token, 1)
    return text, "case.yaml" if as_yaml else "case.json"


HOSTILE_TEXTS = [
    "a: !!python/object/apply:os.system ['true']\n",
    "a: &x [1, 2]\nb: *x\n",
    "[" * 20000 + "]" * 20000,
    '{"a": ' * 5000 + "1" + "}" * 5000,
    "borrower: {name: " + "é" * 1_000_000 + ", currency: EUR}\n",
    "memo: {summary: '" + "x" * 3_000_000 + "'}\n",
    "v: 0x_\n",
    "v: 0b2\n",
    "v: 1:2:3:4\n",
    "v: !!int 12x\n",
    "v: !!float abc\n",
    "v: !!bool maybe\n",
]


@settings(FUZZ, max_examples=300)
@given(data=long_lists())
def test_long_lists_are_refused_with_their_count_or_run_in_time(data):
    _check(lambda: parse_case(data))


@settings(FUZZ, max_examples=200)
@given(data=many_unknown_keys())
def test_many_unknown_keys_are_counted_quickly(data):
    _check(lambda: parse_case(data))


@settings(FUZZ, max_examples=200)
@given(data=extreme_valid())
def test_extreme_valid_inputs_analyse_within_the_budget(data):
    _check(lambda: parse_case(data))


@settings(FUZZ, max_examples=150)
@given(item=huge_number_texts())
def test_huge_number_tokens_are_refused_by_their_line(item):
    text, name = item
    assert _check(lambda: load_case_text(text, name)) == "rejected"


@pytest.mark.parametrize("text", HOSTILE_TEXTS, ids=range(len(HOSTILE_TEXTS)))
def test_hostile_texts_are_refused_with_a_field(text):
    for name in ("case.yaml", "case.json"):
        assert _check(lambda: load_case_text(text, name)) == "rejected"


def test_timings_were_recorded():
    """Reported, not asserted per run: the slowest case of this module's runs."""
    assert TIMINGS, "no case ran"
    assert max(TIMINGS) <= _budget()
