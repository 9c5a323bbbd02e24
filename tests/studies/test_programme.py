"""Referral programmes (womlab.dynamics.programme): the programme inside the array engine, payments and
budget, discounting, ROI and the acceleration/expansion split."""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, ScenarioError, evaluate_programme, programme_economics, run_paired
from womlab.cli import main
from womlab.dynamics import RunResult
from womlab.dynamics.programme import ProgrammeRun
from womlab.scenario import Referral
from womlab.studies.continuation import continue_paired, truncate
from womlab.studies.programme import customer_values, roi, value_flow

BASE = {
    "seed": 21,
    "market": {"organisations": 600, "initial_customers": 6},
    "network": {"kind": "small_world", "mean_degree": 6, "rewiring": 0.2},
    "adoption": {
        "external": 0.01,
        "word_of_mouth": 0.5,
        "satisfied_share": 0.7,
        "talkers_per_customer": {"distribution": "poisson", "mean": 2},
    },
    "run": {"periods": 25},
}


def _scenario(**referral):
    data = {k: (dict(v) if isinstance(v, dict) else v) for k, v in BASE.items()}
    data["referral"] = referral
    return Scenario.from_dict(data)


def _attributed_in_window(run, start, end):
    """Adoptions in periods start..end whose referrer is enrolled (the definition of a successful referral)."""
    ap, ref, enrolled = run.adoption_period, run.referrer, run.extra["enrolled"]
    ok = (ref >= 0) & (ap >= start) & (ap <= end)
    ok[ok] = enrolled[ref[ok]]
    return ok


# ---------------------------------------------------------------- common random numbers
@pytest.mark.parametrize(
    "changes",
    [
        {"enrol": "all"},
        {"enrol": "share", "enrol_share": 0.4, "start": 3, "end": 10},
        {"enrol": "strategy", "strategy": "random", "enrol_count": 50},
    ],
)
@pytest.mark.parametrize("run", [{"periods": 25}, {"periods": 25, "time_step": 0.5}])
def test_neutral_programme_reproduces_the_baseline_exactly(changes, run):
    # Common random numbers (Law & Kelton, Simulation Modeling and Analysis, ch. on
    # variance reduction): a programme with multiplier 1, no extra talkers and zero reward
    # changes nothing, so on the same streams it must give the baseline's run bit for bit.
    base = _scenario().replace({f"run.{k}": v for k, v in run.items()})
    neutral = base.replace({f"referral.{k}": v for k, v in changes.items()})
    runs = run_paired({"baseline": base, "neutral": neutral}, 4)
    for b, p in zip(runs["baseline"], runs["neutral"]):
        assert np.array_equal(b.adoption_period, p.adoption_period)
        assert np.array_equal(b.referrer, p.referrer)
        assert np.array_equal(b.satisfied, p.satisfied)
        assert p.extra["programme_cost"].sum() == 0.0


def test_neutral_programme_on_the_complete_network():
    base = _scenario().replace({"network.kind": "complete"})
    runs = run_paired({"b": base, "p": base.replace("referral.enrol", "all")}, 2)
    for b, p in zip(runs["b"], runs["p"]):
        assert np.array_equal(b.referrer, p.referrer)


def test_enrolment_is_common_to_variants_and_does_not_touch_dynamics():
    # Enrolment has its own stream: two programmes that differ only in reward enrol the
    # same organisations on each replicate (common random numbers; design of womlab.dynamics.programme).
    a = _scenario(enrol="share", enrol_share=0.3, reward=1.0)
    b = a.replace("referral.reward", 5.0)
    runs = run_paired({"a": a, "b": b}, 3)
    for x, y in zip(runs["a"], runs["b"]):
        assert np.array_equal(x.extra["enrolled"], y.extra["enrolled"])
        assert np.array_equal(x.adoption_period, y.adoption_period)  # payments alone change no adoption
        assert 0.2 < x.extra["enrolled"].mean() < 0.4


def test_enrolment_by_hubs_enrols_the_highest_degree_organisations():
    # The hubs strategy's definition (highest degree; womlab.seeding) applied to enrolment.
    from womlab import build_network, streams

    s = _scenario(enrol="strategy", strategy="hubs", enrol_count=30, talk_multiplier=2.0)
    run = run_paired({"p": s}, 1)["p"][0]
    net = build_network(s, np.random.default_rng(streams(s.seed, (0,)).network))
    deg = net.degree()
    enrolled = run.extra["enrolled"]
    assert enrolled.sum() == 30
    assert deg[enrolled].min() >= deg[~enrolled].max()


