"""What the analyst types and reads, in the screen's words.

Numbers as people write them, rates as percentages, and every case path named by its label,
facility id or statement year.

No Streamlit here, so every rule is testable on its own. The case file keeps fractions (the file
format does not change): a rate typed as ``2.75`` is stored as ``0.0275``, exactly as the case
file would spell it (decimal arithmetic, so 2.7 becomes 0.027 and not 0.027000000000000003).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation
from typing import Any

from obligor_memo.app.workbench.state import split_path

PERCENT = "percent"
MONEY = "money"
YEARS = "years"
INTEGER = "integer"
NUMBER = "number"
UNITS = (PERCENT, MONEY, YEARS, INTEGER, NUMBER)

_SUFFIX = {"k": Decimal(1_000), "m": Decimal(1_000_000), "mn": Decimal(1_000_000), "bn": Decimal(1_000_000_000)}
_GROUPED = re.compile(r"[+-]?\d{1,3}(,\d{3})+(\.\d+)?")
_DECIMAL_COMMA = re.compile(r"[+-]?\d*,\d+")
_PLAIN = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")
_NUMBER_IN_TEXT = re.compile(r"(?<![\w.^])[+-]?\d+(\.\d+)?([eE][+-]?\d+)?(?![\w.])")


class EntryError(ValueError):
    """Text that is not a number: ``reason`` says what was typed and what is allowed.

    Parameters
    ----------
    text : str
        The text as typed.
    reason : str
        What was typed and what is allowed ("got 'abc'; allowed: ..."); also the message.
    """

    def __init__(self, text: str, reason: str) -> None:
        super().__init__(reason)
        self.text = text
        self.reason = reason


def to_fraction(percent: float) -> float:
    """A percentage as the fraction the case file stores: ``2.75 -> 0.0275`` (decimal division).

    Parameters
    ----------
    percent : float
        The value as shown [%].

    Returns
    -------
    float
        The value as stored [fraction].
    """
    return float(Decimal(repr(float(percent))) / 100)


def to_percent(fraction: float) -> float:
    """A stored fraction as the percentage shown: ``0.0275 -> 2.75`` (decimal multiplication).

    Parameters
    ----------
    fraction : float
        The value as stored [fraction].

    Returns
    -------
    float
        The value as shown [%].
    """
    return float(Decimal(repr(float(fraction))) * 100)


def unit_words(unit: str, currency: str = "") -> str:
    """The unit as the screen says it: ``"%"``, ``"EUR"``, ``"years"``; empty for plain numbers.

    Parameters
    ----------
    unit : str
        One of ``UNITS``.
    currency : str, optional
        The case's currency, the words of a money unit.

    Returns
    -------
    str
        The unit's words; empty for an integer, a plain number or an unknown unit.
    """
    return {PERCENT: "%", MONEY: currency, YEARS: "years"}.get(unit, "")


def parse(text: str | None, unit: str = NUMBER) -> float | int | None:
    """The number a person typed, in the unit of the screen (a percentage stays a percentage).

    Empty text is ``None`` (not set). Accepted: ``2.75``, ``-0.5``, ``0,4`` (a decimal comma:
    0.4, never 4), ``1,250,000`` and ``1 250 000`` (grouped thousands), a trailing ``%`` on a
    rate, and for amounts the suffixes ``k``, ``m`` / ``mn`` and ``bn`` (``90m`` is 90,000,000).

    Parameters
    ----------
    text : str | None
        The text as typed.
    unit : str, optional
        One of ``UNITS``: the unit the text is written in.

    Returns
    -------
    float | int | None
        The number in the screen's unit (an int for ``INTEGER``); None for empty text.

    Raises
    ------
    EntryError
        For anything else (letters, two decimal marks, ``1,2,3``), saying what is allowed.
    """
    if text is None:
        return None
    raw = str(text).strip()
    cleaned = raw.replace("\u00a0", " ").replace("\u2212", "-")
    if not cleaned:
        return None
    scale = Decimal(1)
    if unit == PERCENT and cleaned.endswith("%"):
        cleaned = cleaned[:-1].strip()
    if unit == MONEY:
        m = re.fullmatch(r"(.*?)\s*(k|m|mn|bn)", cleaned, flags=re.I)
        if m and m.group(1):
            cleaned, scale = m.group(1), _SUFFIX[m.group(2).lower()]
    cleaned = re.sub(r"(?<=\d)[ '_](?=\d{3}\b)", "", cleaned)
    if _GROUPED.fullmatch(cleaned):
        cleaned = cleaned.replace(",", "")
    elif _DECIMAL_COMMA.fullmatch(cleaned) and "." not in cleaned:
        cleaned = cleaned.replace(",", ".")
    if not _PLAIN.fullmatch(cleaned):
        raise EntryError(raw, f"got {raw!r}; allowed: {allowed_form(unit)}")
    try:
        value = Decimal(cleaned) * scale
    except InvalidOperation:
        raise EntryError(raw, f"got {raw!r}; allowed: {allowed_form(unit)}") from None
    if not value.is_finite():
        raise EntryError(raw, f"got {raw!r}; allowed: a finite number")
    if unit == INTEGER:
        if value != value.to_integral_value():
            raise EntryError(raw, f"got {raw!r}; allowed: a whole number such as 5")
        return int(value)
    return float(value)


def allowed_form(unit: str) -> str:
    """What a field of ``unit`` accepts, in words, with examples.

    Parameters
    ----------
    unit : str
        One of ``UNITS``.

    Returns
    -------
    str
        Such as "a percentage such as 2.75 (for 2.75 %) or 0,4"; "a number such as 1.25" for a
        plain number or an unknown unit.
    """
    return {
        PERCENT: "a percentage such as 2.75 (for 2.75 %) or 0,4",
        MONEY: "an amount such as 90,000,000, 90000000 or 90m",
        YEARS: "a number of years such as 2.5",
        INTEGER: "a whole number such as 5",
    }.get(unit, "a number such as 1.25")


def show(value: Any, unit: str = NUMBER) -> str:
    """The text a field shows for a stored value (fractions as percentages, amounts grouped).

    Parameters
    ----------
    value : Any
        The value as stored; text that did not read as a number is shown as typed.
    unit : str, optional
        One of ``UNITS``: the field's unit.

    Returns
    -------
    str
        The text, without the unit; empty for None.
    """
    if value is None:
        return ""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return str(value)  # text kept as typed (it did not read as a number)
    if unit == PERCENT:
        return _trim(to_percent(value))
    if unit == MONEY:
        return f"{value:,.0f}" if float(value).is_integer() else f"{value:,.2f}"
    if unit == INTEGER:
        return str(int(value))
    return _trim(float(value))


def _trim(x: float) -> str:
    text = f"{x:.10f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def store(value: float | int | None, unit: str) -> float | int | None:
    """A parsed screen number as the case file stores it (a percentage becomes a fraction).

    Parameters
    ----------
    value : float | int | None
        The number as :func:`parse` read it, in the screen's unit.
    unit : str
        One of ``UNITS``: the field's unit.

    Returns
    -------
    float | int | None
        The number as stored: a percentage divided by 100, anything else unchanged.
    """
    if value is None or unit != PERCENT:
        return value
    return to_fraction(value)


def screen_allowed(allowed: str, unit: str) -> str:
    """The engine's allowed text in the field's unit.

    For a rate, "a number from 0 to 1" reads "a number from 0 % to 100 %"; for an amount, 1e+15
    reads 1,000,000,000,000,000.

    Parameters
    ----------
    allowed : str
        What the engine allows, in its words (numbers as stored).
    unit : str
        One of ``UNITS``: the field's unit.

    Returns
    -------
    str
        The text with its numbers in the field's unit; unchanged for units other than percent
        and money.
    """
    if unit not in (PERCENT, MONEY):
        return allowed

    def convert(m: re.Match[str]) -> str:
        x = float(m.group(0))
        if unit == PERCENT:
            return f"{_trim(to_percent(x))} %"
        return f"{x:,.0f}"

    return _NUMBER_IN_TEXT.sub(convert, allowed)


# --------------------------------------------------------------------------- field names


@dataclass(frozen=True)
class FieldName:
    """Where a case path sits on screen: the page's title, the label and the unit."""

    page: str
    """The title of the page that holds the field (one of ``PAGE_TITLES``)."""
    label: str
    """The field's label on that page."""
    unit: str = NUMBER
    """One of ``UNITS``: the unit the field is typed in."""


