"""Streamlit plumbing shared by the workbench pages: session state, fields, messages, results.

Pages stay thin: they lay out fields bound to case paths and show what the engine returns,
formatted with app.present.formatting. Every edit goes through :func:`commit`, which validates, keeps the
raw dict even when it does not validate, evaluates the last valid case and autosaves.
"""

from __future__ import annotations

import hashlib
import json
import logging
from collections.abc import Callable
from pathlib import Path
from typing import Any

import streamlit as st
from obligor_memo.app.present.formatting import millions, num, pct, pd_pct
from obligor_memo.app.workbench import entry, grids, print_ahead, state
from obligor_memo.engine.errors import CaseError, Problem

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
    """(results, problems, internal error text) for a case dict; never raises.

    Parameters
    ----------
    data : dict[str, Any]
        A case dict (the case as typed, or the last valid one).

    Returns
    -------
    tuple[Any | None, tuple[Problem, ...], str | None]
        The evaluated case (``engine.evaluate.Results``, cached and shared) or None; the
        problems when the case does not validate or its evaluation refuses it; the engine's
        error text when the evaluation failed for another reason, else None.
    """
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


ANALYSES = print_ahead.SharedValues(size=32)
"""The analysed cases of the process, by fingerprint: shared by every session and by the print
worker (whichever asks first computes; Results is frozen, so sharing one object is safe)."""


def _analyse(case: Any) -> Any:
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.evaluate import evaluate

    return analyse(case, evaluate(case))


def analysed(case: Any) -> Any:
    """engine.analysis.analyse of a validated case (sensitivity, PD grid, scenarios), cached.

    The cache (:data:`ANALYSES`) is keyed by the case's fingerprint and shared by every session
    and the print worker; a caller asking while another computes the same case waits for it.
    No Streamlit call is made, so the print worker may call it.

    Parameters
    ----------
    case : Any
        A validated case (``engine.case.Case``).

    Returns
    -------
    Any
        The results with the what-if layers filled in (frozen, shared by every session).

    Raises
    ------
    CaseError
        When a saved scenario does not validate.
    """
    from obligor_memo.engine.evaluate import fingerprint

    return ANALYSES.get(fingerprint(case), lambda: _analyse(case))


# --------------------------------------------------------------------------- session

UNDO_DEPTH = 30
STEPS_DIR = Path(__file__).resolve().parent / "steps"
PAGES = (
    ("borrower.py", entry.BORROWER, ":material/domain:"),
    ("asset_pd.py", entry.ASSET_PD, ":material/trending_up:"),
    ("exposure.py", entry.EXPOSURE, ":material/account_balance:"),
    ("recovery.py", entry.RECOVERY, ":material/shield:"),
    ("loss.py", entry.LOSS, ":material/functions:"),
    ("whatif.py", entry.WHATIF, ":material/tune:"),
    ("memo.py", entry.MEMO, ":material/description:"),
)
PAGE_FILES = {title: str(STEPS_DIR / name) for name, title, _ in PAGES}


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
        ss.revision = restored.revision
    else:
        ss.case_id = state.new_case_id()
        ss.raw = state.sample_case_dict()
        ss.valid = ss.raw
        ss.whatif = {}
        ss.restored_at = None
        ss.revision = 0
    ss.workdir = str(workdir)
    ss.gen = 0
    ss.notice = None
    ss.undo = []
    ss.conflict = None
    ss.entry_errors = {}
    st.query_params["case"] = ss.case_id
    _revalidate()


def _revalidate(save: bool = True) -> None:
    ss = st.session_state
    results, problems, internal = evaluate_dict(ss.raw)
    ss.problems = problems
    ss.internal = internal
    if results is not None:
        ss.valid = ss.raw
    if save:
        _save()


