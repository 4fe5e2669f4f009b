"""Every page of the flow, opened by its address on a fresh server, at 1400 and 1024 px wide:
a screenshot of each in test-artifacts/ for a person to look at, and the checks a machine can
make of what the person would see: the page's title, only the flow's seven pages in the
navigation, the key-figure strip, no traceback, and no metric or key figure cut off."""

from __future__ import annotations

from pathlib import Path

import pytest
from browser_support import ARTIFACTS, CHROMIUM, Server, key_figures, launch, settle

pytestmark = [pytest.mark.browser, pytest.mark.skipif(not Path(CHROMIUM).exists(), reason="needs the system Chromium")]

PAGES = (
    ("", "Borrower and statements"),
    ("asset_pd", "Asset trend and PD"),
    ("exposure", "Facilities and exposure"),
    ("recovery", "Recovery and LGD"),
    ("loss", "Loss, capital and pricing"),
    ("whatif", "What-if and scenarios"),
    ("memo", "Memo and files"),
)

# Text drawn wider than its box: the box clips it ("37,200,(") or it runs into its neighbour.
CUT = """() => [...document.querySelectorAll(
    '[data-testid="stMetricValue"] div, [data-testid="stMetricLabel"] p, .kf-value, .kf-label')]
    .filter(e => e.scrollWidth > e.clientWidth + 1).map(e => e.innerText)"""


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    srv = Server(tmp_path_factory.mktemp("screens")).start()
    yield srv
    srv.stop()


@pytest.mark.parametrize("width", [1400, 1024])
def test_every_page_by_its_address(server, width):
    from playwright.sync_api import sync_playwright

    ARTIFACTS.mkdir(exist_ok=True)
    with sync_playwright() as p:
        browser = launch(p)
        page = browser.new_page(viewport={"width": width, "height": 1000})
        for index, (address, title) in enumerate(PAGES, start=1):
            page.goto(f"{server.url}/{address}", wait_until="networkidle")
            page.get_by_role("heading", name=title).first.wait_for(timeout=40000)
            settle(page)
            nav = page.locator('[data-testid="stSidebarNav"] a').all_inner_texts()
            assert [n.strip().split("\n")[-1] for n in nav] == [t for _, t in PAGES]
            assert key_figures(page)["Total EAD"].startswith("EUR ")
            assert not page.get_by_text("Traceback").count()
            # A tall window shows the whole page (Streamlit scrolls inside its own container).
            page.set_viewport_size({"width": width, "height": 3200})
            page.wait_for_timeout(1200)
            settle(page)
            page.screenshot(path=str(ARTIFACTS / f"screen_{width}_{index}_{address or 'borrower'}.png"), full_page=True)
            assert page.evaluate(CUT) == [], f"cut text on {title} at {width} px"
            page.set_viewport_size({"width": width, "height": 1000})
        browser.close()
