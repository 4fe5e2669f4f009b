"""Turning pydantic's validation errors into the project's problems: field path, value, allowed.

Kept apart from the schema (engine/case.py) so the schema reads as a list of inputs. Every
function here takes the root model, so it can walk from it to the model that owns a key (for the
nearest-key suggestion and the allowed range of a field).
"""

from __future__ import annotations

import difflib
import re
import typing
from collections.abc import Sized
from typing import Any

from obligor_memo.engine.errors import Problem
from pydantic import BaseModel, ValidationError
from pydantic_core import ErrorDetails

MAX_UNKNOWN_KEYS_SHOWN = 10
"""Unknown keys named one by one; the rest are counted."""
MAX_SUGGESTED_KEY = 60
"""Longer unknown keys get no nearest-key suggestion [characters]."""


class FieldError(ValueError):
    """Raised inside validators: a sub-field path relative to the model being validated.

    Parameters
    ----------
    field : str
        Path of the field relative to the model being validated.
    value : Any
        The value as given.
    allowed : str
        What is allowed, in words.
    """

    def __init__(self, field: str, value: Any, allowed: str):
        self.field, self.value, self.allowed = field, value, allowed
        super().__init__(f"{field}|{allowed}")


class CaseProblems(ValueError):
    """Raised by a model validator that found several problems at once (paths from the root).

    Parameters
    ----------
    problems : list[Problem]
        The problems found, each with its path from the root model.
    """

    def __init__(self, problems: list[Problem]):
        self.problems = problems
        super().__init__("; ".join(p.sentence() for p in problems))


def _path(loc: tuple[Any, ...]) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        elif not re.fullmatch(r"[A-Za-z0-9_\-]+", str(part)):
            out += f"[{str(part)!r}]"  # blanks, control or odd characters stay visible
        else:
            out += ("." if out else "") + str(part)
    return out


def _model_at(root: type[BaseModel], loc: tuple[Any, ...]) -> type[BaseModel] | None:
    """The pydantic model class that owns the last key of ``loc`` (walking from Case)."""
    model: Any = root
    for part in loc[:-1]:
        if isinstance(part, int):
            continue
        if not (isinstance(model, type) and issubclass(model, BaseModel)):
            return None
        field = model.model_fields.get(str(part))
        if field is None:
            return None
        model = _unwrap_model(field.annotation, typing)
    return model if isinstance(model, type) and issubclass(model, BaseModel) else None


def _unwrap_model(annotation: Any, typing: Any) -> Any:
    origin = typing.get_origin(annotation)
    if origin is None:
        return annotation
    for arg in typing.get_args(annotation):
        found = _unwrap_model(arg, typing)
        if isinstance(found, type) and issubclass(found, BaseModel):
            return found
    return None


def _allowed_for(root: type[BaseModel], error: ErrorDetails) -> str:
    kind = error["type"]
    ctx = error.get("ctx") or {}
    if kind == "extra_forbidden":
        owner = _model_at(root, tuple(error["loc"]))
        keys = sorted(owner.model_fields) if owner else []
        key = str(error["loc"][-1])
        # difflib is quadratic in the key's length: a suggestion only for key-sized text.
        near = difflib.get_close_matches(key, keys, n=1, cutoff=0.6) if len(key) <= MAX_SUGGESTED_KEY else []
        hint = f" (did you mean '{near[0]}'?)" if near else ""
        return f"no such key{hint}; the keys allowed here are {', '.join(keys)}"
    if kind == "missing":
        return "a value (this key is required)"
    if kind in ("greater_than", "greater_than_equal", "less_than", "less_than_equal"):
        return _range_text(root, error)
    if kind == "finite_number":
        return "a finite number (not NaN or infinity)"
    if kind in ("float_type", "float_parsing"):
        return "a number"
    if kind in ("int_type", "int_parsing", "int_from_float"):
        return "a whole number"
    if kind in ("string_type",):
        return "text"
    if kind == "bool_type":
        return "true or false"
    if kind == "literal_error":
        return "one of " + str(ctx.get("expected", ""))
    if kind == "string_pattern_mismatch":
        return "a three-letter ISO 4217 code in capitals, e.g. EUR, USD, CHF"
    if kind == "too_short":
        return f"at least {ctx.get('min_length', 1)} item(s)"
    if kind == "string_too_short":
        return f"at least {ctx.get('min_length', 1)} character(s)"
    if kind == "too_long":
        return f"at most {ctx.get('max_length')} items (a limit of obligor-memo; see the README's Limits)"
    if kind == "string_too_long":
        return f"at most {ctx.get('max_length')} characters"
    if kind in ("list_type",):
        return "a list"
    if kind in ("model_type", "model_attributes_type", "dict_type"):
        return "a mapping of keys to values"
    return error.get("msg", "a valid value")


