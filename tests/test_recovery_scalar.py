"""The scalar quantile path the covariance quadrature uses gives the array path's values, and
both agree with scipy.stats.beta.ppf where scipy's own inverse is accurate."""

from __future__ import annotations

import numpy as np
import pytest
from obligor_memo.engine.recovery import RecoveryLaw, beta_parameters_from_moments, largest_feasible_std
from scipy import stats

LEVELS = np.concatenate([np.linspace(0.0, 1.0, 1001), np.logspace(-300, -1, 120), 1.0 - np.logspace(-15, -1, 120)])


def _law(mean: float, std_share: float, floor: float = 0.3) -> RecoveryLaw:
    std = std_share * largest_feasible_std(mean=mean, upper=1.0)
    a, b = beta_parameters_from_moments(mean=mean, std=std, upper=1.0)
    return RecoveryLaw(mean, std, 1.0, a, b, floor, 0.8)


@pytest.mark.parametrize(
    "mean, std_share",
    [(0.4, 0.5), (0.55, 0.4), (0.1, 0.3), (0.9, 0.6), (0.5, 0.999), (0.02, 0.99), (0.3, 0.9999)],
)
def test_scalar_quantile_equals_the_array_path(mean, std_share):
    law = _law(mean, std_share)
    array = law.ppf(LEVELS)
    scalar = np.array([law.ppf_scalar(float(q)) for q in LEVELS])
    np.testing.assert_allclose(scalar, array, rtol=1e-14, atol=1e-15)


@pytest.mark.parametrize("mean, std_share", [(0.4, 0.5), (0.55, 0.4), (0.1, 0.3), (0.9, 0.6)])
def test_scalar_quantile_matches_scipy_beta(mean, std_share):
    """Moderate shapes, where scipy.stats.beta.ppf (the reference library) is accurate."""
    law = _law(mean, std_share, floor=0.0)
    levels = np.linspace(0.001, 0.999, 199)
    reference = stats.beta(law.alpha, law.beta).ppf(levels)
    np.testing.assert_allclose([law.ppf_scalar(float(q)) for q in levels], reference, rtol=1e-10, atol=1e-12)


def test_point_mass_scalar_quantile_is_the_mean():
    law = RecoveryLaw(0.45, 0.0, 1.0, None, None, 0.2, 0.9)
    assert law.ppf_scalar(0.3) == law.mean() == pytest.approx(0.2 * 0.9 + 0.8 * 0.45)
