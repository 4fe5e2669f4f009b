"""The orchestrator: totals, the PD in force downstream, cautions, and an end-to-end PD check."""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest
from obligor_memo.engine.case import case_to_dict, parse_case
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loss import borrower_unexpected_loss
from scipy import stats


def test_totals_equal_sums(sample_results) -> None:
    f, t = sample_results.facilities, sample_results.total
    assert t.ead == pytest.approx(sum(x.ead for x in f), rel=1e-12)
    assert t.expected_loss == pytest.approx(sum(x.expected_loss for x in f), rel=1e-12)
    assert t.rwa == pytest.approx(sum(x.rwa for x in f), rel=1e-12)
    assert t.regulatory_capital == pytest.approx(sum(x.regulatory_capital for x in f), rel=1e-12)
    assert t.el_rate == pytest.approx(t.expected_loss / t.ead, rel=1e-12)
    # The standalone figure is the loss quantile less EL (one-year horizon in the sample); the
    # economic capital in force is the single-factor one, the sum of the facilities'.
    assert t.economic_capital_standalone == pytest.approx(max(t.value_at_risk - t.expected_loss, 0.0), rel=1e-9)
    assert t.economic_method == "single_factor"
    assert t.economic_capital == pytest.approx(sum(x.economic_capital for x in f), rel=1e-12)
    assert t.economic_capital == pytest.approx(t.economic_capital_single_factor, rel=1e-12)
    # One definition of regulatory capital: 8 % of RWA (Basel II para 44 scaling included when set).
    assert t.regulatory_capital == pytest.approx(0.08 * t.rwa, rel=1e-12)


def test_borrower_ul_is_the_exact_comonotonic_std(sample_results) -> None:
    f, pd = sample_results.facilities, sample_results.pd.pd
    # var(L) = PD E[S^2] - (PD E[S])^2 with S(U) = sum EAD (1 - F^-1(U)): E[S^2] by adaptive
    # quadrature (scipy.integrate.quad) of the same quantile functions, independently of the engine's
    # fixed Gauss-Legendre rule.
    from scipy import integrate

    laws = [sample_results.laws[x.id] for x in f]
    second = integrate.quad(
        lambda u: sum(x.ead * (1 - float(law.ppf(u))) for x, law in zip(f, laws)) ** 2, 0, 1, epsrel=1e-11, limit=400
    )[0]
    mean = sum(x.ead * x.lgd for x in f)
    expected = math.sqrt(pd * second - (pd * mean) ** 2)
    assert sample_results.total.unexpected_loss == pytest.approx(expected, rel=1e-8)
    # Below the bound with perfectly correlated LGDs, sqrt(PD (sum EAD sigma)^2 + E[S]^2 PD (1 - PD)).
    bound = math.sqrt(pd * sum(x.ead * x.lgd_std for x in f) ** 2 + mean**2 * pd * (1 - pd))
    assert sample_results.total.unexpected_loss <= bound * (1 + 1e-12)
    assert sample_results.total.unexpected_loss_sum == pytest.approx(sum(x.unexpected_loss for x in f))
    # Never below the largest single facility's UL, never above their sum.
    assert max(x.unexpected_loss for x in f) <= sample_results.total.unexpected_loss
    assert sample_results.total.unexpected_loss <= sum(x.unexpected_loss for x in f) * (1 + 1e-12)


