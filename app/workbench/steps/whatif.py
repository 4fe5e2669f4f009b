"""Step 6: what-if controls on top of the case, its sensitivities, and named scenarios side by side.

The what-if settings are an overlay in the engine's scenario format (dotted path -> value, see
engine/scenarios.py) kept beside the case: they change nothing until saved as a named scenario,
and they are autosaved with the session. The engine applies and validates them
(``apply_overrides``) and computes everything shown (``analyse``); this page only lays out and
formats.
"""

from __future__ import annotations

import logging
from typing import Literal

import pandas as pd
import streamlit as st
from obligor_memo.app.present.formatting import millions, money, num, pct, pd_pct
from obligor_memo.app.workbench import entry
from obligor_memo.app.workbench import ui as _ui
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.scenarios import apply_overrides, headline_delta, headline_figures

log = logging.getLogger(__name__)

base_results = _ui.header(
    "What-if and scenarios",
    "Move an assumption and see every number move; save what you want to keep as a named scenario.",
)
ss = st.session_state
cur = _ui.currency()
if base_results is None:
    st.stop()
base_case = base_results.case
overlay: dict = dict(ss.whatif)
WHERE = "what-if"


# --------------------------------------------------------------------------- controls


def _set(paths: dict[str, object], key: str, unit: str, label: str) -> None:
    """Store one control (its text input's callback).

    ``paths`` are companion values that must travel with it (a recovery block the case lacks
    needs its std and upper as well as the mean). Text that is not a number is kept in the field
    with a message; the settings do not change.
    """
    ss = st.session_state
    settings = dict(ss.whatif)
    path = next(iter(paths))
    typed, errors = dict(ss.get("whatif_typed") or {}), dict(ss.get("whatif_errors") or {})
    try:
        value = entry.store(entry.parse(ss[key], unit), unit)
    except entry.EntryError as exc:
        typed[path], errors[path] = ss[key], f"{label}: {exc.reason}."
        ss.whatif_typed, ss.whatif_errors = typed, errors
        return
    typed.pop(path, None)
    errors.pop(path, None)
    ss.whatif_typed, ss.whatif_errors = typed, errors
    if value is None:
        for p in paths:
            settings.pop(p, None)
    else:
        settings.update({p: v for p, v in paths.items() if v is not None})
        settings[path] = value
    _ui.set_whatif(settings)


def _reset() -> None:
    """Clear every what-if setting; the controls restart from the case (the button's callback)."""
    st.session_state.wgen = st.session_state.get("wgen", 0) + 1
    st.session_state.whatif_typed, st.session_state.whatif_errors = {}, {}
    _ui.set_whatif({})


def control(
    label: str,
    path: str,
    base_value,
    *,
    where,
    unit: str = entry.PERCENT,
    placeholder: str | None = None,
    help: str | None = None,
    companions: dict[str, object] | None = None,
) -> None:
    """A what-if control: a text input for the setting at ``path``, typed as people write numbers.

    It shows the overlay's setting where there is one, else ``base_value``; text that did not
    read as a number stays in the field, its message below.

    Parameters
    ----------
    label : str
        The control's label.
    path : str
        The setting's path in the engine's scenario format (``pd.asset_growth``,
        ``facilities.<id>.ccf``).
    base_value : Any
        The value the case gives (None where it leaves the setting to the engine's estimate).
    where : Any
        The Streamlit column the control goes in.
    unit : str, optional
        One of ``entry.UNITS``: the unit the setting is typed in.
    placeholder : str | None, optional
        The text an empty control shows.
    help : str | None, optional
        The tooltip; None: what the unit allows.
    companions : dict[str, object] | None, optional
        Settings stored with this one (path -> value), such as the std and upper of a recovery
        block the case lacks; None for none.
    """
    key = f"w{ss.get('wgen', 0)}:{ss.gen}:{path}"
    value = overlay.get(path, base_value)
    typed = (ss.get("whatif_typed") or {}).get(path)
    where.text_input(
        label,
        value=typed if typed is not None else entry.show(value, unit),
        key=key,
        placeholder=placeholder,
        help=help or entry.allowed_form(unit).capitalize() + ".",
        on_change=_set,
        args=({path: None, **(companions or {})}, key, unit, label),
    )
    error = (ss.get("whatif_errors") or {}).get(path)
    if error:
        where.error(error, icon=":material/error:")


