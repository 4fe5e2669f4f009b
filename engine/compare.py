r"""What changed since the last review, and why: the change in each key figure split by cause.

Two validated cases, OLD and NEW, are compared through their inputs grouped in blocks
(:data:`BLOCKS`, defined by case-dict paths in one table). A *hybrid* case takes the inputs of a
set S of blocks from NEW and every other block from OLD; v(S) is a key figure of the hybrid.
Each block's share of a figure's change is its Shapley value in that game (Shapley, "A value
for n-person games", 1953), computed exactly over the subsets rather than the orderings:

    phi_i = sum over S in N \ {i} of |S|! (n - |S| - 1)! / n! x (v(S + i) - v(S))

so n changed blocks cost 2^n light evaluations (``evaluate(case, detail=False)``; at most 6 input
blocks, 64 evaluations). Blocks whose inputs are equal are null players (share exactly 0) and are
left out of the game. The arithmetic is done in exact rationals; the float shares are then
adjusted by the last rounding so that they sum to the float change (``new - old``).

Hybrids that do not validate: a facility present on one side only carries its own recovery
terms in every hybrid, so facility lists always mix. Any other conflict (e.g. a PD window longer
than the statements of the other side) joins blocks: the smallest failing coalition (fewest
blocks, then table order) is joined with the first block outside it that makes it validate, or
with every other block when none does; the search repeats until every coalition of the joined
groups validates. Joined blocks are reported as one row.

Engine versions: when OLD's figures were recorded by another engine version, OLD is recomputed
with this engine and the difference (recomputed - recorded) is the block "engine": the old
engine cannot be run on hybrids, so this player is taken as additive (no interaction), which is
its Shapley value in that extended game.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from itertools import combinations
from typing import Any

from obligor_memo.engine import ENGINE_VERSION
from obligor_memo.engine.case import Case, case_to_dict, parse_case
from obligor_memo.engine.compare_blocks import BLOCKS, ENGINE_BLOCK, Block, changed_paths, hybrid_case_dict, other_keys
from obligor_memo.engine.errors import CaseError
from obligor_memo.engine.shapley import floats_summing_to, shapley_values

__all__ = [
    "BLOCKS",
    "FIGURES",
    "Block",
    "BlockShare",
    "Comparison",
    "RecordedFigures",
    "compare_cases",
    "key_figures",
    "shapley_values",
    "changed_paths",
    "hybrid_case_dict",
]


# --------------------------------------------------------------------------- the figures


def _attr(path: str) -> Callable[[Any], Any]:
    """A reader of ``a.b.c`` on a Results object that gives None where any part is missing."""
    parts = path.split(".")

    def read(results: Any) -> Any:
        value = results
        for part in parts:
            value = getattr(value, part, None)
            if value is None:
                return None
        return value

    return read


def _covenant_headroom(results: Any) -> float | None:
    """The tightest covenant headroom, when the engine reports covenants with a headroom."""
    items = getattr(results, "covenants", None)
    values = [getattr(c, "headroom", None) for c in items or ()]
    numbers = [float(v) for v in values if isinstance(v, (int, float)) and math.isfinite(v)]
    return min(numbers) if numbers else None


@dataclass(frozen=True)
class Figure:
    """One key figure a comparison reports, and how it is read off a Results object."""

    name: str
    """JSON key."""
    label: str
    """Words for people."""
    kind: str
    """How it is formatted: ``pd``, ``money``, ``rate`` or ``text``."""
    read: Callable[[Any], Any] = field(repr=False, compare=False)
    """Reads the figure off a Results object (None where it is not reported)."""


FIGURES: tuple[Figure, ...] = (
    Figure("grade", "Grade", "text", _attr("pd.grade")),
    Figure("pd", "PD in force", "pd", _attr("pd.pd")),
    Figure("ead", "EAD", "money", _attr("total.ead")),
    Figure("expected_loss", "Expected loss", "money", _attr("total.expected_loss")),
    Figure("unexpected_loss", "Unexpected loss", "money", _attr("total.unexpected_loss")),
    Figure("rwa", "RWA", "money", _attr("total.rwa")),
    Figure("regulatory_capital", "Regulatory capital", "money", _attr("total.regulatory_capital")),
    Figure("economic_capital", "Economic capital", "money", _attr("total.economic_capital")),
    Figure(
        "economic_capital_standalone",
        "Economic capital (standalone)",
        "money",
        _attr("total.economic_capital_standalone"),
    ),
    Figure("raroc", "RAROC", "rate", _attr("pricing.raroc")),
    Figure("minimum_spread", "Minimum spread", "rate", _attr("pricing.minimum_spread")),
    Figure("covenant_headroom", "Tightest covenant headroom", "rate", _covenant_headroom),
)
"""One mapping from Results to the compared figures; a figure an engine does not report is None."""
FIGURE_BY_NAME = {f.name: f for f in FIGURES}
NUMERIC = tuple(f.name for f in FIGURES if f.kind != "text")


def key_figures(results: Any) -> dict[str, float | str | None]:
    """Every figure of :data:`FIGURES` read off a Results object (None where not reported).

    Parameters
    ----------
    results : Any
        What ``evaluate`` returned (any object with the attributes the figures read).

    Returns
    -------
    dict[str, float | str | None]
        Figure name -> the grade as text, a finite number as a float, else None.
    """
    out: dict[str, float | str | None] = {}
    for f in FIGURES:
        value = f.read(results)
        if f.kind == "text":
            out[f.name] = None if value is None else str(value)
        elif isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value):
            out[f.name] = float(value)
        else:
            out[f.name] = None
    return out


# --------------------------------------------------------------------------- the comparison


@dataclass(frozen=True)
class RecordedFigures:
    """OLD's figures as recorded when it was printed (memo record or review.previous)."""

    engine_version: str
    """The engine version that computed the figures."""
    figures: Mapping[str, float | str | None]
    """Figure name -> value as recorded."""


