"""Roll a reviewed case forward: the new case starts from the last one and records it.

The new case keeps every input of the previous one (the analyst then adds the year's statements
and updates facilities and assumptions) and gains ``review.previous``: the previous inputs, their
fingerprint, the engine version and key figures of that review and its approval date. The
previous case's own ``review.previous`` moves to ``review.history`` (without its inputs), so the
chain of approvals stays visible years on. Sign-off names are cleared: it is a new review.
"""

from __future__ import annotations

import copy
from collections.abc import Mapping
from typing import Any

from obligor_memo.engine import ENGINE_VERSION
from obligor_memo.engine.case import Case, case_to_dict

HISTORY_KEPT = 20


def roll_forward(
    previous: Case,
    *,
    approved_on: str | None = None,
    fingerprint: str | None = None,
    engine_version: str | None = None,
    figures: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """The new case dict started from ``previous``; figures default to those computed now.

    Parameters
    ----------
    previous : Case
        The case of the last review.
    approved_on : str | None, optional
        Date the previous case was approved (text); None leaves it unset.
    fingerprint : str | None, optional
        Fingerprint of the approved case; None computes it from ``previous``.
    engine_version : str | None, optional
        Engine version of the approved figures; None for this engine.
    figures : Mapping[str, Any] | None, optional
        Key figures approved; None computes them now from ``previous`` (with this engine's version).

    Returns
    -------
    dict[str, Any]
        The new case, as a dict.
    """
    from obligor_memo.engine.compare import key_figures
    from obligor_memo.engine.evaluate import evaluate
    from obligor_memo.engine.evaluate import fingerprint as case_fingerprint

    if figures is None:
        figures, engine_version = key_figures(evaluate(previous, detail=False)), ENGINE_VERSION
    old = case_to_dict(previous)
    inputs = copy.deepcopy(old)
    inputs.pop("review", None)
    history: list[dict[str, Any]] = []
    if old.get("review"):
        before = old["review"].get("previous")
        if before:
            history.append({k: v for k, v in before.items() if k != "case"})
        history.extend(old["review"].get("history") or [])
    new = copy.deepcopy(old)
    new["review"] = {
        "previous": {
            "fingerprint": fingerprint or case_fingerprint(previous),
            "engine_version": engine_version or ENGINE_VERSION,
            "approved_on": approved_on,
            "figures": dict(figures),
            "case": inputs,
        },
        "history": history[:HISTORY_KEPT],
    }
    new["memo"] = {**new["memo"], "reviewed_by": "", "approved_by": ""}
    return new
