"""Recovery-rate laws: beta by moments on [0, upper], point masses, collateral and downturn LGD,
checked against scipy.stats.beta."""

from __future__ import annotations

import math

import numpy as np
import pytest
from obligor_memo.engine.recovery import (
    beta_parameters_from_moments,
    collateral_cover,
    downturn_lgd,
    largest_feasible_std,
    recovery_law,
    seniority_recovery_mean,
)
from scipy import stats


def test_method_of_moments_published_example() -> None:
    # Mean 0.8, std 0.1 on [0, 1] -> alpha 12, beta 3: the method-of-moments beta example in the
    # documentation of the R package hesim (mom_beta), recalled from memory.
    alpha, beta = beta_parameters_from_moments(mean=0.8, std=0.1)
    assert alpha == pytest.approx(12.0, rel=1e-12)
    assert beta == pytest.approx(3.0, rel=1e-12)


MOMENTS = [
    (0.8, 0.1, 1.0),
    (0.45, 0.25, 1.0),
    (0.55, 0.22, 1.0),
    (0.2, 0.18, 0.9),
    (0.05, 0.04, 0.5),
    (0.6, 0.01, 1.0),
    (0.7, 0.3, 0.9),
]


@pytest.mark.parametrize(("mean", "std", "upper"), MOMENTS)
def test_beta_moments_round_trip_with_scipy(mean, std, upper) -> None:
    alpha, beta = beta_parameters_from_moments(mean=mean, std=std, upper=upper)
    reference = stats.beta(alpha, beta, scale=upper)
    # Tolerance: closed-form moments of the fitted law; only rounding separates them.
    assert reference.mean() == pytest.approx(mean, rel=1e-12)
    assert reference.var() == pytest.approx(std**2, rel=1e-10)
    law = recovery_law(mean=mean, std=std, upper=upper)
    assert law.mean() == pytest.approx(reference.mean(), rel=1e-12)
    assert law.var() == pytest.approx(reference.var(), rel=1e-10)
    assert law.lgd == pytest.approx(1 - mean, rel=1e-12)


@pytest.mark.parametrize(("mean", "std", "upper"), MOMENTS)
def test_quantiles_cdf_and_density_match_scipy(mean, std, upper) -> None:
    law = recovery_law(mean=mean, std=std, upper=upper)
    reference = stats.beta(law.alpha, law.beta, scale=upper)
    q = np.array([0.001, 0.05, 0.25, 0.5, 0.75, 0.95, 0.999])
    np.testing.assert_allclose(law.ppf(q), reference.ppf(q), rtol=1e-9, atol=1e-14)
    x = np.linspace(0.01, 0.99, 9) * upper
    np.testing.assert_allclose(law.cdf(x), reference.cdf(x), rtol=1e-9, atol=1e-14)
    np.testing.assert_allclose(law.pdf(x), reference.pdf(x), rtol=1e-9, atol=1e-12)
    assert law.pdf(np.array([-0.1, upper + 0.01])).tolist() == [0.0, 0.0]


@pytest.mark.parametrize(("mean", "upper"), [(0.4, 1.0), (0.0, 1.0), (0.9, 0.9), (0.3, 0.6)])
def test_std_zero_is_a_point_mass(mean, upper) -> None:
    law = recovery_law(mean=mean, std=0.0, upper=upper)
    assert law.point_mass and law.alpha is None and law.beta is None
    assert (law.mean(), law.var(), law.lgd) == (mean, 0.0, pytest.approx(1 - mean))
    assert law.ppf(np.array([0.01, 0.5, 0.99])).tolist() == [mean] * 3
    assert law.cdf(np.array([mean - 1e-9, mean])).tolist() == [0.0, 1.0]


def test_largest_feasible_std() -> None:
    # A law on [0, u] with mean m has variance at most m (u - m) (Bhatia-Davis inequality).
    assert largest_feasible_std(mean=0.5) == 0.5
    assert largest_feasible_std(mean=0.6, upper=0.8) == pytest.approx(math.sqrt(0.6 * 0.2), rel=1e-15)
    assert largest_feasible_std(mean=0.0) == 0.0


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"mean": 0.5, "std": 0.5}, "below 0.500000"),
        ({"mean": 0.6, "std": 0.4, "upper": 0.8}, f"below {math.sqrt(0.12):.6f}"),
        ({"mean": 0.0, "std": 0.1}, "strictly between 0 and upper"),
        ({"mean": 0.5, "std": 0.1, "upper": 1.6}, "recovery.upper: got 1.6"),  # up to 1.5 allowed
    ],
)
def test_infeasible_moments_give_the_limit(kwargs, fragment) -> None:
    with pytest.raises(ValueError) as caught:
        beta_parameters_from_moments(**kwargs)
    assert fragment in str(caught.value)


