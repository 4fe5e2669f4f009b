"""Scenarios: named sets of changes to a case, evaluated side by side with the base case.

A scenario's ``set`` maps dotted paths to new values, e.g.::

    pd.asset_growth: -0.05
    pd.default_point.long_term_share: 1.0
    facilities.RCF-1.ccf: 1.0            # a facility addressed by its id
    facilities.*.recovery.mean: 0.40     # every facility

:func:`apply_overrides` writes the values into the plain-data form of the case and validates the
result again with :func:`engine.case.parse_case`, so a scenario is held to exactly the rules of the
case file. Every problem is reported against the override that caused it, as
``<where>.set['<path>']``.

Rules (stated here because users meet them as messages):

* ``statements`` and ``scenarios`` cannot be changed: a scenario varies assumptions, not the
  borrower's history or the list of scenarios. A facility's ``id`` cannot be changed either.
* A path into a block the case leaves unset (a facility without ``recovery``, a case without
  ``pricing``) creates that block, but only when the same scenario sets every key the block requires
  (for a recovery block: both ``mean`` and ``std``); otherwise the message lists the keys missing.
  Setting a block's own path to null removes the block (e.g. ``facilities.TL-A.recovery: null``
  returns that facility to the seniority preset).
* ``facilities.*.<key>`` is applied before paths naming one facility, so a named facility's value
  wins whatever the order of the keys.
"""

from __future__ import annotations

import difflib
import typing
from dataclasses import dataclass, field
from typing import Any

from obligor_memo.engine.case import Case, Facility, ScenarioValue, case_to_dict, parse_case
from obligor_memo.engine.errors import CaseError, Problem
from obligor_memo.engine.evaluate import Results, evaluate
from obligor_memo.engine.results import ScenarioResult
from obligor_memo.engine.whatif_types import Headline, HeadlineDelta
from pydantic import BaseModel

_FROZEN_SECTIONS = ("statements", "scenarios")


# --------------------------------------------------------------------------- schema walking


def _submodel(annotation: Any) -> type[BaseModel] | None:
    """The pydantic model inside ``X`` or ``X | None``; None for scalars and lists."""
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    if typing.get_origin(annotation) in (list, dict):
        return None
    for arg in typing.get_args(annotation):
        found = _submodel(arg)
        if found is not None:
            return found
    return None


def _is_container(annotation: Any) -> bool:
    """True for lists and mappings (also inside ``X | None`` or ``Annotated``)."""
    if typing.get_origin(annotation) in (list, dict):
        return True
    return any(_is_container(arg) for arg in typing.get_args(annotation))


def _leaf_paths(model: type[BaseModel], prefix: str) -> list[str]:
    out: list[str] = []
    for name, info in model.model_fields.items():
        sub = _submodel(info.annotation)
        if sub is not None:
            out.extend(_leaf_paths(sub, f"{prefix}{name}."))
        elif not _is_container(info.annotation):
            out.append(prefix + name)
    return out


def valid_paths(case: Case) -> tuple[str, ...]:
    """Every path a scenario may set on this case (facilities by id and by ``*``).

    Parameters
    ----------
    case : Case
        The validated case.

    Returns
    -------
    tuple[str, ...]
        The paths: case sections first, then each facility key under ``*`` and under every id.
    """
    paths: list[str] = []
    for name, info in Case.model_fields.items():
        if name in _FROZEN_SECTIONS or name == "facilities":
            continue
        sub = _submodel(info.annotation)
        if sub is not None:
            paths.extend(_leaf_paths(sub, f"{name}."))
    facility_keys = [p for p in _leaf_paths(Facility, "") if p != "id"]
    for fid in ["*"] + [f.id for f in case.facilities]:
        paths.extend(f"facilities.{fid}.{key}" for key in facility_keys)
    return tuple(paths)


# --------------------------------------------------------------------------- applying overrides


@dataclass
class _Target:
    """Where one override lands: the dict holding the key, the key, the pydantic location."""

    holder: dict[str, Any]
    key: str
    location: str
    """As parse_case reports it, e.g. facilities[1].recovery.mean."""


@dataclass
class _Created:
    """An optional block the case leaves unset, created by a path into it."""

    model: type[BaseModel]
    holder: dict[str, Any]
    paths: list[str] = field(default_factory=list)


def _bad(where: str, path: str, value: Any, allowed: str) -> Problem:
    return Problem(f"{where}.set['{path}']", value, allowed)