def _range_text(root: type[BaseModel], error: ErrorDetails) -> str:
    """Combine the field's bounds into one range, reading them off the schema when possible."""
    owner = _model_at(root, tuple(error["loc"]))
    key = error["loc"][-1]
    if owner is not None and str(key) in owner.model_fields:
        low = high = None
        low_open = high_open = False
        for meta in _bound_metadata(owner.model_fields[str(key)]):
            if getattr(meta, "ge", None) is not None:
                low = meta.ge
            if getattr(meta, "gt", None) is not None:
                low, low_open = meta.gt, True
            if getattr(meta, "le", None) is not None:
                high = meta.le
            if getattr(meta, "lt", None) is not None:
                high, high_open = meta.lt, True
        if low is not None and high is not None:
            return (
                f"a number from {low:g}{' (exclusive)' if low_open else ''} "
                f"to {high:g}{' (exclusive)' if high_open else ''}"
            )
    return error.get("msg", "a number in range").replace("Input should be ", "a number ")


def _bound_metadata(field: Any) -> list[Any]:
    """Constraint metadata of a field, looking inside ``Annotated[...] | None`` as well."""
    found = list(field.metadata)
    if not found:
        for arg in typing.get_args(field.annotation):
            for extra in getattr(arg, "__metadata__", ()):
                found.extend(getattr(extra, "metadata", [extra]))
    return found


def _shown_value(error: ErrorDetails) -> Any:
    """The value as the message shows it: a count for a list or text that is too long."""
    value = error.get("input")
    if error["type"] == "missing":
        return None
    if error["type"] == "too_long" and isinstance(value, Sized):
        return f"{len(value)} items"
    if error["type"] == "string_too_long" and isinstance(value, str):
        return f"{len(value):,} characters"
    return value


def problems_from_validation(root: type[BaseModel], exc: ValidationError, prefix: str = "") -> list[Problem]:
    """Turn pydantic's validation errors into problems, each naming its field and what is allowed.

    Parameters
    ----------
    root : type[BaseModel]
        The model validated (the case, or a block of it).
    exc : ValidationError
        pydantic's validation error.
    prefix : str, optional
        Dotted path put before every field (the block's place in the case).

    Returns
    -------
    list[Problem]
        One problem per error; unknown keys beyond the first few are counted in one more problem.
    """
    problems: list[Problem] = []
    unknown: list[str] = []
    for error in exc.errors(include_url=False):
        if error["type"] == "extra_forbidden":
            unknown.append(_path(tuple(error["loc"])))
            if len(unknown) > MAX_UNKNOWN_KEYS_SHOWN:
                continue
        loc = tuple(error["loc"])
        original = (error.get("ctx") or {}).get("error")
        if isinstance(original, CaseProblems):
            for p in original.problems:
                problems.append(Problem(_join(prefix, _join(_path(loc), p.field)), p.value, p.allowed))
            continue
        if isinstance(original, FieldError):
            field = original.field
            path = _path(loc) + (field if field.startswith("[") else ("." + field if loc else field))
            problems.append(Problem(_join(prefix, path), original.value, original.allowed))
            continue
        problems.append(Problem(_join(prefix, _path(loc)) or "case", _shown_value(error), _allowed_for(root, error)))
    if len(unknown) > MAX_UNKNOWN_KEYS_SHOWN:
        problems.insert(
            0,
            Problem(
                prefix or "case",
                f"{len(unknown):,} unknown keys",
                f"only the keys the case file reference lists; the first {MAX_UNKNOWN_KEYS_SHOWN} are named above",
            ),
        )
    return problems


def _join(prefix: str, path: str) -> str:
    if not prefix:
        return path
    if not path:
        return prefix
    return prefix + (path if path.startswith("[") else "." + path)
