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
    """The facility's id."""
    kind: str
    """The facility kind, e.g. ``term_loan``."""
    status: str | None
    """``new``, ``renewal``, ``increase`` or ``unchanged``; None when not given."""
    committed: float
    """Committed amount [currency units]."""
    ead: float
    """Exposure at default [currency units]."""
    collateral_gross: float | None
    """Collateral value before haircut [currency units]; None: no collateral."""
    collateral_net: float | None
    """Collateral value after haircut [currency units]; None: no collateral."""
    ltv: float | None
    """Committed / collateral before haircut [fraction]; None without collateral of value above 0."""
    ltv_after_haircut: float | None
    """Committed / collateral after haircut [fraction]; None without collateral of value above 0."""


@dataclass(frozen=True)
class ScenarioLine:
    """One scenario read against the base case."""

    name: str
    """The scenario's name."""
    pd: float
    """The scenario's PD in force [fraction]."""
    grade: str | None
    """The scenario's grade."""
    raroc: float | None
    """The scenario's RAROC [fraction/year]; None without pricing or capital."""
    grade_changed: bool
    """True when the scenario's grade differs from the base's."""
    pd_change: float
    """Scenario PD minus base PD [fraction]."""
    raroc_change: float | None
    """Scenario RAROC minus base RAROC [fraction/year]; None where either side has none."""
    meets_hurdle: bool | None
    """RAROC at or above the hurdle rate; None without a RAROC or pricing."""


@dataclass(frozen=True)
class FacilityGroup:
    """The facilities a decision page does not list one by one, summed."""

    count: int
    """How many."""
    unchanged: int
    """How many of them are unchanged."""
    committed: float
    """Their committed amounts summed [currency units]."""
    ead: float
    """Their exposures at default summed [currency units]."""


LISTED_FACILITIES = 12
"""A decision page lists at most this many facilities one by one (a third of a page)."""
BRIEF_SCENARIOS = 8
"""The body reads at most this many scenarios in a sentence each."""
DECISION_COVENANTS = 3
"""A decision page shows at most this many covenants, the tightest."""
BODY_COVENANTS = 8
"""The body tables at most this many covenants, the tightest (the record appendix has them all)."""


@dataclass(frozen=True)
class Decision:
    """The figures of the memo's decision page."""

    facilities: tuple[FacilityLine, ...]
    """Every facility, in the case's order."""
    total_committed: float
    """Sum of the committed amounts [currency units]."""
    scenarios: tuple[ScenarioLine, ...]
    """Every scenario evaluated with the results; empty when none is attached."""
    worst: ScenarioLine | None
    """Highest PD in force; ties broken by the lower RAROC (a missing RAROC counts as 0)."""
    listed: tuple[FacilityLine, ...] = ()
    """The facilities the decision page lists one by one, in the case's order: every facility
    when there are at most :data:`LISTED_FACILITIES`; else those being decided (status other
    than unchanged), the largest committed first, filling all rows but one."""
    others: FacilityGroup | None = None
    """The facilities not listed, summed; None when every facility is listed."""
    brief: tuple[ScenarioLine, ...] = ()
    """The scenarios read in a sentence each: all when at most :data:`BRIEF_SCENARIOS`, else the
    worst ones (as :attr:`worst`), in the case's order."""
    covenants: tuple[Any, ...] = ()
    """The covenants the decision page shows: all when at most :data:`DECISION_COVENANTS`, else
    the breached ones and the least headroom first; a covenant that cannot be read comes last."""
    body_covenants: tuple[Any, ...] = ()
    """The covenants the body tables: all when at most :data:`BODY_COVENANTS`, else the tightest
    (as :attr:`covenants`), in the case's order."""


def _severity(s: ScenarioLine) -> tuple[float, float]:
    """Sort key of a scenario, worst last: PD in force, then the lower RAROC (none counts as 0)."""
    return (s.pd, -(s.raroc if s.raroc is not None else 0.0))


def listed_facilities(lines: tuple[FacilityLine, ...]) -> tuple[tuple[FacilityLine, ...], FacilityGroup | None]:
    """The facilities a decision page lists one by one and the rest summed.

    Parameters
    ----------
    lines : tuple[FacilityLine, ...]
        Every facility, in the case's order.

    Returns
    -------
    tuple[tuple[FacilityLine, ...], FacilityGroup | None]
        The listed facilities (see :attr:`Decision.listed`) and the others summed; every facility
        and None when there are at most :data:`LISTED_FACILITIES`.
    """
    if len(lines) <= LISTED_FACILITIES:
        return lines, None
    decided = sorted(
        (i for i, f in enumerate(lines) if f.status != "unchanged"), key=lambda i: lines[i].committed, reverse=True
    )
    keep = set(decided[: LISTED_FACILITIES - 1])
    rest = [f for i, f in enumerate(lines) if i not in keep]
    group = FacilityGroup(
        count=len(rest),
        unchanged=sum(f.status == "unchanged" for f in rest),
        committed=sum(f.committed for f in rest),
        ead=sum(f.ead for f in rest),
    )
    return tuple(f for i, f in enumerate(lines) if i in keep), group


