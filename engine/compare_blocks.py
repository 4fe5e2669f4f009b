"""The blocks of inputs a comparison steps through, and the hybrid case that mixes them.

The blocks are defined by case-dict paths in one table; the module also finds the paths at
which two cases differ and builds the hybrid case that mixes OLD's and NEW's blocks.

A facility present on one side only keeps its own recovery terms in every hybrid, so facility
lists always mix (see engine.compare for the other conflicts).
"""

from __future__ import annotations

import copy
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class Block:
    """A block of inputs: the top-level case keys and the facility fields it owns."""

    name: str
    """Identifier, e.g. ``pd``."""
    label: str
    """Words for people."""
    keys: tuple[str, ...]
    """Top-level case keys the block owns."""
    facility_fields: tuple[str, ...] = ()
    """Fields of each facility the block owns (``*``: the fields no other block owns)."""


RECOVERY_FIELDS = ("seniority", "recovery", "collateral")
"""Facility fields of the recovery block."""
PRESENTATION_KEYS = ("borrower", "memo", "sensitivity", "scenarios", "review")
"""Inputs that change no key figure; a hybrid takes them from NEW (scenarios and the review record
are dropped: they are not evaluated, and a scenario may name a facility a hybrid lacks)."""

BLOCKS: tuple[Block, ...] = (
    Block("statements", "Statements and market data", ("statements", "market")),
    Block("pd", "PD assumptions", ("pd",)),
    Block("facilities", "Facilities", ("exposure", "covenants"), ("*",)),
    Block("recovery", "Recovery and collateral", ("lgd",), RECOVERY_FIELDS),
    Block("capital_pricing", "Capital and pricing settings", ("capital", "pricing")),
    Block("other", "Other inputs", ()),  # every top-level key not named above
)
ENGINE_BLOCK = Block("engine", "Engine version (method change)", ())
_OWNED = {key for b in BLOCKS for key in b.keys} | {"facilities"} | set(PRESENTATION_KEYS)


def other_keys(old: Mapping[str, Any], new: Mapping[str, Any]) -> list[str]:
    """Top-level keys of either case dict that no block or presentation key owns.

    Parameters
    ----------
    old : Mapping[str, Any]
        OLD's case dict.
    new : Mapping[str, Any]
        NEW's case dict.

    Returns
    -------
    list[str]
        The keys, sorted.
    """
    return sorted((set(old) | set(new)) - _OWNED)


def _keys_of(block: Block, old: Mapping[str, Any], new: Mapping[str, Any]) -> list[str]:
    """The top-level keys a block owns (the ``other`` block: the keys no block names)."""
    return other_keys(old, new) if block.name == "other" else list(block.keys)


def _diff(a: Any, b: Any, path: str, out: list[str]) -> None:
    """Paths at which two plain values differ (facilities by id, statements by year)."""
    if isinstance(a, dict) and isinstance(b, dict):
        for key in sorted(set(a) | set(b), key=str):
            sub = f"{path}.{key}" if path else str(key)
            if key not in a:
                out.append(f"{sub} (added)")
            elif key not in b:
                out.append(f"{sub} (removed)")
            else:
                _diff(a[key], b[key], sub, out)
        return
    if isinstance(a, list) and isinstance(b, list):
        key = "year" if path == "statements" else "id"
        if all(isinstance(x, dict) and key in x for x in a + b) and a + b:
            ka, kb = {x[key]: x for x in a}, {x[key]: x for x in b}
            for k in sorted(set(ka) | set(kb), key=str):
                sub = f"{path}[{k}]"
                if k not in ka:
                    out.append(f"{sub} (added)")
                elif k not in kb:
                    out.append(f"{sub} (removed)")
                else:
                    _diff(ka[k], kb[k], sub, out)
            return
    if a != b:
        out.append(path)


def changed_paths(block: Block, old: Mapping[str, Any], new: Mapping[str, Any]) -> list[str]:
    """The case-dict paths of ``block`` whose values differ between two case dicts.

    Facilities are matched by id and statement rows by year; a facility added, removed or
    reordered is reported by the facilities block.

    Parameters
    ----------
    block : Block
        The block whose inputs are compared.
    old : Mapping[str, Any]
        OLD's case dict.
    new : Mapping[str, Any]
        NEW's case dict.

    Returns
    -------
    list[str]
        The differing paths, e.g. ``pd.asset_growth`` or ``facilities[RCF-1].drawn``.
    """
    out: list[str] = []
    for key in _keys_of(block, old, new):
        _diff(old.get(key), new.get(key), key, out)
    if block.facility_fields:
        fa = {f["id"]: f for f in old.get("facilities", [])}
        fb = {f["id"]: f for f in new.get("facilities", [])}
        own = RECOVERY_FIELDS if block.facility_fields == RECOVERY_FIELDS else None
        if own is None:
            if [f["id"] for f in old.get("facilities", []) if f["id"] in fb] != [
                f["id"] for f in new.get("facilities", []) if f["id"] in fa
            ]:
                out.append("facilities (order)")
            for k in sorted(set(fa) | set(fb)):
                if k not in fa:
                    out.append(f"facilities[{k}] (added)")
                elif k not in fb:
                    out.append(f"facilities[{k}] (removed)")
        for k in sorted(set(fa) & set(fb)):
            names = sorted(set(fa[k]) | set(fb[k]))
            for name in names:
                if (name in RECOVERY_FIELDS) == (own is not None):
                    _diff(fa[k].get(name), fb[k].get(name), f"facilities[{k}].{name}", out)
    return out


def hybrid_case_dict(old: Mapping[str, Any], new: Mapping[str, Any], from_new: Iterable[str]) -> dict[str, Any]:
    """The case dict with the blocks named in ``from_new`` taken from NEW and the rest from OLD.

    Presentation keys come from NEW, without scenarios and the review record; a facility present
    on one side only keeps its own recovery terms.

    Parameters
    ----------
    old : Mapping[str, Any]
        OLD's case dict.
    new : Mapping[str, Any]
        NEW's case dict.
    from_new : Iterable[str]
        Names of the blocks taken from NEW.

    Returns
    -------
    dict[str, Any]
        The hybrid case dict (copies; neither input is changed).
    """
    chosen = set(from_new)
    out: dict[str, Any] = {key: copy.deepcopy(new[key]) for key in PRESENTATION_KEYS if key in new}
    out["scenarios"] = []
    out.pop("review", None)
    for block in BLOCKS:
        source = new if block.name in chosen else old
        for key in _keys_of(block, old, new):
            if key in source:
                out[key] = copy.deepcopy(source[key])
    terms = new if "facilities" in chosen else old
    recovery = {f["id"]: f for f in (new if "recovery" in chosen else old).get("facilities", [])}
    facilities = []
    for f in terms.get("facilities", []):
        f = copy.deepcopy(f)
        if f["id"] in recovery:  # a facility on one side only keeps its own recovery terms
            for name in RECOVERY_FIELDS:
                if name in recovery[f["id"]]:
                    f[name] = copy.deepcopy(recovery[f["id"]][name])
                else:
                    f.pop(name, None)
        facilities.append(f)
    out["facilities"] = facilities
    return out
