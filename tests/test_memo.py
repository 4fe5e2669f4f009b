"""The printed memo, read back from the PDF: figures in the right sections, safety, reproducibility.

These tests render without charts (no browser); tests/test_memo_charts.py covers the charts.
The PDF is read back with poppler's pdftotext and pypdf, independent of the renderer.
"""

from __future__ import annotations

import dataclasses
import hashlib
import io
import json
import re
import shutil
import subprocess
from datetime import UTC, datetime, timezone
from html.parser import HTMLParser
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from obligor_memo.app.memo import chart_browser, chart_pages, fetch, layout, render, svg_slim, templates, view  # noqa: F401
from obligor_memo.app.present import formatting as fmt
from scipy.stats import norm

pytestmark = pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs poppler-utils")

ROOT = Path(__file__).resolve().parents[1]
ARTIFACTS = ROOT / "test-artifacts"
STAMP = datetime(2031, 5, 6, 7, 8, 9, tzinfo=UTC)

# Section headings as printed, in order; the text between two headings belongs to the first.
HEADINGS = [
    "Decision",
    "1 The borrower and its accounts",
    "2 Probability of default",
    "3 Scenarios and further risks",
    "4 Sign-off",
    "Appendix A PD term structure",
    "Appendix B Exposure at default",
    "Appendix C Recovery and loss given default",
    "Appendix D Loss and capital",
    "Appendix E Pricing",
    "Appendix F Sensitivities and scenarios",
    "Appendix G Cautions",
    "Appendix H Methods and sources",
    "Appendix I Inputs and record",
]

HOSTILE = {
    "script": "<script>alert('memo')</script>",
    "img_file": '<img src="file:///etc/passwd">',
    "img_http": '<img src="http://example.invalid/pixel.png">',
    "jinja": "{{ 7 * 7 }} {% if true %}yes{% endif %}",
    "css": "<style>body{display:none}</style><b>bold?</b> & \"quotes\" 'single'",
}


def pdf_text(pdf: bytes) -> str:
    out = subprocess.run(["pdftotext", "-enc", "UTF-8", "-", "-"], input=pdf, capture_output=True, check=True)
    # pdftotext may print the en-space of the headings as a plain space.
    return out.stdout.decode("utf-8").replace("\u2002", " ")


def sections(text: str) -> dict[str, str]:
    """Split the memo's text at its headings (each heading is found once, in order)."""
    found: dict[str, str] = {}
    positions = []
    start = 0
    for heading in HEADINGS:
        match = re.search(r"^" + re.escape(heading) + r"\s*$", text[start:], flags=re.M)
        assert match is not None, f"heading {heading!r} not found in the memo text"
        positions.append((heading, start + match.start()))
        start += match.end()
    for (heading, begin), (_, end) in zip(positions, positions[1:] + [("", len(text))]):
        found[heading] = text[begin:end]
    return found


@pytest.fixture(scope="module")
def sample_results(sample_case):
    """The full analysis, as the memo command prints it (sensitivities and scenarios included)."""
    from obligor_memo.engine.analysis import analyse

    return analyse(sample_case)


@pytest.fixture(scope="module")
def sample_pdf(sample_results) -> bytes:
    from obligor_memo.app.memo import render_memo_pdf

    pdf = render_memo_pdf(sample_results, charts=False, generated_at=STAMP, annex=True)
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / "memo_sample_no_charts.pdf").write_bytes(pdf)
    return pdf


@pytest.fixture(scope="module")
def sample_sections(sample_pdf) -> dict[str, str]:
    return sections(pdf_text(sample_pdf))


def hostile_results(make_case):
    from obligor_memo.engine.case import parse_case
    from obligor_memo.engine.evaluate import evaluate

    data = make_case()
    data["borrower"]["name"] = "Acme <i>&amp;</i> Sons"
    data["memo"] = {
        "prepared_by": HOSTILE["script"],
        "summary": HOSTILE["img_file"],
        "recommendation": HOSTILE["img_http"],
        "conditions": HOSTILE["jinja"],
        "request": HOSTILE["css"],
        "page_size": "Letter",
    }
    data["facilities"][0]["description"] = "<a href='file:///etc/hosts'>link</a>"
    return evaluate(parse_case(data))


