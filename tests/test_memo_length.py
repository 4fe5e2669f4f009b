"""The memo stays a committee memo for large cases: one decision page, a body of at most six pages.

Many facilities, a long statement history, many scenarios and covenants: the decision page lists
what is being decided and sums the rest, the body prints the latest years, the tightest covenants
and the worst scenarios, and the record appendix keeps every facility and covenant. Each printed
memo is read back (pdftotext) and verified.
"""

from __future__ import annotations

import copy
import re
import subprocess
from typing import Any

import numpy as np
import pytest
from obligor_memo.app.memo import render_memo_pdf
from obligor_memo.app.memo.record import verify_memo
from obligor_memo.engine.analysis import analyse
from obligor_memo.engine.case import case_to_dict, parse_case
from obligor_memo.engine.decision import (
    BODY_COVENANTS,
    BRIEF_SCENARIOS,
    DECISION_COVENANTS,
    LISTED_FACILITIES,
    decision_summary,
    listed_facilities,
    tightest_covenants,
)
from obligor_memo.engine.drivers import YEARS_SHOWN, most_telling, pd_drivers

from tests.test_memo import STAMP


def pages_of(pdf: bytes) -> list[str]:
    text = subprocess.run(
        ["pdftotext", "-layout", "-enc", "UTF-8", "-", "-"], input=pdf, capture_output=True, check=True
    ).stdout.decode()
    return text.split("\f")[:-1]


WORD = re.compile(r'<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">([^<]*)</word>')


def overlapping_words(pdf: bytes) -> list[tuple[int, str, str]]:
    """(page, word, word) for each two words whose boxes (pdftotext -bbox) overlap by more than a
    tenth of the smaller box: a column run into the next, or axis labels printed over each other."""
    out = subprocess.run(["pdftotext", "-bbox", "-", "-"], input=pdf, capture_output=True, check=True).stdout.decode()
    found = []
    for number, page in enumerate(out.split("<page ")[1:], start=1):
        words = [(float(a), float(b), float(c), float(d), w) for a, b, c, d, w in WORD.findall(page)]
        words.sort()
        for i, a in enumerate(words):
            for b in words[i + 1 :]:
                if b[0] >= a[2]:
                    break  # sorted by left edge: no later word starts left of this one's right edge
                dx, dy = min(a[2], b[2]) - b[0], min(a[3], b[3]) - max(a[1], b[1])
                smaller = min((a[2] - a[0]) * (a[3] - a[1]), (b[2] - b[0]) * (b[3] - b[1]))
                if dx > 0.5 and dy > 0.5 and dx * dy > 0.1 * smaller:
                    found.append((number, a[4], b[4]))
    return found


def body_pages(pages: list[str]) -> tuple[int, int]:
    """(first body page, first appendix page), 0-based."""
    first = next(i for i, t in enumerate(pages) if re.search(r"^\s*1\s+The borrower", t, flags=re.M))
    appendix = next(i for i, t in enumerate(pages) if re.search(r"^\s*Appendix A\b", t, flags=re.M))
    return first, appendix


@pytest.fixture(scope="module")
def sample_dict(sample_case) -> dict[str, Any]:
    return case_to_dict(sample_case)


def many_facilities(data: dict[str, Any], count: int) -> dict[str, Any]:
    d = copy.deepcopy(data)
    facilities = []
    for i in range(count):
        f = copy.deepcopy(data["facilities"][i % len(data["facilities"])])
        f["id"] = f"{f['id']}-{i}"
        f["committed"] = f["committed"] / 10 * (1 + i % 7)
        f["drawn"] = min(f["drawn"] / 10 * (1 + i % 7), f["committed"])
        facilities.append(f)
    d["facilities"] = facilities
    d["scenarios"] = [s for s in d["scenarios"] if not any(k.startswith("facilities.") for k in s["set"])]
    return d


def long_history(data: dict[str, Any], years: int) -> dict[str, Any]:
    d = copy.deepcopy(data)
    rows = data["statements"]
    first = rows[-1]["year"] - years + 1
    d["statements"] = [dict(rows[i % len(rows)], year=first + i) for i in range(years)]
    return d


