"""The ``compare`` command's text and JSON, and the "Since the last review" view data.

Formats only: the comparison is computed by :mod:`obligor_memo.engine.compare`.
"""

from __future__ import annotations

from typing import Any

from obligor_memo.app.present import formatting as fmt


def figure_text(kind: str, value: Any, currency: str = "") -> str:
    """One compared figure as printed, by its kind.

    Parameters
    ----------
    kind : str
        The figure's kind: "text" (printed as it is), "pd", "rate", or anything else for money.
    value : Any
        The figure [fraction for a PD or rate; currency units for money]; None prints as 'n/a'.
    currency : str, optional
        Currency code put before money; "" for none.

    Returns
    -------
    str
        The figure as printed.
    """
    if value is None:
        return "n/a"
    if kind == "text":
        return str(value)
    if kind == "pd":
        return fmt.pd_pct(value)
    if kind == "rate":
        return fmt.pct(value)
    return fmt.money(value, currency)


def delta_text(kind: str, value: Any) -> str:
    """A signed change: money in whole units, PDs and rates in percentage points.

    Parameters
    ----------
    kind : str
        The figure's kind: "money", "pd", or anything else for a rate.
    value : Any
        The change [currency units for money; fraction for a PD or rate]; None prints as 'n/a'.

    Returns
    -------
    str
        The change with its sign ('+', '-' or none for zero), e.g. '+12,500' or '-0.35 pp'.
    """
    if value is None:
        return "n/a"
    sign = "+" if value > 0 else ("-" if value < 0 else "")
    if kind == "money":
        return f"{sign}{fmt.money(abs(value))}"
    if kind == "pd":
        return f"{sign}{fmt.pd_pct(abs(value)).replace(' %', ' pp')}"
    return f"{sign}{fmt.pct(abs(value)).replace(' %', ' pp')}"


def compare_json(comparison: Any) -> dict[str, Any]:
    """The ``compare --json`` object.

    Parameters
    ----------
    comparison : Any
        The comparison (:class:`obligor_memo.engine.compare.Comparison`).

    Returns
    -------
    dict[str, Any]
        ``comparison.to_dict()``, ready for ``json.dumps``.
    """
    return comparison.to_dict()


def _table(headers: list[str], rows: list[list[str]]) -> list[str]:
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h) for i, h in enumerate(headers)]

    def fmt_row(r):
        return "  ".join(c.ljust(w) if i == 0 else c.rjust(w) for i, (c, w) in enumerate(zip(r, widths)))

    return [fmt_row(headers), "  ".join("-" * w for w in widths)] + [fmt_row(r) for r in rows]


def figure_rows(comparison: Any, currency: str) -> list[dict[str, str]]:
    """The figures side by side: label, then, now, change (as printed).

    Parameters
    ----------
    comparison : Any
        The comparison (:class:`obligor_memo.engine.compare.Comparison`).
    currency : str
        Currency code put before money.

    Returns
    -------
    list[dict[str, str]]
        One row per compared figure, in the comparison's order, with ``name``, ``label``,
        ``old``, ``new`` and ``change`` (for the grade, the direction of its move).
    """
    from obligor_memo.engine.compare import FIGURE_BY_NAME

    rows = []
    for name, was in comparison.old.items():
        f = FIGURE_BY_NAME[name]
        rows.append(
            {
                "name": name,
                "label": f.label,
                "old": figure_text(f.kind, was, currency),
                "new": figure_text(f.kind, comparison.new.get(name), currency),
                "change": delta_text(f.kind, comparison.change.get(name))
                if f.kind != "text"
                else comparison.grade["direction"],
            }
        )
    return rows


def cause_rows(comparison: Any, figures: tuple[str, ...] = ("pd", "expected_loss")) -> list[dict[str, Any]]:
    """Each block of inputs with the changes it made and its share of the figures' changes.

    Parameters
    ----------
    comparison : Any
        The comparison (:class:`obligor_memo.engine.compare.Comparison`).
    figures : tuple[str, ...], optional
        Names of the figures whose shares are printed.

    Returns
    -------
    list[dict[str, Any]]
        One row per attribution block, with ``block``, ``label``, ``changes`` (the changed
        input paths) and, under each figure's name, its share as a signed change (figures the
        block has no share of are left out).
    """
    from obligor_memo.engine.compare import FIGURE_BY_NAME

    out = []
    for b in comparison.attribution:
        out.append(
            {
                "block": b.block,
                "label": b.label,
                "changes": list(b.changes),
                **{n: delta_text(FIGURE_BY_NAME[n].kind, b.deltas.get(n)) for n in figures if n in b.deltas},
            }
        )
    return out


def headline(comparison: Any, currency: str) -> str:
    """One line: grade and PD then and now, the EL change and its main cause.

    Parameters
    ----------
    comparison : Any
        The comparison (:class:`obligor_memo.engine.compare.Comparison`).
    currency : str
        Currency code after the EL change.

    Returns
    -------
    str
        The sentence, ending with a full stop; the main cause is left out when no block
        changed the EL.
    """
    g = comparison.grade
    el = comparison.change.get("expected_loss")
    cause = comparison.main_cause("expected_loss")
    text = (
        f"Grade {g['old'] or 'n/a'} then, {g['new'] or 'n/a'} now; PD in force "
        f"{figure_text('pd', comparison.old.get('pd'))} then, {figure_text('pd', comparison.new.get('pd'))} now; "
        f"EL {delta_text('money', el)} {currency}".rstrip()
    )
    if cause is not None:
        text += f", mainly {cause.label.lower()} ({delta_text('money', cause.deltas['expected_loss'])})"
    return text + "."


