"""Checks for engine.market: the Merton (1974) solve and the Bharath-Shumway naive DD.

Every expected value comes from outside the module: a published worked example,
or the same quantity computed here a different way with scipy (norm, fsolve,
root, quad) straight from the textbook formulas.
"""

from __future__ import annotations

import math
import time

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.market import (
    MertonBatch,
    MertonSolution,
    merton_equity_value,
    solve_merton,
    solve_merton_many,
)
from obligor_memo.engine.naive_dd import NaiveDD, naive_distance_to_default
from scipy import integrate, optimize
from scipy.stats import lognorm, norm

# ---------------------------------------------------------------- reference code
# Written from the textbook formulas with scipy.stats.norm, sharing nothing with
# the module under test.


def reference_d1_d2(V, s, D, r, T):
    d1 = (math.log(V / D) + (r + s * s / 2) * T) / (s * math.sqrt(T))
    return d1, d1 - s * math.sqrt(T)


def reference_equity(V, s, D, r, T):
    d1, d2 = reference_d1_d2(V, s, D, r, T)
    return V * norm.cdf(d1) - D * math.exp(-r * T) * norm.cdf(d2)


def reference_equity_volatility(V, s, D, r, T):
    d1, _ = reference_d1_d2(V, s, D, r, T)
    return norm.cdf(d1) * s * V / reference_equity(V, s, D, r, T)


def relative_gaps(V, s, E, sE, D, r, T):
    """The two Merton equations as relative residuals, evaluated with scipy.stats.norm."""
    d1, _ = reference_d1_d2(V, s, D, r, T)
    return (reference_equity(V, s, D, r, T) / E - 1.0, norm.cdf(d1) * s * V / (sE * E) - 1.0)


def scipy_fsolve(E, sE, D, r, T):
    """V, s by scipy.optimize.fsolve on the two equations, unknowns (ln V, ln s)."""
    start = [math.log(E + D), math.log(sE * E / (E + D))]
    root, info, flag, message = optimize.fsolve(
        lambda z: relative_gaps(math.exp(z[0]), math.exp(z[1]), E, sE, D, r, T), start, xtol=1e-13, full_output=True
    )
    assert flag == 1, message
    return math.exp(root[0]), math.exp(root[1])


def scipy_root(E, sE, D, r, T):
    """V, s by scipy.optimize.root (hybrid Powell, then Levenberg-Marquardt)."""
    start = [math.log(E + D), math.log(sE * E / (E + D))]
    gaps = lambda z: relative_gaps(math.exp(z[0]), math.exp(z[1]), E, sE, D, r, T)  # noqa: E731
    for method in ("hybr", "lm"):
        result = optimize.root(gaps, start, method=method, tol=1e-13)
        if result.success and max(abs(g) for g in gaps(result.x)) < 1e-10:
            return math.exp(result.x[0]), math.exp(result.x[1])
    raise AssertionError(f"scipy could not solve {E, sE, D, r, T}")


# ---------------------------------------------------------------- published example


def test_textbook_merton_example():
    # Hull, Options, Futures, and Other Derivatives, the Merton-model example in the
    # credit-risk chapter: E = 3, sE = 80 %, r = 5 %, D = 10, T = 1 year gives
    # V = 12.40, s = 21.23 %, risk-neutral PD = N(-d2) = 12.7 %. Values recalled
    # from memory. Tolerances: half a unit in the last digit printed there.
    solution = solve_merton(
        equity_value=3.0, equity_volatility=0.80, default_point=10.0, risk_free_rate=0.05, horizon_years=1.0
    )
    assert isinstance(solution, MertonSolution)
    assert solution.asset_value == pytest.approx(12.40, abs=0.005)
    assert solution.asset_volatility == pytest.approx(0.2123, abs=0.00005)
    assert solution.pd == pytest.approx(0.127, abs=0.0005)
    assert solution.measure == "risk_neutral"
    assert solution.distance_to_default == solution.d2


# ---------------------------------------------------------------- against scipy solvers

# (E, sE, D, r, T) in different regions of the problem.
SCIPY_CASES = {
    "low leverage": (80.0, 0.30, 20.0, 0.03, 1.0),
    "high leverage": (2.0, 1.10, 60.0, 0.04, 1.0),
    "long horizon": (25.0, 0.45, 70.0, 0.02, 10.0),
    "short horizon": (10.0, 0.60, 40.0, 0.01, 0.25),
    "negative rate": (40.0, 0.25, 50.0, -0.005, 2.0),
}


