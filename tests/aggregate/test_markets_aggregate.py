"""Segments and a campaign calendar in the aggregate models, and the network runs that should follow them.

Sources: Bass (1969, "A new product growth for model consumer durables", Management Science) for
the constant-p closed form; Van den Bulte & Joshi (2007, "New product diffusion with influentials
and imitators", Marketing Science) for the two-segment model; scipy's solve_ivp as an outside
reference for the ODEs; Kurtz (1970, "Solutions of ordinary differential equations as limits of
pure jump Markov processes", J. Applied Probability) for the law of large numbers that makes the
complete-network runs follow the mean-field recursion.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from womlab import Scenario, run_one
from womlab.aggregate import (
    bass_calendar_share,
    bass_difference,
    bass_share,
    mapped_parameters,
    mapped_segments,
    segment_difference,
    segment_ode,
    van_den_bulte_joshi,
)


def test_calendar_closed_form_with_constant_p_is_bass():
    # Bass (1969): F(t) = (1 - e^{-(p+q)t}) / (1 + (q/p) e^{-(p+q)t}); a constant calendar is that curve.
    F = bass_calendar_share(np.full(31, 0.02), 0.45, every=4)
    assert np.allclose(F, bass_share(np.arange(0, 30.001, 0.25), 0.02, 0.45), atol=1e-12)


def test_calendar_closed_form_matches_scipy_on_a_stepping_calendar():
    # Outside reference: scipy's LSODA on dF/dt = (p(t) + qF)(1 - F), p a step function of the period.
    p = np.full(21, 0.005)
    p[4:8] = 0.06
    p[12:14] = 0.0
    q = 0.35
    F = bass_calendar_share(p, q, 0.01)
    sol = solve_ivp(
        lambda t, f: (p[min(int(np.ceil(t - 1e-12)), 20) if t > 0 else 1] + q * f) * (1 - f),
        (0, 20),
        [0.01],
        t_eval=np.arange(21.0),
        method="LSODA",
        rtol=1e-11,
        atol=1e-13,
        max_step=0.01,
    )
    assert np.max(np.abs(F - sol.y[0])) < 1e-7
    # and womlab's own segment ODE, with one segment, is the same curve
    assert np.max(np.abs(segment_ode(np.arange(21.0), p[:, None], np.array([[q]]), np.array([0.01]))[:, 0] - F)) < 1e-7


def test_van_den_bulte_joshi_influentials_follow_bass_and_mixing_reduces_to_bass():
    t = np.linspace(0, 25, 101)
    out = van_den_bulte_joshi(t, theta=0.15, p1=0.02, q1=0.6, p2=0.001, q2=0.3, w=0.7)
    # Van den Bulte & Joshi (2007): influentials ignore imitators, so their share is Bass(p1, q1).
    assert np.max(np.abs(out[:, 1] - bass_share(t, 0.02, 0.6))) < 1e-7
    assert np.allclose(out[:, 0], 0.15 * out[:, 1] + 0.85 * out[:, 2])
    # Derived: segments with one p and proportional mixing (Q_kj = q theta_j) move together, F_k = Bass(p, q).
    theta = np.array([0.3, 0.7])
    F = segment_ode(t, np.array([0.01, 0.01]), 0.4 * np.tile(theta, (2, 1)), np.zeros(2))
    assert np.max(np.abs(F @ theta - bass_share(t, 0.01, 0.4))) < 1e-7


def test_mapping_of_one_segment_is_the_market_mapping():
    s = Scenario.from_dict(
        {
            "adoption": {"word_of_mouth": 0.4, "satisfied_share": 0.7, "rule": "count", "talkers_per_customer": 2},
            "network": {"kind": "random"},
            "segments": {"all": {"share": 1.0}},
        }
    )
    assert mapped_segments(s).Q[0, 0] == pytest.approx(mapped_parameters(s).Q)


def _segment_curves(s: Scenario, reps: int) -> tuple[np.ndarray, np.ndarray]:
    """Customer share per period and segment, one (T + 1, K) table per replicate."""
    out, sizes = [], None
    for r in range(reps):
        res = run_one(s, (r,))
        k = len(res.segment_names)
        counts = np.zeros((res.periods + 1, k))
        adopted = res.adoption_period >= 0
        np.add.at(counts, (res.adoption_period[adopted], res.segment[adopted]), 1)
        sizes = np.bincount(res.segment, minlength=k)
        out.append(np.cumsum(counts, axis=0) / sizes)
    return np.array(out), sizes


TWO_SEGMENTS = {
    "influentials": {"share": 0.2, "external": 3.0, "word_of_mouth": 1.5, "talkers": 3, "satisfied_share": 0.9},
    "imitators": {"share": 0.8, "external": 0.2, "satisfied_share": 0.6},
}


def test_complete_network_two_segments_follow_the_segment_model():
    # Kurtz (1970): on the complete network each segment's share follows the mapped recursion up to
    # O(1/sqrt(N_k)) noise. Tolerance fixed before looking: 4 standard errors of the mean of R runs,
    # plus 2/N_k for the O(1/N) terms of whole counts.
    n, reps = 20_000, 8
    s = Scenario.from_dict(
        {
            "seed": 11,
            "market": {"organisations": n, "initial_customers": 0},
            "network": {"kind": "complete"},
            "adoption": {"rule": "share", "external": 0.01, "word_of_mouth": 0.5},
            "run": {"periods": 25, "step_probability": "linear"},
            "segments": TWO_SEGMENTS,
        }
    )
    shares, sizes = _segment_curves(s, reps)
    par = mapped_segments(s)
    expected = segment_difference(par.p, par.Q, par.initial, form="linear")
    se = shares.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(shares.mean(axis=0) - expected) <= 4 * se + 2 / sizes)
    # the influentials lead: the model says so, and the runs too
    assert expected[5, 0] > 2 * expected[5, 1]


def test_complete_network_campaign_calendar_follows_the_aggregate_model():
    # The same law of large numbers, with p stepping up for the imitators in periods 6-9 and for
    # everyone in periods 15-16 (a campaign calendar); tolerance as above, fixed before looking.
    n, reps = 20_000, 8
    s = Scenario.from_dict(
        {
            "seed": 12,
            "market": {"organisations": n, "initial_customers": 0},
            "network": {"kind": "complete"},
            "adoption": {"rule": "share", "external": 0.005, "word_of_mouth": 0.3},
            "run": {"periods": 22, "step_probability": "linear"},
            "segments": TWO_SEGMENTS,
            "campaign": [
                {"from": 6, "to": 9, "external": 0.04, "segment": "imitators"},
                {"from": 15, "to": 16, "multiplier": 6},
            ],
        }
    )
    shares, sizes = _segment_curves(s, reps)
    par = mapped_segments(s)
    expected = segment_difference(par.p, par.Q, par.initial, form="linear")
    se = shares.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(shares.mean(axis=0) - expected) <= 4 * se + 2 / sizes)
    # the campaign enters: the imitators' p rises from 0.001 to 0.008 (0.04 x their multiplier 0.2) in
    # period 6, so new imitators rise by about 0.007 (1 - F) beyond word of mouth's own growth
    new = np.diff(expected[:, 1])
    assert new[5] - new[4] > 0.005 * (1 - expected[5, 1])


def test_one_market_calendar_runs_follow_the_closed_form_on_a_fine_step():
    # One segment, exponential steps of 0.1: the difference model converges to the ODE, whose closed
    # form is bass_calendar_share; the runs follow it within 4 SE + 2/N + the step's O(dt) error,
    # bounded here by the gap between the step-0.1 difference model and the closed form.
    n, reps = 20_000, 6
    s = Scenario.from_dict(
        {
            "seed": 13,
            "market": {"organisations": n, "initial_customers": 0},
            "network": {"kind": "complete"},
            "adoption": {"rule": "share", "external": 0.01, "word_of_mouth": 0.4},
            "run": {"periods": 20, "time_step": 0.1},
            "campaign": [{"from": 3, "to": 6, "external": 0.05}],
        }
    )
    shares = np.array([run_one(s, (r,)).share for r in range(reps)])
    par = mapped_segments(s)
    closed = bass_calendar_share(par.p[:, 0], float(par.Q[0, 0]))
    stepped = segment_difference(par.p, par.Q, par.initial, time_step=0.1, form="exponential")[:, 0]
    se = shares.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(shares.mean(axis=0) - closed) <= 4 * se + 2 / n + np.abs(stepped - closed))
    assert np.max(np.abs(stepped - closed)) < 0.02


def test_before_a_region_opens_the_open_part_follows_bass_with_a_scaled_q():
    # Derived: under `share` with one segment, a closed region's organisations are neighbours that
    # never talk, so before it opens the open part (share theta of the market) sees T/D = s theta F_open
    # (times N/(N-1), as in mapped_parameters): Bass with Q' = q s theta N/(N-1) (Bass 1969's difference
    # form on the same step), and the closed part stays 0.
    s = Scenario.from_dict(
        {
            "market": {
                "organisations": 10_000,
                "initial_customers": 0,
                "regions": 4,
                "opens": [{"region": 3, "period": 12}],
            },
            "network": {"kind": "random", "mean_degree": 8},
            "adoption": {"external": 0.01, "word_of_mouth": 0.5, "satisfied_share": 0.8},
            "run": {"periods": 30, "step_probability": "linear"},
        }
    )
    par = mapped_segments(s)
    F = segment_difference(par.p, par.Q, par.initial, form="linear", opens=par.opens)
    assert par.opens.tolist() == [0, 0, 0, 12]
    bass = bass_difference(
        11, 0.01, 0.5 * 0.8 * 0.75 * 10_000 / 9_999, 0.0, form="linear"
    )  # N/(N-1): not its own neighbour
    assert np.allclose(F[:12, 0], bass, atol=1e-12) and np.all(F[:12, 3] == 0)
    assert F[13, 3] > 0  # it opens, and catches up on the word of mouth already there
    assert F[20, 3] > bass_difference(8, 0.01, 0.4, 0.0, form="linear")[-1]


def test_complete_network_market_that_grows_follows_the_aggregate_model():
    # Kurtz (1970), as above: runs with region 1 of 2 opening in period 10 against the mapped model
    # with its opening; 4 SE of the mean of R runs + 2/N_group. First written with R = 8, which failed
    # (z = -7 in the first periods, where an SE from 8 runs of small counts is itself unreliable; the
    # same 8 runs without the opening gave z = -4.4); raised to R = 24, seed and tolerance kept.
    n, reps = 20_000, 24
    s = Scenario.from_dict(
        {
            "seed": 14,
            "market": {
                "organisations": n,
                "initial_customers": 20,
                "regions": 2,
                "opens": [{"region": 1, "period": 10}],
            },
            "network": {"kind": "complete"},
            "adoption": {"rule": "share", "external": 0.005, "word_of_mouth": 0.4},
            "run": {"periods": 25, "step_probability": "linear"},
        }
    )
    runs = [run_one(s, (r,)) for r in range(reps)]
    by_region = np.array([[r.customers_by_region()[:, g] / np.sum(r.region == g) for g in range(2)] for r in runs])
    par = mapped_segments(s)
    expected = segment_difference(par.p, par.Q, par.initial, form="linear", opens=par.opens).T
    se = by_region.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(by_region.mean(axis=0) - expected) <= 4 * se + 2 / (n / 2))
    # the market's size is an output: N/2 until period 9, N from period 10
    assert runs[0].market_size.tolist() == [n // 2] * 10 + [n] * 16
    assert np.allclose(runs[0].share_of_current_market[:10], 2 * runs[0].share[:10])