def test_sample_pd_end_to_end_against_scipy(sample_case, sample_results) -> None:
    years = np.array([r.year for r in sample_case.statements], dtype=float)
    assets = np.array([r.total_assets for r in sample_case.statements])
    g = stats.linregress(years, np.log(assets)).slope
    s = np.std(np.diff(np.log(assets)), ddof=1)
    latest = sample_case.statements[-1]
    dp = 1.0 * latest.short_term_liabilities + 0.5 * latest.long_term_liabilities  # common practice
    mu = g + s**2 / 2
    dd = (math.log(latest.total_assets / dp) + (mu - s**2 / 2) * 1.0) / (s * 1.0)
    pd = sample_results.pd
    assert (pd.asset_value, pd.default_point) == (latest.total_assets, pytest.approx(dp, rel=1e-15))
    assert pd.asset_growth == pytest.approx(g, rel=1e-9)
    assert pd.asset_volatility == pytest.approx(s, rel=1e-12)
    assert pd.distance_to_default == pytest.approx(dd, rel=1e-9)
    assert pd.model_pd == pytest.approx(stats.norm.cdf(-dd), rel=1e-8)
    assert pd.pd == pd.model_pd and not pd.overridden
    assert pd.grade is not None and pd.grade_lower < pd.pd <= pd.grade_upper


def test_sample_facility_figures(sample_case, sample_results) -> None:
    by_id = {f.id: f for f in sample_results.facilities}
    # The revolver takes the Basel III commitment CCF of 40 % (from memory, CRE20).
    assert by_id["RCF-1"].ccf == 0.40
    assert by_id["RCF-1"].ead == pytest.approx(22e6 + 0.4 * 38e6, rel=1e-15)
    assert by_id["GTE-SF"].ead == pytest.approx(15e6, rel=1e-15)  # guarantee: 100 %
    assert by_id["LC-IMP"].ead == pytest.approx(1.6e6, rel=1e-15)  # trade LC: 20 %
    # TL-A: collateral 90m less a 40 % haircut covers 54m of 120m. The covered part takes the
    # secured LGD_S of 20 % (Basel III CRE32, foundation approach; from memory), the rest recovers
    # 55 % on average: LGD* = LGD_S E_S / E + LGD_U E_U / E. (The old rule made the covered
    # part loss-free, counting the security twice for a senior_secured facility.)
    tl = by_id["TL-A"]
    cover = 90e6 * 0.6 / 120e6
    assert tl.collateral_cover == pytest.approx(cover, rel=1e-15)
    assert tl.secured_lgd == 0.20
    assert tl.lgd == pytest.approx(cover * 0.20 + (1 - cover) * (1 - 0.55), rel=1e-12)
    for f in sample_results.facilities:
        assert f.expected_loss == pytest.approx(f.ead * sample_results.pd.pd * f.lgd, rel=1e-12)
        assert f.rwa == pytest.approx(f.risk_weight * f.capital_ead, rel=1e-12)
    # Facilities without a recovery block take 1 - the supervisory LGD (Basel III senior unsecured 40 %).
    assert by_id["RCF-1"].lgd == pytest.approx(0.40, rel=1e-12)


def test_override_pd_is_used_downstream(make_case) -> None:
    data = make_case()
    model = evaluate(parse_case(data))
    data["pd"] = {"override": 0.05, "override_reason": "Sector outlook deteriorated"}
    results = evaluate(parse_case(data))
    assert results.pd.pd == 0.05 and results.pd.overridden
    assert results.pd.model_pd == pytest.approx(model.pd.model_pd, rel=1e-15)  # kept for the memo
    assert results.pd.override_reason == "Sector outlook deteriorated"
    f = results.facilities[0]
    assert f.expected_loss == pytest.approx(f.ead * 0.05 * f.lgd, rel=1e-12)
    assert f.unexpected_loss == pytest.approx(
        f.ead * math.sqrt(0.05 * f.lgd_std**2 + f.lgd**2 * 0.05 * 0.95), rel=1e-12
    )
    assert f.capital_pd == 0.05
    # One facility: the exact comonotonic std (quadrature, ~1e-10) equals the closed form.
    assert results.total.unexpected_loss == pytest.approx(
        borrower_unexpected_loss(eads=[f.ead], lgds=[f.lgd], lgd_stds=[f.lgd_std], pd=0.05), rel=1e-8
    )
    assert results.pd.grade_lower < 0.05 <= results.pd.grade_upper
    # The term structure is built from the override (constant hazard), so year 1 is the override.
    assert results.term_structure.cumulative[0] == pytest.approx(0.05, rel=1e-12)
    assert "pd.override" in {c.code for c in results.cautions}


