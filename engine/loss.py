"""Expected and unexpected loss of one facility and of the borrower.

EL = EAD x PD x LGD. With default ~ Bernoulli(PD) and loss given default of mean LGD and
variance var(LGD), independent of the default event:
UL = EAD sqrt(PD var(LGD) + LGD^2 PD (1 - PD))
(the standard deviation of the loss; e.g. Ong, Internal Credit Risk Models, 1999, and FRM
study material: PD 2.5 %, LGD 45 %, LGD std 25 %, EAD 10,000,000 -> EL 112,500, UL ~806,129).

All facilities of one borrower default together. Their recovery rates are joined either
comonotonically (one driver, R_i = F_i^-1(U); conservative) or independently (variances add).
Under the comonotonic join the summed loss given default S(U) = sum EAD_i (1 - F_i^-1(U)) has
E[S^2] = E[S]^2 + sum_ij EAD_i EAD_j cov(R_i, R_j): each variance exact, each covariance exact
for laws of one shape and otherwise by adaptive quadrature in the quantile domain, split where
the quantile functions jump (see ``_quantile_covariance``); without the laws, the bound
sd(S) <= sum EAD_i sd_i (correlation at most one) is used instead.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Sequence
from functools import lru_cache
from typing import Any


def expected_loss(*, ead: float, pd: float, lgd: float) -> float:
    """EL [currency units] = EAD [currency units] x PD [fraction] x LGD [fraction].

    Parameters
    ----------
    ead : float
        Exposure at default [currency units].
    pd : float
        Probability of default over the horizon [fraction], in [0, 1].
    lgd : float
        Loss given default [fraction].

    Returns
    -------
    float
        EL [currency units].
    """
    _check(ead=ead, pd=pd, lgd=lgd)
    return ead * pd * lgd


def unexpected_loss(*, ead: float, pd: float, lgd: float, lgd_std: float) -> float:
    """UL [currency units] = EAD sqrt(PD sigma_LGD^2 + LGD^2 PD (1 - PD)).

    Parameters
    ----------
    ead : float
        Exposure at default [currency units].
    pd : float
        Probability of default over the horizon [fraction], in [0, 1].
    lgd : float
        Loss given default [fraction].
    lgd_std : float
        Standard deviation of the LGD [fraction], >= 0.

    Returns
    -------
    float
        UL [currency units].

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    _check(ead=ead, pd=pd, lgd=lgd)
    if lgd_std < 0:
        raise ValueError(f"lgd_std: got {lgd_std!r}; allowed: >= 0")
    return ead * math.sqrt(pd * lgd_std**2 + lgd**2 * pd * (1 - pd))


def _breakpoints(law: Any) -> list[float]:
    """Where a law's quantile function turns fastest: the median split of a beta law."""
    split = getattr(law, "median_split", None)
    if split is None or getattr(law, "point_mass", False):
        return []
    return [float(split)]


def _quantile_covariance(first: Any, second: Any) -> float:
    """cov(R_i, R_j) = integral_0^1 (F_i^-1(u) - mu_i)(F_j^-1(u) - mu_j) du, R = F^-1(U).

    Exact where the two laws are affine images of one beta law (same shapes: cov = s_i s_j
    var(B)) or one is a point mass (0); otherwise adaptive quadrature (scipy.integrate.quad,
    QUADPACK QAGS with its endpoint extrapolation) split at both laws' median splits, where
    quantile functions of shapes far below 1 jump.
    """
    if getattr(first, "point_mass", False) or getattr(second, "point_mass", False):
        return 0.0
    if (
        getattr(first, "alpha", None) is not None
        and first.alpha == getattr(second, "alpha", None)
        and first.beta == second.beta
    ):
        a, b = first.alpha, first.beta
        return first.scale * second.scale * a * b / ((a + b) ** 2 * (a + b + 1.0))
    if all(getattr(law, "alpha", None) is not None and hasattr(law, "scale") for law in (first, second)):
        # R = offset + scale B: the covariance is scale_i scale_j cov of the unit beta quantiles,
        # one quadrature per pair of shapes (cached: what-if loops repeat the same shapes).
        return first.scale * second.scale * _unit_covariance(first.alpha, first.beta, second.alpha, second.beta)
    return _covariance_by_quadrature(first, second)


def _covariance_by_quadrature(first: Any, second: Any) -> float:
    from scipy import integrate  # deferred: only laws of different shapes need it

    m1, m2 = float(first.mean()), float(second.mean())
    q1, q2 = _scalar_quantile(first), _scalar_quantile(second)
    points = sorted(set(_breakpoints(first) + _breakpoints(second)))
    edges = [0.0] + [p for p in points if 0.0 < p < 1.0] + [1.0]
    total = 0.0
    with warnings.catch_warnings():
        # Shapes far below 1 (a std at its limit) make near-step quantiles; QUADPACK warns about
        # the steps yet its extrapolated value stays within a few ulps of the integrand's scale.
        warnings.simplefilter("ignore", integrate.IntegrationWarning)
        for low, high in zip(edges[:-1], edges[1:]):
            value, _ = integrate.quad(
                lambda u: (q1(u) - m1) * (q2(u) - m2),
                low,
                high,
                epsabs=1e-15,
                epsrel=1e-11,
                limit=200,
            )
            total += value
    return total


def _scalar_quantile(law: Any) -> Callable[[float], float]:
    """The law's quantile function of one float: its scalar path where it has one."""
    scalar = getattr(law, "ppf_scalar", None)
    return scalar if scalar is not None else (lambda u: float(law.ppf(u)))


