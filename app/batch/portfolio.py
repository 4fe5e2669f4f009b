"""The batch's tables: one row per case from its evaluation, the errors, and a portfolio sheet.

The columns are read from ``Results.to_dict()`` (the ``evaluate --json`` contract) through one
table, :data:`COLUMNS`, so a figure's source is named once. The portfolio sheet is a view of the
batch (sums by grade, the largest exposures, grade moves since the last review), not a
portfolio model: no correlation between borrowers is assumed or computed.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import pandas as pd

# column -> how to read it from the JSON of one case's results (None when absent)
COLUMNS: dict[str, Callable[[dict[str, Any]], Any]] = {
    "borrower": lambda r: r["case"]["borrower"]["name"],
    "currency": lambda r: r["case"]["borrower"]["currency"],
    "fingerprint": lambda r: r["fingerprint"],
    "pd": lambda r: r["pd"]["pd"],
    "grade": lambda r: r["pd"]["grade"],
    "committed": lambda r: sum(f["committed"] for f in r["facilities"]),
    "ead": lambda r: r["total"]["ead"],
    "expected_loss": lambda r: r["total"]["expected_loss"],
    "unexpected_loss": lambda r: r["total"]["unexpected_loss"],
    "rwa": lambda r: r["total"]["rwa"],
    "economic_capital": lambda r: r["total"]["economic_capital"],
    "raroc": lambda r: (r.get("pricing") or {}).get("raroc"),
    "minimum_spread": lambda r: (r.get("pricing") or {}).get("minimum_spread"),
    "cautions": lambda r: len(r.get("cautions") or ()),
}
PORTFOLIO_COLUMNS = ["case_file", *COLUMNS, "previous_grade", "memo"]
ERROR_COLUMNS = ["case_file", "field", "message"]


def previous_grade(results: dict[str, Any]) -> str | None:
    """The grade the case's last review recorded, when the case records one.

    Parameters
    ----------
    results : dict[str, Any]
        One case's results as JSON data (``Results.to_dict()``).

    Returns
    -------
    str | None
        ``review.previous.figures.grade`` of the case; None when it is missing or not text.
    """
    review = results["case"].get("review") or {}
    previous = review.get("previous") or {}
    figures = previous.get("figures") or {}
    grade = figures.get("grade") if isinstance(figures, dict) else None
    return grade if isinstance(grade, str) else None


def row_from(case_file: str, results: dict[str, Any], memo: str | None) -> dict[str, Any]:
    """One case's row of the portfolio table: its file, every column of :data:`COLUMNS`, its memo.

    Parameters
    ----------
    case_file : str
        Path of the case file, as given to the batch.
    results : dict[str, Any]
        The case's results as JSON data (``Results.to_dict()``).
    memo : str | None
        Path of the memo printed for it; None when no memo was printed.

    Returns
    -------
    dict[str, Any]
        The row, keyed by :data:`PORTFOLIO_COLUMNS`; a column the results do not give is None.
    """
    row: dict[str, Any] = {"case_file": case_file}
    for name, read in COLUMNS.items():
        try:
            row[name] = read(results)
        except (KeyError, TypeError):
            row[name] = None
    row["previous_grade"] = previous_grade(results)
    row["memo"] = memo
    return row


def frames(rows: Sequence[dict[str, Any]], errors: Sequence[dict[str, Any]]) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The portfolio and error tables of a batch, each sorted by case file.

    Parameters
    ----------
    rows : Sequence[dict[str, Any]]
        One row per succeeded case (see :func:`row_from`).
    errors : Sequence[dict[str, Any]]
        One row per problem of a failed case, with ``case_file``, ``field`` and ``message``.

    Returns
    -------
    tuple[pd.DataFrame, pd.DataFrame]
        The portfolio (columns :data:`PORTFOLIO_COLUMNS`) and the errors (columns
        :data:`ERROR_COLUMNS`), each with a fresh index; the sort keeps the order of rows of
        one case file.
    """
    portfolio = pd.DataFrame(list(rows), columns=PORTFOLIO_COLUMNS).sort_values("case_file", kind="stable")
    failed = pd.DataFrame(list(errors), columns=ERROR_COLUMNS).sort_values("case_file", kind="stable")
    return portfolio.reset_index(drop=True), failed.reset_index(drop=True)


