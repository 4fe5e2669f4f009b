"""Statement tables from CSV or XLSX files, and the key ratios of the financial years.

Reading is defensive: a table is data, never code. Formulas in a workbook are refused (their
cached values could be stale and they could be crafted); size and row limits keep an upload
from exhausting memory. Every problem names the file, the row and the column.
"""

from __future__ import annotations

import csv
import io
import math
import re
import zipfile
from dataclasses import dataclass, field
from typing import Any

from obligor_memo.engine.errors import CaseError, Caution, Problem
from obligor_memo.engine.statement_layout import DEBT_PARTS, UNITS, detect

MAX_FILE_BYTES = 2_000_000
MAX_ROWS = 200
MAX_XLSX_UNCOMPRESSED = 50_000_000

REQUIRED_COLUMNS = ("year", "total_assets", "short_term_liabilities", "long_term_liabilities")
OPTIONAL_COLUMNS = (
    "working_capital",
    "retained_earnings",
    "ebit",
    "sales",
    "book_equity",
    "total_liabilities",
    "ebitda",
    "interest_expense",
    "cash",
    "total_debt",
    "operating_cash_flow",
    "capital_expenditure",
)
ALL_COLUMNS = REQUIRED_COLUMNS + OPTIONAL_COLUMNS

_NUMBER = re.compile(r"^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?$")


def _header_key(text: Any) -> str:
    return re.sub(r"[^a-z0-9]+", "_", str(text).strip().lower()).strip("_")


def parse_number(text: Any, *, decimal: str = ".") -> float | None:
    """A cell as a float: '1,234.5', '1 234,5' (with decimal=','), '(12)' for -12; '' -> None.

    Parameters
    ----------
    text : Any
        The cell: a number, or text such as '1,234.5', '1 234,5' or '(12)'.
    decimal : str, optional
        Decimal separator of the file's numbers: ``.`` or ``,``.

    Returns
    -------
    float | None
        The number, or None for an empty cell.

    Raises
    ------
    ValueError
        If the cell is text that is not a number.
    """
    if text is None:
        return None
    if isinstance(text, bool):
        raise ValueError("true/false")
    if isinstance(text, (int, float)):
        return float(text)
    raw = str(text).strip().replace("\u00a0", " ").replace("\u202f", " ")
    if raw == "" or raw in {"-", "n/a", "N/A", "na", "NA"}:
        return None
    negative = raw.startswith("(") and raw.endswith(")")
    if negative:
        raw = raw[1:-1].strip()
    thousands = "," if decimal == "." else "."
    cleaned = raw.replace(" ", "").replace("'", "")
    if re.fullmatch(r"[+-]?\d{1,3}(" + re.escape(thousands) + r"\d{3})+(" + re.escape(decimal) + r"\d*)?", cleaned):
        cleaned = cleaned.replace(thousands, "")
    if decimal == ",":
        cleaned = cleaned.replace(",", ".")
    if not _NUMBER.match(cleaned) or cleaned.count(".") > 1 or "," in cleaned:
        raise ValueError(raw)
    value = float(cleaned)
    return -value if negative else value


def _decode(data: bytes, name: str) -> str:
    for encoding in ("utf-8-sig", "utf-16") if data[:2] in (b"\xff\xfe", b"\xfe\xff") else ("utf-8-sig",):
        try:
            return data.decode(encoding)
        except UnicodeDecodeError:
            continue
    try:
        return data.decode("cp1252")
    except UnicodeDecodeError:
        raise CaseError.single(
            f"statements file {name}", "undecodable bytes", "a text file in UTF-8 (or Windows-1252)", "statements file"
        ) from None


def _rows_from_csv(data: bytes, name: str) -> list[list[Any]]:
    text = _decode(data, name)
    if "\x00" in text:
        raise CaseError.single(
            f"statements file {name}", "binary content", "a CSV text table or an .xlsx workbook", "statements file"
        )
    sample = text[:4096]
    try:
        dialect = csv.Sniffer().sniff(sample, delimiters=",;\t")
        delimiter = dialect.delimiter
    except csv.Error:
        delimiter = ","
    reader = csv.reader(io.StringIO(text), delimiter=delimiter)
    try:
        return [row for row in reader]
    except csv.Error as exc:
        raise CaseError.single(
            f"statements file {name}, line {reader.line_num}",
            str(exc),
            "a plain table of numbers (cells of ordinary length, quotes closed)",
            "statements file",
        ) from None


