"""Internal master scale: a PD band maps to a grade.

A master scale partitions the PD range (0, 1] into contiguous bands, each
band (pd_lower, pd_upper] (lower bound exclusive, upper inclusive) carrying one
grade label, better grades first. Banks set their own scales under their
credit policy; the Basel framework asks only that an IRB rating system have at
least seven grades for non-defaulted borrowers and one for defaulted ones
(Basel Committee, "International Convergence of Capital Measurement and
Capital Standards", June 2006, paragraph 404; paragraph number recalled
from memory).
"""

from __future__ import annotations

import bisect
import math
import numbers
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

_ROW_FIELDS = ("grade", "pd_upper")


@dataclass(frozen=True)
class Grade:
    """One band of a master scale."""

    label: str
    """The grade's name, e.g. "4"."""
    pd_lower: float
    """Lower bound of the band, exclusive [fraction]."""
    pd_upper: float
    """Upper bound of the band, inclusive [fraction]."""


@dataclass(frozen=True)
class MasterScale:
    """Grades covering (0, 1] without gaps or overlaps, PD strictly increasing."""

    grades: tuple[Grade, ...]
    """The bands, best grade first; the first lower bound is 0, each lower bound equals the previous upper bound, the
    last upper is 1."""

    def __post_init__(self) -> None:
        """Check the bands: a non-empty tuple of grades, unique labels, contiguous bands ending at 1."""
        if not isinstance(self.grades, tuple) or not self.grades:
            raise ValueError(f"grades must be a non-empty tuple of Grade; got {self.grades!r}")
        seen: dict[str, int] = {}
        previous_upper = 0.0
        for index, grade in enumerate(self.grades):
            where = f"grades[{index}]"
            if not isinstance(grade, Grade):
                raise ValueError(f"{where} must be a Grade; got {grade!r}")
            if not isinstance(grade.label, str) or not grade.label.strip():
                raise ValueError(f"{where}.label must be a non-empty string; got {grade.label!r}")
            if grade.label in seen:
                raise ValueError(
                    f"{where}.label = {grade.label!r} repeats grades[{seen[grade.label]}]; labels must be unique"
                )
            seen[grade.label] = index
            if grade.pd_lower != previous_upper:
                rule = (
                    "the first band must start at 0"
                    if index == 0
                    else f"it must equal grades[{index - 1}].pd_upper = {previous_upper!r} (no gap, no overlap)"
                )
                raise ValueError(f"{where}.pd_lower = {grade.pd_lower!r}: {rule}")
            if not (
                isinstance(grade.pd_upper, numbers.Real)
                and not isinstance(grade.pd_upper, bool)
                and grade.pd_lower < grade.pd_upper <= 1.0
            ):
                raise ValueError(
                    f"{where}.pd_upper = {grade.pd_upper!r}: it must lie in "
                    f"({grade.pd_lower!r}, 1] (PD strictly increasing)"
                )
            previous_upper = grade.pd_upper
        if previous_upper != 1.0:
            raise ValueError(
                f"grades[{len(self.grades) - 1}].pd_upper = {previous_upper!r}: "
                "the last band must reach 1.0 so that every PD in (0, 1] has a grade"
            )

    @property
    def labels(self) -> tuple[str, ...]:
        """Grade labels, best first."""
        return tuple(grade.label for grade in self.grades)

    @property
    def upper_bounds(self) -> tuple[float, ...]:
        """Inclusive upper bounds of the bands [fraction]."""
        return tuple(grade.pd_upper for grade in self.grades)


@dataclass(frozen=True)
class GradeResult:
    """The grade of one PD."""

    pd: float
    """The PD graded [fraction]."""
    grade: str
    """Label of the band holding ``pd``."""
    pd_lower: float
    """The band's exclusive lower bound [fraction]."""
    pd_upper: float
    """The band's inclusive upper bound [fraction]."""
    band_midpoint_geometric: float | None
    """sqrt(pd_lower * pd_upper), the band's midpoint on a log scale [fraction]; None for the best band, whose lower
    bound is 0 and so has no geometric midpoint."""


