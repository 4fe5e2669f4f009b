"""Makes the layout test files of tests/data from the invented sample borrower (run from the repository root)."""

import csv
import datetime as dt
from pathlib import Path

import openpyxl

rows = list(csv.DictReader(open("sample_data/hollowmere_statements.csv")))
labels = {
    "total_assets": "Total Assets",
    "short_term_liabilities": "Current Liabilities",
    "long_term_liabilities": "Non-current liabilities",
    "working_capital": "Working capital",
    "retained_earnings": "Retained earnings",
    "ebit": "Operating profit (EBIT)",
    "sales": "Revenue",
    "book_equity": "Shareholders' equity",
    "ebitda": "EBITDA",
    "interest_expense": "Interest expense",
    "cash": "Cash and cash equivalents",
    "total_debt": "Total debt",
    "operating_cash_flow": "Cash flow from operations",
    "capital_expenditure": "Capex",
}
D = Path("tests/data")
book = openpyxl.Workbook()
cover = book.active
cover.title = "Cover"
cover.append(["Hollowmere Lifting Group"])
cover.append(["Prepared for the annual review"])
ws = book.create_sheet("Financials")
ws.append(["Hollowmere Lifting Group - key financials"])
ws.append(["EUR thousands, audited"])
ws.append([])
ws.append(["Line item"] + [f"FY{r['year']}" for r in rows])
ws.append(["Balance sheet"])
for key, label in labels.items():
    ws.append([label] + [float(r[key]) / 1000 for r in rows])
ws.append(["Inventories"] + [12345.0 for _ in rows])
book.save(D / "statements_wide_thousands.xlsx")
with open(D / "statements_long_millions.csv", "w", newline="") as f:
    w = csv.writer(f)
    w.writerow(["Statements of the borrower (EUR m)"])
    w.writerow([])
    w.writerow(["Fiscal year"] + [labels[k] for k in labels] + ["Employees"])
    for r in rows:
        w.writerow([f"{r['year']}A"] + [repr(float(r[k]) / 1e6) for k in labels] + [850])
book = openpyxl.Workbook()
ws = book.active
ws.title = "BS"
ws.append([None] + [dt.datetime(int(r["year"]), 12, 31) for r in rows])
for key, label in labels.items():
    ws.append([label] + [float(r[key]) for r in rows])
book.save(D / "statements_wide_dates.xlsx")
print("ok")
