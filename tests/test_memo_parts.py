"""The memo laid out in two parts at once (app.memo_parts) is the memo laid out in one piece.

Checked from outside: poppler's pdftotext (page by page, in layout mode) and pdftoppm (every
page as pixels), and pikepdf for the outline, metadata and attachments. No browser is needed
(charts=False); tests/test_memo_charts.py covers the same with charts.
"""

from __future__ import annotations

import io
import shutil
import subprocess
from datetime import datetime, timezone

import pytest

from app import memo, memo_parts

STAMP = datetime(2031, 1, 2, tzinfo=timezone.utc)
needs_poppler = pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="needs poppler-utils")


@pytest.fixture(scope="module")
def worker():
    started = memo_parts.start_layout_worker(wait=True)
    assert started.ready(), "the layout worker did not start"
    yield started
    memo_parts.stop_layout_worker()


@pytest.fixture(scope="module")
def both(sample_results, worker):
    """The sample memo laid out in parts (worker running) and in one piece (worker stopped)."""
    from engine.analysis import analyse

    results = analyse(sample_results.case)
    in_parts = memo.render_memo_pdf(results, charts=False, generated_at=STAMP)
    again = memo.render_memo_pdf(results, charts=False, generated_at=STAMP)
    memo_parts.stop_layout_worker()
    one_piece = memo.render_memo_pdf(results, charts=False, generated_at=STAMP)
    return in_parts, one_piece, again


def _pages_text(pdf: bytes) -> list[str]:
    out = subprocess.run(["pdftotext", "-layout", "-", "-"], input=pdf, capture_output=True, check=True)
    return out.stdout.decode("utf-8").split("\f")


def _outline(pdf: bytes) -> list[tuple[str, int, int]]:
    import pikepdf

    with pikepdf.open(io.BytesIO(pdf)) as doc, doc.open_outline() as outline:
        found = []

        def walk(items, depth):
            for item in items:
                page = doc.pages.index(pikepdf.Page(item.destination[0]))
                found.append((item.title, page, depth, round(float(item.destination[3]))))
                walk(item.children, depth + 1)

        walk(outline.root, 0)
        return found


@needs_poppler
def test_parts_print_the_very_text_of_one_piece_page_by_page(both):
    in_parts, one_piece, _ = both
    parts_text, one_text = _pages_text(in_parts), _pages_text(one_piece)
    assert len(parts_text) == len(one_text) > 15
    for number, (a, b) in enumerate(zip(parts_text, one_text), start=1):
        assert a == b, f"page {number} differs"
    pages = len(one_text) - 1           # pdftotext ends with a form feed
    assert f"Page {pages} of {pages}" in parts_text[-2]
    assert "Credit memo" not in parts_text[0].split("\n")[0]     # no caution on the title page


@needs_poppler
def test_parts_print_the_very_pixels_of_one_piece(both, tmp_path):
    from PIL import Image, ImageChops

    for name, pdf in zip(("parts", "one"), both[:2]):
        (tmp_path / f"{name}.pdf").write_bytes(pdf)
        subprocess.run(["pdftoppm", "-r", "40", "-png", str(tmp_path / f"{name}.pdf"), str(tmp_path / name)],
                       check=True)
    parts, one = sorted(tmp_path.glob("parts-*.png")), sorted(tmp_path.glob("one-*.png"))
    assert len(parts) == len(one)
    for a, b in zip(parts, one):
        assert ImageChops.difference(Image.open(a).convert("RGB"), Image.open(b).convert("RGB")).getbbox() is None, a.name


def test_parts_keep_outline_metadata_attachments_and_repeat_byte_for_byte(both):
    import pikepdf

    in_parts, one_piece, again = both
    assert in_parts == again
    assert _outline(in_parts) == _outline(one_piece)
    assert len(_outline(in_parts)) > 20
    with pikepdf.open(io.BytesIO(in_parts)) as a, pikepdf.open(io.BytesIO(one_piece)) as b:
        assert dict(a.docinfo) == dict(b.docinfo)
        assert {k: a.attachments[k].get_file().read_bytes() for k in a.attachments} == \
               {k: b.attachments[k].get_file().read_bytes() for k in b.attachments}


def test_a_failing_worker_falls_back_to_one_piece(sample_results, monkeypatch):
    """The worker's answer fails (a crash, a timeout): the second part is laid out here."""
    class Broken:
        timeout = 1.0
        closed = False

        def close(self):
            Broken.closed = True            # a worker out of step is stopped

        def submit(self, html, *, chart_sizes, page_size):
            pending = memo_parts.PendingPart(self)
            pending.fail(BrokenPipeError("the worker died"))
            return pending

    monkeypatch.setattr(memo_parts, "ready_worker", lambda: Broken())
    pdf = memo.render_memo_pdf(sample_results, charts=False, generated_at=STAMP)
    assert Broken.closed
    monkeypatch.setattr(memo_parts, "ready_worker", lambda: None)
    assert _outline(pdf) == _outline(memo.render_memo_pdf(sample_results, charts=False, generated_at=STAMP))


def test_a_dead_worker_is_not_used():
    started = memo_parts.start_layout_worker()
    started._process.kill()
    started._process.wait(timeout=10)
    assert not started.ready() and memo_parts.ready_worker() is None
    memo_parts.stop_layout_worker()


def test_split_needs_exactly_one_break_inside_the_body():
    html = "<html><head></head><body><p>a</p>" + memo_parts.PART_BREAK + "<p>b</p></body></html>"
    first, second = memo_parts.split_html(html)
    assert first.startswith("<html><head></head><body><p>a</p>") and "<p>b</p>" not in first
    assert second.startswith("<html><head></head><body>" + memo_parts.PART_BREAK + "<p>b</p>")
    assert memo_parts.split_html(html.replace(memo_parts.PART_BREAK, "")) is None
    assert memo_parts.split_html(html + memo_parts.PART_BREAK) is None
    assert memo_parts.split_html(memo_parts.PART_BREAK + "<body></body>") is None


@needs_poppler
def test_running_header_prints_free_text_as_typed():
    hostile = 'Acme "<b>bold</b>" & \\ Co {{ x }} </style>'
    frame = memo_parts.running_pages(pages=3, borrower=hostile, fingerprint="0123456789abcdef",
                                     page_size="A4")
    first, second = (_pages_text(frame.frame)[i] for i in (0, 1))
    assert hostile in first and "Inputs 0123456789abcdef" in first and "Credit memo" not in first
    assert hostile in second and "Credit memo" in second
    numbers = _pages_text(frame.numbers)
    assert [" ".join(page.split()) for page in numbers[:3]] == ["Page 1 of 3", "Page 2 of 3", "Page 3 of 3"]


def test_messages_round_trip():
    stream = io.BytesIO()
    memo_parts._write_message(stream, {"pages": 3, "name": "é"}, b"\x00%PDF")
    stream.seek(0)
    header, payload = memo_parts._read_message(stream)
    assert header["pages"] == 3 and header["name"] == "é" and payload == b"\x00%PDF"
    with pytest.raises(EOFError):
        memo_parts._read_message(io.BytesIO(b"\x00\x00"))