# ---------------------------------------------------------------- payments and budget
def test_cost_is_reward_times_attributed_referrals_in_the_window():
    # Issue 6's definition: cost = reward x referrals attributed to enrolled referrers in the window.
    s = _scenario(enrol="share", enrol_share=0.5, start=4, end=12, talk_multiplier=1.5, reward=3.0, referred_reward=1.0)
    runs = run_paired({"p": s}, 4)["p"]
    for run in runs:
        ok = _attributed_in_window(run, 4, 12)
        assert ok.sum() > 20
        assert run.extra["programme_cost"].sum() == pytest.approx(4.0 * ok.sum(), abs=1e-9)
        assert np.array_equal(run.extra["rewarded"], ok)
        cost = run.extra["programme_cost"]
        assert cost[:4].sum() == 0 and cost[13:].sum() == 0


def test_budget_cap_holds_exactly_and_the_boost_stops_when_spent():
    # Budget of 100 at 7 per referral: exactly 14 referrals are paid (98 <= 100 < 105).
    capped = _scenario(enrol="all", talk_multiplier=2.0, reward=7.0, budget=100.0)
    runs = run_paired({"capped": capped}, 4)["capped"]
    for run in runs:
        e = run.extra
        assert e["programme_cost"].sum() == pytest.approx(98.0)
        assert e["programme_paid_referrals"].sum() == 14
        stop = e["budget_exhausted_period"]
        assert stop >= 1
        assert e["programme_cost"][stop + 1 :].sum() == 0
        # The boost stops after the period in which the budget ran out: the run is the
        # same as a programme that ends in that period with no cap (payments alone move
        # nobody; one step per period, so the boost stops exactly at the period's end).
        same = capped.replace({"referral.end": int(stop), "referral.budget": None})
        other = run_paired({"x": same}, keys=[run.spawn_key], replicates=1)["x"][0]
        assert np.array_equal(run.adoption_period, other.adoption_period)


def test_bonus_at_threshold_and_all_or_nothing_payments_by_hand():
    # Worked by hand (the scheme's definition): referrer 5 brings in 3, 1 and 2 in one step;
    # scheme "both", reward 1, bonus 10 at the 2nd referral. In id order the payments are
    # 1 (org 1), 11 (org 2), 1 (org 3); a budget of 12 pays the first two and refuses the third.
    ref = Referral(enrol="all", scheme="both", reward=1.0, bonus=10.0, bonus_threshold=2, budget=12.0)
    prog = ProgrammeRun(ref, np.ones(8, dtype=bool), periods=5)
    prog.settle(2, np.array([3, 1, 2]), np.array([5, 5, 5]))
    assert prog.cost[2] == 12.0
    assert prog.rewarded.tolist() == [False, True, True, False, False, False, False, False]
    assert prog.exhausted_period == 2
    assert not prog.running(3)
    prog.settle(3, np.array([4]), np.array([5]))
    assert prog.cost.sum() == 12.0


def test_bonus_scheme_pays_once_per_referrer():
    s = _scenario(enrol="all", scheme="bonus", bonus=10.0, bonus_threshold=2, talk_multiplier=1.5)
    for run in run_paired({"p": s}, 3)["p"]:
        counts = np.bincount(run.referrer[_attributed_in_window(run, 1, 25)], minlength=run.n)
        assert run.extra["programme_cost"].sum() == pytest.approx(10.0 * np.sum(counts >= 2))


# ---------------------------------------------------------------- economics
def test_discounting_matches_the_annuity_formula():
    # Standard finance (present value of an ordinary annuity, e.g. Brealey, Myers & Allen,
    # Principles of Corporate Finance): v per period for periods 1..T is worth v (1 - (1+r)^-T) / r.
    v, r, T = 3.0, 0.02, 40
    ref = Referral(value_per_period=v, discount_rate=r)
    vals = customer_values(np.array([1, 0, -1, T]), ref, T)
    assert vals[0] == pytest.approx(v * (1 - (1 + r) ** -T) / r, rel=1e-12)
    assert vals[1] == pytest.approx(v + v * (1 - (1 + r) ** -T) / r, rel=1e-12)  # annuity due: one more payment
    assert vals[2] == 0.0
    assert vals[3] == pytest.approx(v * (1 + r) ** -T)
    lt = customer_values(np.array([5]), Referral(lifetime_value=40.0, discount_rate=r), T)
    assert lt[0] == pytest.approx(40.0 / (1 + r) ** 5)


def test_value_flow_adds_up_to_customer_values_on_a_run():
    s = _scenario(enrol="all", value_per_period=2.0, discount_rate=0.03)
    run = run_paired({"p": s}, 1)["p"][0]
    ref = s.referral
    assert value_flow(run, ref).sum() == pytest.approx(customer_values(run.adoption_period, ref, 25).sum())


