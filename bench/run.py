"""One benchmark command with every figure: prints a table and writes JSON.

    python bench/run.py            # full: more repeats
    python bench/run.py --quick    # CI: few repeats; reports, never fails on a slow machine

Each item runs in its own child process so its peak memory (max RSS, from os.wait4) is its own.
Medians over repeated runs; ratios are taken within the same run. Thresholds live in the README.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "hollowmere.yaml"
PYTHON = sys.executable
CLI = [PYTHON, "-m", "obligor_memo.app.cli"]


# --------------------------------------------------------------------------- items (run in a child)


def _median_ms(func, repeats: int, warmup: int = 2) -> float:
    for _ in range(warmup):
        func()
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return statistics.median(times) * 1000


def item_evaluate(quick: bool) -> dict:
    from obligor_memo.engine.evaluate import evaluate
    from obligor_memo.engine.loading import load_case

    case = load_case(SAMPLE)
    return {"median_ms": _median_ms(lambda: evaluate(case), 50 if quick else 500), "target_ms": 5}


def item_grid(quick: bool) -> dict:
    from obligor_memo.engine.evaluate import evaluate
    from obligor_memo.engine.loading import load_case
    from obligor_memo.engine.sensitivity import pd_grid

    case = load_case(SAMPLE)
    base = evaluate(case)
    grid = pd_grid(case, base)
    cells = len(grid.pd) * len(grid.pd[0])
    return {"median_ms": _median_ms(lambda: pd_grid(case, base), 20 if quick else 200), "cells": cells}


def item_sensitivity(quick: bool) -> dict:
    from obligor_memo.engine.evaluate import evaluate
    from obligor_memo.engine.loading import load_case
    from obligor_memo.engine.sensitivity import one_way_sensitivity

    case = load_case(SAMPLE)
    base = evaluate(case)
    return {"median_ms": _median_ms(lambda: one_way_sensitivity(case, base), 5 if quick else 30)}


def item_market(quick: bool) -> dict:
    import numpy as np
    from obligor_memo.engine.market import solve_merton_many
    from scipy import optimize
    from scipy.stats import norm

    n = 100_000
    rng = np.random.default_rng(20261201)
    debt = rng.uniform(50, 150, n)
    equity = debt * rng.uniform(0.05, 3.0, n)
    vol = rng.uniform(0.15, 1.2, n)
    rate = rng.uniform(0.0, 0.06, n)
    horizon = np.ones(n)

    def batch():
        return solve_merton_many(
            equity_value=equity,
            equity_volatility=vol,
            default_point=debt,
            risk_free_rate=rate,
            horizon_years=horizon,
            invalid="flag",
        )

    batch_ms = _median_ms(batch, 3 if quick else 10, warmup=1)
    converged = int(np.count_nonzero(batch().converged))

    def one(e, se, d, r, t):  # the per-borrower reference: scipy.optimize.root on both equations
        def equations(x):
            v, s = np.exp(x)
            d1 = (np.log(v / d) + (r + s * s / 2) * t) / (s * np.sqrt(t))
            d2 = d1 - s * np.sqrt(t)
            return [
                (v * norm.cdf(d1) - d * np.exp(-r * t) * norm.cdf(d2) - e) / e,
                (norm.cdf(d1) * s * v - se * e) / (se * e),
            ]

        v0 = e + d * np.exp(-r * t)
        return optimize.root(equations, [np.log(v0), np.log(se * e / v0)], method="hybr")

    loop_n = 300 if quick else 3000
    start = time.perf_counter()
    for i in range(loop_n):
        one(equity[i], vol[i], debt[i], rate[i], horizon[i])
    loop_per = (time.perf_counter() - start) / loop_n
    batch_per = batch_ms / 1000 / n
    return {
        "borrowers": n,
        "batch_median_ms": batch_ms,
        "converged": converged,
        "scipy_loop_borrowers_timed": loop_n,
        "scipy_loop_ms_per_100k": loop_per * n * 1000,
        "speedup": loop_per / batch_per,
    }


def item_workbench(quick: bool) -> dict:
    """Server-side script runs (Streamlit AppTest): first load, then the what-if page rerun after
    a change of the default point's long-term share (a new value each time: no cache hit)."""
    from streamlit.testing.v1 import AppTest

    os.environ.setdefault("OBLIGOR_MEMO_WORKDIR", tempfile.mkdtemp(prefix="om-bench-"))
    os.environ.setdefault("OBLIGOR_MEMO_CHART_PRESTART", "0")  # measure the page, not Chromium
    start = time.perf_counter()
    at = AppTest.from_file(str(ROOT / "app" / "workbench" / "main.py"), default_timeout=60)
    at.run()
    first = time.perf_counter() - start
    if at.exception:
        return {"error": str(at.exception[0].message)[:200]}
    at.switch_page("steps/whatif.py")
    at.run()
    label = "Long-term share of the default point (%)"  # typed as a percentage, as users type it
    times = []
    for i in range(6 if quick else 30):
        found = [w for w in at.text_input if w.label == label]
        if not found:
            return {"error": f"no field {label!r} on the what-if page"}
        start = time.perf_counter()
        found[0].set_value(str(50 + i % 40 + 1)).run()
        times.append(time.perf_counter() - start)
        if at.exception:
            return {"error": str(at.exception[0].message)[:200]}
    return {
        "first_load_s": first,
        "whatif_rerun_median_ms": statistics.median(times) * 1000,
        "target_rerun_ms": 150,
        "target_first_load_s": 3,
    }