def _split_facility(path: str, case: Case) -> tuple[list[int], str] | None:
    """(facility indices, the key path inside the facility), or None for an unknown id."""
    rest = path[len("facilities.") :]
    if rest.startswith("*."):
        return list(range(len(case.facilities))), rest[2:]
    # Longest id first: an id may itself contain a dot.
    for index, facility in sorted(enumerate(case.facilities), key=lambda p: -len(p[1].id)):
        if rest.startswith(facility.id + "."):
            return [index], rest[len(facility.id) + 1 :]
    return None


def _unknown(where: str, path: str, value: Any, case: Case, detail: str = "") -> Problem:
    near = difflib.get_close_matches(path, valid_paths(case), n=1, cutoff=0.5)
    hint = f"; did you mean '{near[0]}'?" if near else ""
    return _bad(where, path, value, f"a path to one value of the case{detail}{hint}")


def _walk(
    root: dict[str, Any],
    model: type[BaseModel],
    keys: list[str],
    location: str,
    created: dict[str, _Created],
    where: str,
    path: str,
    value: Any,
    case: Case,
) -> _Target | Problem:
    holder = root
    for depth, key in enumerate(keys):
        info = model.model_fields.get(key)
        if info is None:
            options = ", ".join(sorted(model.model_fields))
            return _unknown(where, path, value, case, f" ('{key}' is not a key here; the keys are {options})")
        here = f"{location}.{key}" if location else key
        if depth == len(keys) - 1:
            sub = _submodel(info.annotation)
            if sub is not None and value is not None:
                example = next(iter(sub.model_fields))
                return _bad(
                    where,
                    path,
                    value,
                    f"a single value: '{path}' is a block with keys "
                    f"{', '.join(sub.model_fields)}; set e.g. '{path}.{example}' "
                    "(or null to remove an optional block)",
                )
            if sub is None and _is_container(info.annotation):
                return _bad(
                    where,
                    path,
                    value,
                    f"a path to a single value: '{path}' is a list, "
                    "which a scenario cannot set; change it in the case itself",
                )
            return _Target(holder, key, here)
        sub = _submodel(info.annotation)
        if sub is None:
            return _unknown(where, path, value, case, f" ('{key}' holds a single value, not a block)")
        if holder.get(key) is None:
            # An unset optional block: created now, checked for its required keys afterwards.
            holder[key] = {}
            created[here] = _Created(sub, holder[key])
        if here in created:
            created[here].paths.append(path)
        holder, model, location = holder[key], sub, here
    raise AssertionError("unreachable: keys is never empty")


def _targets(
    data: dict[str, Any], case: Case, path: str, value: Any, where: str, created: dict[str, _Created]
) -> list[_Target] | Problem:
    if not isinstance(path, str) or not path or path.strip() != path:
        return _bad(where, str(path), value, "a dotted path without spaces, e.g. 'pd.asset_growth'")
    head = path.split(".", 1)[0]
    if head in _FROZEN_SECTIONS:
        return _bad(
            where,
            path,
            value,
            f"a path outside '{head}': a scenario changes assumptions, "
            "not the borrower's statements or the list of scenarios",
        )
    if head == "facilities":
        split = _split_facility(path, case)
        if split is None:
            ids = ", ".join(f.id for f in case.facilities)
            return _unknown(where, path, value, case, f" (facilities are addressed by id: {ids}, or * for all)")
        indices, inner = split
        keys = inner.split(".")
        if keys[0] == "id":
            return _bad(
                where,
                path,
                value,
                "a key other than 'id': facility ids identify the facilities across scenarios and cannot change",
            )
        out: list[_Target] = []
        for index in indices:
            found = _walk(
                data["facilities"][index], Facility, keys, f"facilities[{index}]", created, where, path, value, case
            )
            if isinstance(found, Problem):
                return found
            out.append(found)
        return out
    found = _walk(data, Case, path.split("."), "", created, where, path, value, case)
    return found if isinstance(found, Problem) else [found]


