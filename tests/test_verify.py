"""`obligor-memo verify`: re-compute a memo from the case it carries, figure by figure.

One memo is written through the command line (no charts, so no browser is needed); the tampered
copies are made here with pypdf, outside the code under test.
"""

from __future__ import annotations

import io
import json

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
    assert "all printed figures hold" in result.output
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
        main, ["memo", str(sample_case_path), "-o", str(out), "--no-charts", "--page-size", "Letter"]
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
