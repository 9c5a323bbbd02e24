"""Curves, summaries, metrics and figures split by segment and by region.

Checks are bookkeeping identities (common practice): the groups' counts add up to the market's,
each group's aggregate line is the segment model's own curve for it.
"""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, group_figure, run_replicates
from womlab.aggregate import segment_curves

S = Scenario.from_dict(
    {
        "seed": 2,
        "market": {"organisations": 600, "initial_customers": 6, "regions": 3},
        "network": {"kind": "regional", "mean_degree": 6},
        "run": {"periods": 15},
        "segments": {"few": {"share": 0.2, "word_of_mouth": 2.0, "value_per_period": 5.0}, "many": {"share": 0.8}},
    }
)


@pytest.fixture(scope="module")
def batch():
    return run_replicates(S, 4)


@pytest.mark.parametrize("by,k", [("segment", 2), ("region", 3)])
def test_groups_add_up_to_the_market(batch, by, k):
    curves = batch.curves(by=by)
    assert len(curves) == 4 * 16 * k
    totals = curves.groupby(["replicate", "period"])[["customers", "new_customers", "satisfied_customers"]].sum()
    plain = batch.curves().set_index(["replicate", "period"])
    assert np.array_equal(totals.to_numpy(), plain[["customers", "new_customers", "satisfied_customers"]].to_numpy())
    assert set(curves["organisations"].groupby(curves["replicate"]).sum() // 16) == {600}
    summary, metrics = batch.summary(by=by), batch.metrics(by=by)
    assert len(summary) == 16 * k and summary["group"].nunique() == k
    assert len(metrics) == k * 6 and list(metrics.columns[:2]) == ["group", "metric"]


def test_value_and_aggregate_by_segment(batch):
    curves = batch.curves(by="segment")
    few, many = curves[curves["group"] == "few"], curves[curves["group"] == "many"]
    assert np.allclose(few["value"], 5.0 * few["customers"]) and np.allclose(many["value"], many["customers"])
    assert np.allclose(batch.group_aggregate("segment"), segment_curves(S))
    assert np.allclose(batch.summary()["aggregate"], segment_curves(S) @ np.array([0.2, 0.8]))


def test_by_segment_without_segments_is_refused():
    plain = run_replicates(S.replace({"segments": {}}), 1)
    with pytest.raises(ValueError, match='by = "segment" needs segments'):
        plain.curves(by="segment")
    with pytest.raises(ValueError, match='by must be "segment" or "region", got \'size\''):
        plain.curves(by="size")


def test_group_figure_draws_one_line_pair_per_group(batch):
    fig = group_figure(batch, "region")
    assert len(fig.axes[0].lines) == 2 * 3 and len(fig.axes[1].lines) == 2 * 3


def test_compare_sets_the_runs_against_the_segment_model():
    from womlab import compare

    comparison = compare(S, replicates=3)
    assert comparison.reference == "segment_model"
    assert np.allclose(comparison.curves["segment_model"], segment_curves(S) @ np.array([0.2, 0.8]))
    assert "segment_model" in comparison.curve_table().columns