BORROWER = "Borrower and statements"
ASSET_PD = "Asset trend and PD"
EXPOSURE = "Facilities and exposure"
RECOVERY = "Recovery and LGD"
LOSS = "Loss, capital and pricing"
WHATIF = "What-if and scenarios"
MEMO = "Memo and files"
PAGE_TITLES = (BORROWER, ASSET_PD, EXPOSURE, RECOVERY, LOSS, WHATIF, MEMO)

# Case paths with list indices written as [*]. A path not listed is named by its last parts.
FIELDS: dict[str, FieldName] = {
    "borrower.name": FieldName(BORROWER, "Name"),
    "borrower.currency": FieldName(BORROWER, "Currency"),
    "borrower.country": FieldName(BORROWER, "Country"),
    "borrower.sector": FieldName(BORROWER, "Sector"),
    "statements": FieldName(BORROWER, "Statements"),
    "pd.window_years": FieldName(ASSET_PD, "Trend window", INTEGER),
    "pd.asset_growth": FieldName(ASSET_PD, "Asset growth", PERCENT),
    "pd.asset_volatility": FieldName(ASSET_PD, "Asset volatility", PERCENT),
    "pd.default_point.short_term_share": FieldName(ASSET_PD, "Short-term share of the default point", PERCENT),
    "pd.default_point.long_term_share": FieldName(ASSET_PD, "Long-term share of the default point", PERCENT),
    "pd.horizon_years": FieldName(ASSET_PD, "Horizon", YEARS),
    "pd.method": FieldName(ASSET_PD, "PD method"),
    "pd.override": FieldName(ASSET_PD, "PD override", PERCENT),
    "pd.override_reason": FieldName(ASSET_PD, "Reason for the PD override"),
    "market.equity_value": FieldName(ASSET_PD, "Equity market value", MONEY),
    "market.equity_volatility": FieldName(ASSET_PD, "Equity volatility", PERCENT),
    "market.risk_free_rate": FieldName(ASSET_PD, "Risk-free rate", PERCENT),
    "exposure.ccf_standard": FieldName(EXPOSURE, "CCF presets from"),
    "facilities": FieldName(EXPOSURE, "Facilities"),
    "facilities[*].id": FieldName(EXPOSURE, "id"),
    "facilities[*].kind": FieldName(EXPOSURE, "kind"),
    "facilities[*].committed": FieldName(EXPOSURE, "committed", MONEY),
    "facilities[*].drawn": FieldName(EXPOSURE, "drawn", MONEY),
    "facilities[*].ccf": FieldName(EXPOSURE, "CCF", PERCENT),
    "facilities[*].cancellable": FieldName(EXPOSURE, "cancellable"),
    "facilities[*].seniority": FieldName(EXPOSURE, "seniority"),
    "facilities[*].maturity_years": FieldName(EXPOSURE, "maturity", YEARS),
    "facilities[*].status": FieldName(EXPOSURE, "status"),
    "facilities[*].description": FieldName(EXPOSURE, "description"),
    "facilities[*].recovery": FieldName(RECOVERY, "recovery"),
    "facilities[*].recovery.mean": FieldName(RECOVERY, "recovery mean", PERCENT),
    "facilities[*].recovery.std": FieldName(RECOVERY, "recovery std", PERCENT),
    "facilities[*].recovery.upper": FieldName(RECOVERY, "recovery upper bound", PERCENT),
    "facilities[*].collateral.value": FieldName(RECOVERY, "collateral value", MONEY),
    "facilities[*].collateral.haircut": FieldName(RECOVERY, "collateral haircut", PERCENT),
    "facilities[*].collateral.description": FieldName(RECOVERY, "collateral description"),
    "lgd.standard": FieldName(RECOVERY, "Supervisory LGD table"),
    "lgd.default_recovery_std": FieldName(RECOVERY, "Default recovery std", PERCENT),
    "lgd.downturn.method": FieldName(RECOVERY, "Downturn LGD for capital"),
    "lgd.downturn.quantile": FieldName(RECOVERY, "Downturn quantile", PERCENT),
    "lgd.downturn.add_on": FieldName(RECOVERY, "Downturn add-on", PERCENT),
    "capital.confidence": FieldName(LOSS, "Confidence", PERCENT),
    "capital.pd_floor": FieldName(LOSS, "PD floor", PERCENT),
    "capital.recovery_join": FieldName(LOSS, "Recoveries of the facilities"),
    "capital.economic_method": FieldName(LOSS, "Economic capital"),
    "capital.scaling_factor": FieldName(LOSS, "The 1.06 scaling factor"),
    "pricing.proposed_spread": FieldName(LOSS, "Proposed spread", PERCENT),
    "pricing.fee_rate": FieldName(LOSS, "Fee rate", PERCENT),
    "pricing.commitment_fee_rate": FieldName(LOSS, "Commitment fee", PERCENT),
    "pricing.issuance_fee_rate": FieldName(LOSS, "Issuance fee", PERCENT),
    "pricing.hurdle_rate": FieldName(LOSS, "Hurdle rate", PERCENT),
    "pricing.base_rate": FieldName(LOSS, "Base rate", PERCENT),
    "pricing.funding_spread": FieldName(LOSS, "Funding spread", PERCENT),
    "pricing.operating_cost_rate": FieldName(LOSS, "Operating cost", PERCENT),
    "pricing.capital_return_rate": FieldName(LOSS, "Return on capital held", PERCENT),
    "pricing.capital_basis": FieldName(LOSS, "Capital basis"),
    "scenarios": FieldName(WHATIF, "Scenarios"),
    "memo.request": FieldName(MEMO, "Request"),
    "memo.summary": FieldName(MEMO, "Summary"),
    "memo.recommendation": FieldName(MEMO, "Recommendation"),
    "memo.conditions": FieldName(MEMO, "Conditions"),
    "memo.rationale": FieldName(MEMO, "Grade rationale"),
    "memo.default_point_reason": FieldName(MEMO, "Why this default point"),
    "memo.cross_check_explanation": FieldName(MEMO, "Cross-checks reconciled"),
    "memo.risks": FieldName(MEMO, "Key risks and mitigants"),
    "covenants": FieldName(MEMO, "Covenants"),
    "covenants[*].metric": FieldName(MEMO, "metric"),
    "covenants[*].threshold": FieldName(MEMO, "threshold"),
    "covenants[*].direction": FieldName(MEMO, "must stay"),
    "covenants[*].tested": FieldName(MEMO, "tested"),
    "memo.prepared_by": FieldName(MEMO, "Prepared by"),
    "memo.reviewed_by": FieldName(MEMO, "Reviewed by"),
    "memo.approved_by": FieldName(MEMO, "Approved by"),
    "memo.page_size": FieldName(MEMO, "Page size"),
}

