"""Nothing the user typed is lost: autosave survives a process killed mid-write.

A child process rewrites the autosave of one case as fast as it can, each time with a larger
statements table (so writes take a while and a kill lands inside one). The test kills it with
SIGKILL at varied moments; afterwards the autosave must always restore a complete, valid case
(the last good one), and no half-written temporary file may be mistaken for it.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from obligor_memo.app.workbench.state import autosave_path, new_case_id, restore
from obligor_memo.engine.case import parse_case

ROOT = Path(__file__).resolve().parents[1]

WRITER = textwrap.dedent("""
    import sys, copy
    from pathlib import Path
    sys.path.insert(0, sys.argv[3])
    from obligor_memo.app.workbench.state import autosave, sample_case_dict
    workdir, case_id = Path(sys.argv[1]), sys.argv[2]
    base = sample_case_dict()
    base["memo"]["summary"] = "x" * 3_900
    padding = "y" * 3_000_000                        # large records: a kill lands mid-write
    n = 0
    print("ready", flush=True)
    while True:
        n += 1
        raw = copy.deepcopy(base)
        raw["memo"]["recommendation"] = f"revision {n}"
        autosave(workdir, case_id, raw=raw, valid=raw, extra={"revision": n, "padding": padding})
""")


def _kill_after(workdir: Path, case_id: str, delay: float) -> None:
    proc = subprocess.Popen(
        [sys.executable, "-c", WRITER, str(workdir), case_id, str(ROOT)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        cwd=ROOT,
    )
    assert proc.stdout.readline().strip() == b"ready", proc.stderr.read().decode()
    time.sleep(delay)
    os.kill(proc.pid, signal.SIGKILL)
    proc.communicate(timeout=10)  # reads and closes both pipes
    assert proc.returncode == -signal.SIGKILL


@pytest.mark.slow
def test_autosave_survives_sigkill_during_writes(tmp_path: Path) -> None:
    case_id = new_case_id()
    revisions = []
    for attempt in range(12):
        _kill_after(tmp_path, case_id, delay=0.15 + 0.037 * attempt)
        restored = restore(tmp_path, case_id)
        assert restored is not None, "the last good autosave must remain readable"
        # The record is whole: valid JSON, a case that validates, the text as typed.
        parse_case(restored.raw)
        assert restored.raw["memo"]["summary"] == "x" * 3_900
        assert len(restored.extra["padding"]) == 3_000_000
        assert restored.raw["memo"]["recommendation"] == f"revision {restored.extra['revision']}"
        revisions.append(restored.extra["revision"])
        json.loads(autosave_path(tmp_path, case_id).read_text())
    # The writer did make progress between kills, so kills really landed among writes.
    assert max(revisions) > 1


def test_two_cases_in_one_folder_never_mix(tmp_path: Path) -> None:
    """Two sessions (two case ids) saving into one working folder keep their own inputs."""
    from obligor_memo.app.workbench.state import autosave, sample_case_dict

    first, second = new_case_id(), new_case_id()
    a, b = sample_case_dict(), sample_case_dict()
    a["borrower"]["name"] = "First session borrower"
    b["borrower"]["name"] = "Second session borrower"
    for _ in range(3):
        autosave(tmp_path, first, raw=a, valid=a)
        autosave(tmp_path, second, raw=b, valid=b)
    assert restore(tmp_path, first).raw["borrower"]["name"] == "First session borrower"
    assert restore(tmp_path, second).raw["borrower"]["name"] == "Second session borrower"
