"""Recovery rate laws: a beta distribution on [0, upper] fitted by moments.

With m = mean / upper and v = (std / upper)^2, k = m (1 - m) / v - 1, alpha = m k,
beta = (1 - m) k (method of moments for the beta distribution; e.g. Johnson, Kotz and
Balakrishnan, Continuous Univariate Distributions, vol. 2, ch. 25). Feasible only when
v < m (1 - m); the largest std allowed is upper sqrt(m (1 - m)). A std of 0 is a point mass.

Collateral: after its haircut, collateral C* covers the share c = min(C* / EAD, 1) of the exposure.
One rule, the foundation approach's for collateralised exposures (Basel III CRE32.9-CRE32.11:
LGD* = LGD_U x E_U / E + LGD_S x E_S / E; Basel II paras 289-295; from memory): the covered part
takes the secured supervisory LGD_S (20 % Basel III, 35 % Basel II, receivables or real estate)
and the rest recovers as the unsecured law R_u, so R = c (1 - LGD_S) + (1 - c) R_u and
LGD = c LGD_S + (1 - c) LGD_u. The uncovered part of a ``senior_secured`` facility takes the
senior unsecured LGD: the secured LGD is never applied to the whole exposure and then again to
the covered part. A ``senior_secured`` facility without a collateral block takes the secured
LGD_S as its mean LGD on the whole exposure (the seniority states full cover; the spread of the
default recovery law stays).

Recoveries above par: for bonds a law on [0, upper] with upper up to 1.5 is accepted (recoveries
can exceed par once accrued interest and post-default prices are counted; common practice uses
upper 1.1); the LGD outcome 1 - R may then be negative.

Default recovery by seniority, from the Basel foundation-IRB supervisory LGDs:
Basel II (June 2006) para 287: senior unsecured corporate claims 45 %; para 288: subordinated 75 %;
para 295: claims fully secured by receivables or real estate 35 %.
Basel III final (BCBS d424, December 2017; CRE32.6-CRE32.8 and CRE32.9-CRE32.11 in the
consolidated framework): senior unsecured claims on non-financial corporates 40 %, subordinated
75 %, secured by receivables or real estate 20 % (LGD_S). Paragraph numbers given from memory.
Default recovery std: 0.25, a working assumption (common practice: recovery rates are widely
dispersed) to be replaced with the institution's own data.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property
from typing import overload

import numpy as np
import numpy.typing as npt
from scipy import special

FloatArray = npt.NDArray[np.float64]
"""An array of floats (numpy ``float64``)."""

_SUPERVISORY_LGD = {
    "basel_ii": {
        "senior_secured": (0.35, "Basel II para 295 (secured by receivables/real estate)"),
        "senior_unsecured": (0.45, "Basel II para 287 (senior unsecured)"),
        "subordinated": (0.75, "Basel II para 288 (subordinated)"),
    },
    "basel_iii": {
        "senior_secured": (0.20, "Basel III final CRE32.11 (secured by receivables/real estate)"),
        "senior_unsecured": (0.40, "Basel III final CRE32.6 (senior unsecured, non-financial corporate)"),
        "subordinated": (0.75, "Basel III final CRE32.8 (subordinated)"),
    },
}


_LEAD_TERM = 1e-8
"""Below this distance to an end of [0, 1] the beta law's leading tail term is used."""


def _exp_or_inf(x: float) -> float:
    """exp(x), or infinity where it overflows (as numpy's exp gives)."""
    try:
        return math.exp(x)
    except OverflowError:
        return math.inf


MAX_UPPER = 1.5
"""Largest top of a recovery law's support [fraction of EAD]."""


