"""The Shapley value of a cooperative game, exactly, by the formula over subsets.

Shapley, "A value for n-person games", Contributions to the Theory of Games II (1953):
phi_i = sum over S in N minus {i} of |S|! (n - |S| - 1)! / n! x (v(S + i) - v(S)).
Computed in rationals (fractions.Fraction), so efficiency holds exactly before rounding.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Hashable, Sequence
from fractions import Fraction
from itertools import combinations
from typing import Any, TypeVar

P = TypeVar("P", bound=Hashable)
"""A player of the game (any hashable value)."""


def shapley_values(players: Sequence[P], value: Callable[[frozenset], Any]) -> dict[P, Fraction]:
    """Exact Shapley values of a cooperative game, in rationals, by the formula over subsets.

    ``value(S)`` is the worth of coalition S (a frozenset of players) as a float or Fraction;
    each coalition is asked once. Efficiency holds exactly: the values sum to v(N) - v(empty).

    Parameters
    ----------
    players : Sequence[P]
        The players, each hashable.
    value : Callable[[frozenset], Any]
        Worth v(S) of a coalition S (a frozenset of players), as a float or Fraction.

    Returns
    -------
    dict[P, Fraction]
        Exact Shapley value of each player.
    """
    n = len(players)
    worth: dict[frozenset, Fraction] = {}
    for size in range(n + 1):
        for combo in combinations(players, size):
            s = frozenset(combo)
            worth[s] = Fraction(value(s))
    fact = [math.factorial(k) for k in range(n + 1)]
    result: dict[P, Fraction] = {}
    for player in players:
        others = [p for p in players if p != player]
        total = Fraction(0)
        for size in range(n):
            weight = Fraction(fact[size] * fact[n - size - 1], fact[n])
            for combo in combinations(others, size):
                s = frozenset(combo)
                total += weight * (worth[s | {player}] - worth[s])
        result[player] = total
    return result


def floats_summing_to(shares: dict[P, Fraction], total: float) -> dict[P, float]:
    """Round exact shares to floats, the rounding left over going to the largest share.

    The float shares then add (math.fsum) to ``total`` up to its last bit.

    Parameters
    ----------
    shares : dict[P, Fraction]
        Exact share of each player.
    total : float
        The total the floats must add up to.

    Returns
    -------
    dict[P, float]
        Float share of each player, adding up to ``total``.
    """
    out = {k: float(v) for k, v in shares.items()}
    if not out:
        return out
    residual = Fraction(total) - sum((Fraction(v) for v in out.values()), Fraction(0))
    if residual:
        biggest = max(out, key=lambda k: (abs(out[k]), str(k)))
        out[biggest] = float(Fraction(out[biggest]) + residual)
    return out