@pytest.fixture(scope="module")
def hostile(make_case):
    """The hostile case rendered once with a spy on every URL the renderer asks for."""
    from obligor_memo.app import memo

    results = hostile_results(make_case)
    asked: list[str] = []
    real = fetch.memo_fetcher

    def spying_fetcher(allowed, charts=None):
        inner = real(allowed, charts)
        original = inner.fetch

        def fetch(url, headers=None):
            asked.append(url)
            return original(url, headers)

        inner.fetch = fetch
        return inner

    fetch.memo_fetcher = spying_fetcher
    try:
        pdf = memo.render_memo_pdf(results, charts=False, generated_at=STAMP, annex=True)
    finally:
        fetch.memo_fetcher = real
    return results, pdf, asked


# --------------------------------------------------------------------------- figures in sections


def test_decision_page_prints_what_the_committee_decides_on(sample_results, sample_sections):
    r, cur = sample_results, sample_results.case.borrower.currency
    text = " ".join(sample_sections["Decision"].split())
    committed = sum(f.committed for f in r.case.facilities)
    worst = max(r.scenarios, key=lambda s: s.figures.pd)
    for value in (
        fmt.money(r.total.ead),
        fmt.money(committed),
        fmt.money(r.total.expected_loss, cur),
        fmt.pct(r.total.el_rate, 3),
        fmt.money(r.total.rwa, cur),
        fmt.money(r.pricing.capital, cur),
        fmt.pd_pct(r.pd.pd),
        fmt.pct(r.pricing.minimum_spread),
        fmt.pct(r.pricing.raroc, 1),
        fmt.pct(r.pricing.hurdle_rate, 1),
        fmt.pct(r.pricing.proposed_spread),
        fmt.pct(worst.figures.raroc, 1),
        f"grade {worst.figures.grade}",
        r.case.borrower.name,
        r.case.memo.request[:40],
        "regulatory capital",
        "renewal",
        "unchanged",
        "new",
        r.case.memo.risks[0].risk[:30],
        r.case.memo.risks[2].mitigant[:30],
        r.case.memo.conditions[:30],
        "A model estimate, not a credit decision",
    ):
        assert value in text, value
    # Secured facility: committed against the collateral before haircut (TL-A: 120m / 90m).
    assert fmt.pct(120e6 / 90e6, 0) in text


def test_body_is_at_most_six_pages_between_decision_page_and_appendices(sample_pdf):
    pages = pdf_text(sample_pdf).split("\f")
    first_appendix = next(i for i, t in enumerate(pages) if re.search(r"^Appendix A", t, flags=re.M))
    assert re.search(r"^1\s+The borrower", pages[1], flags=re.M)  # the body starts on page 2
    assert first_appendix - 1 <= 6, f"body runs to {first_appendix - 1} pages"


def test_decision_page_is_one_page_and_has_no_exponent_notation(sample_pdf):
    first = subprocess.run(
        ["pdftotext", "-f", "1", "-l", "1", "-enc", "UTF-8", "-", "-"],
        input=sample_pdf,
        capture_output=True,
        check=True,
    ).stdout.decode()
    assert "Key risks and mitigants" in first and "A model estimate, not a credit decision" in first
    everything = pdf_text(sample_pdf)
    assert not re.search(r"\d[eE][+-]\d", everything), re.search(r".{20}\d[eE][+-]\d.{20}", everything)


def test_printed_pd_is_normal_tail_of_printed_distance_to_default(sample_results, sample_sections):
    # Reference: scipy's normal survival function, PD = N(-DD) (Merton 1974).
    r = sample_results
    text = sample_sections["2 Probability of default"]
    assert fmt.num(r.pd.distance_to_default, 3) in text
    assert fmt.pd_pct(float(norm.sf(r.pd.distance_to_default))) in text
    assert fmt.pd_pct(r.market.merton.pd) in text  # market cross-check
    term = sample_sections["Appendix A PD term structure"]
    for cumulative in r.term_structure.cumulative:
        assert fmt.pd_pct(cumulative) in term


