"""The array engine's faster step against the plain one it replaces.

The plain step (kept here as the oracle) computes every organisation's rate from one
full sparse product ``A @ talking`` per step and adds every step's hazard to every
potential customer. The fast step skips customers, handles never-exposed organisations
by the external rate alone and updates exposure incrementally; in exact arithmetic the
two are the same computation on the same draws, so their results must be identical.
"""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, build_network, rules
from womlab.engine import pick_referrers, run_array


def plain_run(scenario, network, initial, rng):
    adoption, run = scenario.adoption, scenario.run
    n, dt, form, rule, spp = network.n, run.time_step, run.step_probability, adoption.rule, run.steps_per_period
    tau = rules.draw_talkers(adoption.talkers_per_customer, n, rng)
    sat = rules.draw_satisfied(adoption.satisfied_share, n, rng)
    resistance = rng.standard_exponential(n)
    u_cause = rng.random(n)
    period = np.full(n, -1, dtype=np.int32)
    referrer = np.full(n, -1, dtype=np.int32)
    customer = np.zeros(n, dtype=bool)
    customer[initial] = True
    period[initial] = 0
    talk = np.where(customer & sat, tau, np.float32(0)).astype(np.float64)
    hazard = np.zeros(n)
    if network.complete:
        all_talkers = tau.sum(dtype=np.float64) - tau
    else:
        matrix = network.matrix(np.float64)
        all_talkers = matrix @ tau.astype(np.float64)
    for step in range(1, run.periods * spp + 1):
        talking = (talk.sum() - talk) if network.complete else matrix @ talk
        potential = ~customer
        rate = rules.adoption_rate(rule, talking, all_talkers, adoption)
        hazard += np.where(potential, rules.step_hazard(rate, dt, form), 0.0)
        new = np.flatnonzero(potential & (hazard >= resistance))
        if new.size == 0:
            continue
        ext = rules.external_share(rule, talking[new], all_talkers[new], adoption)
        by_wom = u_cause[new] >= ext
        wom = new[by_wom]
        if wom.size:
            u = (u_cause[wom] - ext[by_wom]) / (1 - ext[by_wom])
            referrer[wom] = pick_referrers(network, wom, talk.astype(np.float32), u)
        customer[new] = True
        period[new] = (step + spp - 1) // spp
        talk[new] = np.where(sat[new], tau[new], 0.0)
    return period, referrer, customer & sat


CASES = [
    ("small_world", "share", "exponential", 1.0, 2, 0.01),
    ("random", "count", "linear", 0.5, {"distribution": "poisson", "mean": 2}, 0.01),
    ("scale_free", "capped", "linear", 1.0, 1, 0.02),
    ("regional", "share", "exponential", 0.25, {"distribution": "poisson", "mean": 1}, 0.0),
    ("ring", "count", "exponential", 1.0, 3, 0.3),
    ("complete", "share", "exponential", 0.5, {"distribution": "poisson", "mean": 2}, 0.01),
    ("complete", "capped", "linear", 1.0, 1, 0.02),
]


@pytest.mark.parametrize("kind,rule,form,dt,talkers,p", CASES)
def test_fast_step_is_the_plain_step(kind, rule, form, dt, talkers, p):
    # integer talkers, so exposure sums are exact in both and the results must be identical
    q = 0.05 if rule != "share" else 0.6
    s = Scenario.from_dict(
        {
            "market": {"organisations": 800, "initial_customers": 8, "regions": 3},
            "network": {"kind": kind, "mean_degree": 6},
            "adoption": {"rule": rule, "external": p, "word_of_mouth": q, "satisfied_share": 0.7,
                         "talkers_per_customer": talkers, "cap": 0.2},
            "run": {"periods": 25, "time_step": dt, "step_probability": form},
        }
    )
    if kind == "complete" and rule != "share":
        s = s.replace("adoption.word_of_mouth", 0.0005)
    for seed in range(3):
        net = build_network(s, np.random.default_rng([seed, 1]))
        initial = np.sort(np.random.default_rng([seed, 2]).choice(800, 8, replace=False)).astype(np.int32)
        fast = run_array(s, net, initial, np.random.default_rng([seed, 3]))
        period, referrer, satisfied = plain_run(s, net, initial, np.random.default_rng([seed, 3]))
        assert np.array_equal(fast.adoption_period, period)
        assert np.array_equal(fast.referrer, referrer)
        assert np.array_equal(fast.satisfied, satisfied)
        assert 0 < fast.customers[-1] and (fast.customers[-1] < 800 or p > 0.1)


def test_external_rate_above_one_step_adopts_everyone_at_once():
    # linear step with p·dt >= 1: probability 1 in the first step (rules.step_probability)
    s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 2}, "network": {"kind": "ring", "mean_degree": 4},
                            "adoption": {"external": 1.0}, "run": {"periods": 3, "step_probability": "linear"}})
    r = run_array(s, build_network(s, np.random.default_rng(0)), np.array([0, 1], dtype=np.int32), np.random.default_rng(1))
    assert r.customers.tolist() == [2, 200, 200, 200]
