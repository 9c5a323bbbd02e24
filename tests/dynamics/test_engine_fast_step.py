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
from womlab.dynamics.array_engine import pick_referrers, run_array
from womlab.dynamics.programme import start_programme


def plain_run(scenario, network, initial, rng):
    adoption, run = scenario.adoption, scenario.run
    n, dt, form, rule, spp = network.n, run.time_step, run.step_probability, adoption.rule, run.steps_per_period
    tau = rules.draw_talkers(adoption.talkers_per_customer, n, rng)
    sat = rules.draw_satisfied(adoption.satisfied_share, n, rng)
    resistance = rng.standard_exponential(n)
    u_cause = rng.random(n)
    theta = rules.draw_thresholds(adoption.threshold, n, rng) if rule == "threshold" else None
    adopted_in = np.full(n, -1, dtype=np.int32)
    referrer = np.full(n, -1, dtype=np.int32)
    customer = np.zeros(n, dtype=bool)
    customer[initial] = True
    adopted_in[initial] = 0
    attempt = np.full(n, -1, dtype=np.int64)  # cascade: the step of the one attempt, a period after adoption
    attempt[initial] = spp
    talk = rules.talk_weights(rule, tau, customer & sat, attempt == 1)
    hazard = np.zeros(n)
    programme = start_programme(scenario, network, rng)
    if network.complete:
        all_talkers = tau.sum(dtype=np.float64) - tau
    else:
        matrix = network.matrix(np.float64)
        all_talkers = matrix @ tau.astype(np.float64)
    for step in range(1, run.periods * spp + 1):
        if rule == "cascade":
            talk = rules.talk_weights(rule, tau, customer & sat, attempt == step)
        period = (step + spp - 1) // spp
        counted = talk if programme is None else programme.talk(talk, customer & sat, period)
        counted = counted.astype(np.float64)
        talking = (counted.sum() - counted) if network.complete else matrix @ counted
        potential = ~customer
        rate = rules.adoption_rate(rule, talking, all_talkers, adoption, theta)
        if rule == "cascade":  # the external hazard over the step plus the chances that fall in it
            chances = rules.word_of_mouth_part(rule, talking, all_talkers, adoption.word_of_mouth)
            external_hazard = rules.step_hazard(np.full(n, adoption.external), dt, form)
            step_hazard = external_hazard + chances
        else:
            step_hazard = rules.step_hazard(rate, dt, form)
        hazard += np.where(potential, step_hazard, 0.0)
        new = np.flatnonzero(potential & (hazard >= resistance))
        if new.size == 0:
            continue
        ext = rules.external_share(
            rule, talking[new], all_talkers[new], adoption, None if theta is None else theta[new]
        )
        if rule == "cascade":
            total_hazard = step_hazard[new]
            ext = np.where(total_hazard > 0, external_hazard[new] / np.where(total_hazard > 0, total_hazard, 1.0), 1.0)
        by_wom = u_cause[new] >= ext
        wom = new[by_wom]
        if wom.size:
            u = (u_cause[wom] - ext[by_wom]) / (1 - ext[by_wom])
            referrer[wom] = pick_referrers(network, wom, counted, u)
            if programme is not None:
                programme.settle(period, wom, referrer[wom])
        customer[new] = True
        adopted_in[new] = period
        attempt[new] = step + spp
        talk[new] = np.where(sat[new], tau[new], np.float32(0))
    return adopted_in, referrer, customer & sat, programme


CASES = [
    ("small_world", "share", "exponential", 1.0, 2, 0.01),
    ("random", "count", "linear", 0.5, {"distribution": "poisson", "mean": 2}, 0.01),
    ("scale_free", "capped", "linear", 1.0, 1, 0.02),
    ("regional", "share", "exponential", 0.25, {"distribution": "poisson", "mean": 1}, 0.0),
    ("ring", "count", "exponential", 1.0, 3, 0.3),
    ("complete", "share", "exponential", 0.5, {"distribution": "poisson", "mean": 2}, 0.01),
    ("complete", "capped", "linear", 1.0, 1, 0.02),
    ("random", "threshold", "exponential", 1.0, 1, 0.005),
    ("small_world", "threshold", "linear", 0.5, {"distribution": "poisson", "mean": 2}, 0.01),
    ("complete", "threshold", "exponential", 1.0, 1, 0.01),
    ("scale_free", "cascade", "exponential", 1.0, 1, 0.005),
    ("regular", "cascade", "exponential", 0.25, 2, 0.01),
    ("complete", "cascade", "exponential", 1.0, 1, 0.01),
]


