"""Streamlit plumbing shared by the workbench pages: session state, fields, messages, results.

Pages stay thin: they lay out fields bound to case paths and show what the engine returns,
formatted with app.formatting. Every edit goes through :func:`commit`, which validates, keeps the
raw dict even when it does not validate, evaluates the last valid case and autosaves.
"""

from __future__ import annotations

import json
import logging
from collections.abc import Callable
from typing import Any

import streamlit as st
from obligor_memo.app.present.formatting import num
from obligor_memo.app.workbench import state
from obligor_memo.engine.errors import CaseError, Problem, show_value

log = logging.getLogger(__name__)

CAUTION = (
    "Model estimate for a qualified credit officer, not a credit decision. The "
    "institution's approved models, credit policy and local regulation prevail over "
    "anything shown here."
)


# --------------------------------------------------------------------------- evaluation


@st.cache_resource(max_entries=64, show_spinner=False)
def _evaluate_canonical(canonical: str) -> Any:
    # Keyed on the canonical JSON of a validated case; Results is frozen, so one shared object
    # is safe and nothing is pickled.
    from obligor_memo.engine.evaluate import evaluate

    case = state.check(json.loads(canonical)).case
    if case is None:
        raise CaseError.single("case", "an invalid case", "a case that validates")
    return evaluate(case)


def evaluate_dict(data: dict[str, Any]) -> tuple[Any | None, tuple[Problem, ...], str | None]:
    """(results, problems, internal error text) for a case dict; never raises."""
    checked = state.check(data)
    if checked.case is None:
        return None, checked.problems, None
    canonical = json.dumps(state.plain(data), sort_keys=True, separators=(",", ":"))
    try:
        return _evaluate_canonical(canonical), (), None
    except CaseError as exc:
        return None, exc.problems, None
    except Exception as exc:  # an engine bug must not reach the screen as a traceback
        log.exception("evaluation failed")
        return None, (), f"{type(exc).__name__}: {exc}"


@st.cache_resource(max_entries=32, show_spinner=False)
def _analyse_cached(key: str, _case: Any) -> Any:
    # ``key`` is the case's fingerprint (SHA-256 of its canonical JSON): the case itself is
    # not hashed by Streamlit, and Results is frozen, so sharing one object is safe.
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.evaluate import evaluate

    return analyse(_case, evaluate(_case))


def analysed(case: Any) -> Any:
    """engine.analysis.analyse of a validated case (sensitivity, PD grid, scenarios), cached by
    the case's fingerprint. Raises CaseError when a saved scenario does not validate."""
    from obligor_memo.engine.evaluate import fingerprint

    return _analyse_cached(fingerprint(case), case)


# --------------------------------------------------------------------------- session


def ensure_session() -> None:
    """Give this browser session its case: restored from disk by the URL's id, else the sample."""
    ss = st.session_state
    if "case_id" in ss:
        return
    workdir = state.default_workdir()
    wanted = st.query_params.get("case")
    restored = state.restore(workdir, wanted) if state.is_case_id(wanted) else None
    if restored is not None:
        ss.case_id, ss.raw, ss.valid = wanted, restored.raw, restored.valid or state.sample_case_dict()
        ss.whatif = dict(restored.extra.get("whatif", {}))
        ss.restored_at = restored.saved_at
    else:
        ss.case_id = state.new_case_id()
        ss.raw = state.sample_case_dict()
        ss.valid = ss.raw
        ss.whatif = {}
        ss.restored_at = None
    ss.workdir = str(workdir)
    ss.gen = 0
    ss.notice = None
    st.query_params["case"] = ss.case_id
    _revalidate()


def _revalidate() -> None:
    ss = st.session_state
    results, problems, internal = evaluate_dict(ss.raw)
    ss.problems = problems
    ss.internal = internal
    if results is not None:
        ss.valid = ss.raw
    _save()


def _save() -> None:
    ss = st.session_state
    try:
        ss.saved_to = str(
            state.autosave(state.Path(ss.workdir), ss.case_id, raw=ss.raw, valid=ss.valid, extra={"whatif": ss.whatif})
        )
        ss.save_error = None
    except OSError as exc:
        ss.save_error = f"Autosave failed ({exc.strerror or exc}); download the case file to keep it."


def commit(raw: dict[str, Any]) -> None:
    st.session_state.raw = raw
    _revalidate()


def replace_case(raw: dict[str, Any], notice: str) -> None:
    """Load a whole new case (sample, file): widgets restart from it."""
    ss = st.session_state
    ss.gen += 1
    ss.whatif = {}
    ss.notice = notice
    commit(raw)


def set_whatif(settings: dict[str, Any]) -> None:
    st.session_state.whatif = settings
    _save()


def results() -> Any:
    """Results of the last valid case (the page keeps working while a field is wrong)."""
    found, _, internal = evaluate_dict(st.session_state.valid)
    if internal:
        st.session_state.internal = internal
    return found


