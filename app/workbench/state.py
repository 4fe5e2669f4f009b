"""The workbench's case state: one plain case dict per browser session, kept on disk.

No Streamlit here, so the rules are testable on their own:

* The state is plain data (the case schema's dict form), never a pickle; files are JSON and case
  downloads YAML or JSON.
* Two dicts are kept: ``raw``, exactly what the user typed (even when it does not validate), and
  ``valid``, the last version that passed ``engine.case.parse_case``. A bad value therefore never
  costs the other inputs, and the results keep showing the last valid case.
* Each browser session has its own case id (32 hex characters, the only thing ever joined to the
  working folder's path) and its own autosave file; writes go to a temp file then ``os.replace``,
  so a crash mid-write leaves the previous file whole.
"""

from __future__ import annotations

import copy
import json
import logging
import math
import os
import re
import tempfile
import threading
import time
import uuid
from collections import defaultdict
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any, TypeGuard

import yaml
from obligor_memo.app import settings
from obligor_memo.engine.case import Case, StatementRow, case_to_dict, parse_case
from obligor_memo.engine.errors import CaseError, Problem

log = logging.getLogger(__name__)

SAMPLE_PATH = Path(str(resources.files("obligor_memo.sample_data"))) / "hollowmere.yaml"
WORKDIR_ENV = settings.WORKDIR
AUTOSAVE_FORMAT = "obligor-memo autosave"
AUTOSAVE_VERSION = 1
_SAVE_LOCKS: defaultdict[str, threading.Lock] = defaultdict(threading.Lock)
_CASE_ID = re.compile(r"[0-9a-f]{32}")
_PATH_PART = re.compile(r"([^.\[\]]+)|\[(\d+)\]")


def default_workdir() -> Path:
    """The folder for autosaved cases: $OBLIGOR_MEMO_WORKDIR, else ~/.obligor-memo."""
    return settings.current().workdir


def new_case_id() -> str:
    """A new case id: 32 random lower-case hex characters (a UUID4's hex form)."""
    return uuid.uuid4().hex


def is_case_id(text: Any) -> TypeGuard[str]:
    """True only for ids this module makes: nothing else may reach a file path.

    Parameters
    ----------
    text : Any
        The candidate id (from the URL, a saved file or this module).

    Returns
    -------
    bool
        Whether ``text`` is a string of exactly 32 lower-case hex characters.
    """
    return isinstance(text, str) and _CASE_ID.fullmatch(text) is not None


def autosave_path(workdir: Path, case_id: str) -> Path:
    """The autosave file of a case: ``cases/<case_id>.json`` under the working folder.

    Parameters
    ----------
    workdir : Path
        The working folder.
    case_id : str
        The case id; checked by :func:`is_case_id` before it is joined to the path.

    Returns
    -------
    Path
        The file's path (the file itself is neither read nor created).

    Raises
    ------
    ValueError
        If ``case_id`` is not 32 lower-case hex characters.
    """
    if not is_case_id(case_id):
        raise ValueError(f"case_id: got {case_id!r}; allowed: 32 lower-case hex characters")
    return Path(workdir) / "cases" / f"{case_id}.json"


# --------------------------------------------------------------------------- plain data


def plain(value: Any) -> Any:
    """JSON-safe plain data: numpy scalars to Python, NaN and infinities to None (an empty cell).

    Parameters
    ----------
    value : Any
        Any value; dicts, lists and tuples are converted item by item (dict keys become strings).

    Returns
    -------
    Any
        Dicts, lists, None, bool, int, float and str as they are; anything else as its ``str``.
    """
    if isinstance(value, dict):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    if hasattr(value, "item") and callable(value.item) and not isinstance(value, (str, bytes)):
        try:
            value = value.item()
        except (TypeError, ValueError):
            return str(value)
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if value is None or isinstance(value, (bool, int, float, str)):
        return value
    return str(value)


def sample_case_dict() -> dict[str, Any]:
    """The invented sample borrower as a case dict (statements inlined)."""
    from obligor_memo.engine.loading import load_case

    return case_to_dict(load_case(SAMPLE_PATH))


# --------------------------------------------------------------------------- paths into the dict