def _save(force: bool = False) -> None:
    ss = st.session_state
    try:
        saved = state.autosave_checked(
            state.Path(ss.workdir),
            ss.case_id,
            raw=ss.raw,
            valid=ss.valid,
            extra={"whatif": ss.whatif},
            expect=None if force else ss.get("revision", 0),
        )
    except state.Conflict as exc:
        ss.conflict = (exc.revision, exc.saved_at)
        return
    except OSError as exc:
        ss.save_error = f"Autosave failed ({exc.strerror or exc}); download the case file to keep it."
        return
    ss.saved_to, ss.revision, ss.save_error, ss.conflict = str(saved.path), saved.revision, None, None


def commit(raw: dict[str, Any]) -> None:
    """Make ``raw`` the case as typed, then validate, evaluate and autosave.

    The previous one goes on the undo list (when it differs; up to ``UNDO_DEPTH`` are kept).

    Parameters
    ----------
    raw : dict[str, Any]
        The new case as typed.
    """
    ss = st.session_state
    if raw != ss.raw:
        ss.undo = [*ss.get("undo", []), ss.raw][-UNDO_DEPTH:]
    ss.raw = raw
    _revalidate()


def replace_case(raw: dict[str, Any], notice: str) -> None:
    """Load a whole new case (sample, file): widgets restart from it (one undo brings the old one back).

    The what-if settings and the fields' typing errors are cleared.

    Parameters
    ----------
    raw : dict[str, Any]
        The new case.
    notice : str
        The message shown at the top of the next page run.
    """
    ss = st.session_state
    ss.gen += 1
    ss.whatif = {}
    ss.notice = notice
    ss.entry_errors = {}
    commit(raw)


def undo() -> None:
    """Bring back the case as it was before the last change (fields and grids restart from it)."""
    ss = st.session_state
    if not ss.get("undo"):
        return
    *rest, previous = ss.undo
    ss.undo = rest
    ss.raw = previous
    ss.gen += 1
    ss.entry_errors = {}
    ss.notice = "Undid the last change."
    _revalidate()


def reload_newer() -> None:
    """Conflict resolved by taking the version another tab saved (this tab's draft is dropped)."""
    ss = st.session_state
    restored = state.restore(state.Path(ss.workdir), ss.case_id)
    if restored is None:
        ss.conflict = None
        return
    ss.undo = [*ss.get("undo", []), ss.raw][-UNDO_DEPTH:]
    ss.raw, ss.valid = restored.raw, restored.valid or ss.valid
    ss.whatif = dict(restored.extra.get("whatif", {}))
    ss.revision, ss.conflict, ss.gen = restored.revision, None, ss.gen + 1
    ss.entry_errors = {}
    ss.notice = f"Loaded the version saved from the other tab (revision {restored.revision})."
    _revalidate(save=False)


def keep_mine() -> None:
    """Conflict resolved by saving this tab's version over the other one."""
    _save(force=True)
    st.session_state.notice = "Saved this tab's version over the other tab's."


def conflict_panel() -> None:
    """The save conflict, when there is one: its message and the choices it leaves.

    Load the other tab's version, keep this tab's, or download this tab's as a case file.
    """
    ss = st.session_state
    if not ss.get("conflict"):
        return
    revision, saved_at = ss.conflict
    st.error(
        f"This case was saved from another tab or window (revision {revision}, {saved_at}) after "
        f"this tab last saved (revision {ss.get('revision', 0)}). This tab's changes are kept here "
        "but not saved: choose which version to keep.",
        icon=":material/sync_problem:",
    )
    c1, c2, c3 = st.columns(3)
    c1.button("Load the other tab's version", on_click=reload_newer, icon=":material/refresh:", key="conflict_reload")
    c2.button("Keep this tab's version", on_click=keep_mine, icon=":material/save:", key="conflict_keep")
    c3.download_button(
        "Download this tab's version (YAML)",
        state.case_file_text(ss.raw, "yaml"),
        file_name="case_this_tab.yaml",
        mime="application/x-yaml",
        key="conflict_download",
    )


def set_whatif(settings: dict[str, Any]) -> None:
    """Make ``settings`` the session's what-if settings and autosave them with the case.

    Parameters
    ----------
    settings : dict[str, Any]
        Dotted path -> value, in the engine's scenario format.
    """
    st.session_state.whatif = settings
    _save()