@pytest.mark.parametrize(
    ("change", "code"),
    [
        (lambda d: None, "trend.short_history"),
        (lambda d: d["facilities"][0].update(drawn=60.0), "exposure.overdrawn"),
        (lambda d: d.update(pd={"override": 0.0001, "override_reason": "Parent guarantee"}), "capital.pd_floor"),
        (lambda d: d.update(pd={"override": 0.0001, "override_reason": "Parent guarantee"}), "capital.economic_floor"),
        (
            lambda d: d.update(
                pricing={"proposed_spread": 0.02},
                capital={"economic_method": "standalone"},
                pd={"override": 0.0001, "override_reason": "Parent guarantee"},
            ),
            "pricing.undefined",
        ),
    ],
)
def test_cautions(make_case, change, code) -> None:
    data = make_case()
    change(data)
    results = evaluate(parse_case(data))
    cautions = {c.code: c for c in results.cautions}
    assert code in cautions
    assert cautions[code].message


def test_economic_floor_binds_only_below_one_minus_confidence(make_case) -> None:
    # One facility: the standalone loss quantile is 0 when PD <= 1 - q (DESIGN.md section 4);
    # the single-factor capital in force is not.
    data = make_case()
    data["pd"] = {"override": 0.0009, "override_reason": "test"}
    low = evaluate(parse_case(data))
    assert low.total.economic_capital_standalone == 0.0 and low.total.economic_capital_floored
    assert low.total.economic_capital > 0
    data["capital"] = {"economic_method": "standalone"}
    assert evaluate(parse_case(data)).total.economic_capital == 0.0
    data["pd"] = {"override": 0.02, "override_reason": "test"}
    high = evaluate(parse_case(data))
    assert high.total.economic_capital > 0 and not high.total.economic_capital_floored


def test_evaluate_changes_nothing_and_results_are_frozen(sample_case, sample_results) -> None:
    before = case_to_dict(sample_case)
    again = evaluate(sample_case)
    assert case_to_dict(sample_case) == before
    assert again.to_dict() == sample_results.to_dict()
    with pytest.raises(dataclasses.FrozenInstanceError):
        again.total = None  # type: ignore[misc]


def test_fingerprint_follows_the_inputs(make_case) -> None:
    first = evaluate(parse_case(make_case()))
    assert len(first.fingerprint) == 64
    data = make_case()
    data["statements"] = list(reversed(data["statements"]))  # same case once sorted
    assert evaluate(parse_case(data)).fingerprint == first.fingerprint
    data["facilities"][0]["drawn"] = 31.0
    assert evaluate(parse_case(data)).fingerprint != first.fingerprint


def test_to_dict_is_strict_json_with_the_contract(sample_results) -> None:
    out = json.loads(json.dumps(sample_results.to_dict(), allow_nan=False))
    assert out["pd"]["pd"] == sample_results.pd.pd
    assert [f["id"] for f in out["facilities"]] == [f.id for f in sample_results.facilities]
    assert out["total"]["ead"] == sample_results.total.ead
    assert parse_case(out["case"]) == sample_results.case


def test_window_changes_the_estimate(make_case) -> None:
    data = make_case()
    data["pd"] = {"window_years": 3}
    results = evaluate(parse_case(data))
    assets = np.array([112.0, 104.0, 120.0])
    assert results.trend.years == (2021, 2022, 2023)
    assert results.pd.asset_volatility == pytest.approx(np.std(np.diff(np.log(assets)), ddof=1), rel=1e-12)


def test_light_evaluation_gives_the_same_headline_figures(sample_case) -> None:
    # detail=False (used inside sensitivity loops) may skip only what no headline figure reads.
    full = evaluate(sample_case)
    light = evaluate(sample_case, detail=False)
    assert light.pd == full.pd
    assert light.total == full.total
    assert light.facilities == full.facilities
    assert light.pricing == full.pricing
    assert light.term_structure == full.term_structure
    assert light.zscores == () and light.market is None