def _rows_from_xlsx(data: bytes, name: str, sheet: str | None) -> list[list[Any]]:
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        expanded = sum(info.file_size for info in archive.infolist())
    except zipfile.BadZipFile:
        raise CaseError.single(
            f"statements file {name}",
            "not a valid .xlsx archive",
            "an Excel 2007+ workbook (.xlsx) or a CSV file",
            "statements file",
        ) from None
    if expanded > MAX_XLSX_UNCOMPRESSED:
        raise CaseError.single(
            f"statements file {name}",
            f"{expanded:,} bytes when expanded",
            f"a workbook expanding to at most {MAX_XLSX_UNCOMPRESSED:,} bytes",
            "statements file",
        )
    import openpyxl  # deferred: only workbooks need it

    try:
        book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=False)
    except Exception as exc:  # openpyxl raises many types for broken files
        raise CaseError.single(
            f"statements file {name}",
            f"unreadable workbook ({type(exc).__name__})",
            "a workbook saved by a spreadsheet program as .xlsx",
            "statements file",
        ) from None
    if sheet is not None and sheet not in book.sheetnames:
        raise CaseError.single("statements.sheet", sheet, f"one of {', '.join(book.sheetnames)}", "statements file")
    ws = book[sheet] if sheet else book.worksheets[0]
    rows: list[list[Any]] = []
    for r_index, row in enumerate(ws.iter_rows(values_only=True)):
        if r_index > MAX_ROWS + 1:
            break
        for c_index, value in enumerate(row):
            if isinstance(value, str) and value.startswith("="):
                raise CaseError.single(
                    f"statements file {name}, row {r_index + 1}, column {c_index + 1}",
                    value,
                    "plain values (formulas are not evaluated; paste values)",
                    "statements file",
                )
        rows.append(list(row))
    book.close()
    return rows


@dataclass(frozen=True)
class StatementsRead:
    """A statements file as read: the rows (amounts already in currency units) and how."""

    rows: list[dict[str, Any]]
    """One dict per year (field -> amount [currency units])."""
    unit: str = "units"
    """Unit the file was stated in."""
    orientation: str = "long"
    """"long": years down the rows; "wide": across."""
    header_row: int = 1
    """1-based row of the header in the file."""
    recognised: dict[str, str] = field(default_factory=dict)
    """Label in the file -> field."""
    unrecognised: tuple[str, ...] = ()
    """Line labels of the file that matched no field."""


def read_statement_table(
    data: bytes, name: str, *, sheet: str | None = None, decimal: str = "."
) -> list[dict[str, Any]]:
    """Rows of a statements table as plain dicts (column -> number), ready for the case schema.

    ``name`` is used in messages and to tell CSV from XLSX by its ending.

    Parameters
    ----------
    data : bytes
        The file's bytes.
    name : str
        File name, used in messages and to tell CSV from XLSX by its ending.
    sheet : str | None, optional
        Worksheet of an XLSX file; None for the first.
    decimal : str, optional
        Decimal separator of the file's numbers: ``.`` or ``,``.

    Returns
    -------
    list[dict[str, Any]]
        One dict per row (column -> number).
    """
    return read_statements(data, name, sheet=sheet, decimal=decimal).rows