def results() -> Any:
    """Results of the last valid case (the page keeps working while a field is wrong)."""
    found, _, internal = evaluate_dict(st.session_state.valid)
    if internal:
        st.session_state.internal = internal
    return found


def currency() -> str:
    """The last valid case's currency; empty when it names none."""
    return state.get_path(st.session_state.valid, "borrower.currency", "")


# --------------------------------------------------------------------------- messages


def problem_text(p: Problem) -> str:
    """A problem in the screen's words.

    The field's label (facility id, statement year), what was typed in the field's unit, and
    what is allowed.

    Parameters
    ----------
    p : Problem
        The problem, as the engine gives it.

    Returns
    -------
    str
        The message (:func:`.entry.message`, rows named from the case as typed).
    """
    return entry.message(p.field, p.value, p.allowed, st.session_state.get("raw"))


def show_problems(path: str, where: Any = None, *, exact: bool = False) -> list[Problem]:
    """Show the messages of the field at ``path`` (and of the fields below it).

    Text typed in the field that did not read as a number shows its own message instead of the
    engine's for that field. At most 12 problems are shown, then how many more there are.

    Parameters
    ----------
    path : str
        The field's case path.
    where : Any, optional
        Where the messages go (a Streamlit container or column); None: the page.
    exact : bool, optional
        Only the problems of ``path`` itself, none of those below it.

    Returns
    -------
    list[Problem]
        The problems found, beyond the 12 shown too (without those of ``path`` itself when its
        typed text's message was shown).
    """
    ss = st.session_state
    found = state.problems_at(ss.problems, path)
    if exact:
        found = [p for p in found if p.field == path]
    typed = (ss.get("entry_errors") or {}).get(path)
    if typed and isinstance(state.get_path(ss.raw, path), str):
        (where or st).error(typed, icon=":material/error:")
        found = [p for p in found if p.field != path]
    for p in found[:12]:
        (where or st).error(problem_text(p), icon=":material/error:")
    if len(found) > 12:
        (where or st).error(f"... and {len(found) - 12} more problem(s) here.", icon=":material/error:")
    return found


def _elsewhere(title: str) -> None:
    """Problems held by fields of other pages: where they are, with a link to go there."""
    ss = st.session_state
    others: dict[str, list[str]] = {}
    for p in ss.problems:
        page = entry.page_of(p.field) or title
        if page != title:
            others.setdefault(page, []).append(entry.where(p.field, ss.raw))
    for page, names in others.items():
        shown = ", ".join(dict.fromkeys(names[:4])) + (f" and {len(names) - 4} more" if len(names) > 4 else "")
        c1, c2 = st.columns([4, 1])
        c1.warning(f"On the page {page!r}: {shown}.", icon=":material/warning:")
        target = PAGE_FILES.get(page)
        if target:
            c2.page_link(target, label=f"Go to {page}", icon=":material/arrow_forward:")


def header(title: str, lead: str) -> Any:
    """Page title, the case's standing and the model caution; returns the results in force.

    Under the title and lead: a pending notice, the save conflict, an internal error, the
    count of problems and the problems held on other pages, then the caution.

    Parameters
    ----------
    title : str
        The page's title (one of ``entry.PAGE_TITLES``).
    lead : str
        The line under the title.

    Returns
    -------
    Any
        The results of the last valid case (:func:`results`), or None when there is none.
    """
    ss = st.session_state
    st.title(title)
    st.caption(lead)
    if ss.get("notice"):
        st.success(ss.notice)
        ss.notice = None
    conflict_panel()
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
        _elsewhere(title)
    st.info(CAUTION, icon=":material/gavel:")
    return results()


def metric(where: Any, label: str, value: str, help: str | None = None) -> None:
    """One metric: a label over its figure.

    Parameters
    ----------
    where : Any
        The Streamlit container or column it goes in.
    label : str
        The metric's label.
    value : str
        The figure, formatted.
    help : str | None, optional
        The tooltip; None for none.
    """
    where.metric(label, value, help=help)