STATEMENT_LABELS = {
    "year": "year",
    "total_assets": "total assets",
    "short_term_liabilities": "short-term liabilities",
    "long_term_liabilities": "long-term liabilities",
    "working_capital": "working capital",
    "retained_earnings": "retained earnings",
    "ebit": "EBIT",
    "sales": "sales",
    "book_equity": "book equity",
    "total_liabilities": "total liabilities",
    "ebitda": "EBITDA",
    "interest_expense": "interest expense",
    "cash": "cash",
    "total_debt": "total debt",
    "operating_cash_flow": "operating cash flow",
    "capital_expenditure": "capital expenditure",
}

_INDEX = re.compile(r"\[\d+\]")


def field_name(path: str) -> FieldName | None:
    """The screen name of a case path (the nearest listed ancestor when the path itself is not).

    Parameters
    ----------
    path : str
        A case path such as ``facilities[1].recovery.std``.

    Returns
    -------
    FieldName | None
        The entry of ``FIELDS`` for the path, list indices read as ``[*]``; None when neither
        the path nor any ancestor is listed.
    """
    pattern = _INDEX.sub("[*]", path)
    while pattern:
        if pattern in FIELDS:
            return FIELDS[pattern]
        cut = max(pattern.rfind("."), pattern.rfind("["))
        pattern = pattern[:cut] if cut > 0 else ""
    return None