def split_path(path: str) -> list[str | int]:
    """``facilities[1].recovery.std`` -> ["facilities", 1, "recovery", "std"].

    Parameters
    ----------
    path : str
        A dotted path into the case dict, list indices in square brackets.

    Returns
    -------
    list[str | int]
        The path's parts: names as strings, indices as integers.

    Raises
    ------
    ValueError
        If ``path`` holds no part.
    """
    parts: list[str | int] = []
    for name, index in _PATH_PART.findall(path):
        parts.append(int(index) if index else name)
    if not parts:
        raise ValueError(f"path: got {path!r}; allowed: a dotted path such as pd.horizon_years")
    return parts


def get_path(data: Any, path: str, default: Any = None) -> Any:
    """The value at ``path`` in ``data``; ``default`` where the path is missing or holds None.

    Parameters
    ----------
    data : Any
        A case dict (or any nesting of dicts and lists).
    path : str
        A dotted path such as ``facilities[1].recovery.std``.
    default : Any, optional
        What is returned when a step of the path is missing, does not fit the data or holds None.

    Returns
    -------
    Any
        The value found, else ``default``.

    Raises
    ------
    ValueError
        If ``path`` holds no part (see :func:`split_path`).
    """
    node = data
    for part in split_path(path):
        try:
            node = node[part]
        except (KeyError, IndexError, TypeError):
            return default
        if node is None:
            return default
    return node


def set_path(data: dict[str, Any], path: str, value: Any) -> dict[str, Any]:
    """A copy of ``data`` with ``path`` set; missing mappings on the way are created.

    Parameters
    ----------
    data : dict[str, Any]
        The case dict; it is not changed.
    path : str
        A dotted path such as ``facilities[1].recovery.std``.
    value : Any
        The value to set, stored as plain data (:func:`plain`).

    Returns
    -------
    dict[str, Any]
        A deep copy of ``data`` with the value set.
    """
    out = copy.deepcopy(data)
    parts = split_path(path)
    node: Any = out
    for part, following in zip(parts[:-1], parts[1:]):
        if isinstance(node, list) and isinstance(part, int):
            child = node[part]
        else:
            child = node.get(part) if isinstance(node, dict) else None
        if child is None:
            child = [] if isinstance(following, int) else {}
            node[part] = child
        node = child
    node[parts[-1]] = plain(value)
    return out


# --------------------------------------------------------------------------- validation


@dataclass(frozen=True)
class Checked:
    """A raw case dict and what validation made of it."""

    case: Case | None
    """The validated case; None when the dict does not validate."""
    problems: tuple[Problem, ...]
    """Every problem the validation found; empty when the case validates."""


def check(raw: Any) -> Checked:
    """A raw case dict validated by ``engine.case.parse_case``: the case, or its problems.

    Parameters
    ----------
    raw : Any
        The case as typed (plain data).

    Returns
    -------
    Checked
        The case and no problems, or no case and every problem found.
    """
    try:
        return Checked(parse_case(raw, source="case"), ())
    except CaseError as exc:
        return Checked(None, exc.problems)


def problems_at(problems: tuple[Problem, ...] | list[Problem], path: str) -> list[Problem]:
    """The problems that belong to the widget at ``path`` (itself or anything below it).

    Parameters
    ----------
    problems : tuple[Problem, ...] | list[Problem]
        The problems of the case.
    path : str
        The widget's case path, such as ``facilities`` or ``pd.override``.

    Returns
    -------
    list[Problem]
        The problems whose field is ``path`` or lies below it, in their order.
    """
    return [p for p in problems if p.field == path or p.field.startswith(path + ".") or p.field.startswith(path + "[")]


# --------------------------------------------------------------------------- files