def metric_rows(where: Any, items: list[tuple[str, str, str | None]], per_row: int = 3) -> None:
    """Metrics (label, value, help) laid out ``per_row`` to a row.

    So that none is squeezed until its figure is cut or runs into the next one.

    Parameters
    ----------
    where : Any
        The Streamlit container the rows go in.
    items : list[tuple[str, str, str | None]]
        (label, formatted figure, tooltip or None), in order.
    per_row : int, optional
        How many metrics a row holds.
    """
    for start in range(0, len(items), per_row):
        cells = where.columns(per_row)
        for cell, (label, value, tip) in zip(cells, items[start : start + per_row]):
            cell.metric(label, value, help=tip)


# --------------------------------------------------------------------------- fields


def _key(path: str) -> str:
    return f"f{st.session_state.gen}:{path}"


def _store(path: str, key: str, convert: Callable[[Any], Any] | None = None) -> None:
    value = st.session_state[key]
    if convert is not None:
        value = convert(value)
    commit(state.set_path(st.session_state.raw, path, value))


def _store_number(path: str, key: str, unit: str, label: str) -> None:
    """Store a typed number, read as people write it (the number field's callback).

    Text that is not a number is kept as typed (in the case as typed, never lost) with a
    message beside the field.
    """
    ss = st.session_state
    text = ss[key]
    errors = dict(ss.get("entry_errors") or {})
    try:
        value = entry.store(entry.parse(text, unit), unit)
    except entry.EntryError as exc:
        errors[path] = f"{label}: {exc.reason}."
        ss.entry_errors = errors
        commit(state.set_path(ss.raw, path, str(text)))
        return
    errors.pop(path, None)
    ss.entry_errors = errors
    commit(state.set_path(ss.raw, path, value))


def number_field(
    label: str,
    path: str,
    *,
    unit: str = entry.NUMBER,
    where: Any = None,
    optional: bool = False,
    help: str | None = None,
    placeholder: str | None = None,
    messages: Any = None,
) -> None:
    """A number bound to ``path``, typed as people write it.

    With ``unit`` percent, 2.75 means 2.75 %, stored as 0.0275. Empty is allowed when
    ``optional`` (null: the engine estimates).

    Parameters
    ----------
    label : str
        The field's label.
    path : str
        The case path the field edits.
    unit : str, optional
        One of ``entry.UNITS``: the unit the number is typed in.
    where : Any, optional
        The Streamlit container or column the field goes in; None: the page.
    optional : bool, optional
        The case field may be empty; the placeholder then says "not set" unless one is given.
    help : str | None, optional
        The tooltip; None: what the unit allows.
    placeholder : str | None, optional
        The text an empty field shows.
    messages : Any, optional
        Where its messages go when ``where`` is a narrow column (a container below the row);
        None: ``where``.
    """
    where = where or st
    current = state.get_path(st.session_state.raw, path)
    key = _key(path)
    if placeholder is None and optional:
        placeholder = "not set"
    if help is None:
        help = entry.allowed_form(unit).capitalize() + "."
    where.text_input(
        label,
        value=entry.show(current, unit),
        key=key,
        help=help,
        placeholder=placeholder,
        on_change=_store_number,
        args=(path, key, unit, label),
    )
    show_problems(path, messages or where)


