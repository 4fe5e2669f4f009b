"""Number formats shared by the command line, the workbench and the memo (one place, one style).

Money: thousands separators, no decimals for amounts of 1,000 or more; rates as percentages with
two decimals. One precision rule per quantity: a PD always prints with two decimals in percent
from 1 % up and four below (0.2105 %, 4.58 %); anything below the smallest printable step prints
as "< 0.0001 %" (or "< 0.01 %" for other rates). No exponent notation anywhere.
"""

from __future__ import annotations

import math


def money(value: float | None, currency: str = "", *, decimals: int = 0) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    text = f"{value:,.{decimals}f}"
    return f"{currency} {text}".strip()


def millions(value: float | None, currency: str = "") -> str:
    if value is None:
        return "n/a"
    return f"{currency} {value / 1e6:,.2f}m".strip()


def pct(value: float | None, decimals: int = 2) -> str:
    """A rate as a percentage; tiny non-zero values keep three significant digits."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    step = 10.0 ** -(decimals + 2)
    if value != 0 and abs(value) < step / 2:
        sign = "-" if value < 0 else ""
        return f"{'> ' + sign if sign else '< '}{step * 100:.{decimals}f} %"
    return f"{value * 100:,.{decimals}f} %"


def pd_pct(value: float | None) -> str:
    """A PD: 4 decimals in percent below 1 %, 2 from 1 % up; below 0.0001 % as "< 0.0001 %"."""
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
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    return f"{value:,.{decimals}f}"


def times(value: float | None, decimals: int = 2) -> str:
    """A multiple such as net debt / EBITDA: '3.42x'; 'n/a' where it is undefined."""
    text = num(value, decimals)
    return text if text == "n/a" else f"{text}x"


def years(value: float | None) -> str:
    if value is None:
        return "n/a"
    return f"{value:g} y"