@pytest.mark.parametrize("kind,rule,form,dt,talkers,p", CASES)
def test_fast_step_is_the_plain_step(kind, rule, form, dt, talkers, p):
    # integer talkers, so exposure sums are exact in both and the results must be identical
    q = {"share": 0.6, "cascade": 0.3}.get(rule, 0.05)
    s = Scenario.from_dict(
        {
            "market": {"organisations": 800, "initial_customers": 8, "regions": 3},
            "network": {"kind": kind, "mean_degree": 6},
            "adoption": {
                "rule": rule,
                "external": p,
                "word_of_mouth": q,
                "satisfied_share": 0.7,
                "talkers_per_customer": talkers,
                "cap": 0.2,
                "threshold": {"distribution": "uniform", "low": 0.05, "high": 0.4},
            },
            "run": {"periods": 25, "time_step": dt, "step_probability": form},
        }
    )
    if kind == "complete" and rule in ("count", "capped"):
        s = s.replace("adoption.word_of_mouth", 0.0005)
    if kind == "complete" and rule == "cascade":
        s = s.replace("adoption.word_of_mouth", 0.0003)
    grew = []
    for seed in range(3):
        net = build_network(s, np.random.default_rng([seed, 1]))
        initial = np.sort(np.random.default_rng([seed, 2]).choice(800, 8, replace=False)).astype(np.int32)
        fast = run_array(s, net, initial, np.random.default_rng([seed, 3]))
        period, referrer, satisfied, _ = plain_run(s, net, initial, np.random.default_rng([seed, 3]))
        assert np.array_equal(fast.adoption_period, period)
        assert np.array_equal(fast.referrer, referrer)
        assert np.array_equal(fast.satisfied, satisfied)
        grew.append(fast.customers[-1] > fast.customers[0])
    assert any(grew)  # the runs did something to compare


def test_external_rate_above_one_step_adopts_everyone_at_once():
    # linear step with p·dt >= 1: probability 1 in the first step (rules.step_probability)
    s = Scenario.from_dict(
        {
            "market": {"organisations": 200, "initial_customers": 2},
            "network": {"kind": "ring", "mean_degree": 4},
            "adoption": {"external": 1.0},
            "run": {"periods": 3, "step_probability": "linear"},
        }
    )
    r = run_array(
        s, build_network(s, np.random.default_rng(0)), np.array([0, 1], dtype=np.int32), np.random.default_rng(1)
    )
    assert r.customers.tolist() == [2, 200, 200, 200]


@pytest.mark.parametrize("kind", ["small_world", "complete"])
def test_fast_step_is_the_plain_step_with_a_referral_programme(kind):
    # a programme boosts enrolled customers' talk in a window and stops when its budget is
    # spent: the fast step recomputes exposure when the boost starts or stops, and must match
    s = Scenario.from_dict(
        {
            "seed": 5,
            "market": {"organisations": 600, "initial_customers": 6},
            "network": {"kind": kind, "mean_degree": 6},
            "adoption": {"external": 0.01, "word_of_mouth": 0.5, "satisfied_share": 0.7, "talkers_per_customer": 1},
            "run": {"periods": 30, "time_step": 0.5},
            "referral": {
                "enrol": "share",
                "enrol_share": 0.5,
                "start": 4,
                "end": 20,
                "talk_multiplier": 2.0,
                "extra_talkers": 1.0,
                "reward": 1.0,
                "budget": 60.0,
            },
        }
    )
    for seed in range(2):
        net = build_network(s, np.random.default_rng([seed, 1]))
        initial = np.arange(6, dtype=np.int32) * 100
        dyn = np.random.SeedSequence(seed)
        fast = run_array(s, net, initial, np.random.default_rng(dyn))
        period, referrer, satisfied, programme = plain_run(s, net, initial, np.random.default_rng(dyn))
        assert np.array_equal(fast.adoption_period, period)
        assert np.array_equal(fast.referrer, referrer)
        assert np.array_equal(fast.extra["programme_cost"], programme.record()["programme_cost"])
        assert 0 < fast.extra["budget_exhausted_period"] < 30  # the budget ran out inside the window
