"""Market-implied probability of default for a listed borrower.

Merton (1974), "On the Pricing of Corporate Debt: The Risk Structure of Interest
Rates", Journal of Finance 29(2): the firm's equity is a European call on its
assets V (volatility s) struck at the default point D, due at the horizon T:

    E = V N(d1) - D e^{-rT} N(d2),      sE E = N(d1) s V,
    d1 = (ln(V/D) + (r + s^2/2) T) / (s sqrt T),   d2 = d1 - s sqrt T.

Given the observed E and sE the two equations are solved for V and s. Under the
risk-neutral measure PD = N(-d2); with a physical asset drift mu the distance to
default is DD = (ln(V/D) + (mu - s^2/2) T) / (s sqrt T) and PD = N(-DD).

The "naive" distance to default of Bharath and Shumway (2008), which avoids the
solve altogether, is in :mod:`engine.naive_dd`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal, TypeVar

import numpy as np
from numpy.typing import ArrayLike, NDArray
from obligor_memo.engine import ENGINE_VERSION
from scipy import special

Measure = Literal["risk_neutral", "physical"]
FloatArray = NDArray[np.float64]

# Relative residual at which Newton stops; above the hand-over level after the
# first Newton pass the bracketed search takes over; the acceptance level is what
# a result must meet before it is returned at all (cancellation in
# V N(d1) - K N(d2) grows with K/E, so that bar sits well above machine precision).
_NEWTON_TOLERANCE = 1e-12
_HAND_OVER_TOLERANCE = 1e-11
_ACCEPT_TOLERANCE = 1e-9
# Newton from the corner start needs 3-6 steps for ordinary borrowers; more
# means extreme leverage and volatility, where the bracketed search is faster.
_MAX_NEWTON_ITERATIONS = 10
_MAX_HALVINGS = 40
_MAX_LOG_STEP = 1.0
_MAX_BRACKET_DOUBLINGS = 64
_MAX_BRACKET_ITERATIONS = 200
_SQRT_2PI = math.sqrt(2.0 * math.pi)

# name -> (lower, lower allowed?, upper, upper allowed?, allowed range in words)
_LIMITS: dict[str, tuple[float, bool, float, bool, str]] = {
    "equity_value": (0.0, False, math.inf, False, "a finite amount > 0 [currency]"),
    "default_point": (0.0, False, math.inf, False, "a finite amount > 0 [currency]"),
    "face_value_debt": (0.0, False, math.inf, False, "a finite amount > 0 [currency]"),
    "asset_value": (0.0, False, math.inf, False, "a finite amount > 0 [currency]"),
    "equity_volatility": (0.0, False, 10.0, True, "an annual fraction in (0, 10], e.g. 0.40 for 40 %"),
    "asset_volatility": (0.0, False, 10.0, True, "an annual fraction in (0, 10], e.g. 0.25 for 25 %"),
    "risk_free_rate": (-0.5, True, 1.0, True, "a continuously compounded rate in [-0.5, 1] [1/year], e.g. 0.03"),
    "horizon_years": (0.0, False, 50.0, True, "a number of years in (0, 50]"),
    "asset_drift": (-1.0, True, 1.0, True, "an annual rate in [-1, 1] [1/year], e.g. 0.06"),
    "trailing_equity_return": (-1.0, False, 10.0, True, "a one-year return in (-1, 10] [fraction], e.g. 0.12"),
}


def _as_float_array(name: str, value: ArrayLike) -> FloatArray:
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: got {value!r}; allowed: {_LIMITS[name][4]}") from None


def _bad_mask(name: str, values: FloatArray) -> NDArray[np.bool_]:
    lower, lower_ok, upper, upper_ok, _ = _LIMITS[name]
    with np.errstate(invalid="ignore"):
        above = values >= lower if lower_ok else values > lower
        below = values <= upper if upper_ok else values < upper
    return ~(np.isfinite(values) & above & below)


def _out_of_range_message(name: str, values: FloatArray, flat_index: int) -> str:
    where = f" (element {flat_index})" if values.ndim else ""
    given = float(values.ravel()[flat_index])
    return f"{name}={given!r}{where} is not allowed; allowed: {_LIMITS[name][4]}"


def _checked(name: str, value: ArrayLike) -> FloatArray:
    """The value as a float array; ValueError naming the first bad element."""
    values = _as_float_array(name, value)
    bad = _bad_mask(name, values)
    if bad.any():
        raise ValueError(_out_of_range_message(name, values, int(np.flatnonzero(bad)[0])))
    return values


_Scalar = TypeVar("_Scalar", bound=np.generic)


def _frozen(values: NDArray[_Scalar]) -> NDArray[_Scalar]:
    values = np.array(values)  # own copy, so read-only cannot leak to the caller's array
    values.setflags(write=False)
    return values


def _scalar_or_frozen(values: FloatArray) -> float | FloatArray:
    return float(values) if values.ndim == 0 else _frozen(values)


def merton_equity_value(
    *,
    asset_value: ArrayLike,
    asset_volatility: ArrayLike,
    default_point: ArrayLike,
    risk_free_rate: ArrayLike,
    horizon_years: ArrayLike,
) -> float | FloatArray:
    """Equity as a European call on the firm's assets, Merton (1974).

    E = V N(d1) - D e^{-rT} N(d2), d1 = (ln(V/D) + (r + s^2/2)T)/(s sqrt T), d2 = d1 - s sqrt T.

    Parameters
    ----------
    asset_value : ArrayLike
        V, market value of assets [currency units].
    asset_volatility : ArrayLike
        s, volatility of asset returns [fraction/year^0.5].
    default_point : ArrayLike
        D, debt due at the horizon [currency units].
    risk_free_rate : ArrayLike
        r, continuously compounded [1/year].
    horizon_years : ArrayLike
        T [years].

    Returns
    -------
    float | FloatArray
        E, market value of equity [currency units]; a float for scalar inputs, else an array.
    """
    V = _checked("asset_value", asset_value)
    s = _checked("asset_volatility", asset_volatility)
    D = _checked("default_point", default_point)
    r = _checked("risk_free_rate", risk_free_rate)
    T = _checked("horizon_years", horizon_years)
    sv = s * np.sqrt(T)
    d1 = (np.log(V / D) + (r + 0.5 * s * s) * T) / sv
    return _scalar_or_frozen(V * special.ndtr(d1) - D * np.exp(-r * T) * special.ndtr(d1 - sv))


@dataclass(frozen=True, eq=False)
class MertonBatch:
    """Merton solutions for many borrowers; arrays (read-only) of the broadcast input shape.

    Value arrays are NaN where `converged` is False, and `failures` says why, as
    (flat C-order index, reason) pairs; nothing is left NaN without a reason.
    """

    asset_value: FloatArray
    """V [currency units]"""
    asset_volatility: FloatArray
    """s [fraction/year^0.5]"""
    d1: FloatArray
    """[standard deviations]"""
    d2: FloatArray
    """[standard deviations]"""
    distance_to_default: FloatArray
    """[standard deviations]; d2 when risk-neutral."""
    pd: FloatArray
    """N(-distance_to_default) over the horizon [fraction]"""
    leverage: FloatArray
    """D / V [fraction]"""
    iterations: NDArray[np.int64]
    """Newton steps plus bracketed-search evaluations."""
    residual: FloatArray
    """Larger relative residual of the two equations [fraction]"""
    used_fallback: NDArray[np.bool_]
    """The bracketed search was needed."""
    converged: NDArray[np.bool_]
    """True where the solve met the accuracy bar."""
    failures: tuple[tuple[int, str], ...]
    """(flat C-order index, reason) of every element not converged."""
    equity_value: FloatArray
    """E [currency units]"""
    equity_volatility: FloatArray
    """sE [fraction/year^0.5]"""
    default_point: FloatArray
    """D [currency units]"""
    risk_free_rate: FloatArray
    """r [1/year]"""
    horizon_years: FloatArray
    """T [years]"""
    asset_drift: FloatArray | None
    """mu [1/year]; None when risk-neutral."""
    measure: Measure
    """``risk_neutral`` or ``physical``: the measure of the PD."""
    engine_version: str = ENGINE_VERSION
    """Version of the engine that produced the result."""


@dataclass(frozen=True)
class MertonSolution:
    """One borrower's Merton solution; fields and units as in `MertonBatch`."""

    asset_value: float
    """V [currency units]."""
    asset_volatility: float
    """s [fraction/year^0.5]."""
    d1: float
    """[standard deviations]"""
    d2: float
    """[standard deviations]"""
    distance_to_default: float
    """[standard deviations]; d2 when risk-neutral."""
    pd: float
    """N(-distance_to_default) over the horizon [fraction]."""
    leverage: float
    """D / V [fraction]."""
    iterations: int
    """Newton steps plus bracketed-search evaluations."""
    residual: float
    """Larger relative residual of the two equations [fraction]."""
    solver: Literal["newton", "bracketed"]
    """"bracketed": the fall-back search was needed."""
    equity_value: float
    """E [currency units]."""
    equity_volatility: float
    """sE [fraction/year^0.5]."""
    default_point: float
    """D [currency units]."""
    risk_free_rate: float
    """r [1/year]."""
    horizon_years: float
    """T [years]."""
    asset_drift: float | None
    """mu [1/year]; None when risk-neutral."""
    measure: Measure
    """``risk_neutral`` or ``physical``: the measure of the PD."""
    engine_version: str = ENGINE_VERSION
    """Version of the engine that produced the result."""


