"""The sample borrower's narrative agrees with its own numbers: each figure the memo's free text
states is checked against the figure the engine prints (as the text rounds it)."""

from __future__ import annotations

import math

import pytest
from obligor_memo.app.present import formatting as fmt
from scipy.stats import norm


@pytest.fixture(scope="module")
def analysed(sample_case):
    from obligor_memo.engine.analysis import analyse

    return analyse(sample_case)


def _flat(text: str) -> str:
    return " ".join(text.split())


def test_summary_growth_debt_mix_and_the_2020_fall(analysed):
    text = _flat(analysed.case.memo.summary)
    growth = analysed.pd.asset_growth
    assert f"({fmt.pct(growth, 1)} on the log-linear fit)" in text
    assert "about four per cent a year" in text and round(growth * 100) == 4
    # "almost two thirds of debt": the latest short-term share of debt, below and near 2/3.
    share = analysed.ratios[-1].short_term_share_of_debt
    assert 0.6 <= share < 2 / 3
    # "despite the 2020 fall": 2020 is the only year total assets fell by more than 10 %.
    falls = [q.year for q in analysed.ratios if q.asset_growth is not None and q.asset_growth < -0.10]
    assert falls == [2020]
    # "leverage rose after the 2022 recapitalisation": net debt / EBITDA 2022 below 2025.
    by_year = {y.year: y for y in analysed.credit_metrics}
    assert by_year[2025].net_debt_to_ebitda > by_year[2022].net_debt_to_ebitda


def test_rationale_distance_to_default_and_volatility(analysed):
    text = _flat(analysed.case.memo.rationale)
    dd = analysed.pd.distance_to_default
    # The one-year PD is the normal tail of the distance to default (scipy's norm.sf).
    assert norm.sf(dd) == pytest.approx(analysed.pd.model_pd, rel=1e-9)
    assert f"about {dd:.1f}" in text
    assert fmt.pct(analysed.pd.asset_volatility, 1) in text


def test_cross_check_explanation_quotes_the_printed_cross_checks(analysed):
    text = _flat(analysed.case.memo.cross_check_explanation)
    z = next(z for z in analysed.zscores if z.variant == "Z (1968)")
    assert f"Z-score of {fmt.num(z.score, 2)}" in text
    assert f"naive market PD of {fmt.pd_pct(float(analysed.market.naive.pd))}" in text
    graded = {c.source: c.grade for c in analysed.cross_checks}
    assert f"grade {graded['naive market PD']}" in text and f"model's grade {analysed.pd.grade}" in text
    whole = next(s for s in analysed.scenarios if s.name == "All long-term debt counts")
    assert f"(grade {whole.figures.grade})" in text
    # Sales to assets, the ratio the text says the Z-score penalises, is below 1 (asset-heavy).
    latest = analysed.case.statements[-1]
    assert latest.sales / latest.total_assets < 1


def test_risks_and_conditions_match_the_facilities_and_the_covenant(analysed):
    risks = " ".join(_flat(r.risk + " " + r.mitigant) for r in analysed.case.memo.risks)
    loan = next(f for f in analysed.case.facilities if f.id == "TL-A")
    cover = loan.collateral.value * (1 - loan.collateral.haircut) / loan.committed  # 54m / 120m
    assert math.isclose(cover, 0.45)
    assert f"only {fmt.pct(cover, 0)} covered after the {fmt.pct(loan.collateral.haircut, 0)} haircut" in risks
    (covenant,) = analysed.case.covenants
    conditions = _flat(analysed.case.memo.conditions)
    assert f"net debt to EBITDA below {covenant.threshold:.1f}x tested {covenant.tested}" in conditions
    assert f"covenant tested {covenant.tested}" in risks
    revolver = next(f for f in analysed.case.facilities if f.id == "RCF-1")
    assert "renewed for three years" in risks and revolver.maturity_years == 3 and revolver.status == "renewal"
    # The covenant holds today (headroom positive), as a committee would expect of a renewal.
    assert analysed.covenants[0].headroom > 0


def test_request_names_the_facilities_by_status(analysed):
    request = _flat(analysed.case.memo.request)
    status = {f.id: (f.status, f.committed) for f in analysed.case.facilities}
    assert status["RCF-1"] == ("renewal", 60e6) and "Renewal of the EUR 60m revolver" in request
    assert status["GTE-SF"] == ("new", 15e6) and "new EUR 15m supplier-finance guarantee" in request
    assert all(s == "unchanged" for fid, (s, _) in status.items() if fid not in ("RCF-1", "GTE-SF"))
