"""The roll-forward journey in a real browser: open the sample memo as last review, add a year,
change a CCF, see what changed, print: the memo's section shows both years and the causes."""

from __future__ import annotations

import json
import subprocess
from pathlib import Path

import pytest
from browser_support import ROOT, edit_cell
from click.testing import CliRunner
from obligor_memo.app.cli import main
from test_browser import ARTIFACTS, CHROMIUM, _settle, server  # noqa: F401  (fixture)

pytestmark = [pytest.mark.browser, pytest.mark.skipif(not Path(CHROMIUM).exists(), reason="needs the system Chromium")]


def test_roll_forward_journey(server, tmp_path):  # noqa: F811
    from playwright.sync_api import sync_playwright

    url, workdir = server
    ARTIFACTS.mkdir(exist_ok=True)
    last_pdf = tmp_path / "hollowmere_2025.pdf"
    sample = ROOT / "sample_data" / "hollowmere.yaml"
    assert CliRunner().invoke(main, ["memo", str(sample), "-o", str(last_pdf), "--no-charts"]).exit_code == 0
    rows = (ROOT / "sample_data" / "hollowmere_statements.csv").read_text().strip().splitlines()
    rows.append("2026,480000000,285000000,140000000,11500000,128000000,31000000,372000000,58000000")
    statements = tmp_path / "statements_2026.csv"
    statements.write_text("\n".join(rows) + "\n")
    with sync_playwright() as p:
        browser = p.chromium.launch(
            executable_path=CHROMIUM,
            headless=True,
            args=["--no-sandbox", "--headless=new", "--disable-gpu", "--disable-dev-shm-usage"],
        )
        page = browser.new_page(viewport={"width": 1500, "height": 1100})
        page.goto(url, wait_until="networkidle")
        page.get_by_text("Hollowmere Lifting Group").first.wait_for(timeout=20000)
        _settle(page)
        page.get_by_text("Since the last review").first.click()
        page.locator('input[type="file"]').nth(0).wait_for(state="attached", timeout=10000)
        inputs = page.locator('[data-testid="stFileUploader"]', has_text="Open last review")
        inputs.locator('input[type="file"]').set_input_files(str(last_pdf))
        page.get_by_text("Started the new review").first.wait_for(timeout=20000)
        _settle(page)
        page.locator('[data-testid="stFileUploader"]', has_text="Replace the statements").locator(
            'input[type="file"]'
        ).set_input_files(str(statements))
        page.get_by_role("button", name="Accept these statements").first.wait_for(timeout=20000)
        _settle(page)
        page.get_by_role("button", name="Accept these statements").first.click()
        page.get_by_text("Read 11 year(s)").first.wait_for(timeout=20000)
        _settle(page)
        # change the revolver's CCF: the grid's fifth column, second row
        page.get_by_role("link", name="Facilities and exposure", exact=True).first.click()
        page.get_by_role("heading", name="Facilities and exposure").first.wait_for(timeout=20000)
        _settle(page)
        edit_cell(page, 1, 5, "90")  # RCF-1's CCF, typed as a percentage
        assert not page.get_by_text("37,200,000").count(), "the CCF edit did not reach the case"  # preset EAD
        page.screenshot(path=str(ARTIFACTS / "review_01_exposure.png"), full_page=True)
        page.get_by_role("link", name="Borrower and statements", exact=True).first.click()
        page.get_by_text("Grade migration").first.wait_for(timeout=20000)
        _settle(page)
        page.screenshot(path=str(ARTIFACTS / "review_02_since_last_review.png"), full_page=True)
        shown = page.inner_text("body")
        browser.close()
    assert "Grade migration" in shown and "mainly" in shown
    saved = sorted((Path(workdir) / "cases").glob("*.json"), key=lambda p: p.stat().st_mtime)[-1]
    record = json.loads(saved.read_text())
    case = record.get("valid") or record.get("raw")
    assert case["facilities"][1]["ccf"] == pytest.approx(0.9)
    case_file = tmp_path / "new.json"
    case_file.write_text(json.dumps(case))
    out = tmp_path / "new.pdf"
    assert CliRunner().invoke(main, ["memo", str(case_file), "-o", str(out), "--no-charts"]).exit_code == 0
    text = subprocess.run(["pdftotext", "-layout", str(out), "-"], capture_output=True, text=True).stdout
    assert "Since the last review" in text and "2025" in text and "2026" in text
    assert "facilities[RCF-1].ccf" in text and "statements[2026] (added)" in text