def _residuals(
    x: FloatArray, y: FloatArray, E: FloatArray, sE: FloatArray, lnK: FloatArray, sqT: FloatArray
) -> tuple[FloatArray, ...]:
    """Relative residuals of the two equations at x = ln V, y = ln s, plus intermediates."""
    V, s = np.exp(x), np.exp(y)
    sv = s * sqT
    d1 = (x - lnK) / sv + 0.5 * sv  # ln(V/D) + rT = ln V - ln(D e^{-rT})
    d2 = d1 - sv
    N1 = special.ndtr(d1)
    g1 = (V * N1 - np.exp(lnK) * special.ndtr(d2)) / E - 1.0
    g2 = N1 * s * V / (sE * E) - 1.0
    return g1, g2, V, s, d1, d2, N1


def _newton(
    E: FloatArray, sE: FloatArray, lnK: FloatArray, sqT: FloatArray, x: FloatArray, y: FloatArray
) -> tuple[FloatArray, FloatArray, NDArray[np.int64]]:
    """Damped Newton on (x, y) = (ln V, ln s) from the given start, vectorised over borrowers.

    The root lies in E < V < E + K and sE E/(E + K) < s < sE (K = D e^{-rT}):
    a call is worth less than its underlying and more than V - K, and its
    elasticity N(d1) V / E lies between 1 and V/E. Iterates are kept in that box.
    """
    x_lo, x_hi = np.log(E), np.log(E + np.exp(lnK))
    y_lo, y_hi = np.log(sE) + x_lo - x_hi, np.log(sE)
    x, y = np.clip(x, x_lo, x_hi), np.clip(y, y_lo, y_hi)
    iterations = np.zeros(E.shape, dtype=np.int64)
    active = np.arange(E.size)
    for _ in range(_MAX_NEWTON_ITERATIONS):
        if active.size == 0:
            break
        a = active
        g1, g2, V, s, d1, d2, N1 = _residuals(x[a], y[a], E[a], sE[a], lnK[a], sqT[a])
        done = np.maximum(np.abs(g1), np.abs(g2)) <= _NEWTON_TOLERANCE
        phi1 = np.exp(-0.5 * d1 * d1) / _SQRT_2PI
        # Jacobian of (g1, g2) with respect to (ln V, ln s); d(d1)/ds = -d2/s.
        j11 = V * N1 / E[a]
        j12 = V * phi1 * s * sqT[a] / E[a]
        j21 = V * (s * N1 + phi1 / sqT[a]) / (sE[a] * E[a])
        j22 = s * V * (N1 - phi1 * d2) / (sE[a] * E[a])
        det = j11 * j22 - j12 * j21
        dx = (-g1 * j22 + g2 * j12) / det
        dy = (-j11 * g2 + j21 * g1) / det
        scale = np.minimum(1.0, _MAX_LOG_STEP / np.maximum(np.abs(dx), np.abs(dy)))
        singular = ~(np.isfinite(dx) & np.isfinite(dy))
        dx, dy = dx * scale, dy * scale
        merit = g1 * g1 + g2 * g2
        stepping = ~done & ~singular
        t = np.ones(a.size)
        pending = np.flatnonzero(stepping)
        for _ in range(_MAX_HALVINGS):  # backtrack until the residual falls enough
            if pending.size == 0:
                break
            p, idx = pending, a[pending]
            tx = np.clip(x[idx] + t[p] * dx[p], x_lo[idx], x_hi[idx])
            ty = np.clip(y[idx] + t[p] * dy[p], y_lo[idx], y_hi[idx])
            h1, h2, *_ = _residuals(tx, ty, E[idx], sE[idx], lnK[idx], sqT[idx])
            ok = h1 * h1 + h2 * h2 <= merit[p] * (1.0 - 1e-4 * t[p])
            x[idx[ok]], y[idx[ok]] = tx[ok], ty[ok]
            t[p[~ok]] *= 0.5
            pending = p[~ok]
        stalled = stepping & (t * np.maximum(np.abs(dx), np.abs(dy)) < 1e-15)
        stalled[pending] = True  # no step length reduced the residual
        iterations[a[stepping]] += 1
        active = a[~(done | singular | stalled)]
    return x, y, iterations


