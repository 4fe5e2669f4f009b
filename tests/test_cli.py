"""The command-line contract (DESIGN.md section 3), run as a user would run it."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import ROOT, SAMPLE_CASE, VENV_BIN, minimal_case_dict, write_case

CONTRACT = {
    "pd": {
        "method",
        "asset_value",
        "asset_growth",
        "asset_volatility",
        "default_point",
        "distance_to_default",
        "pd",
        "horizon_years",
        "grade",
    },
    "facility": {"id", "ead", "ccf", "lgd", "expected_loss", "unexpected_loss", "risk_weight", "rwa"},
    "total": {"ead", "expected_loss", "unexpected_loss", "rwa", "economic_capital"},
}


# Runs evaluate in-process with click's CliRunner inside a fresh interpreter, then lists
# sys.modules: starting the command must not import the heavy front-end libraries.
_MODULES_PROBE = (
    "import sys, json\n"
    "from click.testing import CliRunner\n"
    "import obligor_memo.app.cli\n"
    f"result = CliRunner().invoke(obligor_memo.app.cli.main, ['evaluate', {str(SAMPLE_CASE)!r}, '--json'])\n"
    "assert result.exit_code == 0, result.output\n"
    "json.loads(result.output)\n"
    "print(json.dumps(sorted({m.split('.')[0] for m in sys.modules})))\n"
)


def _command() -> list[str]:
    script = VENV_BIN / "obligor-memo"
    return [str(script)] if script.exists() else [sys.executable, "-m", "obligor_memo.app.cli"]


@pytest.fixture(scope="module")
def runs(tmp_path_factory) -> dict[str, subprocess.CompletedProcess[str]]:
    """The real command, started once per scenario and all at once (each start loads scipy)."""
    folder = tmp_path_factory.mktemp("cli")
    bad = minimal_case_dict()
    bad["borrower"]["currency"] = "euro"
    scenarios = {
        "table": ["evaluate", str(SAMPLE_CASE)],
        "json": ["evaluate", str(SAMPLE_CASE), "--json"],
        "bad": ["evaluate", str(write_case(folder, bad, "case.yaml")), "--json"],
    }
    commands = {name: [*_command(), *args] for name, args in scenarios.items()}
    commands["modules"] = [sys.executable, "-c", _MODULES_PROBE]
    started = {
        name: subprocess.Popen(command, cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        for name, command in commands.items()
    }
    done = {}
    for name, process in started.items():
        out, err = process.communicate(timeout=120)
        done[name] = subprocess.CompletedProcess(process.args, process.returncode, out, err)
    return done


@pytest.fixture(scope="module")
def sample_json(runs) -> dict:
    done = runs["json"]
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


def invoke(*args: str):
    """In-process run through click's test runner (same code path, no interpreter start)."""
    from click.testing import CliRunner
    from obligor_memo.app.cli import main

    return CliRunner().invoke(main, list(args))


def test_sample_prints_a_readable_table(runs) -> None:
    done = runs["table"]
    assert done.returncode == 0, done.stderr
    assert done.stderr == ""
    text = done.stdout
    assert "Hollowmere Lifting Group" in text
    for label in ("distance to default", "PD in force", "EAD", "total", "Economic capital"):
        assert label in text
    for facility in ("TL-A", "RCF-1", "NOTE-29", "GTE-SF", "LC-IMP"):
        assert facility in text
    assert "not a credit decision" in text


def test_json_has_the_contract_keys(sample_json) -> None:
    assert CONTRACT["pd"] <= set(sample_json["pd"])
    assert len(sample_json["facilities"]) == 5
    for facility in sample_json["facilities"]:
        assert CONTRACT["facility"] <= set(facility)
    assert CONTRACT["total"] <= set(sample_json["total"])


def test_json_values_are_consistent(sample_json) -> None:
    pd, total, facilities = sample_json["pd"], sample_json["total"], sample_json["facilities"]
    assert pd["method"] == "balance_sheet" and pd["horizon_years"] == 1.0
    assert 0 < pd["pd"] < 1 and isinstance(pd["grade"], str)
    assert total["ead"] == pytest.approx(sum(f["ead"] for f in facilities), rel=1e-12)
    assert total["expected_loss"] == pytest.approx(sum(f["expected_loss"] for f in facilities), rel=1e-12)
    assert total["rwa"] == pytest.approx(sum(f["rwa"] for f in facilities), rel=1e-12)
    for f in facilities:
        assert 0 <= f["ccf"] <= 1 and 0 <= f["lgd"] <= 1
        assert f["expected_loss"] <= f["ead"]


