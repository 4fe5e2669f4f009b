"""The memo laid out in one piece, or in two parts at once, and put together as one PDF.

WeasyPrint lays a document out on one core, and the memo's layout is most of the time a warm
memo takes. Where a layout worker runs (the workbench starts one beside the chart browser), the
memo's HTML is cut at its part break (``<!-- memo-part-break -->``, before a section that
starts a page): this process lays out the first part while the worker lays out the second. The
running header and footer (borrower, caution, fingerprint, "Page i of N") are then printed on N
empty pages and laid over the joined pages, and the outline is rebuilt from both parts. The
text, pages, outline, attachments and metadata are those of the one-piece layout.

The worker is this module run as a program (``python -m app.memo_parts``), answering requests
on its standard input and output: a 4-byte length and a JSON header, then raw bytes. No pickle.
When the worker is absent, slow or fails, the memo is laid out in one piece, as before.
"""

from __future__ import annotations

import io
import json
import os
import re
import struct
import subprocess
import sys
import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, BinaryIO, Sequence

from app.chart_pages import Placement

PART_BREAK = "<!-- memo-part-break -->"
_BODY = re.compile(r"<body[^>]*>")


@dataclass
class LaidOut:
    """One laid-out and written part: its PDF, its page count, where its charts' boxes are
    (pages counted within the part) and its outline (label, page, x, y [pt, from the bottom
    left], open, children)."""

    pdf: bytes
    pages: int
    placements: list[Placement] = field(default_factory=list)
    bookmarks: list[Any] = field(default_factory=list)


def split_html(html: str) -> tuple[str, str] | None:
    """The memo's HTML as two documents (the head repeated), or None without one part break."""
    if html.count(PART_BREAK) != 1:
        return None
    body = _BODY.search(html)
    cut = html.index(PART_BREAK)
    if body is None or body.end() > cut:
        return None
    return html[:cut] + "</body></html>", html[:body.end()] + html[cut:]


def _sheets(page_size: str, fetcher: Any, *, running: bool) -> list[Any]:
    from weasyprint import CSS

    from app.memo import PAGE_SIZES, TEMPLATES_DIR

    names = ["memo.css", "memo_running.css"] if running else ["memo.css"]
    sheets = [CSS(string=(TEMPLATES_DIR / name).read_text(encoding="utf-8"), url_fetcher=fetcher)
              for name in names]
    return sheets + [CSS(string=f"@page {{ size: {PAGE_SIZES[page_size]}; }}", url_fetcher=fetcher)]


def lay_out(html: str, *, chart_sizes: Sequence[tuple[int, int]], page_size: str, running: bool = True,
            fetcher: Any = None, write_options: dict[str, Any] | None = None) -> LaidOut:
    """Lay out and write one document; chart N's box is the element with id memo-chart-N."""
    from weasyprint import HTML

    from app import chart_pages
    from app.memo import ASSETS_DIR, CHART_ANCHOR, WRITE_OPTIONS, _old_objects_set_aside, memo_fetcher

    fetcher = fetcher or memo_fetcher(set(), list(chart_sizes))
    with _old_objects_set_aside():
        document = HTML(string=html, base_url=ASSETS_DIR.as_uri() + "/", url_fetcher=fetcher)
        laid_out = document.render(stylesheets=_sheets(page_size, fetcher, running=running))
        anchors = [CHART_ANCHOR.format(i) for i in range(len(chart_sizes))]
        placements = chart_pages.chart_placements(laid_out, anchors)
        bookmarks = _plain_bookmarks(laid_out.make_bookmark_tree(scale=chart_pages.CSS_PX_IN_PT,
                                                                 transform_pages=True))
        data = laid_out.write_pdf(**{**WRITE_OPTIONS, **(write_options or {})})
    return LaidOut(data, len(laid_out.pages), placements, bookmarks)


def _plain_bookmarks(tree: Any) -> list[Any]:
    return [[label, target[0], target[1], target[2], state == "open", _plain_bookmarks(children)]
            for label, target, children, state in tree]


@dataclass(frozen=True)
class Running:
    """The running header and footer as two PDFs: ``frame`` (page 1: borrower and fingerprint;
    page 2: the same and the caution, as on every later page) and ``numbers`` ("Page i of N")."""

    frame: bytes
    numbers: bytes


_RUNNING_CACHE: dict[tuple[Any, ...], bytes] = {}
_RUNNING_LOCK = threading.Lock()


def running_pages(*, pages: int, borrower: str, fingerprint: str, page_size: str) -> Running:
    """The running header and footer for a memo of ``pages`` pages. Both layers are kept (the
    numbers depend only on the page count and size, the frame on the memo), so a reprint, or
    another memo of as many pages, lays out none of them again."""
    frame = _running_layer("frame", 2, borrower, fingerprint, page_size)
    return Running(frame, _running_layer("numbers", pages, "", "", page_size))


