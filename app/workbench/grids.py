"""The data grids' columns, and one data-editor change applied to the case's records.

How each case field shows in a grid cell and how what is typed there goes back into the case
(percent columns show 75 for a stored 0.75; choices show words and store their keys).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any, Literal

import streamlit as st
from obligor_memo.app.workbench import entry
from obligor_memo.engine.case import COVENANT_DIRECTION, StatementRow


@dataclass(frozen=True)
class Column:
    """One column of a data grid bound to a list of records in the case.

    ``kind`` is "number", "text", "select" or "check"; a number's ``unit`` is one of
    entry.UNITS (a percent column shows 75 for a stored 0.75); a select shows ``options``'
    words and stores their keys.
    """

    name: str
    """The key of the records' field the column shows."""
    label: str
    """The column's heading."""
    kind: str = "number"
    """"number", "text", "select" or "check"."""
    unit: str = entry.NUMBER
    """One of entry.UNITS: the unit a number is typed in."""
    required: bool = False
    """A cell may not be left empty (the data editor's own check)."""
    options: dict[str, str] | None = None
    """For a select: stored key -> the words shown."""
    help: str | None = None
    """The heading's tooltip; None for none."""
    max_chars: int | None = None
    """For a text column: the most characters a cell takes; None for no limit."""
    default: Any = None
    """What an empty check or text cell stores."""
    width: Literal["small", "medium", "large"] | None = None
    """"small", "medium" or "large"; None: the grid's own choice."""
    unit_for: Callable[[dict[str, Any]], str] | None = None
    """The unit read off the row itself (a covenant's threshold: times, or % for a margin)."""
    empty_text: str | None = None
    """For an optional number: the word an empty cell shows ("preset"); the cell is then typed as
    text and read as people write numbers."""

    def for_row(self, row: Any) -> Column:
        """The column as it reads and writes the cell of ``row``.

        Parameters
        ----------
        row : Any
            The record (a dict; anything else reads as an empty one).

        Returns
        -------
        Column
            The column itself when its unit does not depend on the row, else a copy with the
            unit read off the row.
        """
        if self.unit_for is None:
            return self
        return replace(self, unit=self.unit_for(row if isinstance(row, dict) else {}), unit_for=None)

    def to_screen(self, value: Any) -> Any:
        """A stored value as the grid's cell shows it.

        Parameters
        ----------
        value : Any
            The record's value (None when the record lacks the field).

        Returns
        -------
        Any
            For a number with an empty word: that word when empty, else the number as text in
            the column's unit (text kept as typed). A select's words (the value itself when no
            option has it), a check's bool, a number in the column's unit (a percentage [%] for
            a percent column; None when it is not a number), a text's str ("" for None).
        """
        if self.kind == "number" and self.empty_text is not None:
            if value is None:
                return self.empty_text
            if isinstance(value, (int, float)) and not isinstance(value, bool):
                return entry.show(value, self.unit)
            return str(value)
        if self.kind == "select":
            return (self.options or {}).get(value, value)
        if self.kind == "check":
            return bool(value)
        if self.kind == "number":
            if not isinstance(value, (int, float)) or isinstance(value, bool):
                return None
            return entry.to_percent(value) if self.unit == entry.PERCENT else value
        return "" if value is None else str(value)

    def from_screen(self, value: Any) -> Any:
        """What a grid cell's value stores in the case.

        Parameters
        ----------
        value : Any
            The cell's value as the data editor gives it.

        Returns
        -------
        Any
            An empty cell (None or NaN): ``default`` for a check or text column, else None. A
            select's key (the value itself when no option shows it), a check's bool, a text's
            str. A number: text read as people write numbers (the empty word or empty text:
            None; text that does not read as a number is kept as typed), then stored as a
            fraction for a percent column, an int for a whole integer, else a float.
        """
        if value is None or (isinstance(value, float) and value != value):
            return self.default if self.kind in ("check", "text") else None
        if self.kind == "select":
            words = {v: k for k, v in (self.options or {}).items()}
            return words.get(value, value)
        if self.kind == "check":
            return bool(value)
        if self.kind == "number":
            if isinstance(value, str):
                if self.empty_text is not None and value.strip().casefold() in (self.empty_text.casefold(), ""):
                    return None
                try:
                    value = entry.parse(value, self.unit)
                except entry.EntryError:
                    return value
                if value is None:
                    return None
            if self.unit == entry.INTEGER:
                return int(value) if float(value).is_integer() else float(value)
            return entry.to_fraction(value) if self.unit == entry.PERCENT else float(value)
        return str(value)

    def config(self, currency: str) -> Any:
        """The column's configuration for Streamlit's data editor.

        Parameters
        ----------
        currency : str
            The case's currency, as the grid passes it (no column's configuration uses it).

        Returns
        -------
        Any
            A select, check or text column configuration (text also for a number with an empty
            word), else a number column formatted by the unit: "%.2f %%" for a percent, "%d"
            for an integer, "%.2f" for years, "localized" for money and "%.4f" otherwise.
        """
        cc = st.column_config
        if self.kind == "select":
            return cc.SelectboxColumn(
                self.label,
                options=list((self.options or {}).values()),
                required=self.required,
                help=self.help,
                width=self.width,
            )
        if self.kind == "check":
            return cc.CheckboxColumn(self.label, help=self.help, width=self.width)
        if self.kind == "text" or self.empty_text is not None:
            return cc.TextColumn(
                self.label, required=self.required, max_chars=self.max_chars, help=self.help, width=self.width
            )
        fmt = {entry.PERCENT: "%.2f %%", entry.INTEGER: "%d", entry.YEARS: "%.2f", entry.MONEY: "localized"}
        return cc.NumberColumn(
            self.label,
            required=self.required,
            format=fmt.get(self.unit, "%.4f"),
            help=self.help,
            step=None,
            width=self.width,
        )