def _atomic_write(path: Path, text: str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, temp = tempfile.mkstemp(prefix=path.name + ".", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(handle, "w", encoding="utf-8") as out:
            out.write(text)
            out.flush()
            os.fsync(out.fileno())
        os.replace(temp, path)
    except BaseException:
        try:
            os.unlink(temp)
        except OSError:  # the write's own error is the one to report
            log.warning("could not remove the temporary file %s", temp, exc_info=True)
        raise


def _record(path: Path) -> dict[str, Any] | None:
    try:
        record = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return record if isinstance(record, dict) and record.get("format") == AUTOSAVE_FORMAT else None


def _revision_of(record: dict[str, Any] | None) -> int:
    value = (record or {}).get("revision", 0)
    return value if isinstance(value, int) and not isinstance(value, bool) and value >= 0 else 0


class Conflict(Exception):
    """The autosaved case is newer than the one this session started from (another tab saved it).

    Parameters
    ----------
    revision : int
        The revision of the file on disk.
    saved_at : str
        When that revision was saved, as the file records it.
    """

    def __init__(self, revision: int, saved_at: str) -> None:
        super().__init__(f"the autosave is at revision {revision} (saved {saved_at})")
        self.revision = revision
        self.saved_at = saved_at


@dataclass(frozen=True)
class Saved:
    """An autosave written: the file and the revision it now holds."""

    path: Path
    """The file written."""
    revision: int
    """The revision written (1 for the first save of a case)."""


def autosave_checked(
    workdir: Path,
    case_id: str,
    *,
    raw: dict[str, Any],
    valid: dict[str, Any] | None,
    extra: dict[str, Any] | None = None,
    expect: int | None = None,
) -> Saved:
    """Write the session's state atomically as the next revision.

    ``expect`` is the revision this session last loaded or wrote; when the file on disk is at a
    later one (another tab or window saved the same case), nothing is written and
    :class:`Conflict` is raised, so the last writer never silently wins. ``expect=None`` writes
    whatever is on disk (the user chose to keep this version).

    Parameters
    ----------
    workdir : Path
        The working folder; the file goes to its ``cases`` folder.
    case_id : str
        The session's case id.
    raw : dict[str, Any]
        The case as typed.
    valid : dict[str, Any] | None
        The last valid case; None when there is none.
    extra : dict[str, Any] | None, optional
        Further session state saved beside the case (the workbench keeps its what-if
        settings there); None for none.
    expect : int | None, optional
        The revision this session last loaded or wrote; None writes over whatever is on disk.

    Returns
    -------
    Saved
        The file written and its new revision.

    Raises
    ------
    Conflict
        If the file on disk is at a later revision than ``expect``.
    ValueError
        If ``case_id`` is not a case id (see :func:`autosave_path`).
    """
    path = autosave_path(workdir, case_id)
    with _SAVE_LOCKS[str(path)]:
        on_disk = _record(path)
        current = _revision_of(on_disk)
        if expect is not None and current > expect:
            raise Conflict(current, str((on_disk or {}).get("saved_at", "")))
        record = {
            "format": AUTOSAVE_FORMAT,
            "version": AUTOSAVE_VERSION,
            "case_id": case_id,
            "revision": current + 1,
            "saved_at": time.strftime("%Y-%m-%dT%H:%M:%S%z"),
            "raw": plain(raw),
            "valid": plain(valid) if valid is not None else None,
            "extra": plain(extra or {}),
        }
        _atomic_write(path, json.dumps(record, indent=1, allow_nan=False))
    return Saved(path, current + 1)


def autosave(
    workdir: Path,
    case_id: str,
    *,
    raw: dict[str, Any],
    valid: dict[str, Any] | None,
    extra: dict[str, Any] | None = None,
) -> Path:
    """Write the session's state atomically (as the next revision); returns the file written.

    Unlike :func:`autosave_checked` it never checks the revision on disk.

    Parameters
    ----------
    workdir : Path
        The working folder; the file goes to its ``cases`` folder.
    case_id : str
        The session's case id.
    raw : dict[str, Any]
        The case as typed.
    valid : dict[str, Any] | None
        The last valid case; None when there is none.
    extra : dict[str, Any] | None, optional
        Further session state saved beside the case; None for none.

    Returns
    -------
    Path
        The file written.
    """
    return autosave_checked(workdir, case_id, raw=raw, valid=valid, extra=extra).path


@dataclass(frozen=True)
class Restored:
    """A session's state as read back from its autosave file."""

    raw: dict[str, Any]
    """The case as typed."""
    valid: dict[str, Any] | None
    """The last valid case; None when the file holds none."""
    extra: dict[str, Any]
    """Further session state saved beside the case (the what-if settings); empty when none."""
    saved_at: str
    """When the file was saved, as it records it; empty when it records no time."""
    revision: int = 0
    """The revision of the file (0 when it records none)."""


def restore(workdir: Path, case_id: str) -> Restored | None:
    """The saved state of ``case_id``, or None when there is none or it cannot be read.

    Parameters
    ----------
    workdir : Path
        The working folder.
    case_id : str
        The case id; anything that is not a case id gives None.

    Returns
    -------
    Restored | None
        The state saved, or None when the file is missing, unreadable, not an autosave or
        holds no case dict.
    """
    try:
        path = autosave_path(workdir, case_id)
    except ValueError:
        return None
    record = _record(path)
    if record is None:
        return None
    raw = record.get("raw")
    if not isinstance(raw, dict):
        return None
    valid = record.get("valid") if isinstance(record.get("valid"), dict) else None
    extra = record.get("extra")
    extra = extra if isinstance(extra, dict) else {}
    return Restored(raw, valid, extra, str(record.get("saved_at", "")), _revision_of(record))


def case_file_text(data: dict[str, Any], fmt: str = "yaml") -> str:
    """The case as a YAML or JSON file a user can open again (or run from the command line).

    Parameters
    ----------
    data : dict[str, Any]
        The case dict.
    fmt : str, optional
        ``"yaml"`` or ``"json"``.

    Returns
    -------
    str
        The file's text (YAML keys in the case's order; JSON indented by two spaces).

    Raises
    ------
    ValueError
        If ``fmt`` is neither ``"yaml"`` nor ``"json"``.
    """
    if fmt == "json":
        return json.dumps(plain(data), indent=2, allow_nan=False)
    if fmt != "yaml":
        raise ValueError(f"fmt: got {fmt!r}; allowed: 'yaml' or 'json'")
    return yaml.safe_dump(plain(data), sort_keys=False, allow_unicode=True, width=100)


def case_dict_from_upload(data: bytes, name: str) -> dict[str, Any]:
    """A case file upload (YAML or JSON) as a validated case dict.

    Parameters
    ----------
    data : bytes
        The uploaded file's bytes.
    name : str
        The uploaded file's name; its ending tells YAML from JSON.

    Returns
    -------
    dict[str, Any]
        The validated case in its dict form (``engine.case.case_to_dict``).

    Raises
    ------
    CaseError
        If the file is larger than ``engine.loading.MAX_CASE_BYTES``, does not end in .yaml,
        .yml or .json, is not UTF-8 text or does not hold a valid case.
    """
    from obligor_memo.engine.loading import MAX_CASE_BYTES, load_case_text

    if len(data) > MAX_CASE_BYTES:
        raise CaseError.single(
            f"case file {name}", f"{len(data):,} bytes", f"at most {MAX_CASE_BYTES:,} bytes", "case file"
        )
    if not name.lower().endswith((".yaml", ".yml", ".json")):
        raise CaseError.single(f"case file {name}", name, "a file ending in .yaml, .yml or .json", "case file")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise CaseError.single(
            f"case file {name}", "bytes that are not UTF-8 text", "a UTF-8 text file (YAML or JSON)", "case file"
        ) from None
    return case_to_dict(load_case_text(text, name, base_dir=None))


# --------------------------------------------------------------------------- statements uploads


def statements_from_upload(
    data: bytes,
    name: str,
    *,
    unit: str = "units",
    mapping: dict[str, str] | None = None,
    orientation: str | None = None,
    lines: list[dict[str, Any]] | None = None,
) -> dict[str, Any]:
    """An uploaded CSV/XLSX read for the mapping preview (plain data).

    The file is read by ``engine.statements.read_statements`` (wide or long layouts, title rows,
    the trade's wording, amounts multiplied by ``unit``) with ``mapping`` ({label in file:
    field or "ignore"}, such as the one saved with the case last time). ``orientation`` ("wide":
    years across the columns, "long": years down the rows) overrides the detected one.
    ``lines`` are the preview's lines after the user's choices (label in the file, detected
    field, chosen field or None for not used): the file is read again with them as the mapping.

    Parameters
    ----------
    data : bytes
        The uploaded file's bytes.
    name : str
        The uploaded file's name; its ending tells CSV from XLSX.
    unit : str, optional
        The unit the file's amounts are stated in: ``"units"``, ``"thousands"`` or ``"millions"``.
    mapping : dict[str, str] | None, optional
        {label in file: field or "ignore"}; None for none.
    orientation : str | None, optional
        ``"wide"`` or ``"long"``; None keeps the detected one.
    lines : list[dict[str, Any]] | None, optional
        The preview's lines as the user left them; None reads with ``mapping``.

    Returns
    -------
    dict[str, Any]
        ``rows`` (what the case's statements become), the ``lines``, the labels still
        ``unrecognised``, the ``recognised`` ones (label -> field) and how the file was read:
        ``file``, ``unit``, ``orientation``, ``header_row`` and ``kind`` (``"plain"``: the case's
        own column names; ``"layout"``: a laid-out file).

    Raises
    ------
    CaseError
        If the file cannot be read as statements; the message names the file and the bad cell.
    """
    from obligor_memo.engine.statements import read_statements

    if lines is not None:
        mapping = statements_mapping({"kind": "layout", "lines": lines})
    chosen = {k: v for k, v in (mapping or {}).items() if isinstance(k, str) and isinstance(v, str) and v}
    read = read_statements(data, name, unit=unit, mapping=chosen or None)
    kind = "plain" if not read.recognised and not read.unrecognised else "layout"
    if orientation is not None and orientation != read.orientation:
        read = _read_forced(data, name, unit=unit, mapping=chosen, orientation=orientation)
        kind, lines = "layout", None
    if lines is None:
        lines = _lines_of(read, kind, chosen, data, name)
    return plain(
        {
            "file": name,
            "unit": read.unit,
            "orientation": read.orientation,
            "header_row": read.header_row,
            "kind": kind,
            "lines": lines,
            "rows": read.rows,
            "recognised": dict(read.recognised),
            "unrecognised": list(read.unrecognised),
        }
    )


def _lines_of(read: Any, kind: str, mapping: dict[str, str], data: bytes, name: str) -> list[dict[str, Any]]:
    """The preview's lines of a first read: each label found, with the field it maps to.

    The field is None when the line is not used; ``detected`` is the field its wording alone
    gives. Lines the mapping sets to "ignore" are skipped by the reader, so they are found by
    reading once more without those entries: a line is never dropped from the list unseen.
    """
    from obligor_memo.engine.statement_layout import field_for, normalise
    from obligor_memo.engine.statements import read_statements

    if kind == "plain":  # the case's own column names: each column is read as named
        fields = list(dict.fromkeys(k for row in read.rows for k in row if k != "year"))
        return [{"label": f, "detected": f, "field": f} for f in fields]
    out = [
        {"label": label, "detected": field_for(label), "field": f}
        for label, f in read.recognised.items()
        if f != "year"
    ]
    out += [{"label": label, "detected": None, "field": None} for label in read.unrecognised]
    ignored = {normalise(k) for k, v in mapping.items() if v == "ignore"}
    if ignored:
        kept = {k: v for k, v in mapping.items() if v != "ignore"}
        try:
            again = read_statements(data, name, unit=read.unit, mapping=kept or None)
        except CaseError:  # an ignored line with a bad cell: it stays ignored, as saved
            return out
        found = list(again.recognised) + list(again.unrecognised)
        out += [
            {"label": label, "detected": field_for(label), "field": None}
            for label in found
            if normalise(label) in ignored
        ]
    return out


def _read_forced(data: bytes, name: str, *, unit: str, mapping: dict[str, str], orientation: str) -> Any:
    """The file read with the years across the columns ("wide") or down the rows ("long").

    The header row is found as the engine finds it, but only of that kind, within the first 15
    rows of a sheet; a file with none raises CaseError.
    """
    from obligor_memo.engine import statement_layout as layout_mod
    from obligor_memo.engine import statements as statements_mod

    sheets: list[str | None] = [None]
    if name.lower().endswith((".xlsx", ".xlsm")):
        sheets = statements_mod._sheet_names(data, name) or [None]
    for sheet in sheets:
        rows = statements_mod._table(data, name, sheet)
        for index, row in enumerate(rows[:15]):
            if orientation == "wide":
                years = [(c, layout_mod.year_of(v)) for c, v in enumerate(row) if layout_mod.year_of(v) is not None]
                if len(years) >= 2 and len({y for _, y in years}) == len(years):
                    found = layout_mod._wide(rows, index, years, mapping or None)
                    return statements_mod._from_layout(found, name, ".", unit)
            else:
                fields = [layout_mod.field_for(v, mapping or None) for v in row if v not in (None, "")]
                if "year" in fields and sum(f not in (None, "year", layout_mod.IGNORE) for f in fields) >= 1:
                    found = layout_mod._long(rows, index, mapping or None)
                    return statements_mod._from_layout(found, name, ".", unit)
    wanted = (
        "a header row of two or more years (such as FY2023, 2024) within the first 15 rows"
        if orientation == "wide"
        else "a header row with a year column (Year, Fiscal year) and line items within the first 15 rows"
    )
    raise CaseError.single(
        f"statements file {name}",
        "years across the columns" if orientation == "wide" else "years down the rows",
        wanted,
        "statements file",
    )


def statements_mapping(preview: dict[str, Any]) -> dict[str, str]:
    """The mapping to save with the case, {label in file: field or "ignore"}.

    Every line of a laid-out file as chosen (lines left unrecognised and unused are not in it).
    Empty for a table with the case's own column names, which reads as named.

    Parameters
    ----------
    preview : dict[str, Any]
        A preview from :func:`statements_from_upload` (its ``kind`` and ``lines`` are read).

    Returns
    -------
    dict[str, str]
        Label in the file -> field; "ignore" for a line whose wording names a field but that
        is set to not used.
    """
    if preview.get("kind") == "plain":
        return {}
    out: dict[str, str] = {}
    for line in preview["lines"]:
        if line["field"] is not None:
            out[line["label"]] = line["field"]
        elif line["detected"] is not None:
            out[line["label"]] = "ignore"
    return out


def with_statements(raw: dict[str, Any], preview: dict[str, Any]) -> dict[str, Any]:
    """A copy of the case dict with the statements replaced by the preview's rows.

    How they were read is kept in ``statements_source`` (file, unit, orientation, header row,
    the labels recognised and not, and the mapping).

    Parameters
    ----------
    raw : dict[str, Any]
        The case dict; it is not changed.
    preview : dict[str, Any]
        A preview from :func:`statements_from_upload`.

    Returns
    -------
    dict[str, Any]
        The new case dict; each statement row holds every field of a row, empty ones None.
    """
    source = {
        "file": preview["file"],
        "unit": preview["unit"],
        "orientation": preview["orientation"],
        "header_row": preview["header_row"],
        "recognised": dict(preview["recognised"]),
        "unrecognised": list(preview["unrecognised"]),
        "mapping": statements_mapping(preview),
    }
    # in the case dict's own form (every field of a row, empty ones None), as case_to_dict writes it
    fields = list(StatementRow.model_fields)
    rows = [{f: row.get(f) for f in fields} for row in preview["rows"]]
    out = set_path(raw, "statements", rows)
    return set_path(out, "statements_source", source)


_CURRENCIES = r"(?:eur|usd|gbp|chf|sek|nok|dkk|pln|czk|jpy|cad|aud)"
_UNIT_WORDS = (
    (
        "thousands",
        re.compile(r"\bthousands?\b|\b000s?\b|\(k\)|\b" + _CURRENCIES + r" ?k\b|\b(?:k|t)" + _CURRENCIES + r"\b"),
    ),
    (
        "millions",
        re.compile(r"\bmillions?\b|\bmn\b|\bmio\b|\(m\)|\b" + _CURRENCIES + r" ?m\b|\bm" + _CURRENCIES + r"\b"),
    ),
)


def unit_hint(data: bytes, name: str) -> tuple[str, str] | None:
    """The unit the file's title rows (or header) name, with the text that says so.

    Such as "EUR thousands", "(EUR m)", "in '000". None when they name none, or both.

    Parameters
    ----------
    data : bytes
        The uploaded file's bytes.
    name : str
        The uploaded file's name; its ending tells CSV from XLSX.

    Returns
    -------
    tuple[str, str] | None
        The unit (``"thousands"`` or ``"millions"``) and the cell that names it; None when the
        rows name no unit or both, or the file cannot be read.
    """
    from obligor_memo.engine import statement_layout as layout_mod
    from obligor_memo.engine import statements as statements_mod

    sheets: list[str | None] = [None]
    if name.lower().endswith((".xlsx", ".xlsm")):
        sheets = statements_mod._sheet_names(data, name) or [None]
    for sheet in sheets:
        try:
            rows = statements_mod._table(data, name, sheet)
        except CaseError:
            return None
        found = layout_mod.detect(rows)
        if found is None and len(sheets) > 1:
            continue
        above = rows[: found.header_row] if found is not None else rows[:1]
        hits: dict[str, str] = {}
        for row in above:
            for cell in row:
                if isinstance(cell, str) and layout_mod.year_of(cell) is None:
                    text = cell.lower().replace("'000", " 000 ")
                    for unit, pattern in _UNIT_WORDS:
                        if pattern.search(text):
                            hits.setdefault(unit, cell.strip())
        return next(iter(hits.items())) if len(hits) == 1 else None
    return None