def _in_case_order(every: tuple[Any, ...], kept: tuple[Any, ...]) -> tuple[Any, ...]:
    """``kept`` (items of ``every``) in the order of ``every``."""
    ids = {id(x) for x in kept}
    return tuple(x for x in every if id(x) in ids)


def tightest_covenants(tests: tuple[Any, ...], count: int = DECISION_COVENANTS) -> tuple[Any, ...]:
    """The covenants a decision page shows: breached and least headroom first.

    Parameters
    ----------
    tests : tuple[Any, ...]
        Every covenant test (``engine.covenants.CovenantTest``), in the case's order.
    count : int, optional
        How many to keep.

    Returns
    -------
    tuple[Any, ...]
        ``tests`` itself when it has at most ``count`` entries; else the ``count`` with the least
        headroom (a covenant without a headroom after every one with).
    """
    if len(tests) <= count:
        return tests
    ordered = sorted(tests, key=lambda c: (c.headroom is None, c.headroom if c.headroom is not None else 0.0))
    return tuple(ordered[:count])


def _ratio(numerator: float, denominator: float | None) -> float | None:
    """Numerator / denominator; None where the denominator is missing or not above 0."""
    if denominator is None or denominator <= 0:
        return None
    return numerator / denominator


def decision_summary(results: Any) -> Decision:
    """The decision page's figures from ``results`` (scenarios read when attached).

    Parameters
    ----------
    results : Any
        Evaluated results: the case, its facilities' results, pricing and any scenarios.

    Returns
    -------
    Decision
        Facility lines with their loan-to-value, the total committed and the scenario lines.
    """
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
    worst = max(scen, key=_severity, default=None)
    brief = _in_case_order(tuple(scen), tuple(sorted(scen, key=_severity, reverse=True)[:BRIEF_SCENARIOS]))
    listed, others = listed_facilities(tuple(lines))
    tests = tuple(getattr(results, "covenants", ()))
    return Decision(
        facilities=tuple(lines),
        total_committed=sum(f.committed for f in lines),
        scenarios=tuple(scen),
        worst=worst,
        listed=listed,
        others=others,
        brief=brief,
        covenants=tightest_covenants(tests),
        body_covenants=_in_case_order(tests, tightest_covenants(tests, BODY_COVENANTS)),
    )


# --------------------------------------------------------------------------- cross-checks against the grade

ZONE_PD = {"safe": 0.001, "grey": 0.01, "distress": 0.05}
"""How a Z-score zone is read on the master scale: a representative one-year PD per zone [fraction],
graded like any PD. A reading convention of this tool, not a calibration (the zones were set on
other samples of firms): safe 0.1 % (investment-grade territory), grey 1 %, distress 5 %."""
NOTCH_TOLERANCE = 2
"""A cross-check this many notches or fewer from the grade needs no explanation (more than two
notches apart, the analyst must reconcile them)."""


@dataclass(frozen=True)
class CrossCheckGrade:
    """One cross-check read as a grade on the case's master scale."""

    source: str
    """The cross-check in words: "naive market PD", "Z (1968) zone"."""
    reading: str
    """What was read: a zone such as "distress", or "" for a PD."""
    pd: float
    """The PD graded (the market PD, or the zone's PD of ZONE_PD) [fraction]."""
    grade: str
    """Its grade on the case's master scale."""
    notches: int
    """Cross-check grade minus the grade in force, in notches; positive: the cross-check is worse."""


def _notch(scale: Any, label: str) -> int:
    """Position of a grade on the master scale (0: the best)."""
    return [g.label for g in scale.grades].index(label)


def cross_check_grades(case: Any, pd: Any, zscores: Any, market: Any) -> tuple[CrossCheckGrade, ...]:
    """Every cross-check graded on the case's master scale and set against the grade in force.

    The cross-checks are every scored Z-score zone, the naive market PD and (for a balance-sheet
    PD) the market-implied PD.

    Parameters
    ----------
    case : Any
        The case (its master scale and PD method).
    pd : Any
        The PD step's result (its grade in force).
    zscores : Any
        The Z-score results, or None.
    market : Any
        The market cross-check (naive and market-implied PD), or None.

    Returns
    -------
    tuple[CrossCheckGrade, ...]
        One grade per cross-check; empty when the PD has no grade.
    """
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
    """The cross-checks more than NOTCH_TOLERANCE notches from the grade, when no explanation is given.

    Parameters
    ----------
    checks : tuple[CrossCheckGrade, ...]
        The graded cross-checks.
    explanation : str
        The analyst's reconciliation; any non-blank text explains every gap.

    Returns
    -------
    tuple[CrossCheckGrade, ...]
        The gaps left unexplained.
    """
    if explanation.strip():
        return ()
    return tuple(c for c in checks if abs(c.notches) > NOTCH_TOLERANCE)