def many_scenarios_and_covenants(data: dict[str, Any]) -> dict[str, Any]:
    d = copy.deepcopy(data)
    d["scenarios"] = [
        {"name": f"Volatility {10 + i * 0.5:.1f} %", "set": {"pd.asset_volatility": 0.10 + i * 0.005}}
        for i in range(50)
    ]
    metrics = [("net_debt_to_ebitda", 4.0, "max"), ("interest_cover", 3.0, "min"), ("debt_to_equity", 3.0, "max")]
    d["covenants"] = [
        {"metric": m, "threshold": t + i * 0.05, "direction": way, "tested": "half-yearly"}
        for i, (m, t, way) in enumerate(metrics[i % 3] for i in range(20))
    ]
    return d


def printed(data: dict[str, Any]) -> tuple[Any, bytes]:
    results = analyse(parse_case(data, source="test case"))
    return results, render_memo_pdf(results, charts=False, generated_at=STAMP)


# --------------------------------------------------------------------------- what the pages select


@pytest.mark.parametrize(("span", "step"), [(0, 1), (9, 1), (11, 1), (12, 2), (22, 2), (23, 5), (59, 10), (199, 20)])
def test_year_ticks_step_by_one_two_or_five_and_stay_a_dozen(span, step):
    from obligor_memo.app.charts.style import year_step

    assert year_step(span) == step
    assert span / step + 1 <= 12  # a dozen year labels fit a chart's width


def test_at_most_the_limit_every_facility_is_listed(sample_results):
    d = decision_summary(sample_results)
    assert len(d.facilities) <= LISTED_FACILITIES
    assert d.listed == d.facilities and d.others is None


def test_many_facilities_list_the_largest_being_decided_and_sum_the_rest(sample_dict):
    results = analyse(parse_case(many_facilities(sample_dict, 40), source="test case"))
    d = decision_summary(results)
    assert len(d.listed) == LISTED_FACILITIES - 1
    assert all(f.status != "unchanged" for f in d.listed)
    decided = [f.committed for f in d.facilities if f.status != "unchanged"]
    # The listed are the largest being decided: none left out is larger than the smallest listed.
    assert min(f.committed for f in d.listed) == sorted(decided, reverse=True)[LISTED_FACILITIES - 2]
    assert [f.id for f in d.listed] == [f.id for f in d.facilities if f in d.listed]  # the case's order
    rest = [f for f in d.facilities if f not in d.listed]
    assert d.others is not None and d.others.count == len(rest) == 40 - len(d.listed)
    assert d.others.committed == pytest.approx(np.sum([f.committed for f in rest]))
    assert d.others.ead == pytest.approx(np.sum([f.ead for f in rest]))
    assert d.others.unchanged == sum(f.status == "unchanged" for f in rest)
    # Listed and summed add up to the totals.
    assert np.sum([f.committed for f in d.listed]) + d.others.committed == pytest.approx(d.total_committed)
    assert np.sum([f.ead for f in d.listed]) + d.others.ead == pytest.approx(results.total.ead)


def test_all_unchanged_facilities_are_summed_in_one_line(sample_results):
    lines = tuple(
        type(f)(**{**f.__dict__, "status": "unchanged"}) for f in decision_summary(sample_results).facilities * 3
    )
    listed, others = listed_facilities(lines)
    assert listed == () and others is not None and others.count == others.unchanged == len(lines)


def test_tightest_covenants_come_first_and_unreadable_last(sample_dict):
    results = analyse(parse_case(many_scenarios_and_covenants(sample_dict), source="test case"))
    tests = results.covenants
    shown = tightest_covenants(tests)
    assert len(shown) == DECISION_COVENANTS
    readable = sorted(c.headroom for c in tests if c.headroom is not None)
    assert [c.headroom for c in shown] == readable[:DECISION_COVENANTS]
    d = decision_summary(results)
    assert d.covenants == shown
    assert len(d.body_covenants) == BODY_COVENANTS
    assert sorted(c.headroom for c in d.body_covenants) == readable[:BODY_COVENANTS]
    order = [next(i for i, t in enumerate(tests) if t is c) for c in d.body_covenants]
    assert order == sorted(order)  # the body keeps the case's order
    assert tightest_covenants(tests[:2]) == tests[:2]


