"""`obligor-memo verify`: re-compute a memo from the case it carries, figure by figure.

One memo is written through the command line (no charts, so no browser is needed); the tampered
copies are made here with pypdf, outside the code under test.
"""

from __future__ import annotations

import io
import json
import re
import shutil

import pytest
from click.testing import CliRunner
from obligor_memo.app.cli import main
from obligor_memo.app.memo.record import CASE_FILE, FIGURES_FILE, MemoRecordError, read_attachments, verify_memo
from obligor_memo.app.present import formatting as fmt
from pypdf import PdfReader, PdfWriter


@pytest.fixture(scope="module")
def memo_pdf(tmp_path_factory, sample_case_path) -> bytes:
    out = tmp_path_factory.mktemp("memo") / "memo.pdf"
    result = CliRunner().invoke(main, ["memo", str(sample_case_path), "-o", str(out), "--no-charts"])
    assert result.exit_code == 0, result.output
    return out.read_bytes()


def reattach(pdf: bytes, files: dict[str, bytes]) -> bytes:
    """The same pages with different attachments (pypdf's append keeps pages, not files)."""
    writer = PdfWriter()
    writer.append(PdfReader(io.BytesIO(pdf)))
    for name, data in files.items():
        writer.add_attachment(name, data)
    buffer = io.BytesIO()
    writer.write(buffer)
    return buffer.getvalue()


def run_verify(tmp_path, pdf: bytes):
    path = tmp_path / "check.pdf"
    path.write_bytes(pdf)
    return CliRunner().invoke(main, ["verify", str(path)])


def test_fresh_memo_verifies(tmp_path, memo_pdf):
    result = run_verify(tmp_path, memo_pdf)
    assert result.exit_code == 0, result.output
    assert "the recorded figures and the numbers read on the pages hold" in result.output
    assert "carry the attached case's fingerprint" in result.output
    found = re.search(
        r"decision page \(page 1\): every number as recomputed, (\d+) of (\d+) numbers read", result.output
    )
    assert found is not None and found.group(1) == found.group(2) and int(found.group(1)) > 40
    assert "matches the recorded fingerprint" in result.output


def test_altered_case_fails_naming_each_changed_figure(tmp_path, memo_pdf):
    files = read_attachments(memo_pdf)
    case = json.loads(files[CASE_FILE])
    term_loan = next(f for f in case["facilities"] if f["id"] == "TL-A")
    term_loan["committed"] = 150_000_000.0  # 30m undrawn appears on a fully drawn loan
    files[CASE_FILE] = json.dumps(case, sort_keys=True, separators=(",", ":")).encode("ascii")
    result = run_verify(tmp_path, reattach(memo_pdf, files))
    assert result.exit_code == 1
    assert "INPUTS ALTERED" in result.output
    # Basel III standardised CCF for a commitment is 40 % (CRE20.93-101): EAD = 120m + 0.4 x 30m.
    expected_ead = fmt.money(120_000_000 + 0.40 * 30_000_000)
    line = next(x for x in result.output.splitlines() if "TL-A: EAD" in x)
    assert "CHANGED" in line and f"now {expected_ead}" in line
    assert "Total EAD" in result.output.splitlines()[-1]


def test_tampered_printed_figure_is_named(tmp_path, memo_pdf):
    files = read_attachments(memo_pdf)
    record = json.loads(files[FIGURES_FILE])
    record["figures"]["Economic capital"] = "EUR 1"
    files[FIGURES_FILE] = json.dumps(record).encode("ascii")
    result = run_verify(tmp_path, reattach(memo_pdf, files))
    assert result.exit_code == 1
    assert "CHANGED  Economic capital" in result.output
    assert "1 figure(s) differ: Economic capital" in result.output


def test_changed_engine_version_is_reported(memo_pdf, monkeypatch):
    from obligor_memo import engine

    monkeypatch.setattr(engine, "ENGINE_VERSION", "99.0.0")
    report = verify_memo(memo_pdf)
    assert report.current_engine_version == "99.0.0"
    assert "engine version has changed" in report.text()


