"""The mapping step after a statements upload: what was read from the file, line by line.

Each line with the field it goes to, the unit and the orientation, all editable; then accept or
cancel.

The preview lives in ``st.session_state[KEY]`` (plain data and the file's bytes), so a page
switch keeps it; the widgets are rebuilt from it on every run. The case changes only on
"Accept": the statements become the rows as read (amounts already multiplied by the unit, by
the engine's reader) and how they were read is kept in the case's ``statements_source``
(unit, orientation, ``mapping: {label in file: field}``), so next year's file reads the same way.
"""

from __future__ import annotations

import uuid
from typing import Any

import streamlit as st
from obligor_memo.app.present.formatting import money
from obligor_memo.app.workbench import entry, state
from obligor_memo.app.workbench import ui as _ui
from obligor_memo.engine.errors import CaseError

KEY = "mapping_preview"
NOT_USED = "not used"
REQUIRED = ("total_assets", "short_term_liabilities", "long_term_liabilities")
FIELD_WORDS = {
    "total_assets": "Total assets",
    "short_term_liabilities": "Short-term liabilities",
    "long_term_liabilities": "Long-term liabilities",
    "total_liabilities": "Total liabilities",
    "book_equity": "Book equity",
    "working_capital": "Working capital",
    "retained_earnings": "Retained earnings",
    "ebit": "EBIT",
    "ebitda": "EBITDA",
    "sales": "Sales",
    "interest_expense": "Interest expense",
    "cash": "Cash and equivalents",
    "total_debt": "Total debt",
    "short_term_debt": "Short-term debt (added into total debt)",
    "long_term_debt": "Long-term debt (added into total debt)",
    "operating_cash_flow": "Operating cash flow",
    "capital_expenditure": "Capital expenditure",
}
UNIT_WORDS = {"units": "units (as written)", "thousands": "thousands", "millions": "millions"}
ORIENTATION_WORDS = {"wide": "across the columns (a column per year)", "long": "down the rows (a row per year)"}
FIRST_VALUES = 3


def words(field: str | None) -> str:
    """A field as the screen names it ("Total assets"); None is "not used".

    Parameters
    ----------
    field : str | None
        A statement field, or None for a line not used.

    Returns
    -------
    str
        The field's words; a field not in ``FIELD_WORDS`` with its underscores as spaces.
    """
    return NOT_USED if field is None else FIELD_WORDS.get(field, field.replace("_", " "))


def _in_sentence(text: str) -> str:
    return text if text[:2].isupper() else text[:1].lower() + text[1:]


# --------------------------------------------------------------------------- callbacks


def start(data: bytes, name: str) -> None:
    """Read an upload into the preview (the statements uploader's callback calls this).

    The unit named in the file's title rows is chosen, else the one saved with the case; the
    mapping saved with the case is applied (when the file cannot be read with it, the file is
    read as it stands). A bad file leaves a message and no preview.

    Parameters
    ----------
    data : bytes
        The uploaded file's bytes.
    name : str
        The uploaded file's name.
    """
    ss = st.session_state
    source = ss.raw.get("statements_source") if isinstance(ss.raw.get("statements_source"), dict) else {}
    hint = state.unit_hint(data, name)
    unit = hint[0] if hint else source.get("unit", "units")
    if unit not in UNIT_WORDS:
        unit = "units"
    saved = source.get("mapping") if isinstance(source.get("mapping"), dict) else {}
    try:
        read = state.statements_from_upload(data, name, unit=unit, mapping=saved or None)
    except CaseError as exc:
        if not saved:
            _refused(name, exc)
            return
        try:  # the saved mapping may not fit a different file: read it as the file says
            read = state.statements_from_upload(data, name, unit=unit)
            saved = {}
        except CaseError as again:
            _refused(name, again)
            return
    notes = []
    if hint:
        notes.append(f"The file says “{hint[1]}”: amounts are read in {hint[0]}.")
    elif unit != "units":
        notes.append(f"Amounts are read in {unit}, as saved with the case last time.")
    if saved:
        notes.append("The line choices saved with the case were applied.")
    ss[KEY] = {"id": uuid.uuid4().hex[:8], "data": data, "name": name, "read": read, "notes": notes, "error": None}
    ss.upload_error = None


def _refused(name: str, exc: CaseError) -> None:
    """Keep the message of a file that could not be read, and drop any preview."""
    ss = st.session_state
    ss.upload_error = f"{name} could not be read. {exc.paragraph()}"
    ss.pop(KEY, None)


