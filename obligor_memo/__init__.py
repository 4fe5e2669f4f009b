"""obligor-memo: one corporate borrower's expected-loss case, from statements to a printed memo.

The repository keeps its two rooms at the top (``engine/`` for computation, ``app/`` for what
users touch); installed, both live under this one package, so nothing else lands at the top of
site-packages::

    from obligor_memo import load_case, evaluate, analyse
    results = analyse(load_case("sample_data/hollowmere.yaml"))

The public names load on first use, so ``import obligor_memo.engine.errors`` stays light.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

__all__ = ["load_case", "load_case_text", "parse_case", "evaluate", "analyse", "Results", "CaseError", "__version__"]

_PUBLIC = {
    "load_case": "obligor_memo.engine.loading",
    "load_case_text": "obligor_memo.engine.loading",
    "parse_case": "obligor_memo.engine.case",
    "evaluate": "obligor_memo.engine.evaluate",
    "Results": "obligor_memo.engine.evaluate",
    "analyse": "obligor_memo.engine.analysis",
    "CaseError": "obligor_memo.engine.errors",
}

if TYPE_CHECKING:  # pragma: no cover - for type checkers and editors only
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.case import parse_case
    from obligor_memo.engine.errors import CaseError
    from obligor_memo.engine.evaluate import Results, evaluate
    from obligor_memo.engine.loading import load_case, load_case_text


def __getattr__(name: str) -> Any:
    if name == "__version__":
        from obligor_memo.engine import ENGINE_VERSION

        return ENGINE_VERSION
    if name in _PUBLIC:
        value = getattr(importlib.import_module(_PUBLIC[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'obligor_memo' has no attribute {name!r}")
