"""The figures a committee decides on, gathered once for the memo's decision page.

Pure arithmetic on evaluated results: total committed, loan-to-value of each secured facility,
the worst scenario (highest PD in force, then lowest RAROC) and a one-sentence reading of each
scenario. The memo prints these; it computes nothing itself.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class FacilityLine:
    """One facility as the decision page lists it."""

    id: str
    kind: str
    status: str | None  # new | renewal | increase | unchanged; None when not given
    committed: float  # [currency]
    ead: float  # [currency]
    collateral_gross: float | None  # collateral value before haircut [currency]; None: unsecured
    collateral_net: float | None  # after haircut [currency]
    ltv: float | None  # committed / collateral before haircut [fraction]
    ltv_after_haircut: float | None  # committed / collateral after haircut [fraction]


@dataclass(frozen=True)
class ScenarioLine:
    """One scenario read against the base case."""

    name: str
    pd: float
    grade: str | None
    raroc: float | None
    grade_changed: bool
    pd_change: float  # scenario PD minus base PD [fraction]
    raroc_change: float | None  # [fraction/year]
    meets_hurdle: bool | None


@dataclass(frozen=True)
class Decision:
    facilities: tuple[FacilityLine, ...]
    total_committed: float  # [currency]
    scenarios: tuple[ScenarioLine, ...]
    worst: ScenarioLine | None  # highest PD in force; ties broken by the lower RAROC


def _ratio(numerator: float, denominator: float | None) -> float | None:
    if denominator is None or denominator <= 0:
        return None
    return numerator / denominator


def decision_summary(results: Any) -> Decision:
    """The decision page's figures from ``results`` (scenarios read when attached)."""
    lines = []
    for case_f, res_f in zip(results.case.facilities, results.facilities):
        c = case_f.collateral
        gross = c.value if c is not None else None
        net = c.value * (1 - c.haircut) if c is not None else None
        lines.append(
            FacilityLine(
                id=case_f.id,
                kind=case_f.kind,
                status=case_f.status,
                committed=case_f.committed,
                ead=res_f.ead,
                collateral_gross=gross,
                collateral_net=net,
                ltv=_ratio(case_f.committed, gross),
                ltv_after_haircut=_ratio(case_f.committed, net),
            )
        )
    hurdle = results.pricing.hurdle_rate if results.pricing is not None else None
    scen = []
    for s in results.scenarios or ():
        raroc = s.figures.raroc
        scen.append(
            ScenarioLine(
                name=s.name,
                pd=s.figures.pd,
                grade=s.figures.grade,
                raroc=raroc,
                grade_changed=s.delta.grade_changed,
                pd_change=s.delta.pd,
                raroc_change=s.delta.raroc,
                meets_hurdle=None if raroc is None or hurdle is None else raroc >= hurdle,
            )
        )
    worst = max(scen, key=lambda s: (s.pd, -(s.raroc if s.raroc is not None else 0.0)), default=None)
    return Decision(
        facilities=tuple(lines), total_committed=sum(f.committed for f in lines), scenarios=tuple(scen), worst=worst
    )


# --------------------------------------------------------------------------- cross-checks against the grade

# How a Z-score zone is read on the master scale: a representative one-year PD per zone, graded
# like any PD. A reading convention of this tool, not a calibration (the zones were set on other
# samples of firms): safe 0.1 % (investment-grade territory), grey 1 %, distress 5 %.
ZONE_PD = {"safe": 0.001, "grey": 0.01, "distress": 0.05}
# A cross-check this many notches or fewer from the grade needs no explanation (issue rule: more
# than two notches apart, the analyst must reconcile them).
NOTCH_TOLERANCE = 2


@dataclass(frozen=True)
class CrossCheckGrade:
    """One cross-check read as a grade on the case's master scale."""

    source: str  # in words: "naive market PD", "Z (1968) zone"
    reading: str  # what was read: "distress" or "" for a PD
    pd: float  # the PD graded (the market PD, or the zone's PD of ZONE_PD) [fraction]
    grade: str
    notches: int  # cross-check grade minus the grade in force, in notches; positive: the cross-check is worse


def _notch(scale: Any, label: str) -> int:
    return [g.label for g in scale.grades].index(label)


def cross_check_grades(case: Any, pd: Any, zscores: Any, market: Any) -> tuple[CrossCheckGrade, ...]:
    """Every scored Z-score zone, the naive market PD and (for a balance-sheet PD) the market-implied
    PD, each graded on the case's master scale and set against the grade in force."""
    from obligor_memo.engine.grading import DEFAULT_MASTER_SCALE, assign_grade, master_scale_from_rows

    if pd.grade is None:
        return ()
    rows = case.pd.master_scale
    scale = master_scale_from_rows([r.model_dump() for r in rows]) if rows is not None else DEFAULT_MASTER_SCALE
    base = _notch(scale, pd.grade)
    found: list[tuple[str, str, float]] = []
    for z in zscores or ():
        if z.zone is not None:
            found.append((f"{z.variant} zone", str(z.zone), ZONE_PD[str(z.zone)]))
    if market is not None:
        if market.merton is not None and case.pd.method != "market":
            found.append(("market-implied PD", "", float(market.merton.pd)))
        found.append(("naive market PD", "", float(market.naive.pd)))
    out = []
    for source, reading, value in found:
        grade = assign_grade(min(max(value, 1e-300), 1.0), scale).grade
        out.append(CrossCheckGrade(source, reading, value, grade, _notch(scale, grade) - base))
    return tuple(out)


def unexplained_gaps(checks: tuple[CrossCheckGrade, ...], explanation: str) -> tuple[CrossCheckGrade, ...]:
    """The cross-checks more than NOTCH_TOLERANCE notches from the grade, when no explanation is given."""
    if explanation.strip():
        return ()
    return tuple(c for c in checks if abs(c.notches) > NOTCH_TOLERANCE)
