"""The decision page's engine figures and the reasons for the PD, checked against numpy / scipy."""

from __future__ import annotations

import numpy as np
import pytest
from obligor_memo.app.present import formatting as fmt
from obligor_memo.engine.analysis import analyse
from obligor_memo.engine.decision import decision_summary
from obligor_memo.engine.drivers import break_evens, leave_one_year_out, pd_drivers
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.evaluate import evaluate
from obligor_memo.engine.scenarios import apply_overrides
from scipy.stats import norm


@pytest.fixture(scope="module")
def analysed(sample_case):
    return analyse(sample_case)


def test_total_committed_and_ltv(sample_results):
    d = decision_summary(sample_results)
    assert d.total_committed == sum(f.committed for f in sample_results.case.facilities)
    tl = next(f for f in d.facilities if f.id == "TL-A")
    # Common practice: LTV = loan / collateral value; 120m against cranes of 90m, 54m after a 40 % haircut.
    assert tl.ltv == pytest.approx(120 / 90) and tl.ltv_after_haircut == pytest.approx(120 / 54)
    assert {f.status for f in d.facilities} == {"new", "renewal", "unchanged"}
    assert next(f for f in d.facilities if f.id == "RCF-1").ltv is None


def test_worst_scenario_is_the_highest_pd(analysed):
    d = decision_summary(analysed)
    assert d.worst is not None and d.worst.pd == max(s.figures.pd for s in analysed.scenarios)


def test_leave_one_year_out_matches_numpy_and_the_normal_tail(sample_results):
    r = sample_results
    changes = np.diff(np.log([s.total_assets for s in r.case.statements]))
    out = leave_one_year_out(r)
    assert len(out) == len(changes)
    latest, dp = r.case.statements[-1], r.pd.default_point
    for i, y in enumerate(out):
        vol = np.std(np.delete(changes, i), ddof=1)  # numpy reference
        assert y.volatility == pytest.approx(vol, rel=1e-12)
        g = r.trend.growth_used  # mu - s^2/2 = g (log drift)
        dd = (np.log(latest.total_assets / dp) + g * r.case.pd.horizon_years) / (vol * np.sqrt(r.case.pd.horizon_years))
        assert y.pd == pytest.approx(norm.cdf(-dd), rel=1e-9)  # scipy reference
    # The sample's fall of 2020 drives the volatility: without it about 8 % instead of 12.6 %.
    worst = max(out, key=lambda y: abs(y.volatility - r.trend.volatility_used))
    assert worst.year == 2020 and worst.volatility == pytest.approx(0.082, abs=0.001)


def test_break_evens_land_on_the_grade_edge_and_the_hurdle(sample_results):
    r = sample_results
    paths = {
        "Long-term share in the default point": "pd.default_point.long_term_share",
        "Asset volatility": "pd.asset_volatility",
        "Asset growth": "pd.asset_growth",
    }
    found = {b.input: b for b in break_evens(r)}
    for label, path in paths.items():
        b = found[label]
        assert b.grade_notch is not None and b.below_hurdle is not None
        at_notch = evaluate(apply_overrides(r.case, {path: b.grade_notch}, where="t"), detail=False)
        assert at_notch.pd.pd == pytest.approx(r.pd.grade_upper, rel=1e-5)
        at_hurdle = evaluate(apply_overrides(r.case, {path: b.below_hurdle}, where="t"), detail=False)
        assert at_hurdle.pricing.raroc == pytest.approx(at_hurdle.pricing.hurdle_rate, abs=1e-6)


def test_drivers_are_the_largest_pd_swings(analysed):
    d = pd_drivers(analysed)
    swings = [x.swing for x in d.drivers]
    assert swings == sorted(swings, reverse=True) and len(swings) <= 3 and swings[0] > 0


@pytest.mark.parametrize("value", [1.14e-21, 1e-9, 4.9e-7])
def test_no_exponent_notation(value):
    for text in (fmt.pd_pct(value), fmt.pct(value), fmt.pct(value, 1), fmt.pct(-value)):
        assert "e" not in text.lower(), text
    assert fmt.pd_pct(value) == "< 0.0001 %"


def test_memo_text_limits_name_the_field(make_case):
    from obligor_memo.engine.case import parse_case

    data = make_case()
    data["memo"] = {"request": "x" * 5001}
    with pytest.raises(CaseError) as err:
        parse_case(data)
    assert "memo.request" in str(err.value) and "5000" in str(err.value).replace(",", "")
    data["memo"] = {"risks": [{"risk": "r" * 301, "mitigant": ""}]}
    with pytest.raises(CaseError) as err:
        parse_case(data)
    assert "risk" in str(err.value)
