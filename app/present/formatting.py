"""Number formats shared by the command line, the workbench and the memo (one place, one style).

Money: thousands separators, no decimals for amounts of 1,000 or more; rates as percentages with
two decimals. One precision rule per quantity: a PD always prints with two decimals in percent
from 1 % up and four below (0.2105 %, 4.58 %); anything below the smallest printable step prints
as "< 0.0001 %" (or "< 0.01 %" for other rates). No exponent notation anywhere.
"""

from __future__ import annotations

import math


def money(value: float | None, currency: str = "", *, decimals: int = 0) -> str:
    """An amount with thousands separators, after its currency code: 'EUR 1,250,000'.

    Parameters
    ----------
    value : float | None
        The amount [currency units]; None, NaN or an infinity prints as 'n/a'.
    currency : str
        Currency code put before the number; "" for none.
    decimals : int
        Decimals printed.

    Returns
    -------
    str
        The amount as printed.
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    text = f"{value:,.{decimals}f}"
    return f"{currency} {text}".strip()


def in_millions(value: float | None, decimals: int = 1) -> str:
    """An amount in a table headed '[CUR m]': 185.2 for 185,200,000; a dash where it is missing.

    Parameters
    ----------
    value : float | None
        The amount [currency units]; None prints as a dash.
    decimals : int, optional
        Decimals of the millions.

    Returns
    -------
    str
        The amount in millions with thousands separators, without unit.
    """
    if value is None:
        return "—"
    return num(value / 1e6, decimals)


def millions(value: float | None, currency: str = "") -> str:
    """An amount in millions with two decimals, after its currency code: 'EUR 12.50m'.

    Parameters
    ----------
    value : float | None
        The amount [currency units]; None prints as 'n/a'.
    currency : str
        Currency code put before the number; "" for none.

    Returns
    -------
    str
        The amount as printed.
    """
    if value is None:
        return "n/a"
    return f"{currency} {value / 1e6:,.2f}m".strip()


def pct(value: float | None, decimals: int = 2) -> str:
    """A rate as a percentage with thousands separators: 0.0275 -> '2.75 %'.

    A non-zero value that would round to zero prints as the smallest step instead: '< 0.01 %',
    or '> -0.01 %' when negative (with two decimals).

    Parameters
    ----------
    value : float | None
        The rate [fraction]; None, NaN or an infinity prints as 'n/a'.
    decimals : int
        Decimals of the percentage.

    Returns
    -------
    str
        The rate as printed.
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    step = 10.0 ** -(decimals + 2)
    if value != 0 and abs(value) < step / 2:
        sign = "-" if value < 0 else ""
        return f"{'> ' + sign if sign else '< '}{step * 100:.{decimals}f} %"
    return f"{value * 100:,.{decimals}f} %"


def pd_pct(value: float | None) -> str:
    """A PD: 4 decimals in percent below 1 %, 2 from 1 % up; below 0.0001 % as "< 0.0001 %".

    Zero prints as '0 %'; a value that would round to 0.0000 % (below 0.00005 %) as
    '< 0.0001 %'.

    Parameters
    ----------
    value : float | None
        The probability of default [fraction]; None, NaN or an infinity prints as 'n/a'.

    Returns
    -------
    str
        The PD as printed.
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    if value == 0:
        return "0 %"
    if value < 0.5e-6:
        return "< 0.0001 %"
    if value < 0.01:
        return f"{value * 100:.4f} %"
    return f"{value * 100:.2f} %"


def num(value: float | None, decimals: int = 2) -> str:
    """A plain number with thousands separators: 1234.5 -> '1,234.50'.

    Parameters
    ----------
    value : float | None
        The number; None, NaN or an infinity prints as 'n/a'.
    decimals : int
        Decimals printed.

    Returns
    -------
    str
        The number as printed.
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    return f"{value:,.{decimals}f}"


def times(value: float | None, decimals: int = 2) -> str:
    """A multiple such as net debt / EBITDA: '3.42x'; 'n/a' where it is undefined.

    Parameters
    ----------
    value : float | None
        The multiple [times]; None, NaN or an infinity prints as 'n/a'.
    decimals : int
        Decimals printed.

    Returns
    -------
    str
        The multiple as printed.
    """
    text = num(value, decimals)
    return text if text == "n/a" else f"{text}x"


def trend(value: float | None, kind: str) -> str:
    """A metric's trend with its sign: '+5.0 %/yr', '-1.0 pp' or '+0.92x'; 'n/a' where there is none.

    Growth a year for amounts, a margin's change in percentage points, a multiple's change.

    Parameters
    ----------
    value : float | None
        The growth [1/year] or the change [fraction or times].
    kind : str
        "growth", "margin" or "multiple".

    Returns
    -------
    str
        The trend as printed.
    """
    if value is None or not math.isfinite(value):
        return "n/a"
    scaled, decimals, unit = {"growth": (100, 1, " %/yr"), "margin": (100, 1, " pp")}.get(kind, (1, 2, "x"))
    shown = round(value * scaled, decimals) + 0.0  # + 0.0: a rounded -0.0 prints as 0.0
    return f"{shown:{'+' if shown else ''},.{decimals}f}{unit}"


def years(value: float | None) -> str:
    """A length of time in years, in its shortest form: 5 -> '5 y', 2.5 -> '2.5 y'.

    Parameters
    ----------
    value : float | None
        The length [years]; None prints as 'n/a'.

    Returns
    -------
    str
        The length as printed.
    """
    if value is None:
        return "n/a"
    return f"{value:g} y"