def apply_overrides(case: Case, overrides: typing.Mapping[str, ScenarioValue], *, where: str) -> Case:
    """A new case with ``overrides`` (dotted path -> value) applied and validated again.

    ``where`` names the source in messages, e.g. ``"scenarios[2]"``; every problem's field is
    ``f"{where}.set['{path}']"``. Raises :class:`~engine.errors.CaseError` for an unknown path
    (suggesting the nearest valid one), a path into ``statements`` or ``scenarios``, an
    incomplete new block, or a value the case schema does not allow. ``case`` is not changed.

    Parameters
    ----------
    case : Case
        The validated case; not changed.
    overrides : typing.Mapping[str, ScenarioValue]
        Dotted path -> value, e.g. ``{"pd.horizon_years": 3}``.
    where : str
        Where the overrides come from, named in messages (e.g. ``scenarios[2]``).

    Returns
    -------
    Case
        The new, validated case.

    Raises
    ------
    CaseError
        If the case cannot be read or evaluated (each problem names its field).
    """
    data = case_to_dict(case)  # a fresh dict: model_dump copies
    created: dict[str, _Created] = {}
    problems: list[Problem] = []
    located: list[tuple[str, str, Any]] = []  # (pydantic location, path, value)
    # Wildcards first so that a facility named explicitly wins whatever the key order.
    ordered = sorted(overrides.items(), key=lambda kv: not str(kv[0]).startswith("facilities.*."))
    for path, value in ordered:
        found = _targets(data, case, path, value, where, created)
        if isinstance(found, Problem):
            problems.append(found)
            continue
        for target in found:
            target.holder[target.key] = value
            located.append((target.location, path, value))
    for block in created.values():
        required = [n for n, info in block.model.model_fields.items() if info.is_required()]
        missing = [n for n in required if n not in block.holder]
        if block.holder and missing:
            path = block.paths[0]
            base = path[: len(path) - len(path.split(".")[-1]) - 1]
            problems.append(
                _bad(
                    where,
                    path,
                    overrides.get(path),
                    (
                        f"'{base}' is not set in the case, so this change creates it; set all of "
                        f"{', '.join(base + '.' + n for n in required)} in the same scenario "
                        f"(missing: {', '.join(missing)})"
                    ),
                )
            )
    source = f"change set {where}"
    if problems:
        raise CaseError(problems, source=source)
    try:
        return parse_case(data, source=source)
    except CaseError as exc:
        raise CaseError(remap_problems(exc.problems, located, where), source=source) from None


def _tokens(location: str) -> list[str]:
    return [t for t in location.replace("[", ".[").split(".") if t]


def remap_problems(
    problems: typing.Iterable[Problem], located: list[tuple[str, str, Any]], where: str
) -> list[Problem]:
    """Attribute each case-level problem to the override whose location is nearest to it.

    ``located`` holds (pydantic location, override path, value). A problem sharing no leading
    location with any override goes to the single override, or else to ``<where>.set`` as a whole.
    Identical problems (a wildcard hitting several facilities) are reported once.

    Parameters
    ----------
    problems : typing.Iterable[Problem]
        The case-level problems of the case with the overrides applied.
    located : list[tuple[str, str, Any]]
        (pydantic location, override path, value) of each override.
    where : str
        Where the overrides come from, named in messages (e.g. ``scenarios[2]``).

    Returns
    -------
    list[Problem]
        The problems with fields under ``<where>.set``.
    """
    out: list[Problem] = []
    for p in problems:
        field_tokens = _tokens(p.field)
        best, score = [], 0
        for location, path, value in located:
            loc_tokens = _tokens(location)
            common = 0
            for a, b in zip(field_tokens, loc_tokens):
                if a != b:
                    break
                common += 1
            if common > score:
                best, score = [(location, path, value)], common
            elif common == score and common > 0 and path not in [b[1] for b in best]:
                best.append((location, path, value))
        if not best and len({path for _, path, _ in located}) == 1:
            best = located[:1]
        if not best:
            out.append(
                Problem(
                    f"{where}.set",
                    p.value,
                    f"{p.allowed} (the case check on '{p.field}' fails with this scenario's changes)",
                )
            )
            continue
        location, path, value = best[0]
        if location == p.field:
            out.append(_bad(where, path, p.value, p.allowed))
            continue
        others = [b[1] for b in best[1:]]
        together = f" together with {', '.join(repr(o) for o in others)}" if others else ""
        out.append(
            _bad(where, path, value, f"{p.allowed} (the case check on '{p.field}' fails after this change{together})")
        )
    return list(dict.fromkeys(out))


# --------------------------------------------------------------------------- evaluating scenarios


_NUMERIC = (
    "pd",
    "model_pd",
    "distance_to_default",
    "default_point",
    "asset_growth",
    "asset_volatility",
    "ead",
    "expected_loss",
    "el_rate",
    "unexpected_loss",
    "rwa",
    "economic_capital",
    "raroc",
)


