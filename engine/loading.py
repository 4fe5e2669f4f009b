"""Reading case files (YAML or JSON) from disk or from bytes.

YAML is read with a safe loader (no object construction) that refuses duplicate keys (a second
value must never silently replace the first), aliases and number tokens of more than
MAX_NUMBER_DIGITS digits, and resolves plain scalars by the YAML 1.2 core schema: ``NO`` (a
country code), ``yes`` and ``on`` stay text, ``012`` is not octal, ``1e6`` is a number.
A ``statements: {file: ...}`` entry is read relative to the case file and inlined, so the
validated case always carries its own statements (a memo re-runs from the case alone).
"""

from __future__ import annotations

import json
import re
from pathlib import Path
from typing import Any

import yaml
from obligor_memo.engine.case import Case, parse_case
from obligor_memo.engine.errors import CaseError, Problem
from obligor_memo.engine.statement_layout import DEBT_PARTS, IGNORE, UNITS
from obligor_memo.engine.statements import ALL_COLUMNS, read_statements

MAX_CASE_BYTES = 2_000_000  # the workbench upload limit is the same (2 MB)


MAX_NUMBER_DIGITS = 50  # digits in one number token; a case never needs more than about 20


class _StrictLoader(yaml.SafeLoader):
    """PyYAML's safe loader read by the YAML 1.2 core schema (plain scalars resolved below)."""

    yaml_implicit_resolvers: dict[Any, Any] = {}


def _mapping_without_duplicates(loader: yaml.SafeLoader, node: yaml.MappingNode, deep: bool = False):
    seen: dict[Any, int] = {}
    for key_node, _ in node.value:
        if not isinstance(key_node, yaml.ScalarNode):
            raise _Refused(key_node.start_mark.line + 1, "a key that is a list or mapping", "plain keys (text) only")
        key = loader.construct_object(key_node, deep=deep)
        if key in seen:
            raise _DuplicateKey(key, key_node.start_mark.line + 1, seen[key])
        seen[key] = key_node.start_mark.line + 1
    return loader.construct_mapping(node, deep=deep)


class _Refused(Exception):
    def __init__(self, line: int, what: str, allowed: str):
        self.line, self.what, self.allowed = line, what, allowed


class _DuplicateKey(Exception):
    def __init__(self, key: Any, line: int, first: int):
        self.key, self.line, self.first = key, line, first


def _compose_without_aliases(self, parent, index):
    # Anchors and aliases let a few bytes stand for huge shared structures; a case never needs them.
    if self.check_event(yaml.AliasEvent):
        event = self.peek_event()
        raise _Refused(
            event.start_mark.line + 1,
            f"an alias (*{event.anchor})",
            "plain values: YAML anchors and aliases are not used in case files",
        )
    return yaml.composer.Composer.compose_node(self, parent, index)


def _digits(token: str) -> int:
    return sum(ch.isdigit() for ch in token)


def _too_long(line: int, token: str) -> _Refused:
    return _Refused(line, f"a number of {_digits(token):,} digits", f"a number of at most {MAX_NUMBER_DIGITS} digits")


def _construct_int(loader: yaml.SafeLoader, node: yaml.ScalarNode) -> int:
    token = loader.construct_scalar(node)
    if _digits(token) > MAX_NUMBER_DIGITS:
        raise _too_long(node.start_mark.line + 1, token)
    return int(token)


def _construct_float(loader: yaml.SafeLoader, node: yaml.ScalarNode) -> float:
    token = loader.construct_scalar(node)
    if _digits(token) > MAX_NUMBER_DIGITS:
        raise _too_long(node.start_mark.line + 1, token)
    lowered = token.lower()
    if lowered in (".inf", "+.inf"):
        return float("inf")
    if lowered == "-.inf":
        return float("-inf")
    if lowered == ".nan":
        return float("nan")
    return float(token)


def _construct_bool(loader: yaml.SafeLoader, node: yaml.ScalarNode) -> bool:
    return loader.construct_scalar(node).lower() == "true"