@pytest.mark.parametrize("E, sE, D, r, T", SCIPY_CASES.values(), ids=SCIPY_CASES.keys())
def test_solution_matches_scipy_fsolve(E, sE, D, r, T):
    V_ref, s_ref = scipy_fsolve(E, sE, D, r, T)
    _, d2_ref = reference_d1_d2(V_ref, s_ref, D, r, T)
    solution = solve_merton(equity_value=E, equity_volatility=sE, default_point=D, risk_free_rate=r, horizon_years=T)
    # Both solvers stop near 1e-12 relative residual; 1e-8 leaves room for the
    # conditioning of the 2x2 system in the high-leverage case.
    assert solution.asset_value == pytest.approx(V_ref, rel=1e-8)
    assert solution.asset_volatility == pytest.approx(s_ref, rel=1e-8)
    assert solution.d2 == pytest.approx(d2_ref, rel=1e-7, abs=1e-9)
    assert solution.pd == pytest.approx(norm.cdf(-d2_ref), rel=1e-6, abs=1e-15)
    assert solution.leverage == pytest.approx(D / V_ref, rel=1e-8)
    assert solution.residual <= 1e-9
    assert max(abs(g) for g in relative_gaps(solution.asset_value, solution.asset_volatility, E, sE, D, r, T)) < 1e-9


def test_physical_measure_uses_the_drift():
    E, sE, D, r, T, mu = 25.0, 0.45, 70.0, 0.02, 3.0, 0.07
    V_ref, s_ref = scipy_fsolve(E, sE, D, r, T)
    # Merton DD with the physical drift, written out by hand.
    dd_ref = (math.log(V_ref / D) + (mu - s_ref**2 / 2) * T) / (s_ref * math.sqrt(T))
    solution = solve_merton(
        equity_value=E, equity_volatility=sE, default_point=D, risk_free_rate=r, horizon_years=T, asset_drift=mu
    )
    assert solution.measure == "physical"
    assert solution.asset_drift == mu
    assert solution.distance_to_default == pytest.approx(dd_ref, rel=1e-8)
    assert solution.pd == pytest.approx(norm.cdf(-dd_ref), rel=1e-7)
    # With mu > r the physical PD must be below the risk-neutral one: from the two
    # formulas, DD - d2 = (mu - r) sqrt(T) / s > 0.
    assert solution.pd < norm.cdf(-solution.d2)


# ---------------------------------------------------------------- round trip

# (V, s, D, r, T): pick the assets, price the equity with scipy.stats.norm, solve back.
ROUND_TRIPS = [
    (150.0, 0.25, 100.0, 0.03, 1.0),
    (1_000.0, 0.08, 900.0, 0.01, 1.0),
    (40.0, 0.60, 5.0, 0.05, 0.5),
    (100.0, 0.35, 95.0, 0.02, 20.0),
    (100.0, 1.20, 5_000.0, 0.03, 8.0),  # deep distress, long horizon: the fall-back region
    (2.5e9, 0.18, 1.9e9, 0.04, 1.0),  # realistic currency scale
]


@pytest.mark.parametrize("V, s, D, r, T", ROUND_TRIPS)
def test_round_trip_recovers_assets(V, s, D, r, T):
    E = reference_equity(V, s, D, r, T)
    sE = reference_equity_volatility(V, s, D, r, T)
    solution = solve_merton(equity_value=E, equity_volatility=sE, default_point=D, risk_free_rate=r, horizon_years=T)
    # E and sE come from norm.cdf to about 1e-15; the inverse problem loses a
    # few digits to leverage, so 1e-7 relative.
    assert solution.asset_value == pytest.approx(V, rel=1e-7)
    assert solution.asset_volatility == pytest.approx(s, rel=1e-7)
    assert solution.pd == pytest.approx(norm.cdf(-reference_d1_d2(V, s, D, r, T)[1]), rel=1e-6)