def item_memo_warm(quick: bool) -> dict:
    """The memo when the chart exporter is already running (as the workbench starts it):
    charts drawn anew each time (the SVG cache emptied), and a reprint of unchanged charts."""
    from obligor_memo.app import memo
    from obligor_memo.app.memo import chart_pages
    from obligor_memo.app.memo import figures as memo_figures
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.loading import load_case

    results = analyse(load_case(SAMPLE))
    memo.start_chart_exporter(wait=True)  # as the workbench does: the chart browser and
    try:
        memo.render_memo_pdf(results)  # warm-up: fonts, templates, first page load
        drawn, reprint = [], []
        for _ in range(2 if quick else 5):
            memo_figures._SVG_CACHE.clear()
            chart_pages._PAGES_CACHE.clear()
            start = time.perf_counter()
            memo.render_memo_pdf(results)
            drawn.append(time.perf_counter() - start)
            start = time.perf_counter()
            memo.render_memo_pdf(results)
            reprint.append(time.perf_counter() - start)
    finally:
        memo.stop_chart_exporter()
    return {
        "warm_charts_drawn_s": statistics.median(drawn),
        "warm_reprint_s": statistics.median(reprint),
        "target_warm_s": 1.5,
    }


ITEMS = {
    "evaluate": item_evaluate,
    "grid": item_grid,
    "sensitivity": item_sensitivity,
    "market": item_market,
    "workbench": item_workbench,
    "memo_warm": item_memo_warm,
}


# --------------------------------------------------------------------------- orchestration


def _tree_rss_mb(root: int) -> float:
    """Memory of a process and all its descendants (Chromium included): the sum of their
    proportional set sizes (Pss, /proc/PID/smaps_rollup), which shares pages used by several
    processes among them instead of counting them once per process as plain RSS would."""
    parents: dict[int, int] = {}
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat", "rb") as handle:
                parents[int(entry)] = int(handle.read().rsplit(b")", 1)[1].split()[1])
        except (OSError, IndexError, ValueError):
            continue
    members, frontier = {root}, [root]
    while frontier:
        current = frontier.pop()
        for pid, parent in parents.items():
            if parent == current and pid not in members:
                members.add(pid)
                frontier.append(pid)
    total_kb = 0
    for pid in members:
        try:
            with open(f"/proc/{pid}/smaps_rollup") as handle:
                for line in handle:
                    if line.startswith("Pss:"):
                        total_kb += int(line.split()[1])
                        break
        except (OSError, ValueError):
            continue
    return total_kb / 1024


def _run_child(argv: list[str], timeout: float, *, sample: bool = True) -> tuple[float, float, int, str]:
    """Wall seconds, peak memory in MB (the larger of the child's own max RSS and the sampled sum
    over its process tree; only the former with ``sample=False``), exit code and stdout of one
    child process."""
    start = time.perf_counter()
    tree_peak = 0.0
    with tempfile.TemporaryFile() as out, tempfile.TemporaryFile() as err:
        proc = subprocess.Popen(argv, cwd=ROOT, stdout=out, stderr=err)
        deadline = start + timeout
        while True:
            pid, status, usage = os.wait4(proc.pid, os.WNOHANG)
            if pid:
                break
            if time.perf_counter() > deadline:
                proc.kill()
                pid, status, usage = os.wait4(proc.pid, 0)
                break
            if sample:
                tree_peak = max(tree_peak, _tree_rss_mb(proc.pid))
            time.sleep(0.1 if sample else 0.005)
        wall = time.perf_counter() - start
        out.seek(0)
        err.seek(0)
        text = out.read().decode("utf-8", "replace")
        if os.waitstatus_to_exitcode(status) != 0:
            text += err.read().decode("utf-8", "replace")[-400:]
    return wall, max(usage.ru_maxrss / 1024, tree_peak), os.waitstatus_to_exitcode(status), text