def by_grade(portfolio: pd.DataFrame) -> pd.DataFrame:
    """EAD, EL and the number of cases per grade and currency (amounts are not converted).

    Parameters
    ----------
    portfolio : pd.DataFrame
        The portfolio table (see :func:`frames`).

    Returns
    -------
    pd.DataFrame
        Columns ``currency``, ``grade``, ``cases``, ``ead`` and ``expected_loss`` [currency
        units], sorted by currency and grade; cases without a grade form their own row.
    """
    if portfolio.empty:
        return pd.DataFrame(columns=["currency", "grade", "cases", "ead", "expected_loss"])
    grouped = portfolio.groupby(["currency", "grade"], dropna=False, sort=True)
    return grouped.agg(
        cases=("case_file", "count"), ead=("ead", "sum"), expected_loss=("expected_loss", "sum")
    ).reset_index()


def largest(portfolio: pd.DataFrame, count: int = 10) -> pd.DataFrame:
    """The cases of the largest EAD, largest first (amounts are compared as given, in any currency).

    Parameters
    ----------
    portfolio : pd.DataFrame
        The portfolio table (see :func:`frames`).
    count : int, optional
        Number of cases kept.

    Returns
    -------
    pd.DataFrame
        Columns ``case_file``, ``borrower``, ``currency``, ``grade``, ``ead`` and
        ``expected_loss``.
    """
    return portfolio.sort_values("ead", ascending=False, kind="stable").head(count)[
        ["case_file", "borrower", "currency", "grade", "ead", "expected_loss"]
    ]


def grade_moves(portfolio: pd.DataFrame) -> pd.DataFrame:
    """The cases whose grade differs from the one their last review recorded.

    Parameters
    ----------
    portfolio : pd.DataFrame
        The portfolio table (see :func:`frames`).

    Returns
    -------
    pd.DataFrame
        Columns ``case_file``, ``borrower``, ``previous_grade``, ``grade`` and ``pd``; cases
        without a recorded grade are left out.
    """
    moved = portfolio[portfolio["previous_grade"].notna() & (portfolio["previous_grade"] != portfolio["grade"])]
    return moved[["case_file", "borrower", "previous_grade", "grade", "pd"]]


def write_outputs(outdir: Path, portfolio: pd.DataFrame, failed: pd.DataFrame) -> None:
    """portfolio.csv, errors.csv and portfolio.xlsx (the cases, then the portfolio view).

    The workbook has the sheets "cases", "portfolio" (the tables of :func:`by_grade`,
    :func:`largest` and :func:`grade_moves`, one under the other with a title each) and
    "errors". The memo column is left out of the CSV and of the cases sheet.

    Parameters
    ----------
    outdir : Path
        Folder to write into; created with its parents if missing. Existing files of these
        names are overwritten.
    portfolio : pd.DataFrame
        The portfolio table (see :func:`frames`).
    failed : pd.DataFrame
        The error table (see :func:`frames`).
    """
    outdir.mkdir(parents=True, exist_ok=True)
    portfolio.drop(columns=["memo"]).to_csv(outdir / "portfolio.csv", index=False)
    failed.to_csv(outdir / "errors.csv", index=False)
    with pd.ExcelWriter(outdir / "portfolio.xlsx", engine="openpyxl") as book:
        portfolio.drop(columns=["memo"]).to_excel(book, sheet_name="cases", index=False, freeze_panes=(1, 0))
        start = 0
        for title, table in (
            ("EAD and EL by grade", by_grade(portfolio)),
            ("Largest exposures (EAD)", largest(portfolio)),
            ("Grade moved since the last review", grade_moves(portfolio)),
        ):
            pd.DataFrame([[title]]).to_excel(book, sheet_name="portfolio", startrow=start, index=False, header=False)
            table.to_excel(book, sheet_name="portfolio", startrow=start + 1, index=False)
            start += len(table) + 4
        failed.to_excel(book, sheet_name="errors", index=False, freeze_panes=(1, 0))