def test_merton_equity_value_matches_integrated_payoff():
    # E = e^{-rT} E_Q[max(V_T - D, 0)], V_T lognormal: integrated numerically with
    # scipy.integrate.quad against scipy.stats.lognorm, a different route to the price.
    V, s, D, r, T = 120.0, 0.3, 100.0, 0.04, 2.0
    terminal = lognorm(s=s * math.sqrt(T), scale=V * math.exp((r - s * s / 2) * T))
    payoff, _ = integrate.quad(lambda v: (v - D) * terminal.pdf(v), D, np.inf, epsabs=1e-12, epsrel=1e-12)
    E = merton_equity_value(asset_value=V, asset_volatility=s, default_point=D, risk_free_rate=r, horizon_years=T)
    assert isinstance(E, float)
    assert E == pytest.approx(math.exp(-r * T) * payoff, rel=1e-9)  # quad error ~1e-12
    arrays = merton_equity_value(
        asset_value=[V, 2 * V], asset_volatility=s, default_point=D, risk_free_rate=r, horizon_years=T
    )
    assert arrays.shape == (2,)
    assert arrays[1] == pytest.approx(reference_equity(2 * V, s, D, r, T), rel=1e-12)


# ---------------------------------------------------------------- vectorised solver


def random_borrowers(count: int, seed: int):
    rng = np.random.default_rng(seed)
    E = rng.lognormal(mean=4.0, sigma=1.5, size=count)
    D = E * np.exp(rng.uniform(np.log(0.05), np.log(50.0), size=count))
    sE = rng.uniform(0.10, 1.50, size=count)
    r = rng.uniform(0.0, 0.06, size=count)
    T = rng.uniform(0.5, 10.0, size=count)
    return E, sE, D, r, T


def test_vectorised_solver_agrees_with_scipy_loop():
    E, sE, D, r, T = random_borrowers(200, seed=20240601)
    batch = solve_merton_many(equity_value=E, equity_volatility=sE, default_point=D, risk_free_rate=r, horizon_years=T)
    assert isinstance(batch, MertonBatch)
    assert batch.asset_value.shape == (200,)
    assert batch.converged.all() and batch.failures == ()
    # This sample sends some borrowers through the bracketed fall-back, so both
    # solver paths are compared with scipy.
    assert batch.used_fallback.any() and not batch.used_fallback.all()
    for i in range(200):
        V_ref, s_ref = scipy_root(E[i], sE[i], D[i], r[i], T[i])
        # 1e-7: both sides meet the equations to ~1e-10 relative.
        assert batch.asset_value[i] == pytest.approx(V_ref, rel=1e-7), i
        assert batch.asset_volatility[i] == pytest.approx(s_ref, rel=1e-7), i
        _, d2_ref = reference_d1_d2(V_ref, s_ref, D[i], r[i], T[i])
        assert batch.pd[i] == pytest.approx(norm.cdf(-d2_ref), rel=1e-5, abs=1e-14), i


def test_scalar_wrapper_equals_batch_element():
    E, sE, D, r, T = random_borrowers(5, seed=7)
    batch = solve_merton_many(
        equity_value=E, equity_volatility=sE, default_point=D, risk_free_rate=r, horizon_years=T, asset_drift=0.05
    )
    one = solve_merton(
        equity_value=E[3],
        equity_volatility=sE[3],
        default_point=D[3],
        risk_free_rate=r[3],
        horizon_years=T[3],
        asset_drift=0.05,
    )
    assert one.asset_value == batch.asset_value[3]
    assert one.pd == batch.pd[3]
    assert batch.measure == one.measure == "physical"


def test_batch_broadcasts_and_is_read_only():
    batch = solve_merton_many(
        equity_value=[[3.0], [6.0]],
        equity_volatility=[0.4, 0.8],
        default_point=10.0,
        risk_free_rate=0.05,
        horizon_years=1.0,
    )
    assert batch.pd.shape == batch.converged.shape == (2, 2)
    assert batch.asset_value[0, 1] == pytest.approx(12.40, abs=0.005)  # the textbook case
    with pytest.raises(ValueError):
        batch.pd[0, 0] = 0.0  # read-only: a memo cannot be altered after the fact
    with pytest.raises(AttributeError):
        batch.measure = "physical"


def test_failures_are_flagged_not_silent():
    batch = solve_merton_many(
        equity_value=[3.0, -1.0, 1e-300, 3.0],
        equity_volatility=[0.8, 0.8, 0.8, np.nan],
        default_point=[10.0, 10.0, 1e300, 10.0],
        risk_free_rate=0.05,
        horizon_years=1.0,
        invalid="flag",
    )
    assert batch.converged.tolist() == [True, False, False, False]
    assert np.isnan(batch.asset_value[1:]).all() and np.isnan(batch.pd[1:]).all()
    reasons = dict(batch.failures)
    assert sorted(reasons) == [1, 2, 3]
    assert "equity_value=-1.0" in reasons[1]
    assert "equity_value=1e-300 is too small" in reasons[2]
    assert "equity_volatility=nan" in reasons[3]
    assert batch.pd[0] == pytest.approx(0.127, abs=0.0005)  # good rows still solved
    with pytest.raises(ValueError, match="equity_value=1e-300.*check"):
        solve_merton(
            equity_value=1e-300, equity_volatility=0.8, default_point=1e300, risk_free_rate=0.05, horizon_years=1.0
        )


