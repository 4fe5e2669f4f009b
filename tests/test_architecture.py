"""The front end's imports run one way and nothing imports in a circle.

The import-linter contracts live in pyproject.toml ([tool.importlinter]). The repository keeps
engine/ and app/ at the top while the package installs them as obligor_memo.engine and
obligor_memo.app; import-linter (grimp) reads a package from one folder, so the test lays the
sources out as installed, in a temporary folder, and runs the contracts and a cycle search there.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def installed_layout(tmp_path_factory) -> Path:
    base = tmp_path_factory.mktemp("layout")
    package = base / "obligor_memo"
    shutil.copytree(ROOT / "obligor_memo", package, ignore=shutil.ignore_patterns("__pycache__"))
    for folder in ("engine", "app", "templates", "sample_data"):
        shutil.copytree(
            ROOT / folder, package / folder, ignore=shutil.ignore_patterns("__pycache__", "*.js", "*.csv", "*.yaml")
        )
    shutil.copy(ROOT / "pyproject.toml", base / "pyproject.toml")
    return base


def _run(code: list[str], cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        code,
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=300,
        env={"PYTHONPATH": str(cwd), "PATH": "/usr/bin:/bin", "HOME": str(cwd)},
    )


def test_import_contracts_hold(installed_layout):
    lint = Path(sys.executable).parent / "lint-imports"
    done = _run([str(lint), "pyproject.toml", "--no-cache"], installed_layout)
    assert done.returncode == 0, done.stdout[-3000:] + done.stderr[-2000:]
    assert "0 broken" in done.stdout and "2 kept" in done.stdout, done.stdout[-2000:]


CYCLES = r"""
import json, sys
import grimp
graph = grimp.build_graph("obligor_memo", cache_dir=None)
modules = sorted(graph.modules)
edges = {m: sorted(graph.find_modules_directly_imported_by(m)) for m in modules}
# A package's __init__ re-exporting its children is not a cycle unless a child imports the
# package back; every module-to-module edge counts, including those to and from packages.
index, low, stack, on, sccs, counter = {}, {}, [], set(), [], [0]
sys.setrecursionlimit(10000)
def visit(v):
    index[v] = low[v] = counter[0]; counter[0] += 1; stack.append(v); on.add(v)
    for w in edges.get(v, ()):
        if w not in index:
            visit(w); low[v] = min(low[v], low[w])
        elif w in on:
            low[v] = min(low[v], index[w])
    if low[v] == index[v]:
        comp = []
        while True:
            w = stack.pop(); on.discard(w); comp.append(w)
            if w == v: break
        if len(comp) > 1: sccs.append(sorted(comp))
for m in modules:
    if m not in index: visit(m)
print(json.dumps({"modules": len(modules), "cycles": sccs}))
"""


def test_no_import_cycle_anywhere(installed_layout):
    done = _run([sys.executable, "-c", CYCLES], installed_layout)
    assert done.returncode == 0, done.stderr[-3000:]
    found = json.loads(done.stdout.strip().splitlines()[-1])
    assert found["modules"] > 40
    assert found["cycles"] == [], found["cycles"]


def test_cycle_search_finds_a_planted_cycle(tmp_path):
    """The search is not vacuous: two modules importing each other are reported."""
    package = tmp_path / "obligor_memo"
    package.mkdir()
    (package / "__init__.py").write_text("")
    (package / "a.py").write_text("from obligor_memo import b\n")
    (package / "b.py").write_text("from obligor_memo import a\n")
    done = _run([sys.executable, "-c", CYCLES], tmp_path)
    assert done.returncode == 0, done.stderr[-3000:]
    assert json.loads(done.stdout.strip().splitlines()[-1])["cycles"] == [["obligor_memo.a", "obligor_memo.b"]]
