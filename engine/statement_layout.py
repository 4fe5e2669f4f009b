"""Statement tables as analysts have them: title rows, years across or down, the usual wording.

A table (rows of cells from a CSV or a worksheet) is read in three steps:

1. find the layout: either a header row holding two or more years (line items down the rows,
   years across the columns: "wide"), or a header row holding a year column and line items
   (years down the rows: "long"); title rows above the header are skipped;
2. match each line label to a field through :data:`SYNONYMS` (case, punctuation and spacing
   ignored) or the analyst's own ``mapping`` (label -> field, or ``ignore``);
3. scale every amount by the unit (units, thousands, millions).

Labels that match no field are returned (never dropped silently): the loader lists them in a
caution. Years are read from ``2023``, ``FY2023``, ``FY 2023``, ``2023A``, ``2023E`` or a date.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass, field
from typing import Any

UNITS = {"units": 1.0, "thousands": 1e3, "millions": 1e6}
IGNORE = "ignore"

# field -> the usual wording (normalised: lower case, letters and digits, single spaces)
SYNONYMS: dict[str, tuple[str, ...]] = {
    "year": ("year", "years", "fiscal year", "financial year", "fy", "period", "year end", "year ended"),
    "total_assets": ("total assets", "assets total", "balance sheet total", "total balance sheet", "assets"),
    "short_term_liabilities": (
        "current liabilities",
        "total current liabilities",
        "short term liabilities",
        "short term debt and liabilities",
        "liabilities current",
        "total short term liabilities",
    ),
    "long_term_liabilities": (
        "non current liabilities",
        "noncurrent liabilities",
        "total non current liabilities",
        "long term liabilities",
        "total long term liabilities",
        "liabilities non current",
    ),
    "total_liabilities": ("total liabilities", "liabilities total", "liabilities"),
    "book_equity": (
        "equity",
        "total equity",
        "shareholders equity",
        "stockholders equity",
        "total shareholders equity",
        "book equity",
        "net assets",
        "net worth",
    ),
    "working_capital": ("working capital", "net working capital"),
    "retained_earnings": ("retained earnings", "accumulated earnings", "retained profits"),
    "ebit": (
        "ebit",
        "operating profit",
        "operating income",
        "earnings before interest and tax",
        "earnings before interest and taxes",
    ),
    "ebitda": (
        "ebitda",
        "earnings before interest tax depreciation and amortisation",
        "earnings before interest taxes depreciation and amortization",
    ),
    "sales": ("sales", "revenue", "revenues", "turnover", "net sales", "total revenue", "net revenue"),
    "interest_expense": (
        "interest expense",
        "interest expenses",
        "finance costs",
        "interest paid",
        "net interest expense",
    ),
    "cash": ("cash", "cash and equivalents", "cash and cash equivalents", "cash equivalents"),
    "total_debt": ("total debt", "gross debt", "borrowings", "total borrowings", "financial debt"),
    "short_term_debt": ("short term debt", "current borrowings", "short term borrowings", "current debt"),
    "long_term_debt": ("long term debt", "non current borrowings", "long term borrowings", "non current debt"),
    "operating_cash_flow": (
        "operating cash flow",
        "cash flow from operations",
        "cash from operations",
        "net cash from operating activities",
        "cash flow from operating activities",
    ),
    "capital_expenditure": (
        "capital expenditure",
        "capital expenditures",
        "capex",
        "purchase of property plant and equipment",
    ),
}
_LOOKUP = {phrase: key for key, phrases in SYNONYMS.items() for phrase in phrases}
_LOOKUP.update({key.replace("_", " "): key for key in SYNONYMS})
# Fields of the case's statement rows; short- and long-term debt are summed into total_debt.
DEBT_PARTS = ("short_term_debt", "long_term_debt")
_YEAR = re.compile(r"^(?:fy|fiscal year|year)?\s*'?((?:19|20|21)\d\d)\s*(?:a|e|f|b|p|actual|estimate)?$")
_DATE = re.compile(r"^(?:\d{1,2}[./-]\d{1,2}[./-]((?:19|20|21)\d\d)|((?:19|20|21)\d\d)[./-]\d{1,2}[./-]\d{1,2})$")


def normalise(label: Any) -> str:
    """Normalise a line label for matching: lower case, ``&`` as ``and``, brackets and punctuation dropped.

    Parameters
    ----------
    label : Any
        A line label as read from the file.

    Returns
    -------
    str
        The label's words, single-spaced.
    """
    text = str(label).strip().lower().replace("&", " and ")
    text = re.sub(r"\(.*?\)", " ", text)  # "(EUR k)", "(note 4)"
    return " ".join(re.sub(r"[^a-z0-9]+", " ", text).split())


def field_for(label: Any, mapping: dict[str, str] | None = None) -> str | None:
    """The field a line label means, or None; the analyst's mapping first.

    Parameters
    ----------
    label : Any
        A line label as read from the file.
    mapping : dict[str, str] | None, optional
        The analyst's mapping of line labels to case fields, tried first; None for none.

    Returns
    -------
    str | None
        The case field, or None.
    """
    if mapping:
        for given, target in mapping.items():
            if normalise(given) == normalise(label):
                return target
    return _LOOKUP.get(normalise(label))


def year_of(cell: Any) -> int | None:
    """A header cell as a financial year, or None.

    Parameters
    ----------
    cell : Any
        A header cell.

    Returns
    -------
    int | None
        The year, or None.
    """
    if isinstance(cell, bool) or cell is None:
        return None
    if isinstance(cell, (dt.date, dt.datetime)):
        return cell.year
    if isinstance(cell, (int, float)):
        return int(cell) if float(cell).is_integer() and 1900 <= cell <= 2199 else None
    text = str(cell).strip().lower()
    if text.endswith(".0") and text[:-2].isdigit():
        text = text[:-2]
    match = _YEAR.match(text) or _DATE.match(text)
    if match is None:
        return None
    return int(next(g for g in match.groups() if g))


@dataclass
class Layout:
    """What was found in a table: orientation, header row, recognised and unrecognised lines."""

    orientation: str
    """"wide" (years across) or "long" (years down)"""
    header_row: int
    """1-based row of the header in the file."""
    recognised: dict[str, str] = field(default_factory=dict)
    """Label in file -> field."""
    unrecognised: list[str] = field(default_factory=list)
    """Line labels that matched no field."""
    records: list[dict[str, Any]] = field(default_factory=list)
    """Year -> raw cells per field."""


def _text(cell: Any) -> bool:
    return isinstance(cell, str) and bool(cell.strip()) and year_of(cell) is None


def detect(rows: list[list[Any]], mapping: dict[str, str] | None = None, *, scan: int = 15) -> Layout | None:
    """The table's layout, or None when no header of either kind is found in the first rows.

    Parameters
    ----------
    rows : list[list[Any]]
        The table's rows as read (cells of any type).
    mapping : dict[str, str] | None, optional
        The analyst's mapping of line labels to case fields, tried first; None for none.
    scan : int, optional
        Number of leading rows searched for a header.

    Returns
    -------
    Layout | None
        The layout, or None.
    """
    for index, row in enumerate(rows[:scan]):
        years = [(c, year_of(v)) for c, v in enumerate(row) if year_of(v) is not None]
        labels_below = (
            [r for r in rows[index + 1 :] if r and any(_text(v) for v in r[: max(1, years[0][0])])]
            if len(years) >= 2
            else []
        )
        if len(years) >= 2 and len({y for _, y in years}) == len(years) and labels_below:
            return _wide(rows, index, years, mapping)
        fields = [field_for(v, mapping) for v in row if v not in (None, "")]
        if "year" in fields and sum(f not in (None, "year", IGNORE) for f in fields) >= 1:
            return _long(rows, index, mapping)
    return None


def _wide(
    rows: list[list[Any]], index: int, years: list[tuple[int, int | None]], mapping: dict[str, str] | None
) -> Layout:
    first_year_col = years[0][0]
    layout = Layout("wide", index + 1)
    by_year: dict[int, dict[str, Any]] = {y: {"year": y} for _, y in years if y is not None}
    for row in rows[index + 1 :]:
        label_cells = [v for v in row[:first_year_col] if _text(v)] if first_year_col else []
        if not label_cells and row and _text(row[0]):
            label_cells = [row[0]]
        if not label_cells:
            continue
        label = str(label_cells[0]).strip()
        target = field_for(label, mapping)
        values = [row[c] if c < len(row) else None for c, _ in years]
        if all(v in (None, "") for v in values):
            continue  # a section heading ("Balance sheet")
        if target is None:
            layout.unrecognised.append(label)
            continue
        if target == IGNORE or target == "year":
            continue
        layout.recognised[label] = target
        for (_, year), value in zip(years, values):
            if year is not None:
                by_year[year].setdefault(target, value)
    layout.records = [by_year[y] for y in sorted(by_year)]
    return layout


def _long(rows: list[list[Any]], index: int, mapping: dict[str, str] | None) -> Layout:
    header = rows[index]
    layout = Layout("long", index + 1)
    columns: list[tuple[int, str]] = []
    for c, label in enumerate(header):
        if label in (None, ""):
            continue
        target = field_for(label, mapping)
        if target is None:
            layout.unrecognised.append(str(label).strip())
        elif target != IGNORE:
            layout.recognised[str(label).strip()] = target
            columns.append((c, target))
    for row in rows[index + 1 :]:
        record: dict[str, Any] = {}
        for c, target in columns:
            value = row[c] if c < len(row) else None
            if target == "year":
                value = year_of(value) if year_of(value) is not None else value
            record.setdefault(target, value)
        if record.get("year") in (None, ""):
            continue
        layout.records.append(record)
    return layout
