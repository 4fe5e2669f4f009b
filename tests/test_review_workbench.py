"""The workbench's "Since the last review" view on the first page (Streamlit AppTest)."""

from __future__ import annotations

import copy
import json

from obligor_memo.app.workbench import state
from obligor_memo.app.workbench.state import WORKDIR_ENV
from obligor_memo.engine.review import roll_forward
from streamlit.testing.v1 import AppTest
from workbench_support import WORKBENCH


def test_the_view_shows_grade_migration_figures_waterfalls_and_changed_inputs(tmp_path, monkeypatch, sample_case):
    monkeypatch.setenv(WORKDIR_ENV, str(tmp_path))
    d = roll_forward(sample_case, approved_on="2025-11-28")
    last = dict(d["statements"][-1])
    last["year"] += 1
    last["total_assets"] *= 1.04
    last["short_term_liabilities"] *= 1.08
    d["statements"].append(last)
    d["facilities"][1]["ccf"] = 0.9
    d = json.loads(json.dumps(d))
    case_id = state.new_case_id()
    state.autosave(tmp_path, case_id, raw=d, valid=d)
    at = AppTest.from_file(WORKBENCH, default_timeout=60)
    at.query_params["case"] = case_id
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    text = " ".join(m.value for m in at.markdown)
    assert "Grade migration" in text and "2025-11-28" in text
    frames = [f.value for f in at.dataframe]
    assert any("facilities[RCF-1].ccf" in " ".join(map(str, f.to_numpy().ravel())) for f in frames)
    specs = [c.proto.spec for c in at.get("plotly_chart")]
    assert sum("last review to now, by cause" in s for s in specs) == 2


def test_without_a_previous_review_the_view_says_so(tmp_path, monkeypatch):
    monkeypatch.setenv(WORKDIR_ENV, str(tmp_path))
    at = AppTest.from_file(WORKBENCH, default_timeout=60)
    at.run()
    assert not at.exception
    assert any("records no previous review" in c.value for c in at.caption)
