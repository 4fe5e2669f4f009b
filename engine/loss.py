"""Expected and unexpected loss of one facility and of the borrower.

EL = EAD x PD x LGD. With default ~ Bernoulli(PD) and loss given default of mean LGD and
variance var(LGD), independent of the default event:
UL = EAD sqrt(PD var(LGD) + LGD^2 PD (1 - PD))
(the standard deviation of the loss; e.g. Ong, Internal Credit Risk Models, 1999, and FRM
study material: PD 2.5 %, LGD 45 %, LGD std 25 %, EAD 10,000,000 -> EL 112,500, UL ~806,129).

All facilities of one borrower default together. Their recovery rates are joined either
comonotonically (one driver; conservative; std of the summed loss given default = sum of stds)
or independently (variances add).
"""

from __future__ import annotations

import math


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


def borrower_unexpected_loss(*, eads: list[float], lgds: list[float], lgd_stds: list[float], pd: float,
                             join: str = "comonotonic") -> float:
    """UL of the borrower's summed loss: one default event, recoveries joined as ``join`` says.

    Loss = D x S with S = sum EAD_i LGD_i (random); var = PD var(S) + E[S]^2 PD (1 - PD).
    """
    mean_s = sum(e * l for e, l in zip(eads, lgds))
    if join == "comonotonic":
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
    if not 0 <= lgd <= 1:
        raise ValueError(f"lgd: got {lgd!r}; allowed: 0 to 1")
