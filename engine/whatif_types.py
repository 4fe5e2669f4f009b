"""Types of the what-if layers: one-way sensitivity, the two-way PD grid and named scenarios.

Held apart from the modules that compute them (:mod:`engine.sensitivity`,
:mod:`engine.scenarios`) so that :class:`engine.results.Results` can name them without an
import cycle (:class:`engine.results.ScenarioResult` holds a whole Results, so it lives there).
Rates [fraction], money [currency units].
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class FacilityShift:
    """One facility's input in a per-facility row (CCF or mean recovery) [fraction]."""

    facility_id: str
    """Facility id."""
    base_value: float
    """Value in use [the row's unit]."""
    low_value: float
    """Value after the step down [the row's unit]."""
    high_value: float
    """Value after the step up [the row's unit]."""
    clipped: bool
    """A bound stopped the full step."""


@dataclass(frozen=True)
class SensitivityRow:
    """One assumption moved down and up. PD [fraction], EL [currency units]; inputs in ``unit``."""

    assumption: str
    """One of ASSUMPTIONS."""
    label: str
    """The assumption in words."""
    path: str
    """The override path set (facilities.*.<key> per facility)"""
    unit: str
    """Unit of the values and the step, in brackets."""
    step: float
    """The absolute step asked for."""
    base_value: float | None
    """None for per-facility rows: see ``facilities``."""
    low_value: float | None
    """Value after the step down; None for per-facility rows."""
    high_value: float | None
    """Value after the step up; None for per-facility rows."""
    facilities: tuple[FacilityShift, ...]
    """Per-facility moves (CCF and recovery rows); empty otherwise."""
    clipped: bool
    """True when a bound stopped the full step."""
    pd_base: float
    """PD in force."""
    pd_low: float | None
    """None: the perturbed case did not validate (see note)"""
    pd_high: float | None
    """PD in force after the step up; None: the perturbed case did not validate."""
    model_pd_low: float | None
    """The model's PD (differs from pd_* under an override)"""
    model_pd_high: float | None
    """The model's PD after the step up."""
    el_base: float
    """EL of the case [currency units]."""
    el_low: float | None
    """EL after the step down [currency units]; None: not evaluated."""
    el_high: float | None
    """EL after the step up [currency units]; None: not evaluated."""
    el_swing: float
    """|EL high - EL low| (base in place of a failed side)"""
    note: str
    """What the reader should know about the row."""


@dataclass(frozen=True)
class OneWaySensitivity:
    """The one-way sensitivity table: each assumption moved down and up, with the base figures."""

    rows: tuple[SensitivityRow, ...]
    """By EL swing, largest first."""
    pd_base: float
    """PD in force [fraction]"""
    model_pd_base: float
    """The model's PD of the case [fraction]."""
    el_base: float
    """[currency units]"""
    pd_overridden: bool
    """True when the PD in force is the analyst's override."""
    evaluations: int
    """Full evaluations run (duplicates and no-moves reused)"""
    notes: tuple[str, ...]
    """Notes on the whole table."""


@dataclass(frozen=True)
class PdGrid:
    """Model PD over long-term share (x) and a volatility (y). Matrices are indexed [y][x]."""

    method: str
    """``balance_sheet`` or ``market``."""
    x_name: str
    """``long_term_share``."""
    x_values: tuple[float, ...]
    """[fraction]"""
    y_name: str
    """``asset_volatility`` or ``equity_volatility``."""
    y_values: tuple[float, ...]
    """[1/sqrt(year)]"""
    default_point: tuple[float, ...]
    """Per x [currency units]"""
    pd: tuple[tuple[float | None, ...], ...]
    """[fraction]; None where the solve failed."""
    distance_to_default: tuple[tuple[float | None, ...], ...]
    """DD [standard deviations]; None where the solve failed."""
    base_x: float
    """The case's point."""
    base_y: float
    """The case's volatility [1/sqrt(year)]."""
    base_pd: float
    """Model PD at the case's point [fraction]"""
    pd_overridden: bool
    """True when the PD in force is the analyst's override (the grid is the model's)."""
    notes: tuple[str, ...]
    """Notes on the grid."""


@dataclass(frozen=True)
class Headline:
    """The figures a committee compares across scenarios. Rates [fraction], money [currency units]."""

    pd: float
    """PD in force (the override where set)"""
    model_pd: float
    """The model's PD."""
    distance_to_default: float
    """[standard deviations]"""
    default_point: float
    """[currency units]"""
    asset_growth: float | None
    """[1/year]; None where the PD method has no growth input."""
    asset_volatility: float
    """[1/sqrt(year)]"""
    grade: str | None
    """Grade of the one-year PD."""
    ead: float
    """Total EAD [currency units]"""
    expected_loss: float
    """[currency units]"""
    el_rate: float
    """EL / EAD [fraction]"""
    unexpected_loss: float
    """[currency units]"""
    rwa: float
    """[currency units]"""
    economic_capital: float
    """[currency units]"""
    raroc: float | None
    """[fraction/year]; None without pricing or capital."""


@dataclass(frozen=True)
class HeadlineDelta:
    """Scenario minus base for each numeric headline figure (None where either side is None)."""

    pd: float
    """[fraction]"""
    model_pd: float
    """[fraction]"""
    distance_to_default: float
    """[standard deviations]"""
    default_point: float
    """[currency units]"""
    asset_growth: float | None
    """[1/year]; None where either side has none."""
    asset_volatility: float
    """[1/sqrt(year)]"""
    ead: float
    """[currency units]"""
    expected_loss: float
    """[currency units]"""
    el_rate: float
    """[fraction]"""
    unexpected_loss: float
    """[currency units]"""
    rwa: float
    """[currency units]"""
    economic_capital: float
    """[currency units]"""
    raroc: float | None
    """[fraction/year]; None where either side has none."""
    grade_changed: bool
    """True when the scenario's grade differs from the base's."""
