"""Regulatory capital for one corporate exposure: the Basel IRB risk-weight function.

Source: Basel Committee on Banking Supervision, "International Convergence of
Capital Measurement and Capital Standards: A Revised Framework", June 2006
(Basel II), paragraphs 272 (corporate risk-weight function), 273-274 (firm-size
adjustment for SMEs), 285 (PD floor of 0.03 %), 318-320 (effective maturity
floor of 1 year and cap of 5 years) and 44 (the 1.06 scaling factor).
The Basel III revision (BCBS, "Basel III: Finalising post-crisis reforms",
December 2017; consolidated as CRE32.4 of the Basel Framework, effective
1 January 2023) raises the corporate PD floor to 0.05 %, the default here.

Formula (PD, LGD as fractions, M in years, S = annual sales in EUR millions):

    w    = (1 - exp(-50 PD)) / (1 - exp(-50))
    R    = 0.12 w + 0.24 (1 - w)  -  0.04 (1 - (S - 5) / 45)   [last term only for S < 50]
    b    = (0.11852 - 0.05478 ln PD)^2
    K    = [LGD N((G(PD) + sqrt(R) G(0.999)) / sqrt(1 - R)) - PD LGD]
           (1 + (M - 2.5) b) / (1 - 1.5 b)
    RW   = 12.5 K  [x 1.06 where the scaling factor applies]

N is the standard normal distribution function and G its inverse. The first
term inside the bracket is the PD conditional on a systematic factor at its
0.999 quantile (the Vasicek one-factor model); subtracting PD LGD leaves the
unexpected part only, since expected loss is covered by provisions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import cast

import numpy as np
from numpy.typing import ArrayLike, NDArray
from obligor_memo.engine import ENGINE_VERSION
from scipy.special import ndtr, ndtri  # standard normal CDF and its inverse (as scipy.stats.norm)

FloatOrArray = float | NDArray[np.float64]
BoolOrArray = bool | NDArray[np.bool_]

BASEL_II_PD_FLOOR = 0.0003  # Basel II para 285
BASEL_III_PD_FLOOR = 0.0005  # CRE32.4 (December 2017 reforms)
BASEL_SCALING_FACTOR = 1.06  # Basel II para 44
MATURITY_FLOOR_YEARS = 1.0  # Basel II para 320
MATURITY_CAP_YEARS = 5.0  # Basel II para 320
SALES_FLOOR_EUR_MILLIONS = 5.0  # Basel II para 273
SALES_CEILING_EUR_MILLIONS = 50.0  # Basel II para 273

# Below this PD, b exceeds 2/3 and the maturity adjustment's denominator
# 1 - 1.5 b reaches zero: the published function has no meaning there.
_PD_SINGULAR = math.exp((0.11852 - math.sqrt(2.0 / 3.0)) / 0.05478)


@dataclass(frozen=True)
class IrbCapital:
    """Every step of the IRB corporate capital calculation.

    Fields are Python scalars when all inputs were scalars, otherwise
    read-only numpy arrays of the broadcast shape.
    """

    pd_input: FloatOrArray
    """PD as given [fraction]."""
    pd_floor: float
    """Regulatory PD floor applied [fraction]."""
    pd_used: FloatOrArray
    """Max(pd_input, pd_floor) [fraction]."""
    floor_binds: BoolOrArray
    """True where the floor raised the PD."""
    defaulted: BoolOrArray
    """True where pd_used = 1 (K = 0, see `irb_corporate_capital`)."""
    lgd: FloatOrArray
    """Loss given default [fraction]."""
    maturity_input: FloatOrArray
    """Effective maturity as given [years]."""
    maturity_used: FloatOrArray
    """Maturity clamped to [1, 5] [years]."""
    maturity_clamped: BoolOrArray
    """True where the clamp changed the maturity."""
    annual_sales_input: FloatOrArray | None
    """Annual sales as given, None when not given [EUR millions]."""
    annual_sales_used: FloatOrArray | None
    """Sales clamped to [5, 50], None when not given [EUR millions]."""
    sales_clamped: BoolOrArray
    """True where sales below EUR 5 million were raised to 5."""
    correlation_before_size_adjustment: FloatOrArray
    """0.12 w + 0.24 (1 - w) [fraction]."""
    firm_size_adjustment: FloatOrArray
    """Amount subtracted from the correlation, 0 when no sales were given or sales >= EUR 50 million [fraction]."""
    correlation: FloatOrArray
    """Asset correlation R used [fraction]."""
    confidence: float
    """Quantile of the systematic factor [fraction]."""
    conditional_pd: FloatOrArray
    """PD given the systematic factor at that quantile [fraction]."""
    b: FloatOrArray
    """Maturity slope (0.11852 - 0.05478 ln PD)^2 [1/year]."""
    maturity_adjustment: FloatOrArray
    """(1 + (M - 2.5) b) / (1 - 1.5 b) [dimensionless]."""
    k_floored: BoolOrArray
    """True where the bracket was negative (possible only at low confidence levels) and K was set to 0."""
    k: FloatOrArray
    """Capital requirement per unit of EAD [fraction]."""
    scaling_factor: float
    """Multiplier on risk-weighted assets [dimensionless]."""
    risk_weight: FloatOrArray
    """12.5 K scaling_factor; RWA = risk_weight x EAD [fraction]."""
    engine_version: str
    """Version of the engine that produced the result."""


def _check_range(
    name: str,
    value: NDArray[np.float64],
    *,
    low: float,
    high: float,
    low_open: bool,
    high_open: bool,
    unit: str,
) -> None:
    """Raise ValueError naming the first value outside the interval (NaN included)."""
    above_low = value > low if low_open else value >= low
    below_high = value < high if high_open else value <= high
    ok = above_low & below_high
    if not np.all(ok):
        bad_index = np.flatnonzero(~ok.ravel())[0]
        bad = value.ravel()[bad_index]
        where = "" if value.ndim == 0 else f" (element {bad_index})"
        interval = f"{'(' if low_open else '['}{low:g}, {high:g}{')' if high_open else ']'}"
        raise ValueError(f"{name} = {float(bad)!r}{where} is outside the allowed range {interval} {unit}")


def _as_float_array(name: str, value: ArrayLike) -> NDArray[np.float64]:
    try:
        return np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError) as error:
        raise ValueError(f"{name} = {value!r} is not a number or array of numbers") from error


def _as_scalar(name: str, value: float) -> float:
    array = _as_float_array(name, value)
    if array.ndim != 0:
        raise ValueError(f"{name} = {value!r} must be a single number, not an array")
    return float(array)


def _freeze(value: NDArray, scalar: bool) -> FloatOrArray | BoolOrArray:
    if scalar:
        return value.item()
    frozen = np.array(value)
    frozen.setflags(write=False)
    return frozen


def irb_corporate_capital(
    *,
    pd: ArrayLike,
    lgd: ArrayLike,
    maturity_years: ArrayLike,
    annual_sales_eur_millions: ArrayLike | None = None,
    pd_floor: float = BASEL_III_PD_FLOOR,
    scaling_factor: float = 1.0,
    confidence: float = 0.999,
) -> IrbCapital:
    """Capital requirement K and risk weight of a corporate exposure (Basel IRB).

    Implements Basel II paragraph 272 with the firm-size adjustment of
    paragraphs 273-274 and the maturity bounds of paragraph 320; see the module
    docstring for the formula. Inputs broadcast like numpy arrays.

    Parameters
    ----------
    pd : ArrayLike
        One-year probability of default, in (0, 1]; 1 means in default [fraction].
    lgd : ArrayLike
        Loss given default, in [0, 1] [fraction].
    maturity_years : ArrayLike
        Effective maturity M, > 0; clamped to [1, 5] (para 320) [years].
    annual_sales_eur_millions : ArrayLike | None, optional
        Consolidated annual sales S, > 0, or None for no firm-size adjustment. Below
        5 it counts as 5 (para 273); at 50 or more no adjustment applies. Para 274 lets a supervisor allow total
        assets instead of sales; pass that figure here if so [EUR millions].
    pd_floor : float, optional
        Lower bound on the PD, in [0, 0.01]. Default 0.05 % (CRE32.4, Basel III); use 0.0003 for
        Basel II (para 285), 0 for none [fraction].
    scaling_factor : float, optional
        Multiplier on RWA, in [1, 1.1]; Basel II para 44 sets 1.06, the default 1.0 leaves it
        out [dimensionless].
    confidence : float, optional
        Quantile of the systematic factor, in (0.5, 1); the regulatory value is 0.999
        [fraction].

    Returns
    -------
    IrbCapital
        IrbCapital with every intermediate; `k` [fraction of EAD] and `risk_weight` [fraction] are
        the results.

    Raises
    ------
    ValueError
        An argument is outside its allowed range (the message names the argument, the value and the range), or
        the floored PD is so small (< about 2.9e-6) that 1 - 1.5 b <= 0.

    Notes
    -----
    Defaulted exposures (PD = 1): paragraph 272 sets K to the greater of
    zero and LGD minus the bank's best estimate of expected loss (EL_BE,
    para 471). That estimate lies outside this function, so a defaulted
    exposure gets K = 0 here, which is exact when the LGD given equals
    EL_BE; where a bank holds LGD above EL_BE, the difference is
    additional capital to add on top.

    At confidence levels well below 0.999 (for example 0.8 with a PD of
    0.01 %) the conditional PD can fall under the PD itself; a negative
    capital requirement has no meaning, so K is then floored at 0
    (k_floored).
    """
    pd_arr = _as_float_array("pd", pd)
    lgd_arr = _as_float_array("lgd", lgd)
    maturity_arr = _as_float_array("maturity_years", maturity_years)
    _check_range("pd", pd_arr, low=0.0, high=1.0, low_open=True, high_open=False, unit="[fraction]")
    _check_range("lgd", lgd_arr, low=0.0, high=1.0, low_open=False, high_open=False, unit="[fraction]")
    _check_range("maturity_years", maturity_arr, low=0.0, high=math.inf, low_open=True, high_open=True, unit="[years]")
    pd_floor = _as_scalar("pd_floor", pd_floor)
    scaling_factor = _as_scalar("scaling_factor", scaling_factor)
    confidence = _as_scalar("confidence", confidence)
    _check_range(
        "pd_floor", np.asarray(pd_floor), low=0.0, high=0.01, low_open=False, high_open=False, unit="[fraction]"
    )
    _check_range(
        "scaling_factor",
        np.asarray(scaling_factor),
        low=1.0,
        high=1.1,
        low_open=False,
        high_open=False,
        unit="[dimensionless]",
    )
    _check_range(
        "confidence", np.asarray(confidence), low=0.5, high=1.0, low_open=True, high_open=True, unit="[fraction]"
    )
    inputs = [pd_arr, lgd_arr, maturity_arr]
    sales_arr: NDArray[np.float64] | None = None
    if annual_sales_eur_millions is not None:
        sales_arr = _as_float_array("annual_sales_eur_millions", annual_sales_eur_millions)
        _check_range(
            "annual_sales_eur_millions",
            sales_arr,
            low=0.0,
            high=math.inf,
            low_open=True,
            high_open=True,
            unit="[EUR millions]",
        )
        inputs.append(sales_arr)
    scalar = all(array.ndim == 0 for array in inputs)
    try:
        broadcast = np.broadcast_arrays(*inputs)
    except ValueError as error:
        shapes = ", ".join(str(array.shape) for array in inputs)
        raise ValueError(f"pd, lgd, maturity_years and sales have shapes {shapes} that do not broadcast") from error
    pd_arr, lgd_arr, maturity_arr = broadcast[:3]

    pd_used = np.maximum(pd_arr, pd_floor)
    if np.any(pd_used < _PD_SINGULAR):
        bad = pd_arr.ravel()[np.flatnonzero(pd_used.ravel() < _PD_SINGULAR)[0]]
        raise ValueError(
            f"pd = {float(bad)!r} (with pd_floor = {pd_floor:g}) is below {_PD_SINGULAR:.3g}, where the "
            f"maturity adjustment's denominator 1 - 1.5 b reaches zero; allowed range "
            f"[{_PD_SINGULAR:.3g}, 1] [fraction] after the floor"
        )
    floor_binds = pd_arr < pd_floor
    defaulted = pd_used >= 1.0
    maturity_used = np.clip(maturity_arr, MATURITY_FLOOR_YEARS, MATURITY_CAP_YEARS)
    maturity_clamped = maturity_used != maturity_arr

    weight = -np.expm1(-50.0 * pd_used) / -math.expm1(-50.0)
    correlation_base = 0.12 * weight + 0.24 * (1.0 - weight)
    if sales_arr is None:
        sales_used = None
        sales_clamped = np.zeros(pd_used.shape, dtype=bool)
        size_adjustment = np.zeros(pd_used.shape)
    else:
        sales_in = broadcast[3]
        sales_used = np.clip(sales_in, SALES_FLOOR_EUR_MILLIONS, SALES_CEILING_EUR_MILLIONS)
        # Only small sales are "clamped" in a sense worth flagging: above EUR 50
        # million the adjustment simply does not apply (para 273).
        sales_clamped = sales_in < SALES_FLOOR_EUR_MILLIONS
        size_adjustment = 0.04 * (1.0 - (sales_used - SALES_FLOOR_EUR_MILLIONS) / 45.0)
    correlation = correlation_base - size_adjustment

    b = (0.11852 - 0.05478 * np.log(pd_used)) ** 2
    maturity_adjustment = (1.0 + (maturity_used - 2.5) * b) / (1.0 - 1.5 * b)
    with np.errstate(divide="ignore", invalid="ignore"):
        # G(1) is +inf; the defaulted case is set explicitly below.
        conditional_pd = ndtr((ndtri(pd_used) + np.sqrt(correlation) * ndtri(confidence)) / np.sqrt(1.0 - correlation))
    conditional_pd = np.where(defaulted, 1.0, conditional_pd)
    bracket = lgd_arr * conditional_pd - pd_used * lgd_arr
    k_floored = (bracket < 0.0) & ~defaulted
    k = np.where(defaulted, 0.0, np.maximum(bracket, 0.0) * maturity_adjustment)
    risk_weight = 12.5 * k * scaling_factor

    def out(value: NDArray) -> FloatOrArray:
        return cast(FloatOrArray, _freeze(np.asarray(value), scalar))

    def flag(value: NDArray) -> BoolOrArray:
        return cast(BoolOrArray, _freeze(np.asarray(value), scalar))

    return IrbCapital(
        pd_input=out(pd_arr),
        pd_floor=pd_floor,
        pd_used=out(pd_used),
        floor_binds=flag(floor_binds),
        defaulted=flag(defaulted),
        lgd=out(lgd_arr),
        maturity_input=out(maturity_arr),
        maturity_used=out(maturity_used),
        maturity_clamped=flag(maturity_clamped),
        annual_sales_input=None if sales_arr is None else out(broadcast[3]),
        annual_sales_used=None if sales_used is None else out(sales_used),
        sales_clamped=flag(sales_clamped),
        correlation_before_size_adjustment=out(correlation_base),
        firm_size_adjustment=out(size_adjustment),
        correlation=out(correlation),
        confidence=confidence,
        conditional_pd=out(conditional_pd),
        b=out(b),
        maturity_adjustment=out(maturity_adjustment),
        k_floored=flag(k_floored),
        k=out(k),
        scaling_factor=scaling_factor,
        risk_weight=out(risk_weight),
        engine_version=ENGINE_VERSION,
    )


def irb_corporate_correlation(pd: ArrayLike, annual_sales_eur_millions: float | None = None) -> FloatOrArray:
    """The IRB corporate asset correlation R of a PD (Basel II para 272-273; CRE31.5) [fraction].

    R = 0.12 w + 0.24 (1 - w), w = (1 - exp(-50 PD)) / (1 - exp(-50)), less the firm-size
    adjustment 0.04 (1 - (S - 5) / 45) for sales S below EUR 50 million (S floored at 5).

    Parameters
    ----------
    pd : ArrayLike
        One-year probability of default [fraction]; a number or an array.
    annual_sales_eur_millions : float | None, optional
        Consolidated annual sales S for the firm-size adjustment [EUR millions]; None for
        none.

    Returns
    -------
    FloatOrArray
        R [fraction]: a float for scalar inputs, else an array.
    """
    pd_arr = np.asarray(pd, dtype=np.float64)
    weight = -np.expm1(-50.0 * pd_arr) / -math.expm1(-50.0)
    correlation = 0.12 * weight + 0.24 * (1.0 - weight)
    if annual_sales_eur_millions is not None:
        sales = min(max(float(annual_sales_eur_millions), SALES_FLOOR_EUR_MILLIONS), SALES_CEILING_EUR_MILLIONS)
        correlation = correlation - 0.04 * (1.0 - (sales - SALES_FLOOR_EUR_MILLIONS) / 45.0)
    return float(correlation) if correlation.ndim == 0 else correlation


def single_factor_capital(
    *,
    pd: ArrayLike,
    lgd: ArrayLike,
    correlation: ArrayLike,
    confidence: float = 0.999,
    maturity_years: ArrayLike | None = None,
) -> FloatOrArray:
    """One-factor (Vasicek, asymptotic single risk factor) capital per unit of EAD [fraction].

    K = LGD [N((G(PD) + sqrt(rho) G(q)) / sqrt(1 - rho)) - PD], times the IRB maturity
    adjustment (1 + (M - 2.5) b) / (1 - 1.5 b) when ``maturity_years`` is given (Vasicek,
    "Loan portfolio value", Risk, December 2002; Gordy (2003), "A risk-factor model foundation
    for ratings-based bank capital rules", J. Financial Intermediation 12). With the IRB
    correlation, q = 0.999 and M = 1 this is the IRB K of :func:`irb_corporate_capital`.
    The marginal capital of one loan in a large, fine-grained portfolio: continuous and
    increasing in PD below the PD at which K peaks, unlike the standalone quantile of one name.

    Parameters
    ----------
    pd : ArrayLike
        One-year PD in [0, 1] [fraction]; 0 and 1 give 0 (no loss, or a certain loss that EL covers).
    lgd : ArrayLike
        Loss given default in [0, 1] [fraction].
    correlation : ArrayLike
        Asset correlation in (0, 1) [fraction].
    confidence : float, optional
        Quantile of the systematic factor in (0.5, 1) [fraction].
    maturity_years : ArrayLike | None, optional
        Effective maturity, clamped to [1, 5] [years]; None: no adjustment.

    Returns
    -------
    FloatOrArray
        K per unit of EAD [fraction]: a float for scalar inputs, else an array.
    """
    pd_arr = _as_float_array("pd", pd)
    lgd_arr = _as_float_array("lgd", lgd)
    rho = _as_float_array("correlation", correlation)
    _check_range("pd", pd_arr, low=0.0, high=1.0, low_open=False, high_open=False, unit="[fraction]")
    _check_range("lgd", lgd_arr, low=0.0, high=1.0, low_open=False, high_open=False, unit="[fraction]")
    _check_range("correlation", rho, low=0.0, high=1.0, low_open=True, high_open=True, unit="[fraction]")
    _check_range(
        "confidence", np.asarray(float(confidence)), low=0.5, high=1.0, low_open=True, high_open=True, unit="[fraction]"
    )
    inside = (pd_arr > 0.0) & (pd_arr < 1.0)
    p = np.where(inside, pd_arr, 0.5)
    conditional = ndtr((ndtri(p) + np.sqrt(rho) * ndtri(confidence)) / np.sqrt(1.0 - rho))
    k = np.where(inside, np.maximum(lgd_arr * (conditional - p), 0.0), 0.0)
    if maturity_years is not None:
        m = np.clip(_as_float_array("maturity_years", maturity_years), MATURITY_FLOOR_YEARS, MATURITY_CAP_YEARS)
        b = (0.11852 - 0.05478 * np.log(np.maximum(p, _PD_SINGULAR))) ** 2
        k = k * (1.0 + (m - 2.5) * b) / (1.0 - 1.5 * b)
    return float(k) if np.ndim(k) == 0 else k