def secured_supervisory_lgd(standard: str = "basel_iii") -> tuple[float, str]:
    """The foundation-IRB LGD_S of the covered part (receivables, real estate), with its source.

    Parameters
    ----------
    standard : str, optional
        Basel standard: ``basel_iii`` or ``basel_ii``.

    Returns
    -------
    tuple[float, str]
        LGD_S [fraction] and its source.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    try:
        return _SUPERVISORY_LGD[standard]["senior_secured"]
    except KeyError:
        raise ValueError(f"lgd.standard: got {standard!r}; allowed: basel_iii, basel_ii") from None


def seniority_recovery_mean(seniority: str, standard: str = "basel_iii") -> tuple[float, str]:
    """Mean recovery = 1 - the foundation-IRB supervisory LGD for the seniority, with its source.

    Parameters
    ----------
    seniority : str
        Seniority: senior_secured, senior_unsecured or subordinated.
    standard : str, optional
        Basel standard: ``basel_iii`` or ``basel_ii``.

    Returns
    -------
    tuple[float, str]
        Mean recovery [fraction] and its source.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    try:
        lgd, source = _SUPERVISORY_LGD[standard][seniority]
    except KeyError:
        raise ValueError(
            f"seniority/standard: got {seniority!r}/{standard!r}; allowed: "
            "senior_secured, senior_unsecured, subordinated / basel_iii, basel_ii"
        ) from None
    return 1.0 - lgd, f"1 - supervisory LGD {lgd:.0%}, {source}"


def largest_feasible_std(*, mean: float, upper: float = 1.0) -> float:
    """Largest std of a beta law with this mean: upper x sqrt(m (1 - m)), m = mean / upper.

    The beta law needs the std strictly below it.

    Parameters
    ----------
    mean : float
        Mean recovery [fraction of EAD].
    upper : float, optional
        Top of the recovery law's support [fraction of EAD], in (0, 1.5].

    Returns
    -------
    float
        The bound on the std [fraction of EAD].
    """
    m = mean / upper
    return upper * math.sqrt(max(m * (1 - m), 0.0))


