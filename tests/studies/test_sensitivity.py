"""Sobol indices and Morris screening (womlab.studies.sensitivity) against functions with known answers.

Ishigami function f = sin x1 + a sin² x2 + b x3⁴ sin x1 on [-π, π]³, a = 7, b = 0.1
(Ishigami & Homma 1990). Analytic indices (Homma & Saltelli 1996; tabulated in Saltelli
et al. 2010, Computer Physics Communications 181): S1 = 0.314, S2 = 0.442, S3 = 0,
ST1 = 0.558, ST2 = 0.442, ST3 = 0.244. Tolerance, fixed before looking: 4 standard errors
of each estimate (from the spread over the design's 8 independent scrambles), and each
standard error must itself be below 0.01 at N = 2^13 so that the check has teeth. The
standard errors are checked against the real spread of the estimates over 24 independent
designs (randomised quasi-Monte Carlo: Owen 1997).

Morris (1991): a linear term's elementary effects all equal its coefficient; an input
that does not enter the function has every elementary effect 0, so it ranks last by μ*
(Campolongo, Cariboni & Saltelli 2007).
"""

from __future__ import annotations

import numpy as np
import pytest

from womlab.results.report import sensitivity_table
from womlab.scenario import Scenario
from womlab.studies.sensitivity import morris_design, morris_effects, saltelli_design, sobol_indices
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
    t = sobol_indices(ishigami(x), 3).set_index("input")
    assert (t["scrambles"] == 8).all() and (t["note"] == "").all()
    expected = {
        ("x1", "S1"): 0.314,
        ("x2", "S1"): 0.442,
        ("x3", "S1"): 0.0,
        ("x1", "ST"): 0.558,
        ("x2", "ST"): 0.442,
        ("x3", "ST"): 0.244,
    }
    for (name, index), value in expected.items():
        se = t.loc[name, f"{index}_se"]
        assert se < 0.01
        assert abs(t.loc[name, index] - value) <= 4 * se, (name, index, t.loc[name, index], se)


def test_sobol_standard_errors_match_the_spread_over_independent_designs():
    # Owen (1997): independent scrambles give unbiased variance estimates of a scrambled-net
    # estimate. Over 24 designs (N = 2^11) the mean reported standard error must be within a
    # factor 1.5 of the estimates' real standard deviation (each SE comes from 8 scrambles, so
    # its relative error is about 1/sqrt(14) = 0.27; averaged over 24 designs about 0.06, and the
    # real spread from 24 designs is itself uncertain by about 1/sqrt(46) = 0.15: a factor 1.5 is
    # over 2.5 of these combined). The row bootstrap this replaces was four to six times too large here.
    tables = [sobol_indices(ishigami(saltelli_design(2**11, 3, np.random.default_rng(seed))), 3) for seed in range(24)]
    for col in ("S1", "ST"):
        values = np.array([t[col].to_numpy() for t in tables])
        ses = np.array([t[f"{col}_se"].to_numpy() for t in tables])
        real = values.std(axis=0, ddof=1)
        ratio = ses.mean(axis=0) / real
        keep = real > 1e-4  # S3 = 0 and ST2 = S2 exactly: no interaction of x2, nothing to compare
        assert ((ratio[keep] > 1 / 1.5) & (ratio[keep] < 1.5)).all(), (col, ratio, real)


def test_sobol_estimator_is_scipys_on_filtered_rows_too():
    # reference library: scipy.stats.sobol_indices (Saltelli et al. 2010 estimators, centred as
    # in Sobol' & Levitan 1999). Leaving out NaN rows must give what scipy gives on the rows kept
    # when they are a power of 2; here 3 of every 4 rows are kept by scramble... so compare on a
    # hand-filtered design of 2^9 rows against 2^9 rows padded with NaN partners.
    from scipy import stats

    x = saltelli_design(2**9, 3, np.random.default_rng(7))
    y = ishigami(x)
    n = 2**9
    fa, fb, fab = y[:n], y[n : 2 * n], y[2 * n :].reshape(3, n)
    ref = stats.sobol_indices(func={"f_A": fa[None], "f_B": fb[None], "f_AB": fab[:, None]}, n=n)
    padded = np.concatenate([np.r_[fa, np.nan], np.r_[fb, 0.0], *[np.r_[f, 0.0] for f in fab]])
    t = sobol_indices(padded, 3, scrambles=1)  # N = 513 rows, one NaN: the written-out path on 512
    np.testing.assert_allclose(t["S1"], np.ravel(ref.first_order), rtol=1e-12)
    np.testing.assert_allclose(t["ST"], np.ravel(ref.total_order), rtol=1e-12)
    assert (t["rows"] == n).all()


def test_indices_outside_the_unit_interval_are_flagged():
    # by hand (Saltelli et al. 2010, Table 2 (b), (f), centred on the mean of A and B): N = 4,
    # f(A) = f(B) = (1, 0, 0, 0), f(AB) = 0 give S1 = -0.1875 / 0.1875 = -1 and
    # ST = 0.125 / 0.1875 = 2/3; a first-order index of -1 is the error of a tiny sample
    y = np.array([1.0, 0, 0, 0, 1, 0, 0, 0, 0, 0, 0, 0])
    t = sobol_indices(y, 1)
    assert t.loc[0, "S1"] == pytest.approx(-1.0) and t.loc[0, "ST"] == pytest.approx(2 / 3)
    assert "S1 = -1 outside [0, 1]" in t.loc[0, "note"] and "N = 4" in t.loc[0, "note"]


def test_saltelli_design_blocks():
    # Saltelli (2002): AB_i is A with column i taken from B; A and B are made of independent
    # scrambles, each a balanced Sobol' point set (each of the 4 points in its own quarter of [0, 1)).
    x = saltelli_design(16, 3, np.random.default_rng(0))
    for j in range(4):
        block = x[4 * j : 4 * j + 4]
        assert sorted(np.floor(block[:, 0] * 4).astype(int)) == [0, 1, 2, 3]
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
    s = Scenario.from_dict(
        {
            "seed": 9,
            "market": {"organisations": 300, "initial_customers": 3},
            "network": {"kind": "random", "mean_degree": 6},
            "run": {"periods": 25},
            "sweep": {
                "design": "morris",
                "samples": 5,
                "replicates": 3,
                "levels": 4,
                "axes": {
                    "adoption.word_of_mouth": {"from": 0.05, "to": 0.6},
                    "adoption.cap": {"from": 0.01, "to": 0.5},
                },
            },
        }
    )
    run_sweep(s, tmp_path / "m", 1, progress=False, report=False)
    t = sensitivity_table(tmp_path / "m")
    final = t[t["outcome"] == "final_share"].set_index("axis")
    assert final.loc["adoption.word_of_mouth", "mu_star"] > 5 * final.loc["adoption.cap", "mu_star"]
    assert (final["effects"] == 5).all()
