"""Warnings (negative word of mouth): rejecters in the array engine and the Mesa model, and
their aggregate counterpart. Tolerances were fixed before looking, each with its basis."""

from __future__ import annotations

import math

import networkx as nx
import numpy as np
import pytest

from womlab import ReferralNetwork, Scenario, ScenarioError, run_one, run_replicates
from womlab.aggregate import bass_churn_difference, bass_churn_ode, churn_curves
from womlab.dynamics.array_engine import run_array

BASE = {
    "seed": 13,
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
    ({"churn": 0.1}, {}, {"network": {"kind": "complete"}}),
    ({}, {}, {"referral": {"enrol": "all", "talk_multiplier": 2.0, "reward": 1.0}}),
    ({}, {"engine": "mesa", "periods": 8}, {"market": {"organisations": 200, "initial_customers": 4}}),
]


@pytest.mark.parametrize("adoption,run,sections", CASES)
def test_warnings_without_dissatisfied_customers_change_nothing(adoption, run, sections):
    # issue 16's check: with satisfied_share = 1 no customer is dissatisfied, so nobody warns and the
    # run is the one without warnings, bit for bit (the warning draws come from a stream of their own)
    off = scenario({**adoption, "satisfied_share": 1.0}, run, **sections)
    on = off.replace({"adoption.warning": 0.5, "adoption.rejecters_warn": True})
    for key in [(0,), (4,)]:
        a, b = run_one(off, key), run_one(on, key)
        assert a.rejection_period is None and not (b.rejection_period >= 0).any()
        for name in ("adoption_period", "referrer", "satisfied", "adoption_time"):
            x, y = getattr(a, name), getattr(b, name)
            assert (x is None and y is None) or np.array_equal(x, y, equal_nan=True), name


@pytest.mark.parametrize("adoption,run,sections", CASES[:4])
def test_warnings_too_weak_to_matter_leave_every_other_draw_alone(adoption, run, sections):
    # common random numbers (common practice): dissatisfied customers warn, but so weakly that nobody
    # rejects within the horizon; every adoption is as without warnings
    off = scenario(adoption, run, **sections)
    on = off.replace("adoption.warning", 1e-300)
    a, b = run_one(off, (1,)), run_one(on, (1,))
    assert not (b.rejection_period >= 0).any()
    assert np.array_equal(a.adoption_period, b.adoption_period) and np.array_equal(a.referrer, b.referrer)


