"""compare timings on the sample (not a test): the sample against a one-year roll-forward.

The roll-forward adds a year of statements, raises the revolver's CCF, shortens every maturity
by a year and lowers the term loan's recovery mean: three blocks change, 8 light evaluations.
A second pair changes all five input blocks (32 evaluations). Target: under 1 s in process.
Run: .venv/bin/python bench/bench_compare.py [--repeats N]
"""

from __future__ import annotations

import argparse
import copy
import json
import statistics
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
TARGET_S = 1.0


def one_year_on(case_dict: dict) -> dict:
    d = copy.deepcopy(case_dict)
    last = dict(d["statements"][-1])
    last["year"] += 1
    last["total_assets"] *= 1.04
    last["short_term_liabilities"] *= 1.08
    d["statements"].append(last)
    d["facilities"][1]["ccf"] = 0.9
    for f in d["facilities"]:
        f["maturity_years"] = max(f["maturity_years"] - 1, 0.25)
    d["facilities"][0]["recovery"]["mean"] = 0.5
    return d


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=20)
    args = parser.parse_args()
    from obligor_memo.engine.case import case_to_dict, parse_case
    from obligor_memo.engine.compare import compare_cases
    from obligor_memo.engine.loading import load_case
    from obligor_memo.engine.review import roll_forward

    start = time.perf_counter()
    old = load_case(ROOT / "sample_data" / "hollowmere.yaml")
    new = parse_case(one_year_on(roll_forward(old, approved_on="2025-11-28")))
    first = compare_cases(old, new)
    cold = time.perf_counter() - start
    wide = copy.deepcopy(case_to_dict(new))
    wide["pd"]["window_years"] = 8
    wide["pricing"]["proposed_spread"] = 0.03
    wide = parse_case(wide)
    out = {"cold_s (load, roll forward, first compare)": cold, "evaluations": first.evaluations}
    for name, pair in (("one_year_on", (old, new)), ("five_blocks", (old, wide))):
        times = []
        for _ in range(args.repeats):
            t = time.perf_counter()
            c = compare_cases(*pair)
            times.append(time.perf_counter() - t)
        out[f"{name}_median_s"] = statistics.median(times)
        out[f"{name}_evaluations"] = c.evaluations
    out["target_s"] = TARGET_S
    print(json.dumps(out, indent=1))
    return 0 if out["one_year_on_median_s"] < TARGET_S else 1


if __name__ == "__main__":
    raise SystemExit(main())