p = base_results.pd
given = base_case.pd
market = p.method == "market"
st.subheader("What-if controls")
st.caption(
    "Each control starts at the value in use in the case. Nothing changes in the case until you "
    "save the settings as a named scenario."
)
c = st.columns(4)
control(
    "Short-term share of the default point (%)",
    "pd.default_point.short_term_share",
    p.short_term_share,
    where=c[0],
    help="Default point = short-term share x short-term liabilities + long-term share x long-term "
    "liabilities; 100 % is common practice.",
)
control(
    "Long-term share of the default point (%)",
    "pd.default_point.long_term_share",
    p.long_term_share,
    where=c[1],
    help="50 % is common practice.",
)
if market:
    control(
        "Equity volatility (% a year)",
        "market.equity_volatility",
        base_case.market.equity_volatility,
        where=c[2],
        help="The market method solves asset value and volatility from the equity market.",
    )
else:
    control(
        "Asset volatility (% a year)",
        "pd.asset_volatility",
        given.asset_volatility,
        where=c[2],
        placeholder=f"estimate {pct(p.asset_volatility)}",
        help=f"Empty: the estimate from the statements ({pct(p.asset_volatility)}).",
    )
control(
    "Asset growth (% a year)",
    "pd.asset_growth",
    given.asset_growth,
    where=c[3],
    placeholder=f"estimate {pct(p.asset_growth)}" if p.asset_growth is not None else "estimate",
    help="Empty: the slope of the log-linear asset trend.",
)
c = st.columns(4)
control("Horizon (years)", "pd.horizon_years", p.horizon_years, where=c[0], unit=entry.YEARS)
ids = [f.id for f in base_results.facilities]
chosen = c[1].selectbox("Facility for CCF and recovery", ids, key="whatif_facility")
fac = next(f for f in base_results.facilities if f.id == chosen)
has_block = next(f for f in base_case.facilities if f.id == chosen).recovery is not None
control(
    f"CCF of {chosen} (%)",
    f"facilities.{chosen}.ccf",
    fac.ccf,
    where=c[2],
)
control(
    f"Recovery mean of {chosen} (%)",
    f"facilities.{chosen}.recovery.mean",
    fac.recovery_mean,
    where=c[3],
    companions=None
    if has_block
    else {
        f"facilities.{chosen}.recovery.std": fac.recovery_std,
        f"facilities.{chosen}.recovery.upper": fac.recovery_upper,
    },
    help=f"Mean of the unsecured recovery law (std {pct(fac.recovery_std, 1)}, upper {pct(fac.recovery_upper, 0)}).",
)
st.button("Clear the what-if settings", on_click=_reset, icon=":material/undo:", disabled=not overlay)
if overlay:
    st.caption("What-if settings: " + "; ".join(entry.override_words(k, v) for k, v in overlay.items()))


# --------------------------------------------------------------------------- what-if results

whatif = None
try:
    # The saved scenarios are left out of the what-if case: they are compared with the base below.
    trial = apply_overrides(base_case, overlay, where=WHERE).model_copy(update={"scenarios": []})
    whatif = _ui.analysed(trial)
except CaseError as exc:
    for problem in exc.problems:
        st.error(_ui.problem_text(problem) + " The figures below are the base case's.", icon=":material/error:")
except Exception as exc:  # an engine bug must not reach the screen as a traceback
    log.exception("the what-if analysis failed")
    st.error(f"The engine could not compute this what-if (internal error: {type(exc).__name__}: {exc}).")

base_head = headline_figures(base_results)
head = headline_figures(whatif) if whatif is not None else base_head
delta = headline_delta(head, base_head)


def _amount(value: float | None) -> str:
    """Millions with two decimals, but whole units below a million; "n/a" for no figure.

    A small EL or a capital of zero must not read as "EUR 0.00m".
    """
    if value is None:
        return "n/a"
    return millions(value, cur) if abs(value) >= 1e6 else money(value, cur)


