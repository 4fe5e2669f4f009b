"""A real browser drives the workbench: open the sample, move the default point, PD moves.

Uses the system Chromium (never downloads one); skipped when it is missing. Screenshots of every
page go to test-artifacts/ so a person can look at them.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from browser_support import ARTIFACTS, CHROMIUM, LAUNCH_ARGS, Server, open_page

pytestmark = [pytest.mark.browser, pytest.mark.skipif(not Path(CHROMIUM).exists(), reason="needs the system Chromium")]


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    workdir = tmp_path_factory.mktemp("workdir")
    running = Server(workdir).start()
    yield running.url, workdir
    running.stop()


def _metric(page, label: str) -> str:
    box = page.locator('[data-testid="stMetric"]', has_text=label).first
    return box.locator('[data-testid="stMetricValue"]').inner_text().strip()


def _settle(page) -> None:
    page.wait_for_timeout(300)
    page.wait_for_function("() => !document.querySelector('[data-testid=\"stStatusWidget\"]')", timeout=60000)
    page.wait_for_timeout(300)


def test_default_point_moves_pd(server):
    from playwright.sync_api import sync_playwright

    url, workdir = server
    ARTIFACTS.mkdir(exist_ok=True)
    with sync_playwright() as p:
        browser = p.chromium.launch(
            executable_path=CHROMIUM,
            headless=True,
            args=LAUNCH_ARGS,
        )
        page = browser.new_page(viewport={"width": 1500, "height": 1100})
        page.goto(url, wait_until="networkidle")
        page.get_by_text("Hollowmere Lifting Group").first.wait_for(timeout=60000)
        _settle(page)
        page.screenshot(path=str(ARTIFACTS / "01_borrower.png"), full_page=True)

        pd_metric = page.locator('[data-testid="stMetric"]', has_text="PD in force").first
        open_page(page, "Asset trend and PD", wait_for=pd_metric)
        before = _metric(page, "PD in force")
        page.screenshot(path=str(ARTIFACTS / "02_asset_pd_before.png"), full_page=True)

        box = page.get_by_role("textbox", name="Long-term share (%)", exact=True)
        box.fill("100")
        box.press("Enter")
        page.wait_for_function(
            "(old) => [...document.querySelectorAll('[data-testid=\"stMetric\"]')]"
            ".some(m => m.innerText.includes('PD in force') && !m.innerText.includes(old))",
            arg=before,
            timeout=60000,
        )
        _settle(page)
        after = _metric(page, "PD in force")
        page.screenshot(path=str(ARTIFACTS / "03_asset_pd_after.png"), full_page=True)
        assert after != before
        # A heavier default point can only raise the PD: common practice, and the direction of
        # N(-DD) when ln(V/DP) falls.
        assert float(after.rstrip(" %")) > float(before.rstrip(" %"))

        # A value out of range gets a message beside the field; the PD shown stays the last valid.
        box = page.get_by_role("textbox", name="Short-term share (%)", exact=True)
        box.fill("-50")
        box.press("Enter")
        page.get_by_text("Short-term share of the default point: got -50 %").first.wait_for(timeout=60000)
        _settle(page)
        assert _metric(page, "PD in force") == after
        page.screenshot(path=str(ARTIFACTS / "04_bad_value.png"), full_page=True)
        assert not page.get_by_text("Traceback").count()

        for index, name in enumerate(
            [
                "Facilities and exposure",
                "Recovery and LGD",
                "Loss, capital and pricing",
                "What-if and scenarios",
                "Memo and files",
            ],
            start=5,
        ):
            open_page(page, name)
            page.screenshot(
                path=str(ARTIFACTS / f"{index:02d}_{name.split()[0].lower().strip(',-')}.png"), full_page=True
            )
            assert not page.get_by_text("Traceback").count()

        # What-if: a control moves the PD metric and redraws the heat map and tornado.
        open_page(page, "What-if and scenarios", wait_for=pd_metric)
        before = _metric(page, "PD in force")
        # The case's share is 100 % after the edit above; the what-if lightens it.
        box = page.get_by_role("textbox", name="Long-term share of the default point (%)", exact=True)
        box.fill("30")
        box.press("Enter")
        page.wait_for_function(
            "(old) => [...document.querySelectorAll('[data-testid=\"stMetric\"]')]"
            ".some(m => m.innerText.includes('PD in force') && !m.innerText.includes(old))",
            arg=before,
            timeout=60000,
        )
        _settle(page)
        page.locator(".js-plotly-plot").nth(1).wait_for(timeout=60000)
        # Streamlit scrolls inside its own container: a tall window shows the whole page.
        page.set_viewport_size({"width": 1500, "height": 3400})
        _settle(page)
        page.screenshot(path=str(ARTIFACTS / "10_whatif_moved.png"), full_page=True)
        page.set_viewport_size({"width": 1500, "height": 1100})
        assert page.get_by_text("Model PD by default point and volatility").count()
        assert page.get_by_text("One-way sensitivity of the expected loss").count()
        assert not page.get_by_text("Traceback").count()

        # The autosave keeps what was typed: a fresh load of the same address restores it.
        page.reload(wait_until="networkidle")
        open_page(
            page, "Asset trend and PD", wait_for=page.get_by_role("textbox", name="Long-term share (%)", exact=True)
        )
        assert page.get_by_role("textbox", name="Long-term share (%)", exact=True).input_value() == "100"
        browser.close()
    saved = list((Path(workdir) / "cases").glob("*.json"))
    assert len(saved) >= 1
