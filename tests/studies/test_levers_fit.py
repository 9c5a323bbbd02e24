"""lever_timing for a fitted market: parameters drawn from the posterior per replicate, the same draw
for every arm (so that differences stay the lever's and its timing's)."""

from __future__ import annotations

import numpy as np

from womlab import Scenario, fit_observed, lever_timing
from womlab.studies.calibration import simulated_series

SMALL = {"particles": 30, "generations": 3, "simulations": 240}


def test_lever_timing_with_a_fit_draws_per_replicate_and_pairs_every_arm():
    s = Scenario.from_dict(
        {
            "seed": 5,
            "name": "invented test market",
            "market": {"organisations": 300, "initial_customers": 4},
            "network": {"kind": "random", "mean_degree": 6},
            "adoption": {"external": 0.01, "word_of_mouth": 0.6, "satisfied_share": 0.8},
            "run": {"periods": 12},
            "fit": {
                "priors": {
                    "adoption.external": {"distribution": "log_uniform", "low": 0.001, "high": 0.1},
                    "adoption.word_of_mouth": {"distribution": "log_uniform", "low": 0.05, "high": 3.0},
                }
            },
        }
    )
    fit = fit_observed(s, simulated_series(s, key=(77,)), jobs=1, **SMALL)
    fit = fit.replace({"levers": {"campaign": {"periods": 2, "multiplier": 1.0}, "reference_customers": {"count": 5}}})
    study = lever_timing(fit, pulled_at=[0, 6], replicates=5, lifetime=12)
    assert study.parameters.startswith("drawn from the fit's posterior")
    rows = study.per_replicate()
    # a campaign at the baseline's own p changes nothing, whatever each replicate's draw
    campaign = rows[rows["lever"] == "campaign"]
    assert (campaign["incremental_customers"] == 0).all() and (campaign["incremental_value"] == 0).all()
    # the replicates ran with parameters of their own (and streams of their own): their baselines differ
    finals = np.array([r.customers[-1] for r in study.baseline])
    assert np.unique(finals).size > 1
    assert (rows.loc[rows["lever"] == "reference_customers", "incremental_customers"] >= 0).all()