def _signed_money(value: float | None) -> str | None:
    """A change of an amount with its sign; None for no change (or no figure)."""
    if value is None or value == 0:
        return None
    return ("+" if value > 0 else "-") + _amount(abs(value))


def _signed_rate(value: float | None, decimals: int = 2) -> str | None:
    """A change of a rate in percentage points, signed ("+0.25 pp"); None for no change (or no figure)."""
    if value is None or value == 0:
        return None
    return f"{value * 100:+.{decimals}f} pp"


st.subheader("Before and after" if overlay else "The case as it stands (move a control to compare)")
m = [*st.columns(3), *st.columns(3)]  # two rows: six figures in one row are cut on a laptop screen
figures: tuple[tuple[str, str, str, str | None, Literal["normal", "inverse", "off"]], ...] = (
    ("PD in force", pd_pct(head.pd), pd_pct(base_head.pd), _signed_rate(delta.pd, 4), "inverse"),
    (
        "Expected loss",
        _amount(head.expected_loss),
        _amount(base_head.expected_loss),
        _signed_money(delta.expected_loss),
        "inverse",
    ),
    (
        "Unexpected loss",
        _amount(head.unexpected_loss),
        _amount(base_head.unexpected_loss),
        _signed_money(delta.unexpected_loss),
        "inverse",
    ),
    ("RWA", _amount(head.rwa), _amount(base_head.rwa), _signed_money(delta.rwa), "inverse"),
    (
        "Economic capital",
        _amount(head.economic_capital),
        _amount(base_head.economic_capital),
        _signed_money(delta.economic_capital),
        "inverse",
    ),
    ("RAROC", pct(head.raroc, 1), pct(base_head.raroc, 1), _signed_rate(delta.raroc, 1), "normal"),
)
for where, (label, after, before, change, colour) in zip(m, figures):
    where.metric(label, after, delta=change, delta_color=colour, help=f"Base case: {before}")
    if overlay:
        where.caption(f"base case {before}")
st.caption(
    f"Grade {base_head.grade or 'n/a'} \u2192 {head.grade or 'n/a'}; distance to default "
    f"{num(base_head.distance_to_default, 2)} \u2192 {num(head.distance_to_default, 2)}; default point "
    f"{millions(base_head.default_point, cur)} \u2192 {millions(head.default_point, cur)}; EAD "
    f"{millions(base_head.ead, cur)} \u2192 {millions(head.ead, cur)}."
)

shown = whatif if whatif is not None else _ui.analysed(base_case.model_copy(update={"scenarios": []}))
st.subheader("Sensitivities of the what-if case" if overlay and whatif is not None else "Sensitivities of the case")
measure = st.radio(
    "Tornado measure",
    ("el", "pd"),
    horizontal=True,
    key="whatif_measure",
    format_func={"el": "Expected loss", "pd": "PD in force"}.get,
)
# One under the other: side by side, a laptop screen crushes the tornado's long row labels
# onto its bars and cuts the heat map's axis titles.
_ui.chart(st, _ui.figure("sensitivity_figure", shown, measure=measure), key="whatif_tornado")
_ui.chart(st, _ui.figure("pd_grid_figure", shown), key="whatif_pd_grid")
notes = list(shown.sensitivity.notes) + [
    n for row in shown.sensitivity.rows if row.note for n in [f"{row.label}: {row.note}"]
]
if notes:
    with st.expander(f"Notes on the sensitivities ({len(notes)})"):
        for note in notes:
            st.markdown(f"- {note}")


# --------------------------------------------------------------------------- named scenarios

st.divider()
st.subheader("Save the what-if settings as a named scenario")


