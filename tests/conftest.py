"""Shared fixtures: the sample case, a minimal valid case and a writer for case files.

The minimal case is small on purpose: four years of statements (enough to estimate growth and
volatility), one drawn term loan, nothing optional. Each call returns a fresh dict, so a test can
mutate it freely.
"""

from __future__ import annotations

import copy
import json
import os
import shutil
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
import yaml

# Chart drawings are kept on disk for users (app/memo/chart_cache.py); a test that counts browser
# starts or provokes browser faults must draw, so the suite keeps none unless a test sets a folder.
os.environ.setdefault("OBLIGOR_MEMO_CHART_CACHE", "off")

ROOT = Path(__file__).resolve().parents[1]
SAMPLE_CASE = ROOT / "sample_data" / "hollowmere.yaml"
SAMPLE_STATEMENTS = ROOT / "sample_data" / "hollowmere_statements.csv"
DATA = Path(__file__).resolve().parent / "data"
VENV_BIN = Path(sys.executable).parent

# Total assets move up and down so the volatility estimate is well away from 0; the latest
# default point is 80 + 0.5 x 30 = 95 against assets of 120, a PD near 1 %.
_MINIMAL_CASE: dict[str, Any] = {
    "borrower": {"name": "Test Borrower", "currency": "EUR"},
    "statements": [
        {"year": 2020, "total_assets": 100.0, "short_term_liabilities": 80.0, "long_term_liabilities": 30.0},
        {"year": 2021, "total_assets": 112.0, "short_term_liabilities": 80.0, "long_term_liabilities": 30.0},
        {"year": 2022, "total_assets": 104.0, "short_term_liabilities": 80.0, "long_term_liabilities": 30.0},
        {"year": 2023, "total_assets": 120.0, "short_term_liabilities": 80.0, "long_term_liabilities": 30.0},
    ],
    "facilities": [
        {
            "id": "F1",
            "kind": "term_loan",
            "committed": 50.0,
            "drawn": 30.0,
            "seniority": "senior_unsecured",
            "maturity_years": 3.0,
        },
    ],
}


def minimal_case_dict() -> dict[str, Any]:
    """A fresh copy of the smallest valid case."""
    return copy.deepcopy(_MINIMAL_CASE)


def write_case(folder: Path, data: Any, name: str = "case.json") -> Path:
    """Write ``data`` as JSON (NaN and infinity allowed, as a careless exporter would) or YAML."""
    path = folder / name
    if name.endswith(".json"):
        path.write_text(json.dumps(data, allow_nan=True), encoding="utf-8")
    else:
        path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path


def copy_data(folder: Path, name: str) -> Path:
    """Copy a file from tests/data next to a case file in ``folder``."""
    target = folder / name
    shutil.copyfile(DATA / name, target)
    return target


@pytest.fixture(scope="session")
def sample_case_path() -> Path:
    return SAMPLE_CASE


@pytest.fixture(scope="session")
def make_case() -> Callable[[], dict[str, Any]]:
    """Factory of fresh minimal valid case dicts (session scope: it holds no state)."""
    return minimal_case_dict


@pytest.fixture(scope="session")
def sample_case():
    from obligor_memo.engine.loading import load_case

    return load_case(SAMPLE_CASE)


@pytest.fixture(scope="session")
def sample_results(sample_case):
    from obligor_memo.engine.evaluate import evaluate

    return evaluate(sample_case)


@pytest.fixture(autouse=True)
def _no_print_ahead_left():
    """No memo printed ahead outlives its test (nor is found by the next one for the same case)."""
    yield
    module = sys.modules.get("obligor_memo.app.workbench.print_ahead")
    if module is not None:
        module.printer().clear(timeout=120)
