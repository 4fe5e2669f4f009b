"""Batch throughput on this machine: cases per second without memos, memos per minute, with 1
and 2 Dask workers, against a plain loop in one process; memory per worker (its process and the
chart browser it keeps).

    .venv/bin/python bench/bench_batch.py            # 40 cases, 6 memos
    .venv/bin/python bench/bench_batch.py --quick    # 12 cases, 2 memos

Prints one JSON object; the README's "Scale on paper" quotes it.
"""

from __future__ import annotations

import argparse
import copy
import json
import statistics
import sys
import tempfile
import time
from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_data" / "hollowmere.yaml"


def _book(folder: Path, count: int) -> list[Path]:
    from obligor_memo.engine.loading import parse_text

    base = parse_text(SAMPLE.read_text(encoding="utf-8"), SAMPLE.name)
    (folder / "hollowmere_statements.csv").write_bytes(
        (ROOT / "sample_data" / "hollowmere_statements.csv").read_bytes()
    )
    paths = []
    for i in range(count):
        data = copy.deepcopy(base)
        data["borrower"]["name"] = f"Bench {i}"
        data["pd"].setdefault("default_point", {})["long_term_share"] = 0.2 + 0.6 * i / max(count - 1, 1)
        path = folder / f"bench_{i:04d}.yaml"
        path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
        paths.append(path)
    return paths


def _tree_mb(pid: int) -> float:
    import psutil

    proc = psutil.Process(pid)
    total = proc.memory_info().rss
    for child in proc.children(recursive=True):
        try:
            total += child.memory_info().rss
        except psutil.Error:
            pass
    return total / 2**20


def main() -> int:
    parser = argparse.ArgumentParser()
    parser.add_argument("--quick", action="store_true")
    args = parser.parse_args()
    n_cases, n_memos = (24, 2) if args.quick else (200, 6)
    from obligor_memo.app.batch import run_batch
    from obligor_memo.engine.evaluate import evaluate
    from obligor_memo.engine.loading import load_case

    out: dict[str, float] = {}
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        cases = _book(folder, n_cases)
        start = time.perf_counter()
        for path in cases:
            evaluate(load_case(path)).to_dict()
        out["loop_cases_per_s"] = n_cases / (time.perf_counter() - start)
        for workers in (1, 2):
            timings = []
            for _ in range(1 if args.quick else 3):
                result = run_batch(cases, folder / f"out{workers}", workers=workers, memos=False)
                timings.append(len(result.portfolio) / (result.seconds - result.startup_seconds))
                out[f"batch_{workers}w_startup_s"] = result.startup_seconds
            out[f"batch_{workers}w_cases_per_s"] = statistics.median(timings)
        for workers in (1, 2):
            result = run_batch(cases[:n_memos], folder / f"memos{workers}", workers=workers, memos=True)
            out[f"batch_{workers}w_memos_per_min"] = (
                60 * len(result.portfolio) / (result.seconds - result.startup_seconds)
            )
        # Memory of one warm worker: its process and its chart browser, after printing memos.
        from distributed import Client, LocalCluster

        with (
            LocalCluster(
                n_workers=1, threads_per_worker=1, processes=True, dashboard_address=None, host="127.0.0.1"
            ) as cluster,
            Client(cluster) as client,
        ):
            from obligor_memo.app.batch.run import ChartBrowserPlugin, evaluate_case

            client.register_plugin(ChartBrowserPlugin(), name=ChartBrowserPlugin.name)
            client.gather(
                [client.submit(evaluate_case, str(p), str(folder / "mem"), True, None, pure=False) for p in cases[:2]]
            )
            (folder / "mem").mkdir(exist_ok=True)
            import os

            pids = client.run(os.getpid)
            out["worker_memory_mb"] = max(_tree_mb(pid) for pid in pids.values())
            client.unregister_worker_plugin(ChartBrowserPlugin.name)
    out["ratio_2w_to_loop_cases"] = out["batch_2w_cases_per_s"] / out["loop_cases_per_s"]
    json.dump({k: round(v, 3) for k, v in out.items()}, sys.stdout, indent=2)
    print()
    return 0


if __name__ == "__main__":
    sys.exit(main())