def _running_layer(layer: str, pages: int, borrower: str, fingerprint: str, page_size: str) -> bytes:
    from app.memo import _environment

    key = (layer, pages, borrower, fingerprint, page_size)
    with _RUNNING_LOCK:
        if key in _RUNNING_CACHE:
            return _RUNNING_CACHE[key]
    html = _environment().get_template("memo_running.html").render(
        borrower=borrower, fingerprint=fingerprint, sheets=range(pages), layer=layer)
    result = lay_out(html, chart_sizes=(), page_size=page_size, running=True)
    if result.pages != pages:
        raise RuntimeError(f"the running {layer} came out on {result.pages} pages, not {pages}")
    with _RUNNING_LOCK:
        _RUNNING_CACHE[key] = result.pdf
        while len(_RUNNING_CACHE) > 16:
            _RUNNING_CACHE.pop(next(iter(_RUNNING_CACHE)))
    return result.pdf


def assemble(parts: Sequence[LaidOut], *, running: Running | None, charts: bytes | None) -> bytes:
    """The parts' pages in order, in the first part's document (metadata, attachments); the
    running pages laid over them page by page; each chart page drawn into its box; the outline
    rebuilt from the parts' when there are several."""
    import pikepdf

    from app import chart_pages

    opened = [pikepdf.open(io.BytesIO(part.pdf)) for part in parts]
    extra = []
    try:
        pdf = opened[0]
        for other in opened[1:]:
            pdf.pages.extend(other.pages)
        offsets = [sum(part.pages for part in parts[:i]) for i in range(len(parts))]
        operators: dict[int, list[bytes]] = {}
        if running is not None:
            frame, numbers = pikepdf.open(io.BytesIO(running.frame)), pikepdf.open(io.BytesIO(running.numbers))
            extra += [frame, numbers]
            forms = [chart_pages.as_form(pdf, page) for page in frame.pages]   # one copy, every page
            for number, page in enumerate(pdf.pages):
                first = 0 if number == 0 else 1
                operators.setdefault(number, []).extend([
                    chart_pages.form_operators(pdf, page, forms[first], None, pikepdf.Name(f"/MemoFrame{first}")),
                    chart_pages.form_operators(pdf, page, chart_pages.as_form(pdf, numbers.pages[number]), None,
                                               pikepdf.Name(f"/MemoPage{number}"))])
        if charts is not None:
            source = pikepdf.open(io.BytesIO(charts))
            extra.append(source)
            for part, offset in zip(parts, offsets):
                for placement in sorted(part.placements, key=lambda p: p.chart_page):
                    chart, number = placement.chart_page, offset + placement.page
                    if chart >= len(source.pages):
                        raise chart_pages.ChartPagesError(
                            f"the charts PDF has {len(source.pages)} pages, fewer than the charts to place")
                    operators.setdefault(number, []).append(chart_pages.form_operators(
                        pdf, pdf.pages[number], chart_pages.as_form(pdf, source.pages[chart]), placement.box,
                        pikepdf.Name(f"/MemoChart{chart}")))
        for number, ops in operators.items():
            chart_pages.append_drawing(pdf.pages[number], ops)
        if len(parts) > 1:
            _rebuild_outline(pdf, [(part.bookmarks, offset) for part, offset in zip(parts, offsets)])
        out = io.BytesIO()
        pdf.save(out, deterministic_id=True, fix_metadata_version=False, compress_streams=True,
                 object_stream_mode=pikepdf.ObjectStreamMode.generate)
        return out.getvalue()
    finally:
        for handle in opened + extra:
            handle.close()


def _rebuild_outline(pdf: Any, trees: list[tuple[list[Any], int]]) -> None:
    from pikepdf import OutlineItem

    def items(tree: list[Any], offset: int) -> list[Any]:
        made = []
        for label, page, x, y, is_open, children in tree:
            item = OutlineItem(label, offset + page, "XYZ", left=x, top=y)
            item.is_closed = not is_open
            item.children.extend(items(children, offset))
            made.append(item)
        return made

    with pdf.open_outline() as outline:
        outline.root.clear()
        for tree, offset in trees:
            outline.root.extend(items(tree, offset))


# --------------------------------------------------------------------------- the worker


def _write_message(stream: BinaryIO, header: dict[str, Any], payload: bytes = b"") -> None:
    data = json.dumps({**header, "payload": len(payload)}).encode("utf-8")
    stream.write(struct.pack(">I", len(data)) + data + payload)
    stream.flush()


def _read_exact(stream: BinaryIO, size: int) -> bytes:
    chunks, left = [], size
    while left:
        chunk = stream.read(left)
        if not chunk:
            raise EOFError("the other side closed the pipe")
        chunks.append(chunk)
        left -= len(chunk)
    return b"".join(chunks)


def _read_message(stream: BinaryIO) -> tuple[dict[str, Any], bytes]:
    (size,) = struct.unpack(">I", _read_exact(stream, 4))
    header = json.loads(_read_exact(stream, size))
    return header, _read_exact(stream, int(header["payload"]))


