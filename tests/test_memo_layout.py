"""Hostile and long text read back from the PDF with word bounding boxes: every word stays inside
the page box, no table column disappears, and everything typed reaches the pages."""

from __future__ import annotations

import dataclasses
import re
import shutil
import subprocess
from datetime import UTC, datetime, timezone
from pathlib import Path

import pytest

pytestmark = pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs poppler-utils")

ARTIFACTS = Path(__file__).resolve().parents[1] / "test-artifacts"
STAMP = datetime(2031, 5, 6, 7, 8, 9, tzinfo=UTC)
LONG_WORD = "Q" * 300
LONG_REQUEST = " ".join(["Renewal of the revolver on the terms stated"] * 114)[:5000]


def words(pdf: bytes) -> list[tuple[int, float, float, float, float, float, float, str]]:
    """(page, page width, page height, xmin, ymin, xmax, ymax, word) from pdftotext -bbox."""
    html = subprocess.run(
        ["pdftotext", "-bbox", "-enc", "UTF-8", "-", "-"], input=pdf, capture_output=True, check=True
    ).stdout.decode()
    out = []
    for n, page in enumerate(re.findall(r"<page (.*?)</page>", html, flags=re.S), start=1):
        w, h = (float(x) for x in re.search(r'width="([\d.]+)" height="([\d.]+)"', page).groups())
        for m in re.finditer(
            r'<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">(.*?)</word>', page
        ):
            out.append((n, w, h, *(float(m.group(i)) for i in range(1, 5)), m.group(5)))
    return out


@pytest.fixture(scope="module")
def hostile_pdf(sample_results) -> bytes:
    from obligor_memo.app.memo import render_memo_pdf

    case = sample_results.case
    memo = case.memo.model_copy(
        update={"request": LONG_REQUEST + " " + LONG_WORD, "recommendation": LONG_WORD, "summary": LONG_WORD}
    )
    facilities = [case.facilities[0].model_copy(update={"description": "D" * 200})] + list(case.facilities[1:])
    results = dataclasses.replace(sample_results, case=case.model_copy(update={"memo": memo, "facilities": facilities}))
    pdf = render_memo_pdf(results, charts=False, generated_at=STAMP)
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / "memo_hostile_long.pdf").write_bytes(pdf)
    return pdf


def test_every_word_is_inside_the_page_box(hostile_pdf):
    outside = [
        (p, x0, x1, t[:20])
        for p, w, h, x0, y0, x1, y1, t in words(hostile_pdf)
        if x0 < 0 or y0 < 0 or x1 > w + 0.5 or y1 > h + 0.5
    ]
    assert outside == []


def test_long_words_wrap_and_no_column_disappears(hostile_pdf):
    text = subprocess.run(
        ["pdftotext", "-enc", "UTF-8", "-", "-"], input=hostile_pdf, capture_output=True, check=True
    ).stdout.decode()
    flat = re.sub(r"\s+", "", text)
    assert LONG_WORD in flat  # the whole word, wrapped, not cut
    assert re.sub(r"\s+", "", LONG_REQUEST) in flat  # 5,000 characters, all printed
    for heading in ("Facility", "Kind", "Status", "Committed", "EAD", "LTV", "Mitigant"):
        assert heading in text, heading  # every column of the decision tables
    first = text.split("\f")[0]
    assert "Decision" in first and "Request" in first


def test_long_runs_get_break_chances_and_nothing_else_changes():
    """The template filter behind the wrapping: a zero-width space every 12 characters of a run of
    25 or more; short words, numbers and HTML the templates build are left exactly as they are."""
    from markupsafe import Markup
    from obligor_memo.app.memo.templates import breakable

    broken = breakable("ref " + LONG_WORD + " end")
    assert broken.replace("\u200b", "") == "ref " + LONG_WORD + " end"
    assert max(len(part) for part in broken.replace(" ", "\u200b").split("\u200b")) == 12
    assert breakable("A short sentence of ordinary words, 2.75 %.") == "A short sentence of ordinary words, 2.75 %."
    assert breakable(Markup("<b>" + LONG_WORD + "</b>")) == Markup("<b>" + LONG_WORD + "</b>")
    assert breakable(12345678901234567890123456789) == 12345678901234567890123456789
