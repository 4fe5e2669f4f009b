"""Step 6: what-if controls on top of the case, sensitivities, and named scenarios side by side.

The what-if settings are an overlay (case path -> value) kept beside the case: they change
nothing until saved as a named scenario, and they are autosaved with the session.
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

from app import charts, state
from app.formatting import millions, num, pct
from app.pages import _ui
from engine.errors import CaseError

base_results = _ui.header("What-if and scenarios",
                          "Move an assumption and see every number move; save what you want to keep "
                          "as a named scenario.")
ss = st.session_state
cur = _ui.currency()
if base_results is None:
    st.stop()
valid = ss.valid
overlay: dict = dict(ss.whatif)


def _set(path: str, key: str) -> None:
    settings = dict(st.session_state.whatif)
    value = st.session_state[key]
    if value is None:
        settings.pop(path, None)
    else:
        settings[path] = value
    _ui.set_whatif(settings)


def _reset() -> None:
    st.session_state.wgen = st.session_state.get("wgen", 0) + 1
    _ui.set_whatif({})


def control(label: str, path: str, base_value, *, where, step: float, fmt: str, optional: bool = False,
            placeholder: str | None = None) -> None:
    key = f"w{ss.get('wgen', 0)}:{ss.gen}:{path}"
    value = overlay.get(path, base_value)
    where.number_input(label, value=None if value is None else float(value), step=step, format=fmt, key=key,
                       placeholder=placeholder, on_change=_set, args=(path, key))


st.subheader("What-if controls")
p = base_results.pd
c = st.columns(4)
control("Short-term share of the default point", "pd.default_point.short_term_share", p.short_term_share,
        where=c[0], step=0.05, fmt="%.2f")
control("Long-term share of the default point", "pd.default_point.long_term_share", p.long_term_share,
        where=c[1], step=0.05, fmt="%.2f")
control("Asset volatility [1/sqrt(year)]", "pd.asset_volatility", state.get_path(valid, "pd.asset_volatility"),
        where=c[2], step=0.01, fmt="%.4f", placeholder=f"estimate {pct(p.asset_volatility)}")
control("Asset growth [1/year]", "pd.asset_growth", state.get_path(valid, "pd.asset_growth"),
        where=c[3], step=0.01, fmt="%.4f", placeholder=f"estimate {pct(p.asset_growth)}")
c = st.columns(4)
control("Horizon [years]", "pd.horizon_years", p.horizon_years, where=c[0], step=0.5, fmt="%.2f")
ids = [f.id for f in base_results.facilities]
chosen = c[1].selectbox("Facility for CCF and recovery", ids, key="whatif_facility")
fac = next(f for f in base_results.facilities if f.id == chosen)
control(f"CCF of {chosen} [fraction]", f"facilities.{chosen}.ccf", fac.ccf, where=c[2], step=0.05, fmt="%.2f")
control(f"Recovery mean of {chosen} [fraction]", f"facilities.{chosen}.recovery.mean", fac.recovery_mean,
        where=c[3], step=0.05, fmt="%.3f")
st.button("Clear the what-if settings", on_click=_reset, icon=":material/undo:")

problems: tuple = ()
try:
    trial = state.apply_settings(valid, overlay)
    whatif_results, problems, internal = _ui.evaluate_dict(trial)
except CaseError as exc:
    whatif_results, problems, internal = None, exc.problems, None
for problem in problems:
    st.error(_ui.problem_text(problem) + " The base case is unchanged.", icon=":material/error:")
if internal:
    st.error(f"The engine could not compute this what-if (internal error: {internal}).")
shown = whatif_results or base_results


def _measures(r) -> dict[str, str]:
    out = {"PD in force": _ui.pd_text(r.pd.pd), "Grade": r.pd.grade or "n/a",
           "Distance to default": num(r.pd.distance_to_default, 2),
           "Default point": millions(r.pd.default_point, cur), "EAD": millions(r.total.ead, cur),
           "Expected loss": millions(r.total.expected_loss, cur),
           "Unexpected loss": millions(r.total.unexpected_loss, cur),
           "Economic capital": millions(r.total.economic_capital, cur), "RWA": millions(r.total.rwa, cur)}
    out["RAROC"] = pct(r.pricing.raroc, 1) if r.pricing else "n/a"
    out["Minimum spread"] = pct(r.pricing.minimum_spread, 3) if r.pricing else "n/a"
    return out


m = st.columns(4)
m[0].metric("What-if PD", _ui.pd_text(shown.pd.pd), help=f"Base {_ui.pd_text(p.pd)}")
m[1].metric("What-if EL", millions(shown.total.expected_loss, cur),
            help=f"Base {millions(base_results.total.expected_loss, cur)}")
m[2].metric("What-if economic capital", millions(shown.total.economic_capital, cur))
m[3].metric("What-if RAROC", pct(shown.pricing.raroc, 1) if shown.pricing else "n/a")
left, right = st.columns(2)
with left:
    _ui.chart(st, charts.asset_trend_figure(shown), key="whatif_trend")
with right:
    _ui.chart(st, charts.loss_distribution_figure(shown), key="whatif_loss")

if getattr(base_results, "sensitivity", None) is not None:
    st.subheader("Sensitivities of the case")
    left, right = st.columns(2)
    for where, builder, key in ((left, charts.sensitivity_figure, "tornado"),
                                (right, charts.pd_grid_figure, "pd_grid")):
        try:
            _ui.chart(where, builder(base_results), key=key)
        except ValueError as exc:
            where.caption(str(exc))

st.divider()
st.subheader("Save as a named scenario")


def _save_scenario(name_key: str, text_key: str) -> None:
    name = (st.session_state.get(name_key) or "").strip()
    raw = st.session_state.raw
    scenarios = list(raw.get("scenarios") or [])
    scenarios.append({"name": name, "description": st.session_state.get(text_key) or "",
                      "set": dict(st.session_state.whatif)})
    _ui.commit(state.set_path(raw, "scenarios", scenarios))


c = st.columns([1, 2, 1])
name_key, text_key = f"scn_name{ss.gen}", f"scn_text{ss.gen}"
c[0].text_input("Name", key=name_key)
c[1].text_input("Description", key=text_key)
c[2].button("Save scenario", on_click=_save_scenario, args=(name_key, text_key), disabled=not overlay,
            help="Saves the current what-if settings into the case." if overlay else "Move a control first.")
_ui.show_problems("scenarios")

st.subheader("Scenarios side by side")
columns = {"Base case": _measures(base_results)}
if overlay:
    columns["What-if (unsaved)"] = _measures(whatif_results) if whatif_results else {}
for scenario in (valid.get("scenarios") or []):
    try:
        r, found, _ = _ui.evaluate_dict(state.apply_settings(valid, scenario.get("set") or {}))
    except CaseError as exc:
        r, found = None, exc.problems
    columns[scenario["name"]] = _measures(r) if r else {"PD in force": "invalid: " + "; ".join(
        f"{x.field} {x.allowed}" for x in found)}
table = pd.DataFrame(columns).fillna("")
st.dataframe(table, width="stretch")
for scenario in (valid.get("scenarios") or []):
    settings = ", ".join(f"{k} = {v}" for k, v in (scenario.get("set") or {}).items())
    st.caption(f"**{scenario['name']}**: {scenario.get('description') or ''} ({settings})")