_StrictLoader.compose_node = _compose_without_aliases  # type: ignore[method-assign]
_StrictLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _mapping_without_duplicates)
# The YAML 1.2 core schema for plain scalars (yaml.org/spec/1.2.2, section 10.3.2), so text
# stays text: NO (a country), yes, on, off are strings, not booleans; 012 and 1:20 are strings,
# not octal or base-60 numbers; a date stays the text typed. Whole numbers are written without
# a leading zero (012 stays text, and a number field then says so). Every other tag of
# YAML 1.1's implicit set is dropped; explicit tags (!!python/...) are refused by the safe loader.
_StrictLoader.add_implicit_resolver(
    "tag:yaml.org,2002:bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"), list("tTfF")
)
_StrictLoader.add_implicit_resolver(
    "tag:yaml.org,2002:null", re.compile(r"^(?:~|null|Null|NULL|)$"), ["~", "n", "N", ""]
)
_StrictLoader.add_implicit_resolver(
    "tag:yaml.org,2002:int", re.compile(r"^[-+]?(?:0|[1-9][0-9]*)$"), list("-+0123456789")
)
_StrictLoader.add_implicit_resolver(
    "tag:yaml.org,2002:float",
    re.compile(
        r"""^(?:[-+]?(?:\.[0-9]+|(?:0|[1-9][0-9]*)(?:\.[0-9]*)?)(?:[eE][-+]?[0-9]+)?
                    |[-+]?\.(?:inf|Inf|INF)
                    |\.(?:nan|NaN|NAN))$""",
        re.X,
    ),
    list("-+0123456789."),
)
_StrictLoader.add_constructor("tag:yaml.org,2002:int", _construct_int)
_StrictLoader.add_constructor("tag:yaml.org,2002:float", _construct_float)
_StrictLoader.add_constructor("tag:yaml.org,2002:bool", _construct_bool)


def parse_text(text: str, name: str) -> Any:
    """Plain data from YAML or JSON text (JSON is valid YAML, but JSON gets JSON's messages).

    Parameters
    ----------
    text : str
        The case file's text.
    name : str
        File name, used in messages and to tell JSON from YAML.

    Returns
    -------
    Any
        The parsed data.

    Raises
    ------
    CaseError
        If the case cannot be read or evaluated (each problem names its field).
    """
    if name.lower().endswith(".json"):
        try:
            return json.loads(
                text, object_pairs_hook=_json_pairs, parse_int=_json_number(int), parse_float=_json_number(float)
            )
        except _NumberTooLong as long:
            line = text.count("\n", 0, max(text.find(long.token), 0)) + 1
            raise CaseError.single(
                f"{name}, line {line}",
                f"a number of {_digits(long.token):,} digits",
                f"a number of at most {MAX_NUMBER_DIGITS} digits",
                "case file",
            ) from None
        except RecursionError:
            raise CaseError.single(name, "nesting too deep", "a case nested a few levels deep", "case file") from None
        except json.JSONDecodeError as exc:
            raise CaseError.single(
                f"{name}, line {exc.lineno}, column {exc.colno}", exc.msg, "valid JSON", "case file"
            ) from None
    try:
        return yaml.load(text, Loader=_StrictLoader)  # noqa: S506 - _StrictLoader is a SafeLoader
    except RecursionError:
        raise CaseError.single(name, "nesting too deep", "a case nested a few levels deep", "case file") from None
    except _Refused as refused:
        raise CaseError.single(f"{name}, line {refused.line}", refused.what, refused.allowed, "case file") from None
    except _DuplicateKey as dup:
        raise CaseError.single(
            f"{name}, line {dup.line}",
            dup.key,
            f"each key once in a mapping (first given on line {dup.first})",
            "case file",
        ) from None
    except (ValueError, OverflowError) as exc:  # a scalar the constructors could not convert
        raise CaseError.single(
            name, str(exc)[:120], "plain YAML values (text, numbers, true/false, lists, mappings)", "case file"
        ) from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"{name}, line {mark.line + 1}, column {mark.column + 1}" if mark else name
        problem = getattr(exc, "problem", None) or str(exc).splitlines()[0]
        raise CaseError.single(where, problem, "valid YAML (check indentation and colons)", "case file") from None


class _NumberTooLong(Exception):
    def __init__(self, token: str):
        self.token = token


def _json_number(kind: type) -> Any:
    def parse(token: str) -> Any:
        if _digits(token) > MAX_NUMBER_DIGITS:
            raise _NumberTooLong(token)
        return kind(token)

    return parse