@settings(max_examples=150, deadline=None)
@given(
    E=st.floats(1e-3, 1e7),
    leverage=st.floats(1e-3, 1e4),
    sE=st.floats(0.01, 5.0),
    r=st.floats(-0.02, 0.2),
    T=st.floats(0.05, 30.0),
)
def test_converged_means_equations_hold(E, leverage, sE, r, T):
    # Whatever comes back as converged must satisfy both equations when checked
    # independently with scipy.stats.norm; anything else must carry a reason.
    D = E * leverage
    batch = solve_merton_many(equity_value=E, equity_volatility=sE, default_point=D, risk_free_rate=r, horizon_years=T)
    if batch.converged:
        gaps = relative_gaps(float(batch.asset_value), float(batch.asset_volatility), E, sE, D, r, T)
        assert max(abs(g) for g in gaps) < 1e-8
        assert 0.0 <= float(batch.pd) <= 1.0
    else:
        assert np.isnan(batch.pd) and len(batch.failures) == 1


def test_hundred_thousand_borrowers_are_fast():
    E, sE, D, r, T = random_borrowers(100_000, seed=11)
    started = time.perf_counter()
    batch = solve_merton_many(equity_value=E, equity_volatility=sE, default_point=D, risk_free_rate=r, horizon_years=T)
    elapsed = time.perf_counter() - started
    assert batch.converged.all()
    # Target is well under 1 s; 2 s leaves room for a loaded test machine.
    assert elapsed < 2.0, f"{elapsed:.2f} s for 100,000 borrowers"


# ---------------------------------------------------------------- properties

BORROWER = dict(
    E=st.floats(1.0, 1_000.0),
    leverage=st.floats(0.05, 50.0),
    sE=st.floats(0.05, 1.5),
    r=st.floats(0.0, 0.08),
    T=st.floats(0.25, 10.0),
)


def merton(E, sE, D, r, T):
    return solve_merton(equity_value=E, equity_volatility=sE, default_point=D, risk_free_rate=r, horizon_years=T)


def assert_riskier(riskier, safer):
    # DD is checked as well as PD because PD underflows to 0 for very safe
    # borrowers while DD stays resolvable. Slack 1e-9 relative on DD is the solver
    # tolerance; 1e-6 relative on PD is that slack carried through N(-DD).
    assert riskier.distance_to_default <= safer.distance_to_default + 1e-9 * abs(safer.distance_to_default)
    assert riskier.pd >= safer.pd * (1 - 1e-6)


@settings(max_examples=60, deadline=None)
@given(**BORROWER, bump=st.floats(1.01, 2.0))
def test_pd_rises_with_default_point(E, leverage, sE, r, T, bump):
    assert_riskier(merton(E, sE, E * leverage * bump, r, T), merton(E, sE, E * leverage, r, T))


@settings(max_examples=60, deadline=None)
@given(**BORROWER, bump=st.floats(1.01, 2.0))
def test_pd_rises_with_equity_volatility(E, leverage, sE, r, T, bump):
    assert_riskier(merton(E, sE * bump, E * leverage, r, T), merton(E, sE, E * leverage, r, T))


@settings(max_examples=60, deadline=None)
@given(**BORROWER, bump=st.floats(1.01, 2.0))
def test_pd_falls_with_equity_value(E, leverage, sE, r, T, bump):
    assert_riskier(merton(E, sE, E * leverage, r, T), merton(E * bump, sE, E * leverage, r, T))


# ---------------------------------------------------------------- bad inputs

GOOD = dict(equity_value=3.0, equity_volatility=0.8, default_point=10.0, risk_free_rate=0.05, horizon_years=1.0)
BAD = [
    ("equity_value", 0.0),
    ("equity_value", -3.0),
    ("equity_value", math.inf),
    ("equity_value", "three"),
    ("equity_volatility", 0.0),
    ("equity_volatility", -0.2),
    ("equity_volatility", 80.0),
    ("default_point", 0.0),
    ("default_point", math.nan),
    ("risk_free_rate", 5.0),
    ("risk_free_rate", math.nan),
    ("horizon_years", 0.0),
    ("horizon_years", -1.0),
    ("asset_drift", math.inf),
    ("asset_drift", 4.0),
]