def test_the_brief_reads_the_worst_scenarios_in_the_case_order(sample_dict):
    results = analyse(parse_case(many_scenarios_and_covenants(sample_dict), source="test case"))
    d = decision_summary(results)
    assert len(d.scenarios) == 50 and len(d.brief) == BRIEF_SCENARIOS
    worst_pds = sorted((s.pd for s in d.scenarios), reverse=True)[:BRIEF_SCENARIOS]
    assert sorted((s.pd for s in d.brief), reverse=True) == worst_pds
    names = [s.name for s in d.scenarios]
    assert [names.index(s.name) for s in d.brief] == sorted(names.index(s.name) for s in d.brief)
    assert d.worst in d.brief


def test_years_shown_are_the_most_telling_in_year_order(sample_dict, sample_results):
    assert pd_drivers(sample_results).years_shown == pd_drivers(sample_results).years_left_out  # 9 changes
    results = analyse(parse_case(long_history(sample_dict, 40), source="test case"))
    drivers = pd_drivers(results)
    shown = drivers.years_shown
    assert len(drivers.years_left_out) == 39 and len(shown) == YEARS_SHOWN
    moves = sorted((abs(y.volatility - results.trend.volatility_used) for y in drivers.years_left_out), reverse=True)
    assert min(abs(y.volatility - results.trend.volatility_used) for y in shown) == moves[YEARS_SHOWN - 1]
    assert [y.year for y in shown] == sorted(y.year for y in shown)
    assert drivers.driving_year in shown
    assert most_telling(shown, 0.1) == shown


# --------------------------------------------------------------------------- the printed pages


@pytest.mark.parametrize(
    "build",
    [
        pytest.param(lambda d: many_facilities(d, 100), id="100-facilities"),
        pytest.param(lambda d: long_history(d, 60), id="60-years"),
        pytest.param(many_scenarios_and_covenants, id="50-scenarios-20-covenants"),
    ],
)
def test_large_cases_print_one_decision_page_and_a_short_body_that_verifies(sample_dict, build):
    results, pdf = printed(build(sample_dict))
    pages = pages_of(pdf)
    first, appendix = body_pages(pages)
    assert first == 1, "the decision page runs on"
    assert appendix - first <= 6, f"the body runs to {appendix - first} pages"
    report = verify_memo(pdf)
    assert report.ok, report.text()
    assert not overlapping_words(pdf), overlapping_words(pdf)[:10]  # e.g. 50 scenarios side by side


def test_the_summed_facilities_and_covenants_are_in_the_record_appendix(sample_dict):
    data = many_scenarios_and_covenants(many_facilities(sample_dict, 30))
    results, pdf = printed(data)
    pages = pages_of(pdf)
    decision = pages[0]
    d = decision_summary(results)
    assert f"{d.others.count} further facilities" in decision
    start = next(i for i, p in enumerate(pages) if re.search(r"^\s*Appendix [A-Z]\s+Inputs and record", p, flags=re.M))
    record = "\n".join(pages[start:])  # the last appendix, to the end
    for f in data["facilities"]:
        assert re.search(rf"^\s*{re.escape(f['id'])}\s", record, flags=re.M), f["id"]
    assert record.count("half-yearly") >= len(data["covenants"])
    letter = re.search(r"Appendix ([A-Z])\s+Inputs and record", pages[start]).group(1)
    assert f"the {BODY_COVENANTS} tightest in section 1, every covenant in appendix {letter}" in " ".join(
        decision.split()
    )
    body = "\n".join(pages[1 : body_pages(pages)[1]])
    assert f"The {BODY_COVENANTS} of 20 covenants with the least headroom" in " ".join(body.split())
    assert f"The {BRIEF_SCENARIOS} of 50 scenarios with the highest PD" in " ".join(body.split())