def test_record_carries_fingerprint_version_and_every_figure(memo_pdf):
    import hashlib

    files = read_attachments(memo_pdf)
    record = json.loads(files[FIGURES_FILE])
    assert record["fingerprint"] == hashlib.sha256(files[CASE_FILE]).hexdigest()
    assert record["engine_version"] and record["generated_at"].endswith("UTC")
    assert {"PD in force", "Total EAD", "Total EL", "Economic capital"} <= set(record["figures"])


def test_pdf_without_a_record_is_refused(tmp_path):
    writer = PdfWriter()
    writer.add_blank_page(width=200, height=200)
    buffer = io.BytesIO()
    writer.write(buffer)
    with pytest.raises(MemoRecordError, match="case.json and printed-figures.json"):
        verify_memo(buffer.getvalue())
    result = run_verify(tmp_path, buffer.getvalue())
    assert result.exit_code == 2 and "only memos written" in result.output


def test_non_pdf_is_refused(tmp_path):
    result = run_verify(tmp_path, b"borrower: {name: x}\n")
    assert result.exit_code == 2 and "not a PDF" in result.output


def test_letter_memo_embeds_and_prints_the_paper_it_was_printed_on(tmp_path, sample_case_path):
    import subprocess

    out = tmp_path / "letter.pdf"
    result = CliRunner().invoke(
        main, ["memo", str(sample_case_path), "-o", str(out), "--no-charts", "--annex", "--page-size", "Letter"]
    )
    assert result.exit_code == 0, result.output
    pdf = out.read_bytes()
    assert json.loads(read_attachments(pdf)[CASE_FILE])["memo"]["page_size"] == "Letter"
    box = PdfReader(io.BytesIO(pdf)).pages[0].mediabox
    assert (round(float(box.width)), round(float(box.height))) == (612, 792)  # US Letter, 8.5 x 11 in
    text = subprocess.run(["pdftotext", "-", "-"], input=pdf, capture_output=True, check=True).stdout.decode()
    assert "page_size: Letter" in text and "page_size: A4" not in text
    checked = run_verify(tmp_path, pdf)
    assert checked.exit_code == 0, checked.output
    assert "decision page (page 1):" in checked.output  # the decision page fits on one Letter page


# --------------------------------------------------------------------------- the pages themselves


@pytest.fixture(scope="module")
def other_memo_pdf(tmp_path_factory, sample_case_path) -> bytes:
    """A second memo of the same borrower with a wider spread: its own case and figures."""
    import yaml

    folder = tmp_path_factory.mktemp("other")
    data = yaml.safe_load(sample_case_path.read_text(encoding="utf-8"))
    data["pricing"]["proposed_spread"] = 0.0400
    shutil.copy(sample_case_path.parent / data["statements"]["file"], folder)
    case_file = folder / "other.yaml"
    case_file.write_text(yaml.safe_dump(data), encoding="utf-8")
    out = folder / "other.pdf"
    result = CliRunner().invoke(main, ["memo", str(case_file), "-o", str(out), "--no-charts"])
    assert result.exit_code == 0, result.output
    return out.read_bytes()


def test_attachments_of_another_memo_fail_on_the_pages(tmp_path, memo_pdf, other_memo_pdf):
    # The other memo's attachments are self-consistent: alone they verify.
    assert verify_memo(other_memo_pdf).ok
    swapped = reattach(memo_pdf, read_attachments(other_memo_pdf))
    report = verify_memo(swapped)
    assert report.fingerprint_holds and not report.changed  # the attachments agree with each other
    assert not report.pages_belong and not report.ok
    result = run_verify(tmp_path, swapped)
    assert result.exit_code == 1
    assert "PAGES DO NOT BELONG TO THE ATTACHMENTS" in result.output
    # The pages print the sample's spread and RAROC, the attachments recompute the other's.
    decision = next(c for c in report.page_checks if c.part == "decision page")
    assert "2.75" in decision.extra and "4.00" in decision.missing


