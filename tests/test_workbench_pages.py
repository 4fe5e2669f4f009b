"""Every workbench page through Streamlit's AppTest: load the sample, change a control, see the
figure change, never an exception; bad input gives a message and keeps the rest of the case."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from app.state import WORKDIR_ENV

WORKBENCH = str(Path(__file__).resolve().parent.parent / "app" / "workbench.py")


@pytest.fixture()
def app(tmp_path, monkeypatch):
    monkeypatch.setenv(WORKDIR_ENV, str(tmp_path))
    at = AppTest.from_file(WORKBENCH, default_timeout=30)
    at.run()
    assert not at.exception
    return at


def _open(at: AppTest, page: str) -> AppTest:
    at.switch_page(f"pages/{page}.py")
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _specs(at: AppTest) -> list[str]:
    return [chart.proto.spec for chart in at.get("plotly_chart")]


def _number(at: AppTest, label: str):
    found = [w for w in at.number_input if w.label == label]
    assert found, f"no number field labelled {label!r}"
    return found[0]


def _metric(at: AppTest, label: str) -> str:
    return next(m.value for m in at.metric if m.label == label)


def _errors(at: AppTest) -> str:
    return " ".join(e.value for e in at.error)


def test_opens_on_the_sample_borrower_with_the_caution(app):
    assert any("Hollowmere" in m.value for m in app.sidebar.markdown)
    # The caution the design asks for on every results page (common practice in credit tools).
    assert any("not a credit decision" in i.value for i in app.info)


def test_asset_pd_page_default_point_moves_pd_and_chart(app):
    _open(app, "asset_pd")
    pd_before, specs_before = _metric(app, "PD in force"), _specs(app)
    _number(app, "Long-term share [fraction]").set_value(1.0).run()
    assert not app.exception
    # A larger default point lowers ln(V/DP), so the PD N(-DD) must rise (Merton 1974).
    assert float(_metric(app, "PD in force").rstrip(" %")) > float(pd_before.rstrip(" %"))
    assert _specs(app)[0] != specs_before[0]


def test_exposure_page_ccf_standard_changes_chart(app):
    _open(app, "exposure")
    before = _specs(app)
    app.selectbox[0].set_value("basel_ii").run()
    assert not app.exception
    # Basel II CCFs (20/50 % for commitments) differ from Basel III's 40 %, so EAD moves.
    assert _specs(app) != before


def test_recovery_page_mean_changes_density(app):
    _open(app, "recovery")
    before = _specs(app)
    _number(app, "Mean [fraction]").set_value(0.45).run()
    assert not app.exception and _specs(app) != before
    app.selectbox[0].set_value("RCF-1").run()
    assert not app.exception and len(_specs(app)) == 1


def test_loss_page_spread_changes_raroc_and_confidence_changes_chart(app):
    _open(app, "loss")
    raroc = _metric(app, "RAROC")
    _number(app, "Proposed spread [fraction/year]").set_value(0.01).run()
    assert not app.exception and _metric(app, "RAROC") != raroc
    before = _specs(app)
    _number(app, "Confidence [fraction]").set_value(0.995).run()
    assert not app.exception and _specs(app) != before


def test_whatif_page_changes_figures_and_saves_a_scenario(app):
    _open(app, "whatif")
    before = _specs(app)
    _number(app, "Long-term share of the default point").set_value(0.9).run()
    assert not app.exception and _specs(app) != before
    assert app.session_state["raw"]["pd"]["default_point"]["long_term_share"] == 0.5  # overlay only
    [w for w in app.text_input if w.label == "Name"][0].set_value("Heavier default point")
    [b for b in app.button if b.label == "Save scenario"][0].click().run()
    assert not app.exception
    saved = app.session_state["raw"]["scenarios"][-1]
    assert saved["name"] == "Heavier default point"
    assert saved["set"] == {"pd.default_point.long_term_share": 0.9}


def test_memo_page_text_is_kept_and_case_downloads(app):
    _open(app, "memo")
    [w for w in app.text_input if w.label == "Reviewed by"][0].set_value("B. Reviewer").run()
    assert not app.exception
    assert app.session_state["raw"]["memo"]["reviewed_by"] == "B. Reviewer"
