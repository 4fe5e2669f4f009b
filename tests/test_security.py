"""Security habits, checked: local binding by default, no code execution from user data.

- The workbench binds 127.0.0.1 unless told otherwise, and says so loudly when it is not loopback.
- No module unpickles, evals or execs anything, and YAML is only ever read with a safe loader:
  user data (case files, uploads, autosaves) is data, never code.
"""

from __future__ import annotations

import ast
import subprocess
from pathlib import Path

import pytest
from obligor_memo.app.workbench import serve as serve_module
from obligor_memo.app.workbench.serve import is_loopback, streamlit_command

ROOT = Path(__file__).resolve().parents[1]
SOURCES = sorted((ROOT / "engine").glob("*.py")) + sorted((ROOT / "app").rglob("*.py"))


def test_the_default_binding_is_loopback() -> None:
    import inspect

    from obligor_memo.app.cli import app as app_command

    default_host = next(p.default for p in app_command.params if p.name == "host")
    assert default_host == "127.0.0.1"
    assert inspect.signature(serve_module.serve).parameters["host"].default == "127.0.0.1"
    argv = streamlit_command(port=8600, host="127.0.0.1")
    assert argv[argv.index("--server.address") + 1] == "127.0.0.1"
    assert argv[argv.index("--browser.gatherUsageStats") + 1] == "false"
    assert argv[argv.index("--server.headless") + 1] == "true"


@pytest.mark.parametrize(
    ("host", "loopback"),
    [
        ("127.0.0.1", True),
        ("localhost", True),
        ("::1", True),
        ("127.0.0.2", True),
        ("0.0.0.0", False),
        ("192.0.2.10", False),
        ("example.invalid", False),
    ],
)
def test_loopback_is_recognised(host: str, loopback: bool) -> None:
    # 127.0.0.0/8 and ::1 are loopback (RFC 1122 section 3.2.1.3; RFC 4291 section 2.5.3).
    assert is_loopback(host) is loopback


def test_a_non_loopback_binding_is_announced(tmp_path: Path, monkeypatch, capsys) -> None:
    started: list[list[str]] = []

    class FakeProcess:
        def __init__(self, argv, *args, **kwargs):
            started.append(argv)
            self.returncode = 0

        def wait(self, *args, **kwargs):
            return 0

        def poll(self):
            return 0

        def terminate(self):
            pass

        def kill(self):
            pass

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            return False

    monkeypatch.setattr(subprocess, "Popen", FakeProcess)
    monkeypatch.setattr(subprocess, "call", lambda argv, *a, **k: started.append(argv) or 0)
    monkeypatch.setattr(
        subprocess, "run", lambda argv, *a, **k: started.append(argv) or subprocess.CompletedProcess(argv, 0)
    )
    serve_module.serve(port=8601, host="0.0.0.0", workdir=tmp_path)
    err = capsys.readouterr().err
    assert "WARNING" in err and "0.0.0.0" in err and "network" in err
    assert started and started[0][started[0].index("--server.address") + 1] == "0.0.0.0"


def _calls(tree: ast.AST) -> list[tuple[str, ast.Call]]:
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            func = node.func
            if isinstance(func, ast.Name):
                out.append((func.id, node))
            elif isinstance(func, ast.Attribute):
                base = func.value.id if isinstance(func.value, ast.Name) else ""
                out.append((f"{base}.{func.attr}" if base else func.attr, node))
    return out


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(ROOT)))
def test_no_code_execution_from_data(path: Path) -> None:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    imported = {
        alias.name.split(".")[0]
        for node in ast.walk(tree)
        if isinstance(node, (ast.Import, ast.ImportFrom))
        for alias in (node.names if isinstance(node, ast.Import) else [ast.alias(node.module or "")])
    }
    assert not imported & {"pickle", "marshal", "shelve", "dill", "cloudpickle"}, path
    for name, call in _calls(tree):
        assert name not in {"eval", "exec", "compile", "__import__"}, (path, call.lineno)
        if name in {"yaml.load", "load"} and name.startswith("yaml"):
            loader = {kw.arg: kw.value for kw in call.keywords}.get("Loader")
            assert loader is not None, (path, call.lineno)
        assert name not in {"yaml.unsafe_load", "yaml.full_load"}, (path, call.lineno)


def test_the_yaml_loader_is_a_safe_loader() -> None:
    import yaml
    from obligor_memo.engine import loading

    assert issubclass(loading._StrictLoader, yaml.SafeLoader)
    from obligor_memo.engine.errors import CaseError

    # A Python object tag is refused, not constructed.
    with pytest.raises(CaseError):
        loading.load_case_text("borrower: !!python/object/apply:os.system ['echo hacked']\n", "c.yaml")
