"""Review-season batches on Dask: same figures as evaluate --json, bad cases listed, resume.

The batch's figures are checked against the command line's own `evaluate --json` output case by
case (the documented contract), so the batch cannot drift from the single-case command.
"""

from __future__ import annotations

import copy
import json
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pytest
import yaml
from click.testing import CliRunner
from conftest import SAMPLE_CASE, SAMPLE_STATEMENTS, VENV_BIN
from obligor_memo.app.batch import BatchUsageError, run_batch
from obligor_memo.app.cli import main
from obligor_memo.engine.loading import parse_text

from obligor_memo.batch import run

FIGURES = {  # batch column -> path in evaluate --json
    "pd": ("pd", "pd"),
    "grade": ("pd", "grade"),
    "ead": ("total", "ead"),
    "expected_loss": ("total", "expected_loss"),
    "unexpected_loss": ("total", "unexpected_loss"),
    "rwa": ("total", "rwa"),
    "economic_capital": ("total", "economic_capital"),
    "raroc": ("pricing", "raroc"),
    "minimum_spread": ("pricing", "minimum_spread"),
}


def _book(folder: Path, good: int = 6) -> tuple[list[Path], list[Path]]:
    """Variations of the sample borrower (drawn amounts, spreads, default point), and bad cases."""
    base = parse_text(SAMPLE_CASE.read_text(encoding="utf-8"), SAMPLE_CASE.name)
    (folder / SAMPLE_STATEMENTS.name).write_bytes(SAMPLE_STATEMENTS.read_bytes())
    goods = []
    for i in range(good):
        data = copy.deepcopy(base)
        data["borrower"]["name"] = f"Variant {i}"
        data["pd"].setdefault("default_point", {})["long_term_share"] = 0.3 + 0.1 * i
        if data.get("pricing"):
            data["pricing"]["proposed_spread"] = 0.015 + 0.002 * i
        path = folder / f"variant_{i}.yaml"
        path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
        goods.append(path)
    bads = [folder / "no_facilities.yaml", folder / "broken.json", folder / "sub" / "bad_currency.yaml"]
    no_facilities = copy.deepcopy(base)
    del no_facilities["facilities"]
    bads[0].write_text(yaml.safe_dump(no_facilities), encoding="utf-8")
    bads[1].write_text('{"borrower": ', encoding="utf-8")
    bads[2].parent.mkdir()
    bad_currency = copy.deepcopy(base)
    bad_currency["borrower"]["currency"] = "euro"
    bad_currency["statements"] = {"file": "../" + SAMPLE_STATEMENTS.name}
    bads[2].write_text(yaml.safe_dump(bad_currency), encoding="utf-8")
    return goods, bads


def _evaluate_json(path: Path) -> dict:
    done = CliRunner().invoke(main, ["evaluate", str(path), "--json"])
    assert done.exit_code == 0, done.output
    return json.loads(done.output)


@pytest.fixture(scope="module")
def book(tmp_path_factory) -> tuple[Path, list[Path], list[Path]]:
    folder = tmp_path_factory.mktemp("book")
    goods, bads = _book(folder)
    return folder, goods, bads


def test_no_memo_batch_gives_the_figures_of_evaluate_json_and_lists_the_bad_cases(book, tmp_path):
    folder, goods, bads = book
    result = run_batch([folder], tmp_path / "out", workers=2, memos=False)
    portfolio = pd.read_csv(tmp_path / "out" / "portfolio.csv")
    errors = pd.read_csv(tmp_path / "out" / "errors.csv")
    assert sorted(portfolio["case_file"]) == sorted(str(p.resolve()) for p in goods)
    assert sorted(set(errors["case_file"])) == sorted(str(p.resolve()) for p in bads)
    assert result.workers == 2
    for _, row in portfolio.iterrows():
        reference = _evaluate_json(Path(row["case_file"]))
        assert row["fingerprint"] == reference["fingerprint"]
        assert row["borrower"] == reference["case"]["borrower"]["name"]
        assert row["committed"] == pytest.approx(sum(f["committed"] for f in reference["facilities"]), rel=1e-12)
        for column, (block, key) in FIGURES.items():
            expected = reference[block][key]
            if isinstance(expected, str):
                assert str(row[column]) == expected, column
            else:
                assert row[column] == pytest.approx(expected, rel=1e-12), column  # CSV keeps 17 digits
    # Each bad case names its field.
    by_case = errors.groupby("case_file")["field"].apply(set).to_dict()
    assert "facilities" in by_case[str(bads[0].resolve())]
    assert "borrower.currency" in by_case[str(bads[2].resolve())]
    # The workbook holds the cases, the portfolio view and the errors.
    sheets = pd.read_excel(tmp_path / "out" / "portfolio.xlsx", sheet_name=None)
    assert set(sheets) == {"cases", "portfolio", "errors"}
    assert len(sheets["cases"]) == len(goods)


