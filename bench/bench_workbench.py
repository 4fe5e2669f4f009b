"""Workbench timings on the sample case (not a test): first load and a what-if rerun.

Server-side only, through Streamlit's AppTest: the script run the server does for each browser
interaction. Targets: first load under 3 s, median rerun after a what-if change under 150 ms.
Run: .venv/bin/python bench/bench_workbench.py [--repeats N]
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

FIRST_LOAD_TARGET_S = 3.0
RERUN_TARGET_MS = 150.0


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=30)
    args = parser.parse_args()
    os.environ["OBLIGOR_MEMO_WORKDIR"] = tempfile.mkdtemp(prefix="obligor-bench-")
    from streamlit.testing.v1 import AppTest

    start = time.perf_counter()
    at = AppTest.from_file(str(ROOT / "app" / "workbench" / "main.py"), default_timeout=60)
    at.run()
    first = time.perf_counter() - start
    assert not at.exception, [e.value for e in at.exception]

    at.switch_page("steps/whatif.py")
    at.run()
    label = "Long-term share of the default point"
    timings, pages = [], {}
    for i in range(args.repeats):
        widget = next(w for w in at.number_input if w.label == label)
        start = time.perf_counter()
        widget.set_value(0.50 + 0.01 * (i % 40 + 1)).run()  # a new value each time: no cache hit
        timings.append((time.perf_counter() - start) * 1000)
        assert not at.exception, [e.value for e in at.exception]
    for page in ("asset_pd", "exposure", "recovery", "loss", "memo", "borrower"):
        at.switch_page(f"steps/{page}.py")
        at.run()
        runs = []
        for _ in range(max(5, args.repeats // 3)):
            start = time.perf_counter()
            at.run()
            runs.append((time.perf_counter() - start) * 1000)
        pages[page] = statistics.median(runs)

    rerun = statistics.median(timings)
    print(
        f"first load        {first:8.2f} s   target {FIRST_LOAD_TARGET_S:.1f} s   "
        f"ratio {first / FIRST_LOAD_TARGET_S:.2f}"
    )
    print(
        f"what-if rerun     {rerun:8.1f} ms  target {RERUN_TARGET_MS:.0f} ms  "
        f"ratio {rerun / RERUN_TARGET_MS:.2f}  (median of {len(timings)}; "
        f"p90 {sorted(timings)[int(0.9 * len(timings)) - 1]:.1f} ms)"
    )
    for page, ms in pages.items():
        print(f"rerun {page:<12}{ms:8.1f} ms  ratio {ms / RERUN_TARGET_MS:.2f}")
    return 0 if first < FIRST_LOAD_TARGET_S and rerun < RERUN_TARGET_MS else 1


if __name__ == "__main__":
    sys.exit(main())