def _json_pairs(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise CaseError.single(f"key {key!r}", value, "each key once in an object", "case file")
        out[key] = value
    return out


def resolve_statements(data: Any, base_dir: Path | None) -> Any:
    """Inline a ``statements: {file: path, sheet: name}`` entry (path relative to the case file).

    Parameters
    ----------
    data : Any
        Plain data of the case file.
    base_dir : Path | None
        Folder the statements file's path is relative to; None when there is no case file on disk (a
        file path is then refused).

    Returns
    -------
    Any
        The data with the statements inline.

    Raises
    ------
    CaseError
        If the case cannot be read or evaluated (each problem names its field).
    """
    if not isinstance(data, dict):
        return data
    spec = data.get("statements")
    if not isinstance(spec, dict):
        return data
    extra = set(spec) - {"file", "sheet", "decimal", "unit", "mapping"}
    if extra or not isinstance(spec.get("file"), str):
        raise CaseError.single(
            "statements",
            spec,
            "a list of yearly rows, or {file: path.csv|.xlsx, sheet: name, unit: units|"
            "thousands|millions, mapping: {label in file: field}}",
            "case file",
        )
    unit = spec.get("unit", "units")
    if unit not in UNITS:
        raise CaseError.single("statements.unit", unit, "units, thousands or millions", "case file")
    mapping = spec.get("mapping") or {}
    if not isinstance(mapping, dict) or not all(isinstance(k, str) and isinstance(v, str) for k, v in mapping.items()):
        raise CaseError.single(
            "statements.mapping",
            mapping,
            f"a mapping of labels in the file to fields ({', '.join(ALL_COLUMNS)}, or ignore)",
            "case file",
        )
    bad = {k: v for k, v in mapping.items() if v not in ALL_COLUMNS + DEBT_PARTS + (IGNORE,)}
    if bad:
        label, target = next(iter(bad.items()))
        raise CaseError.single(
            f"statements.mapping[{label!r}]",
            target,
            f"one of {', '.join(ALL_COLUMNS + DEBT_PARTS)}, or ignore",
            "case file",
        )
    if base_dir is None:
        raise CaseError.single(
            "statements.file", spec["file"], "inline rows here (a file path needs a case file on disk)", "case file"
        )
    path = (base_dir / spec["file"]).resolve()
    if not path.is_file():
        raise CaseError.single(
            "statements.file", spec["file"], f"a CSV or XLSX file that exists (looked for {path})", "case file"
        )
    decimal = spec.get("decimal", ".")
    if decimal not in (".", ","):
        raise CaseError.single("statements.decimal", decimal, "'.' or ','", "case file")
    read = read_statements(
        path.read_bytes(), path.name, sheet=spec.get("sheet"), decimal=decimal, unit=unit, mapping=mapping
    )
    source = {
        "file": spec["file"],
        "unit": unit,
        "orientation": read.orientation,
        "header_row": read.header_row,
        "recognised": dict(read.recognised),
        "unrecognised": list(read.unrecognised),
    }
    if mapping:
        source["mapping"] = dict(mapping)
    return {**data, "statements": read.rows, "statements_source": source}


def load_case(path: str | Path) -> Case:
    """Read, inline and validate a case file. Raises CaseError for every user mistake.

    Parameters
    ----------
    path : str | Path
        Path of the case file (YAML or JSON).

    Returns
    -------
    Case
        The validated case.

    Raises
    ------
    CaseError
        If the case cannot be read or evaluated (each problem names its field).
    """
    path = Path(path)
    if not path.is_file():
        raise CaseError.single("CASE", str(path), "the path of an existing .yaml, .yml or .json file", "command")
    if path.suffix.lower() not in (".yaml", ".yml", ".json"):
        raise CaseError.single("CASE", str(path), "a file ending in .yaml, .yml or .json", "command")
    raw = path.read_bytes()
    if len(raw) > MAX_CASE_BYTES:
        raise CaseError.single("CASE", f"{len(raw):,} bytes", f"at most {MAX_CASE_BYTES:,} bytes", "case file")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise CaseError.single("CASE", str(path), "a UTF-8 text file", "case file") from None
    data = parse_text(text, path.name)
    data = resolve_statements(data, path.parent)
    return parse_case(data, source="case file")


def load_case_text(text: str, name: str = "case.yaml", base_dir: Path | None = None) -> Case:
    """Validate a case given as text (an upload).

    Parameters
    ----------
    text : str
        The case file's text.
    name : str, optional
        File name, used in messages and to tell JSON from YAML.
    base_dir : Path | None, optional
        Folder a statements file's path is relative to; None when the text has no file on disk (a
        statements file path is then refused).

    Returns
    -------
    Case
        The validated case.

    Raises
    ------
    CaseError
        If the text cannot be read or the case does not validate (each problem names its field).
    """
    data = parse_text(text, name)
    data = resolve_statements(data, base_dir)
    return parse_case(data, source="case file")


__all__ = ["load_case", "load_case_text", "parse_text", "resolve_statements", "Problem"]
