"""Helpers for the real-browser tests: a workbench server on a free port (restartable on the same
working folder), the system Chromium through Playwright, and readers for what the user sees:
grid cells (from the grid's accessible table), the key-figure strip and field values."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

CHROMIUM = "/usr/bin/chromium"
ROOT = Path(__file__).resolve().parent.parent
ARTIFACTS = ROOT / "test-artifacts"
LAUNCH_ARGS = ["--no-sandbox", "--headless=new", "--disable-gpu", "--disable-dev-shm-usage"]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Server:
    """``obligor-memo app`` as a user starts it, on ``workdir``; ``restart()`` keeps the folder."""

    def __init__(self, workdir: Path) -> None:
        self.workdir = Path(workdir)
        self.proc: subprocess.Popen[bytes] | None = None
        self.url = ""

    def start(self) -> Server:
        port = free_port()
        code = (
            "import sys; from obligor_memo.app.workbench.serve import serve; "
            f"sys.exit(serve(port={port}, host='127.0.0.1', workdir=r'{self.workdir}'))"
        )
        self.proc = subprocess.Popen(
            [sys.executable, "-c", code],
            cwd=ROOT,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
            start_new_session=True,
        )
        self.url = f"http://127.0.0.1:{port}"
        deadline = time.time() + 40
        while time.time() < deadline:
            try:
                with urllib.request.urlopen(self.url + "/_stcore/health", timeout=1) as r:
                    if r.status == 200:
                        return self
            except OSError:
                time.sleep(0.3)
        self.stop()
        raise RuntimeError("the workbench did not start within 40 s")

    def stop(self) -> None:
        if self.proc is not None and self.proc.poll() is None:
            os.killpg(self.proc.pid, signal.SIGTERM)
            try:
                self.proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                os.killpg(self.proc.pid, signal.SIGKILL)
                self.proc.wait(timeout=5)
        self.proc = None

    def restart(self) -> Server:
        self.stop()
        return self.start()


def settle(page) -> None:
    """Wait until Streamlit has finished the run the last action started."""
    page.wait_for_timeout(250)
    page.wait_for_function("() => !document.querySelector('[data-testid=\"stStatusWidget\"]')", timeout=20000)
    page.wait_for_timeout(350)


def open_page(page, title: str, *, wait_for=None) -> None:
    """Click the sidebar link ``title`` and wait for its heading (and ``wait_for``, a locator).

    A click that lands while the page is still drawing can be lost, as it would be for a user
    clicking that fast, who clicks again: so does this, at most three times in all. Each lost
    click leaves a screenshot in test-artifacts/ for whoever reads a failure."""
    link = page.get_by_role("link", name=title, exact=True).first
    heading = page.get_by_role("heading", name=title).first
    for attempt in range(3):
        link.click()
        try:
            heading.wait_for(timeout=20000)
            if wait_for is not None:
                wait_for.wait_for(timeout=20000)
            break
        except Exception:  # a Playwright timeout: the page did not come
            ARTIFACTS.mkdir(exist_ok=True)
            page.screenshot(path=str(ARTIFACTS / f"lost_click_{title.split()[0].lower()}_{attempt}.png"))
            if attempt == 2:
                raise
    settle(page)


def grid(page, index: int = 0):
    frame = page.locator('[data-testid="stDataFrame"]').nth(index)
    frame.locator("canvas").first.wait_for(timeout=30000)
    return frame


def grid_rows(page, index: int = 0) -> list[list[str]]:
    """The grid's cells as text, header first (the grid's accessible table mirrors its canvas)."""
    table = grid(page, index).locator("table").first
    deadline = time.time() + 15
    while True:
        rows = [[c.strip() for c in row.locator("th, td").all_inner_texts()] for row in table.locator("tr").all()]
        if len(rows) > 1 and any(any(cell for cell in r) for r in rows[1:]) or time.time() > deadline:
            return rows
        page.wait_for_timeout(200)


def edit_cell(page, row: int, column: int, text: str, index: int = 0, shown: str | None = None) -> None:
    """Type ``text`` into the cell (``row`` 0 is the first data row, ``column`` 0 the first
    column) as a user does: click, move with the arrow keys, Enter, type, Enter; then read the
    cell back (``shown``: what it should then show, by default ``text``).

    A click that lands while the page is still drawing the grid is lost, as it would be for a
    user clicking that fast; the edit is then typed again, at most three times in all."""
    for _ in range(3):
        box = grid(page, index).bounding_box()
        page.mouse.click(box["x"] + 60, box["y"] + 35 + 35 * row + 17)
        page.wait_for_timeout(150)
        for _ in range(column):
            page.keyboard.press("ArrowRight")
        page.keyboard.press("Enter")
        page.wait_for_timeout(250)
        page.keyboard.press("Control+A")
        page.keyboard.type(text, delay=40)
        page.keyboard.press("Enter")
        settle(page)
        rows = grid_rows(page, index)
        if len(rows) > row + 1 and len(rows[row + 1]) > column and rows[row + 1][column] == (shown or text):
            return
        page.wait_for_timeout(1000)
    raise AssertionError(f"the grid's cell ({row}, {column}) does not show {shown or text!r} after typing it")


def delete_row(page, row: int, index: int = 0) -> None:
    """Select the row by its marker column and press Delete, as a user does."""
    box = grid(page, index).bounding_box()
    page.mouse.click(box["x"] + 14, box["y"] + 35 + 35 * row + 17)
    page.wait_for_timeout(150)
    page.keyboard.press("Delete")
    settle(page)


def key_figures(page) -> dict[str, str]:
    strip = page.locator('[data-testid="key-figures"]').first
    strip.wait_for(timeout=20000)
    labels = strip.locator(".kf-label").all_inner_texts()
    values = strip.locator(".kf-value").all_inner_texts()
    return dict(zip(labels, values, strict=True))


def type_into(page, label: str, text: str) -> None:
    box = page.get_by_label(label, exact=True).first
    box.fill(text)
    box.press("Enter")
    settle(page)


def launch(p):
    return p.chromium.launch(executable_path=CHROMIUM, headless=True, args=LAUNCH_ARGS)


def field_value(page, label: str) -> str:
    """The text in the field labelled ``label`` once the page has drawn it."""
    box = page.get_by_label(label, exact=True).first
    box.wait_for(state="visible", timeout=30000)
    settle(page)
    return box.input_value()