def beta_parameters_from_moments(*, mean: float, std: float, upper: float = 1.0) -> tuple[float, float]:
    """(alpha, beta) of the beta law on [0, upper] with the given mean and std (method of moments).

    Parameters
    ----------
    mean : float
        Mean recovery [fraction of EAD].
    std : float
        Standard deviation of the recovery [fraction of EAD].
    upper : float, optional
        Top of the recovery law's support [fraction of EAD], in (0, 1.5].

    Returns
    -------
    tuple[float, float]
        The beta shapes (alpha, beta).

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if not (0 < upper <= MAX_UPPER):
        raise ValueError(f"recovery.upper: got {upper!r}; allowed: a number above 0 up to {MAX_UPPER:g}")
    if not (0 < mean < upper):
        raise ValueError(
            f"recovery.mean: got {mean!r}; allowed: strictly between 0 and upper = {upper:g} "
            "for a beta law (0 or upper only with std 0)"
        )
    limit = largest_feasible_std(mean=mean, upper=upper)
    if not (0 < std < limit):
        raise ValueError(
            f"recovery.std: got {std!r}; allowed: above 0 and below {limit:.6f} for mean {mean:g} on [0, {upper:g}]"
        )
    m = mean / upper
    v = (std / upper) ** 2
    k = m * (1 - m) / v - 1
    return m * k, (1 - m) * k


@dataclass(frozen=True)
class RecoveryLaw:
    """Recovery rate R = c r_s + (1 - c) x upper x B, B ~ beta(alpha, beta) (or a point mass).

    Methods follow scipy's frozen distributions (ppf, cdf, pdf, mean, var, std) and use
    scipy.special for speed.
    """

    unsecured_mean: float
    """Mean of the unsecured law R_u [fraction]."""
    unsecured_std: float
    """Standard deviation of R_u [fraction]."""
    upper: float
    """Top of R_u's support, up to 1.5 [fraction]."""
    alpha: float | None
    """Beta shape a; None for a point mass."""
    beta: float | None
    """Beta shape b; None for a point mass."""
    floor: float = 0.0
    """Collateral cover c, the share of EAD covered [fraction]."""
    secured_recovery: float = 1.0
    """Recovery r_s = 1 - LGD_S of the covered part [fraction]."""

    @property
    def point_mass(self) -> bool:
        """True when the unsecured recovery is fixed (std 0): no beta shapes."""
        return self.alpha is None

    @property
    def scale(self) -> float:
        """Width (1 - c) x upper of the uncovered part's recovery range [fraction]."""
        return (1.0 - self.floor) * self.upper

    @property
    def offset(self) -> float:
        """The covered part's fixed recovery c r_s [fraction]."""
        return self.floor * self.secured_recovery

    @property
    def top(self) -> float:
        """Largest recovery: c r_s + (1 - c) upper [fraction]."""
        return self.offset + self.scale

    def mean(self) -> float:
        """Mean recovery c r_s + (1 - c) E[R_u] [fraction]."""
        return self.offset + (1.0 - self.floor) * self.unsecured_mean

    def var(self) -> float:
        """Variance of the recovery ((1 - c) std(R_u))^2 [fraction squared]."""
        return ((1.0 - self.floor) * self.unsecured_std) ** 2

    def std(self) -> float:
        """Standard deviation of the recovery [fraction]."""
        return math.sqrt(self.var())

    @property
    def _shapes(self) -> tuple[float, float]:
        """The beta shapes (a, b); a point mass has none (TypeError)."""
        if self.alpha is None or self.beta is None:
            raise TypeError("a point-mass recovery law has no beta shapes")
        return self.alpha, self.beta

    @cached_property
    def median_split(self) -> float:
        """Probability level u = I_{1/2}(a, b) at which the beta quantile is 1/2."""
        return float(special.betainc(*self._shapes, 0.5))

    @cached_property
    def _log_beta(self) -> float:
        """The log of the beta function, ln B(a, b), of the shapes."""
        return float(special.betaln(*self._shapes))

    def _unit_quantile(self, q: FloatArray) -> FloatArray:
        """Quantile of B ~ beta(a, b) accurate near both ends.

        Below the median split, z = I^-1_q(a, b); above it, z = 1 - I^-1_{1-q}(b, a), so a
        quantile close to 1 keeps its distance to 1 (the symmetry I_x(a, b) = 1 - I_{1-x}(b, a)).
        Deep in either tail the leading term I_z(a, b) ~ z^a / (a B(a, b)) (Abramowitz and
        Stegun 26.5.4) is inverted in logarithms: with shapes far below 1 (a std near its limit)
        the law is almost two atoms at 0 and 1 and the iterative inverse loses its digits.
        """
        a, b = self._shapes
        split = self.median_split
        log_beta = self._log_beta
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            low = special.betaincinv(a, b, q)
            low_lead = np.exp((np.log(q) + math.log(a) + log_beta) / a)
            low = np.where((low_lead < _LEAD_TERM) | np.isnan(low), low_lead, low)
            high = special.betaincinv(b, a, 1.0 - q)
            high_lead = np.exp((np.log1p(-q) + math.log(b) + log_beta) / b)
            high = np.where((high_lead < _LEAD_TERM) | np.isnan(high), high_lead, high)
        return np.where(q <= split, low, 1.0 - high)

    def _unit_quantile_scalar(self, q: float) -> float:
        """One probability level's :meth:`_unit_quantile`, same branches, scalar arithmetic.

        The covariance quadrature calls it some 20,000 times per memo, where the array path's
        set-up cost 30 us a call.
        """
        a, b = self._shapes
        if q <= self.median_split:
            if q <= 0.0:
                return 0.0
            lead = _exp_or_inf((math.log(q) + math.log(a) + self._log_beta) / a)
            if lead < _LEAD_TERM:
                return lead
            low = float(special.betaincinv(a, b, q))
            return lead if math.isnan(low) else low
        if q >= 1.0:
            return 1.0
        lead = _exp_or_inf((math.log1p(-q) + math.log(b) + self._log_beta) / b)
        if lead < _LEAD_TERM:
            return 1.0 - lead
        high = float(special.betaincinv(b, a, 1.0 - q))
        return 1.0 - (lead if math.isnan(high) else high)

    def ppf_scalar(self, q: float) -> float:
        """:meth:`ppf` of one probability level q in [0, 1] [fraction] (a float in, a float out).

        Parameters
        ----------
        q : float
            Probability level [fraction].

        Returns
        -------
        float
            The recovery rate below which a share q of outcomes falls [fraction].
        """
        if self.point_mass:
            return self.mean()
        return self.offset + self.scale * self._unit_quantile_scalar(q)

    @overload
    def ppf(self, q: float) -> float: ...
    @overload
    def ppf(self, q: npt.ArrayLike) -> float | FloatArray: ...
    def ppf(self, q: npt.ArrayLike) -> float | FloatArray:
        """Quantile function: the recovery rate below which a share ``q`` of outcomes falls.

        Parameters
        ----------
        q : npt.ArrayLike
            Probability level(s) in [0, 1] [fraction].

        Returns
        -------
        float | FloatArray
            Recovery rate(s) [fraction]: a float for a scalar input, else an array.
        """
        q = np.asarray(q, dtype=float)
        if self.point_mass:
            out = np.full_like(q, self.mean())
        else:
            out = self.offset + self.scale * self._unit_quantile(q)
        return float(out) if out.ndim == 0 else out

    @overload
    def cdf(self, x: float) -> float: ...
    @overload
    def cdf(self, x: npt.ArrayLike) -> float | FloatArray: ...
    def cdf(self, x: npt.ArrayLike) -> float | FloatArray:
        """Distribution function P(R <= x).

        Parameters
        ----------
        x : npt.ArrayLike
            Recovery rate(s) [fraction].

        Returns
        -------
        float | FloatArray
            P(R <= x) [fraction]: a float for a scalar input, else an array.
        """
        x = np.asarray(x, dtype=float)
        if self.point_mass:
            out = (x >= self.mean()).astype(float)
        else:
            z = np.clip((x - self.offset) / self.scale, 0.0, 1.0)
            out = special.betainc(*self._shapes, z)
        return float(out) if out.ndim == 0 else out

    def pdf(self, x: npt.ArrayLike) -> FloatArray:
        """Density [1/fraction]; 0 outside the support; undefined (nan-free 0) for a point mass.

        Parameters
        ----------
        x : npt.ArrayLike
            Recovery rate(s) [fraction].

        Returns
        -------
        FloatArray
            Density at ``x`` [1/fraction].
        """
        x = np.asarray(x, dtype=float)
        if self.point_mass:
            return np.zeros_like(x)
        z = (x - self.offset) / self.scale
        inside = (z > 0) & (z < 1)
        zc = np.where(inside, z, 0.5)
        a, b = self._shapes
        log_pdf = (a - 1) * np.log(zc) + (b - 1) * np.log1p(-zc) - special.betaln(a, b) - math.log(self.scale)
        return np.where(inside, np.exp(log_pdf), 0.0)

    def ppf_integral(self, u: float) -> float:
        """Integral of the quantile function from 0 to u, i.e. E[R 1{R <= F^-1(u)}] [fraction].

        For B ~ beta(a, b): E[B 1{B <= x}] = a / (a + b) I_x(a + 1, b) (the first incomplete moment
        of the beta law; I the regularised incomplete beta function), so with R = c + s B the
        integral is c u + s a/(a + b) I_{x(u)}(a + 1, b), x(u) = I^-1_u(a, b).

        Parameters
        ----------
        u : float
            Upper limit of the integral, in [0, 1] [fraction].

        Returns
        -------
        float
            E[R 1{R <= F^-1(u)}] [fraction].

        Raises
        ------
        ValueError
            If an input is outside its allowed range (the message names it, its value and what is allowed).
        """
        if not 0 <= u <= 1:
            raise ValueError(f"u: got {u!r}; allowed: 0 to 1")
        if self.point_mass:
            return self.mean() * u
        a, b = self._shapes
        m = a / (a + b)
        if u <= 0.0:
            return 0.0
        log_beta = self._log_beta
        if u <= self.median_split:
            x = float(self._unit_quantile(np.asarray(u)))
            if x < _LEAD_TERM:
                # I_x(a + 1, b) ~ x^(a+1) / ((a + 1) B(a + 1, b)), the leading term (A&S 26.5.4).
                incomplete = (
                    math.exp((a + 1.0) * math.log(x) - math.log(a + 1.0) - special.betaln(a + 1.0, b)) if x > 0 else 0.0
                )
            else:
                incomplete = float(special.betainc(a + 1.0, b, x))
            partial = m * incomplete
        else:
            # I_x(a + 1, b) = I_x(a, b) - x^a (1 - x)^b / (a B(a, b)) (Abramowitz and Stegun
            # 26.5.16), so E[B 1{B <= x}] = m (u - T), T = x^a (1 - x)^b / (a B(a, b)), with
            # y = 1 - x taken from its own end and T in logarithms. Deep in the upper tail the
            # leading term 1 - u ~ y^b / (b B(a, b)) gives T = (1 - u) b / a (1 - y)^a.
            y = 1.0 - float(self._unit_quantile(np.asarray(u))) if u < 1.0 else 0.0
            if u >= 1.0:
                t = 0.0
            elif y < _LEAD_TERM:
                t = (1.0 - u) * b / a * (1.0 - y) ** a
            else:
                t = math.exp(a * math.log1p(-y) + b * math.log(y) - math.log(a) - log_beta)
            partial = m * (u - t)
        return float(self.offset * u + self.scale * partial)

    @property
    def lgd(self) -> float:
        """Expected loss given default = 1 - mean recovery [fraction]."""
        return 1.0 - self.mean()