def select_field(
    label: str,
    path: str,
    options: list[Any],
    *,
    where: Any = None,
    labels: dict[Any, str] | None = None,
    help: str | None = None,
) -> None:
    """A choice bound to ``path``, with its messages below it.

    Parameters
    ----------
    label : str
        The field's label.
    path : str
        The case path the field edits.
    options : list[Any]
        The values it may take, as stored; a value in the case that is not among them shows
        the first.
    where : Any, optional
        The Streamlit container or column the field goes in; None: the page.
    labels : dict[Any, str] | None, optional
        The words shown for each value; None (or a value not in it): the value as text.
    help : str | None, optional
        The tooltip; None for none.
    """
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
    """A text bound to ``path``, with its messages below it.

    Parameters
    ----------
    label : str
        The field's label.
    path : str
        The case path the field edits.
    where : Any, optional
        The Streamlit container or column the field goes in; None: the page.
    area : bool, optional
        A text area of several lines instead of a one-line input.
    help : str | None, optional
        The tooltip; None for none.
    height : int | None, optional
        The text area's height [px]; None: Streamlit's default.
    """
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
    """A checkbox bound to ``path`` (empty reads as unticked), with its messages below it.

    Parameters
    ----------
    label : str
        The field's label.
    path : str
        The case path the field edits.
    where : Any, optional
        The Streamlit container or column the field goes in; None: the page.
    help : str | None, optional
        The tooltip; None for none.
    """
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
    """Engine result records (dataclasses or mappings) as table rows, numbers formatted.

    Parameters
    ----------
    items : Any
        One record or an iterable of them.

    Returns
    -------
    list[dict[str, Any]]
        A row per record: keys with spaces for underscores; floats to four decimals, text,
        integers, bools and None as they are, anything else as its ``str``.
    """
    from dataclasses import asdict, is_dataclass

    if is_dataclass(items) or isinstance(items, dict):
        items = [items]
    rows = []
    for item in items:
        data = asdict(item) if is_dataclass(item) and not isinstance(item, type) else dict(item)
        rows.append(
            {
                k.replace("_", " "): (
                    num(v, 4) if isinstance(v, float) else v if isinstance(v, (str, int, bool)) or v is None else str(v)
                )
                for k, v in data.items()
            }
        )
    return rows


@st.cache_resource(max_entries=256, show_spinner=False)
def _figure(
    name: str, fingerprint: str, layers: bool, arguments: str, _results: Any, _args: tuple, _kwargs: dict
) -> Any:
    # Keyed on the case's fingerprint (and whether the what-if layers are filled): the same
    # inputs always draw the same figure, so a rerun that did not move it does not rebuild it
    # (building a plotly figure costs more than the evaluation it shows). Never mutated.
    from obligor_memo.app import charts

    return getattr(charts, name)(_results, *_args, **_kwargs)


def figure(name: str, results: Any, *args: Any, **kwargs: Any) -> Any:
    """``app.charts.<name>(results, ...)``, built once per case and arguments.

    Parameters
    ----------
    name : str
        The figure function's name in :mod:`obligor_memo.app.charts`.
    results : Any
        The results to draw; their fingerprint (or, for a figure listed in ``charts.READS``,
        a digest of the values it reads) and whether the what-if layers are filled in key the
        cache, with the name and the arguments.
    *args : Any
        Further arguments of the figure function.
    **kwargs : Any
        Further keyword arguments of the figure function.

    Returns
    -------
    Any
        The plotly figure, shared by every session: not to be changed.
    """
    from obligor_memo.app.charts import READS

    arguments = json.dumps([args, kwargs], sort_keys=True, default=str)
    layers = getattr(results, "sensitivity", None) is not None
    return _figure(name, _drawn_key(results, READS.get(name)), layers, arguments, results, args, kwargs)


def _drawn_key(results: Any, reads: tuple[str, ...] | None) -> str:
    """The case's fingerprint, or a digest of only what the figure reads (``charts.READS``)."""
    from operator import attrgetter

    from obligor_memo.engine.results import plain_data

    if reads is None:
        return str(results.fingerprint)
    try:
        text = json.dumps(plain_data([attrgetter(path)(results) for path in reads]), sort_keys=True)
    except TypeError:  # a value with no plain form: the whole case keys the figure
        return str(results.fingerprint)
    return "reads:" + hashlib.sha256(text.encode("utf-8")).hexdigest()


def chart(where: Any, figure: Any, key: str) -> None:
    """A figure exactly as the memo prints it (our layout, not the Streamlit theme).

    Parameters
    ----------
    where : Any
        The Streamlit container or column it goes in.
    figure : Any
        The plotly figure.
    key : str
        The chart's widget key, unique on the page.
    """
    where.plotly_chart(figure, key=key, theme=None, config={"displaylogo": False})


# --------------------------------------------------------------------------- key figures