def _reduced_gap(d2: FloatArray, a: FloatArray, b: FloatArray) -> tuple[FloatArray, ...]:
    """The two equations reduced to one in d2, with its derivative.

    With a = E/K, b = sE sqrt T, u = s sqrt T and k = ln(V/K), dividing both
    equations by K gives e^k N(d1) u = a b, and then N(d2) = a (b/u - 1), so
    u = a b / (a + N(d2)) and k = u (d2 + u/2) follow from d2 alone; what is left is
    G(d2) = ln u + k + ln N(d1) - ln(a b) = 0, negative far left, positive far right.
    """
    N2 = special.ndtr(d2)
    u = a * b / (a + N2)
    d1 = d2 + u
    k = u * (d2 + 0.5 * u)
    log_N1 = special.log_ndtr(d1)
    gap = np.log(u) + k + log_N1 - np.log(a * b)
    du = -u * np.exp(-0.5 * d2 * d2) / _SQRT_2PI / (a + N2)
    mills = np.exp(-0.5 * d1 * d1 - log_N1) / _SQRT_2PI
    slope = du / u + u + du * d1 + mills * (1.0 + du)
    return gap, slope, u, k


def _bracketed(
    E: FloatArray, sE: FloatArray, lnK: FloatArray, sqT: FloatArray
) -> tuple[FloatArray, FloatArray, NDArray[np.int64]]:
    """Fall-back: bracket the root of the reduced equation in d2, then safeguarded Newton.

    A bisection is taken whenever Newton would leave the bracket; vectorised.
    """
    a, b = E / np.exp(lnK), sE * sqT
    u0 = a * b / (1.0 + a)
    start = (np.log1p(a) - 0.5 * u0 * u0) / u0  # exact in the low-leverage limit
    gap, *_ = _reduced_gap(start, a, b)
    lo = np.where(gap < 0, start, -np.inf)
    hi = np.where(gap < 0, np.inf, start)
    width = np.ones_like(start)
    iterations = np.ones(E.shape, dtype=np.int64)
    for _ in range(_MAX_BRACKET_DOUBLINGS):
        open_lo, open_hi = np.isinf(lo), np.isinf(hi)
        if not (open_lo | open_hi).any():
            break
        trial = np.where(open_lo, start - width, start + width)
        gap, *_ = _reduced_gap(trial, a, b)
        lo = np.where((open_lo | open_hi) & (gap < 0), trial, lo)
        hi = np.where((open_lo | open_hi) & (gap >= 0), trial, hi)
        width *= 2.0
        iterations += open_lo | open_hi
    d2 = np.clip(start, lo, hi)
    active = np.flatnonzero(np.isfinite(lo) & np.isfinite(hi))
    for _ in range(_MAX_BRACKET_ITERATIONS):
        if active.size == 0:
            break
        gap, slope, *_ = _reduced_gap(d2[active], a[active], b[active])
        lo[active] = np.where(gap < 0, d2[active], lo[active])
        hi[active] = np.where(gap < 0, hi[active], d2[active])
        step = d2[active] - gap / slope
        inside = (step > lo[active]) & (step < hi[active])
        solved = np.abs(gap) <= _NEWTON_TOLERANCE  # stay put: a bisection would undo it
        step = np.where(solved, d2[active], np.where(inside, step, 0.5 * (lo[active] + hi[active])))
        done = solved | (np.abs(step - d2[active]) <= 4e-16 * np.maximum(1.0, np.abs(step)))
        d2[active] = step
        iterations[active] += 1
        active = active[~done]
    _, _, u, k = _reduced_gap(d2, a, b)
    return k + lnK, np.log(u / sqT), iterations