def serve(requests: BinaryIO, answers: BinaryIO) -> None:
    """The worker's loop: a part's HTML in, its layout out; returns when the pipe closes."""
    lay_out("<p>warm-up</p>", chart_sizes=(), page_size="A4")       # fonts and styles loaded now
    _write_message(answers, {"ready": True})
    while True:
        try:
            header, payload = _read_message(requests)
        except EOFError:
            return
        try:
            part = lay_out(payload.decode("utf-8"), chart_sizes=[tuple(s) for s in header["sizes"]],
                           page_size=header["page_size"], running=False)
            _write_message(answers, {"ok": True, "pages": part.pages, "bookmarks": part.bookmarks,
                                     "placements": [[p.page, list(p.box), p.chart_page] for p in part.placements]},
                           part.pdf)
        except Exception as exc:  # reported to the caller, which lays the part out itself
            _write_message(answers, {"ok": False, "error": f"{type(exc).__name__}: {exc}"[:500]})


class LayoutWorker:
    """A second process that lays out the memo's second part (see the module's text)."""

    def __init__(self, *, timeout: float = 60.0):
        root = str(Path(__file__).resolve().parents[1])
        env = {**os.environ, "PYTHONPATH": os.pathsep.join(filter(None, [root, os.environ.get("PYTHONPATH")]))}
        self.timeout = timeout
        self._lock = threading.Lock()
        self._ready = threading.Event()
        self._process = subprocess.Popen([sys.executable, "-m", "app.memo_parts"], stdin=subprocess.PIPE,
                                         stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, env=env,
                                         start_new_session=True)
        threading.Thread(target=self._await_ready, name="memo-layout-ready", daemon=True).start()

    def _await_ready(self) -> None:
        try:
            header, _ = _read_message(self._process.stdout)
            if header.get("ready"):
                self._ready.set()
        except Exception:
            pass

    @property
    def running(self) -> bool:
        return self._process.poll() is None

    def ready(self) -> bool:
        """Started, warmed up and alive: a memo printed now uses it."""
        return self._ready.is_set() and self.running

    def submit(self, html: str, *, chart_sizes: Sequence[tuple[int, int]], page_size: str) -> "PendingPart":
        """Send one part; the answer is read on a thread, so the caller lays out its own part."""
        pending = PendingPart(self)
        self._lock.acquire()
        try:
            _write_message(self._process.stdin, {"sizes": [list(s) for s in chart_sizes], "page_size": page_size},
                           html.encode("utf-8"))
        except Exception as exc:
            self._lock.release()
            pending.fail(exc)
            return pending
        threading.Thread(target=pending.receive, name="memo-layout-answer", daemon=True).start()
        return pending

    def close(self) -> None:
        try:
            self._process.stdin.close()
            self._process.wait(timeout=5)
        except Exception:
            self._process.kill()
            self._process.wait(timeout=5)


class PendingPart:
    """The worker's answer to one part, when it comes."""

    def __init__(self, worker: LayoutWorker):
        self._worker = worker
        self._done = threading.Event()
        self._result: LaidOut | None = None
        self._error: BaseException | None = None

    def fail(self, exc: BaseException) -> None:
        self._error = exc
        self._done.set()

    def receive(self) -> None:
        try:
            header, payload = _read_message(self._worker._process.stdout)
            if not header.get("ok"):
                raise RuntimeError(header.get("error", "the layout worker failed"))
            self._result = LaidOut(payload, int(header["pages"]),
                                   [Placement(page, tuple(box), chart) for page, box, chart in header["placements"]],
                                   header["bookmarks"])
        except BaseException as exc:
            self._error = exc
        finally:
            self._worker._lock.release()
            self._done.set()

    def result(self) -> LaidOut:
        """The laid-out part; raises why not (the worker is then stopped: it is out of step)."""
        if not self._done.wait(self._worker.timeout) or self._error is not None:
            stop_layout_worker(self._worker)
            raise RuntimeError(f"the layout worker did not answer ({self._error or 'timeout'})")
        assert self._result is not None
        return self._result


_WORKER: LayoutWorker | None = None
_WORKER_LOCK = threading.Lock()


def start_layout_worker(*, wait: bool = False) -> LayoutWorker:
    """Start (once per process) the worker that lays out the second part of each memo. With
    ``wait``, return once it has warmed up (or failed to, within its timeout)."""
    import atexit

    global _WORKER
    with _WORKER_LOCK:
        if _WORKER is None or not _WORKER.running:
            _WORKER = LayoutWorker()
            atexit.unregister(stop_layout_worker)
            atexit.register(stop_layout_worker)
        worker = _WORKER
    if wait:
        worker._ready.wait(worker.timeout)
    return worker


def stop_layout_worker(worker: LayoutWorker | None = None) -> None:
    global _WORKER
    with _WORKER_LOCK:
        if worker is None or worker is _WORKER:
            worker, _WORKER = _WORKER, None
    if worker is not None:
        worker.close()


def ready_worker() -> LayoutWorker | None:
    worker = _WORKER
    return worker if worker is not None and worker.ready() else None


if __name__ == "__main__":
    # The protocol owns standard output; anything a library prints goes to standard error.
    answers = os.fdopen(os.dup(sys.stdout.fileno()), "wb")
    sys.stdout = sys.stderr
    serve(sys.stdin.buffer, answers)
