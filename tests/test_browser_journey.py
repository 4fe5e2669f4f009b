"""The analyst's day in a real browser: type into the grids and the fields, switch pages between
every edit, refresh, restart the server, open a second tab; after each step the screen, the
key-figure strip and the autosaved file on disk must agree, and nothing typed is lost.

Uses the system Chromium (never downloads one); skipped when it is missing. Screenshots go to
test-artifacts/ so a person can look at them.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from browser_support import (
    ARTIFACTS,
    CHROMIUM,
    Server,
    delete_row,
    edit_cell,
    field_value,
    grid_rows,
    key_figures,
    launch,
    open_page,
    settle,
    type_into,
)

pytestmark = [pytest.mark.browser, pytest.mark.skipif(not Path(CHROMIUM).exists(), reason="needs the system Chromium")]

FACILITIES = "Facilities and exposure"
BORROWER = "Borrower and statements"
LOSS = "Loss, capital and pricing"
WHATIF = "What-if and scenarios"
MEMO = "Memo and files"


def _saved(workdir: Path, case_id: str) -> dict:
    return json.loads((workdir / "cases" / f"{case_id}.json").read_text(encoding="utf-8"))


def _case_id(page) -> str:
    from urllib.parse import parse_qs, urlparse

    page.wait_for_url("**case=*", timeout=20000)
    return parse_qs(urlparse(page.url).query)["case"][0]


def _results_of(raw: dict):
    from obligor_memo.engine.case import parse_case
    from obligor_memo.engine.evaluate import evaluate

    return evaluate(parse_case(raw, source="case"))


def _row(rows: list[list[str]], first: str) -> dict[str, str]:
    header = rows[0]
    found = next(r for r in rows[1:] if r and r[0] == first)
    return dict(zip(header, found, strict=False))


@pytest.fixture()
def server(tmp_path):
    srv = Server(tmp_path / "work").start()
    yield srv
    srv.stop()


def test_grid_and_field_edits_survive_page_switches_refresh_and_restart(server):
    from obligor_memo.app.present.formatting import millions, pct
    from playwright.sync_api import sync_playwright

    ARTIFACTS.mkdir(exist_ok=True)
    with sync_playwright() as p:
        browser = launch(p)
        page = browser.new_page(viewport={"width": 1400, "height": 1000})
        page.goto(server.url + "/exposure", wait_until="networkidle")
        page.get_by_role("heading", name=FACILITIES).first.wait_for(timeout=30000)
        settle(page)
        case_id = _case_id(page)

        # Facilities grid: RCF-1's CCF to 75 % and its commitment to 70m.
        edit_cell(page, 1, 5, "75")
        open_page(page, LOSS)
        open_page(page, FACILITIES)
        edit_cell(page, 1, 3, "70000000")
        open_page(page, LOSS)
        open_page(page, FACILITIES)
        rcf = _row(grid_rows(page), "RCF-1")
        assert rcf["CCF (%)"] == "75" and rcf["Committed"] == "70000000"
        saved = _saved(server.workdir, case_id)
        assert saved["raw"]["facilities"][1]["ccf"] == 0.75
        assert saved["raw"]["facilities"][1]["committed"] == 70_000_000
        # EAD = drawn + CCF x undrawn (Basel III, CRE32.26): 120 + (22 + 0.75 x 48) + 25 + 15
        # + 0.2 x 8 = EUR 219.60m; the strip shows the figures of the edited case.
        assert key_figures(page)["Total EAD"] == "EUR 219.60m"
        assert key_figures(page)["Total EAD"] == millions(_results_of(saved["raw"]).total.ead, "EUR")
        page.screenshot(path=str(ARTIFACTS / "journey_01_facilities_edited.png"), full_page=True)

        # Statements grid: a cell, then a deleted row, then one undo brings the row back.
        open_page(page, BORROWER)
        years = [r[0] for r in grid_rows(page)[1:] if r and r[0]]
        assert years[0] == "2016"
        edit_cell(page, 0, 1, "310000000")
        open_page(page, FACILITIES)
        open_page(page, BORROWER)
        assert _row(grid_rows(page), "2016")["Total assets"] == "310000000"
        assert _saved(server.workdir, case_id)["raw"]["statements"][0]["total_assets"] == 310_000_000
        delete_row(page, 0)
        open_page(page, FACILITIES)
        open_page(page, BORROWER)
        assert "2016" not in [r[0] for r in grid_rows(page)[1:] if r]
        assert len(_saved(server.workdir, case_id)["raw"]["statements"]) == len(years) - 1
        page.get_by_role("button", name="Undo the last change").click()
        settle(page)
        assert _row(grid_rows(page), "2016")["Total assets"] == "310000000"
        assert len(_saved(server.workdir, case_id)["raw"]["statements"]) == len(years)

        # The credit metrics below the grid follow a sales edit, as the memo will print them.
        edit_cell(page, 0, 7, "250000000")  # 2016 sales, the last column the grid shows at this width
        open_page(page, FACILITIES)
        open_page(page, BORROWER)
        saved = _saved(server.workdir, case_id)
        assert saved["raw"]["statements"][0]["sales"] == 250_000_000
        from obligor_memo.app.present.credit import credit_rows, latest_years
        from obligor_memo.engine.credit_metrics import metric_trends

        shown = latest_years(_results_of(saved["raw"]))
        expected = credit_rows(shown, metric_trends(shown))
        table = grid_rows(page, 1)
        assert _row(table, "2016") == expected[0] and expected[0]["Revenue"] == "250.0"
        assert _row(table, "Trend") == expected[-1]
        page.screenshot(path=str(ARTIFACTS / "journey_01b_credit_metrics.png"))

        # A rate typed as a percentage gives the RAROC of the same rate written as a fraction.
        open_page(page, LOSS)
        type_into(page, "Proposed spread (% a year)", "1.5")
        saved = _saved(server.workdir, case_id)
        assert saved["raw"]["pricing"]["proposed_spread"] == 0.015
        from_file = dict(saved["raw"], pricing=dict(saved["raw"]["pricing"], proposed_spread=0.015))
        assert key_figures(page)["RAROC"] == pct(_results_of(from_file).pricing.raroc, 1)

        # A what-if saved as a named scenario.
        open_page(page, WHATIF)
        type_into(page, "Long-term share of the default point (%)", "90")
        page.get_by_label("Name", exact=True).fill("Heavier default point")
        page.get_by_role("button", name="Save scenario").click()
        settle(page)
        open_page(page, MEMO)
        scenarios = _saved(server.workdir, case_id)["raw"]["scenarios"]
        assert scenarios[-1] == {
            "name": "Heavier default point",
            "description": "",
            "set": {"pd.default_point.long_term_share": 0.9},
        }

        # Refresh: the same address finds everything again.
        page.goto(f"{server.url}/exposure?case={case_id}", wait_until="networkidle")
        page.get_by_role("heading", name=FACILITIES).first.wait_for(timeout=30000)
        settle(page)
        rcf = _row(grid_rows(page), "RCF-1")
        assert rcf["CCF (%)"] == "75" and rcf["Committed"] == "70000000"

        # Restart the server: the bookmark still opens the case as it was left.
        server.restart()
        page.goto(f"{server.url}/loss?case={case_id}", wait_until="networkidle")
        page.get_by_role("heading", name=LOSS).first.wait_for(timeout=30000)
        settle(page)
        assert field_value(page, "Proposed spread (% a year)") == "1.5"
        open_page(page, FACILITIES)
        rcf = _row(grid_rows(page), "RCF-1")
        assert rcf["CCF (%)"] == "75" and rcf["Committed"] == "70000000"
        figures = key_figures(page)
        assert figures["Total EAD"] == millions(_results_of(_saved(server.workdir, case_id)["raw"]).total.ead, "EUR")
        page.screenshot(path=str(ARTIFACTS / "journey_02_after_restart.png"), full_page=True)
        browser.close()


def test_a_second_tab_cannot_silently_overwrite_the_first(server):
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        browser = launch(p)
        context = browser.new_context(viewport={"width": 1400, "height": 1000})
        first = context.new_page()
        first.goto(server.url, wait_until="networkidle")
        first.get_by_role("heading", name=BORROWER).first.wait_for(timeout=30000)
        settle(first)
        case_id = _case_id(first)
        second = context.new_page()
        second.goto(f"{server.url}/?case={case_id}", wait_until="networkidle")
        second.get_by_role("heading", name=BORROWER).first.wait_for(timeout=30000)
        settle(second)

        type_into(second, "Name", "Renamed in the second tab")
        assert _saved(server.workdir, case_id)["raw"]["borrower"]["name"] == "Renamed in the second tab"
        # The first tab, unaware of that save, types into another field: nothing is overwritten,
        # it says so and offers both ways out; what it typed stays on its screen.
        type_into(first, "Sector", "Typed in the first tab")
        first.get_by_text("was saved from another tab or window").first.wait_for(timeout=15000)
        saved = _saved(server.workdir, case_id)["raw"]["borrower"]
        assert saved["name"] == "Renamed in the second tab" and saved["sector"] != "Typed in the first tab"
        assert field_value(first, "Sector") == "Typed in the first tab"
        first.screenshot(path=str(ARTIFACTS / "journey_03_two_tabs_conflict.png"), full_page=True)
        first.get_by_role("button", name="Load the other tab's version").click()
        settle(first)
        assert field_value(first, "Name") == "Renamed in the second tab"
        # After the reload the first tab saves again, on top of the second tab's revision.
        type_into(first, "Sector", "Agreed sector")
        saved = _saved(server.workdir, case_id)["raw"]["borrower"]
        assert saved == {**saved, "name": "Renamed in the second tab", "sector": "Agreed sector"}
        browser.close()
