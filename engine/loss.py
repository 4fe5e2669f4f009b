"""Expected and unexpected loss of one facility and of the borrower.

EL = EAD x PD x LGD. With default ~ Bernoulli(PD) and loss given default of mean LGD and
variance var(LGD), independent of the default event:
UL = EAD sqrt(PD var(LGD) + LGD^2 PD (1 - PD))
(the standard deviation of the loss; e.g. Ong, Internal Credit Risk Models, 1999, and FRM
study material: PD 2.5 %, LGD 45 %, LGD std 25 %, EAD 10,000,000 -> EL 112,500, UL ~806,129).

All facilities of one borrower default together. Their recovery rates are joined either
comonotonically (one driver, R_i = F_i^-1(U); conservative) or independently (variances add).
Under the comonotonic join the summed loss given default S(U) = sum EAD_i (1 - F_i^-1(U)) has
E[S^2] = integral_0^1 S(u)^2 du, computed by Gauss-Legendre quadrature (80 nodes after the
substitution u = (1 - cos(pi t))/2, which tames the quantile functions' steep ends); without the
laws, the bound sd(S) <= sum EAD_i sd_i (correlation at most one) is used instead.
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import Any, Sequence

import numpy as np
from scipy.special import roots_legendre


def expected_loss(*, ead: float, pd: float, lgd: float) -> float:
    """EL [currency] = EAD [currency] x PD [fraction] x LGD [fraction]."""
    _check(ead=ead, pd=pd, lgd=lgd)
    return ead * pd * lgd


def unexpected_loss(*, ead: float, pd: float, lgd: float, lgd_std: float) -> float:
    """UL [currency] = EAD sqrt(PD sigma_LGD^2 + LGD^2 PD (1 - PD))."""
    _check(ead=ead, pd=pd, lgd=lgd)
    if lgd_std < 0:
        raise ValueError(f"lgd_std: got {lgd_std!r}; allowed: >= 0")
    return ead * math.sqrt(pd * lgd_std**2 + lgd**2 * pd * (1 - pd))


@lru_cache(maxsize=4)
def _unit_nodes(n: int = 80) -> tuple[np.ndarray, np.ndarray]:
    """Nodes u and weights on [0, 1] for integral_0^1 f(u) du, clustered towards both ends."""
    t, w = roots_legendre(n)
    t, w = (t + 1) / 2, w / 2
    return (1 - np.cos(np.pi * t)) / 2, w * np.pi / 2 * np.sin(np.pi * t)


def comonotonic_second_moment(*, eads: Sequence[float], laws: Sequence[Any]) -> float:
    """E[S^2] for S = sum EAD_i (1 - R_i), R_i = F_i^-1(U) (laws with a vectorised ``ppf``)."""
    u, w = _unit_nodes()
    s = sum(e * (1.0 - np.asarray(law.ppf(u), dtype=float)) for e, law in zip(eads, laws))
    return float(np.sum(w * s * s))


def borrower_unexpected_loss(*, eads: list[float], lgds: list[float], lgd_stds: list[float], pd: float,
                             join: str = "comonotonic", laws: Sequence[Any] | None = None) -> float:
    """UL of the borrower's summed loss: one default event, recoveries joined as ``join`` says.

    Loss = D x S with S = sum EAD_i LGD_i (random); var = PD var(S) + E[S]^2 PD (1 - PD).
    With the recovery ``laws`` the comonotonic var(S) is exact (quadrature); without them it is
    the upper bound (sum EAD_i sd_i)^2.
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