def test_exposure_section_prints_ead_recomputed_from_inputs(sample_results, sample_sections):
    # EAD = drawn + CCF x max(committed - drawn, 0) (Basel standardised approach, CRE20).
    text = sample_sections["Appendix B Exposure at default"]
    for entered, f in zip(sample_results.case.facilities, sample_results.facilities):
        ead = entered.drawn + f.ccf * max(entered.committed - entered.drawn, 0.0)
        assert fmt.money(ead) in text, f.id
        assert f.ccf_source.split(":")[0][:30] in text.replace("\n", " ")


def test_recovery_section_prints_moment_fitted_beta_parameters(sample_results, sample_sections):
    # Method of moments on [0, upper]: m = mean/upper, v = (std/upper)^2, k = m(1-m)/v - 1.
    text = sample_sections["Appendix C Recovery and loss given default"]
    for f in sample_results.facilities:
        m, v = f.recovery_mean / f.recovery_upper, (f.recovery_std / f.recovery_upper) ** 2
        k = m * (1 - m) / v - 1
        assert fmt.num(m * k, 3) in text and fmt.num((1 - m) * k, 3) in text, f.id
        assert fmt.pct(f.recovery_quantiles["q95"], 1) in text


def test_loss_and_pricing_sections(sample_results, sample_sections):
    loss = sample_sections["Appendix D Loss and capital"]
    for f in sample_results.facilities:
        # EL = EAD x PD x LGD, recomputed here from the printed inputs' full-precision values.
        assert fmt.money(f.ead * sample_results.pd.pd * f.lgd) in loss, f.id
        for value in (fmt.money(f.unexpected_loss), fmt.pct(f.risk_weight, 1), fmt.money(f.rwa)):
            assert value in loss, (f.id, value)
    pricing = sample_sections["Appendix E Pricing"]
    assert fmt.pct(sample_results.pricing.raroc, 1) in pricing
    assert fmt.money(sample_results.pricing.income) in pricing


def test_sensitivity_section_prints_scenarios_side_by_side(sample_results, sample_sections):
    text = " ".join(sample_sections["Appendix F Sensitivities and scenarios"].split())
    for scenario in sample_results.scenarios:
        assert scenario.name in text
        for value in (
            fmt.pd_pct(scenario.figures.pd),
            fmt.money(scenario.figures.expected_loss),
            fmt.money(scenario.figures.rwa),
        ):
            assert value in text, (scenario.name, value)
    for row in sample_results.sensitivity.rows:
        assert fmt.money(row.el_low) in text and fmt.money(row.el_high) in text, row.label
    assert fmt.pd_pct(sample_results.pd_grid.base_pd) in text


def test_an_input_prints_with_one_precision_in_every_what_if_table_and_chart(sample_results, sample_sections):
    from obligor_memo.app.charts import whatif as charts_whatif

    # Shares and rates with one decimal, as the break-even points print them; never "50.00 %" or "0.50".
    assert fmt.input_value(0.5, "[fraction]") == "50.0 %" and fmt.input_value(0.1264, "[1/sqrt(year)]") == "12.6 %"
    assert fmt.input_value(1.0, "[years]") == "1 y" and fmt.input_value(None, "[fraction]") == "n/a"
    sensitivity = " ".join(sample_sections["Appendix F Sensitivities and scenarios"].split())
    pd_section = " ".join(sample_sections["2 Probability of default"].split())
    share = sample_results.case.pd.default_point.long_term_share
    assert f"Default point: share of long-term liabilities {fmt.pct(share, 1)}" in sensitivity
    assert fmt.pct(share, 2) not in sensitivity
    assert f"Long-term share in the default point {fmt.pct(share, 1)}" in pd_section
    labels = charts_whatif.sensitivity_figure(sample_results).data[0].y
    long_term = next(label for label in labels if "long-term" in label)
    assert f"(base {fmt.pct(share, 1)})" in long_term and f"{share:.2f}" not in long_term
    assert "lgd." not in sensitivity and "pd." not in sensitivity  # words, not field paths


