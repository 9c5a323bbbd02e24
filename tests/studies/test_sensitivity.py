"""Sobol indices and Morris screening (womlab.studies.sensitivity) against functions with known answers.

Ishigami function f = sin x1 + a sin² x2 + b x3⁴ sin x1 on [-π, π]³, a = 7, b = 0.1
(Ishigami & Homma 1990). Analytic indices (Homma & Saltelli 1996; tabulated in Saltelli
et al. 2010, Computer Physics Communications 181): S1 = 0.314, S2 = 0.442, S3 = 0,
ST1 = 0.558, ST2 = 0.442, ST3 = 0.244. Tolerance, fixed before looking: 4 bootstrap
standard errors of each estimate (the bootstrap treats the Sobol' rows as independent,
which overstates a quasi-Monte Carlo error, so the bound is conservative), and each
standard error must itself be below 0.02 at N = 2^13 so that the check has teeth.

Morris (1991): a linear term's elementary effects all equal its coefficient; an input
that does not enter the function has every elementary effect 0, so it ranks last by μ*
(Campolongo, Cariboni & Saltelli 2007).
"""

from __future__ import annotations

import numpy as np
import pytest

from womlab.scenario import Scenario
from womlab.studies.sensitivity import morris_design, morris_effects, saltelli_design, sobol_indices
from womlab.results.report import sensitivity_table
from womlab.studies.sweep import run_sweep

A, B = 7.0, 0.1


def ishigami(x: np.ndarray) -> np.ndarray:
    z = -np.pi + 2 * np.pi * x
    return np.sin(z[:, 0]) + A * np.sin(z[:, 1]) ** 2 + B * z[:, 2] ** 4 * np.sin(z[:, 0])


def test_analytic_ishigami_indices_are_the_published_values():
    # Homma & Saltelli (1996) closed forms, rounded as published.
    v = A**2 / 8 + B * np.pi**4 / 5 + B**2 * np.pi**8 / 18 + 0.5
    v1 = 0.5 * (1 + B * np.pi**4 / 5) ** 2
    v13 = B**2 * np.pi**8 * (1 / 18 - 1 / 50)
    assert round(v1 / v, 3) == 0.314 and round(A**2 / 8 / v, 3) == 0.442
    assert round((v1 + v13) / v, 3) == 0.558 and round(v13 / v, 3) == 0.244


def test_sobol_indices_of_the_ishigami_function():
    x = saltelli_design(2**13, 3, np.random.default_rng(20261201))
    t = sobol_indices(ishigami(x), 3, bootstrap=200, rng=1).set_index("input")
    expected = {("x1", "S1"): 0.314, ("x2", "S1"): 0.442, ("x3", "S1"): 0.0,
                ("x1", "ST"): 0.558, ("x2", "ST"): 0.442, ("x3", "ST"): 0.244}
    for (name, index), value in expected.items():
        se = t.loc[name, f"{index}_se"]
        assert se < 0.02
        assert abs(t.loc[name, index] - value) <= 4 * se, (name, index, t.loc[name, index], se)


def test_saltelli_design_blocks():
    # Saltelli (2002): AB_i is A with column i taken from B.
    x = saltelli_design(16, 3, np.random.default_rng(0))
    a, b = x[:16], x[16:32]
    for i in range(3):
        ab = x[(2 + i) * 16 : (3 + i) * 16]
        expect = a.copy()
        expect[:, i] = b[:, i]
        np.testing.assert_array_equal(ab, expect)
    with pytest.raises(ValueError, match="power of 2"):
        saltelli_design(10, 3, np.random.default_rng(0))


def test_morris_trajectories_move_one_input_by_delta():
    # Morris (1991): Δ = p / (2 (p - 1)) on a grid of p levels.
    p, k, r = 6, 4, 5
    x = morris_design(k, r, p, np.random.default_rng(3))
    delta = p / (2 * (p - 1))
    assert x.shape == (r * (k + 1), k)
    np.testing.assert_allclose(x * (p - 1), np.round(x * (p - 1)), atol=1e-12)  # on the levels
    assert x.min() >= 0 and x.max() <= 1 + 1e-12
    for t in range(r):
        steps = np.diff(x[t * (k + 1) : (t + 1) * (k + 1)], axis=0)
        assert ((np.abs(steps) > 1e-12).sum(axis=1) == 1).all()
        np.testing.assert_allclose(np.abs(steps).sum(axis=1), delta)
        assert sorted(np.flatnonzero(np.abs(steps) > 1e-12) % k) == list(range(k))  # each input once


def test_morris_ranks_an_inert_input_last_and_recovers_a_linear_coefficient():
    x = morris_design(4, 20, 4, np.random.default_rng(5))
    y = 2.0 * x[:, 0] + 5.0 * x[:, 1] ** 2 + np.sin(6 * x[:, 3])  # x3 (index 2) does not enter
    t = morris_effects(x, y, 20, names=["lin", "square", "inert", "sine"])
    assert t["input"].iloc[-1] == "inert"
    inert = t.set_index("input").loc["inert"]
    assert inert["mu_star"] == 0 and inert["sigma"] == 0
    lin = t.set_index("input").loc["lin"]
    assert lin["mu"] == pytest.approx(2.0, abs=1e-12) and lin["sigma"] == pytest.approx(0.0, abs=1e-12)


def test_morris_sweep_ranks_an_inert_scenario_field_below_word_of_mouth(tmp_path):
    # adoption.cap is used only by rule = "capped"; under rule = "share" it does not enter the
    # model, so its elementary effects are replicate noise only (common practice: a dummy input).
    s = Scenario.from_dict({
        "seed": 9,
        "market": {"organisations": 300, "initial_customers": 3},
        "network": {"kind": "random", "mean_degree": 6},
        "run": {"periods": 25},
        "sweep": {"design": "morris", "samples": 5, "replicates": 3, "levels": 4, "axes": {
            "adoption.word_of_mouth": {"from": 0.05, "to": 0.6},
            "adoption.cap": {"from": 0.01, "to": 0.5}}},
    })
    run_sweep(s, tmp_path / "m", 1, progress=False, report=False)
    t = sensitivity_table(tmp_path / "m")
    final = t[t["outcome"] == "final_share"].set_index("axis")
    assert final.loc["adoption.word_of_mouth", "mu_star"] > 5 * final.loc["adoption.cap", "mu_star"]
    assert (final["effects"] == 5).all()