def read_statements(
    data: bytes,
    name: str,
    *,
    sheet: str | None = None,
    decimal: str = ".",
    unit: str = "units",
    mapping: dict[str, str] | None = None,
) -> StatementsRead:
    """Read a statements table in any of the usual layouts (see :mod:`engine.statement_layout`).

    A plain table with the case's column names, or title rows, years across or down and the
    trade's usual wording; amounts multiplied by ``unit``.

    Parameters
    ----------
    data : bytes
        The file's bytes.
    name : str
        File name, used in messages and to tell CSV from XLSX by its ending.
    sheet : str | None, optional
        Worksheet of an XLSX file; None for the first.
    decimal : str, optional
        Decimal separator of the file's numbers: ``.`` or ``,``.
    unit : str, optional
        Unit the file's amounts are stated in, one of ``UNITS``; amounts are multiplied by it.
    mapping : dict[str, str] | None, optional
        The analyst's mapping of line labels to case fields, tried first; None for none.

    Returns
    -------
    StatementsRead
        The rows, the layout found and the lines left unmatched.

    Raises
    ------
    CaseError
        If the case cannot be read or evaluated (each problem names its field).
    """
    if unit not in UNITS:
        raise CaseError.single("statements.unit", unit, "units, thousands or millions", "statements file")
    candidates = [sheet]
    if sheet is None and name.lower().endswith((".xlsx", ".xlsm")):
        candidates = _sheet_names(data, name) or [None]
    rows: list[list[Any]] = []
    for index, chosen in enumerate(candidates):
        try:
            rows = _table(data, name, chosen)
        except CaseError:
            if index == len(candidates) - 1 and not rows:
                raise
            continue
        typed = ["" if c is None else str(c).strip() for c in rows[0]]
        plain = all(_header_key(c) in ALL_COLUMNS for c in typed if c) and "year" in [_header_key(c) for c in typed]
        if plain:
            break
        layout = detect(rows, mapping)
        if layout is not None:
            return _from_layout(layout, name, decimal, unit)
    else:  # no sheet holds statements in a known layout: the first one, with the plain table's messages
        rows = _table(data, name, candidates[0])
    records = _plain_rows(rows, name, decimal)
    factor = UNITS[unit]
    if factor != 1.0:
        records = [{k: (v * factor if k != "year" else v) for k, v in r.items()} for r in records]
    return StatementsRead(records, unit=unit)


def _from_layout(layout: Any, name: str, decimal: str, unit: str) -> StatementsRead:
    factor = UNITS[unit]
    problems: list[Problem] = []
    out: list[dict[str, Any]] = []
    for record in layout.records:
        year = record.get("year")
        if not isinstance(year, int):
            problems.append(Problem(f"statements file {name}, year", year, "a year such as 2023, FY2023 or a date"))
            continue
        row: dict[str, Any] = {"year": year}
        debt = 0.0
        has_debt = False
        for key, cell in record.items():
            if key == "year":
                continue
            try:
                value = parse_number(cell, decimal=decimal)
            except ValueError:
                problems.append(
                    Problem(f"statements file {name}, year {year}, {key}", cell, "a number such as 1234.5 or 1,234.5")
                )
                continue
            if value is None:
                continue
            if not math.isfinite(value):
                problems.append(Problem(f"statements file {name}, year {year}, {key}", cell, "a finite number"))
                continue
            if key in DEBT_PARTS:
                debt += value * factor
                has_debt = True
                continue
            row[key] = value * factor
        if has_debt and "total_debt" not in row:
            row["total_debt"] = debt
        out.append(row)
    for needed in REQUIRED_COLUMNS[1:]:
        if out and not any(needed in row for row in out):
            import difflib

            near = [
                label
                for label in layout.unrecognised
                if difflib.get_close_matches(_header_key(label), [needed], n=1, cutoff=0.8)
            ]
            hint = f" (did you mean '{needed}'?)" if near else ""
            found = ", ".join(sorted(layout.recognised)) or "none"
            problems.append(
                Problem(
                    f"statements file {name}, header",
                    near[0] if near else ", ".join(layout.unrecognised[:12]) or "no such line",
                    f"a line or column for {needed}{hint}; recognised: {found}; map a line "
                    "of the file with statements.mapping: {label in file: field}",
                )
            )
    if not out and not problems:
        problems.append(Problem(f"statements file {name}", "no years", "at least one year of figures"))
    if problems:
        raise CaseError(problems[:20], "statements file")
    if len(out) > MAX_ROWS:
        raise CaseError.single(
            f"statements file {name}", f"{len(out)} years", f"at most {MAX_ROWS} years", "statements file"
        )
    return StatementsRead(
        out,
        unit=unit,
        orientation=layout.orientation,
        header_row=layout.header_row,
        recognised=dict(layout.recognised),
        unrecognised=tuple(layout.unrecognised),
    )


