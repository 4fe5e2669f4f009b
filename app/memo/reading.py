"""Reading a last review: a memo PDF (its embedded case and printed figures) or a case file."""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from obligor_memo.app.memo.record import CASE_FILE, FIGURES_FILE, MemoRecordError, read_attachments

# printed label -> compared figure name (engine.compare.FIGURES)
PRINTED_LABELS = {
    "PD in force": "pd",
    "Grade": "grade",
    "Total EAD": "ead",
    "Total EL": "expected_loss",
    "Total UL": "unexpected_loss",
    "Total RWA": "rwa",
    "Regulatory capital": "regulatory_capital",
    "Economic capital": "economic_capital",
    "RAROC": "raroc",
    "Minimum spread": "minimum_spread",
}


@dataclass(frozen=True)
class LastReview:
    """A last review as read: its case and, from a memo PDF, the figures it printed."""

    case: Any
    """The case (an ``engine.case.Case``)."""
    source: str
    """The file name."""
    recorded: Any | None
    """The figures as printed (an ``engine.compare.RecordedFigures``; memo PDFs only)."""
    fingerprint: str | None
    """The case's fingerprint as recorded in the memo."""
    printed_on: str | None
    """The memo's print date, YYYY-MM-DD."""


def printed_number(text: str) -> float | str | None:
    """A figure as printed ('EUR 1,234', '0.2123 %', '4') back to a number (rounded as printed).

    Parameters
    ----------
    text : str
        The figure as printed, with or without a three-letter currency code before it.

    Returns
    -------
    float | str | None
        The number (a percentage as a fraction); None for 'n/a', 'not graded' or nothing; the
        text itself when it is not a number (a grade, '< 0.0001 %').
    """
    text = text.strip()
    if text in ("n/a", "not graded", ""):
        return None
    percent = text.endswith("%")
    body = text.rstrip("%").strip().replace(",", "")
    if body[:3].isalpha() and body[3:4] == " ":
        body = body[4:]
    try:
        value = float(body)
    except ValueError:
        return text
    return value / 100 if percent else value


def read_last_review(data: bytes, name: str) -> LastReview:
    """A memo PDF or a case file (YAML or JSON) as the review to compare with or roll forward.

    Parameters
    ----------
    data : bytes
        The file's content; a PDF is recognised by its header.
    name : str
        The file's name, as messages and :attr:`LastReview.source` give it.

    Returns
    -------
    LastReview
        The review; from a memo also its recorded figures, fingerprint and print date (when
        the memo records them).

    Raises
    ------
    CaseError
        If the case does not validate, or a case file names a statements file (there is no
        folder to read it from).
    MemoRecordError
        If a PDF carries no case.json, or its embedded record cannot be read.
    """
    from obligor_memo.engine.case import parse_case
    from obligor_memo.engine.compare import RecordedFigures
    from obligor_memo.engine.loading import load_case_text

    if data.startswith(b"%PDF-"):
        files = read_attachments(data)
        if CASE_FILE not in files:
            raise MemoRecordError(
                f"{name} does not carry case.json; only memos written by "
                "'obligor-memo memo' can be read as a last review."
            )
        try:
            case_data = json.loads(files[CASE_FILE])
            record = json.loads(files[FIGURES_FILE]) if FIGURES_FILE in files else None
        except ValueError as exc:
            raise MemoRecordError(f"{name}: the embedded record cannot be read ({exc}).") from None
        case = parse_case(case_data, source=f"{name} (embedded case)")
        recorded = None
        fingerprint = printed_on = None
        if isinstance(record, dict) and isinstance(record.get("figures"), dict):
            figures = {
                PRINTED_LABELS[k]: printed_number(str(v)) for k, v in record["figures"].items() if k in PRINTED_LABELS
            }
            if "grade" in figures and figures["grade"] is not None:
                figures["grade"] = record["figures"]["Grade"]
            recorded = RecordedFigures(str(record.get("engine_version", "")), figures)
            fingerprint = record.get("fingerprint")
            printed_on = str(record.get("generated_at", ""))[:10] or None
        return LastReview(case, name, recorded, fingerprint, printed_on)
    text = data.decode("utf-8", errors="replace")
    return LastReview(load_case_text(text, name), name, None, None, None)


def read_last_review_path(path: Path) -> LastReview:
    """A memo PDF or a case file on disk as the review to compare with or roll forward.

    A case file is loaded as ``load_case`` loads it, so statements files it names are read
    (relative to its folder).

    Parameters
    ----------
    path : Path
        The memo PDF or case file.

    Returns
    -------
    LastReview
        The review, as :func:`read_last_review` gives it.

    Raises
    ------
    CaseError
        If the case cannot be read or does not validate.
    MemoRecordError
        If a PDF carries no case.json, or its embedded record cannot be read.
    """
    from obligor_memo.engine.loading import load_case

    data = path.read_bytes()
    if data.startswith(b"%PDF-"):
        return read_last_review(data, path.name)
    return LastReview(load_case(path), path.name, None, None, None)  # statements files resolve


def roll_forward_review(last: LastReview, *, approved_on: str | None = None) -> dict[str, Any]:
    """The new case dict started from a last review (figures as printed when it is a memo).

    Parameters
    ----------
    last : LastReview
        The last review.
    approved_on : str | None, optional
        Date the last review was approved; None takes the memo's print date (unset for a case
        file).

    Returns
    -------
    dict[str, Any]
        The new case, as :func:`obligor_memo.engine.review.roll_forward` gives it; without
        recorded figures they are computed now from the last case.
    """
    from obligor_memo.engine.review import roll_forward

    if last.recorded is not None:
        return roll_forward(
            last.case,
            approved_on=approved_on or last.printed_on,
            fingerprint=last.fingerprint,
            engine_version=last.recorded.engine_version,
            figures=dict(last.recorded.figures),
        )
    return roll_forward(last.case, approved_on=approved_on)