def _save_scenario(name_key: str, text_key: str, case) -> None:
    """Save the what-if settings as a named scenario, if its name is new and the engine accepts them."""
    name = (st.session_state.get(name_key) or "").strip()
    settings = dict(st.session_state.whatif)
    existing = [str(s.get("name", "")) for s in (st.session_state.raw.get("scenarios") or [])]
    if not name:
        ss.scenario_message = ("error", "**Name**: got an empty name; allowed: 1 to 60 characters.")
        return
    if name.casefold() in (e.casefold() for e in existing):
        ss.scenario_message = (
            "error",
            f"**Name**: got {name!r}, which a saved scenario already has; "
            "allowed: a name not yet used (saved: " + ", ".join(existing) + ").",
        )
        return
    try:  # the engine holds the settings to the case's rules before anything is written
        apply_overrides(case, settings, where=f"scenario '{name}'")
    except CaseError as exc:
        ss.scenario_message = ("error", " ".join(_ui.problem_text(x) for x in exc.problems))
        return
    scenarios = list(st.session_state.raw.get("scenarios") or [])
    scenarios.append({"name": name, "description": st.session_state.get(text_key) or "", "set": settings})
    _ui.commit(_ui.state.set_path(st.session_state.raw, "scenarios", scenarios))
    ss.scenario_message = ("success", f"Saved scenario {name!r} into the case.")


def _delete_scenario(key: str) -> None:
    """Delete the saved scenario chosen in ``key`` from the case (the button's callback)."""
    name = st.session_state.get(key)
    scenarios = [s for s in (st.session_state.raw.get("scenarios") or []) if s.get("name") != name]
    _ui.commit(_ui.state.set_path(st.session_state.raw, "scenarios", scenarios))
    ss.scenario_message = ("success", f"Deleted scenario {name!r}.")


save_row = st.columns([1, 2, 1])
name_key, text_key = f"scn_name{ss.gen}", f"scn_text{ss.gen}"
save_row[0].text_input("Name", key=name_key, max_chars=60)
save_row[1].text_input("Description", key=text_key)
save_row[2].button(
    "Save scenario",
    on_click=_save_scenario,
    args=(name_key, text_key, base_case),
    disabled=not overlay,
    help="Saves the current what-if settings into the case." if overlay else "Move a control first.",
)
if ss.get("scenario_message"):
    kind, text = ss.scenario_message
    (st.error if kind == "error" else st.success)(text)
    ss.scenario_message = None
_ui.show_problems("scenarios")

st.subheader("Scenarios side by side")
try:
    compared = _ui.analysed(base_case).scenarios
except CaseError as exc:
    compared = ()
    st.error("A saved scenario does not apply to this case: " + " ".join(_ui.problem_text(x) for x in exc.problems))


def _row(name: str, f, d) -> dict[str, str]:
    """One row of the scenarios table: the figures ``f`` and their changes ``d`` from the base, formatted."""
    return {
        "Scenario": name,
        "PD in force": pd_pct(f.pd),
        "\u0394 PD": _signed_rate(d.pd, 4) or "",
        "Grade": f.grade or "n/a",
        "Expected loss": _amount(f.expected_loss),
        "\u0394 EL": _signed_money(d.expected_loss) or "",
        "Unexpected loss": _amount(f.unexpected_loss),
        "RWA": _amount(f.rwa),
        "\u0394 RWA": _signed_money(d.rwa) or "",
        "Economic capital": _amount(f.economic_capital),
        "\u0394 EC": _signed_money(d.economic_capital) or "",
        "RAROC": pct(f.raroc, 1),
        "\u0394 RAROC": _signed_rate(d.raroc, 1) or "",
    }


rows = [_row("Base case", base_head, headline_delta(base_head, base_head))]
if overlay and whatif is not None:
    rows.append(_row("What-if (unsaved)", head, delta))
rows += [_row(s.name, s.figures, s.delta) for s in compared]
st.dataframe(pd.DataFrame(rows).set_index("Scenario"), width="stretch")
if compared:
    _ui.chart(st, _ui.figure("scenarios_figure", _ui.analysed(base_case)), key="scenarios")
    for s in compared:
        settings = "; ".join(entry.override_words(k, v) for k, v in s.overrides)
        st.caption(f"**{s.name}**: {s.description or '(no description)'} ({settings})")
    delete_row = st.columns([2, 1, 1])
    del_key = f"scn_delete{ss.gen}"
    delete_row[0].selectbox("Scenario to delete", [s.name for s in compared], key=del_key)
    delete_row[1].button("Delete scenario", on_click=_delete_scenario, args=(del_key,), icon=":material/delete:")
else:
    st.caption("No saved scenarios yet.")
