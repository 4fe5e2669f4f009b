"""The full analysis: the base evaluation plus the what-if layers a committee asks about.

``evaluate`` stays lean (a few milliseconds) for the workbench's instant what-ifs; ``analyse`` adds
the one-way sensitivity table, the two-way PD grid and the named scenarios, each of which re-runs
the engine on modified copies of the case.
"""

from __future__ import annotations

from dataclasses import replace

from obligor_memo.engine.case import Case
from obligor_memo.engine.evaluate import Results, evaluate
from obligor_memo.engine.scenarios import evaluate_scenarios
from obligor_memo.engine.sensitivity import one_way_sensitivity, pd_grid


def analyse(case: Case, base: Results | None = None) -> Results:
    """Results of ``case`` with ``sensitivity``, ``pd_grid`` and ``scenarios`` filled in.

    Parameters
    ----------
    case : Case
        The validated case.
    base : Results | None, optional
        The case's evaluation, if already computed; None evaluates it here.

    Returns
    -------
    Results
        The results with the what-if layers.
    """
    results = base if base is not None else evaluate(case)
    return replace(
        results,
        sensitivity=one_way_sensitivity(case, results),
        pd_grid=pd_grid(case, results),
        scenarios=evaluate_scenarios(case, results),
    )
