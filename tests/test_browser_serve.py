"""The workbench's server as a user runs it: SIGTERM leaves nothing behind; a fresh server serves
any page address with only the flow's pages in the navigation."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import time
import urllib.request
from pathlib import Path

import psutil
import pytest
from conftest import VENV_BIN

CHROMIUM = "/usr/bin/chromium"
ROOT = Path(__file__).resolve().parent.parent
ARTIFACTS = ROOT / "test-artifacts"
FLOW = [
    "Borrower and statements",
    "Asset trend and PD",
    "Facilities and exposure",
    "Recovery and LGD",
    "Loss, capital and pricing",
    "What-if and scenarios",
    "Memo and files",
]

pytestmark = [pytest.mark.browser, pytest.mark.skipif(not Path(CHROMIUM).exists(), reason="needs the system Chromium")]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _start(tmp_path: Path) -> tuple[subprocess.Popen[bytes], str]:
    port = _free_port()
    proc = subprocess.Popen(
        [str(VENV_BIN / "obligor-memo"), "app", "--port", str(port), "--workdir", str(tmp_path / "work")],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    url = f"http://127.0.0.1:{port}"
    deadline = time.time() + 40
    while time.time() < deadline:
        try:
            with urllib.request.urlopen(url + "/_stcore/health", timeout=1) as answer:
                if answer.status == 200:
                    return proc, url
        except OSError:
            time.sleep(0.3)
    proc.kill()
    pytest.fail("the workbench did not start within 40 s")


def _browser(p):
    return p.chromium.launch(
        executable_path=CHROMIUM,
        headless=True,
        args=["--no-sandbox", "--headless=new", "--disable-gpu", "--disable-dev-shm-usage"],
    )


def test_sigterm_leaves_no_process_and_frees_the_port(tmp_path):
    from playwright.sync_api import sync_playwright

    proc, url = _start(tmp_path)
    try:
        with sync_playwright() as p:
            browser = _browser(p)
            page = browser.new_page()
            page.goto(url + "/memo", wait_until="networkidle")
            page.wait_for_timeout(4000)  # the memo page starts the chart browser
            browser.close()
        tree = [proc.pid] + [c.pid for c in psutil.Process(proc.pid).children(recursive=True)]
        assert len(tree) >= 2  # the command and Streamlit (and the chart browser)
        os.kill(proc.pid, signal.SIGTERM)
        proc.wait(timeout=30)
        deadline = time.time() + 20
        while time.time() < deadline and any(
            psutil.pid_exists(pid) and psutil.Process(pid).status() != "zombie" for pid in tree
        ):
            time.sleep(0.3)
        left = [pid for pid in tree if psutil.pid_exists(pid) and psutil.Process(pid).status() != "zombie"]
        assert left == [], [psutil.Process(pid).cmdline()[:2] for pid in left]
        port = int(url.rsplit(":", 1)[1])
        with socket.socket() as s:  # free again, as a server binds it (connections
            s.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)  # of the old one may linger
            s.bind(("127.0.0.1", port))  # in TIME_WAIT): the next start would not fail
            s.listen()
    finally:
        if proc.poll() is None:
            proc.kill()


def test_fresh_server_serves_a_page_address_with_only_the_flow_in_the_navigation(tmp_path):
    from playwright.sync_api import sync_playwright

    proc, url = _start(tmp_path)
    try:
        with sync_playwright() as p:
            browser = _browser(p)
            page = browser.new_page(viewport={"width": 1400, "height": 1000})
            page.goto(url + "/asset_pd?case=0123456789abcdef0123456789abcdef", wait_until="networkidle")
            page.wait_for_selector('[data-testid="stSidebarNav"]', timeout=20000)
            page.wait_for_timeout(1500)
            ARTIFACTS.mkdir(exist_ok=True)
            page.screenshot(path=str(ARTIFACTS / "deep_link_fresh_server.png"))
            body = page.inner_text("body")
            assert "Asset trend and PD" in body
            nav = page.locator('[data-testid="stSidebarNav"]').inner_text()
            assert [name for name in FLOW if name in nav] == FLOW
            for internal in ("ui", "whatif", "asset_pd", "steps", "main"):
                assert internal not in nav.split("\n"), nav
            assert "streamlit.io" not in page.content()  # no framework error page with its links
            browser.close()
    finally:
        proc.send_signal(signal.SIGTERM)
        proc.wait(timeout=30)