def grid_frame(records: list[Any], columns: tuple[Column, ...]) -> Any:
    """The records as the grid's table: a row per record, a column per column, cells as shown.

    Parameters
    ----------
    records : list[Any]
        The case's records (anything that is not a dict gives empty cells).
    columns : tuple[Column, ...]
        The grid's columns, in order.

    Returns
    -------
    Any
        A pandas DataFrame: number columns (without an empty word) as float64, empty cells NaN;
        check columns as bool; the others as object.
    """
    import pandas as pd

    data = {
        c.name: [c.for_row(r).to_screen(r.get(c.name) if isinstance(r, dict) else None) for r in records]
        for c in columns
    }
    frame = pd.DataFrame(data, columns=[c.name for c in columns])
    for c in columns:
        if c.kind == "number" and c.empty_text is None:
            frame[c.name] = pd.to_numeric(frame[c.name], errors="coerce").astype("float64")
        elif c.kind == "check":
            frame[c.name] = frame[c.name].astype(bool)
        else:
            frame[c.name] = frame[c.name].astype(object)
    return frame


def apply_grid_delta(
    records: list[Any], delta: dict[str, Any], columns: tuple[Column, ...], defaults: dict[str, Any] | None = None
) -> list[dict[str, Any]]:
    """The records after one data-editor change (``edited_rows``, ``added_rows``, ``deleted_rows``).

    Keys the grid does not show (a facility's recovery, collateral) are kept. A cell whose unit is
    read off the row is read after the row's other cells, so a changed choice applies to it.

    Parameters
    ----------
    records : list[Any]
        The records as in the case (anything that is not a dict reads as an empty one).
    delta : dict[str, Any]
        The data editor's change: ``edited_rows`` (row index -> column -> value),
        ``deleted_rows`` (row indices) and ``added_rows`` (column -> value).
    columns : tuple[Column, ...]
        The grid's columns; keys no column has are ignored.
    defaults : dict[str, Any] | None, optional
        The values a new row starts from; None for none.

    Returns
    -------
    list[dict[str, Any]]
        New dicts (``records`` is not changed): the edits applied, the deleted rows dropped and
        the added rows appended.
    """
    by_name = {c.name: c for c in columns}
    out = [dict(r) if isinstance(r, dict) else {} for r in records]
    for index, changes in (delta.get("edited_rows") or {}).items():
        i = int(index)
        if 0 <= i < len(out):
            for name, value in changes.items():
                if name in by_name and by_name[name].unit_for is None:
                    out[i][name] = by_name[name].from_screen(value)
            for name, value in changes.items():  # units read off the row, once its choices are in
                if name in by_name and by_name[name].unit_for is not None:
                    out[i][name] = by_name[name].for_row(out[i]).from_screen(value)
    deleted = {int(i) for i in (delta.get("deleted_rows") or [])}
    out = [r for i, r in enumerate(out) if i not in deleted]
    for added in delta.get("added_rows") or []:
        row = dict(defaults or {})
        for name, value in added.items():
            if name in by_name and by_name[name].unit_for is None:
                row[name] = by_name[name].from_screen(value)
        for name, value in added.items():
            if name in by_name and by_name[name].unit_for is not None:
                row[name] = by_name[name].for_row(row).from_screen(value)
        out.append(row)
    return out