def _listed(raw: dict[str, Any], key: str) -> list[Any]:
    """``raw[key]`` where it is a list, else an empty list."""
    items = raw.get(key)
    return items if isinstance(items, list) else []


def where(path: str, raw: dict[str, Any] | None) -> str:
    """A case path in the screen's words.

    ``facilities[1].recovery.std`` -> "Facility RCF-1, recovery std";
    ``statements[0].total_assets`` -> "Statements, year 2016, total assets".

    Parameters
    ----------
    path : str
        A case path.
    raw : dict[str, Any] | None
        The case as typed, for the facility ids, statement years and scenario names; None
        names rows by their number.

    Returns
    -------
    str
        The words: the row (facility, statement year, scenario, covenant, key risk) and the
        field's label.
    """
    parts = split_path(path) if path.strip(".[]") else []
    raw = raw if isinstance(raw, dict) else {}
    if parts[:1] == ["statements"] and len(parts) >= 2 and isinstance(parts[1], int):
        rows = _listed(raw, "statements")
        row = rows[parts[1]] if parts[1] < len(rows) and isinstance(rows[parts[1]], dict) else {}
        year = row.get("year")
        head = f"Statements, year {year}" if isinstance(year, int) else f"Statements, row {parts[1] + 1} (no year)"
        if len(parts) >= 3:
            return f"{head}, {STATEMENT_LABELS.get(str(parts[2]), str(parts[2]).replace('_', ' '))}"
        return head
    if parts[:1] == ["facilities"] and len(parts) >= 2 and isinstance(parts[1], int):
        items = _listed(raw, "facilities")
        item = items[parts[1]] if parts[1] < len(items) and isinstance(items[parts[1]], dict) else {}
        ident = item.get("id")
        head = f"Facility {ident}" if ident else f"Facility in row {parts[1] + 1}"
        if len(parts) >= 3:
            name = field_name(path)
            label = name.label if name is not None and name.label != "Facilities" else " ".join(map(str, parts[2:]))
            return f"{head}, {label}"
        return head
    if parts[:1] == ["scenarios"] and len(parts) >= 2 and isinstance(parts[1], int):
        items = _listed(raw, "scenarios")
        item = items[parts[1]] if parts[1] < len(items) and isinstance(items[parts[1]], dict) else {}
        return f"Scenario {item.get('name') or parts[1] + 1}"
    if parts[:1] == ["covenants"] and len(parts) >= 2 and isinstance(parts[1], int):
        named = field_name(path) if len(parts) > 2 else None
        tail = f", {named.label}" if named is not None else ""
        return f"Covenant {parts[1] + 1}{tail}"
    if parts[:2] == ["memo", "risks"] and len(parts) >= 3 and isinstance(parts[2], int):
        tail = f", {parts[3]}" if len(parts) > 3 else ""
        return f"Key risk {parts[2] + 1}{tail}"
    name = field_name(path)
    if name is not None and _INDEX.sub("[*]", path) in FIELDS:
        return name.label
    return " ".join(str(p).replace("_", " ") for p in parts if not isinstance(p, int)).capitalize()


