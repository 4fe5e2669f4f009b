"""Case state rules: raw kept apart from valid, atomic per-session autosave, safe ids, plain data."""

from __future__ import annotations

import json
import math
import os

import numpy as np
import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st
from obligor_memo.app.workbench import state
from obligor_memo.engine.case import parse_case
from obligor_memo.engine.errors import CaseError


@pytest.fixture(scope="module")
def sample():
    return state.sample_case_dict()


def test_sample_round_trips_through_yaml_and_json_files(sample):
    # Whatever the workbench downloads must open again as the same case (common practice: a
    # committee re-runs the memo from the file it was given).
    for fmt, load in (("yaml", yaml.safe_load), ("json", json.loads)):
        again = load(state.case_file_text(sample, fmt))
        assert parse_case(again) == parse_case(sample)


def test_bad_value_keeps_other_inputs_and_names_the_field(sample):
    raw = state.set_path(sample, "facilities[1].drawn", -1.0)
    checked = state.check(raw)
    assert checked.case is None
    assert [p.field for p in checked.problems] == ["facilities[1].drawn"]
    assert state.problems_at(checked.problems, "facilities[1]") == list(checked.problems)
    assert state.problems_at(checked.problems, "facilities[10]") == []
    assert raw["memo"] == sample["memo"] and raw["facilities"][0] == sample["facilities"][0]
    assert sample["facilities"][1]["drawn"] == 22_000_000.0  # set_path copies, never mutates


def test_autosave_is_atomic_and_restores_raw_and_valid(tmp_path, sample):
    case_id = state.new_case_id()
    raw = state.set_path(sample, "pd.horizon_years", -3)
    path = state.autosave(tmp_path, case_id, raw=raw, valid=sample, extra={"whatif": {"pd.horizon_years": 2}})
    assert path.parent == tmp_path / "cases" and path.name == f"{case_id}.json"
    assert [p.name for p in path.parent.iterdir()] == [path.name]  # no temp file left behind
    back = state.restore(tmp_path, case_id)
    assert back.raw["pd"]["horizon_years"] == -3 and back.valid == sample
    assert back.extra == {"whatif": {"pd.horizon_years": 2}}


def test_a_failed_write_leaves_the_previous_file_whole(tmp_path, sample, monkeypatch):
    case_id = state.new_case_id()
    state.autosave(tmp_path, case_id, raw=sample, valid=sample)

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", broken_replace)
    with pytest.raises(OSError):
        state.autosave(tmp_path, case_id, raw={"changed": True}, valid=None)
    monkeypatch.undo()
    assert state.restore(tmp_path, case_id).raw == state.plain(sample)
    assert len(list((tmp_path / "cases").iterdir())) == 1


@pytest.mark.parametrize("bad_id", ["../../etc/passwd", "", "ABCDEF" * 6, "0" * 31, None, 12, "0" * 32 + "/x"])
def test_only_generated_ids_reach_the_file_system(tmp_path, bad_id):
    assert not state.is_case_id(bad_id)
    assert state.restore(tmp_path, bad_id) is None
    if isinstance(bad_id, str):
        with pytest.raises(ValueError, match="case_id"):
            state.autosave_path(tmp_path, bad_id)


def test_each_session_gets_its_own_id():
    ids = {state.new_case_id() for _ in range(200)}
    assert len(ids) == 200 and all(state.is_case_id(i) for i in ids)


def test_corrupt_or_foreign_autosave_is_ignored(tmp_path):
    case_id = state.new_case_id()
    path = state.autosave_path(tmp_path, case_id)
    path.parent.mkdir(parents=True)
    path.write_text("{not json")
    assert state.restore(tmp_path, case_id) is None
    path.write_text(json.dumps({"format": "something else", "raw": {}}))
    assert state.restore(tmp_path, case_id) is None


def test_plain_turns_numpy_and_nan_into_json_values():
    out = state.plain({"a": np.float64(1.5), "b": np.int64(3), "c": float("nan"), "d": [np.bool_(True)], "e": math.inf})
    assert out == {"a": 1.5, "b": 3, "c": None, "d": [True], "e": None}
    json.dumps(out, allow_nan=False)


def test_broken_uploads_raise_case_errors_not_exceptions():
    with pytest.raises(CaseError):
        state.case_dict_from_upload(b"\xff\xfe\x00", "case.yaml")
    with pytest.raises(CaseError):
        state.case_dict_from_upload(b"borrower: {", "case.yaml")
    with pytest.raises(CaseError):
        state.case_dict_from_upload(b"{}", "case.exe")
    with pytest.raises(CaseError):
        state.statements_from_upload(b"", "s.csv")


@settings(max_examples=60, deadline=None)
@given(
    path=st.lists(st.sampled_from(["pd", "memo", "x", "capital", "y"]), min_size=1, max_size=4),
    value=st.one_of(st.floats(allow_nan=False, allow_infinity=False), st.text(max_size=20), st.none()),
)
def test_set_then_get_returns_the_value(path, value):
    dotted = ".".join(path)
    data = state.set_path({"pd": {"horizon_years": 1.0}}, dotted, value)
    assert state.get_path(data, dotted, default="missing") == (value if value is not None else "missing")