def key_figures(where: Any) -> None:
    """The figures a committee asks first, on every page, from the last valid case.

    PD in force, grade, total EAD, expected loss and RWA; then capital, RAROC and the hurdle
    with a pricing proposal, regulatory capital without one.

    Parameters
    ----------
    where : Any
        The Streamlit container they go in (the sidebar).
    """
    found = results()
    if found is None:
        where.caption("No valid case yet: the key figures appear once the case validates.")
        return
    cur = currency()
    t, p = found.total, found.pricing
    rows = [
        ("PD in force", pd_pct(found.pd.pd)),
        ("Grade", found.pd.grade or "n/a"),
        ("Total EAD", millions(t.ead, cur)),
        ("Expected loss", millions(t.expected_loss, cur)),
        ("RWA", millions(t.rwa, cur)),
    ]
    if p is not None:
        basis = {"regulatory": "regulatory", "economic": "economic"}.get(str(p.capital_basis), str(p.capital_basis))
        rows.append((f"Capital, {basis}", millions(p.capital, cur)))
        rows.append(("RAROC", pct(p.raroc, 1)))
        rows.append((f"Hurdle {pct(p.hurdle_rate, 0)}", "met" if p.meets_hurdle else "not met"))
    else:
        rows.append(("Regulatory capital", millions(t.regulatory_capital, cur)))
        rows.append(("RAROC", "no pricing proposal"))
    html = "".join(
        f'<div class="kf-row"><span class="kf-label">{label}</span><span class="kf-value">{value}</span></div>'
        for label, value in rows
    )
    stale = " (last valid case)" if st.session_state.get("problems") else ""
    where.markdown(
        f'<div class="key-figures" data-testid="key-figures"><div class="kf-title">Key figures{stale}</div>'
        f"{html}</div>",
        unsafe_allow_html=True,
    )


# --------------------------------------------------------------------------- data grids


def _grid_changed(
    path: str,
    key: str,
    columns: tuple[grids.Column, ...],
    defaults: dict[str, Any] | None,
    complete: Callable[[dict[str, Any]], dict[str, Any]] | None = None,
) -> None:
    ss = st.session_state
    records = state.get_path(ss.raw, path)
    records = records if isinstance(records, list) else []
    changed = grids.apply_grid_delta(records, ss[key], columns, defaults)
    if complete is not None:
        changed = [complete(r) for r in changed]
    if changed != records:
        commit(state.set_path(ss.raw, path, changed))


def grid(
    path: str,
    columns: tuple[grids.Column, ...],
    *,
    name: str,
    defaults: dict[str, Any] | None = None,
    height: int | None = None,
    complete: Callable[[dict[str, Any]], dict[str, Any]] | None = None,
) -> None:
    """A data grid whose source is the case itself, rebuilt from it on every run.

    Each change is applied to the case in the grid's callback (then validated and autosaved),
    so what the grid shows is always the case: a page switch, a refresh or a restart cannot
    bring back an older table. The grid's identity follows its data, so after a change it starts
    afresh from the case with nothing pending.

    Parameters
    ----------
    path : str
        The case path of the list of records the grid edits.
    columns : tuple[grids.Column, ...]
        The grid's columns, in order.
    name : str
        The grid's widget key (the session's generation is appended).
    defaults : dict[str, Any] | None, optional
        The values a new row starts from; None for none.
    height : int | None, optional
        The grid's height [px]; None: as its rows need.
    complete : Callable[[dict[str, Any]], dict[str, Any]] | None, optional
        Applied to every record after a change (such as ``grids.complete_covenant``); None
        for none.
    """
    ss = st.session_state
    records = state.get_path(ss.raw, path)
    records = records if isinstance(records, list) else []
    key = f"{name}{ss.gen}"
    st.data_editor(
        grids.grid_frame(records, columns),
        key=key,
        num_rows="dynamic",
        hide_index=True,
        height=height or "auto",
        column_config={c.name: c.config(currency()) for c in columns},
        on_change=_grid_changed,
        args=(path, key, columns, defaults, complete),
    )
