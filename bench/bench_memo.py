"""Benchmark of the printed memo (not a test): cold start, warm exporter, peak memory.

    .venv/bin/python bench/bench_memo.py [--runs 3] [--warm-runs 5]

Cold: the console command ``obligor-memo memo`` in a fresh process (interpreter start-up,
imports, the full analysis of the sample case, Chromium start-up, chart export, PDF written),
as the first print of a case (no chart drawings kept) and printed again (drawings kept on disk
by the first print, so no browser starts).
Warm: one process keeps the chart exporter running (as the workbench does) and renders the memo
again and again. Peak memory: the resident memory of the command and every process under it
(Chromium's included), sampled every 50 ms.
Targets: cold < 4 s, warm (a change: every chart drawn again) < 1.5 s, peak < 600 MB. Medians are
printed; the committee memo is the default, the memo with the technical annex is timed beside it.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "hollowmere.yaml"


def _tree_rss_mb(pid: int) -> float:
    """Proportional set size of a process and all its descendants (Chromium's helpers included);
    shared pages count once in total, where a sum of resident sets would count them per process."""
    total, stack = 0, [pid]
    while stack:
        p = stack.pop()
        try:
            with open(f"/proc/{p}/smaps_rollup") as f:
                total += next(int(line.split()[1]) for line in f if line.startswith("Pss:"))
            for task in Path(f"/proc/{p}/task").iterdir():
                stack += [int(c) for c in (task / "children").read_text().split()]
        except (OSError, StopIteration, ValueError):
            continue
    return total / 1024


def cold(runs: int, out_pdf: Path, extra: tuple[str, ...] = (), *, reprint: bool = False) -> list[tuple[float, float]]:
    """The console command itself, from process start to the PDF on disk; peak tree memory.

    ``reprint=False``: the first print of a case, with an empty folder of kept chart drawings
    (a fresh one per run), so the browser starts and draws every chart. ``reprint=True``: the
    same memo printed again in a new process, its drawings kept by a first print (no browser).
    Time and memory come from separate runs: reading every process's memory map 20 times a
    second takes CPU from the 2 cores the command itself needs (it slowed the timed command
    by about 1.5 s when both were measured in one run)."""
    command = [str(Path(sys.executable).parent / "obligor-memo"), "memo", str(SAMPLE), "-o", str(out_pdf), *extra]
    results = []
    with tempfile.TemporaryDirectory() as folder:
        for run in range(runs):
            kept = Path(folder) / ("kept" if reprint else f"empty-{run}")
            env = {**os.environ, "OBLIGOR_MEMO_CHART_CACHE": str(kept)}
            if reprint and run == 0:  # the first print that keeps the drawings: not timed
                subprocess.run(command, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, check=True)
            results.append(_timed(command, env, Path(folder) / f"peak-{run}", reprint))
    return results


def _timed(command: list[str], env: dict[str, str], peak_folder: Path, reprint: bool) -> tuple[float, float]:
    started = time.perf_counter()
    proc = subprocess.run(command, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    seconds = time.perf_counter() - started
    if proc.returncode != 0:
        raise SystemExit(f"memo command failed: {proc.stderr.decode()}")
    if not reprint:
        env = {**env, "OBLIGOR_MEMO_CHART_CACHE": str(peak_folder)}  # the memory run draws too
    peak = 0.0
    sampled = subprocess.Popen(command, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    while sampled.poll() is None:
        peak = max(peak, _tree_rss_mb(sampled.pid))
        time.sleep(0.05)
    return seconds, peak


def warm(runs: int) -> tuple[list[float], list[float], float]:
    sys.path.insert(0, str(ROOT))
    from obligor_memo.app import memo
    from obligor_memo.app.memo import chart_pages
    from obligor_memo.app.memo import figures as memo_figures
    from obligor_memo.engine.analysis import analyse
    from obligor_memo.engine.loading import load_case

    os.environ["OBLIGOR_MEMO_CHART_CACHE"] = "off"  # "drawn anew" means drawn: nothing kept on disk
    results = analyse(load_case(SAMPLE))
    t0 = time.perf_counter()
    memo.start_chart_exporter()  # as the workbench does: the chart browser and
    start_seconds = time.perf_counter() - t0
    memo.render_memo_pdf(results)  # first render also warms fonts and plotly
    times, cached = [], []
    for _ in range(runs):
        memo_figures._SVG_CACHE.clear()  # every figure goes through the browser again
        chart_pages._PAGES_CACHE.clear()  # and through the SVG-to-PDF converter
        t0 = time.perf_counter()
        memo.render_memo_pdf(results)
        times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        memo.render_memo_pdf(results)  # a reprint with the same figures (e.g. a text edit)
        cached.append(time.perf_counter() - t0)
    memo.stop_chart_exporter()
    return times, cached, start_seconds


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3, help="cold runs (fresh processes)")
    parser.add_argument("--warm-runs", type=int, default=5)
    args = parser.parse_args()
    out_dir = ROOT / "bench" / "results"
    out_dir.mkdir(parents=True, exist_ok=True)
    runs = cold(args.runs, out_dir / "bench_memo.pdf")
    print(
        f"cold: obligor-memo memo, first print (browser draws every chart; median of {len(runs)}): "
        f"{statistics.median(r[0] for r in runs):.2f} s   target < 4 s"
    )
    again = cold(args.runs, out_dir / "bench_memo.pdf", reprint=True)
    print(
        f"cold: obligor-memo memo, printed again (charts kept from the first print, no browser; "
        f"median of {len(again)}): {statistics.median(r[0] for r in again):.2f} s, "
        f"peak {statistics.median(r[1] for r in again):.0f} MB"
    )
    annexed = cold(args.runs, out_dir / "bench_memo_annex.pdf", ("--annex",))
    print(
        f"cold: obligor-memo memo --annex (median of {len(annexed)}): {statistics.median(r[0] for r in annexed):.2f} s"
    )
    print(
        f"peak memory, command and browser together (median of peaks): "
        f"{statistics.median(r[1] for r in runs):.0f} MB   target < 600 MB"
    )
    times, cached, start_seconds = warm(args.warm_runs)
    print(f"chart exporter start: {start_seconds:.2f} s (once per process)")
    print(
        f"warm render with the exporter running, every chart exported (median of {len(times)}): "
        f"{statistics.median(times):.2f} s   target < 1.5 s"
    )
    print(
        f"warm reprint with unchanged figures (SVG reused; median of {len(cached)}): {statistics.median(cached):.2f} s"
    )


if __name__ == "__main__":
    main()