def test_credit_metrics_close_with_their_trend(sample_results, sample_sections):
    from obligor_memo.engine.credit_metrics import metric_trends

    fin = " ".join(sample_sections["1 The borrower and its accounts"].split())
    t = metric_trends(sample_results.credit_metrics)
    row = " ".join(
        [fmt.trend(t[n].growth, "growth") for n in ("revenue", "ebitda")]
        + [fmt.trend(t["ebitda_margin"].change, "margin"), fmt.trend(t["net_debt"].growth, "growth")]
        + [fmt.trend(t[n].change, "multiple") for n in ("net_debt_to_ebitda", "interest_cover", "debt_to_equity")]
        + [fmt.trend(t["free_cash_flow"].growth, "growth")]
    )
    assert f"Trend {row}" in fin and "+5.0 %/yr" in row


def test_financials_narrative_and_appendix(sample_results, sample_sections):
    r = sample_results
    fin = sample_sections["1 The borrower and its accounts"]
    latest = r.case.statements[-1]
    assert fmt.money(latest.total_assets) in sample_sections["Appendix I Inputs and record"]  # as entered
    assert all(fmt.pct(q.leverage, 1) in fin for q in r.ratios)
    assert all(fmt.num(z.score, 2) in fin for z in r.zscores if z.score is not None)
    # The analyst's summary opens section 1 and is printed once in the body.
    summary = " ".join(r.case.memo.summary.split())
    assert summary in " ".join(fin.split())
    body = " ".join(" ".join(sample_sections[h].split()) for h in HEADINGS if h[0].isdigit())
    assert body.count(summary) == 1
    assert " ".join(r.case.memo.conditions.split()) in " ".join(sample_sections["Decision"].split())
    appendix = sample_sections["Appendix I Inputs and record"]
    assert r.fingerprint in appendix.replace("\n", "")
    assert "2031-05-06 07:08:09 UTC" in appendix and r.engine_version in appendix


def test_cautions_print_the_fixed_warnings_and_every_engine_caution(sample_results, sample_sections):
    text = " ".join(sample_sections["Appendix G Cautions"].split())
    for phrase in (
        "not a credit decision",
        "credit policy",
        "supervisor",
        "qualified credit officer",
        "Structural-model assumptions",
        "Accounting values stand in for market values",
        "Short histories",
        "Recovery laws fitted to two moments",
    ):
        assert phrase in text, phrase
    for caution in sample_results.cautions:
        assert " ".join(caution.message.split()) in text


def test_every_recorded_figure_is_printed(sample_pdf):
    from obligor_memo.app.memo.record import FIGURES_FILE, read_attachments

    text = " ".join(pdf_text(sample_pdf).split())
    record = json.loads(read_attachments(sample_pdf)[FIGURES_FILE])
    missing = [label for label, value in record["figures"].items() if value not in text]
    assert missing == []


def test_charts_left_out_are_marked_where_they_would_be(sample_results, sample_pdf):
    from obligor_memo.app.memo.figures import chart_specs

    text = " ".join(pdf_text(sample_pdf).split())
    assert text.count("this memo was produced with --no-charts") == len(chart_specs(sample_results))


# --------------------------------------------------------------------------- print quality


