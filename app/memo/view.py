"""Results -> everything the memo's template prints, and the memo's HTML."""

from __future__ import annotations

from typing import Any

from obligor_memo.app.memo import printed as pdfcase
from obligor_memo.app.memo.fetch import CHART_ANCHOR, CHART_SCHEME
from obligor_memo.app.memo.templates import environment
from obligor_memo.app.present import formatting as fmt
from obligor_memo.app.present.compare_report import review_view


def _grid_view(grid: Any, points: int = 7) -> dict[str, Any] | None:
    """A readable excerpt of the two-way PD grid: evenly spaced rows and columns, the case's own among them.

    The chart shows the whole grid.
    """
    if grid is None:
        return None

    def pick(values: tuple[float, ...], base: float) -> list[int]:
        n = len(values)
        chosen = {round(i * (n - 1) / (points - 1)) for i in range(points)} if n > points else set(range(n))
        chosen.add(min(range(n), key=lambda i: abs(values[i] - base)))
        return sorted(chosen)

    xs, ys = pick(grid.x_values, grid.base_x), pick(grid.y_values, grid.base_y)
    base_i = min(range(len(grid.x_values)), key=lambda i: abs(grid.x_values[i] - grid.base_x))
    base_j = min(range(len(grid.y_values)), key=lambda j: abs(grid.y_values[j] - grid.base_y))
    return {
        "x": [(grid.x_values[i], i == base_i) for i in xs],
        "rows": [
            (grid.y_values[j], j == base_j, [(grid.pd[j][i], i == base_i and j == base_j) for i in xs]) for j in ys
        ],
    }


def inputs_yaml(case_data: dict[str, Any]) -> str:
    """The case's inputs as YAML, statements excepted (the appendix prints them as a table).

    Exactly the inputs: ``yaml.safe_load`` of this text gives back the same values. A narrow
    line width keeps it readable in two columns; long text wraps as YAML allows (still the same
    value when read back).

    Parameters
    ----------
    case_data : dict[str, Any]
        The case as plain data (``engine.case.case_to_dict``).

    Returns
    -------
    str
        The YAML text, keys in the case's order.
    """
    import yaml

    rest = {key: value for key, value in case_data.items() if key != "statements"}
    return yaml.safe_dump(rest, sort_keys=False, allow_unicode=True, default_flow_style=False, width=56, indent=2)


_STATUS = {"new": "new", "renewal": "renewal", "increase": "increase", "unchanged": "unchanged", None: "not stated"}


def scenario_sentence(line: Any, base_grade: str | None, hurdle: float | None) -> str:
    """One scenario said in a sentence: its PD and grade against the base, its RAROC against the hurdle.

    Parameters
    ----------
    line : Any
        The scenario's line of the decision summary (an ``engine.decision.ScenarioLine``).
    base_grade : str | None
        The grade of the base case.
    hurdle : float | None
        The hurdle rate [fraction/year]; None leaves the RAROC out.

    Returns
    -------
    str
        The sentence, ending with a full stop; the RAROC part only when the scenario has one
        and there is a hurdle.
    """
    grade = f"grade {line.grade} (base {base_grade})" if line.grade_changed else f"grade unchanged at {line.grade}"
    text = f"{line.name}: PD {fmt.pd_pct(line.pd)}, {grade}"
    if line.raroc is not None and hurdle is not None:
        verdict = "meets" if line.meets_hurdle else "falls below"
        text += f"; RAROC {fmt.pct(line.raroc, 1)} {verdict} the {fmt.pct(hurdle, 1)} hurdle"
    return text + "."


