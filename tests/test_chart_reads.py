"""The figures the workbench caches by what they read (charts.READS) read nothing else.

The workbench keys such a figure by a digest of the listed Results paths, so that an edit which
does not move them (a proposed spread) reuses the figure. That is only sound if the figure reads
nothing beyond the list: each figure is built here from an object that holds the listed paths
and nothing more, and must equal the figure built from the full Results.
"""

from __future__ import annotations

import json
from types import SimpleNamespace
from typing import Any

import pytest
from obligor_memo.app import charts
from obligor_memo.app.charts import READS
from obligor_memo.app.workbench import ui
from obligor_memo.app.workbench.state import check, sample_case_dict
from obligor_memo.engine.evaluate import evaluate


def _only(results: Any, paths: tuple[str, ...]) -> SimpleNamespace:
    """A nested namespace holding just ``paths`` of ``results``."""
    root = SimpleNamespace()
    for path in paths:
        parts = path.split(".")
        node, source = root, results
        for part in parts[:-1]:
            source = getattr(source, part)
            if not hasattr(node, part):
                setattr(node, part, SimpleNamespace())
            node = getattr(node, part)
        setattr(node, parts[-1], getattr(source, parts[-1]))
    return root


def _spec(fig: Any) -> str:
    return json.dumps(fig.to_plotly_json(), sort_keys=True, default=str)


@pytest.mark.parametrize("name", sorted(READS))
def test_a_figure_reads_only_what_it_lists(name, sample_results):
    draw = getattr(charts, name)
    assert _spec(draw(_only(sample_results, READS[name]))) == _spec(draw(sample_results))


def test_the_loss_figure_key_ignores_the_spread_and_follows_the_recovery(sample_results):
    data = sample_case_dict()
    data["pricing"]["proposed_spread"] += 0.01
    repriced = evaluate(check(data).case)
    assert repriced.fingerprint != sample_results.fingerprint
    assert repriced.pricing.raroc != pytest.approx(sample_results.pricing.raroc)
    reads = READS["loss_distribution_figure"]
    assert ui._drawn_key(repriced, reads) == ui._drawn_key(sample_results, reads)

    data = sample_case_dict()
    data["facilities"][0]["recovery"]["mean"] *= 0.9
    moved = evaluate(check(data).case)
    assert ui._drawn_key(moved, reads) != ui._drawn_key(sample_results, reads)


def test_a_figure_not_listed_is_keyed_by_the_whole_case(sample_results):
    assert ui._drawn_key(sample_results, None) == sample_results.fingerprint