def page_of(path: str) -> str | None:
    """The title of the page that holds the field at ``path`` (None when no page does).

    Parameters
    ----------
    path : str
        A case path.

    Returns
    -------
    str | None
        The page's title; None when neither the path nor any ancestor is listed.
    """
    name = field_name(path)
    return name.page if name else None


def unit_of(path: str) -> str:
    """The unit the field at ``path`` is typed in.

    Parameters
    ----------
    path : str
        A case path.

    Returns
    -------
    str
        ``MONEY`` for a statement amount, the unit of a listed field, else ``NUMBER``.
    """
    if path.startswith("statements[") and not path.endswith("year"):
        return MONEY
    name = field_name(path)
    return name.unit if name and _INDEX.sub("[*]", path) in FIELDS else NUMBER


_OVERLAY = re.compile(r"(what-if|scenario '(?P<name>.*)')\.set\['(?P<path>[^']+)'\]")
_QUOTED_PATH = re.compile(r"'([a-z_]+(?:\[\d+\])?(?:\.[a-z_]+(?:\[\d+\])?)+)'")


def _overlay_unit(path: str) -> str:
    parts = path.split(".")
    if parts[0] == "facilities" and len(parts) >= 3:
        return unit_of("facilities[0]." + ".".join(parts[2:]))
    return unit_of(path)