def test_bad_case_exits_2_with_one_paragraph(runs) -> None:
    done = runs["bad"]
    assert done.returncode == 2
    assert done.stdout == ""
    message = done.stderr.strip()
    assert "\n" not in message  # one paragraph
    assert "borrower.currency" in message and "'euro'" in message and "ISO 4217" in message
    assert "Traceback" not in done.stderr


@pytest.mark.parametrize(
    ("text", "field"),
    [
        ("borrower: {name: A, currency: EUR\n", "case.yaml, line 2"),
        ("borrower: {name: A, name: B}\n", "case.yaml, line 1"),
    ],
)
def test_broken_yaml_exits_2(tmp_path: Path, text: str, field: str) -> None:
    path = tmp_path / "case.yaml"
    path.write_text(text)
    result = invoke("evaluate", str(path))
    assert result.exit_code == 2
    assert field in result.stderr and "Traceback" not in result.output
    assert result.exception is None or isinstance(result.exception, SystemExit)


def test_missing_case_file_exits_2(tmp_path: Path) -> None:
    result = invoke("evaluate", str(tmp_path / "absent.yaml"))
    assert result.exit_code == 2
    assert "CASE" in result.stderr and "absent.yaml" in result.stderr


def test_engine_bug_is_reported_without_traceback(monkeypatch) -> None:
    # An internal failure gets exit 3 and a short report, never a traceback on the user's screen.
    from obligor_memo.engine import analysis as engine_analysis

    def broken(case, base=None):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(engine_analysis, "analyse", broken)
    monkeypatch.delenv("OBLIGOR_MEMO_DEBUG", raising=False)
    result = invoke("evaluate", str(SAMPLE_CASE))
    assert result.exit_code == 3
    assert "internal error" in result.stderr and "Traceback" not in result.output


def test_starting_the_command_loads_no_front_end_libraries(runs) -> None:
    done = runs["modules"]
    assert done.returncode == 0, done.stderr
    loaded = set(json.loads(done.stdout.strip().splitlines()[-1]))
    assert loaded.isdisjoint({"streamlit", "plotly", "weasyprint", "kaleido", "jinja2"})


@pytest.mark.browser
@pytest.mark.slow
@pytest.mark.skipif(not (VENV_BIN / "obligor-memo").exists(), reason="needs the installed console script")
def test_the_memo_command_ends_at_once_and_leaves_nothing_running(tmp_path):
    """After the PDF is written, ``memo`` skips the interpreter's teardown (cli.run): the file and
    the message are complete, the exit code is 0, and no process of its tree (Chromium) is left."""
    import os
    import shutil
    import signal
    import time

    if shutil.which("chromium") is None and not Path("/usr/bin/chromium").exists():
        pytest.skip("needs Chromium")
    out = tmp_path / "memo.pdf"
    env = {**os.environ, "OBLIGOR_MEMO_CHART_CACHE": str(tmp_path / "charts")}  # a browser draws
    process = subprocess.Popen(
        [str(VENV_BIN / "obligor-memo"), "memo", str(SAMPLE_CASE), "-o", str(out)],
        cwd=ROOT,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,
    )
    stdout, stderr = process.communicate(timeout=240)
    assert process.returncode == 0, stderr
    assert stdout.strip() == f"Wrote {out} ({out.stat().st_size:,} bytes)."
    assert out.read_bytes().startswith(b"%PDF-") and out.read_bytes().rstrip().endswith(b"%%EOF")
    deadline = time.time() + 10
    while True:  # the session the command started is empty once its browser has gone
        try:
            os.killpg(process.pid, 0)
        except ProcessLookupError:
            break
        if time.time() > deadline:
            os.killpg(process.pid, signal.SIGKILL)
            raise AssertionError("a process of the memo command's tree is still running")
        time.sleep(0.2)
    # A failure still ends the usual way, with its message and code.
    failed = subprocess.run(
        [str(VENV_BIN / "obligor-memo"), "memo", str(SAMPLE_CASE), "-o", str(tmp_path / "no" / "m.pdf")],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert failed.returncode == 2 and "does not exist" in failed.stderr
