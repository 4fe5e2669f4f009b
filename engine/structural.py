"""Structural (Merton-type) PD from the balance sheet, and the PD term structure.

Assets follow a geometric Brownian motion with expected return mu and volatility s; the borrower
defaults when assets at the horizon fall below the default point DP. Distance to default

    DD = (ln(V / DP) + (mu - s^2 / 2) T) / (s sqrt(T)),      PD = N(-DD)

(Merton, R. C. (1974), "On the Pricing of Corporate Debt", Journal of Finance 29(2); the
physical-measure form as used for distance to default in practice). The default point is
DP = a x short-term liabilities + b x long-term liabilities; a = 1, b = 0.5 is common practice.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import overload

import numpy as np
import numpy.typing as npt
from obligor_memo.engine.errors import InputError
from scipy.special import ndtr

FloatArray = npt.NDArray[np.float64]
"""An array of floats (numpy ``float64``)."""


def default_point(
    *,
    short_term_liabilities: float,
    long_term_liabilities: float,
    short_term_share: float = 1.0,
    long_term_share: float = 0.5,
) -> float:
    """DP = a x STL + b x LTL [currency units] (common practice: a = 1, b = 0.5).

    Parameters
    ----------
    short_term_liabilities : float
        Short-term liabilities of the latest year [currency units].
    long_term_liabilities : float
        Long-term liabilities of the latest year [currency units].
    short_term_share : float, optional
        Share a of short-term liabilities in the default point [fraction], in [0, 1].
    long_term_share : float, optional
        Share b of long-term liabilities in the default point [fraction], in [0, 1].

    Returns
    -------
    float
        The default point DP [currency units].

    Raises
    ------
    InputError
        If an input is outside its allowed range (carries the field, the value and the allowed text).
    """
    for name, value in (("short_term_share", short_term_share), ("long_term_share", long_term_share)):
        if not (0 <= value <= 1):
            raise InputError(f"pd.default_point.{name}", value, "a number from 0 to 1")
    return short_term_share * short_term_liabilities + long_term_share * long_term_liabilities


@overload
def distance_to_default(
    *, asset_value: float, default_point: float, asset_return: float, asset_volatility: float, horizon_years: float
) -> float: ...
@overload
def distance_to_default(
    *,
    asset_value: npt.ArrayLike,
    default_point: npt.ArrayLike,
    asset_return: npt.ArrayLike,
    asset_volatility: npt.ArrayLike,
    horizon_years: npt.ArrayLike,
) -> float | FloatArray: ...
def distance_to_default(
    *,
    asset_value: npt.ArrayLike,
    default_point: npt.ArrayLike,
    asset_return: npt.ArrayLike,
    asset_volatility: npt.ArrayLike,
    horizon_years: npt.ArrayLike,
) -> float | FloatArray:
    """DD = (ln(V/DP) + (mu - s^2/2) T) / (s sqrt T) [standard deviations]. Broadcasts over arrays.

    Parameters
    ----------
    asset_value : npt.ArrayLike
        V, the value of the assets [currency units], > 0; a number or an array.
    default_point : npt.ArrayLike
        DP, the default point [currency units], > 0; a number or an array.
    asset_return : npt.ArrayLike
        mu, the expected asset return [1/year]; a number or an array.
    asset_volatility : npt.ArrayLike
        s, annual volatility of the asset value [1/sqrt(year), e.g. 0.25], > 0; a number or an array.
    horizon_years : npt.ArrayLike
        T, the horizon [years], > 0; a number or an array.

    Returns
    -------
    float | FloatArray
        DD [standard deviations]: a float for scalar inputs, else an array.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    v = np.asarray(asset_value, dtype=float)
    dp = np.asarray(default_point, dtype=float)
    s = np.asarray(asset_volatility, dtype=float)
    t = np.asarray(horizon_years, dtype=float)
    if np.any(v <= 0) or np.any(dp <= 0):
        raise ValueError(
            f"asset value and default point must both be above 0 (got asset value {v!r}, default point {dp!r})"
        )
    if np.any(s <= 0) or np.any(t <= 0):
        raise ValueError(f"asset volatility and horizon must be above 0 (got {s!r}, {t!r})")
    dd = (np.log(v) - np.log(dp) + (np.asarray(asset_return, dtype=float) - s**2 / 2) * t) / (s * np.sqrt(t))
    return float(dd) if dd.ndim == 0 else dd