def _sheet_names(data: bytes, name: str) -> list[str | None]:
    """The workbook's sheets in order (the first that holds statements is read)."""
    import openpyxl

    try:
        if sum(i.file_size for i in zipfile.ZipFile(io.BytesIO(data)).infolist()) > MAX_XLSX_UNCOMPRESSED:
            return []  # the reader refuses it with its own message
        book = openpyxl.load_workbook(io.BytesIO(data), read_only=True)
    except Exception:  # the reader itself reports a broken workbook
        return []
    names: list[str | None] = list(book.sheetnames)
    book.close()
    return names


def _table(data: bytes, name: str, sheet: str | None) -> list[list[Any]]:
    if len(data) > MAX_FILE_BYTES:
        raise CaseError.single(
            f"statements file {name}",
            f"{len(data):,} bytes",
            f"a file of at most {MAX_FILE_BYTES:,} bytes",
            "statements file",
        )
    if not data.strip():
        raise CaseError.single(
            f"statements file {name}", "an empty file", "a header row and at least one year", "statements file"
        )
    lower = name.lower()
    if lower.endswith((".xlsx", ".xlsm")):
        rows = _rows_from_xlsx(data, name, sheet)
    elif lower.endswith((".csv", ".txt", ".tsv")):
        rows = _rows_from_csv(data, name)
    else:
        raise CaseError.single(
            f"statements file {name}",
            name.rsplit(".", 1)[-1] if "." in name else name,
            "a .csv or .xlsx file",
            "statements file",
        )
    rows = [r for r in rows if any(c not in (None, "") and str(c).strip() for c in r)]
    if not rows:
        raise CaseError.single(
            f"statements file {name}", "no rows", "a header row and at least one year", "statements file"
        )
    return rows


def _plain_rows(rows: list[list[Any]], name: str, decimal: str) -> list[dict[str, Any]]:
    typed = ["" if c is None else str(c).strip() for c in rows[0]]
    header = [_header_key(c) for c in typed]
    problems: list[Problem] = []
    first_at: dict[str, int] = {}
    for position, key in enumerate(header, start=1):
        if not key:
            continue
        if key in first_at:
            problems.append(
                Problem(
                    f"statements file {name}, header, column {position}",
                    typed[position - 1],
                    f"each column once ({key} is also column {first_at[key]})",
                )
            )
        first_at.setdefault(key, position)
    unknown = [(h, t) for h, t in zip(header, typed) if h and h not in ALL_COLUMNS]
    if unknown:
        import difflib

        for h, t in unknown:
            near = difflib.get_close_matches(h, ALL_COLUMNS, n=1, cutoff=0.6)
            hint = f" (did you mean '{near[0]}'?)" if near else ""
            problems.append(
                Problem(f"statements file {name}, header", t, f"a known column{hint}: {', '.join(ALL_COLUMNS)}")
            )
    for needed in REQUIRED_COLUMNS:
        if needed not in header:
            problems.append(
                Problem(
                    f"statements file {name}, header", ", ".join(h for h in header if h), f"a column named {needed}"
                )
            )
    if problems:
        raise CaseError(problems, "statements file")
    body = rows[1:]
    if len(body) > MAX_ROWS:
        raise CaseError.single(
            f"statements file {name}", f"{len(body)} rows", f"at most {MAX_ROWS} years", "statements file"
        )
    out: list[dict[str, Any]] = []
    for r_index, row in enumerate(body, start=2):
        record: dict[str, Any] = {}
        for c_index, key in enumerate(header):
            if not key:
                continue
            cell = row[c_index] if c_index < len(row) else None
            try:
                value = parse_number(cell, decimal=decimal)
            except ValueError:
                problems.append(
                    Problem(
                        f"statements file {name}, row {r_index}, column {key}",
                        cell,
                        "a number such as 1234.5 or 1,234.5",
                    )
                )
                continue
            if value is not None and key != "year" and not math.isfinite(value):
                problems.append(
                    Problem(
                        f"statements file {name}, row {r_index}, column {key}",
                        cell,
                        "a finite number (this one is too large for the computer)",
                    )
                )
                continue
            if value is None:
                if key in REQUIRED_COLUMNS:
                    problems.append(
                        Problem(
                            f"statements file {name}, row {r_index}, column {key}",
                            cell,
                            "a number (this column is required)",
                        )
                    )
                continue
            if key == "year":
                if not math.isfinite(value) or value != int(value):
                    problems.append(
                        Problem(
                            f"statements file {name}, row {r_index}, column year", cell, "a whole year such as 2024"
                        )
                    )
                    continue
                record[key] = int(value)
            else:
                record[key] = value
        out.append(record)
    if problems:
        raise CaseError(problems, "statements file")
    return out


