"""Capital and pricing on the right basis: one-year PD, single-factor capital, amounts priced.

Each check names the outside reference it rests on.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.engine.capital import irb_corporate_capital, irb_corporate_correlation, single_factor_capital
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.loss import borrower_unexpected_loss
from obligor_memo.engine.lossdist import loss_distribution
from obligor_memo.engine.recovery import recovery_law
from scipy import integrate
from scipy.stats import norm


def _case(make_case, **sections):
    data = make_case()
    for key, value in sections.items():
        data[key] = value
    return data


# --------------------------------------------------------------------------- finding 1: one-year PD


def test_capital_uses_the_one_year_pd_of_the_model(make_case):
    # CRE32.3 / Basel II para 285: the IRB PD is a one-year PD. The structural one-year PD is
    # N(-DD(1)) with DD(1) = (ln V/DP + g) / s (Merton 1974; scipy's normal CDF as reference).
    data = _case(make_case, pd={"horizon_years": 2.0})
    r = evaluate(parse_case(data))
    p = r.pd
    dd1 = (math.log(p.asset_value / p.default_point) + p.asset_return - p.asset_volatility**2 / 2) / p.asset_volatility
    assert p.pd_one_year == pytest.approx(norm.cdf(-dd1), rel=1e-12)
    assert p.pd_one_year != pytest.approx(p.pd, rel=1e-3)  # the 2-year PD differs
    f = r.facilities[0]
    assert f.capital_pd == max(p.pd_one_year, 0.0005)
    assert f.expected_loss == pytest.approx(f.ead * p.pd * f.lgd, rel=1e-12)  # horizon EL
    assert f.expected_loss_one_year == pytest.approx(f.ead * p.pd_one_year * f.lgd, rel=1e-12)
    assert r.total.pd_horizon == p.pd and r.total.pd_one_year == p.pd_one_year
    assert "pd.one_year" in {c.code for c in r.cautions}


@pytest.mark.parametrize("stated, horizon", [(1.0, 1.0), (1.0, 3.0), (5.0, 1.0), (5.0, 2.0)])
def test_override_horizon_is_converted_at_a_constant_hazard(make_case, stated, horizon):
    # Constant hazard: 1 - PD_T = (1 - PD_1)^T (common practice; the term structure's own rule).
    data = _case(
        make_case,
        pd={"horizon_years": horizon, "override": 0.10, "override_reason": "sector", "override_horizon_years": stated},
    )
    r = evaluate(parse_case(data))
    annual = 1 - (1 - 0.10) ** (1 / stated)
    assert r.pd.pd_one_year == pytest.approx(annual, rel=1e-12)
    assert r.pd.pd == pytest.approx(1 - (1 - annual) ** horizon, rel=1e-12)
    assert r.term_structure.cumulative[0] == pytest.approx(annual, rel=1e-12)
    assert r.facilities[0].capital_pd == pytest.approx(annual, rel=1e-12)


def test_override_horizon_defaults_to_the_case_horizon(make_case):
    data = _case(make_case, pd={"horizon_years": 2.0, "override": 0.04, "override_reason": "x"})
    r = evaluate(parse_case(data))
    assert r.pd.pd == 0.04 and r.pd.override_horizon_years == 2.0
    assert r.pd.pd_one_year == pytest.approx(1 - math.sqrt(0.96), rel=1e-12)


# --------------------------------------------------------------------------- findings 2, 4: capital


@pytest.mark.parametrize("pd", [0.0005, 0.003, 0.02, 0.15, 0.6])
@pytest.mark.parametrize("sales", [None, 12.0])
def test_single_factor_equals_irb_k_with_irb_inputs(pd, sales):
    # With the IRB correlation, q = 99.9 %, the same LGD and M = 1 the one-factor capital is the
    # IRB K (Basel II para 272; the check needs no other source).
    irb = irb_corporate_capital(pd=pd, lgd=0.45, maturity_years=1.0, annual_sales_eur_millions=sales, pd_floor=0.0)
    rho = irb_corporate_correlation(pd, sales)
    assert rho == pytest.approx(irb.correlation, rel=1e-14)
    assert single_factor_capital(pd=pd, lgd=0.45, correlation=rho) == pytest.approx(irb.k, rel=1e-12)
    # ... and with the maturity adjustment at any M, the IRB K at that M.
    irb3 = irb_corporate_capital(pd=pd, lgd=0.45, maturity_years=3.0, annual_sales_eur_millions=sales, pd_floor=0.0)
    assert single_factor_capital(pd=pd, lgd=0.45, correlation=rho, maturity_years=3.0) == pytest.approx(
        irb3.k, rel=1e-12
    )


def test_single_factor_capital_against_the_vasicek_quantile():
    # Vasicek (2002): the q-quantile of the portfolio loss rate is N((G(PD) + sqrt(rho) G(q)) /
    # sqrt(1 - rho)); scipy.stats.norm as reference.
    pd, rho, q = 0.01, 0.15, 0.995
    expected = 0.6 * (norm.cdf((norm.ppf(pd) + math.sqrt(rho) * norm.ppf(q)) / math.sqrt(1 - rho)) - pd)
    assert single_factor_capital(pd=pd, lgd=0.6, correlation=rho, confidence=q) == pytest.approx(expected, rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=1e-5, max_value=0.2), st.floats(min_value=1.0001, max_value=1.01))
def test_single_factor_capital_is_continuous_and_increasing_in_pd(pd, ratio):
    # Property: no jump at PD = 1 - q (unlike the standalone quantile), and rising in PD in
    # the range of performing borrowers (K peaks only at PDs far above 20 %).
    rho = 0.2
    low = single_factor_capital(pd=pd, lgd=0.45, correlation=rho)
    high = single_factor_capital(pd=pd * ratio, lgd=0.45, correlation=rho)
    assert high > low
    near = single_factor_capital(pd=pd * (1 + 1e-9), lgd=0.45, correlation=rho)
    assert abs(near - low) <= 1e-6 * low


def test_economic_capital_is_smooth_across_one_minus_confidence(make_case):
    # The standalone figure jumps from 0 to most of the LGD as PD crosses 0.1 %; the
    # single-factor figure in force moves by a fraction of a per cent.
    below, above = [], []
    for pd, out in ((0.00099, below), (0.00101, above)):
        data = _case(make_case, pd={"override": pd, "override_reason": "x"})
        out.append(evaluate(parse_case(data)).total)
    assert below[0].economic_capital_standalone == 0.0 and above[0].economic_capital_standalone > 0
    assert above[0].economic_capital == pytest.approx(below[0].economic_capital, rel=0.03)


def test_economic_correlation_and_method_keys(make_case):
    data = _case(make_case, capital={"economic_correlation": 0.3})
    r = evaluate(parse_case(data))
    f = r.facilities[0]
    expected = f.ead * single_factor_capital(pd=r.pd.pd_one_year, lgd=f.lgd, correlation=0.3)
    assert f.economic_capital == pytest.approx(expected, rel=1e-12)
    assert "set in the case" in r.total.economic_basis
    data = _case(make_case, capital={"economic_method": "standalone"})
    r = evaluate(parse_case(data))
    assert r.total.economic_capital == r.total.economic_capital_standalone


def test_scaling_factor_scales_rwa_and_regulatory_capital_alike(make_case):
    # Basel II para 44: the 1.06 factor scales RWA; capital is 8 % of RWA, so it scales too.
    plain = evaluate(parse_case(make_case())).total
    data = _case(make_case, capital={"scaling_factor": True})
    scaled = evaluate(parse_case(data))
    assert scaled.total.rwa == pytest.approx(1.06 * plain.rwa, rel=1e-12)
    assert scaled.total.regulatory_capital == pytest.approx(0.08 * scaled.total.rwa, rel=1e-12)
    assert scaled.pricing is None or scaled.pricing.capital_regulatory == scaled.total.regulatory_capital


# --------------------------------------------------------------------------- finding 9, 10: F-IRB


def test_secured_lgd_on_the_covered_part_only(make_case):
    # Basel III CRE32 (foundation approach, collateralised exposures; from memory):
    # LGD* = LGD_S x covered share + LGD_U x uncovered share, LGD_S 20 %, LGD_U 40 %.
    data = make_case()
    data["facilities"][0].update(seniority="senior_secured", drawn=50.0, collateral={"value": 25.0, "haircut": 0.0})
    f = evaluate(parse_case(data)).facilities[0]
    assert f.collateral_cover == 0.5
    assert f.lgd == pytest.approx(0.5 * 0.20 + 0.5 * 0.40, rel=1e-12)  # not 10 %
    data["lgd"] = {"standard": "basel_ii"}  # Basel II paras 287, 295: 45 % and 35 %
    f = evaluate(parse_case(data)).facilities[0]
    assert f.lgd == pytest.approx(0.5 * 0.35 + 0.5 * 0.45, rel=1e-12)


def test_effective_maturity_and_foundation_ccf_options(make_case):
    # Basel II para 318: foundation M = 2.5 years; para 311: commitments 75 % in F-IRB.
    r = evaluate(parse_case(make_case()))
    assert r.facilities[0].capital_maturity == 2.5
    data = _case(make_case, capital={"effective_maturity": "own"})
    assert evaluate(parse_case(data)).facilities[0].capital_maturity == 3.0
    data = _case(make_case, capital={"capital_ccf": "foundation"}, exposure={"ccf_standard": "basel_ii"})
    f = evaluate(parse_case(data)).facilities[0]
    assert f.capital_ccf == 0.75 and f.capital_ead == pytest.approx(30 + 0.75 * 20, rel=1e-15)
    assert f.ccf == 0.5 and f.ead == pytest.approx(30 + 0.5 * 20, rel=1e-15)  # EL keeps its CCF


def test_pd_floor_on_the_regulatory_el(make_case):
    # CRE32.4: the PD floor applies to the EL as well as to the risk weight.
    data = _case(make_case, pd={"override": 0.0001, "override_reason": "x"})
    f = evaluate(parse_case(data)).facilities[0]
    assert f.regulatory_expected_loss == pytest.approx(0.0005 * f.capital_lgd * f.capital_ead, rel=1e-12)
    data["capital"] = {"el_pd_floor": False}
    f = evaluate(parse_case(data)).facilities[0]
    assert f.regulatory_expected_loss == pytest.approx(0.0001 * f.capital_lgd * f.capital_ead, rel=1e-12)


# --------------------------------------------------------------------------- findings 3, 8: pricing


def _priced(make_case, facilities, **pricing):
    data = make_case()
    data["facilities"] = facilities
    data["pricing"] = {
        "proposed_spread": 0.02,
        "base_rate": 0.03,
        "funding_spread": 0.005,
        "operating_cost_rate": 0.002,
        "hurdle_rate": 0.12,
        "capital_basis": "regulatory",
        **pricing,
    }
    return evaluate(parse_case(data))


def test_each_rate_on_its_amount(make_case):
    # Common practice: interest and funding on the drawn amount, commitment fee on the undrawn,
    # issuance fee on the amount issued; operating cost, EL and capital on the EAD.
    r = _priced(
        make_case,
        [
            {
                "id": "L",
                "kind": "revolver",
                "committed": 100.0,
                "drawn": 40.0,
                "seniority": "senior_unsecured",
                "maturity_years": 3.0,
            },
            {
                "id": "G",
                "kind": "guarantee",
                "committed": 20.0,
                "drawn": 0.0,
                "seniority": "senior_unsecured",
                "maturity_years": 2.0,
                "pricing": {"issuance_fee_rate": 0.015},
            },
        ],
        commitment_fee_rate=0.004,
        issuance_fee_rate=0.01,
    )
    loan, gte = r.pricing.facilities
    fl, fg = r.facilities
    assert loan.interest_income == pytest.approx(0.05 * 40, rel=1e-12)
    assert loan.commitment_fee_income == pytest.approx(0.004 * 60, rel=1e-12)
    assert loan.funding_cost == pytest.approx(0.035 * 40, rel=1e-12)
    assert loan.operating_cost == pytest.approx(0.002 * fl.ead, rel=1e-12)
    assert loan.expected_loss == pytest.approx(fl.expected_loss_one_year, rel=1e-12)
    assert gte.issuance_fee_income == pytest.approx(0.015 * 20, rel=1e-12)  # facility's own rate
    assert gte.interest_income == 0 and gte.funding_cost == 0 and gte.minimum_spread is None
    raroc = (loan.income - loan.funding_cost - loan.operating_cost - loan.expected_loss) / fl.regulatory_capital
    assert loan.raroc == pytest.approx(raroc, rel=1e-12)
    rel = r.pricing.relationship
    assert rel.income == pytest.approx(loan.income + gte.income, rel=1e-12)
    assert rel.capital == pytest.approx(r.total.regulatory_capital, rel=1e-12)
    # The relationship's minimum spread brings its RAROC to the hurdle (the definition solved).
    at_min = _priced(
        make_case,
        [
            {
                "id": "L",
                "kind": "revolver",
                "committed": 100.0,
                "drawn": 40.0,
                "seniority": "senior_unsecured",
                "maturity_years": 3.0,
            },
            {
                "id": "G",
                "kind": "guarantee",
                "committed": 20.0,
                "drawn": 0.0,
                "seniority": "senior_unsecured",
                "maturity_years": 2.0,
                "pricing": {"issuance_fee_rate": 0.015},
            },
        ],
        commitment_fee_rate=0.004,
        issuance_fee_rate=0.01,
        proposed_spread=rel.minimum_spread,
    )
    assert at_min.pricing.raroc == pytest.approx(0.12, abs=1e-9)
    assert r.pricing.raroc_economic is not None and r.pricing.raroc_regulatory == r.pricing.raroc


@settings(max_examples=30, deadline=None)
@given(
    st.floats(min_value=0.0, max_value=0.1),
    st.floats(min_value=0.0, max_value=0.2),
    st.floats(min_value=1.0, max_value=1e6),
)
def test_undrawn_revolver_earns_no_interest(spread, base, committed):
    # Property: a fully undrawn revolver's RAROC counts no interest or funding on money not lent.
    from tests.conftest import minimal_case_dict

    data = minimal_case_dict()
    data["facilities"] = [
        {
            "id": "R",
            "kind": "revolver",
            "committed": committed,
            "drawn": 0.0,
            "seniority": "senior_unsecured",
            "maturity_years": 2.0,
        }
    ]
    data["pricing"] = {
        "proposed_spread": spread,
        "base_rate": base,
        "commitment_fee_rate": 0.003,
        "capital_basis": "regulatory",
    }
    r = evaluate(parse_case(data))
    p = r.pricing.facilities[0]
    assert p.interest_income == 0 and p.funding_cost == 0
    assert p.income == pytest.approx(0.003 * committed, rel=1e-12)
    if p.raroc is not None:
        assert p.raroc == pytest.approx(
            (p.income - p.operating_cost - p.expected_loss) / r.facilities[0].regulatory_capital, rel=1e-9
        )


def test_raroc_is_undefined_where_capital_is_zero(make_case):
    data = _case(
        make_case,
        pd={"override": 0.0001, "override_reason": "x"},
        capital={"economic_method": "standalone"},
        pricing={"proposed_spread": 0.02, "capital_basis": "economic"},
    )
    r = evaluate(parse_case(data))
    assert r.total.economic_capital == 0
    assert r.pricing.raroc is None and "undefined" in r.pricing.note
    assert r.pricing.minimum_spread is not None
    assert "pricing.undefined" in {c.code for c in r.cautions}


def test_raroc_uses_one_year_el_and_capital(make_case):
    # A 2-year horizon must not mix annual income with 2-year EL.
    one = evaluate(
        parse_case(_case(make_case, pd={"override": 0.02, "override_reason": "x"}, pricing={"proposed_spread": 0.02}))
    )
    two = evaluate(
        parse_case(
            _case(
                make_case,
                pd={"override": 0.02, "override_reason": "x", "horizon_years": 2.0, "override_horizon_years": 1.0},
                pricing={"proposed_spread": 0.02},
            )
        )
    )
    assert two.pricing.raroc == pytest.approx(one.pricing.raroc, rel=1e-12)
    assert two.total.expected_loss > one.total.expected_loss


# --------------------------------------------------------------------------- findings 5, 6, 7


LAWS_BELOW_ONE = [
    (0.3, 0.28, 1.0),
    (0.8, 0.35, 1.0),
    (0.5, 0.45, 1.0),
    (0.2, 0.15, 0.9),
    (0.6, 0.3, 1.1),
    (0.99, 0.09, 1.0),
]


# The reference's x-domain quadrature meets the singular densities at the ends and says so; the
# two reference routes still agree to 1e-6, which the test checks.
@pytest.mark.filterwarnings("ignore::scipy.integrate.IntegrationWarning")
@pytest.mark.parametrize("first, second", [(0, 1), (2, 3), (1, 4), (0, 5), (3, 5)])
def test_borrower_ul_and_es_match_adaptive_quadrature(first, second):
    # Reference: scipy.integrate.quad of scipy.stats.beta's quantile functions, the domain split
    # where each quantile crosses fixed levels (u = I_x(a, b), scipy.special.betainc), since
    # laws with alpha or beta below 1 have quantiles that jump: UL and ES to 1e-6 relative.
    from scipy import special, stats

    specs = [LAWS_BELOW_ONE[first], LAWS_BELOW_ONE[second]]
    laws = [recovery_law(mean=m, std=s, upper=u) for m, s, u in specs]
    assert any(min(law.alpha, law.beta) < 1 for law in laws)
    eads, pd, q = [600.0, 400.0], 0.05, 0.999
    levels = [1e-12, 1e-9, 1e-6, 1e-3, 0.1, 0.5, 0.9, 1 - 1e-3, 1 - 1e-6, 1 - 1e-9, 1 - 1e-12]
    points = sorted({float(special.betainc(law.alpha, law.beta, x)) for law in laws for x in levels})
    refs = [stats.beta(law.alpha, law.beta, scale=law.upper) for law in laws]

    def g(u):
        return sum(e * (1 - float(ref.ppf(u))) for e, ref in zip(eads, refs))

    def quad(f, a, b):
        edges = [a] + [p for p in points if a < p < b] + [b]
        return sum(
            integrate.quad(f, lo, hi, epsabs=0, epsrel=1e-12, limit=500)[0] for lo, hi in zip(edges[:-1], edges[1:])
        )

    mean = quad(g, 0, 1)
    second_moment = quad(lambda u: g(u) ** 2, 0, 1)
    ul_ref = math.sqrt(pd * second_moment - (pd * mean) ** 2)
    ul = borrower_unexpected_loss(
        eads=eads, lgds=[law.lgd for law in laws], lgd_stds=[law.std() for law in laws], pd=pd, laws=laws
    )
    assert ul == pytest.approx(ul_ref, rel=1e-6)
    u_star = (1 - q) / pd
    # ES in the recovery domain: integral_0^u* F^-1 = E[R 1{R <= F^-1(u*)}] = integral x f(x) dx.
    partial = []
    for ref in refs:
        x_star = float(ref.ppf(u_star))
        edges = [0.0] + [x for x in (1e-9, 1e-6, 1e-3, 0.1, 0.5, 0.9) if x < x_star] + [x_star]
        partial.append(
            sum(
                integrate.quad(lambda x: x * ref.pdf(x), lo, hi, epsabs=0, epsrel=1e-12, limit=500)[0]
                for lo, hi in zip(edges[:-1], edges[1:])
            )
        )
    es_ref = pd / (1 - q) * sum(e * (u_star - part) for e, part in zip(eads, partial))
    assert es_ref == pytest.approx(pd / (1 - q) * quad(g, 0, u_star), rel=1e-6)
    dist = loss_distribution(pd=pd, exposures=eads, recovery_laws=laws, confidence=q)
    assert dist.expected_shortfall == pytest.approx(es_ref, rel=1e-6)
    assert dist.var == pytest.approx(g(u_star), rel=1e-8)


@pytest.mark.parametrize("mean, upper", [(0.55, 1.0), (0.2, 0.9), (0.999, 1.0), (0.3, 1.2), (0.001, 1.0)])
@pytest.mark.parametrize("gap", [1e-7, 1e-9, 1e-12])
def test_std_at_its_limit_computes_or_names_the_field(make_case, mean, upper, gap):
    m = mean / upper
    limit = upper * math.sqrt(m * (1 - m))
    data = make_case()
    data["facilities"][0]["recovery"] = {"mean": mean, "std": limit - gap, "upper": upper}
    try:
        r = evaluate(parse_case(data))
    except CaseError as exc:
        assert "std" in exc.problems[0].field
        return
    t = r.total
    assert math.isfinite(t.unexpected_loss) and t.expected_shortfall >= t.value_at_risk >= 0
    assert t.expected_shortfall <= t.ead * (1 + 1e-12)


def test_recoveries_above_par_are_accepted_with_a_caution(make_case):
    data = make_case()
    data["facilities"][0].update(kind="bond", drawn=50.0, recovery={"mean": 0.9, "std": 0.2, "upper": 1.1})
    r = evaluate(parse_case(data))
    assert "recovery.above_par" in {c.code for c in r.cautions}
    law = r.laws["F1"]
    assert float(law.ppf(1.0)) == pytest.approx(1.1)
    assert r.facilities[0].lgd == pytest.approx(0.1, rel=1e-12)
    data["facilities"][0]["recovery"]["upper"] = 1.6
    with pytest.raises(CaseError) as caught:
        parse_case(data)
    assert "upper" in caught.value.problems[0].field


def test_term_structure_running_maximum_is_stated(make_case):
    # Strong growth, low volatility: the structural cumulative PD peaks and then falls.
    data = _case(make_case, pd={"asset_growth": 0.3, "asset_volatility": 0.2})
    data["facilities"][0]["maturity_years"] = 10.0
    r = evaluate(parse_case(data))
    cum = np.array(r.term_structure.cumulative)
    assert np.all(np.diff(cum) >= 0)
    assert r.term_structure.running_max_from is not None
    assert "pd.term_structure_flat" in {c.code for c in r.cautions}


@pytest.mark.parametrize("gap", [1e-7, 1e-9])
def test_std_at_its_limit_in_the_what_if_layers(make_case, gap):
    # A mean at upper / 2 with a std within 1e-7 of its limit used to stop the sensitivity
    # table with "math domain error"; it must compute (the recovery row then cannot move).
    from obligor_memo.engine.analysis import analyse

    data = make_case()
    data["facilities"][0]["recovery"] = {"mean": 0.45, "std": 0.45 - gap, "upper": 0.9}
    r = analyse(parse_case(data))
    assert r.sensitivity is not None and r.scenarios is not None