@pytest.mark.parametrize("name, value", BAD)
def test_bad_input_names_the_argument(name, value):
    with pytest.raises(ValueError, match=name) as caught:
        solve_merton(**{**GOOD, name: value})
    assert "allowed" in str(caught.value)
    with pytest.raises(ValueError, match=name):
        solve_merton_many(**{**GOOD, name: [value, 1.0]})


def test_bad_batch_input_names_the_element():
    with pytest.raises(ValueError, match=r"default_point=-2.0 \(element 1\)"):
        solve_merton_many(**{**GOOD, "default_point": [10.0, -2.0]})
    with pytest.raises(ValueError, match="broadcast"):
        solve_merton_many(**{**GOOD, "equity_value": [1.0, 2.0], "default_point": [1.0] * 3})
    with pytest.raises(ValueError, match="invalid"):
        solve_merton_many(**GOOD, invalid="ignore")
    with pytest.raises(ValueError, match="equity_value.*solve_merton_many"):
        solve_merton(**{**GOOD, "equity_value": [3.0, 4.0]})


@pytest.mark.parametrize(
    "name", ["asset_value", "asset_volatility", "default_point", "risk_free_rate", "horizon_years"]
)
def test_equity_value_bad_input_names_the_argument(name):
    good = dict(asset_value=12.0, asset_volatility=0.2, default_point=10.0, risk_free_rate=0.05, horizon_years=1.0)
    with pytest.raises(ValueError, match=name):
        merton_equity_value(**{**good, name: math.nan})


# ---------------------------------------------------------------- Bharath-Shumway


def test_naive_distance_to_default_by_hand():
    # Bharath and Shumway (2008), Review of Financial Studies 21(3), the naive DD,
    # written out by hand with scipy.stats.norm.
    E, sE, F, T, mu = 50.0, 0.60, 80.0, 1.0, 0.08
    sigma_d = 0.05 + 0.25 * sE
    sigma_v = E / (E + F) * sE + F / (E + F) * sigma_d
    dd = (math.log((E + F) / F) + (mu - sigma_v**2 / 2) * T) / (sigma_v * math.sqrt(T))
    result = naive_distance_to_default(
        equity_value=E, equity_volatility=sE, face_value_debt=F, horizon_years=T, trailing_equity_return=mu
    )
    assert isinstance(result, NaiveDD)
    assert result.debt_volatility == pytest.approx(0.20, rel=1e-15)
    assert result.asset_value == E + F
    assert result.asset_volatility == pytest.approx(sigma_v, rel=1e-14)
    assert result.distance_to_default == pytest.approx(dd, rel=1e-13)
    assert result.pd == pytest.approx(norm.cdf(-dd), rel=1e-12)
    assert result.drift_source == "trailing_equity_return" and result.drift == mu


def test_naive_drift_falls_back_to_risk_free_rate():
    kwargs = dict(equity_value=50.0, equity_volatility=0.6, face_value_debt=80.0, horizon_years=1.0)
    fallback = naive_distance_to_default(**kwargs, risk_free_rate=0.03)
    explicit = naive_distance_to_default(**kwargs, trailing_equity_return=0.03)
    assert fallback.drift_source == "risk_free_rate" and fallback.drift == 0.03
    assert fallback.trailing_equity_return is None
    assert fallback.distance_to_default == explicit.distance_to_default
    with pytest.raises(ValueError, match="trailing_equity_return and risk_free_rate"):
        naive_distance_to_default(**kwargs)
    with pytest.raises(ValueError, match="face_value_debt"):
        naive_distance_to_default(**{**kwargs, "face_value_debt": 0.0}, risk_free_rate=0.03)


def test_naive_distance_to_default_is_vectorised():
    E = np.array([10.0, 50.0, 400.0])
    many = naive_distance_to_default(
        equity_value=E,
        equity_volatility=0.5,
        face_value_debt=80.0,
        horizon_years=1.0,
        trailing_equity_return=[0.1, -0.3, 0.0],
    )
    assert many.pd.shape == (3,)
    for i, mu in enumerate([0.1, -0.3, 0.0]):
        one = naive_distance_to_default(
            equity_value=E[i], equity_volatility=0.5, face_value_debt=80.0, horizon_years=1.0, trailing_equity_return=mu
        )
        assert many.pd[i] == pytest.approx(one.pd, rel=1e-14)
