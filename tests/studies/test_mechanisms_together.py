"""Churn and warnings beside the changing-market mechanisms: what runs together and what is refused.

Common practice: a combination no engine or aggregate model implements is refused in one line,
or reported without an aggregate value, never silently computed with a mechanism left out.
"""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, ScenarioError, aggregate_curve, run_replicates

BASE = {
    "seed": 5,
    "market": {"organisations": 300, "initial_customers": 3, "regions": 2},
    "network": {"kind": "random", "mean_degree": 6},
    "run": {"periods": 12, "jobs": 1},
}


@pytest.mark.parametrize("field", [{"churn": 0.05}, {"warning": 0.2, "satisfied_share": 0.7}])
def test_product_generations_refuse_churn_and_warnings(field):
    spec = {
        **BASE,
        "adoption": field,
        "product": [{"name": "second", "launch": 5, "external": 0.01, "word_of_mouth": 0.4}],
    }
    with pytest.raises(ScenarioError, match=r"\[\[product\]\] cannot be combined with (churn|warnings)"):
        Scenario.from_dict(spec)


def test_churn_with_a_late_region_runs_and_has_no_aggregate_counterpart():
    s = Scenario.from_dict(
        {
            **BASE,
            "adoption": {"churn": 0.05, "external": 0.01},
            "market": {**BASE["market"], "opens": [{"region": 1, "period": 6}]},
        }
    )
    assert np.isnan(aggregate_curve(s)).all()
    batch = run_replicates(s, 2)
    metrics = batch.metrics().set_index("metric")
    assert np.isnan(metrics.loc["installed_base", "aggregate"])
    curves = batch.curves()
    assert {"former_customers", "ever_customers", "market"} <= set(curves.columns)
    # the late region is not counted in the market before it opens
    assert (curves.loc[curves["period"] < 6, "market"] < 300).all()