def recovery_law(
    *, mean: float, std: float, upper: float = 1.0, collateral_cover: float = 0.0, secured_recovery: float = 1.0
) -> RecoveryLaw:
    """Fit the unsecured beta law by moments (std 0 gives a point mass) and apply collateral cover.

    Parameters
    ----------
    mean : float
        Mean of the unsecured recovery R_u [fraction], in [0, upper].
    std : float
        Standard deviation of R_u [fraction]; 0 for a fixed recovery.
    upper : float, optional
        Top of R_u's support, in (0, 1.5] [fraction].
    collateral_cover : float, optional
        Share c of EAD covered by collateral after haircut, in [0, 1] [fraction].
    secured_recovery : float, optional
        Recovery r_s = 1 - LGD_S of the covered part, in [0, 1] [fraction].

    Returns
    -------
    RecoveryLaw
        The fitted law.

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if not 0 <= collateral_cover <= 1:
        raise ValueError(f"collateral cover: got {collateral_cover!r}; allowed: 0 to 1")
    if not 0 <= secured_recovery <= 1:
        raise ValueError(f"secured recovery: got {secured_recovery!r}; allowed: 0 to 1")
    if not (0 < upper <= MAX_UPPER):
        raise ValueError(f"recovery.upper: got {upper!r}; allowed: above 0 up to {MAX_UPPER:g}")
    if not (0 <= mean <= upper):
        raise ValueError(f"recovery.mean: got {mean!r}; allowed: 0 to upper = {upper:g}")
    if std < 1e-9 and std != 0:
        raise ValueError(f"recovery.std: got {std!r}; allowed: 0 (a fixed recovery) or at least 1e-9")
    if std == 0 or mean in (0.0, upper):
        if std != 0:
            raise ValueError(
                f"recovery.std: got {std!r}; allowed: 0 when the mean is {mean:g} (at the edge of [0, {upper:g}])"
            )
        return RecoveryLaw(mean, 0.0, upper, None, None, collateral_cover, secured_recovery)
    alpha, beta = beta_parameters_from_moments(mean=mean, std=std, upper=upper)
    return RecoveryLaw(mean, std, upper, alpha, beta, collateral_cover, secured_recovery)


def collateral_cover(*, collateral_value: float, haircut: float, ead: float) -> float:
    """Collateral cover c = min(C x (1 - haircut) / EAD, 1) [fraction]; 0 when EAD is 0.

    Parameters
    ----------
    collateral_value : float
        Collateral value before haircut [currency units].
    haircut : float
        Haircut on the collateral value [fraction], in [0, 1).
    ead : float
        Exposure at default [currency units].

    Returns
    -------
    float
        The covered share c [fraction], in [0, 1].
    """
    if ead <= 0:
        return 0.0
    return min(collateral_value * (1.0 - haircut) / ead, 1.0)


def downturn_lgd(law: RecoveryLaw, *, method: str, quantile: float = 0.9, add_on: float = 0.0) -> float:
    """Downturn LGD of a recovery law by the case's method.

    'quantile' takes the LGD at the chosen quantile of the loss-given-default law (recovery at
    1 - quantile); 'add_on' adds a fixed amount to the mean LGD, capped at 1; 'none' returns the
    mean LGD.

    Parameters
    ----------
    law : RecoveryLaw
        The facility's recovery law.
    method : str
        ``none``, ``quantile`` or ``add_on``.
    quantile : float, optional
        Quantile of the loss-given-default law for the ``quantile`` method [fraction].
    add_on : float, optional
        Amount added to the mean LGD for the ``add_on`` method [fraction].

    Returns
    -------
    float
        Downturn LGD [fraction].

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    if method == "none":
        return law.lgd
    if method == "quantile":
        return max(law.lgd, 1.0 - float(law.ppf(1.0 - quantile)))
    if method == "add_on":
        return min(law.lgd + add_on, 1.0)
    raise ValueError(f"lgd.downturn.method: got {method!r}; allowed: none, quantile, add_on")
