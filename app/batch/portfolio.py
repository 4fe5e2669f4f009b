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
    """The grade the case's last review recorded, when the case records one."""
    review = results["case"].get("review") or {}
    previous = review.get("previous") or {}
    figures = previous.get("figures") or {}
    grade = figures.get("grade") if isinstance(figures, dict) else None
    return grade if isinstance(grade, str) else None


def row_from(case_file: str, results: dict[str, Any], memo: str | None) -> dict[str, Any]:
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
    portfolio = pd.DataFrame(list(rows), columns=PORTFOLIO_COLUMNS).sort_values("case_file", kind="stable")
    failed = pd.DataFrame(list(errors), columns=ERROR_COLUMNS).sort_values("case_file", kind="stable")
    return portfolio.reset_index(drop=True), failed.reset_index(drop=True)


def by_grade(portfolio: pd.DataFrame) -> pd.DataFrame:
    """EAD, EL and the number of cases per grade and currency (amounts are not converted)."""
    if portfolio.empty:
        return pd.DataFrame(columns=["currency", "grade", "cases", "ead", "expected_loss"])
    grouped = portfolio.groupby(["currency", "grade"], dropna=False, sort=True)
    return grouped.agg(
        cases=("case_file", "count"), ead=("ead", "sum"), expected_loss=("expected_loss", "sum")
    ).reset_index()


def largest(portfolio: pd.DataFrame, count: int = 10) -> pd.DataFrame:
    return portfolio.sort_values("ead", ascending=False, kind="stable").head(count)[
        ["case_file", "borrower", "currency", "grade", "ead", "expected_loss"]
    ]


def grade_moves(portfolio: pd.DataFrame) -> pd.DataFrame:
    moved = portfolio[portfolio["previous_grade"].notna() & (portfolio["previous_grade"] != portfolio["grade"])]
    return moved[["case_file", "borrower", "previous_grade", "grade", "pd"]]


def write_outputs(outdir: Path, portfolio: pd.DataFrame, failed: pd.DataFrame) -> None:
    """portfolio.csv, errors.csv and portfolio.xlsx (the cases, then the portfolio view)."""
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
