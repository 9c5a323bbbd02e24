"""The aggregate models against their published closed forms and worked values."""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, bass_difference, bass_ode, bass_peak_time, bass_share, mapped_parameters, run_replicates
from womlab.aggregate import aggregate_curve, stock_and_flow

P, Q = 0.03, 0.38


@pytest.mark.parametrize("f0", [0.0, 0.01, 0.2])
def test_bass_closed_form_matches_solve_ivp(f0):
    # Bass (1969): F(t) = (1 - e^{-(p+q)t}) / (1 + (q/p) e^{-(p+q)t}) solves dF/dt = (1 - F)(p + qF);
    # the F(0) = f0 generalisation is the same Riccati solution with a shifted constant.
    t = np.linspace(0, 30, 301)
    assert np.max(np.abs(bass_share(t, P, Q, f0) - bass_ode(t, P, Q, f0))) < 1e-8


def test_bass_worked_values():
    # Bass (1969): peak time t* = ln(q/p)/(p+q) and F(t*) = 1/2 - p/(2q); F(10) from the closed form.
    t_star = bass_peak_time(P, Q)
    assert t_star == pytest.approx(6.1926, abs=5e-5)
    assert float(bass_share(t_star, P, Q)) == pytest.approx(0.460526, abs=5e-7)
    assert float(bass_share(10.0, P, Q)) == pytest.approx(0.812803, abs=5e-7)


def test_logistic_limit_without_external_influence():
    # With p = 0 the Bass model is the logistic equation dF/dt = qF(1 - F) (Verhulst 1838).
    t = np.linspace(0, 20, 41)
    f0 = 0.01
    expected = f0 * np.exp(Q * t) / (1 - f0 + f0 * np.exp(Q * t))
    assert np.allclose(bass_share(t, 0.0, Q, f0), expected, atol=1e-12)
    assert np.allclose(bass_ode(t, 0.0, Q, f0), expected, atol=1e-8)


def test_linear_difference_equation_worked_values():
    # Discrete Bass model F_{t+1} = F_t + (p + q F_t)(1 - F_t), hand-computed for p = 0.03, q = 0.38
    # (common practice in forecasting textbooks' spreadsheet form of the Bass model).
    f = bass_difference(20, P, Q, form="linear")
    assert f[1:6] == pytest.approx([0.030000, 0.070158, 0.122843, 0.190104, 0.272907], abs=5e-7)
    new = np.diff(f)
    assert int(np.argmax(new)) + 1 == 8


def test_difference_equation_converges_to_ode_as_step_shrinks():
    # Euler's method is first order: halving the step roughly halves the error (common practice).
    t = np.arange(21.0)
    exact = bass_share(t, P, Q)
    errors = [np.max(np.abs(bass_difference(20, P, Q, time_step=dt, form="linear") - exact)) for dt in (1, 0.5, 0.25)]
    assert errors[0] > errors[1] > errors[2]
    assert errors[1] / errors[2] == pytest.approx(2.0, rel=0.15)


def test_stock_and_flow_without_cap_is_the_bass_difference_equation():
    # With slope = Q / (N s tau) and no cap, buying = available * (p + Q C/N): the discrete Bass model.
    n, s, tau = 10_000, 0.5, 2.0
    customers = stock_and_flow(
        30, n, 100, slope=Q / (n * s * tau), satisfied_share=s, talkers_per_customer=tau, external=P, form="linear"
    )
    assert np.allclose(customers / n, bass_difference(30, P, Q, 0.01, form="linear"), atol=1e-12)


def test_stock_and_flow_cap_binds():
    # A ceiling on the per-period buying rate: customers can never grow faster than cap * available.
    c = stock_and_flow(10, 1000, 10, slope=1.0, satisfied_share=1.0, talkers_per_customer=1.0, cap=0.05)
    available = 1000 - c[:-1]
    assert np.allclose(np.diff(c), 0.05 * available)


def test_mapping_share_and_count():
    # Mean-field mapping (documented in aggregate.mapped_parameters): share Q = q s N/(N-1);
    # count Q = q s tau k N/(N-1); the stock-and-flow slope q k/(N-1), which is q on the complete
    # network (every talker reaches every potential customer: the exact counterpart).
    base = {
        "market": {"organisations": 1000},
        "network": {"kind": "regular", "mean_degree": 6},
        "adoption": {"word_of_mouth": 0.1, "satisfied_share": 0.5, "talkers_per_customer": 3},
    }
    share = Scenario.from_dict({**base, "adoption": {**base["adoption"], "rule": "share"}})
    count = Scenario.from_dict({**base, "adoption": {**base["adoption"], "rule": "count"}})
    assert mapped_parameters(share).Q == pytest.approx(0.05 * 1000 / 999, rel=1e-12)
    assert mapped_parameters(count).Q == pytest.approx(0.1 * 0.5 * 3 * 6 * 1000 / 999, rel=1e-12)
    assert mapped_parameters(count).slope == pytest.approx(0.1 * 6 / 999, rel=1e-12)
    complete = Scenario.from_dict(
        {**base, "network": {"kind": "complete"}, "adoption": {**base["adoption"], "rule": "capped"}}
    )
    assert mapped_parameters(complete).slope == pytest.approx(0.1, rel=1e-12)
    # the Bass Q for F = C/N is the slope times all the talkers the market could have, s tau N
    par = mapped_parameters(complete)
    assert par.Q == pytest.approx(par.slope * 0.5 * 3 * 1000, rel=1e-12)


def test_complete_network_reproduces_the_difference_equation():
    # Law of large numbers for density-dependent Markov chains (Kurtz 1970): on the complete network
    # the share follows F_{t+1} = F_t + (1 - F_t)(p + q s F_t N/(N-1)) up to O(1/sqrt N) noise.
    # Tolerance fixed before looking: 4 standard errors of the mean of R runs, plus 2/N for counts.
    n, reps = 20_000, 8
    s = Scenario.from_dict(
        {
            "seed": 7,
            "market": {"organisations": n, "initial_customers": 0},
            "network": {"kind": "complete"},
            "adoption": {"rule": "share", "external": P, "word_of_mouth": Q, "satisfied_share": 1.0},
            "run": {"periods": 25, "step_probability": "linear"},
        }
    )
    shares = run_replicates(s, reps).shares()
    expected = np.empty(26)
    expected[0] = f = 0.0
    for t in range(1, 26):
        f = f + (1 - f) * (P + Q * f * n / (n - 1))
        expected[t] = f
    se = shares.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(shares.mean(axis=0) - expected) <= 4 * se + 2 / n)
    # and the aggregate curve womlab reports beside it is that recursion, factor N/(N-1) included
    assert np.max(np.abs(aggregate_curve(s) - expected)) < 1e-12