def _max_residual(
    x: FloatArray, y: FloatArray, E: FloatArray, sE: FloatArray, lnK: FloatArray, sqT: FloatArray
) -> FloatArray:
    g1, g2, *_ = _residuals(x, y, E, sE, lnK, sqT)
    worst = np.maximum(np.abs(g1), np.abs(g2))
    return np.where(np.isnan(worst), np.inf, worst)  # so "smaller is better" holds


def _solve_valid(
    E: FloatArray, sE: FloatArray, lnK: FloatArray, sqT: FloatArray
) -> tuple[FloatArray, FloatArray, NDArray[np.int64], FloatArray, NDArray[np.bool_]]:
    """V, s, iterations, relative residual and fall-back flag for validated inputs."""
    # Extreme elements may over- or underflow on the way; the residual check catches them.
    with np.errstate(all="ignore"):
        corner_x = np.log(E + np.exp(lnK))  # V0 = E + D e^{-rT}, s0 = sE E / V0
        x, y, iterations = _newton(E, sE, lnK, sqT, corner_x, np.log(sE * E) - corner_x)
        residual = _max_residual(x, y, E, sE, lnK, sqT)
        short = np.flatnonzero(~(residual <= _HAND_OVER_TOLERANCE))
        if short.size:  # rare outside extreme leverage and volatility; still vectorised
            args = (E[short], sE[short], lnK[short], sqT[short])
            bx, by, b_iter = _bracketed(*args)
            px, py, p_iter = _newton(*args, bx, by)  # polish to Newton's tolerance
            p_res = _max_residual(px, py, *args)
            better = p_res < residual[short]
            keep = short[better]
            x[keep], y[keep], residual[keep] = px[better], py[better], p_res[better]
            iterations[short] += b_iter + p_iter
        fallback = np.zeros(E.shape, dtype=bool)
        fallback[short] = True
    return np.exp(x), np.exp(y), iterations, residual, fallback