@lru_cache(maxsize=256)
def _unit_covariance(a1: float, b1: float, a2: float, b2: float) -> float:
    """Covariance of the beta(a1, b1) and beta(a2, b2) quantiles of one uniform, on [0, 1]."""
    from obligor_memo.engine.recovery import RecoveryLaw  # the law type the engine fits

    def unit(a: float, b: float) -> RecoveryLaw:
        m = a / (a + b)
        return RecoveryLaw(m, math.sqrt(m * (1 - m) / (a + b + 1.0)), 1.0, a, b)

    return _covariance_by_quadrature(unit(a1, b1), unit(a2, b2))


def pooled_by_law(eads: Sequence[float], laws: Sequence[Any]) -> list[tuple[float, Any]]:
    """The exposures summed per recovery law (equal laws once), in order of first appearance.

    Under the comonotonic join every recovery is F_i^-1(U) of one uniform U, so facilities with
    equal laws recover alike: sum_i EAD_i (1 - F^-1(U)) over them is (sum_i EAD_i)(1 - F^-1(U)).
    Pooling them is exact and makes the loss and its moments cost one term per distinct law
    (facilities on one seniority preset share a law). Laws that cannot be hashed are kept apart.

    Parameters
    ----------
    eads : Sequence[float]
        Exposure at default of each facility [currency units].
    laws : Sequence[Any]
        Recovery law of each facility.

    Returns
    -------
    list[tuple[float, Any]]
        (summed exposure, law) per distinct law, exposures of 0 left out.
    """
    pooled: list[list[Any]] = []  # [summed exposure, law]
    where: dict[Any, int] = {}
    for ead, law in zip(eads, laws):
        if not ead > 0:
            continue
        try:
            at = where.get(law)
        except TypeError:  # an unhashable law stands alone
            pooled.append([float(ead), law])
            continue
        if at is None:
            where[law] = len(pooled)
            pooled.append([float(ead), law])
        else:
            pooled[at][0] += float(ead)
    return [(total, law) for total, law in pooled]


def comonotonic_second_moment(*, eads: Sequence[float], laws: Sequence[Any]) -> float:
    """E[S^2] for S = sum EAD_i (1 - R_i), R_i = F_i^-1(U) (laws with ``ppf``, ``mean``, ``var``).

    E[S^2] = E[S]^2 + sum_i sum_j EAD_i EAD_j cov(R_i, R_j): the variances are exact, each
    covariance as :func:`_quantile_covariance` says (exact or controlled to about 1e-11).

    Parameters
    ----------
    eads : Sequence[float]
        Exposure at default of each facility [currency units].
    laws : Sequence[Any]
        Recovery law of each facility (objects with ``ppf``, ``mean`` and ``var``).

    Returns
    -------
    float
        E[S^2] [currency units squared].
    """
    mean_s = sum(e * (1.0 - float(law.mean())) for e, law in zip(eads, laws))
    var_s = 0.0
    # Equal laws pooled (exact: their recoveries move as one); one covariance per pair of laws.
    active = pooled_by_law(eads, laws)
    for i, (ei, li) in enumerate(active):
        var_s += ei * ei * float(li.var())
        for ej, lj in active[i + 1 :]:
            var_s += 2.0 * ei * ej * _quantile_covariance(li, lj)
    return mean_s**2 + max(var_s, 0.0)


def borrower_unexpected_loss(
    *,
    eads: list[float],
    lgds: list[float],
    lgd_stds: list[float],
    pd: float,
    join: str = "comonotonic",
    laws: Sequence[Any] | None = None,
) -> float:
    """UL of the borrower's summed loss: one default event, recoveries joined as ``join`` says.

    Loss = D x S with S = sum EAD_i LGD_i (random); var = PD var(S) + E[S]^2 PD (1 - PD).
    With the recovery ``laws`` the comonotonic var(S) is exact (quadrature); without them it is
    the upper bound (sum EAD_i sd_i)^2.

    Parameters
    ----------
    eads : list[float]
        Exposure at default of each facility [currency units].
    lgds : list[float]
        Mean LGD of each facility [fraction].
    lgd_stds : list[float]
        Standard deviation of each facility's LGD [fraction].
    pd : float
        Probability of default over the horizon [fraction], in [0, 1].
    join : str, optional
        How recoveries are joined: ``comonotonic`` or ``independent``.
    laws : Sequence[Any] | None, optional
        Recovery law of each facility, for the exact comonotonic variance; None for the upper bound.

    Returns
    -------
    float
        UL of the borrower [currency units].

    Raises
    ------
    ValueError
        If an input is outside its allowed range (the message names it, its value and what is allowed).
    """
    mean_s = sum(e * l for e, l in zip(eads, lgds))
    if join == "comonotonic":
        if laws is not None:
            var_s = max(comonotonic_second_moment(eads=eads, laws=laws) - mean_s**2, 0.0)
        else:
            var_s = sum(e * s for e, s in zip(eads, lgd_stds)) ** 2
    elif join == "independent":
        var_s = sum((e * s) ** 2 for e, s in zip(eads, lgd_stds))
    else:
        raise ValueError(f"capital.recovery_join: got {join!r}; allowed: comonotonic, independent")
    return math.sqrt(pd * var_s + mean_s**2 * pd * (1 - pd))


def _check(*, ead: float, pd: float, lgd: float) -> None:
    if not (ead >= 0 and math.isfinite(ead)):
        raise ValueError(f"ead: got {ead!r}; allowed: a finite amount >= 0")
    if not 0 <= pd <= 1:
        raise ValueError(f"pd: got {pd!r}; allowed: 0 to 1")
    if not -0.5 <= lgd <= 1:
        raise ValueError(f"lgd: got {lgd!r}; allowed: -0.5 to 1 (below 0 only with recoveries above par)")