def _item(name: str, quick: bool) -> dict:
    argv = [PYTHON, str(Path(__file__).resolve()), "--item", name] + (["--quick"] if quick else [])
    wall, peak, code, text = _run_child(argv, timeout=600)
    if code != 0:
        return {"error": text.strip().splitlines()[-1] if text.strip() else f"exit {code}", "peak_mb": peak}
    data = json.loads(text.strip().splitlines()[-1])
    data["peak_mb"] = peak
    return data


def _cold(argv: list[str], repeats: int, *, tree: bool = False) -> dict:
    """Median wall time of ``repeats`` fresh processes. With ``tree`` (a command with child
    processes) the peak memory of the whole process tree comes from separate runs: sampling
    every process's memory map takes CPU the timed command needs on 2 cores."""
    walls, peaks = [], []
    for _ in range(repeats):
        wall, peak, code, text = _run_child(argv, timeout=120, sample=not tree)
        if code != 0:
            return {"error": text.strip()[-300:]}
        walls.append(wall)
        if tree:
            peak = _run_child(argv, timeout=120, sample=True)[1]
        peaks.append(peak)
    return {"median_s": statistics.median(walls), "peak_mb": max(peaks)}


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="few repeats (CI)")
    parser.add_argument("--item", choices=sorted(ITEMS), help=argparse.SUPPRESS)
    parser.add_argument("--out", type=Path, default=ROOT / "bench" / "results" / "latest.json")
    parser.add_argument("--only", nargs="*", help="run only these figures")
    args = parser.parse_args()
    if args.item:
        sys.path.insert(0, str(ROOT))
        print(json.dumps(ITEMS[args.item](args.quick)))
        return 0

    # Chart drawings kept on disk would turn every memo after the first into a reprint: the
    # figures here are first prints (bench_memo.py times the reprint beside them).
    os.environ["OBLIGOR_MEMO_CHART_CACHE"] = "off"
    repeats = 3 if args.quick else 10
    wanted = set(args.only or [])
    figures: dict[str, dict] = {}

    def want(name: str) -> bool:
        return not wanted or name in wanted

    for name in ("evaluate", "grid", "sensitivity", "market", "workbench", "memo_warm"):
        if want(name):
            figures[name] = _item(name, args.quick)
    if want("cli_cold"):
        bare = _cold([PYTHON, "-c", "import numpy, scipy"], repeats)
        cli = _cold(CLI + ["evaluate", str(SAMPLE), "--json"], repeats)
        if "median_s" in bare and "median_s" in cli:
            cli["bare_numpy_scipy_s"] = bare["median_s"]
            cli["ratio_to_bare"] = cli["median_s"] / bare["median_s"]
        cli["target_s"] = 1.5
        figures["cli_cold"] = cli
    if want("memo_cold"):
        with tempfile.TemporaryDirectory() as folder:
            memo = _cold(
                CLI + ["memo", str(SAMPLE), "-o", str(Path(folder) / "m.pdf")], 1 if args.quick else 3, tree=True
            )
        memo.update({"target_s": 4, "target_peak_mb": 600})
        figures["memo_cold"] = memo

    report = {
        "quick": args.quick,
        "python": sys.version.split()[0],
        "cores": os.cpu_count(),
        "when": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
        "figures": figures,
    }
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(json.dumps(report, indent=2))
    _print_table(figures)
    print(f"\nwritten {args.out}")
    return 0


def _print_table(figures: dict[str, dict]) -> None:
    print(f"{'figure':<14} {'result':<70} {'peak MB':>8}")
    print("-" * 94)
    for name, data in figures.items():
        peak = data.get("peak_mb")
        shown = {k: v for k, v in data.items() if k != "peak_mb"}
        text = ", ".join(f"{k}={v:.4g}" if isinstance(v, float) else f"{k}={v}" for k, v in shown.items())
        print(f"{name:<14} {text[:70]:<70} {peak if peak is None else round(peak):>8}")
        if len(text) > 70:
            for start in range(70, len(text), 70):
                print(f"{'':<14} {text[start : start + 70]}")


if __name__ == "__main__":
    sys.exit(main())