# --------------------------------------------------------------------------- ratios


@dataclass(frozen=True)
class YearRatios:
    """Key ratios of one financial year [fraction]."""

    year: int
    """Financial year."""
    total_liabilities: float
    """[currency units] given, or short + long term."""
    leverage: float
    """Total liabilities / total assets [fraction]."""
    short_term_share_of_debt: float
    """Short-term / (short + long) debt [fraction]"""
    equity_ratio: float | None
    """Book equity / total assets [fraction]."""
    ebit_margin: float | None
    """EBIT / sales [fraction]."""
    return_on_assets: float | None
    """EBIT / total assets [fraction]."""
    asset_growth: float | None
    """ln(TA_t / TA_{t-1}) [1/year]"""


def year_ratios(rows: list[Any]) -> tuple[YearRatios, ...]:
    """Ratios per year from validated, year-sorted statement rows.

    Parameters
    ----------
    rows : list[Any]
        Validated statement rows, sorted by year.

    Returns
    -------
    tuple[YearRatios, ...]
        The ratios of each year.
    """
    out = []
    previous = None
    for row in rows:
        tl = row.total_liabilities or (row.short_term_liabilities + row.long_term_liabilities)
        debt = row.short_term_liabilities + row.long_term_liabilities
        out.append(
            YearRatios(
                year=row.year,
                total_liabilities=tl,
                leverage=tl / row.total_assets,
                short_term_share_of_debt=(row.short_term_liabilities / debt) if debt > 0 else 0.0,
                equity_ratio=(row.book_equity / row.total_assets) if row.book_equity is not None else None,
                ebit_margin=(row.ebit / row.sales) if (row.ebit is not None and row.sales) else None,
                return_on_assets=(row.ebit / row.total_assets) if row.ebit is not None else None,
                asset_growth=(
                    math.log(row.total_assets) - math.log(previous.total_assets) if previous is not None else None
                ),
            )
        )
        previous = row
    return tuple(out)


# --------------------------------------------------------------------------- cautions on reading


def statement_cautions(case: Any) -> list[Caution]:
    """What the reader should know about the statements as read.

    The unit they were given in, the lines of the file that matched no field, and amounts whose
    scale looks wrong.

    The scale check is a plausibility rule (common practice, not a standard): a borrower's
    committed facilities are rarely more than 20 times its total assets, and total assets
    below 1,000 beside facilities of a million or more usually mean a file in thousands or
    millions read as units.

    Parameters
    ----------
    case : Any
        The validated case.

    Returns
    -------
    list[Caution]
        The cautions, possibly none.
    """
    out: list[Caution] = []
    source = getattr(case, "statements_source", None)
    currency = case.borrower.currency
    if source is not None:
        if source.unit != "units":
            out.append(
                Caution(
                    "statements.unit",
                    f"The statements file {source.file} gives amounts in "
                    f"{currency} {source.unit}; they were multiplied into {currency} on reading.",
                    "statements.unit",
                )
            )
        if source.unrecognised:
            shown = ", ".join(f"'{label}'" for label in source.unrecognised[:15])
            more = len(source.unrecognised) - 15
            out.append(
                Caution(
                    "statements.unrecognised",
                    f"Lines of {source.file} that match no statement field "
                    f"and were not used: {shown}{f' and {more} more' if more > 0 else ''}. Map one with "
                    "statements.mapping: {label: field} if it should count.",
                    "statements.mapping",
                )
            )
    latest = case.statements[-1]
    committed = sum(f.committed for f in case.facilities)
    if committed > 20 * latest.total_assets or (latest.total_assets < 1_000 and committed >= 1_000_000):
        out.append(
            Caution(
                "statements.scale",
                f"The facilities ({committed:,.0f} {currency} committed) are far "
                f"larger than total assets ({latest.total_assets:,.0f} {currency} in {latest.year}): "
                "check the statements' unit (statements.unit: thousands or millions).",
                "statements.unit",
            )
        )
    return out
