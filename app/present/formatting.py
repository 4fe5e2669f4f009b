"""Number formats shared by the command line, the workbench and the memo (one place, one style).

Money: thousands separators, no decimals for amounts of 1,000 or more; rates as percentages with
two decimals, small PDs with enough significant digits to stay visible (0.0123 %).
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
    if value != 0 and abs(value) < 10 ** -(decimals + 2):
        return f"{value * 100:.3g} %"
    return f"{value * 100:,.{decimals}f} %"


def pd_pct(value: float | None) -> str:
    """A PD: 4 decimals in percent below 1 %, 2 above; below 0.0001 % in scientific form."""
    if value is None:
        return "n/a"
    if value == 0:
        return "0 %"
    if value < 1e-6:
        return f"{value * 100:.2e} %"
    if value < 0.01:
        return f"{value * 100:.4f} %"
    return f"{value * 100:.2f} %"


def num(value: float | None, decimals: int = 2) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    return f"{value:,.{decimals}f}"


def years(value: float | None) -> str:
    if value is None:
        return "n/a"
    return f"{value:g} y"