def cross_check_view(results: Any) -> dict[str, Any]:
    """The cross-checks graded against the grade in force, in words, and whether they are reconciled.

    A cross-check more than NOTCH_TOLERANCE (two) notches from the grade in force needs the
    analyst's reconciliation (the memo's cross-check explanation).

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).

    Returns
    -------
    dict[str, Any]
        ``rows`` (each check's ``source``, ``read``, ``grade``, ``notches`` in words and whether
        it is ``far``), the ``sentence`` that sums them up, ``value`` (the grade of the check
        furthest off, or a dash when none is far), ``unexplained`` (the caution's message, or
        None), ``zone_convention`` (the PD each Z-score zone is read as) and ``far``.
    """
    from obligor_memo.engine.decision import NOTCH_TOLERANCE, ZONE_PD

    checks = getattr(results, "cross_checks", ())
    rows = []
    for c in checks:
        read = f"{c.reading} zone, read as PD {fmt.pct(c.pd, 1)}" if c.reading else f"PD {fmt.pd_pct(c.pd)}"
        notches = "same grade" if c.notches == 0 else f"{abs(c.notches)} {'worse' if c.notches > 0 else 'better'}"
        rows.append(
            {
                "source": c.source,
                "read": read,
                "grade": c.grade,
                "notches": notches,
                "far": abs(c.notches) > NOTCH_TOLERANCE,
            }
        )
    far = [r for r in rows if r["far"]]
    explained = bool(results.case.memo.cross_check_explanation.strip())
    grade = results.pd.grade
    if not checks:
        sentence = "no cross-check available for these inputs"
    elif not far:
        sentence = f"every cross-check within {NOTCH_TOLERANCE} notches of grade {grade}"
    else:
        listed = "; ".join(f"{r['source']} grade {r['grade']} ({r['notches']})" for r in far)
        tail = (
            "the analyst's reconciliation is in section 2" if explained else "NOT RECONCILED: no explanation recorded"
        )
        sentence = f"{listed}, against grade {grade}: {tail}"
    unexplained = next((c.message for c in results.cautions if c.code == "pd.cross_check_unexplained"), None)
    zones = ", ".join(f"{zone} {fmt.pct(value, 1)}" for zone, value in ZONE_PD.items())
    worst = max(checks, key=lambda c: abs(c.notches), default=None)
    value = f"grade {worst.grade}" if far and worst is not None else "—"
    return {
        "rows": rows,
        "sentence": sentence,
        "value": value,
        "unexplained": unexplained,
        "zone_convention": zones,
        "far": bool(far),
    }


def short_fingerprint(results: Any) -> str:
    """The inputs' fingerprint as the running footer and the summary page print it.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).

    Returns
    -------
    str
        The first 16 characters of the fingerprint.
    """
    return results.fingerprint[:16]


def build_view(
    results: Any,
    *,
    charts: dict[str, str],
    chart_notes: dict[str, str],
    charts_requested: bool,
    generated_at: str,
    page_size: str,
    annex: bool = False,
) -> dict[str, Any]:
    """Everything the template prints; small display values only, the engine computes the rest.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    charts : dict[str, str]
        The source of each chart's image by chart key: an SVG data URI, or a ``memo-chart:N``
        place-holder whose box gets the id ``memo-chart-N``.
    chart_notes : dict[str, str]
        The note printed in the place of each chart that could not be built.
    charts_requested : bool
        Whether charts were asked for (without them a note marks each chart's place).
    generated_at : str
        The print time as the memo shows it.
    page_size : str
        The paper size, "A4" or "Letter".
    annex : bool, optional
        Whether to print the technical annex too (see :data:`ANNEX_SECTIONS`).

    Returns
    -------
    dict[str, Any]
        The template's variables by name.
    """
    from obligor_memo.engine.case import case_to_dict

    case = results.case
    pricing = results.pricing
    spread_note = None
    if pricing is not None:
        gap = pricing.spread_shortfall
        spread_note = (
            "no minimum spread: nothing is drawn, so no interest accrues"
            if gap is None
            else f"the proposed spread exceeds the minimum by {fmt.pct(-gap)}"
            if gap <= 0
            else f"the proposed spread falls short of the minimum by {fmt.pct(gap)}"
        )
    from obligor_memo.app.present.credit import BODY_YEARS, credit_rows, latest_years
    from obligor_memo.engine.credit_metrics import metric_trends
    from obligor_memo.engine.decision import decision_summary
    from obligor_memo.engine.drivers import pd_drivers

    decision = decision_summary(results)
    hurdle = pricing.hurdle_rate if pricing is not None else None
    case_data = case_to_dict(case)
    # Lines given in at least one year, in tables of at most six columns so no column is cut.
    statement_keys = [
        k
        for k in case_data["statements"][0]
        if k != "year" and any(row.get(k) is not None for row in case_data["statements"])
    ]
    statement_groups = [statement_keys[i : i + 6] for i in range(0, len(statement_keys), 6)]
    window = results.trend.window_years if results.trend is not None else None
    letters = appendix_letters(annex)
    credit_years = latest_years(results)
    trends = metric_trends(credit_years)
    return {
        "r": results,
        "case": case,
        "memo": case.memo,
        "cur": case.borrower.currency,
        "figures": pdfcase.printed_figures(results),
        "market": getattr(results, "market", None),
        "sensitivity": getattr(results, "sensitivity", None),
        "scenarios": getattr(results, "scenarios", None),
        "pd_grid": getattr(results, "pd_grid", None),
        "grid": _grid_view(getattr(results, "pd_grid", None)),
        "zscores": getattr(results, "zscores", ()),
        "zscore_history": getattr(results, "zscore_history", ()),
        "master_scale_source": getattr(results, "master_scale_source", ""),
        "charts": charts,
        "chart_notes": chart_notes,
        "charts_requested": charts_requested,
        "chart_ids": {
            key: CHART_ANCHOR.format(src[len(CHART_SCHEME) :])
            for key, src in charts.items()
            if src.startswith(CHART_SCHEME)
        },
        "decision": decision,
        "status_label": _STATUS,
        "scenario_sentences": [scenario_sentence(x, results.pd.grade, hurdle) for x in decision.brief],
        "worst_sentence": (
            scenario_sentence(decision.worst, results.pd.grade, hurdle) if decision.worst is not None else None
        ),
        "key_risks": list(case.memo.risks[:3]),
        "covenant_lines": [pdfcase.covenant_line(c) for c in getattr(results, "covenants", ())],
        "decision_covenant_lines": [pdfcase.covenant_line(c) for c in decision.covenants],
        "body_covenant_lines": [pdfcase.covenant_line(c) for c in decision.body_covenants],
        # The body's by-year tables print the latest years; the appendix has every year's lines.
        "body_ratios": results.ratios[-BODY_YEARS:],
        "body_metrics": credit_years,
        "metric_trends": trends,
        "credit_table": credit_rows(credit_years, trends),  # the strings the borrower page shows too
        "drivers": pd_drivers(results),
        "cross": cross_check_view(results),
        "scenario_changes": {
            s.name: [
                fmt.scenario_change(path, value, tuple(f.id for f in case.facilities)) for path, value in s.overrides
            ]
            for s in getattr(results, "scenarios", None) or ()
        },
        "spread_note": spread_note,
        "generated_at": generated_at,
        "page_size": page_size,
        "statement_keys": statement_keys,
        "statement_groups": statement_groups,
        "statement_rows": case_data["statements"],
        "inputs_yaml": inputs_yaml(case_data) if annex else "",  # printed only in the annex
        "window_years": window,
        "fingerprint_short": short_fingerprint(results),
        "author": case.memo.prepared_by or "obligor-memo",
        "review": review_view(results),
        "annex": annex,
        "appendix_letters": letters,
        "appendix_list": [(letters[k], APPENDIX_TITLES[k]) for k in APPENDICES if k in letters],
        "case_file": pdfcase.CASE_FILE,
    }