@overload
def pd_from_distance(distance: float) -> float: ...
@overload
def pd_from_distance(distance: npt.ArrayLike) -> float | FloatArray: ...
def pd_from_distance(distance: npt.ArrayLike) -> float | FloatArray:
    """PD = N(-DD), the standard normal CDF (scipy.special.ndtr).

    Parameters
    ----------
    distance : npt.ArrayLike
        Distance to default DD [standard deviations]; a number or an array.

    Returns
    -------
    float | FloatArray
        PD = N(-DD) [fraction]: a float for a scalar input, else an array.
    """
    out = ndtr(-np.asarray(distance, dtype=float))
    return float(out) if np.ndim(out) == 0 else out


@dataclass(frozen=True)
class BalanceSheetPd:
    """Every quantity of the balance-sheet structural PD."""

    asset_value: float
    """V: latest total assets [currency units]"""
    asset_growth: float
    """g [1/year]"""
    asset_volatility: float
    """s [1/sqrt(year)]"""
    asset_return: float
    """mu = g + s^2/2 [1/year]"""
    short_term_liabilities: float
    """Latest [currency units]"""
    long_term_liabilities: float
    """Latest [currency units]"""
    short_term_share: float
    """a [fraction]"""
    long_term_share: float
    """b [fraction]"""
    default_point: float
    """DP [currency units]"""
    horizon_years: float
    """T [years]"""
    distance_to_default: float
    """Distance to default DD [standard deviations]."""
    pd: float
    """N(-DD) [fraction]"""


def balance_sheet_pd(
    *,
    asset_value: float,
    asset_growth: float,
    asset_volatility: float,
    short_term_liabilities: float,
    long_term_liabilities: float,
    short_term_share: float = 1.0,
    long_term_share: float = 0.5,
    horizon_years: float = 1.0,
) -> BalanceSheetPd:
    """Balance-sheet PD with mu = g + s^2/2, so the log-asset drift mu - s^2/2 equals g.

    Parameters
    ----------
    asset_value : float
        V, latest total assets [currency units].
    asset_growth : float
        g, annual growth of the log asset value [1/year].
    asset_volatility : float
        s, annual volatility of the asset value [1/sqrt(year), e.g. 0.25].
    short_term_liabilities : float
        Short-term liabilities of the latest year [currency units].
    long_term_liabilities : float
        Long-term liabilities of the latest year [currency units].
    short_term_share : float, optional
        Share a of short-term liabilities in the default point [fraction], in [0, 1].
    long_term_share : float, optional
        Share b of long-term liabilities in the default point [fraction], in [0, 1].
    horizon_years : float, optional
        Horizon T of the PD [years].

    Returns
    -------
    BalanceSheetPd
        Every quantity of the calculation.

    Raises
    ------
    InputError
        If an input is outside its allowed range (carries the field, the value and the allowed text).
    """
    dp = default_point(
        short_term_liabilities=short_term_liabilities,
        long_term_liabilities=long_term_liabilities,
        short_term_share=short_term_share,
        long_term_share=long_term_share,
    )
    if dp <= 0:
        raise InputError("pd.default_point", dp, "shares and liabilities giving a default point above 0")
    mu = asset_growth + asset_volatility**2 / 2
    dd = distance_to_default(
        asset_value=asset_value,
        default_point=dp,
        asset_return=mu,
        asset_volatility=asset_volatility,
        horizon_years=horizon_years,
    )
    return BalanceSheetPd(
        asset_value=asset_value,
        asset_growth=asset_growth,
        asset_volatility=asset_volatility,
        asset_return=mu,
        short_term_liabilities=short_term_liabilities,
        long_term_liabilities=long_term_liabilities,
        short_term_share=short_term_share,
        long_term_share=long_term_share,
        default_point=dp,
        horizon_years=horizon_years,
        distance_to_default=dd,
        pd=pd_from_distance(dd),
    )