KINDS = {
    "term_loan": "Term loan",
    "revolver": "Revolving credit",
    "bond": "Bond held",
    "guarantee": "Guarantee",
    "letter_of_credit": "Letter of credit",
}
SENIORITIES = {
    "senior_secured": "Senior secured",
    "senior_unsecured": "Senior unsecured",
    "subordinated": "Subordinated",
}
STATUSES = {"new": "New", "renewal": "Renewal", "increase": "Increase", "unchanged": "Unchanged"}
FACILITY_COLUMNS = (
    Column("id", "Id", kind="text", required=True, max_chars=40),
    Column("kind", "Kind", kind="select", options=KINDS, required=True),
    Column("status", "Request", kind="select", options=STATUSES),
    Column("committed", "Committed", unit=entry.MONEY, required=True),
    Column("drawn", "Drawn", unit=entry.MONEY, required=True),
    Column(
        "ccf",
        "CCF (%)",
        unit=entry.PERCENT,
        empty_text="preset",
        help="A percentage such as 75; 'preset' (or empty): the preset of the facility's kind.",
    ),
    Column("cancellable", "Cancellable", kind="check", default=False),
    Column("seniority", "Seniority", kind="select", options=SENIORITIES, required=True),
    Column("maturity_years", "Maturity (years)", unit=entry.YEARS, required=True),
    Column("description", "Description", kind="text", max_chars=300, default=""),
)
FACILITY_DEFAULTS = {"cancellable": False, "description": "", "status": "new"}

STATEMENT_REQUIRED = ("year", "total_assets", "short_term_liabilities", "long_term_liabilities")
STATEMENT_COLUMNS = tuple(
    Column(
        c,
        c.upper() if c in ("ebit", "ebitda") else entry.STATEMENT_LABELS.get(c, c.replace("_", " ")).capitalize(),
        unit=entry.INTEGER if c == "year" else entry.MONEY,
        required=c in STATEMENT_REQUIRED,
    )
    for c in StatementRow.model_fields
)

RISK_COLUMNS = (
    Column("risk", "Risk", kind="text", required=True, max_chars=300, width="medium"),
    Column("mitigant", "Mitigant", kind="text", max_chars=300, default="", width="medium"),
)

COVENANT_METRICS = {
    "net_debt_to_ebitda": "Net debt / EBITDA",
    "interest_cover": "Interest cover (EBITDA / interest)",
    "debt_to_equity": "Debt / equity",
    "ebitda_margin": "EBITDA margin",
}
COVENANT_DIRECTIONS = {"max": "at most", "min": "at least"}
COVENANT_COLUMNS = (
    Column("metric", "Metric", kind="select", options=COVENANT_METRICS, required=True, width="medium"),
    Column("direction", "Must stay", kind="select", options=COVENANT_DIRECTIONS, help="Set from the metric."),
    Column(
        "threshold",
        "Threshold (x, or % for a margin)",
        unit_for=lambda row: entry.PERCENT if row.get("metric") == "ebitda_margin" else entry.NUMBER,
        empty_text="",
        help="A multiple such as 4.0 (4.0x); for the EBITDA margin a percentage such as 12.",
    ),
    Column("tested", "Tested", kind="text", max_chars=60, default="annual"),
)


def complete_covenant(row: dict[str, Any]) -> dict[str, Any]:
    """A covenant's direction follows from its metric (a leverage cap, a cover floor).

    Parameters
    ----------
    row : dict[str, Any]
        A covenant record.

    Returns
    -------
    dict[str, Any]
        A copy with ``direction`` set from ``engine.case.COVENANT_DIRECTION`` when the metric is
        listed there; else ``row`` itself.
    """
    metric = row.get("metric")
    if metric in COVENANT_DIRECTION:
        return {**row, "direction": COVENANT_DIRECTION[metric]}
    return row