def input_value(value: float | None, unit: str) -> str:
    """An assumption's value in the unit a credit analyst reads it in, the same in every table and chart.

    Rates and shares print as percentages with one decimal (as the break-even points do), lengths
    of time in years, anything else as a number with two decimals.

    Parameters
    ----------
    value : float | None
        The value in the engine's unit; None prints as 'n/a'.
    unit : str
        The engine's unit: one holding "year" without "/" is a length of time; "[fraction]",
        "[1/year]" and "[1/sqrt(year)]" are percentages.

    Returns
    -------
    str
        The value as printed: 0.5 [fraction] -> '50.0 %', 0.1264 [1/sqrt(year)] -> '12.6 %', 1 [years] -> '1 y'.
    """
    if value is None:
        return "n/a"
    if "year" in unit and "/" not in unit:
        return years(value)
    if unit in ("[fraction]", "[1/year]", "[1/sqrt(year)]"):
        return pct(value, 1)
    return num(value, 2)


# --------------------------------------------------------------------------- scenario changes in words

# A case path a scenario sets -> (words, how its value prints). Paths not listed print their
# words from the path itself (never the dotted path).
_RATE1 = ("pct", 1)
_CHANGE_WORDS: dict[str, tuple[str, tuple[str, int]]] = {
    "pd.asset_growth": ("Asset growth", ("pct_a_year", 1)),
    "pd.asset_volatility": ("Asset volatility", _RATE1),
    "pd.default_point.long_term_share": ("Long-term liabilities in the default point", ("pct", 0)),
    "pd.default_point.short_term_share": ("Short-term liabilities in the default point", ("pct", 0)),
    "pd.horizon_years": ("PD horizon", ("years", 0)),
    "pd.override": ("PD set by the analyst", ("pd", 0)),
    "pd.window_years": ("Trend window", ("years", 0)),
    "pd.method": ("PD method", ("label", 0)),
    "lgd.standard": ("LGD standard", ("standard", 0)),
    "exposure.ccf_standard": ("CCF standard", ("standard", 0)),
    "capital.confidence": ("Capital confidence", _RATE1),
    "pricing.proposed_spread": ("Proposed spread", ("pct", 2)),
    "pricing.hurdle_rate": ("Hurdle rate", _RATE1),
    "pricing.base_rate": ("Base rate", ("pct", 2)),
    "pricing.funding_spread": ("Funding spread", ("pct", 2)),
}
_FACILITY_WORDS: dict[str, tuple[str, tuple[str, int]]] = {
    "ccf": ("CCF", ("pct", 0)),
    "drawn": ("drawn", ("money", 0)),
    "committed": ("committed", ("money", 0)),
    "maturity_years": ("maturity", ("years", 0)),
    "recovery.mean": ("recovery mean, unsecured law", _RATE1),
    "recovery.std": ("recovery std, unsecured law", _RATE1),
    "collateral.value": ("collateral value", ("money", 0)),
    "collateral.haircut": ("collateral haircut", ("pct", 0)),
    "seniority": ("seniority", ("label", 0)),
}


def _change_value(value: object, how: tuple[str, int]) -> str:
    kind, decimals = how
    if value is None:
        return "not set (estimated)"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        number = float(value)
        if kind == "pct":
            return pct(number, decimals)
        if kind == "pct_a_year":
            return f"{pct(number, decimals)} a year"
        if kind == "pd":
            return pd_pct(number)
        if kind == "years":
            return years(number)
        if kind == "money":
            return money(number)
        return f"{number:g}"
    text = str(value)
    if kind == "standard":
        return {"basel_ii": "Basel II", "basel_iii": "Basel III"}.get(text, text.replace("_", " "))
    return text.replace("_", " ")


def _path_words(path: str) -> str:
    return " ".join(part.replace("_", " ") for part in path.split("."))


def scenario_change(path: str, value: object, facility_ids: tuple[str, ...] = ()) -> str:
    """One input a scenario sets, in words: 'pd.asset_growth = -0.05' -> 'Asset growth -5.0 % a year'.

    Known paths print with their own words and format; a facility path prints as
    'owner: field value' ('Every facility' for the wildcard ``*``); any other path prints its
    parts as words, never the dotted path.

    Parameters
    ----------
    path : str
        The case path the scenario sets, e.g. ``pd.asset_growth`` or ``facilities.TL1.ccf``.
    value : object
        The value it sets; None prints as 'not set (estimated)'.
    facility_ids : tuple[str, ...]
        The case's facility ids, so that a facility path is split at the right place (ids may
        hold dots).

    Returns
    -------
    str
        The change in words.
    """
    if path in _CHANGE_WORDS:
        words, how = _CHANGE_WORDS[path]
        return f"{words} {_change_value(value, how)}"
    if path.startswith("facilities."):
        rest = path[len("facilities.") :]
        # The longest facility id the path starts with (ids may hold dots), or the wildcard.
        owner = next((i for i in sorted((*facility_ids, "*"), key=len, reverse=True) if rest.startswith(i + ".")), None)
        if owner is not None:
            field = rest[len(owner) + 1 :]
            who = "Every facility" if owner == "*" else owner
            words, how = _FACILITY_WORDS.get(field, (_path_words(field), ("plain", 0)))
            return f"{who}: {words} {_change_value(value, how)}"
    words = _path_words(path)
    return f"{words[:1].upper()}{words[1:]} {_change_value(value, ('plain', 0))}"
