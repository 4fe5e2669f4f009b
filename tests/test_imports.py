"""The engine stays pure: no front-end or data-frame library at module level."""

from __future__ import annotations

import ast
import json
import subprocess
import sys

import pytest
from conftest import ROOT

ENGINE = ROOT / "engine"
FORBIDDEN = {"streamlit", "plotly", "jinja2", "weasyprint", "pandas", "kaleido", "app"}
MODULES = sorted(p.stem for p in ENGINE.glob("*.py") if p.stem != "__init__")


def _module_level_imports(tree: ast.Module) -> set[str]:
    """Top-level package names imported outside any function or class body."""
    found: set[str] = set()
    stack: list[ast.AST] = list(tree.body)
    while stack:
        node = stack.pop()
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef, ast.Lambda)):
            continue  # a deferred import inside a function runs only when called
        if isinstance(node, ast.Import):
            found.update(alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            found.add(node.module.split(".")[0])
        stack.extend(ast.iter_child_nodes(node))  # if/try blocks at module level still count
    return found


def test_engine_has_modules() -> None:
    assert {"case", "loading", "statements", "trend", "structural", "exposure", "recovery", "loss", "evaluate"} <= set(
        MODULES
    )


@pytest.mark.parametrize("path", sorted(ENGINE.glob("*.py")), ids=lambda p: p.name)
def test_no_forbidden_import_at_module_level(path) -> None:
    imported = _module_level_imports(ast.parse(path.read_text(encoding="utf-8"), filename=str(path)))
    assert imported.isdisjoint(FORBIDDEN), imported & FORBIDDEN


def test_scanner_sees_imports_inside_module_level_blocks() -> None:
    tree = ast.parse("try:\n    import pandas as pd\nexcept ImportError:\n    pass\ndef f():\n    import plotly\n")
    assert _module_level_imports(tree) == {"pandas"}


def test_importing_every_engine_module_loads_no_forbidden_package() -> None:
    probe = (
        "import importlib, json, sys\n"
        f"for name in {MODULES!r}:\n"
        "    importlib.import_module('obligor_memo.engine.' + name)\n"
        "print(json.dumps(sorted({m.split('.')[0] for m in sys.modules})))\n"
    )
    done = subprocess.run([sys.executable, "-c", probe], cwd=ROOT, capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr
    loaded = set(json.loads(done.stdout.strip().splitlines()[-1]))
    assert loaded.isdisjoint(FORBIDDEN), loaded & FORBIDDEN
