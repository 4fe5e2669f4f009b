"""The naive distance to default of Bharath and Shumway (2008), a cross-check of the Merton solve.

Bharath, S. T. and Shumway, T. (2008), "Forecasting Default with the Merton Distance to Default
Model", Review of Financial Studies 21(3): no equations to solve; debt volatility is proxied by
0.05 + 0.25 sigma_E and the asset value by E + F.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike
from obligor_memo.engine import ENGINE_VERSION
from obligor_memo.engine.market import FloatArray, _checked, _scalar_or_frozen
from scipy import special


@dataclass(frozen=True, eq=False)
class NaiveDD:
    """Bharath-Shumway (2008) naive distance to default; floats for scalar inputs, else arrays."""

    debt_volatility: float | FloatArray
    """sigma_D [fraction/year^0.5]"""
    asset_value: float | FloatArray
    """V = E + F [currency units]"""
    asset_volatility: float | FloatArray
    """sigma_V [fraction/year^0.5]"""
    drift: float | FloatArray
    """mu [1/year]"""
    drift_source: Literal["trailing_equity_return", "risk_free_rate"]
    """Which input gave the drift: the trailing equity return or the risk-free rate."""
    distance_to_default: float | FloatArray
    """[standard deviations]"""
    pd: float | FloatArray
    """N(-DD) over the horizon [fraction]"""
    equity_value: float | FloatArray
    """E [currency units]"""
    equity_volatility: float | FloatArray
    """sigma_E [fraction/year^0.5]"""
    face_value_debt: float | FloatArray
    """F [currency units]"""
    horizon_years: float | FloatArray
    """T [years]"""
    trailing_equity_return: float | FloatArray | None
    """[fraction]"""
    risk_free_rate: float | FloatArray | None
    """[1/year]"""
    engine_version: str = ENGINE_VERSION
    """Version of the engine that produced the result."""


def naive_distance_to_default(
    *,
    equity_value: ArrayLike,
    equity_volatility: ArrayLike,
    face_value_debt: ArrayLike,
    horizon_years: ArrayLike,
    trailing_equity_return: ArrayLike | None = None,
    risk_free_rate: ArrayLike | None = None,
) -> NaiveDD:
    """Naive distance to default and PD, Bharath and Shumway (2008), section on the naive model.

    sigma_D = 0.05 + 0.25 sigma_E;  V = E + F;
    sigma_V = E/(E+F) sigma_E + F/(E+F) sigma_D;
    DD = (ln((E+F)/F) + (mu - sigma_V^2/2) T) / (sigma_V sqrt T);  PD = N(-DD).

    Parameters
    ----------
    equity_value : ArrayLike
        E [currency units].
    equity_volatility : ArrayLike
        sigma_E [fraction/year^0.5].
    face_value_debt : ArrayLike
        F [currency units].
    horizon_years : ArrayLike
        T [years].
    trailing_equity_return : ArrayLike | None, optional
        mu, the firm's equity return over the past year [fraction], as in the paper.
    risk_free_rate : ArrayLike | None, optional
        r [1/year]; the drift used only when no trailing return is given (recorded in `drift_source`).

    Returns
    -------
    NaiveDD
        Every quantity of the calculation: asset value and volatility, DD and PD, and the drift used.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    E = _checked("equity_value", equity_value)
    sE = _checked("equity_volatility", equity_volatility)
    F = _checked("face_value_debt", face_value_debt)
    T = _checked("horizon_years", horizon_years)
    source: Literal["trailing_equity_return", "risk_free_rate"]
    if trailing_equity_return is not None:
        source = "trailing_equity_return"
        mu = _checked(source, trailing_equity_return)
    elif risk_free_rate is not None:
        source = "risk_free_rate"
        mu = _checked(source, risk_free_rate)
    else:
        raise ValueError(
            "trailing_equity_return and risk_free_rate: both missing; allowed: "
            "give the trailing one-year equity return, or the risk-free rate "
            "as the fall-back drift"
        )
    try:
        np.broadcast_shapes(E.shape, sE.shape, F.shape, T.shape, mu.shape)
    except ValueError:
        raise ValueError("input shapes do not broadcast together; give scalars or arrays of one common shape") from None
    sigma_d = 0.05 + 0.25 * sE
    V = E + F
    sigma_v = E / V * sE + F / V * sigma_d
    dd = (np.log(V / F) + (mu - 0.5 * sigma_v * sigma_v) * T) / (sigma_v * np.sqrt(T))
    out = _scalar_or_frozen
    return NaiveDD(
        debt_volatility=out(sigma_d),
        asset_value=out(V),
        asset_volatility=out(sigma_v),
        drift=out(mu),
        drift_source=source,
        distance_to_default=out(dd),
        pd=out(special.ndtr(-dd)),
        equity_value=out(E),
        equity_volatility=out(sE),
        face_value_debt=out(F),
        horizon_years=out(T),
        trailing_equity_return=out(mu) if source == "trailing_equity_return" else None,
        risk_free_rate=None if risk_free_rate is None else out(_checked("risk_free_rate", risk_free_rate)),
    )