def currency() -> str:
    return state.get_path(st.session_state.valid, "borrower.currency", "")


# --------------------------------------------------------------------------- messages


def problem_text(p: Problem) -> str:
    return f"**{p.field}**: got {show_value(p.value)}; allowed: {p.allowed}."


def show_problems(path: str, where: Any = None) -> list[Problem]:
    found = state.problems_at(st.session_state.problems, path)
    for p in found:
        (where or st).error(problem_text(p), icon=":material/error:")
    return found


def header(title: str, lead: str) -> Any:
    """Page title, the case's standing and the model caution; returns the results in force."""
    ss = st.session_state
    st.title(title)
    st.caption(lead)
    if ss.get("notice"):
        st.success(ss.notice)
        ss.notice = None
    if ss.get("internal"):
        st.error(
            "The engine could not compute this case (an internal error, not your input): "
            f"{ss.internal}. The last results are shown."
        )
    if ss.problems:
        st.warning(
            f"The case has {len(ss.problems)} problem(s); results below are from the last "
            "valid case. Each message sits beside its field.",
            icon=":material/warning:",
        )
    st.info(CAUTION, icon=":material/gavel:")
    return results()


def metric(where: Any, label: str, value: str, help: str | None = None) -> None:
    where.metric(label, value, help=help)


# --------------------------------------------------------------------------- fields


def _key(path: str) -> str:
    return f"f{st.session_state.gen}:{path}"


def _store(path: str, key: str, convert: Callable[[Any], Any] | None = None) -> None:
    value = st.session_state[key]
    if convert is not None:
        value = convert(value)
    commit(state.set_path(st.session_state.raw, path, value))


def number_field(
    label: str,
    path: str,
    *,
    where: Any = None,
    step: float | None = None,
    fmt: str = "%.4f",
    optional: bool = False,
    integer: bool = False,
    help: str | None = None,
    placeholder: str | None = None,
) -> None:
    """A number bound to ``path``; empty allowed when ``optional`` (null: the engine estimates)."""
    where = where or st
    current = state.get_path(st.session_state.raw, path)
    if current is not None and not isinstance(current, (int, float)):
        current = None
    if current is not None:
        current = int(current) if integer else float(current)
    elif not optional:
        current = 0 if integer else 0.0
    key = _key(path)
    where.number_input(
        label,
        value=current,
        step=step if step else (1 if integer else None),
        format="%d" if integer else fmt,
        key=key,
        help=help,
        placeholder=placeholder,
        on_change=_store,
        args=(path, key),
    )
    show_problems(path, where)


def select_field(
    label: str,
    path: str,
    options: list[Any],
    *,
    where: Any = None,
    labels: dict[Any, str] | None = None,
    help: str | None = None,
) -> None:
    where = where or st
    current = state.get_path(st.session_state.raw, path)
    index = options.index(current) if current in options else 0
    key = _key(path)
    where.selectbox(
        label,
        options,
        index=index,
        key=key,
        help=help,
        format_func=(lambda o: labels.get(o, str(o))) if labels else str,
        on_change=_store,
        args=(path, key),
    )
    show_problems(path, where)


def text_field(
    label: str, path: str, *, where: Any = None, area: bool = False, help: str | None = None, height: int | None = None
) -> None:
    where = where or st
    current = state.get_path(st.session_state.raw, path) or ""
    key = _key(path)
    if area:
        where.text_area(
            label, value=str(current), key=key, help=help, height=height, on_change=_store, args=(path, key)
        )
    else:
        where.text_input(label, value=str(current), key=key, help=help, on_change=_store, args=(path, key))
    show_problems(path, where)


def toggle_field(label: str, path: str, *, where: Any = None, help: str | None = None) -> None:
    where = where or st
    key = _key(path)
    where.checkbox(
        label,
        value=bool(state.get_path(st.session_state.raw, path, False)),
        key=key,
        help=help,
        on_change=_store,
        args=(path, key),
    )
    show_problems(path, where)


def rows_of(items: Any) -> list[dict[str, Any]]:
    """Engine result records (dataclasses or mappings) as table rows, numbers formatted."""
    from dataclasses import asdict, is_dataclass

    if is_dataclass(items) or isinstance(items, dict):
        items = [items]
    rows = []
    for item in items:
        data = asdict(item) if is_dataclass(item) else dict(item)
        rows.append(
            {
                k.replace("_", " "): (
                    num(v, 4) if isinstance(v, float) else v if isinstance(v, (str, int, bool)) or v is None else str(v)
                )
                for k, v in data.items()
            }
        )
    return rows


def chart(where: Any, figure: Any, key: str) -> None:
    """A figure exactly as the memo prints it (our layout, not the Streamlit theme)."""
    where.plotly_chart(figure, key=key, theme=None, config={"displaylogo": False})
