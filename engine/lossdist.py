"""Loss distribution of one borrower holding several facilities.

Over the horizon the borrower's loss is

    L = 1{default} * sum_i EAD_i * (1 - R_i),    default ~ Bernoulli(PD),

with R_i the recovery rate of facility i. All facilities of one borrower
default together, so only the joint law of the recoveries is a modelling choice:

* ``"comonotonic"`` (the default): one uniform U drives every recovery,
  R_i = F_i^{-1}(U). The loss given default G(U) = sum_i EAD_i (1 - F_i^{-1}(U))
  is then non-increasing in U and the tail is exact:

      u* = min(1, (1 - q) / PD)
      VaR_q = 0                                   if PD <= 1 - q
      VaR_q = G(u*)                               otherwise
      ES_q  = PD / (1 - q) * integral_0^{u*} G(u) du

  A comonotonic sum dominates every other dependence with the same marginals in
  convex order, so its expected shortfall is the largest possible: the
  conservative choice (Dhaene, Denuit, Goovaerts, Kaas and Vyncke (2002), "The
  concept of comonotonicity in actuarial science and finance: theory",
  Insurance: Mathematics and Economics 31(1), 3-33).
* ``"independent"``: recoveries independent of each other. The law of the sum
  is the convolution of the facilities' loss laws, discretised on one grid and
  convolved by FFT: exact to the grid (VaR within n h / 2 for n facilities and
  step h), in milliseconds. A seeded Monte Carlo (``independent_method=
  "monte_carlo"``) is kept as the reference the tests compare with.

Recoveries above par (a law reaching past 1, up to 1.5) make some default
outcomes gains, G < 0: they sort below the no-default atom at 0, and VaR and ES
are taken over that full order (see ``_comonotonic_tail``); EL may be negative.

Value at risk and expected shortfall follow Acerbi and Tasche (2002), "On the
coherence of expected shortfall", Journal of Banking & Finance 26(7):
VaR_q = inf{x : P(L <= x) >= q}, ES_q = (1/(1-q)) integral_q^1 VaR_p dp.

A recovery law is any object with ``ppf(u: ndarray) -> ndarray``, ``mean()``
and ``var()`` describing a recovery rate in [0, 1.5] [fraction], e.g. a frozen
``scipy.stats.beta(a, b, loc=0, scale=upper)``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal, Protocol, cast

import numpy as np
import numpy.typing as npt
from obligor_memo.engine.loss import pooled_by_law

Join = Literal["comonotonic", "independent"]
JOINS: tuple[str, ...] = ("comonotonic", "independent")

MAX_RECOVERY = 1.5
"""Largest recovery rate a law may reach [fraction of EAD] (recoveries above par)."""
DEFAULT_N_SIMS = 200_000
DEFAULT_N_GRID = 1 << 15
DEFAULT_SEED = 20_061_999
# Bisection on [0, 1] halves the bracket each step; 64 steps reach the spacing
# of doubles near 1, so the curve is as exact as the recovery laws' ppf.


FloatArray = npt.NDArray[np.float64]
"""An array of floats (numpy ``float64``)."""


class RecoveryLaw(Protocol):
    """Distribution of a recovery rate on [0, 1] [fraction]."""

    def ppf(self, q: FloatArray) -> float | FloatArray:
        """Quantile function: the recovery rate at each probability level in ``q`` [fraction]."""
        ...

    def mean(self) -> float:
        """Mean recovery rate [fraction]."""
        ...

    def var(self) -> float:
        """Variance of the recovery rate [fraction squared]."""
        ...


class _LawWithCdf(RecoveryLaw, Protocol):
    """A recovery law with its CDF (the independent join's convolution reads it)."""

    def cdf(self, x: FloatArray) -> float | FloatArray: ...


class _LawWithPpfIntegral(RecoveryLaw, Protocol):
    """A recovery law with the closed-form integral of its quantile function."""

    def ppf_integral(self, u: float) -> float: ...


@dataclass(frozen=True)
class LossDistribution:
    """The borrower's loss over the horizon and its tail measures."""

    pd: float
    """Probability of default over the horizon [fraction]."""
    confidence: float
    """q, the confidence level of VaR and ES [fraction]."""
    join: str
    """How the facilities' recoveries are joined."""
    method: str
    """"exact" (closed form and quadrature), "fft convolution" or "monte carlo"."""
    exposures: tuple[float, ...]
    """EAD of each facility [currency units]."""
    recovery_means: tuple[float, ...]
    """E[R_i] of each facility [fraction]."""
    total_exposure: float
    """Sum of EAD [currency units]."""
    loss_given_default_mean: float
    """E[G] = sum EAD_i (1 - E R_i) [currency units]."""
    expected_loss: float
    """EL = PD * E[G] [currency units]."""
    tail_fraction: float
    """u* = min(1, (1-q)/PD), the share of default scenarios lying in the (1-q) tail [fraction]."""
    var: float
    """Value at risk at ``confidence`` (not a variance) [currency units]."""
    expected_shortfall: float
    """ES at ``confidence`` [currency units]."""
    economic_capital: float
    """max(VaR - EL, 0) [currency units]."""
    capital_floored: bool
    """True when VaR - EL < 0 and the zero floor binds."""
    n_sims: int
    """Monte Carlo draws of the loss given default (0 when exact)."""
    seed: int | None
    """Seed of the Monte Carlo generator (None when exact)."""
    var_standard_error: float
    """Standard error of ``var`` [currency units]; 0 when exact."""
    expected_shortfall_standard_error: float
    """Standard error of ``expected_shortfall`` [currency units]; 0 when exact."""
    quadrature_error: float
    """QUADPACK's bound on the absolute error of the ES integral, or for the FFT the grid bound n h / 2 on VaR
    [currency units]; 0 when the result is exact."""
    curve_loss: tuple[float, ...]
    """Grid of losses x from 0 to ``total_exposure`` [currency units]."""
    curve_cdf: tuple[float, ...]
    """P(L <= x) on that grid, the atom 1 - PD at x = 0 included [fraction]."""


def _check_probability(name: str, value: float, *, open_low: float | None = None) -> float:
    """A number in [0, 1], or in (open_low, 1) when ``open_low`` is given."""
    allowed = "[0, 1]" if open_low is None else f"({open_low}, 1), both ends excluded"
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise ValueError(f"{name} must be a number in {allowed}; got {value!r}")
    number = float(value)
    inside = 0.0 <= number <= 1.0 if open_low is None else open_low < number < 1.0
    if not inside:
        raise ValueError(f"{name} must lie in {allowed}; got {value!r}")
    return number


def _check_join(join: str) -> Join:
    if join not in JOINS:
        raise ValueError(f"join must be one of {', '.join(JOINS)}; got {join!r}")
    return cast(Join, join)


def _check_exposures_and_laws(
    exposures: Sequence[float], recovery_laws: Sequence[RecoveryLaw]
) -> tuple[np.ndarray, tuple[RecoveryLaw, ...], np.ndarray]:
    try:
        ead = np.asarray(exposures, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"exposures must be a sequence of finite numbers >= 0; got {exposures!r}") from None
    if ead.ndim != 1 or ead.size == 0:
        raise ValueError(f"exposures must be a non-empty one-dimensional sequence; got {exposures!r}")
    for index, value in enumerate(ead):
        if not math.isfinite(value) or value < 0.0:
            raise ValueError(f"exposures[{index}] must be a finite number >= 0 [currency]; got {value!r}")
    laws = tuple(recovery_laws)
    if len(laws) != ead.size:
        raise ValueError(f"recovery_laws must have one law per exposure ({ead.size}); got {len(laws)}")
    means = np.empty(ead.size)
    checked: dict[RecoveryLaw, float] = {}  # a law shared by many facilities is checked once
    for index, law in enumerate(laws):
        try:
            means[index] = checked[law]
            continue
        except (KeyError, TypeError):
            pass
        for method in ("ppf", "mean", "var"):
            if not callable(getattr(law, method, None)):
                raise ValueError(
                    f"recovery_laws[{index}] must offer ppf(u), mean() and var(); {law!r} has no {method}()"
                )
        mean = float(law.mean())
        variance = float(law.var())
        if not (0.0 <= mean <= MAX_RECOVERY):
            raise ValueError(
                f"recovery_laws[{index}].mean() must lie in [0, {MAX_RECOVERY:g}] [fraction]; got {mean!r}"
            )
        if not (math.isfinite(variance) and variance >= 0.0):
            raise ValueError(f"recovery_laws[{index}].var() must be a finite number >= 0; got {variance!r}")
        # A recovery above 1 is a negative loss (recoveries above par, up to 1.5); catch a law on
        # the wrong scale (percent, say) early.
        probe = np.asarray(law.ppf(np.array([0.0, 0.5, 1.0])), dtype=float)
        if probe.shape != (3,) or not np.all((probe >= 0.0) & (probe <= MAX_RECOVERY)):
            raise ValueError(
                f"recovery_laws[{index}].ppf must return recovery rates in [0, {MAX_RECOVERY:g}]; "
                f"at u = 0, 0.5, 1 it gave {probe.tolist()!r}"
            )
        means[index] = mean
        try:
            checked[law] = mean
        except TypeError:  # an unhashable law is checked wherever it appears
            pass
    return ead, laws, means


def _check_count(name: str, value: int, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise ValueError(f"{name} must be an integer >= {minimum}; got {value!r}")
    return int(value)


def _loss_given_default_comonotonic(u: np.ndarray, exposures: np.ndarray, laws: Sequence[RecoveryLaw]) -> np.ndarray:
    """G(u) = sum_i EAD_i (1 - F_i^{-1}(u)) [currency units] for u in [0, 1].

    Facilities with equal laws are summed first (:func:`obligor_memo.engine.loss.pooled_by_law`):
    one quantile function per distinct law.
    """
    total = np.zeros_like(u, dtype=float)
    for ead, law in pooled_by_law(exposures.tolist(), laws):
        total += ead * (1.0 - np.asarray(law.ppf(u), dtype=float))
    return total


def _loss_given_default_sample(
    exposures: np.ndarray,
    laws: Sequence[RecoveryLaw],
    join: str,
    n_draws: int,
    rng: np.random.Generator,
) -> np.ndarray:
    """Draws of the loss given default G [currency units] under the chosen join."""
    if join == "comonotonic":
        return _loss_given_default_comonotonic(rng.random(n_draws), exposures, laws)
    total = np.zeros(n_draws)
    for ead, law in zip(exposures, laws):
        # Drawn even for a zero exposure so that the stream does not depend on the amounts.
        u = rng.random(n_draws)
        if ead > 0.0:
            total += ead * (1.0 - np.asarray(law.ppf(u), dtype=float))
    return total


def monte_carlo_loss(
    *,
    pd: float,
    exposures: Sequence[float],
    recovery_laws: Sequence[RecoveryLaw],
    join: Join,
    n_sims: int,
    seed: int,
) -> np.ndarray:
    """Simulated borrower losses L [currency units], one per scenario.

    Parameters
    ----------
    pd : float
        Probability of default over the horizon [fraction], in [0, 1].
    exposures : Sequence[float]
        EAD of each facility [currency units], finite, >= 0.
    recovery_laws : Sequence[RecoveryLaw]
        One recovery-rate law per facility [fraction].
    join : Join
        "comonotonic" (one uniform drives all recoveries) or "independent".
    n_sims : int
        Number of scenarios, >= 1.
    seed : int
        Seed of ``numpy.random.default_rng``.

    Returns
    -------
    np.ndarray
        Array of ``n_sims`` losses; scenarios without default have loss 0.
    """
    probability = _check_probability("pd", pd)
    ead, laws, _ = _check_exposures_and_laws(exposures, recovery_laws)
    join = _check_join(join)
    n_sims = _check_count("n_sims", n_sims, 1)
    rng = np.random.default_rng(seed)
    defaulted = rng.random(n_sims) < probability
    losses = np.zeros(n_sims)
    n_defaults = int(defaulted.sum())
    if n_defaults:
        losses[defaulted] = _loss_given_default_sample(ead, laws, join, n_defaults, rng)
    return losses


def _comonotonic_curve(
    n_points: int, probability: float, exposures: np.ndarray, laws: Sequence[RecoveryLaw]
) -> tuple[np.ndarray, np.ndarray]:
    """Exact points (x, P(L <= x)) of the CDF, parametrised by the recovery driver u.

    G is non-increasing, so x = G(u) has P(L <= x) = 1 - PD * u exactly; one vectorised ppf call
    per facility replaces a root search per grid point. The atom at 0 (mass 1 - PD) opens the
    curve and the total exposure closes it.
    """
    u = np.linspace(1.0, 0.0, max(n_points - 2, 2))
    x = _loss_given_default_comonotonic(u, exposures, laws)
    total = float(exposures.sum())
    loss = np.concatenate([[0.0], x, [total]])
    cdf = np.concatenate([[1.0 - probability], 1.0 - probability * u, [1.0]])
    if x[0] >= 0.0:
        return np.maximum.accumulate(np.clip(loss, 0.0, total)), np.clip(cdf, 0.0, 1.0)
    # Recoveries above par: default gains G(u) < 0 lie below the no-default atom at 0.
    cdf_x = probability * (1.0 - u) + (1.0 - probability) * (x >= 0.0)
    u0 = _zero_crossing(exposures, laws)
    points = np.concatenate([x, [0.0, 0.0, total]])
    values = np.concatenate([cdf_x, [probability * (1.0 - u0), probability * (1.0 - u0) + 1.0 - probability, 1.0]])
    order = np.lexsort((values, points))
    return points[order], np.clip(np.maximum.accumulate(values[order]), 0.0, 1.0)


def _zero_crossing(exposures: np.ndarray, laws: Sequence[RecoveryLaw]) -> float:
    """u0 = P(G > 0) for the comonotonic loss given default G(u) (non-increasing in u).

    1 when no outcome is a gain (every recovery at most par); otherwise the root of G found
    by bracketing (scipy.optimize.brentq), since recoveries above par make G(1) < 0.
    """

    def g(u: float) -> float:
        return float(_loss_given_default_comonotonic(np.array([u]), exposures, laws)[0])

    if g(1.0) >= 0.0:
        return 1.0
    if g(0.0) <= 0.0:
        return 0.0
    from scipy.optimize import brentq  # deferred: only recoveries above par need it

    return float(brentq(g, 0.0, 1.0, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200))


def _comonotonic_tail(
    probability: float,
    level: float,
    tail_fraction: float,
    exposures: np.ndarray,
    laws: Sequence[RecoveryLaw],
    expected_loss: float,
) -> tuple[float, float, float]:
    """Exact (VaR, ES, quadrature error bound) of the comonotonic loss.

    Sorted from the largest loss down, the outcomes are the default losses G(u) > 0 (mass PD u0),
    the atom at 0 (mass 1 - PD, no default) and, with recoveries above par, the default gains
    G(u) < 0. The top 1 - q of that order is the tail: it ends at u* = (1 - q) / PD inside the
    positive losses, at the atom (VaR 0), or among the gains at u1 = (1 - q - (1 - PD)) / PD.
    """
    tail = 1.0 - level
    u0 = _zero_crossing(exposures, laws)
    if probability * u0 >= tail and probability > 0.0:
        end = tail_fraction
        value_at_risk = float(_loss_given_default_comonotonic(np.array([end]), exposures, laws)[0])
    elif probability * u0 + (1.0 - probability) >= tail:
        end, value_at_risk = u0, 0.0
    else:
        end = (tail - (1.0 - probability)) / probability
        value_at_risk = float(_loss_given_default_comonotonic(np.array([end]), exposures, laws)[0])
    if end >= 1.0:
        # The whole default mass sits inside the tail: the tail integral is E[G] itself,
        # known exactly from the recovery means.
        return value_at_risk, expected_loss / tail, 0.0
    if end <= 0.0:
        return value_at_risk, 0.0, 0.0

    if all(hasattr(law, "ppf_integral") for law in laws):
        # Closed form: integral_0^end G = sum EAD_i (end - integral_0^end F_i^-1).
        closed_form = cast(Sequence[_LawWithPpfIntegral], laws)
        integral = sum(float(e) * (end - law.ppf_integral(end)) for e, law in zip(exposures, closed_form) if e > 0.0)
        return value_at_risk, probability / tail * integral, 0.0

    from scipy import integrate  # deferred: only recovery laws without a closed form need it

    def integrand(u: float) -> float:
        return float(_loss_given_default_comonotonic(np.array([u]), exposures, laws)[0])

    scale = float(exposures.sum()) * end
    # epsabs keeps QUADPACK from chasing a relative target on an all-zero integrand.
    integral, error = integrate.quad(integrand, 0.0, end, epsabs=1e-14 * scale, epsrel=1e-10, limit=200)
    factor = probability / tail
    return value_at_risk, factor * integral, factor * error


def _law_cdf_of_loss(law: RecoveryLaw, ead: float, x: np.ndarray) -> np.ndarray:
    """P(EAD (1 - R) <= x) = P(R >= 1 - x / EAD) = 1 - F_R((1 - x / EAD)^-) [fraction]."""
    r = 1.0 - x / ead
    if getattr(law, "point_mass", False) or float(law.var()) == 0.0:
        return (r <= float(law.mean())).astype(float)
    return 1.0 - np.asarray(cast(_LawWithCdf, law).cdf(r), dtype=float)


def _independent_fft(
    exposures: np.ndarray, laws: Sequence[RecoveryLaw], n_grid: int
) -> tuple[np.ndarray, np.ndarray, float]:
    """Law of G = sum_i EAD_i (1 - R_i), R_i independent: (support, probabilities, grid step).

    Each facility's loss given default is discretised on a common step h (the mass of each
    cell [x - h/2, x + h/2) at its centre, from the law's CDF), and the laws are convolved by
    FFT (numpy.fft.rfft): exact to the grid, every quantile within n h / 2 for n facilities.
    """
    active = [(float(e), law) for e, law in zip(exposures, laws) if e > 0.0]
    lows, highs = [], []
    for e, law in active:
        top = float(np.asarray(law.ppf(np.array([1.0])), dtype=float)[0])
        bottom = float(np.asarray(law.ppf(np.array([0.0])), dtype=float)[0])
        lows.append(e * (1.0 - top))
        highs.append(e * (1.0 - bottom))
    span = sum(highs) - sum(lows)
    step = span / (n_grid - 1) if span > 0 else 1.0
    pmfs = []
    for (e, law), low, high in zip(active, lows, highs):
        count = int(math.ceil((high - low) / step)) + 1
        edges = low + (np.arange(count + 1) - 0.5) * step
        cdf = _law_cdf_of_loss(law, e, edges)
        cdf[0], cdf[-1] = 0.0, 1.0
        pmfs.append(np.maximum(np.diff(cdf), 0.0))
    length = sum(len(p) for p in pmfs) - len(pmfs) + 1
    size = 1 << int(math.ceil(math.log2(max(length, 2))))
    spectrum = np.ones(size // 2 + 1, dtype=complex)
    for pmf in pmfs:
        spectrum *= np.fft.rfft(pmf, size)
    total = np.maximum(np.fft.irfft(spectrum, size)[:length], 0.0)
    total /= total.sum()
    return sum(lows) + step * np.arange(length), total, step


def _discrete_tail(values: np.ndarray, probs: np.ndarray, level: float) -> tuple[float, float]:
    """(VaR, ES) of a discrete law (Acerbi and Tasche 2002, with the atom at VaR split)."""
    order = np.argsort(values, kind="stable")
    x, p = values[order], probs[order]
    cdf = np.cumsum(p)
    index = min(int(np.searchsorted(cdf, level - 1e-12, side="left")), len(x) - 1)
    var = float(x[index])
    above = float(np.sum(x[index + 1 :] * p[index + 1 :]))
    shortfall = (above + var * (float(cdf[index]) - level)) / (1.0 - level)
    return var, shortfall


def _monte_carlo_tail(sample: np.ndarray, level: float, tail_fraction: float) -> tuple[float, float, float, float]:
    """(VaR, ES, their standard errors) from draws of the loss given default.

    VaR_q(L) is the (1 - u*) quantile of G and ES_q(L) the mean of G over its
    top u* share. The quantile's standard error is half the spread of the order
    statistics one binomial standard deviation of rank either side; the
    shortfall's is sd((G - VaR)^+) / (u* sqrt n), the first-order variance of
    the estimator VaR + mean((G - VaR)^+)/u* (Rockafellar and Uryasev (2000),
    "Optimization of conditional value-at-risk", Journal of Risk 2(3)).
    """
    ordered = np.sort(sample)
    n = ordered.size
    p = 1.0 - tail_fraction
    rank = min(max(math.ceil(n * p), 1), n)
    value_at_risk = float(ordered[rank - 1])
    spread = math.sqrt(n * p * (1.0 - p))
    low = min(max(math.floor(n * p - spread), 1), n)
    high = min(max(math.ceil(n * p + spread), 1), n)
    var_error = 0.5 * float(ordered[high - 1] - ordered[low - 1])
    excess = np.maximum(ordered - value_at_risk, 0.0)
    shortfall = value_at_risk + float(excess.mean()) / tail_fraction
    shortfall_error = float(excess.std(ddof=1)) / (tail_fraction * math.sqrt(n)) if n > 1 else 0.0
    return value_at_risk, shortfall, var_error, shortfall_error


def loss_distribution(
    *,
    pd: float,
    exposures: Sequence[float],
    recovery_laws: Sequence[RecoveryLaw],
    confidence: float = 0.999,
    join: Join = "comonotonic",
    n_curve: int = 200,
    n_sims: int = DEFAULT_N_SIMS,
    seed: int = DEFAULT_SEED,
    independent_method: Literal["fft", "monte_carlo"] = "fft",
    n_grid: int = DEFAULT_N_GRID,
) -> LossDistribution:
    """Borrower loss L = 1{default} sum EAD_i (1 - R_i): EL, VaR, ES, capital, CDF.

    Parameters
    ----------
    pd : float
        Probability of default over the horizon [fraction], in [0, 1].
    exposures : Sequence[float]
        EAD of each facility [currency units], finite, >= 0.
    recovery_laws : Sequence[RecoveryLaw]
        One recovery-rate law per facility, values in [0, 1.5] [fraction]; duck typed:
        ``ppf(u)``, ``mean()``, ``var()``.
    confidence : float, optional
        q for VaR and ES [fraction], in (0.5, 1).
    join : Join, optional
        "comonotonic" (exact, conservative) or "independent" (Monte Carlo).
    n_curve : int, optional
        Number of grid points of the charted CDF, >= 2.
    n_sims : int, optional
        Draws of the loss given default for the independent join, >= 2.
    seed : int, optional
        Seed of the Monte Carlo generator for the independent join.
    independent_method : Literal["fft", "monte_carlo"], optional
        "fft" (default; the facilities' discretised loss laws convolved,
        exact to the grid of ``n_grid`` points) or "monte_carlo" (the seeded reference).
    n_grid : int, optional
        Points of the FFT grid over the range of the summed loss given default.

    Returns
    -------
    LossDistribution
        A ``LossDistribution``. EL = PD * sum EAD_i (1 - E R_i) is exact under both joins;
        economic capital = max(VaR - EL, 0) (Basel Committee, "An Explanatory Note on the Basel II IRB Risk
        Weight Functions", 2005: capital covers the unexpected loss, the quantile in excess of EL). The
        independent join simulates only default scenarios (the default event is mixed in exactly through u*),
        which spends every draw in the tail. With a single facility of positive exposure both joins are one law
        and the exact route is taken. For recovery laws with atoms, VaR uses G(u*), i.e. the left-continuous ppf
        at u*.
    """
    probability = _check_probability("pd", pd)
    level = _check_probability("confidence", confidence, open_low=0.5)
    join = _check_join(join)
    n_curve = _check_count("n_curve", n_curve, 2)
    n_sims = _check_count("n_sims", n_sims, 2)
    ead, laws, means = _check_exposures_and_laws(exposures, recovery_laws)

    total = float(ead.sum())
    lgd_mean = float(np.sum(ead * (1.0 - means)))
    expected_loss = probability * lgd_mean
    tail_fraction = 1.0 if probability <= 1.0 - level else (1.0 - level) / probability
    grid = np.linspace(0.0, total, n_curve)

    exact = join == "comonotonic" or int(np.count_nonzero(ead > 0.0)) <= 1
    if exact:
        value_at_risk, shortfall, quad_error = _comonotonic_tail(
            probability, level, tail_fraction, ead, laws, expected_loss
        )
        var_error = shortfall_error = 0.0
        grid, cdf = _comonotonic_curve(n_curve, probability, ead, laws)
        method, used_sims, used_seed = "exact", 0, None
    elif independent_method == "fft":
        support, probs, step = _independent_fft(ead, laws, n_grid)
        values = np.concatenate([[0.0], support])
        weights = np.concatenate([[1.0 - probability], probability * probs])
        value_at_risk, shortfall = _discrete_tail(values, weights, level)
        if tail_fraction >= 1.0 and support[0] >= 0.0:
            # The whole default mass sits in the tail: VaR is the atom at 0, ES exact from EL.
            value_at_risk, shortfall = 0.0, expected_loss / (1.0 - level)
        var_error = shortfall_error = 0.0
        quad_error = step * int(np.count_nonzero(ead > 0.0)) / 2.0
        order = np.argsort(values, kind="stable")
        cum = np.cumsum(weights[order])
        at_or_below = np.searchsorted(values[order], grid, side="right")
        cdf = np.clip(np.where(at_or_below > 0, cum[np.maximum(at_or_below - 1, 0)], 0.0), 0.0, 1.0)
        method, used_sims, used_seed = "fft convolution", 0, None
    else:
        rng = np.random.default_rng(seed)
        sample = _loss_given_default_sample(ead, laws, join, n_sims, rng)
        quad_error = 0.0
        if tail_fraction >= 1.0:
            value_at_risk, shortfall = 0.0, expected_loss / (1.0 - level)
            var_error = shortfall_error = 0.0
        else:
            value_at_risk, shortfall, var_error, shortfall_error = _monte_carlo_tail(sample, level, tail_fraction)
        ordered = np.sort(sample)
        share_at_or_below = np.searchsorted(ordered, grid, side="right") / n_sims
        cdf = np.clip(1.0 - probability + probability * share_at_or_below, 0.0, 1.0)
        method, used_sims, used_seed = "monte carlo", n_sims, seed

    unexpected = value_at_risk - expected_loss
    return LossDistribution(
        pd=probability,
        confidence=level,
        join=join,
        method=method,
        exposures=tuple(float(x) for x in ead),
        recovery_means=tuple(float(x) for x in means),
        total_exposure=total,
        loss_given_default_mean=lgd_mean,
        expected_loss=expected_loss,
        tail_fraction=tail_fraction,
        var=value_at_risk,
        expected_shortfall=shortfall,
        economic_capital=max(unexpected, 0.0),
        capital_floored=unexpected < 0.0,
        n_sims=used_sims,
        seed=used_seed,
        var_standard_error=var_error,
        expected_shortfall_standard_error=shortfall_error,
        quadrature_error=quad_error,
        curve_loss=tuple(float(x) for x in grid),
        curve_cdf=tuple(float(x) for x in cdf),
    )
