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