# The appendices in print order. The committee memo carries the ones a committee reads (pricing,
# sensitivities and scenarios, cautions, the record); the technical annex adds the model's
# workings for a validator or a second reader. Each printed appendix gets the next letter.
APPENDICES = (
    "term-structure",
    "exposure",
    "recovery",
    "loss",
    "pricing",
    "sensitivities",
    "cautions",
    "methods",
    "appendix",
)
APPENDIX_TITLES = {
    "term-structure": "term structure",
    "exposure": "exposure",
    "recovery": "recovery",
    "loss": "loss and capital",
    "pricing": "pricing",
    "sensitivities": "sensitivities and scenarios",
    "cautions": "cautions",
    "methods": "methods",
    "appendix": "inputs and record",
}
"""How the body's closing note names each appendix."""
ANNEX_SECTIONS = frozenset({"term-structure", "exposure", "recovery", "loss", "methods"})


def appendix_letters(annex: bool) -> dict[str, str]:
    """Section id -> appendix letter, for the appendices this memo prints.

    Parameters
    ----------
    annex : bool
        Whether the technical annex is printed; without it the sections of
        :data:`ANNEX_SECTIONS` have no letter.

    Returns
    -------
    dict[str, str]
        Letters from "A" on, in the order of :data:`APPENDICES`.
    """
    printed = [s for s in APPENDICES if annex or s not in ANNEX_SECTIONS]
    return {section: chr(ord("A") + i) for i, section in enumerate(printed)}


def memo_html(
    results: Any,
    *,
    charts: dict[str, str],
    notes: dict[str, str],
    charts_requested: bool,
    page_size: str,
    stamp: str,
    annex: bool = False,
) -> str:
    """The memo's HTML: the view of :func:`build_view` printed by the template memo.html.

    Parameters
    ----------
    results : Any
        The analysed case (the Results of :func:`obligor_memo.engine.analysis.analyse`).
    charts : dict[str, str]
        The source of each chart's image by chart key (see :func:`build_view`).
    notes : dict[str, str]
        The note printed in the place of each chart that could not be built.
    charts_requested : bool
        Whether charts were asked for.
    page_size : str
        The paper size, "A4" or "Letter".
    stamp : str
        The print time as the memo shows it.
    annex : bool, optional
        Whether to print the technical annex too.

    Returns
    -------
    str
        The HTML document.
    """
    view = build_view(
        results,
        charts=charts,
        chart_notes=notes,
        charts_requested=charts_requested,
        generated_at=stamp,
        page_size=page_size,
        annex=annex,
    )
    return environment().get_template("memo.html").render(**view)