def test_a4_pages_with_running_header_footer_and_metadata(sample_results, sample_pdf):
    from pypdf import PdfReader

    reader = PdfReader(io.BytesIO(sample_pdf))
    box = reader.pages[0].mediabox
    # A4 is 210 x 297 mm = 595.28 x 841.89 pt (ISO 216); 0.5 pt for rounding.
    assert abs(float(box.width) - 595.28) < 0.5 and abs(float(box.height) - 841.89) < 0.5
    pages = pdf_text(sample_pdf).split("\f")[:-1]
    assert len(pages) == len(reader.pages)
    for number, page in enumerate(pages, start=1):
        assert sample_results.case.borrower.name in page
        assert f"Page {number} of {len(pages)}" in page
    meta = reader.metadata
    assert meta.title == f"Credit memo: {sample_results.case.borrower.name}"
    assert meta.author == sample_results.case.memo.prepared_by
    assert sample_results.case.borrower.name in meta.subject


def test_embedded_case_is_the_fingerprinted_input(sample_results, sample_pdf):
    from obligor_memo.app.memo.record import CASE_FILE, read_attachments
    from obligor_memo.engine.case import case_to_dict

    embedded = read_attachments(sample_pdf)[CASE_FILE]
    # Reference: hashlib's SHA-256 over the canonical JSON, built here independently.
    canonical = json.dumps(
        case_to_dict(sample_results.case), sort_keys=True, separators=(",", ":"), ensure_ascii=True
    ).encode("ascii")
    assert embedded == canonical
    assert hashlib.sha256(embedded).hexdigest() == sample_results.fingerprint


def test_unknown_page_size_is_refused_naming_the_argument(sample_results):
    from obligor_memo.app.memo import render_memo_pdf

    with pytest.raises(ValueError, match=r"page_size: got 'Tabloid'; allowed: A4, Letter"):
        render_memo_pdf(sample_results, charts=False, page_size="Tabloid")


# --------------------------------------------------------------------------- safety


def test_hostile_free_text_prints_as_typed_on_letter_paper(hostile):
    from pypdf import PdfReader

    results, pdf, _ = hostile
    text = " ".join(pdf_text(pdf).split())
    for value in HOSTILE.values():
        assert " ".join(value.split()) in text, value
    assert "Acme <i>&amp;</i> Sons" in text
    assert "<a href='file:///etc/hosts'>link</a>" in text
    # US Letter is 8.5 x 11 in = 612 x 792 pt.
    box = PdfReader(io.BytesIO(pdf)).pages[0].mediabox
    assert (round(float(box.width)), round(float(box.height))) == (612, 792)
    (ARTIFACTS / "memo_hostile_letter.pdf").write_bytes(pdf)


def test_hostile_text_makes_the_renderer_fetch_nothing(hostile):
    _, _, asked = hostile
    assert [u for u in asked if not u.startswith("data:")] == []


def test_fetcher_refuses_files_and_network_and_serves_its_own_data():
    import base64

    from obligor_memo.app.memo.fetch import memo_fetcher

    ours = "data:image/svg+xml;base64," + base64.b64encode(b"<svg/>").decode("ascii")
    fetcher = memo_fetcher({ours})
    assert fetcher.fetch(ours).read() == b"<svg/>"
    foreign = "data:text/html;base64," + base64.b64encode(b"<p>x</p>").decode("ascii")
    for url in (
        "file:///etc/passwd",
        "http://example.invalid/x.png",
        "https://example.invalid/",
        foreign,
        f"file://{ROOT / 'pyproject.toml'}",
    ):
        with pytest.raises(ValueError, match="refused"):
            fetcher.fetch(url)


class _TextOf(HTMLParser):
    """Collects the text of the element with a given id (stdlib parser, independent of Jinja)."""

    def __init__(self, wanted: str):
        super().__init__(convert_charrefs=True)
        self.wanted, self.depth, self.parts = wanted, 0, []

    def handle_starttag(self, tag, attrs):
        if self.depth:
            self.depth += 1
        elif dict(attrs).get("id") == self.wanted:
            self.depth = 1

    def handle_endtag(self, tag):
        if self.depth:
            self.depth -= 1

    def handle_data(self, data):
        if self.depth:
            self.parts.append(data)


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc")), min_size=1, max_size=80))
def test_any_summary_text_reaches_the_html_as_text(sample_results, typed):
    from obligor_memo.app.memo import render_memo_html

    case = sample_results.case
    memo_text = case.memo.model_copy(update={"summary": typed, "recommendation": "", "conditions": ""})
    results = dataclasses.replace(sample_results, case=case.model_copy(update={"memo": memo_text}))
    html = render_memo_html(results, charts=False, generated_at=STAMP)
    parser = _TextOf("financials")
    parser.feed(html)
    # Long words get zero-width break chances (templates.breakable); nothing else changes.
    assert typed.replace("\u200b", "") in "".join(parser.parts).replace("\u200b", "")