@dataclass(frozen=True)
class BlockShare:
    """One row of the attribution: a block (or joined blocks) and its share of each figure's change."""

    block: str
    """Block name; joined blocks as ``a+b``."""
    label: str
    """Words for people."""
    changes: tuple[str, ...]
    """Case-dict paths that differ in this block."""
    deltas: dict[str, float | None]
    """Figure -> the block's share of its change (None: not attributable)."""


@dataclass(frozen=True)
class Comparison:
    """Key figures of OLD and NEW, their change and each block's share of it."""

    old: dict[str, float | str | None]
    """OLD's figures; as recorded when OLD came from another engine version."""
    new: dict[str, float | str | None]
    """NEW's figures."""
    old_recomputed: dict[str, float | str | None] | None
    """OLD recomputed with this engine (with the engine block); None: OLD's figures are this engine's."""
    change: dict[str, float | None]
    """new - old per numeric figure (None where a side does not report it as a number)."""
    attribution: tuple[BlockShare, ...]
    """One row per block (joined blocks as one), in table order; the engine block last when present."""
    grade: dict[str, Any]
    """Keys ``old``, ``new`` and ``direction`` (unchanged, changed or not graded)."""
    old_engine_version: str
    """The engine version OLD's figures come from."""
    engine_version: str
    """This engine's version."""
    evaluations: int
    """Cases evaluated (or refused as hybrids) for the comparison."""
    notes: tuple[str, ...]
    """Sentences on joined blocks, figures not split and the engine block."""
    method: str = "shapley"
    """How the change is split."""

    def main_cause(self, figure: str = "expected_loss") -> BlockShare | None:
        """The block with the largest absolute share of a figure's change (None: no change).

        Parameters
        ----------
        figure : str, optional
            Name of the figure (a key of :data:`FIGURES`).

        Returns
        -------
        BlockShare | None
            The first row with the largest absolute non-zero share; None when no row has one.
        """
        shares = [b for b in self.attribution if b.deltas.get(figure)]
        return max(shares, key=lambda b: abs(b.deltas[figure] or 0.0)) if shares else None

    def to_dict(self) -> dict[str, Any]:
        """The comparison as plain data (the JSON of ``compare --json``).

        Returns
        -------
        dict[str, Any]
            Figures, change, attribution rows (block, label, changes and each figure's share),
            method, evaluations, grade, engine versions and notes.
        """
        return {
            "old": dict(self.old),
            "new": dict(self.new),
            "change": dict(self.change),
            "attribution": [
                {"block": b.block, "label": b.label, "changes": list(b.changes), **b.deltas} for b in self.attribution
            ],
            "method": self.method,
            "evaluations": self.evaluations,
            "grade": dict(self.grade),
            "old_recomputed": None if self.old_recomputed is None else dict(self.old_recomputed),
            "old_engine_version": self.old_engine_version,
            "engine_version": self.engine_version,
            "notes": list(self.notes),
        }


