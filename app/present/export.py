"""Results out to a spreadsheet: one sheet per table, numbers as numbers with their formats.

``export_workbook(results)`` returns the .xlsx bytes; ``export_csvs(results, folder)`` writes one
CSV per table. Every figure is read from ``Results.to_dict()`` (the ``evaluate --json``
contract), so the workbook and the JSON cannot disagree. Rates and shares keep their value as a
fraction and carry a percent format (0.0275 shows as 2.75 %); money carries a thousands format.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable
from pathlib import Path
from typing import Any

MONEY_FORMAT = "#,##0"
PERCENT_FORMAT = "0.00%"
PD_FORMAT = "0.0000%"
NUMBER_FORMAT = "0.0000"

# Column name fragments that say how a number reads.
_PERCENT = (
    "pd",
    "rate",
    "ccf",
    "lgd",
    "share",
    "growth",
    "volatility",
    "return",
    "margin",
    "raroc",
    "spread",
    "weight",
    "recovery",
    "correlation",
    "confidence",
    "leverage",
    "ratio",
    "hurdle",
    "std",
    "upper",
    "cover_",
)
_MONEY = (
    "ead",
    "loss",
    "rwa",
    "capital",
    "committed",
    "drawn",
    "undrawn",
    "value",
    "assets",
    "liabilities",
    "income",
    "cost",
    "debt",
    "cash",
    "sales",
    "revenue",
    "ebit",
    "earnings",
    "equity",
    "flow",
    "expenditure",
    "interest_expense",
    "amount",
    "funded",
    "collateral",
    "benefit",
    "fee",
    "point",
)


def _format_for(column: str) -> str | None:
    name = column.lower()
    if name in ("year", "years", "horizon_years", "maturity_years") or name.endswith("_years"):
        return None
    if name in (
        "interest_cover",
        "net_debt_to_ebitda",
        "debt_to_equity",
        "alpha",
        "beta",
        "distance_to_default",
        "maturity_adjustment",
        "k",
        "capital_k",
    ):
        return NUMBER_FORMAT
    if name == "pd" or name.startswith("pd_") or name.endswith("_pd"):
        return PD_FORMAT
    if any(part in name for part in _MONEY) and not name.endswith(("_rate", "_share")):
        return MONEY_FORMAT
    if any(part in name for part in _PERCENT):
        return PERCENT_FORMAT
    return None


def _flat(value: Any, prefix: str = "") -> dict[str, Any]:
    out: dict[str, Any] = {}
    if isinstance(value, dict):
        for key, item in value.items():
            out.update(_flat(item, f"{prefix}{key}." if not isinstance(item, dict) else f"{prefix}{key}."))
        return {k.rstrip("."): v for k, v in out.items()}
    if isinstance(value, (list, tuple)):
        return (
            {prefix.rstrip("."): ", ".join(str(v) for v in value)}
            if all(not isinstance(v, (dict, list)) for v in value)
            else {prefix.rstrip("."): f"{len(value)} items"}
        )
    return {prefix.rstrip("."): value}


def _records(rows: Iterable[dict[str, Any]]) -> list[dict[str, Any]]:
    return [_flat(row) for row in rows]


def tables(results: Any) -> dict[str, list[dict[str, Any]]]:
    """The workbook's tables, each a list of flat rows (column -> value).

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    dict[str, list[dict[str, Any]]]
        Table name -> rows, in sheet order: inputs, statements, facilities, totals, pd, then
        those the results have (pricing, pricing by facility, term structure, sensitivity,
        pd grid, scenarios, credit metrics), and cautions last (one "none" row when there are
        none). Nested values are flattened to dotted column names.
    """
    data = results.to_dict()
    case = data["case"]
    inputs = [
        {"input": key, "value": value}
        for key, value in _flat(
            {k: v for k, v in case.items() if k not in ("statements", "facilities", "scenarios")}
        ).items()
    ]
    unit = (case.get("statements_source") or {}).get("unit", "units")
    statements = [dict(row, unit_in_file=unit) for row in case["statements"]]
    facilities = _records(data["facilities"])
    totals = [{"figure": key, "value": value} for key, value in _flat(data["total"]).items()]
    pd_rows = [{"figure": key, "value": value} for key, value in _flat(data["pd"]).items()]
    out: dict[str, list[dict[str, Any]]] = {
        "inputs": inputs,
        "statements": statements,
        "facilities": facilities,
        "totals": totals,
        "pd": pd_rows,
    }
    if data.get("pricing"):
        pricing = data["pricing"]
        out["pricing"] = [
            {"figure": k, "value": v}
            for k, v in _flat({k: v for k, v in pricing.items() if k not in ("facilities",)}).items()
        ]
        if pricing.get("facilities"):
            out["pricing by facility"] = _records(pricing["facilities"])
    ts = data.get("term_structure") or {}
    if ts.get("years"):
        keys = [k for k, v in ts.items() if isinstance(v, list) and len(v) == len(ts["years"])]
        out["term structure"] = [{k: ts[k][i] for k in keys} for i in range(len(ts["years"]))]
    if data.get("sensitivity"):
        out["sensitivity"] = _records(data["sensitivity"].get("rows", []))
    grid = data.get("pd_grid")
    if grid:
        x_name, y_name = grid.get("x_name", "x"), grid.get("y_name", "y")
        out["pd grid"] = [
            {y_name: y, **{f"{x_name}={x}": grid["pd"][j][i] for i, x in enumerate(grid["x_values"])}}
            for j, y in enumerate(grid["y_values"])
        ]
    if data.get("scenarios"):
        out["scenarios"] = _records(data["scenarios"])
    if data.get("credit_metrics"):
        out["credit metrics"] = _records(data["credit_metrics"])
    out["cautions"] = _records(data.get("cautions") or []) or [{"code": "", "message": "none"}]
    return out


def export_workbook(results: Any) -> bytes:
    """The results as an .xlsx workbook: one sheet per table, frozen header row, number formats.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).

    Returns
    -------
    bytes
        The workbook file; each sheet holds one table of :func:`tables` (its title cut to 31
        characters).
    """
    from openpyxl import Workbook
    from openpyxl.styles import Font

    book = Workbook()
    book.remove(book.active)
    for title, rows in tables(results).items():
        sheet = book.create_sheet(title[:31])
        columns = list(dict.fromkeys(k for row in rows for k in row))
        sheet.append(columns)
        for cell in sheet[1]:
            cell.font = Font(bold=True)
        for row in rows:
            sheet.append([_cell(row.get(c)) for c in columns])
        for index, column in enumerate(columns, start=1):
            letter = sheet.cell(row=1, column=index).column_letter
            for r in range(2, len(rows) + 2):
                cell = sheet.cell(row=r, column=index)
                key = column if column not in ("value",) else str(sheet.cell(row=r, column=1).value or "")
                fmt = (
                    _format_for(key.split(".")[-1].split("=")[0])
                    if isinstance(cell.value, (int, float)) and not isinstance(cell.value, bool)
                    else None
                )
                if title == "pd grid" and index > 1:
                    fmt = PD_FORMAT
                if fmt:
                    cell.number_format = fmt
            sheet.column_dimensions[letter].width = min(60, max(12, len(str(column)) + 2))
        sheet.freeze_panes = "A2"
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def _cell(value: Any) -> Any:
    if value is None or isinstance(value, (int, float, str, bool)):
        return value
    return str(value)


def export_csvs(results: Any, folder: Path) -> list[Path]:
    """One CSV per table in ``folder`` (created); returns the files written.

    Parameters
    ----------
    results : Any
        The evaluated case (:class:`obligor_memo.engine.evaluate.Results`).
    folder : Path
        Folder to write into; created with its parents if missing. Files of the same names are
        overwritten.

    Returns
    -------
    list[Path]
        The files written, one per table of :func:`tables`, named after it (spaces as
        underscores) with ``.csv``, UTF-8.
    """
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for title, rows in tables(results).items():
        path = folder / f"{title.replace(' ', '_')}.csv"
        columns = list(dict.fromkeys(k for row in rows for k in row))
        with path.open("w", newline="", encoding="utf-8") as handle:
            writer = csv.DictWriter(handle, fieldnames=columns)
            writer.writeheader()
            writer.writerows(rows)
        written.append(path)
    return written
