"""Scenario changes said in words, never as dotted case paths."""

from __future__ import annotations

import pytest
from obligor_memo.app.present.formatting import scenario_change

IDS = ("TL-A", "RCF-1", "A.B")


@pytest.mark.parametrize(
    ("path", "value", "words"),
    [
        ("pd.asset_growth", -0.05, "Asset growth -5.0 % a year"),
        ("pd.asset_volatility", 0.18, "Asset volatility 18.0 %"),
        ("pd.default_point.long_term_share", 1.0, "Long-term liabilities in the default point 100 %"),
        ("pd.asset_growth", None, "Asset growth not set (estimated)"),
        ("lgd.standard", "basel_ii", "LGD standard Basel II"),
        ("facilities.RCF-1.ccf", 1.0, "RCF-1: CCF 100 %"),
        ("facilities.TL-A.recovery.mean", 0.40, "TL-A: recovery mean, unsecured law 40.0 %"),
        ("facilities.*.ccf", 0.5, "Every facility: CCF 50 %"),
        ("facilities.A.B.drawn", 1500000, "A.B: drawn 1,500,000"),  # an id holding a dot
        ("facilities.TL-A.cancellable", True, "TL-A: cancellable yes"),
        ("capital.scaling_factor", True, "Capital scaling factor yes"),
    ],
)
def test_changes_in_words(path, value, words):
    text = scenario_change(path, value, IDS)
    assert text == words
    assert path not in text