def _reread(**changes: Any) -> None:
    """Read the file again with the preview's unit, orientation and lines, ``changes`` applied.

    On failure the earlier preview stays with a message. Lines that leave a required field
    without a line are not read: they wait as ``pending``, with a message.

    Parameters
    ----------
    **changes : Any
        ``unit``, ``orientation`` or ``lines`` to read with instead of the preview's.
    """
    ss = st.session_state
    preview = ss.get(KEY)
    if not preview:
        return
    read = preview["read"]
    unit = changes.get("unit", read["unit"])
    lines = changes.get("lines", read["lines"])
    if "lines" not in changes and preview.pop("pending", None) is not None:
        preview["id"] = uuid.uuid4().hex[:8]  # a line choice not read is dropped: the selects show the preview's
    orientation = changes.get("orientation")
    missing = [f for f in REQUIRED if not any(line["field"] == f for line in lines)]
    if missing and orientation is None and read["kind"] != "plain":
        preview["error"] = (
            f"{', '.join(words(f) for f in missing)}: no line of the file goes to it; choose the line "
            "that holds it (the statements need total assets and both liability lines)."
        )
        preview["pending"] = lines
        return
    try:
        preview["read"] = state.statements_from_upload(
            preview["data"],
            preview["name"],
            unit=unit,
            orientation=orientation,
            lines=None if orientation is not None else lines,
        )
    except CaseError as exc:
        preview["error"] = f"{preview['name']}: {exc.paragraph()} The preview below is as before."
        preview["id"] = uuid.uuid4().hex[:8]  # the widgets show the preview's choices again
        return
    preview["error"] = None
    preview.pop("pending", None)
    if orientation is not None:
        preview["id"] = uuid.uuid4().hex[:8]  # new lines: the line widgets start afresh


def _on_field(index: int, widget: str) -> None:
    """Read the file again with line ``index`` going to the field chosen in ``widget``."""
    ss = st.session_state
    preview = ss[KEY]
    choice = ss[widget]
    lines = [dict(line) for line in preview.get("pending") or preview["read"]["lines"]]
    lines[index]["field"] = None if choice == NOT_USED else choice
    _reread(lines=lines)


def _on_unit(widget: str) -> None:
    """Read the file again in the unit chosen in ``widget``."""
    _reread(unit=st.session_state[widget])


def _on_orientation(widget: str) -> None:
    """Read the file again with the years running as chosen in ``widget``."""
    _reread(orientation=st.session_state[widget])


def accept() -> None:
    """Apply the preview: the statements as read, and how they were read, into the case."""
    ss = st.session_state
    preview = ss.pop(KEY, None)
    if not preview:
        return
    read = preview["read"]
    years = [row["year"] for row in read["rows"]]
    span = f"{min(years)}–{max(years)}" if years else "no years"
    _ui.replace_case(
        state.with_statements(ss.raw, read),
        f"Read {len(years)} year(s) of statements ({span}) from {preview['name']}, amounts in {read['unit']}.",
    )


def cancel() -> None:
    """Drop the preview; the case is unchanged (the uploader is cleared)."""
    ss = st.session_state
    ss.pop(KEY, None)
    ss.upload_error = None
    ss.gen += 1


# --------------------------------------------------------------------------- the section


def _years_text(years: list[int], *, count: bool = False) -> str:
    if not years:
        return "no figures"
    if years == list(range(years[0], years[-1] + 1)) and len(years) > 2:
        return f"{years[0]}–{years[-1]}" + (f" ({len(years)} years)" if count else "")
    return ", ".join(str(y) for y in years)


def line_table(read: dict[str, Any]) -> list[dict[str, str]]:
    """Each line's years and first values as read (amounts in currency units), for the preview.

    Parameters
    ----------
    read : dict[str, Any]
        A preview's read (from :func:`.state.statements_from_upload`).

    Returns
    -------
    list[dict[str, str]]
        One dict per line: ``years`` (the years with a value; "not read" for a line not used)
        and ``values`` (the first ``FIRST_VALUES`` of them as "year: amount"). Short- and
        long-term debt show the total debt they are added into.
    """
    out = []
    for line in read["lines"]:
        target = line["field"]
        if target in ("short_term_debt", "long_term_debt"):
            target = "total_debt"
        cells = [(row["year"], row.get(target)) for row in read["rows"]] if target else []
        cells = [(y, v) for y, v in cells if v is not None]
        out.append(
            {
                "years": _years_text([y for y, _ in cells]) if target else "not read",
                "values": " · ".join(f"{y}: {money(v)}" for y, v in cells[:FIRST_VALUES]) if target else "",
            }
        )
    return out


def duplicates(lines: list[dict[str, Any]]) -> dict[str, list[str]]:
    """Fields two or more lines go to (the first line in the file is the one read).

    Parameters
    ----------
    lines : list[dict[str, Any]]
        The preview's lines.

    Returns
    -------
    dict[str, list[str]]
        Field -> the labels of the lines that go to it, in the file's order.
    """
    by_field: dict[str, list[str]] = {}
    for line in lines:
        if line["field"] is not None:
            by_field.setdefault(line["field"], []).append(line["label"])
    return {f: labels for f, labels in by_field.items() if len(labels) > 1}