def test_python_api_returns_a_dataframe(book):
    folder, goods, _ = book
    frame = run(goods[:2], memos=False, workers=1)
    assert isinstance(frame, pd.DataFrame) and len(frame) == 2
    assert set(FIGURES) <= set(frame.columns)


def test_command_exit_codes(book, tmp_path):
    folder, goods, _ = book
    runner = CliRunner()
    some_failed = runner.invoke(main, ["batch", str(folder), "-o", str(tmp_path / "a"), "--no-memos"])
    assert some_failed.exit_code == 1, some_failed.output
    assert "no_facilities.yaml" in some_failed.output and "Traceback" not in some_failed.output
    all_ok = runner.invoke(main, ["batch", *map(str, goods[:2]), "-o", str(tmp_path / "b"), "--no-memos"])
    assert all_ok.exit_code == 0, all_ok.output
    usage = runner.invoke(main, ["batch", str(tmp_path / "missing"), "-o", str(tmp_path / "c"), "--no-memos"])
    assert usage.exit_code == 2 and "CASE_OR_FOLDER" in usage.output
    assert runner.invoke(main, ["batch", str(folder), "-o", str(tmp_path / "d"), "--workers", "0"]).exit_code == 2


def test_usage_mistakes_are_named(tmp_path):
    with pytest.raises(BatchUsageError, match="no case file"):
        run_batch([tmp_path], tmp_path / "out", memos=False)
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    for sub in ("a", "b"):
        (tmp_path / sub / "same.yaml").write_text("{}", encoding="utf-8")
    with pytest.raises(BatchUsageError, match="distinct names"):
        run_batch([tmp_path], tmp_path / "out", memos=False)


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    return True


def test_batch_on_a_real_scheduler_with_two_worker_processes(book, tmp_path):
    """`dask scheduler` and two `dask worker` processes on 127.0.0.1, the batch through --scheduler."""
    folder, goods, bads = book
    port = _free_port()
    dask = str(VENV_BIN / "dask") if (VENV_BIN / "dask").exists() else "dask"
    env = dict(os.environ, DASK_DISTRIBUTED__WORKER__DAEMON="False")
    procs = [
        subprocess.Popen(
            [dask, "scheduler", "--host", "127.0.0.1", "--port", str(port), "--no-dashboard"],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
            start_new_session=True,
            env=env,
        )
    ]
    try:
        address = f"tcp://127.0.0.1:{port}"
        deadline = time.time() + 30
        while time.time() < deadline:
            try:
                socket.create_connection(("127.0.0.1", port), timeout=1).close()
                break
            except OSError:
                time.sleep(0.2)
        for _ in range(2):
            procs.append(
                subprocess.Popen(
                    [dask, "worker", address, "--nthreads", "1", "--no-dashboard", "--host", "127.0.0.1"],
                    stdout=subprocess.DEVNULL,
                    stderr=subprocess.DEVNULL,
                    start_new_session=True,
                    env=env,
                )
            )
        from distributed import Client

        with Client(address, timeout="30s") as client:
            client.wait_for_workers(2, timeout=60)
        done = CliRunner().invoke(
            main, ["batch", str(folder), "-o", str(tmp_path / "out"), "--no-memos", "--scheduler", address]
        )
        assert done.exit_code == 1, done.output  # the bad cases are in the book
        assert "on 2 worker(s)" in done.output
        portfolio = pd.read_csv(tmp_path / "out" / "portfolio.csv")
        assert len(portfolio) == len(goods)
        assert set(pd.read_csv(tmp_path / "out" / "errors.csv")["case_file"]) == {str(p.resolve()) for p in bads}
    finally:
        for proc in procs:
            os.killpg(proc.pid, signal.SIGTERM)
        for proc in procs:
            try:
                proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                os.killpg(proc.pid, signal.SIGKILL)
                proc.wait(timeout=10)
    assert not any(_alive(p.pid) for p in procs)


