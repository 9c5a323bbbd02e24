"""Churn (customers who leave) in the array engine, its curves and metrics, and Bass with churn.

Statistical tolerances were fixed before looking, each with its basis beside it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from womlab import Scenario, ScenarioError, run_one, run_replicates
from womlab.aggregate import bass_churn_difference, bass_churn_ode, bass_share, expected_stay

BASE = {
    "seed": 11,
    "market": {"organisations": 1500, "initial_customers": 10, "regions": 3},
    "network": {"kind": "random", "mean_degree": 6},
    "adoption": {"rule": "share", "external": 0.01, "word_of_mouth": 0.4, "satisfied_share": 0.8},
    "run": {"periods": 20},
}


def scenario(adoption: dict | None = None, run: dict | None = None, **sections) -> Scenario:
    return Scenario.from_dict(
        {
            **BASE,
            "adoption": {**BASE["adoption"], **(adoption or {})},
            "run": {**BASE["run"], **(run or {})},
            **sections,
        }
    )


CASES = [
    ({}, {}, {}),
    (
        {"rule": "count", "word_of_mouth": 0.05},
        {"time_step": 0.5},
        {"network": {"kind": "small_world", "mean_degree": 6}},
    ),
    (
        {"rule": "cascade", "word_of_mouth": 0.3},
        {"time_step": 0.25},
        {"network": {"kind": "regional", "mean_degree": 6}},
    ),
    ({"rule": "threshold", "word_of_mouth": 0.5}, {}, {"network": {"kind": "scale_free", "mean_degree": 6}}),
    ({}, {}, {"network": {"kind": "complete"}}),
    ({}, {}, {"referral": {"enrol": "all", "talk_multiplier": 2.0, "reward": 1.0}}),
]


@pytest.mark.parametrize("adoption,run,sections", CASES)
def test_churn_draws_leave_every_other_draw_alone(adoption, run, sections):
    # common practice (common random numbers): churn draws from a stream of its own, so a churn rate
    # so small that no customer leaves within the horizon gives the run without churn, bit for bit
    off = scenario(adoption, run, **sections)
    on = off.replace("adoption.churn", 1e-300)
    for key in [(0,), (3,)]:
        a, b = run_one(off, key), run_one(on, key)
        assert a.leave_period is None and b.leave_period is not None
        assert not (b.leave_period >= 0).any()
        for name in ("adoption_period", "referrer", "satisfied", "adoption_time"):
            assert np.array_equal(getattr(a, name), getattr(b, name), equal_nan=True), name
        assert np.array_equal(a.customers, b.customers)
        assert list(a.curve().columns) == ["period", "time", "customers", "new_customers", "satisfied_customers"]


@pytest.mark.parametrize("time_step", [1.0, 0.5])
def test_mean_lifetime_is_the_geometric_mean(time_step):
    # one Exp(1) resistance against a step hazard δ·dt makes the stay geometric with success
    # probability 1 − e^{−δ dt} per step, mean dt / (1 − e^{−δ dt}) periods (the geometric law,
    # Feller 1968, §XI.2): 1/(1 − e^{−δ}) = 10.508 for one-period steps at δ = 0.1. 20,000 customers
    # from period 0, nobody adopts (p = q = 0); 150 periods leave few censored. Tolerance: 4
    # standard errors of the mean of a geometric stay, sd = sqrt(1 − π)/π steps.
    n, delta = 20_000, 0.1
    s = Scenario.from_dict(
        {
            "seed": 5,
            "market": {"organisations": n, "initial_customers": n},
            "network": {"kind": "ring", "mean_degree": 2},
            "adoption": {"external": 0.0, "word_of_mouth": 0.0, "churn": delta},
            "run": {"periods": 150, "time_step": time_step},
        }
    )
    r = run_one(s, (0,))
    expected = time_step / -math.expm1(-delta * time_step)
    assert expected == pytest.approx(expected_stay(delta, time_step))
    pi = -math.expm1(-delta * time_step)
    se = math.sqrt(1 - pi) / pi * time_step / math.sqrt(n)
    assert abs(r.mean_lifetime() - expected) <= 4 * se
    # the share still a customer after one period: e^{−δ} (a binomial share, 4 standard errors)
    stay = math.exp(-delta)
    assert abs(r.customers[1] / n - stay) <= 4 * math.sqrt(stay * (1 - stay) / n)


def test_curves_add_up_on_both_grids():
    s = scenario({"churn": 0.05, "churn_dissatisfied": 0.3}, {"time_step": 0.5, "report_every": 0.5})
    r = run_one(s, (1,))
    fine, coarse = r.curve(), r.curve(1.0)
    assert list(coarse.columns) == [
        "period",
        "time",
        "customers",
        "new_customers",
        "satisfied_customers",
        "former_customers",
        "ever_customers",
    ]
    for c in (fine, coarse):
        assert np.array_equal(c["customers"] + c["former_customers"], c["ever_customers"])
        assert np.all(np.diff(c["ever_customers"]) >= 0) and np.all(np.diff(c["former_customers"]) >= 0)
        assert np.all(c["satisfied_customers"] <= c["customers"])
    on_periods = fine[fine["time"] == fine["time"].round()].reset_index(drop=True)
    for name in ("customers", "former_customers", "ever_customers", "satisfied_customers"):
        assert np.array_equal(on_periods[name].to_numpy(), coarse[name].to_numpy()), name
    assert r.former_customers[-1] > 0 and r.customers[-1] < r.ever_customers[-1]
    # dissatisfied customers leave six times as fast: by the horizon a larger share of them has left
    adopted = r.adoption_period >= 0
    left = r.leave_period >= 0
    assert left[adopted & ~r.satisfied].mean() > left[adopted & r.satisfied].mean()
    # nobody leaves before it adopted, nor in the period it adopted from period 0
    assert np.all(r.leave_period[left] >= r.adoption_period[left])


def test_batch_metrics_with_churn_measure_ever_customers():
    s = scenario({"churn": 0.05})
    b = run_replicates(s, 3)
    m = b.metrics().set_index("metric")
    assert list(m.index)[-2:] == ["installed_base", "mean_lifetime"]
    assert m.loc["installed_base", "network_median"] == pytest.approx(np.median(b.shares()[:, -1]))
    assert m.loc["final_share", "network_median"] == pytest.approx(np.median(b.ever_shares()[:, -1]))
    assert m.loc["mean_lifetime", "aggregate"] == pytest.approx(expected_stay(0.05))
    assert "former_customers" in b.curves().columns


@pytest.mark.parametrize("time_step", [1.0, 0.5])
def test_complete_network_follows_bass_with_churn(time_step):
    # Law of large numbers for density-dependent Markov chains (Kurtz 1970): on the complete network
    # the installed base, former and ever customers follow the mean-field recursion of Bass with churn
    # (here with the exact N/(N−1) of a complete network: an organisation is not its own neighbour).
    # Tolerance fixed before looking: 4 standard errors of the mean of R runs, plus 2/N for counts.
    n, reps, p, q, sat = 20_000, 8, 0.01, 0.5, 0.7
    s = Scenario.from_dict(
        {
            "seed": 7,
            "market": {"organisations": n, "initial_customers": 0},
            "network": {"kind": "complete"},
            "adoption": {
                "rule": "share",
                "external": p,
                "word_of_mouth": q,
                "satisfied_share": sat,
                "churn": 0.05,
                "churn_dissatisfied": 0.2,
            },
            "run": {"periods": 25, "time_step": time_step},
        }
    )
    b = run_replicates(s, reps)
    expected = bass_churn_difference(
        25, p, q * n / (n - 1), satisfied_share=sat, churn=0.05, churn_dissatisfied=0.2, time_step=time_step
    )
    curves = b.curves()
    for name in ("customers", "former_customers", "ever_customers"):
        per = curves.pivot(index="replicate", columns="period", values=name).to_numpy() / n
        se = per.std(axis=0, ddof=1) / np.sqrt(reps)
        assert np.all(np.abs(per.mean(axis=0) - expected[name].to_numpy()) <= 4 * se + 2 / n), name
    # the aggregate curve womlab sets beside the runs is that recursion, up to the N/(N−1) factor
    assert np.max(np.abs(b.aggregate() - expected["customers"].to_numpy())) < 1e-3


def test_bass_with_churn_reduces_to_bass_and_to_exponential_decay():
    t = np.linspace(0, 20, 41)
    # without churn, the ODE is the Bass model (Bass 1969, closed form eq. 5)
    plain = bass_churn_ode(t, 0.03, 0.38 / 0.8, satisfied_share=0.8, initial_share=0.01)
    assert np.allclose(plain["customers"], bass_share(t, 0.03, 0.38, 0.01), atol=1e-7)
    assert np.allclose(plain["former_customers"], 0.0, atol=1e-12)
    # without adoption, customers decay as e^{−δ t} (each leaves at rate δ)
    decay = bass_churn_ode(t, 0.0, 0.0, churn=0.1, initial_share=0.4)
    assert np.allclose(decay["customers"], 0.4 * np.exp(-0.1 * t), atol=1e-8)
    # the difference form converges to the ODE as the step shrinks (error of order dt: halving the
    # step about halves the largest gap)
    ode = bass_churn_ode(np.arange(21.0), 0.02, 0.5, churn=0.08)["customers"].to_numpy()
    gaps = [
        np.max(np.abs(bass_churn_difference(20, 0.02, 0.5, churn=0.08, time_step=dt)["customers"] - ode))
        for dt in (1 / 8, 1 / 16, 1 / 32)
    ]
    assert gaps[0] > gaps[1] > gaps[2] and gaps[2] < 0.01
    assert 1.7 < gaps[0] / gaps[1] < 2.3 and 1.7 < gaps[1] / gaps[2] < 2.3


@pytest.mark.parametrize(
    "fields,message",
    [
        ({"adoption": {"churn": -0.1}}, r"adoption.churn must be a finite number >= 0, got -0.1"),
        ({"adoption": {"churn_dissatisfied": float("inf")}}, r"adoption.churn_dissatisfied must be .*got inf"),
        (
            {"referral": {"enrol": "all", "referred_churn_multiplier": 0.5}},
            r"referral.referred_churn_multiplier must be left out while no customer churns.*got 0.5",
        ),
        (
            {"adoption": {"churn": 0.1}, "run": {"clock": "continuous"}},
            r"adoption.churn = 0.1: churn \(customers who leave\) runs on run.clock = \"discrete\" only",
        ),
        ({"adoption": {"rejecters_warn": True}}, r"adoption.rejecters_warn must be false while adoption.warning = 0"),
    ],
)
def test_bad_churn_input_is_one_line_naming_the_field(fields, message):
    with pytest.raises(ScenarioError, match=message) as caught:
        Scenario.from_dict(fields)
    assert "\n" not in str(caught.value)


def test_mesa_churn_draws_leave_every_other_draw_alone():
    # as for the array engine: the Mesa model's churn uniforms come from the churn stream, so a churn
    # rate too small to matter leaves the run it always gave, bit for bit (common practice, CRN)
    off = scenario(run={"engine": "mesa", "periods": 10}, market={"organisations": 200, "initial_customers": 4})
    on = off.replace("adoption.churn", 1e-300)
    a, b = run_one(off, (2,)), run_one(on, (2,))
    assert a.leave_period is None and not (b.leave_period >= 0).any()
    for name in ("adoption_period", "referrer", "satisfied"):
        assert np.array_equal(getattr(a, name), getattr(b, name)), name
    # and with real churn its curves add up as the array engine's do
    r = run_one(off.replace("adoption.churn", 0.2), (2,))
    c = r.curve()
    assert np.array_equal(c["customers"] + c["former_customers"], c["ever_customers"])
    assert r.former_customers[-1] > 0


def test_sweep_run_study_times_adoptions_where_churn_is_on():
    # with heavy churn the installed base never reaches half the market, yet half the market adopts
    from womlab.studies.metrics import time_to_share
    from womlab.studies.sweep_studies import run_point_run

    s = scenario({"churn": 0.3, "word_of_mouth": 0.9}, {"periods": 30})
    row, _ = run_point_run(s, (0, 0), None, False)
    r = run_one(s.replace("adoption.churn", 0.3), (0, 0))
    assert row["t50"] == time_to_share(r.ever_share, 0.5) and np.isfinite(row["t50"])
    assert np.isnan(time_to_share(r.share, 0.5))
    assert row["final_share"] == r.share[-1]