def master_scale_from_rows(rows: Sequence[Mapping[str, object]]) -> MasterScale:
    """Build a master scale from rows {grade: str, pd_upper: float}.

    Parameters
    ----------
    rows : Sequence[Mapping[str, object]]
        One mapping per grade with keys ``grade`` (a label) and ``pd_upper`` (the
        band's inclusive upper bound [fraction], in (0, 1]); in any order. The row with the largest ``pd_upper``
        must have ``pd_upper = 1.0``: the default grade closes the scale.

    Returns
    -------
    MasterScale
        The ``MasterScale``, bands sorted by ``pd_upper``; each band's lower bound is the previous
        band's upper bound (0 for the first).

    Raises
    ------
    ValueError
        Naming the row index, the field, the value and the rule.
    """
    if isinstance(rows, (str, bytes)) or not isinstance(rows, Sequence) or not rows:
        raise ValueError(f"rows must be a non-empty list of {{grade, pd_upper}} mappings; got {rows!r}")
    labels: dict[str, int] = {}
    uppers: dict[float, int] = {}
    checked: list[tuple[float, str]] = []
    for index, row in enumerate(rows):
        where = f"rows[{index}]"
        if not isinstance(row, Mapping):
            raise ValueError(f"{where} must be a mapping with fields grade, pd_upper; got {row!r}")
        for field in row:
            if field not in _ROW_FIELDS:
                raise ValueError(f"{where}: unknown field {field!r}; allowed fields: {', '.join(_ROW_FIELDS)}")
        for field in _ROW_FIELDS:
            if field not in row:
                raise ValueError(f"{where}.{field} is missing; every row needs grade and pd_upper")
        label = row["grade"]
        if not isinstance(label, str) or not label.strip():
            raise ValueError(f"{where}.grade = {label!r}: it must be a non-empty string")
        if label in labels:
            raise ValueError(
                f"{where}.grade = {label!r} repeats rows[{labels[label]}].grade; grade labels must be unique"
            )
        labels[label] = index
        upper = row["pd_upper"]
        if isinstance(upper, bool) or not isinstance(upper, numbers.Real):
            raise ValueError(f"{where}.pd_upper = {upper!r}: it must be a number in (0, 1]")
        upper = float(upper)
        if not (math.isfinite(upper) and 0.0 < upper <= 1.0):
            raise ValueError(f"{where}.pd_upper = {upper!r}: it must lie in (0, 1]")
        if upper in uppers:
            raise ValueError(
                f"{where}.pd_upper = {upper!r} repeats rows[{uppers[upper]}].pd_upper; "
                "upper bounds must be strictly increasing (no empty band)"
            )
        uppers[upper] = index
        checked.append((upper, label))
    checked.sort()
    top_upper, top_label = checked[-1]
    if top_upper != 1.0:
        raise ValueError(
            f"rows[{labels[top_label]}].pd_upper = {top_upper!r} (grade {top_label!r}) is the "
            "largest upper bound: the last band must reach 1.0 for the default grade"
        )
    grades = []
    lower = 0.0
    for upper, label in checked:
        grades.append(Grade(label=label, pd_lower=lower, pd_upper=upper))
        lower = upper
    return MasterScale(grades=tuple(grades))


def _default_master_scale() -> tuple[MasterScale, float]:
    best, worst, steps = 0.0005, 0.30, 9
    ratio = (worst / best) ** (1.0 / steps)
    uppers = [best * ratio**k for k in range(steps)] + [worst]
    rows = [{"grade": str(k + 1), "pd_upper": upper} for k, upper in enumerate(uppers)]
    rows.append({"grade": "D", "pd_upper": 1.0})
    return master_scale_from_rows(rows), ratio


DEFAULT_MASTER_SCALE, DEFAULT_GRADE_RATIO = _default_master_scale()
"""ILLUSTRATIVE master scale built for this project; not any institution's scale.

Performing grades "1" (best) to "10" have geometric upper bounds from 0.05 %
to 30 %: pd_upper(k) = 0.0005 * r**(k-1), k = 1..10, with the constant ratio
r = (0.30 / 0.0005)**(1/9) = 600**(1/9) ~ 2.0356 (``DEFAULT_GRADE_RATIO``), so
each grade roughly doubles the PD of the one before. Grade "D" is the
default grade: it holds PD = 1 and, because the bands must cover (0, 1]
without a gap, every PD above 30 %, which this scale treats as
default-equivalent. Bands are (lower, upper]: lower exclusive, upper inclusive.
"""


def assign_grade(pd: float, scale: MasterScale = DEFAULT_MASTER_SCALE) -> GradeResult:
    """The grade whose band (pd_lower, pd_upper] holds ``pd``.

    Parameters
    ----------
    pd : float
        Probability of default [fraction], in (0, 1]; a PD of exactly 0 lies in no band (lower bounds are
        exclusive).
    scale : MasterScale, optional
        The master scale; ``DEFAULT_MASTER_SCALE`` if omitted.

    Returns
    -------
    GradeResult
        ``GradeResult`` with the band's bounds and its geometric midpoint.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if not isinstance(scale, MasterScale):
        raise ValueError(f"scale must be a MasterScale; got {scale!r}")
    if isinstance(pd, bool) or not isinstance(pd, numbers.Real):
        raise ValueError(f"pd must be a number in (0, 1]; got {pd!r}")
    if not (0.0 < pd <= 1.0):
        raise ValueError(f"pd must lie in (0, 1] (0 excluded: lower bounds are exclusive); got {pd!r}")
    # bisect_left finds the first band whose upper bound is >= pd: upper inclusive.
    index = bisect.bisect_left(scale.upper_bounds, float(pd))
    band = scale.grades[index]
    midpoint = math.sqrt(band.pd_lower * band.pd_upper) if band.pd_lower > 0.0 else None
    return GradeResult(
        pd=float(pd),
        grade=band.label,
        pd_lower=band.pd_lower,
        pd_upper=band.pd_upper,
        band_midpoint_geometric=midpoint,
    )