def test_recovery_law_refuses_spread_at_the_edge() -> None:
    with pytest.raises(ValueError, match="recovery.std: got 0.1"):
        recovery_law(mean=0.0, std=0.1)
    with pytest.raises(ValueError, match="collateral cover"):
        recovery_law(mean=0.5, std=0.1, collateral_cover=1.5)


@pytest.mark.parametrize(
    ("value", "haircut", "ead", "expected"),
    [
        (90e6, 0.40, 120e6, 54e6 / 120e6),  # C (1 - H) / EAD (Basel II para 147's E* = E - C(1 - Hc))
        (100.0, 0.0, 50.0, 1.0),  # capped at full cover
        (0.0, 0.2, 50.0, 0.0),
        (10.0, 0.2, 0.0, 0.0),  # nothing exposed, nothing to cover
    ],
)
def test_collateral_cover_formula(value, haircut, ead, expected) -> None:
    assert collateral_cover(collateral_value=value, haircut=haircut, ead=ead) == pytest.approx(expected, rel=1e-15)


def test_collateral_lifts_the_floor_of_the_recovery_law() -> None:
    # R = c + (1 - c) R_u with R_u ~ upper x beta(alpha, beta): a shifted, scaled beta in scipy terms.
    c, mean, std = 0.45, 0.55, 0.22
    law = recovery_law(mean=mean, std=std, collateral_cover=c)
    reference = stats.beta(law.alpha, law.beta, loc=c, scale=1 - c)
    assert law.mean() == pytest.approx(reference.mean(), rel=1e-12)
    assert law.std() == pytest.approx(reference.std(), rel=1e-10)
    assert law.lgd == pytest.approx((1 - c) * (1 - mean), rel=1e-12)
    q = np.array([0.05, 0.5, 0.95])
    np.testing.assert_allclose(law.ppf(q), reference.ppf(q), rtol=1e-9)
    np.testing.assert_allclose(law.cdf(np.array([0.5, 0.8])), reference.cdf([0.5, 0.8]), rtol=1e-9)


@pytest.mark.parametrize(
    ("standard", "seniority", "mean"),
    [
        # Foundation-IRB supervisory LGDs, from memory: Basel II (2006) paras 287, 288, 295;
        # Basel III final (Dec 2017) CRE32 -- senior unsecured 40 %, subordinated 75 %, secured 20 %.
        ("basel_ii", "senior_unsecured", 0.55),
        ("basel_ii", "subordinated", 0.25),
        ("basel_ii", "senior_secured", 0.65),
        ("basel_iii", "senior_unsecured", 0.60),
        ("basel_iii", "subordinated", 0.25),
        ("basel_iii", "senior_secured", 0.80),
    ],
)
def test_seniority_recovery_means(standard, seniority, mean) -> None:
    value, source = seniority_recovery_mean(seniority, standard)
    assert value == pytest.approx(mean, rel=1e-15)
    assert ("Basel III" if standard == "basel_iii" else "Basel II") in source


def test_unknown_seniority_is_named() -> None:
    with pytest.raises(ValueError, match="'senior'"):
        seniority_recovery_mean("senior")


def test_downturn_lgd() -> None:
    law = recovery_law(mean=0.6, std=0.25)
    reference = stats.beta(law.alpha, law.beta)
    assert downturn_lgd(law, method="none") == pytest.approx(0.4, rel=1e-12)
    # The LGD at the 90 % quantile of the loss law is one minus the 10 % quantile of recovery.
    assert downturn_lgd(law, method="quantile", quantile=0.9) == pytest.approx(1 - reference.ppf(0.1), rel=1e-9)
    assert downturn_lgd(law, method="add_on", add_on=0.1) == pytest.approx(0.5, rel=1e-12)
    assert downturn_lgd(recovery_law(mean=0.05, std=0.0), method="add_on", add_on=0.2) == 1.0
    # A quantile below the median never lowers the LGD under the mean.
    assert downturn_lgd(law, method="quantile", quantile=0.5) >= law.lgd
    with pytest.raises(ValueError, match="lgd.downturn.method: got 'stress'"):
        downturn_lgd(law, method="stress")