# --------------------------------------------------------------------------- reproducibility


def test_same_case_and_time_give_identical_bytes(hostile, make_case):
    from obligor_memo.app.memo import render_memo_pdf
    from pypdf import PdfReader

    results, first, _ = hostile
    again = render_memo_pdf(hostile_results(make_case), charts=False, generated_at=STAMP, annex=True)
    assert again == first
    info = PdfReader(io.BytesIO(first)).metadata
    assert info.creation_date is None and info.modification_date is None


def test_appendix_inputs_read_back_as_the_case(sample_results, make_case, sample_sections):
    """The appendix prints the inputs as YAML; PyYAML reading it back gives the case exactly
    (statements excepted: they are the table above it), hostile free text included."""
    import yaml
    from obligor_memo.app import memo
    from obligor_memo.engine.case import case_to_dict

    for results in (sample_results, hostile_results(make_case)):
        data = case_to_dict(results.case)
        expected = {k: v for k, v in data.items() if k != "statements"}
        assert yaml.safe_load(view.inputs_yaml(data)) == expected
    appendix = sample_sections["Appendix I Inputs and record"]
    assert "confidence: 0.999" in appendix and "kind: term_loan" in appendix


# --------------------------------------------------------------------------- covenants, whole words


def test_covenant_row_on_the_decision_page_and_in_the_credit_analysis(sample_results, sample_sections):
    # The sample's covenant: net debt / EBITDA at most 4.0x, on 2025.
    # net debt 210,555,000 - 25,365,000 = 185,190,000; / EBITDA 54,220,000 = 3.42x
    # headroom (4.0 - 3.4155) / 4.0 = 14.6 %; EBITDA fall to breach 1 - 3.4155 / 4.0 = 14.6 %
    # EBITDA at breach 185,190,000 / 4.0 = 46,297,500
    decision = " ".join(sample_sections["Decision"].split())
    assert "Covenant 3.42x Net debt / EBITDA at most 4.00x, tested half-yearly: headroom 14.6 % on 2025" in decision
    assert "EBITDA fall to breach 14.6 %" in decision
    body = " ".join(sample_sections["1 The borrower and its accounts"].split())
    assert "Covenants, tested on the latest year" in body
    assert "Net debt / EBITDA at most 4.00x half-yearly 2025 3.42x 14.6 % 14.6 % 46,297,500" in body


def test_numbers_and_headers_of_the_figure_tables_stay_whole(sample_pdf):
    import test_memo_layout as layout_test

    page_words = [t for p, *_, t in layout_test.words(sample_pdf) if p == 2]  # section 1's tables
    years = [str(y) for y in range(2016, 2026)]
    # Each year prints once in the ratios and once in the credit metrics (and once in the covenant row).
    for year in years:
        assert page_words.count(year) >= 2, year
    assert page_words.count("Year") >= 3
    assert not {"Yea", "201", "r", "6"} & set(page_words)  # no header or year broken in two
    assert "3.42x" in page_words and "2.50x" in page_words


def test_cross_checks_on_the_decision_page_and_their_explanation_in_section_2(sample_results, sample_sections):
    decision = " ".join(sample_sections["Decision"].split())
    # Naive market PD 4.58 % and the distress zone grade 8 against grade 4: four notches each.
    assert "naive market PD grade 8 (4 worse)" in decision
    assert "the analyst's reconciliation is in section 2" in decision
    assert "not reconciled" not in decision.lower()
    pd_text = " ".join(sample_sections["2 Probability of default"].split())
    assert " ".join(sample_results.case.memo.cross_check_explanation.split()) in pd_text
    assert "naive market PD PD 4.58 % 8 4 worse" in pd_text