def compare_text(comparison: Any, *, old_name: str, new_name: str, currency: str) -> str:
    """The plain-text report that ``compare`` prints without ``--json``.

    The headline, the figures then and now, the attribution table (each block's share of every
    figure that changed, and the total change), the changed inputs, the comparison's notes and
    the closing reminder that this is a model estimate, not a credit decision.

    Parameters
    ----------
    comparison : Any
        The comparison (:class:`obligor_memo.engine.compare.Comparison`).
    old_name : str
        Name of the earlier file, as the title shows it.
    new_name : str
        Name of the later file, as the title shows it.
    currency : str
        Currency code of the amounts.

    Returns
    -------
    str
        The report, lines joined by newlines (no trailing newline).
    """
    lines = [
        f"Since the last review: {old_name} -> {new_name} (amounts in {currency})",
        "",
        headline(comparison, currency),
        "",
    ]
    rows = figure_rows(comparison, currency)
    lines += _table(["figure", "then", "now", "change"], [[r["label"], r["old"], r["new"], r["change"]] for r in rows])
    from obligor_memo.engine.compare import FIGURE_BY_NAME

    names = [n for n in comparison.change if comparison.change[n] is not None]
    lines += [
        "",
        "Attribution of each change to its causes (Shapley value over the blocks of inputs, "
        f"exact formula over subsets, {comparison.evaluations} evaluations)",
    ]
    short = {
        "expected_loss": "EL",
        "unexpected_loss": "UL",
        "economic_capital": "EC",
        "regulatory_capital": "reg. capital",
        "minimum_spread": "min. spread",
        "economic_capital_standalone": "EC standalone",
        "covenant_headroom": "cov. headroom",
    }
    body = [
        [b.label] + [delta_text(FIGURE_BY_NAME[n].kind, b.deltas.get(n)) for n in names] for b in comparison.attribution
    ]
    body.append(["total change"] + [delta_text(FIGURE_BY_NAME[n].kind, comparison.change[n]) for n in names])
    lines += _table(["block"] + [short.get(n, n.upper() if len(n) <= 5 else n) for n in names], body)
    lines += ["", "Changed inputs"]
    any_change = False
    for b in comparison.attribution:
        for path in b.changes:
            lines.append(f"  {b.label}: {path}")
            any_change = True
    if not any_change:
        lines.append("  none: the two cases have the same inputs")
    lines += [f"note: {n}" for n in comparison.notes]
    lines += [
        "",
        "A model estimate, not a credit decision: the institution's approved models, credit "
        "policy and the local supervisor's rules prevail; a qualified credit officer must review it.",
    ]
    return "\n".join(lines)


_CACHE: dict[str, Any] = {}


def review_comparison(results: Any) -> Any | None:
    """The comparison of the case with its ``review.previous`` (None when it records none).

    Cached by the case's fingerprint (the last 16 kept).

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    Any | None
        The :class:`obligor_memo.engine.compare.Comparison` of the previous review's case with
        this one; None when the case records no previous review or none of its inputs.

    Raises
    ------
    CaseError
        If the previous review's case no longer validates.
    """
    from obligor_memo.engine.case import parse_case
    from obligor_memo.engine.compare import RecordedFigures, compare_cases

    review = getattr(results.case, "review", None)
    previous = getattr(review, "previous", None)
    if previous is None or previous.case is None:
        return None
    if results.fingerprint not in _CACHE:
        old = parse_case(previous.case, source="review.previous.case")
        recorded = RecordedFigures(previous.engine_version, previous.figures)
        _CACHE[results.fingerprint] = compare_cases(old, results.case, old_recorded=recorded)
        while len(_CACHE) > 16:
            _CACHE.pop(next(iter(_CACHE)))
    return _CACHE[results.fingerprint]


def review_view(results: Any) -> dict[str, Any] | None:
    """What the memo's "Since the last review" section prints (None: no previous review).

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    dict[str, Any] | None
        None without a previous review. Otherwise ``available`` and ``approved_on``; when the
        comparison cannot be made (the previous inputs are missing or no longer validate),
        ``available`` is False and ``note`` says why; else the ``headline``, the ``figures``
        and ``causes`` rows, the ``notes``, the number of ``evaluations`` and the ``history``
        of earlier reviews (date, grade, PD).
    """
    from obligor_memo.engine.errors import CaseError

    previous = getattr(getattr(results.case, "review", None), "previous", None)
    if previous is None:
        return None
    cur = results.case.borrower.currency
    try:
        comparison = review_comparison(results)
    except CaseError as exc:
        return {
            "available": False,
            "note": "The previous review's inputs no longer validate: " + exc.paragraph(limit=3),
            "approved_on": previous.approved_on,
        }
    if comparison is None:
        return {
            "available": False,
            "approved_on": previous.approved_on,
            "note": "The previous review records its figures but not its inputs: no attribution.",
        }
    return {
        "available": True,
        "approved_on": previous.approved_on or "date not recorded",
        "headline": headline(comparison, cur),
        "figures": figure_rows(comparison, cur),
        "causes": cause_rows(comparison),
        "notes": list(comparison.notes),
        "evaluations": comparison.evaluations,
        "history": [
            {
                "approved_on": h.approved_on or "n/a",
                "grade": h.figures.get("grade") or "n/a",
                "pd": figure_text("pd", h.figures.get("pd")),
            }
            for h in results.case.review.history
        ],
    }