def _hand_run(adoption_period, referrer, cost):
    ap = np.asarray(adoption_period, dtype=np.int32)
    return RunResult(
        periods=len(cost) - 1,
        adoption_period=ap,
        referrer=np.asarray(referrer, dtype=np.int32),
        satisfied=ap >= 0,
        region=np.zeros(ap.size, np.int32),
        initial=np.array([0], np.int32),
        engine="hand-made",
        extra={"programme_cost": np.asarray(cost, dtype=float)},
    )


def test_roi_of_the_bank_case_arithmetic():
    # Schmitt, Skiera & Van den Bulte (2011), "Referral programs and customer value", as
    # summarised by its authors: a referred customer worth 40 more for a reward of 25 gives
    # ROI = (40 - 25) / 25 = 0.60.
    assert roi(40.0, 25.0) == pytest.approx(0.60)
    ref = Referral(enrol="all", lifetime_value=40.0, discount_rate=0.0)
    baseline = _hand_run([0, -1, 3], [-1, -1, -1], [0, 0, 0, 0])
    programme = _hand_run([0, 2, 3], [-1, 0, -1], [0, 0, 25, 0])
    e = programme_economics(baseline, programme, ref)
    assert e["incremental_value"] == pytest.approx(40.0)
    assert e["cost"] == pytest.approx(25.0)
    assert e["roi"] == pytest.approx(0.60)
    assert e["cost_per_incremental_customer"] == pytest.approx(25.0)
    # at the horizon the referred customer (never won by the baseline) is expansion
    assert e["expansion_at_horizon"] == pytest.approx(40.0) and e["acceleration_at_horizon"] == 0.0
    assert e["break_even_period"] == 2.0
    assert np.isnan(e["expansion"])  # no continuation given: no whole-life split
    # continued: the baseline wins organisation 1 in period 5, so in the end it was acceleration,
    # worth 40 (1.1^-2 - 1.1^-5) at a discount rate of 10 %
    ref = Referral(enrol="all", lifetime_value=40.0, discount_rate=0.1)
    c0 = _hand_run([0, 5, 3], [-1, 0, -1], [0] * 7)
    c1 = _hand_run([0, 2, 3], [-1, 0, -1], [0, 0, 25, 0, 0, 0, 0])
    e = programme_economics(baseline, programme, ref, continued=(c0, c1))
    assert e["expansion"] == 0.0 and e["expanded"] == 0 and e["accelerated"] == 1
    assert e["acceleration"] == pytest.approx(40.0 * (1.1**-2 - 1.1**-5))
    assert e["incremental_value_lifetime"] == pytest.approx(e["acceleration"]) and e["continued_to"] == 6


def test_complete_network_value_is_all_acceleration_in_the_end_though_not_at_the_horizon():
    # Libai, Muller & Peres (2013): with external influence p > 0 and a fixed market without
    # churn, every organisation adopts in the end with or without the programme, so the whole
    # value of a programme is acceleration: expansion is exactly 0 once the markets are
    # exhausted. At a 10-period horizon the same runs label more than half of the value
    # expansion (55.7 % in this set-up): the horizon cuts off the baseline's late adopters.
    s = Scenario.from_dict(
        {
            "seed": 5,
            "market": {"organisations": 1000, "initial_customers": 10},
            "network": {"kind": "complete"},
            "adoption": {"external": 0.01, "word_of_mouth": 0.3, "satisfied_share": 0.8},
            "run": {"periods": 10},
            "referral": {
                "enrol": "all",
                "talk_multiplier": 2.0,
                "reward": 1.0,
                "value_per_period": 1.0,
                "discount_rate": 0.01,
            },
        }
    )
    study = evaluate_programme(s, 8, degrees=False)
    table = study.per_replicate()
    assert study.exhausted.all()
    assert (table["expansion"] == 0).all() and (table["expanded"] == 0).all() and (table["lost"] == 0).all()
    assert (table["acceleration"] > 0).all()
    assert table["expansion_at_horizon"].sum() > 0.5 * table["incremental_value"].sum()
    summary = study.summary().set_index("outcome")
    assert summary.loc["expansion", "estimate"] == 0.0