def _memo_with_edited_html(edit) -> tuple[bytes, object]:
    from conftest import SAMPLE_CASE
    from obligor_memo.app.memo import render, view
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.loading import load_case

    results = analyse(load_case(SAMPLE_CASE))
    stamp = "2031-01-02 03:04:05 UTC"
    page = view.memo_html(results, charts={}, notes={}, charts_requested=False, page_size="A4", stamp=stamp)
    pdf = render.html_to_pdf(
        edit(page, results), results=results, page_size="A4", generated_at=stamp, allowed_data_uris=set()
    )
    return pdf, results


def test_a_number_edited_on_the_decision_page_fails(tmp_path):
    def edit(page, results):
        raroc = fmt.pct(results.pricing.raroc, 1)
        head, tail = page.split('<section id="financials"', 1)
        assert raroc in head
        return head.replace(raroc, "41.5 %", 1) + '<section id="financials"' + tail

    pdf, results = _memo_with_edited_html(edit)
    report = verify_memo(pdf)
    assert report.fingerprint_holds and not report.changed and report.pages_belong  # attachments untouched
    decision = next(c for c in report.page_checks if c.part == "decision page")
    assert decision.missing == (fmt.pct(results.pricing.raroc, 1).split()[0],)
    assert decision.extra == ("41.5",)
    assert "RAROC" in decision.recorded_absent
    assert not report.ok
    assert "CHANGED  decision page (page 1)" in report.text()


def test_a_number_edited_in_the_body_fails(tmp_path):
    def edit(page, results):
        latest = fmt.pct(results.ratios[-1].leverage, 1)  # 2025 liabilities / assets, key ratios
        head, tail = page.split('<section id="financials"', 1)
        assert latest in tail
        return head + '<section id="financials"' + tail.replace(latest, "78.7 %", 1)

    pdf, results = _memo_with_edited_html(edit)
    report = verify_memo(pdf)
    body = next(c for c in report.page_checks if c.part == "body")
    assert fmt.pct(results.ratios[-1].leverage, 1).split()[0] in body.missing
    assert not report.ok


def test_a_page_without_the_fingerprint_fails(memo_pdf):
    from obligor_memo.app.memo import pages

    texts = pages.page_texts(memo_pdf)
    prints = pages.footer_fingerprints(texts)
    assert len(set(prints)) == 1 and None not in prints and len(prints) == len(texts)
    assert pages.footer_fingerprints(["no footer here"]) == (None,)


def test_numbers_are_read_whole():
    from obligor_memo.app.memo.pages import numbers

    text = "EUR 198,800,000; 3.42x; RAROC -8.7 %; inputs fa2adc43388df2e9, 8b2ca85519be6e0d on 2031-01-02; 0.2123 %"
    assert sorted(numbers(text).elements()) == sorted(["198,800,000", "3.42x", "-8.7", "2031", "0.2123"])


def test_a_decision_page_that_runs_on_verifies_and_counts_both_pages():
    from conftest import SAMPLE_CASE
    from obligor_memo.app.memo import render_memo_pdf
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.loading import load_case

    case = load_case(SAMPLE_CASE)
    # A 5,000-character request full of numbers and a 300-character word: the decision page
    # runs on to page 2, and every number of it is still read.
    phrase = "Renewal of the revolver of EUR 60m for 3 years at 2.75 % on the terms stated"
    request = " ".join([phrase] * 70)[:4690] + " " + "Q" * 300  # 4,991 characters: within the limit
    case = case.model_copy(update={"memo": case.memo.model_copy(update={"request": request})})
    report = verify_memo(render_memo_pdf(analyse(case), charts=False))
    decision = next(c for c in report.page_checks if c.part == "decision page")
    assert decision.pages == (1, 2) and decision.holds
    # The request alone prints 60, 3 and 2.75 once per whole phrase in its first 4,690 characters.
    assert decision.expected >= 3 * (4690 // (len(phrase) + 1))
    assert report.ok