def _direction(old: Any, new: Any) -> str:
    """How the grade moved: unchanged, changed, or not graded when a side has none."""
    if old is None or new is None:
        return "not graded"
    if old == new:
        return "unchanged"
    return "changed"


def compare_cases(
    old: Case,
    new: Case,
    *,
    old_recorded: RecordedFigures | None = None,
    evaluate_fn: Callable[[Case], Any] | None = None,
) -> Comparison:
    """Key figures of OLD and NEW and each block's Shapley share of every figure's change.

    Parameters
    ----------
    old : Case
        The case of the last review.
    new : Case
        The case now.
    old_recorded : RecordedFigures | None, optional
        OLD's figures as printed; used (with an engine block) when its engine version differs
        from this one. None: OLD is evaluated with this engine.
    evaluate_fn : Callable[[Case], Any] | None, optional
        Evaluates one case; None: ``evaluate(case, detail=False)``.

    Returns
    -------
    Comparison
        The figures, their change and its attribution by block.

    Raises
    ------
    CaseError
        If the two cases are in different currencies, or OLD or NEW cannot be evaluated.
    """
    if evaluate_fn is None:
        from obligor_memo.engine.evaluate import evaluate

        def evaluate_fn(case: Case) -> Any:
            return evaluate(case, detail=False)

    if old.borrower.currency != new.borrower.currency:
        raise CaseError.single(
            "borrower.currency",
            f"{old.borrower.currency} then, {new.borrower.currency} now",
            "the same currency in both cases (amounts in different currencies cannot be compared)",
        )
    a, b = case_to_dict(old), case_to_dict(new)
    blocks = [blk for blk in BLOCKS if blk.name != "other" or other_keys(a, b)]
    changes = {blk.name: tuple(changed_paths(blk, a, b)) for blk in blocks}
    players = [blk.name for blk in blocks if changes[blk.name]]
    labels = {blk.name: blk.label for blk in BLOCKS}
    cache: dict[frozenset, dict[str, Any] | CaseError] = {}

    def figures_of(subset: frozenset) -> dict[str, Any] | CaseError:
        if subset not in cache:
            if not subset:
                case = old
            elif subset == frozenset(players):
                case = new
            else:
                try:
                    case = parse_case(hybrid_case_dict(a, b, subset), source="hybrid case")
                except CaseError as exc:
                    cache[subset] = exc
                    return exc
            try:
                cache[subset] = key_figures(evaluate_fn(case))
            except CaseError as exc:
                if case is old or case is new:
                    raise
                cache[subset] = exc
        return cache[subset]

    groups = _join_failing(players, figures_of)
    notes: list[str] = []
    for g in groups:
        if len(g) > 1:
            notes.append(
                "Joined " + " + ".join(labels[p] for p in g) + ": the hybrid cases mixing "
                "them do not validate, so their shares are given together."
            )
    old_now, new_figs = figures_of(frozenset()), figures_of(frozenset(players))
    assert isinstance(old_now, dict) and isinstance(new_figs, dict)

    engine_delta: dict[str, Fraction] | None = None
    old_shown = dict(old_now)
    old_recomputed = None
    old_version = ENGINE_VERSION
    if old_recorded is not None and old_recorded.engine_version != ENGINE_VERSION:
        old_version = old_recorded.engine_version
        old_recomputed = dict(old_now)
        old_shown = {f.name: old_recorded.figures.get(f.name) for f in FIGURES}
        engine_delta = {}
        for name in NUMERIC:
            was, now = old_shown.get(name), old_now.get(name)
            if isinstance(was, (int, float)) and isinstance(now, (int, float)):
                engine_delta[name] = Fraction(now) - Fraction(was)
        notes.append(
            f"OLD was printed by engine {old_version}; it is recomputed with engine "
            f"{ENGINE_VERSION} and the difference is shown as the engine block."
        )

    group_names = ["+".join(g) for g in groups]
    per_block: dict[str, dict[str, float | None]] = {name: {} for name in group_names}
    engine_shares: dict[str, float | None] = {}
    change: dict[str, float | None] = {}
    for name in NUMERIC:
        was, now = old_shown.get(name), new_figs.get(name)
        if not (isinstance(was, float | int) and isinstance(now, float | int)):
            if was is not None or now is not None:
                change[name] = None
            for gname in group_names:
                per_block[gname][name] = None
            engine_shares[name] = None
            continue
        delta = now - was
        change[name] = delta
        values = {}
        defined = True
        for size in range(len(groups) + 1):
            for combo in combinations(range(len(groups)), size):
                s = frozenset(p for i in combo for p in groups[i])
                figs = figures_of(s)
                v = figs.get(name) if isinstance(figs, dict) else None
                if v is None:
                    defined = False
                values[frozenset(combo)] = v
        if not defined:
            notes.append(
                f"{FIGURE_BY_NAME[name].label}: not defined for every mix of old and new "
                "inputs, so its change is not split by cause."
            )
            for gname in group_names:
                per_block[gname][name] = None
            engine_shares[name] = None
            continue
        exact = shapley_values(list(range(len(groups))), lambda s: values[s])
        shares: dict[str, Fraction] = {group_names[i]: v for i, v in exact.items()}
        if engine_delta is not None:
            shares["engine"] = engine_delta.get(name, Fraction(0))
        rounded = floats_summing_to(shares, delta)
        for gname in group_names:
            per_block[gname][name] = rounded[gname]
        engine_shares[name] = rounded.get("engine", 0.0)

    rows: list[BlockShare] = []
    joined = {p for g in groups if len(g) > 1 for p in g}
    present = {name: i for i, name in enumerate(group_names)}
    for blk in blocks:
        if blk.name in joined:
            g = next(g for g in groups if blk.name in g)
            if g[0] == blk.name:
                rows.append(
                    BlockShare(
                        "+".join(g),
                        " + ".join(labels[p] for p in g),
                        tuple(c for p in g for c in changes[p]),
                        per_block["+".join(g)],
                    )
                )
            continue
        if blk.name in present:
            rows.append(BlockShare(blk.name, blk.label, changes[blk.name], per_block[blk.name]))
        elif blk.name != "other":
            rows.append(
                BlockShare(blk.name, blk.label, (), {n: (0.0 if change.get(n) is not None else None) for n in NUMERIC})
            )
    if engine_delta is not None:
        rows.append(
            BlockShare(ENGINE_BLOCK.name, f"{ENGINE_BLOCK.label}: {old_version} to {ENGINE_VERSION}", (), engine_shares)
        )
    # Figures that neither side reports are left out everywhere.
    shown = [f.name for f in FIGURES if old_shown.get(f.name) is not None or new_figs.get(f.name) is not None]
    rows = [BlockShare(r.block, r.label, r.changes, {n: r.deltas.get(n) for n in shown if n in NUMERIC}) for r in rows]
    evaluated = sum(1 for v in cache.values())
    return Comparison(
        old={n: old_shown.get(n) for n in shown},
        new={n: new_figs.get(n) for n in shown},
        old_recomputed=None if old_recomputed is None else {n: old_recomputed.get(n) for n in shown},
        change={n: change.get(n) for n in shown if n in NUMERIC},
        attribution=tuple(rows),
        grade={
            "old": old_shown.get("grade"),
            "new": new_figs.get("grade"),
            "direction": _direction(old_shown.get("grade"), new_figs.get("grade")),
        },
        old_engine_version=old_version,
        engine_version=ENGINE_VERSION,
        evaluations=evaluated,
        notes=tuple(notes),
    )


def _join_failing(players: list[str], figures_of: Callable[[frozenset], Any]) -> list[tuple[str, ...]]:
    """Groups of players such that every union of groups gives a valid hybrid (module docstring)."""
    groups: list[tuple[str, ...]] = [(p,) for p in players]
    while True:
        failing = None
        for size in range(1, len(groups)):
            for combo in combinations(range(len(groups)), size):
                s = frozenset(p for i in combo for p in groups[i])
                if isinstance(figures_of(s), CaseError):
                    failing = combo
                    break
            if failing is not None:
                break
        if failing is None:
            return groups
        inside = set(failing)
        partner = None
        for j in range(len(groups)):
            if j in inside:
                continue
            s = frozenset(p for i in (*failing, j) for p in groups[i])
            if not isinstance(figures_of(s), CaseError):
                partner = j
                break
        merge = inside | ({partner} if partner is not None else set(range(len(groups))))
        order = {p: k for k, p in enumerate(players)}
        merged = tuple(sorted((p for i in merge for p in groups[i]), key=order.__getitem__))
        groups = [g for i, g in enumerate(groups) if i not in merge] + [merged]
        groups.sort(key=lambda g: order[g[0]])