def test_continuation_repeats_the_run_to_the_horizon_bit_for_bit():
    # common random numbers: a run continued past the horizon with the programme off is, up to the
    # horizon, the run made to the horizon (array engine, event engine and Mesa model)
    base = _scenario(enrol="share", enrol_share=0.5, talk_multiplier=3.0, reward=2.0, lifetime_value=10.0)
    for engine in ({}, {"run.clock": "continuous"}, {"run.engine": "mesa"}):
        s = base.replace({"market.organisations": 200, "market.initial_customers": 2})
        if engine.get("run.clock") == "continuous":
            s = s.replace("referral.enrol", "none")  # no programme on the continuous clock
        s = s.replace(engine) if engine else s
        cont = continue_paired({"arm": s}, 2, lifetime=7)
        short = run_paired({"arm": s}, 2)["arm"]
        for long_run, run in zip(cont.runs["arm"], short):
            cut = truncate(long_run, s.run.periods)
            assert long_run.periods == s.run.periods + 7
            np.testing.assert_array_equal(cut.adoption_period, run.adoption_period)
            np.testing.assert_array_equal(cut.referrer, run.referrer)
            np.testing.assert_array_equal(cut.satisfied, run.satisfied)
            for key in ("programme_cost", "programme_paid_referrals"):
                if key in run.extra:
                    np.testing.assert_array_equal(cut.extra[key], run.extra[key])


def test_programme_is_off_after_the_horizon_in_the_continuation():
    # the continuation switches the programme off: nothing is paid after the horizon
    s = _scenario(enrol="all", talk_multiplier=2.0, reward=1.0, value_per_period=1.0)
    cont = continue_paired({"baseline": s.replace("referral.enrol", "none"), "programme": s}, 2, lifetime=10)
    for run in cont.runs["programme"]:
        assert run.extra["programme_cost"][s.run.periods + 1 :].sum() == 0.0


def test_acceleration_plus_expansion_is_the_incremental_value():
    # Libai, Muller & Peres (2013): the two parts add up to the programme's value, at the
    # horizon and on the continuation
    s = _scenario(
        enrol="share",
        enrol_share=0.5,
        talk_multiplier=3.0,
        reward=2.0,
        lifetime_value=10.0,
        discount_rate=0.01,
        lifetime=15,
    )
    table = evaluate_programme(s, 6).per_replicate()
    assert np.allclose(table["acceleration_at_horizon"] + table["expansion_at_horizon"], table["incremental_value"])
    assert np.allclose(table["acceleration"] + table["expansion"], table["incremental_value_lifetime"])
    assert (table["expanded_at_horizon"] > 0).any()  # the split is not vacuous at this horizon
    assert (table["continued_to"] == 40).all()


def test_a_negative_lifetime_names_the_field():
    with pytest.raises(ScenarioError, match=r"referral\.lifetime"):
        _scenario(enrol="all", lifetime=-1)


# ---------------------------------------------------------------- errors and the command
@pytest.mark.parametrize(
    "changes, field",
    [
        ({"enrol": "som"}, "referral.enrol"),
        ({"enrol": "all", "start": 10, "end": 5}, "referral.end"),
        ({"enrol": "all", "start": 0}, "referral.start"),
        ({"scheme": "flat"}, "referral.scheme"),
        ({"budget": 0.0}, "referral.budget"),
        ({"value_per_period": 1.0, "lifetime_value": 2.0}, "referral.value_per_period"),
        ({"enrol": "strategy", "strategy": "random", "enrol_count": 0}, "referral.enrol_count"),
        ({"enrol": "strategy", "strategy": "nobody"}, "referral.strategy"),
    ],
)
def test_bad_programme_fields_name_the_field(changes, field):
    with pytest.raises(ScenarioError, match=field.replace(".", r"\.")):
        _scenario(**changes)


def test_evaluating_without_a_programme_is_an_error():
    with pytest.raises(ScenarioError, match="referral.enrol"):
        evaluate_programme(_scenario(), 2)


def test_referral_command_writes_its_results_folder(tmp_path, capsys):
    cfg = tmp_path / "p.toml"
    cfg.write_text(
        'name = "invented test programme"\nseed = 3\n[market]\norganisations = 300\ninitial_customers = 3\n'
        '[network]\nkind = "random"\nmean_degree = 6\n[run]\nperiods = 15\n'
        '[referral]\nenrol = "all"\ntalk_multiplier = 2.0\nreward = 1.0\nlifetime_value = 5.0\n',
        encoding="utf-8",
    )
    out = tmp_path / "out"
    assert main(["referral", str(cfg), "--replicates", "3", "--out", str(out), "--quiet"]) == 0
    names = {p.name for p in out.iterdir()}
    assert {
        "programme_summary.csv",
        "programme_runs.csv",
        "programme_cumulative.csv",
        "referral_tree.csv",
        "programme.png",
        "referral_tree.png",
        "manifest.json",
    } <= names
    assert "roi" in capsys.readouterr().out
    bad = tmp_path / "bad.toml"
    bad.write_text('[referral]\nenrol = "everyone"\n', encoding="utf-8")
    assert main(["referral", str(bad)]) == 2
    assert "referral.enrol" in capsys.readouterr().err