@dataclass(frozen=True)
class PdTermStructure:
    """Cumulative and marginal PD by year [fraction]; ``basis`` says how it was built."""

    years: tuple[float, ...]
    """Years 1, 2, ... [years]."""
    cumulative: tuple[float, ...]
    """Cumulative PD to each year [fraction]."""
    marginal: tuple[float, ...]
    """cumulative(t) - cumulative(t-1) [fraction]"""
    conditional: tuple[float, ...]
    """marginal / survival to t-1, the annual hazard [fraction]"""
    basis: str
    """How the term structure was built, in words."""
    running_max_from: float | None = None
    """Year after which the model's cumulative PD fell and the running maximum was taken
    (marginal PD 0 from there on) [years]; None when it never fell."""


def structural_term_structure(
    *, asset_value: float, default_point: float, log_drift: float, asset_volatility: float, years: int, basis: str
) -> PdTermStructure:
    """Structural PD term structure: cumulative PD(t) = N(-(ln(V/DP) + m t)/(s sqrt t)), t = 1..years.

    m is the log-asset drift (g on the balance sheet; r - s^2/2 risk-neutral in the market model).
    The default point is held at today's value: a simplification stated in the memo's cautions.

    Parameters
    ----------
    asset_value : float
        V, the value of the assets [currency units].
    default_point : float
        DP, the default point (debt barrier) [currency units].
    log_drift : float
        m, the drift of the log asset value [1/year]: g on the balance sheet, r - s^2/2 risk-neutral.
    asset_volatility : float
        s, annual volatility of the asset value [1/sqrt(year), e.g. 0.25].
    years : int
        Number of years of the term structure, from 1.
    basis : str
        How the term structure was built, in words (printed with it).

    Returns
    -------
    PdTermStructure
        Cumulative, marginal and conditional PD by year [fraction].
    """
    t = np.arange(1, years + 1, dtype=float)
    dd = (math.log(asset_value) - math.log(default_point) + log_drift * t) / (asset_volatility * np.sqrt(t))
    cumulative = np.asarray(pd_from_distance(dd))
    held = np.maximum.accumulate(cumulative)
    fell = np.flatnonzero(held > cumulative)
    out = _from_cumulative(t, held, basis)
    if fell.size:
        # The structural PD peaks and then falls once the drift outruns the volatility: a
        # cumulative PD cannot fall, so it is held at its running maximum (stated in a caution).
        return replace(out, running_max_from=float(t[fell[0] - 1]))
    return out


def constant_hazard_term_structure(*, pd: float, horizon_years: float, years: int, basis: str) -> PdTermStructure:
    """Cumulative PD(t) = 1 - (1 - PD)^(t / T): a constant annual hazard reproducing PD at T.

    Parameters
    ----------
    pd : float
        PD over ``horizon_years`` [fraction], in [0, 1].
    horizon_years : float
        Horizon T of the PD [years].
    years : int
        Number of years of the term structure, from 1.
    basis : str
        How the term structure was built, in words (printed with it).

    Returns
    -------
    PdTermStructure
        Cumulative, marginal and conditional PD by year [fraction].
    """
    t = np.arange(1, years + 1, dtype=float)
    cumulative = 1.0 - (1.0 - pd) ** (t / horizon_years) if pd < 1 else np.ones_like(t)
    return _from_cumulative(t, cumulative, basis)


def _from_cumulative(t: FloatArray, cumulative: FloatArray, basis: str) -> PdTermStructure:
    previous = np.concatenate([[0.0], cumulative[:-1]])
    marginal = cumulative - previous
    survival = 1.0 - previous
    conditional = np.divide(marginal, survival, out=np.ones_like(marginal), where=survival > 0)
    return PdTermStructure(
        years=tuple(t.tolist()),
        cumulative=tuple(cumulative.tolist()),
        marginal=tuple(marginal.tolist()),
        conditional=tuple(conditional.tolist()),
        basis=basis,
    )