@pytest.mark.slow
@pytest.mark.browser
def test_memos_printed_then_resume_skips_the_unchanged(book, tmp_path):
    folder, goods, _ = book
    out = tmp_path / "memos"
    first = run_batch(goods[:2], out, workers=1)
    pdfs = sorted(out.glob("*.pdf"))
    assert [p.stem for p in pdfs] == sorted(p.stem for p in goods[:2])
    assert all(p.read_bytes().startswith(b"%PDF") for p in pdfs)
    stamps = {p: p.stat().st_mtime_ns for p in pdfs}
    # One case changes: only its memo is printed again.
    changed = yaml.safe_load(goods[1].read_text(encoding="utf-8"))
    changed["borrower"]["name"] = "Variant 1, renamed"
    moved = tmp_path / goods[1].name
    moved.write_text(yaml.safe_dump(changed, sort_keys=False), encoding="utf-8")
    (tmp_path / SAMPLE_STATEMENTS.name).write_bytes(SAMPLE_STATEMENTS.read_bytes())
    second = run_batch([goods[0], moved], out, workers=1, resume=True)
    assert first.skipped == 0 and second.skipped == 1
    assert (out / f"{goods[0].stem}.pdf").stat().st_mtime_ns == stamps[out / f"{goods[0].stem}.pdf"]
    assert (out / f"{goods[1].stem}.pdf").stat().st_mtime_ns != stamps[out / f"{goods[1].stem}.pdf"]
    assert set(second.portfolio["borrower"]) == {"Variant 0", "Variant 1, renamed"}
    # No browser of the batch's workers is left.
    time.sleep(1)
    left = subprocess.run(["pgrep", "-f", "chromium.*--headless"], capture_output=True, text=True).stdout.split()
    assert str(os.getpid()) not in left


def test_progress_line_reports_done_failed_and_rate():
    import io

    from obligor_memo.app.batch.run import progress_line

    stream = io.StringIO()
    show = progress_line(stream)
    show(3, 4, 1, 2.0)
    assert "4/4 cases, 1 failed, 2.0 cases/s" in stream.getvalue()


def test_the_module_is_importable_in_a_fresh_interpreter():
    done = subprocess.run(
        [sys.executable, "-c", "import obligor_memo.batch as b; print(b.run.__name__)"],
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert done.stdout.strip() == "run", done.stderr


@pytest.mark.slow
def test_ctrl_c_stops_the_batch_cleanly(book, tmp_path):
    """SIGINT (Ctrl+C) while memos print: a plain message, exit 130, no worker or browser left."""
    folder, goods, _ = book
    script = VENV_BIN / "obligor-memo"
    proc = subprocess.Popen(
        [str(script), "batch", *map(str, goods), "-o", str(tmp_path / "out"), "--workers", "1"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,
    )
    time.sleep(8)  # the cluster is up and the first memo is printing
    os.killpg(proc.pid, signal.SIGINT)
    try:
        out, err = proc.communicate(timeout=60)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        raise
    assert proc.returncode in (130, 1, 0), err[-2000:]
    if proc.returncode == 130:
        # Our own message, and no traceback from our code (the chart library may log its own
        # while its browser is torn down mid-drawing).
        assert "stopped (Ctrl+C)" in err
        assert "/app/" not in err
    time.sleep(2)
    left = subprocess.run(["pgrep", "-g", str(proc.pid)], capture_output=True, text=True).stdout.split()
    assert left == [], left