def solve_merton_many(
    *,
    equity_value: ArrayLike,
    equity_volatility: ArrayLike,
    default_point: ArrayLike,
    risk_free_rate: ArrayLike,
    horizon_years: ArrayLike,
    asset_drift: ArrayLike | None = None,
    invalid: Literal["raise", "flag"] = "raise",
) -> MertonBatch:
    """Solve the Merton (1974) equations for many borrowers at once (inputs broadcast).

    Parameters
    ----------
    equity_value : ArrayLike
        E, market capitalisation [currency units].
    equity_volatility : ArrayLike
        sE, annualised volatility of equity returns [fraction/year^0.5].
    default_point : ArrayLike
        D, debt treated as due at the horizon [currency units].
    risk_free_rate : ArrayLike
        r, continuously compounded [1/year].
    horizon_years : ArrayLike
        T [years].
    asset_drift : ArrayLike | None, optional
        mu [1/year]; None gives risk-neutral PD = N(-d2), a value gives the physical
        PD = N(-DD), DD = (ln(V/D) + (mu - s^2/2)T)/(s sqrt T).
    invalid : Literal["raise", "flag"], optional
        "raise" (ValueError naming the first bad argument and element) or
        "flag" (bad elements become failures like non-converged ones).

    Returns
    -------
    MertonBatch
        MertonBatch. No element is returned as converged unless both relative residuals, plus a
        bound on their rounding error, are at most 1e-9 at the returned V and s; when equity is so small a
        fraction of the debt that this cannot be checked in double precision the element is a failure, with
        reason.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if invalid not in ("raise", "flag"):
        raise ValueError(f"invalid={invalid!r} is not allowed; allowed: 'raise' or 'flag'")
    names = ["equity_value", "equity_volatility", "default_point", "risk_free_rate", "horizon_years"] + (
        [] if asset_drift is None else ["asset_drift"]
    )
    given: list[ArrayLike] = [equity_value, equity_volatility, default_point, risk_free_rate, horizon_years]
    if asset_drift is not None:
        given.append(asset_drift)
    raw = [_as_float_array(name, value) for name, value in zip(names, given)]
    try:
        broadcast = np.broadcast_arrays(*raw)
    except ValueError:
        shapes = ", ".join(f"{n}{a.shape}" for n, a in zip(names, raw))
        raise ValueError(
            f"input shapes do not broadcast together: {shapes}; give scalars or arrays of one common shape"
        ) from None
    shape = broadcast[0].shape
    flat = [np.ascontiguousarray(a).ravel() for a in broadcast]
    n = flat[0].size
    bad = np.zeros(n, dtype=bool)
    reasons: dict[int, str] = {}
    for name, values in zip(names, flat):
        mask = _bad_mask(name, values)
        if mask.any() and invalid == "raise":
            raise ValueError(_out_of_range_message(name, values.reshape(shape), int(np.flatnonzero(mask)[0])))
        for i in np.flatnonzero(mask & ~bad):
            reasons[int(i)] = _out_of_range_message(name, values.reshape(shape), int(i))
        bad |= mask

    # Invalid elements get a harmless stand-in so the solve stays one array pass.
    E, sE, D, r, T = (np.where(bad, stand_in, values) for stand_in, values in zip((1.0, 0.3, 1.0, 0.0, 1.0), flat[:5]))
    V, s, iterations, residual, used_fallback = _solve_valid(E, sE, np.log(D) - r * T, np.sqrt(T))
    # Rounding bound of V N(d1) - D e^{-rT} N(d2) relative to E: when equity is a
    # sliver of the debt the equations cannot be checked in double precision.
    with np.errstate(all="ignore"):
        sv = s * np.sqrt(T)
        d1 = (np.log(V / D) + (r + 0.5 * s * s) * T) / sv
        d2 = d1 - sv
        rounding = 4 * np.finfo(float).eps * (V * special.ndtr(d1) + D * np.exp(-r * T) * special.ndtr(d2)) / E
    checkable = rounding <= _ACCEPT_TOLERANCE / 2
    converged = ~bad & checkable & (residual + rounding <= _ACCEPT_TOLERANCE)
    for i in np.flatnonzero(~bad & ~converged):
        if checkable[i]:
            what = (
                f"the Merton equations did not converge for equity_value={float(E[i])!r}, "
                f"equity_volatility={float(sE[i])!r}, default_point={float(D[i])!r}, "
                f"risk_free_rate={float(r[i])!r}, horizon_years={float(T[i])!r} (relative "
                f"residual {residual[i]:.2e} after Newton and a bracketed search)"
            )
        else:
            ratio = E[i] / (D[i] * np.exp(-r[i] * T[i]))
            what = (
                f"equity_value={float(E[i])!r} is too small against default_point="
                f"{float(D[i])!r} discounted at risk_free_rate={float(r[i])!r} over "
                f"horizon_years={float(T[i])!r} (ratio {ratio:.1e}) for a solution to be "
                f"checked in double precision"
            )
        reasons[int(i)] = what + (
            "; check that equity value and default point are in the "
            "same currency and scale, and that equity volatility is an "
            "annual fraction (0.40, not 40)"
        )
    V, s, d1, d2 = (np.where(converged, values, np.nan) for values in (V, s, d1, d2))
    dd = d2 if asset_drift is None else (np.log(V / D) + (flat[5] - 0.5 * s * s) * T) / (s * np.sqrt(T))

    def shaped(values: NDArray[_Scalar]) -> NDArray[_Scalar]:
        return _frozen(values.reshape(shape))

    return MertonBatch(
        asset_value=shaped(V),
        asset_volatility=shaped(s),
        d1=shaped(d1),
        d2=shaped(d2),
        distance_to_default=shaped(dd),
        pd=shaped(special.ndtr(-dd)),
        leverage=shaped(D / V),
        iterations=shaped(np.where(bad, 0, iterations)),
        residual=shaped(np.where(bad, np.nan, residual)),
        used_fallback=shaped(~bad & used_fallback),
        converged=shaped(converged),
        failures=tuple(sorted(reasons.items())),
        equity_value=shaped(flat[0]),
        equity_volatility=shaped(flat[1]),
        default_point=shaped(flat[2]),
        risk_free_rate=shaped(flat[3]),
        horizon_years=shaped(flat[4]),
        asset_drift=None if asset_drift is None else shaped(flat[5]),
        measure="risk_neutral" if asset_drift is None else "physical",
    )


def solve_merton(
    *,
    equity_value: float,
    equity_volatility: float,
    default_point: float,
    risk_free_rate: float,
    horizon_years: float,
    asset_drift: float | None = None,
) -> MertonSolution:
    """Asset value, asset volatility and PD of one listed borrower, Merton (1974).

    Arguments and units as in `solve_merton_many`, each a single number.
    Raises ValueError for a bad input (naming it, its value and the allowed range),
    or when no V, s can be shown to meet both equations to a relative 1e-9 (the
    message names the inputs and what to check).

    Parameters
    ----------
    equity_value : float
        E, market capitalisation [currency units].
    equity_volatility : float
        sE, annualised volatility of equity returns [1/sqrt(year), e.g. 0.40].
    default_point : float
        D, debt treated as due at the horizon [currency units].
    risk_free_rate : float
        r, continuously compounded [1/year].
    horizon_years : float
        T [years].
    asset_drift : float | None, optional
        mu [1/year]; None gives the risk-neutral PD N(-d2), a value the
        physical PD N(-DD).

    Returns
    -------
    MertonSolution
        Asset value, asset volatility, distance to default and PD, with the solve's diagnostics.

    Raises
    ------
    ValueError
        If an input is outside its range (naming it, its value and the range), or the equations have no
        solution meeting the accuracy bar.
    """
    given = {
        "equity_value": equity_value,
        "equity_volatility": equity_volatility,
        "default_point": default_point,
        "risk_free_rate": risk_free_rate,
        "horizon_years": horizon_years,
        "asset_drift": asset_drift,
    }
    for name, value in given.items():
        if value is not None and np.ndim(value) != 0:
            raise ValueError(
                f"{name}: got an array of shape {np.shape(value)}; allowed: a single "
                f"number ({_LIMITS[name][4]}); use solve_merton_many for arrays"
            )
    batch = solve_merton_many(
        equity_value=equity_value,
        equity_volatility=equity_volatility,
        default_point=default_point,
        risk_free_rate=risk_free_rate,
        horizon_years=horizon_years,
        asset_drift=asset_drift,
        invalid="raise",
    )
    if not batch.converged:
        raise ValueError(batch.failures[0][1])

    def number(name: str) -> float:
        return float(getattr(batch, name))

    return MertonSolution(
        asset_value=number("asset_value"),
        asset_volatility=number("asset_volatility"),
        d1=number("d1"),
        d2=number("d2"),
        distance_to_default=number("distance_to_default"),
        pd=number("pd"),
        leverage=number("leverage"),
        residual=number("residual"),
        equity_value=number("equity_value"),
        equity_volatility=number("equity_volatility"),
        default_point=number("default_point"),
        risk_free_rate=number("risk_free_rate"),
        horizon_years=number("horizon_years"),
        iterations=int(batch.iterations),
        solver="bracketed" if batch.used_fallback else "newton",
        asset_drift=None if asset_drift is None else float(asset_drift),
        measure=batch.measure,
    )