def headline_figures(results: Results) -> Headline:
    """The headline figures of one evaluated case.

    Parameters
    ----------
    results : Results
        An evaluation.

    Returns
    -------
    Headline
        PD, distance to default, grade, EAD, EL, UL, RWA, economic capital and RAROC of the case.
    """
    pd, total = results.pd, results.total
    return Headline(
        pd=pd.pd,
        model_pd=pd.model_pd,
        distance_to_default=pd.distance_to_default,
        default_point=pd.default_point,
        asset_growth=pd.asset_growth,
        asset_volatility=pd.asset_volatility,
        grade=pd.grade,
        ead=total.ead,
        expected_loss=total.expected_loss,
        el_rate=total.el_rate,
        unexpected_loss=total.unexpected_loss,
        rwa=total.rwa,
        economic_capital=total.economic_capital,
        raroc=results.pricing.raroc if results.pricing is not None else None,
    )


def headline_delta(scenario: Headline, base: Headline) -> HeadlineDelta:
    """Scenario minus base for each numeric headline figure.

    Parameters
    ----------
    scenario : Headline
        The scenario's headline figures.
    base : Headline
        The base case's headline figures.

    Returns
    -------
    HeadlineDelta
        Each difference, in the figure's unit; None where either side is None.
    """
    values: dict[str, Any] = {}
    for name in _NUMERIC:
        a, b = getattr(scenario, name), getattr(base, name)
        values[name] = None if a is None or b is None else a - b
    return HeadlineDelta(**values, grade_changed=scenario.grade != base.grade)


def checked_base(case: Case, base: Results) -> Results:
    """Check that ``base`` is the evaluation of ``case``.

    The scenario and sensitivity settings may differ, as they do not enter evaluate().

    Parameters
    ----------
    case : Case
        The validated case.
    base : Results
        An evaluation to check.

    Returns
    -------
    Results
        ``base``, checked.

    Raises
    ------
    ValueError
        If ``base`` is the evaluation of a different case.
    """
    unused = {"scenarios": [], "sensitivity": case.sensitivity}
    if base.case.model_copy(update=unused) != case.model_copy(update=unused):
        raise ValueError(
            "base: got the results of a different case; allowed: evaluate(case) of this very case, or None"
        )
    return base


def evaluate_scenarios(case: Case, base: Results | None = None) -> tuple[ScenarioResult, ...]:
    """Apply and evaluate each of ``case.scenarios``; ``base`` saves re-evaluating the base case.

    A scenario that does not validate (or that the engine cannot evaluate) raises
    :class:`~engine.errors.CaseError` whose fields start ``scenarios[i].set[...]`` and whose
    source names the scenario.

    Parameters
    ----------
    case : Case
        The validated case.
    base : Results | None, optional
        The case's evaluation, if already computed; None evaluates it here.

    Returns
    -------
    tuple[ScenarioResult, ...]
        One result per scenario, in case order.

    Raises
    ------
    CaseError
        If the case cannot be read or evaluated (each problem names its field).
    """
    if not case.scenarios:
        return ()
    base = checked_base(case, base) if base is not None else evaluate(case)
    base_figures = headline_figures(base)
    out: list[ScenarioResult] = []
    for index, scenario in enumerate(case.scenarios):
        where = f"scenarios[{index}]"
        label = f"scenario '{scenario.name}' ({where})"
        try:
            changed = apply_overrides(case, scenario.set, where=where)
        except CaseError as exc:
            raise CaseError(exc.problems, source=label) from None
        try:
            results = evaluate(changed)
        except CaseError as exc:
            raise CaseError(
                remap_problems(exc.problems, _locations(case, scenario.set, where), where), source=label
            ) from None
        figures = headline_figures(results)
        out.append(
            ScenarioResult(
                name=scenario.name,
                description=scenario.description,
                overrides=tuple(scenario.set.items()),
                figures=figures,
                base=base_figures,
                delta=headline_delta(figures, base_figures),
                results=results,
            )
        )
    return tuple(out)


def _locations(case: Case, overrides: typing.Mapping[str, Any], where: str) -> list[tuple[str, str, Any]]:
    """The pydantic locations of valid overrides (for attributing engine-level problems)."""
    data = case_to_dict(case)  # a fresh dict: model_dump copies
    out: list[tuple[str, str, Any]] = []
    for path, value in overrides.items():
        found = _targets(data, case, path, value, where, {})
        if not isinstance(found, Problem):
            out.extend((t.location, path, value) for t in found)
    return out