def would_be_problems(read: dict[str, Any]) -> list[str]:
    """What the case would say about these statements once accepted, in the screen's words.

    Parameters
    ----------
    read : dict[str, Any]
        A preview's read (from :func:`.state.statements_from_upload`).

    Returns
    -------
    list[str]
        The messages of the problems under ``statements`` in the case as typed with these
        statements; empty when there are none.
    """
    candidate = state.with_statements(st.session_state.raw, read)
    checked = state.check(candidate)
    out = [
        entry.message(p.field, p.value, p.allowed, candidate) for p in state.problems_at(checked.problems, "statements")
    ]
    return out


def section() -> None:
    """The preview of an upload, when there is one: lines, unit, orientation, accept, cancel."""
    ss = st.session_state
    preview = ss.get(KEY)
    if not preview:
        return
    read = preview["read"]
    pid = preview["id"]
    lines = preview.get("pending") or read["lines"]
    currency = _ui.currency()
    with st.container(border=True):
        st.markdown(f"**Check the statements read from {preview['name']}**")
        st.caption(
            "Nothing changes in the case until you accept. Each line of the file is listed with the "
            f"field it goes to; amounts are shown in {currency or 'currency'} as they will be kept."
        )
        for note in preview.get("notes") or []:
            st.caption(note)
        c1, c2 = st.columns(2)
        units = list(UNIT_WORDS)
        c1.selectbox(
            "Amounts in the file are in",
            units,
            index=units.index(read["unit"]),
            format_func=UNIT_WORDS.__getitem__,
            key=f"map_unit_{pid}",
            on_change=_on_unit,
            args=(f"map_unit_{pid}",),
            help="Thousands multiplies every amount by 1,000 on reading; millions by 1,000,000.",
        )
        sides = list(ORIENTATION_WORDS)
        c2.selectbox(
            "Years run",
            sides,
            index=sides.index(read["orientation"]),
            format_func=ORIENTATION_WORDS.__getitem__,
            key=f"map_orientation_{pid}",
            on_change=_on_orientation,
            args=(f"map_orientation_{pid}",),
            help="As found in the file; change it if the years were taken the wrong way.",
        )
        years = [row["year"] for row in read["rows"]]
        st.caption(f"Years found: {_years_text(years, count=True)}.")
        if preview.get("error"):
            st.error(preview["error"], icon=":material/error:")
        options = [NOT_USED, *FIELD_WORDS]
        shown = line_table({**read, "lines": lines})
        head = st.columns([3, 3, 1.4, 6.6])
        for col, title in zip(head, ("Line in the file", "Field", "Years", "First values")):
            col.markdown(f"**{title}**")
        fixed = read["kind"] == "plain"
        for index, (line, cells) in enumerate(zip(lines, shown)):
            row = st.columns([3, 3, 1.4, 6.6], vertical_alignment="center")
            label = line["label"] if not fixed else words(line["label"])
            row[0].markdown(label if line["detected"] or line["field"] else f"{label} :orange[(not recognised)]")
            if fixed:
                row[1].markdown(words(line["field"]))
            else:
                row[1].selectbox(
                    f"Field for {line['label']}",
                    options,
                    index=options.index(line["field"]) if line["field"] in options else 0,
                    format_func=lambda f: f if f == NOT_USED else words(f),
                    key=f"map_field_{pid}_{index}",
                    on_change=_on_field,
                    args=(index, f"map_field_{pid}_{index}"),
                    label_visibility="collapsed",
                )
            row[2].markdown(cells["years"])
            row[3].markdown(cells["values"] or "–")
        if fixed:
            st.caption("The file uses the case's own column names, so each column is read as named.")
        unused = [line["label"] for line in lines if line["field"] is None]
        if read["unrecognised"] or unused:
            listed = ", ".join(f"“{label}”" for label in (read["unrecognised"] or unused))
            st.warning(
                f"Lines not used: {listed}. They stay out of the statements unless you choose a field for them.",
                icon=":material/warning:",
            )
        for field, labels in duplicates(lines).items():
            st.warning(
                f"{words(field)} is given by {len(labels)} lines ({', '.join(labels)}): the first in the file is read.",
                icon=":material/warning:",
            )
        problems = would_be_problems(read)
        for message in problems:
            st.error(message, icon=":material/error:")
        if problems:
            st.caption("Accepting keeps these problems beside the statements; the results stay on the last valid case.")
        b1, b2, _ = st.columns([2.2, 1, 5])
        b1.button(
            "Accept these statements",
            on_click=accept,
            type="primary",
            icon=":material/check:",
            key=f"map_accept_{pid}",
            disabled=bool(preview.get("pending")),  # a line choice not yet read (a required field unset)
        )
        b2.button("Cancel", on_click=cancel, icon=":material/close:", key=f"map_cancel_{pid}")