@pytest.mark.parametrize("engine", ["array", "mesa"])
def test_competing_clocks_on_a_path(engine):
    # Competing risks with constant hazards (Kalbfleisch & Prentice 2002, ch. 8): b on a path a-b-c,
    # a and c customers from period 0, count rule, p = 0, one-period exponential steps. With one
    # satisfied and one dissatisfied neighbour b's adoption hazard is q and its rejection hazard w, so
    # in period 1 P(adopt) = q/(q+w)(1 − e^{−(q+w)}) and P(reject) = w/(q+w)(1 − e^{−(q+w)}); with two
    # dissatisfied neighbours P(reject) = 1 − e^{−2w}. Copies where the seeds' satisfaction is mixed,
    # about half of 4000 (array) or 1200 (Mesa); 4 binomial standard errors.
    q, w = 0.6, 0.9
    k = 4000 if engine == "array" else 1200
    network = ReferralNetwork.from_networkx(nx.disjoint_union_all([nx.path_graph(3)] * k))
    seeds = np.sort(np.concatenate([np.arange(k) * 3, np.arange(k) * 3 + 2])).astype(np.int32)
    s = Scenario.from_dict(
        {
            "seed": 2,
            "market": {"organisations": 3 * k, "initial_customers": 2 * k},
            "network": {"kind": "ring", "mean_degree": 2},
            "adoption": {"rule": "count", "external": 0.0, "word_of_mouth": q, "satisfied_share": 0.5, "warning": w},
            "run": {"periods": 1, "engine": engine},
        }
    )
    if engine == "array":
        r = run_array(s, network, seeds, np.random.default_rng(9))
    else:
        from womlab.dynamics.mesa_model import ReferralModel

        model = ReferralModel(s, network=network, initial=seeds, rng=9)
        model.step()
        r = model.result()
    sat = r.satisfied.reshape(k, 3)
    adopted = r.adoption_period.reshape(k, 3)[:, 1] == 1
    rejected = r.rejection_period.reshape(k, 3)[:, 1] == 1
    mixed = sat[:, 0] != sat[:, 2]
    both_bad = ~sat[:, 0] & ~sat[:, 2]
    either = -math.expm1(-(q + w))
    for observed, p, m in (
        (adopted[mixed], q / (q + w) * either, mixed.sum()),
        (rejected[mixed], w / (q + w) * either, mixed.sum()),
        (rejected[both_bad], -math.expm1(-2 * w), both_bad.sum()),
    ):
        assert abs(observed.mean() - p) <= 4 * math.sqrt(p * (1 - p) / m)
    # a rejection records who warned: a dissatisfied neighbour on its own path
    by = r.warned_by.reshape(k, 3)[:, 1][rejected]
    assert np.all(~r.satisfied[by]) and np.all(by // 3 == np.flatnonzero(rejected))


def test_curves_gain_rejecters():
    s = scenario({"warning": 0.5, "former_warn": True, "churn": 0.1}, {"time_step": 0.5, "report_every": 0.5})
    r = run_one(s, (0,))
    fine, coarse = r.curve(), r.curve(1.0)
    assert list(coarse.columns)[-1] == "rejecters" and coarse["rejecters"].iloc[-1] > 0
    assert np.array_equal(fine[fine["time"] % 1 == 0]["rejecters"].to_numpy(), coarse["rejecters"].to_numpy())
    # nobody both adopts and rejects
    assert not np.any((r.adoption_period >= 0) & (r.rejection_period >= 0))
    assert "rejecters" in run_replicates(s, 2).curves().columns


def test_complete_network_follows_bass_with_warnings():
    # Kurtz (1970) on the complete network: customers and rejecters follow the mean-field recursion of
    # Bass with churn and warnings, with N/(N − 1) for an organisation not its own neighbour.
    # Tolerance fixed before looking: 4 standard errors of the mean of R runs plus 2/N.
    n, reps = 20_000, 8
    s = Scenario.from_dict(
        {
            "seed": 17,
            "market": {"organisations": n, "initial_customers": 100},
            "network": {"kind": "complete"},
            "adoption": {
                "rule": "share",
                "external": 0.005,
                "word_of_mouth": 0.5,
                "satisfied_share": 0.7,
                "warning": 0.8,
                "rejecters_warn": True,
                "churn": 0.05,
            },
            "run": {"periods": 25},
        }
    )
    b = run_replicates(s, reps)
    f = n / (n - 1)
    expected = bass_churn_difference(
        25,
        0.005,
        0.5 * f,
        satisfied_share=0.7,
        churn=0.05,
        initial_share=100 / n,
        warning_rate=0.8 * f,
        rejecters_warn=True,
    )
    curves = b.curves()
    for name in ("customers", "rejecters", "former_customers"):
        per = curves.pivot(index="replicate", columns="period", values=name).to_numpy() / n
        se = per.std(axis=0, ddof=1) / np.sqrt(reps)
        assert np.all(np.abs(per.mean(axis=0) - expected[name].to_numpy()) <= 4 * se + 2 / n), name
    assert expected["rejecters"].iloc[-1] > 0.05  # warnings did something to compare
    mapped = churn_curves(s)
    assert np.max(np.abs(mapped["rejecters"] - expected["rejecters"])) < 1e-3


def test_bass_with_warnings_ode_and_difference_agree_as_the_step_shrinks():
    # the difference form is a time discretisation of the ODE: the gap shrinks about in proportion to
    # the step (common practice); and rejecters + adopters never exceed the market
    kw = {"satisfied_share": 0.6, "warning_rate": 0.7, "former_warn": True, "churn": 0.1, "initial_share": 0.01}
    ode = bass_churn_ode(np.arange(21.0), 0.01, 0.6, **kw)
    gaps = [
        np.max(np.abs(bass_churn_difference(20, 0.01, 0.6, time_step=dt, **kw)["rejecters"] - ode["rejecters"]))
        for dt in (1 / 8, 1 / 16, 1 / 32)
    ]
    assert gaps[0] > gaps[1] > gaps[2] and 1.7 < gaps[0] / gaps[1] < 2.3
    assert np.all(ode["ever_customers"] + ode["rejecters"] <= 1 + 1e-9)


@pytest.mark.parametrize(
    "fields,message",
    [
        ({"adoption": {"warning": -0.5}}, r"adoption.warning must be a finite number >= 0.*got -0.5"),
        ({"adoption": {"rule": "cascade", "warning": 1.5}}, r"adoption.warning must be in \[0, 1\], got 1.5"),
        ({"adoption": {"former_warn": True}}, r"adoption.former_warn must be false while adoption.warning = 0"),
        (
            {"adoption": {"warning": 0.2}, "run": {"clock": "continuous"}},
            r"adoption.warning = 0.2: warnings cannot run",
        ),
    ],
)
def test_bad_warning_input_is_one_line_naming_the_field(fields, message):
    with pytest.raises(ScenarioError, match=message) as caught:
        Scenario.from_dict(fields)
    assert "\n" not in str(caught.value)


def test_adoption_figure_draws_the_mechanisms_and_their_aggregate_counterparts():
    from womlab import adoption_figure

    s = scenario({"warning": 0.5, "churn": 0.1}, {"periods": 12})
    fig = adoption_figure(run_replicates(s, 2))
    top, bottom = fig.axes[:2]
    labels = [line.get_label() for line in top.get_lines()]
    assert "network, ever customers (mean)" in labels and "network, rejecters (mean)" in labels
    assert any(label.startswith("Bass with churn and warnings, difference model") for label in labels)
    assert not any(label.startswith("Bass ODE") for label in labels)  # plain Bass has neither mechanism
    # new customers per period are adoptions: never negative, though the installed base can fall
    assert min(line.get_ydata().min() for line in bottom.get_lines()) >= 0


def test_organisation_table_records_leaving_and_who_warned():
    s = scenario({"warning": 0.5, "churn": 0.1}, {"periods": 15})
    r = run_one(s, (2,))
    table = r.to_frame()
    assert list(table.columns)[-3:] == ["leave_period", "rejection_period", "warned_by"]
    assert int(table["customer"].sum()) == r.customers[-1]  # customers now: those who have not left
    rejected = table["rejection_period"].notna()
    assert int(rejected.sum()) == r.rejecters[-1]
    assert (table.loc[rejected, "warned_by"].to_numpy(dtype=int) == r.warned_by[rejected.to_numpy()]).all()
    # without the mechanisms the table has its usual columns
    plain = run_one(scenario(), (2,)).to_frame()
    assert "leave_period" not in plain.columns and "warned_by" not in plain.columns
