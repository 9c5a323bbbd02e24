"""`compare` with churn: the network against Bass with churn."""

from __future__ import annotations

import numpy as np

from womlab import Scenario, compare


def test_complete_network_compare_follows_bass_with_churn():
    # Kurtz (1970), law of large numbers on the complete network: the mean ever-customer curve and
    # installed base of 6 runs at N = 10,000 follow Bass with churn in the run's own step form within
    # 4 standard errors of the mean of the runs plus 2/N, as the existing complete-network test.
    # (A first tolerance of 0.01 flat, from binomial noise alone, failed at 0.0116 mid-curve: the
    # spread of the early, stochastic phase shifts whole curves in time, so the runs' own spread is
    # the basis.)
    s = Scenario.from_dict(
        {
            "seed": 3,
            "market": {"organisations": 10_000, "initial_customers": 50},
            "network": {"kind": "complete"},
            "adoption": {
                "rule": "share",
                "external": 0.01,
                "word_of_mouth": 0.5,
                "satisfied_share": 0.8,
                "churn": 0.05,
                "churn_dissatisfied": 0.25,
            },
            "run": {"periods": 25},
        }
    )
    c = compare(s, 6, bootstrap=50, fit_bootstrap=5)
    assert sorted(c.curves) == ["bass_churn_difference", "bass_churn_mapped", "bass_fitted"]
    assert c.reference == "bass_churn_difference"
    table = c.curve_table()
    n, reps = 10_000, 6
    ever, installed = c.shares(), c.batch.shares()
    for runs, model in (
        (ever, table["bass_churn_difference"]),
        (installed, table["installed_base_bass_churn_difference"]),
    ):
        se = runs.std(axis=0, ddof=1) / np.sqrt(reps)
        assert np.all(np.abs(runs.mean(axis=0) - model.to_numpy()) <= 4 * se + 2 / n)
    # the ever-customer curve compared is the batch's, and the installed base lies below it
    assert np.allclose(c.shares(), c.batch.ever_shares())
    assert np.all(table["installed_base_mean"] <= table["mean"] + 1e-12)
    assert abs(c.headline()["t50_delay"]) < 0.5
