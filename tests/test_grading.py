"""Checks of engine.grading: the illustrative scale, band lookup, scale validation."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.grading import (
    DEFAULT_GRADE_RATIO,
    DEFAULT_MASTER_SCALE,
    Grade,
    MasterScale,
    assign_grade,
    master_scale_from_rows,
)
from scipy import stats

PERFORMING = [str(k) for k in range(1, 11)]


def test_default_scale_labels_and_end_points():
    assert DEFAULT_MASTER_SCALE.labels == (*PERFORMING, "D")
    first, last = DEFAULT_MASTER_SCALE.grades[0], DEFAULT_MASTER_SCALE.grades[-1]
    assert (first.pd_lower, first.pd_upper) == (0.0, 0.0005)
    assert (last.label, last.pd_lower, last.pd_upper) == ("D", 0.30, 1.0)


def test_default_performing_bounds_are_numpy_geomspace():
    # Reference: numpy.geomspace(0.05 %, 30 %, 10), an independent construction of the
    # same geometric sequence. 1e-12 relative: rounding of two different power routes.
    performing = np.array(DEFAULT_MASTER_SCALE.upper_bounds[:10])
    np.testing.assert_allclose(performing, np.geomspace(0.0005, 0.30, 10), rtol=1e-12)


def test_default_ratio_is_constant_and_stated():
    performing = np.array(DEFAULT_MASTER_SCALE.upper_bounds[:10])
    ratios = performing[1:] / performing[:-1]
    np.testing.assert_allclose(ratios, DEFAULT_GRADE_RATIO, rtol=1e-12)
    # 600 ** (1/9) by hand: ln 600 = 6.39693, / 9 = 0.710770, exp -> 2.03556.
    assert DEFAULT_GRADE_RATIO == pytest.approx(2.03556, abs=1e-5)


@pytest.mark.parametrize("index", range(10))
def test_band_boundaries_upper_inclusive_lower_exclusive(index):
    upper = DEFAULT_MASTER_SCALE.upper_bounds[index]
    labels = DEFAULT_MASTER_SCALE.labels
    assert assign_grade(upper).grade == labels[index]
    assert assign_grade(math.nextafter(upper, 1.0)).grade == labels[index + 1]
    assert assign_grade(math.nextafter(upper, 0.0)).grade == labels[index]


@pytest.mark.parametrize(
    "pd, grade",
    [
        (5e-324, "1"),  # smallest positive double: still graded, best band
        (0.0003, "1"),
        (0.01, "6"),  # 0.858 % < 1 % <= 1.747 %
        (0.05, "8"),  # 3.557 % < 5 % <= 7.240 %
        (0.30, "10"),
        (0.5, "D"),  # above the performing scale: default-equivalent by construction
        (1.0, "D"),
    ],
)
def test_known_grades(pd, grade):
    assert assign_grade(pd).grade == grade


def test_midpoint_is_scipy_geometric_mean_of_bounds():
    result = assign_grade(0.01)
    reference = stats.gmean([result.pd_lower, result.pd_upper])
    assert result.band_midpoint_geometric == pytest.approx(reference, rel=1e-12)
    assert result.pd_lower < result.band_midpoint_geometric < result.pd_upper
    # The best band starts at 0 and has no geometric midpoint.
    assert assign_grade(0.0001).band_midpoint_geometric is None


@settings(max_examples=300, deadline=None)
@given(pd=st.floats(min_value=0.0, max_value=1.0, exclude_min=True))
def test_every_pd_has_exactly_one_band(pd):
    holding = [g for g in DEFAULT_MASTER_SCALE.grades if g.pd_lower < pd <= g.pd_upper]
    assert len(holding) == 1
    result = assign_grade(pd)
    assert result.grade == holding[0].label
    assert result.pd_lower < pd <= result.pd_upper


@settings(max_examples=300, deadline=None)
@given(
    first=st.floats(min_value=0.0, max_value=1.0, exclude_min=True),
    second=st.floats(min_value=0.0, max_value=1.0, exclude_min=True),
)
def test_grade_is_monotone_in_pd(first, second):
    low, high = sorted((first, second))
    labels = DEFAULT_MASTER_SCALE.labels
    assert labels.index(assign_grade(low).grade) <= labels.index(assign_grade(high).grade)


@pytest.mark.parametrize("pd", [0.0, -0.1, 1.0000001, float("nan"), float("inf"), True, "0.1"])
def test_bad_pd_rejected(pd):
    with pytest.raises(ValueError) as caught:
        assign_grade(pd)
    message = str(caught.value)
    assert "pd" in message and "(0, 1]" in message and repr(pd) in message


# ---------------------------------------------------------------- scales from rows


def test_rows_in_any_order_give_the_same_scale():
    rows = [
        {"grade": "B", "pd_upper": 0.05},
        {"grade": "D", "pd_upper": 1.0},
        {"grade": "A", "pd_upper": 0.01},
        {"grade": "C", "pd_upper": 0.20},
    ]
    scale = master_scale_from_rows(rows)
    assert scale.labels == ("A", "B", "C", "D")
    assert [(g.pd_lower, g.pd_upper) for g in scale.grades] == [(0.0, 0.01), (0.01, 0.05), (0.05, 0.20), (0.20, 1.0)]
    assert scale == master_scale_from_rows(sorted(rows, key=lambda r: r["pd_upper"]))
    assert assign_grade(0.03, scale).grade == "B"


GOOD = [{"grade": "A", "pd_upper": 0.01}, {"grade": "D", "pd_upper": 1.0}]


@pytest.mark.parametrize(
    "rows, fragments",
    [
        ([], ["rows", "non-empty"]),
        ([GOOD[0], "A"], ["rows[1]", "'A'", "mapping"]),
        ([GOOD[0], {"grade": "D"}], ["rows[1].pd_upper", "missing"]),
        ([GOOD[0], {"grade": "D", "pd_uper": 1.0}], ["rows[1]", "'pd_uper'", "unknown field"]),
        ([GOOD[0], {"grade": "", "pd_upper": 1.0}], ["rows[1].grade", "''", "non-empty"]),
        ([GOOD[0], {"grade": "A", "pd_upper": 1.0}], ["rows[1].grade", "'A'", "rows[0]", "unique"]),
        ([GOOD[0], {"grade": "D", "pd_upper": 1.5}], ["rows[1].pd_upper", "1.5", "(0, 1]"]),
        ([{"grade": "A", "pd_upper": 0.0}, GOOD[1]], ["rows[0].pd_upper", "0.0", "(0, 1]"]),
        ([{"grade": "A", "pd_upper": float("nan")}, GOOD[1]], ["rows[0].pd_upper", "nan", "(0, 1]"]),
        ([{"grade": "A", "pd_upper": "1%"}, GOOD[1]], ["rows[0].pd_upper", "'1%'", "number"]),
        (
            [GOOD[1], GOOD[0], {"grade": "B", "pd_upper": 0.01}],
            ["rows[2].pd_upper", "0.01", "rows[1]", "strictly increasing"],
        ),
        (
            [{"grade": "A", "pd_upper": 0.01}, {"grade": "B", "pd_upper": 0.3}],
            ["rows[1].pd_upper", "0.3", "'B'", "reach 1.0"],
        ),
    ],
)
def test_bad_rows_rejected_with_index_field_value_and_rule(rows, fragments):
    with pytest.raises(ValueError) as caught:
        master_scale_from_rows(rows)
    for fragment in fragments:
        assert fragment in str(caught.value)


@pytest.mark.parametrize(
    "grades, fragments",
    [
        ((Grade("A", 0.0, 0.1), Grade("B", 0.2, 1.0)), ["grades[1].pd_lower", "0.2", "no gap"]),
        ((Grade("A", 0.0, 0.3), Grade("B", 0.2, 1.0)), ["grades[1].pd_lower", "0.2", "no overlap"]),
        ((Grade("A", 0.01, 1.0),), ["grades[0].pd_lower", "0.01", "start at 0"]),
        ((Grade("A", 0.0, 0.5), Grade("B", 0.5, 0.5)), ["grades[1].pd_upper", "0.5", "strictly"]),
        ((Grade("A", 0.0, 0.5),), ["grades[0].pd_upper", "0.5", "reach 1.0"]),
        ((Grade("A", 0.0, 0.5), Grade("A", 0.5, 1.0)), ["grades[1].label", "'A'", "unique"]),
        ((), ["grades", "non-empty"]),
    ],
)
def test_direct_construction_rejects_gaps_overlaps_and_short_scales(grades, fragments):
    with pytest.raises(ValueError) as caught:
        MasterScale(grades=grades)
    for fragment in fragments:
        assert fragment in str(caught.value)