def message(field: str, value: Any, allowed: str, raw: dict[str, Any] | None) -> str:
    """One problem in the screen's words: where, what was typed (in the field's unit), what is allowed.

    Parameters
    ----------
    field : str
        The problem's field: a case path, or a what-if or scenario setting
        (``what-if.set['pd.asset_growth']``).
    value : Any
        The value given.
    allowed : str
        What is allowed, in the engine's words; case paths quoted in it are named too.
    raw : dict[str, Any] | None
        The case as typed, for the names of rows.

    Returns
    -------
    str
        The sentence "<where>: got <value>; allowed: <allowed>."
    """
    allowed = _QUOTED_PATH.sub(lambda m: where(m.group(1), raw), allowed)
    overlay = _OVERLAY.fullmatch(field)
    if overlay:
        inner = overlay.group("path")
        unit = _overlay_unit(inner)
        head = "What-if" if overlay.group("name") is None else f"Scenario {overlay.group('name')!r}"
        label = _overlay_label(inner)
        shown = (
            show(value, unit) + (" %" if unit == PERCENT else "") if isinstance(value, (int, float)) else repr(value)
        )
        return f"{head}, {label}: got {shown}; allowed: {screen_allowed(allowed, unit)}."
    unit = unit_of(field)
    if value is None or value == "":
        got = "nothing"
    elif isinstance(value, (int, float)) and not isinstance(value, bool):
        got = show(value, unit) + (" %" if unit == PERCENT else "")
    elif isinstance(value, str):
        got = repr(value if len(value) <= 60 else value[:57] + "...")
    else:
        from obligor_memo.engine.errors import show_value

        got = show_value(value)
    return f"{where(field, raw)}: got {got}; allowed: {screen_allowed(allowed, unit)}."


def _overlay_label(path: str) -> str:
    parts = path.split(".")
    if parts[0] == "facilities" and len(parts) >= 3:
        name = field_name("facilities[0]." + ".".join(parts[2:]))
        return f"Facility {parts[1]}, {name.label if name else ' '.join(parts[2:])}"
    name = field_name(path)
    return name.label if name and path in FIELDS else path.replace(".", " ").replace("_", " ").capitalize()


def override_words(path: str, value: Any) -> str:
    """A what-if or scenario setting in words.

    ``pd.asset_growth = -0.05`` -> "Asset growth -5 %"; ``facilities.RCF-1.ccf = 1.0`` ->
    "Facility RCF-1, CCF 100 %".

    Parameters
    ----------
    path : str
        The setting's path in the engine's scenario format (facilities named by id).
    value : Any
        The value set.

    Returns
    -------
    str
        The label and the value in the field's unit; choices in words (``CHOICE_WORDS``).
    """
    label, unit = _overlay_label(path), _overlay_unit(path)
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        text = show(value, unit) + (" %" if unit == PERCENT else " years" if unit == YEARS else "")
    else:
        text = CHOICE_WORDS.get(str(value), str(value).replace("_", " "))
    return f"{label}: {text}" if text and not text[0].isdigit() and text[0] not in "+-" else f"{label} {text}"


CHOICE_WORDS = {
    "basel_ii": "Basel II",
    "basel_iii": "Basel III",
    "balance_sheet": "balance sheet",
    "market": "market",
    "comonotonic": "move together",
    "independent": "independent",
    "single_factor": "one-factor",
    "standalone": "standalone",
    "regulatory": "regulatory capital",
    "economic": "economic capital",
}
