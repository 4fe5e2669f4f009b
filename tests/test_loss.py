"""Expected and unexpected loss per facility and for the borrower."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.loss import borrower_unexpected_loss, expected_loss, unexpected_loss
from obligor_memo.engine.recovery import recovery_law


def test_published_el_and_ul_example() -> None:
    # FRM study material (recalled from memory): PD 2.5 %, LGD 45 %, LGD std 25 %, EAD 10,000,000
    # -> EL 112,500 and UL about 806,129.
    assert expected_loss(ead=10_000_000, pd=0.025, lgd=0.45) == pytest.approx(112_500, rel=1e-12)
    ul = unexpected_loss(ead=10_000_000, pd=0.025, lgd=0.45, lgd_std=0.25)
    assert ul == pytest.approx(806_129, abs=1.0)  # the source rounds to the currency unit


@pytest.mark.parametrize(
    ("ead", "pd", "lgd", "lgd_std"),
    [
        (1.0, 0.01, 0.45, 0.0),
        (250e6, 0.3, 0.8, 0.15),
        (5.0, 1.0, 0.5, 0.2),
        (5.0, 0.0, 0.5, 0.2),
    ],
)
def test_ul_is_the_std_of_bernoulli_times_an_independent_lgd(ead, pd, lgd, lgd_std) -> None:
    # Var(D L) = E[D] E[L^2] - (E[D] E[L])^2 for independent D ~ Bernoulli(PD) and L.
    second_moment = lgd_std**2 + lgd**2
    variance = pd * second_moment - (pd * lgd) ** 2
    assert unexpected_loss(ead=ead, pd=pd, lgd=lgd, lgd_std=lgd_std) == pytest.approx(
        ead * math.sqrt(max(variance, 0.0)), rel=1e-12, abs=1e-12
    )


def _formula(eads, lgds, stds, pd):
    return math.sqrt(
        pd * sum(e * s for e, s in zip(eads, stds)) ** 2 + sum(e * l for e, l in zip(eads, lgds)) ** 2 * pd * (1 - pd)
    )


def test_borrower_ul_comonotonic_formula() -> None:
    eads, lgds, stds, pd = [120.0, 37.2, 25.0], [0.25, 0.4, 0.8], [0.12, 0.25, 0.2], 0.02
    assert borrower_unexpected_loss(eads=eads, lgds=lgds, lgd_stds=stds, pd=pd) == pytest.approx(
        _formula(eads, lgds, stds, pd), rel=1e-12
    )


def test_borrower_ul_independent_join_adds_variances() -> None:
    eads, lgds, stds, pd = [120.0, 37.2], [0.25, 0.4], [0.12, 0.25], 0.02
    expected = math.sqrt(pd * ((120 * 0.12) ** 2 + (37.2 * 0.25) ** 2) + (120 * 0.25 + 37.2 * 0.4) ** 2 * pd * (1 - pd))
    assert borrower_unexpected_loss(eads=eads, lgds=lgds, lgd_stds=stds, pd=pd, join="independent") == pytest.approx(
        expected, rel=1e-12
    )
    with pytest.raises(ValueError, match="capital.recovery_join: got 'gaussian'"):
        borrower_unexpected_loss(eads=eads, lgds=lgds, lgd_stds=stds, pd=pd, join="gaussian")


@settings(max_examples=200, deadline=None)
@given(
    ead=st.floats(0, 1e12),
    pd=st.floats(0, 1),
    lgd=st.floats(0, 1),
    lgd_std=st.floats(0, 0.5),
    join=st.sampled_from(["comonotonic", "independent"]),
)
def test_borrower_ul_of_one_facility_is_the_facility_ul(ead, pd, lgd, lgd_std, join) -> None:
    single = unexpected_loss(ead=ead, pd=pd, lgd=lgd, lgd_std=lgd_std)
    joined = borrower_unexpected_loss(eads=[ead], lgds=[lgd], lgd_stds=[lgd_std], pd=pd, join=join)
    assert joined == pytest.approx(single, rel=1e-12, abs=1e-9)


@pytest.mark.parametrize("join", ["comonotonic", "independent"])
def test_borrower_ul_matches_a_simulation(join) -> None:
    # Monte Carlo with numpy's own beta sampler: one default event; recoveries drawn independently,
    # or made comonotonic by sorting every sample (pairing equal ranks is the comonotonic coupling).
    # 400,000 draws at PD 20 % put the std's standard error near 0.3 %; 2 % is over five of them.
    rng = np.random.default_rng(20240611)
    n, pd = 400_000, 0.2
    eads = [120.0, 40.0, 25.0]
    laws = [
        recovery_law(mean=0.55, std=0.22),
        recovery_law(mean=0.6, std=0.25),
        recovery_law(mean=0.2, std=0.18, upper=0.9),
    ]
    recoveries = [law.upper * rng.beta(law.alpha, law.beta, size=n) for law in laws]
    if join == "comonotonic":
        recoveries = [np.sort(r) for r in recoveries]
    default = rng.random(n) < pd
    loss = default * sum(e * (1 - r) for e, r in zip(eads, recoveries))
    ul = borrower_unexpected_loss(
        eads=eads, lgds=[law.lgd for law in laws], lgd_stds=[law.std() for law in laws], pd=pd, join=join
    )
    assert np.std(loss) == pytest.approx(ul, rel=0.02)
    # With the laws, the comonotonic std is exact (quadrature) rather than the correlation-one bound.
    exact = borrower_unexpected_loss(
        eads=eads, lgds=[law.lgd for law in laws], lgd_stds=[law.std() for law in laws], pd=pd, join=join, laws=laws
    )
    assert np.std(loss) == pytest.approx(exact, rel=0.01)
    assert exact <= ul * (1 + 1e-12)
    assert np.mean(loss) == pytest.approx(sum(e * pd * law.lgd for e, law in zip(eads, laws)), rel=0.02)


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"ead": -1.0}, "ead: got -1.0"),
        ({"ead": math.inf}, "ead: got inf"),
        ({"pd": 1.2}, "pd: got 1.2"),
        ({"lgd": -0.6}, "lgd: got -0.6"),  # down to -0.5 allowed: recoveries above par
        ({"pd": math.nan}, "pd: got nan"),
    ],
)
def test_bad_parameters_are_named(kwargs, fragment) -> None:
    arguments = {"ead": 10.0, "pd": 0.1, "lgd": 0.4, **kwargs}
    with pytest.raises(ValueError, match=fragment):
        expected_loss(**arguments)
    with pytest.raises(ValueError, match=fragment):
        unexpected_loss(lgd_std=0.1, **arguments)


def test_negative_lgd_std_is_named() -> None:
    with pytest.raises(ValueError, match="lgd_std: got -0.1"):
        unexpected_loss(ead=1.0, pd=0.1, lgd=0.4, lgd_std=-0.1)


# ---------------------------------------------------------------- equal laws pooled (comonotonic)


def test_equal_laws_are_pooled_in_order_and_unhashable_laws_stay_apart():
    from obligor_memo.engine.loss import pooled_by_law

    a, b = recovery_law(mean=0.55, std=0.22), recovery_law(mean=0.2, std=0.18, upper=0.9)
    again = recovery_law(mean=0.55, std=0.22)  # equal to a, another object

    class Unhashable:
        __hash__ = None

    odd = Unhashable()
    pooled = pooled_by_law([10.0, 5.0, 0.0, 2.5, 1.0, 4.0], [a, b, a, again, odd, b])
    assert pooled == [(12.5, a), (9.0, b), (1.0, odd)]


def test_pooled_second_moment_equals_the_integral_of_every_facility():
    """E[S^2] with equal laws pooled against the comonotonic definition itself: the integral
    over u of (sum_i EAD_i (1 - F_i^-1(u)))^2, facility by facility (scipy.integrate.quad)."""
    from obligor_memo.engine.loss import comonotonic_second_moment
    from scipy import integrate

    a, b = recovery_law(mean=0.55, std=0.22), recovery_law(mean=0.2, std=0.18, upper=0.9)
    eads, laws = [3.0, 1.0, 2.0, 0.5, 4.0], [a, b, a, recovery_law(mean=0.55, std=0.22), b]

    def square(u: float) -> float:
        return sum(e * (1.0 - float(law.ppf(u))) for e, law in zip(eads, laws)) ** 2

    points = sorted({float(law.median_split) for law in (a, b)})
    reference = sum(
        integrate.quad(square, lo, hi, epsabs=1e-13, epsrel=1e-11, limit=200)[0]
        for lo, hi in zip([0.0] + points, points + [1.0])
    )
    assert comonotonic_second_moment(eads=eads, laws=laws) == pytest.approx(reference, rel=1e-8)


def test_pooled_loss_quantiles_equal_the_sum_over_facilities():
    from obligor_memo.engine.lossdist import _loss_given_default_comonotonic

    a, b = recovery_law(mean=0.55, std=0.22), recovery_law(mean=0.2, std=0.18, upper=0.9)
    eads, laws = np.array([3.0, 1.0, 2.0, 4.0]), [a, b, a, b]
    u = np.linspace(0.0, 1.0, 101)
    by_facility = sum(e * (1.0 - np.asarray(law.ppf(u))) for e, law in zip(eads, laws))
    np.testing.assert_allclose(_loss_given_default_comonotonic(u, eads, laws), by_facility, rtol=1e-13)