def test_unexplained_cross_checks_are_a_caution_on_the_decision_page(sample_results):
    from obligor_memo.app.memo import render_memo_pdf
    from obligor_memo.engine.analysis import analyse

    case = sample_results.case
    case = case.model_copy(update={"memo": case.memo.model_copy(update={"cross_check_explanation": ""})})
    pdf = render_memo_pdf(analyse(case), charts=False, generated_at=STAMP)
    first = " ".join(pdf_text(pdf).split("\f")[0].split())
    assert "Cross-checks not reconciled." in first
    assert "NOT RECONCILED: no explanation recorded" in first
    assert "memo.cross_check_explanation" in first
    assert "None is recorded." in " ".join(pdf_text(pdf).split())


# --------------------------------------------------------------------------- committee memo and annex
COMMITTEE_APPENDICES = [
    "Appendix A Pricing",
    "Appendix B Sensitivities and scenarios",
    "Appendix C Cautions",
    "Appendix D Inputs and record",
]
ANNEX_ONLY = ("PD term structure", "Exposure at default", "Recovery and loss given default", "Loss and capital")


@pytest.fixture(scope="module")
def committee_pdf(sample_results) -> bytes:
    from obligor_memo.app.memo import render_memo_pdf

    pdf = render_memo_pdf(sample_results, charts=False, generated_at=STAMP)
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / "memo_sample_committee_no_charts.pdf").write_bytes(pdf)
    return pdf


def test_committee_memo_prints_the_committees_appendices_lettered_in_order(committee_pdf, sample_pdf):
    text = pdf_text(committee_pdf)
    positions = []
    for heading in HEADINGS[:5] + COMMITTEE_APPENDICES:
        match = re.search(r"^" + re.escape(heading) + r"\s*$", text, flags=re.M)
        assert match is not None, heading
        positions.append(match.start())
    assert positions == sorted(positions)
    for title in ANNEX_ONLY + ("Methods and sources",):
        assert not re.search(r"^Appendix [A-I] " + re.escape(title) + r"\s*$", text, flags=re.M), title
    assert "Every other input, as in the case file (YAML)" not in text
    flat = " ".join(text.split())
    # The cross-references follow the letters: the cautions are appendix C here, G with the annex.
    assert "further cautions on these figures in appendix C" in flat
    assert "read the cautions in appendix C" in flat
    assert "read the cautions in appendix G" in " ".join(pdf_text(sample_pdf).split())
    # The caution on the default point points to the sensitivities: B here, F with the annex.
    assert "section 2 and appendix B show how much it matters" in flat
    assert "section 2 and appendix F show how much it matters" in " ".join(pdf_text(sample_pdf).split())
    assert "obligor-memo memo --annex" in flat  # says where the rest is


def test_committee_memo_is_shorter_and_carries_the_same_decision(committee_pdf, sample_pdf):
    from pypdf import PdfReader

    short, full = (len(PdfReader(io.BytesIO(p)).pages) for p in (committee_pdf, sample_pdf))
    assert short < full and short <= 14, (short, full)
    first = pdf_text(committee_pdf).split("\f")[0].replace(f"Page 1 of {short}", f"Page 1 of {full}")
    assert first.replace("appendix C", "appendix G") == pdf_text(sample_pdf).split("\f")[0]


def test_the_command_line_prints_the_annex_on_request(tmp_path):
    from click.testing import CliRunner
    from obligor_memo.app.cli import main

    out = tmp_path / "memo.pdf"
    sample = ROOT / "sample_data" / "hollowmere.yaml"
    result = CliRunner().invoke(main, ["memo", str(sample), "-o", str(out), "--no-charts", "--annex"])
    assert result.exit_code == 0, result.output
    assert re.search(r"^Appendix I Inputs and record\s*$", pdf_text(out.read_bytes()), flags=re.M)
