"""A covenant test as it is printed and shown: the memo's tables and the workbench say the same."""

from __future__ import annotations

from typing import Any

from obligor_memo.app.present import formatting as fmt


def covenant_line(c: Any) -> dict[str, str]:
    """One covenant as the memo prints it (the decision page and section 1 use these strings).

    Parameters
    ----------
    c : Any
        The covenant test (a :class:`obligor_memo.engine.covenants.CovenantTest`).

    Returns
    -------
    dict[str, str]
        The printed strings under ``label``, ``limit``, ``tested``, ``year``, ``value``,
        ``headroom``, ``fall`` (the EBITDA fall to a breach, or the reason there is none),
        ``ebitda_at_breach`` and ``status`` ('holds', 'breached' or 'not tested').
    """
    value_fmt = (lambda v: fmt.pct(v, 1)) if c.metric == "ebitda_margin" else fmt.times
    if c.ebitda_fall_to_breach is not None and not c.breached:
        fall = fmt.pct(c.ebitda_fall_to_breach, 1)
    else:
        fall = c.note or "n/a"
    return {
        "label": c.label,
        "limit": f"{'at most' if c.direction == 'max' else 'at least'} {value_fmt(c.threshold)}",
        "tested": c.tested,
        "year": str(c.year) if c.year is not None else "n/a",
        "value": value_fmt(c.value) if c.value is not None else "not computable",
        "headroom": fmt.pct(c.headroom, 1) if c.headroom is not None else "n/a",
        "fall": fall,
        "ebitda_at_breach": fmt.money(c.ebitda_at_breach) if c.ebitda_at_breach is not None else "n/a",
        "status": "breached" if c.breached else "holds" if c.breached is False else "not tested",
    }


def covenant_sentence(c: Any) -> str:
    """One covenant in a sentence, as the memo and the workbench print it.

    For example "Net debt / EBITDA at most 4.00x, 2025: 3.42x, headroom 14.6 % (holds); EBITDA
    may fall 14.6 % before a breach."

    Parameters
    ----------
    c : Any
        The covenant test (a :class:`obligor_memo.engine.covenants.CovenantTest`).

    Returns
    -------
    str
        The sentence, ending with a full stop.
    """
    line = covenant_line(c)
    tail = (
        f"EBITDA may fall {line['fall']} before a breach"
        if c.ebitda_fall_to_breach is not None and not c.breached
        else line["fall"]
    )
    return (
        f"{line['label']} {line['limit']}, {line['year']}: {line['value']}, headroom {line['headroom']} "
        f"({line['status']}); {tail}."
    )
