"""Which lever, when: lever_timing against outside facts.

Sources named beside each check. Seeds and tolerances are fixed before looking; each
tolerance says its basis.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from womlab import Scenario, ScenarioError, lever_timing, run_one
from womlab.studies.levers import LEVERS, lever_arm, register_lever


def _scenario(**sections) -> Scenario:
    data = {
        "market": {"organisations": 200, "initial_customers": 2},
        "network": {"kind": "random", "mean_degree": 6},
        "adoption": {"external": 0.01, "word_of_mouth": 0.4},
        "run": {"periods": 16},
        "referral": {"enrol": "all", "talk_multiplier": 2.0, "reward": 1.0, "value_per_period": 1.0},
    }
    for key, value in sections.items():
        data[key] = {**data.get(key, {}), **value} if isinstance(value, dict) else value
    return Scenario.from_dict(data)


def test_a_lever_that_changes_nothing_gives_exactly_zero_in_every_replicate():
    # Common random numbers (the paired mechanism): an arm whose run is the baseline's must give
    # differences of exactly 0, not merely small ones: no reward and no boost, no extra seeds, a
    # campaign at the baseline's own p.
    s = _scenario(
        referral={"talk_multiplier": 1.0, "reward": 0.0},
        levers={
            "referral": {},
            "reference_customers": {"count": 0},
            "campaign": {"periods": 4, "multiplier": 1.0},
        },
    )
    study = lever_timing(s, pulled_at=[0, 7, 15], replicates=4, lifetime=20)
    rows = study.per_replicate()
    assert len(rows) == 3 * 3 * 4
    for col in ("incremental_customers", "incremental_value", "acceleration", "expansion", "cost"):
        assert (rows[col] == 0).all(), col


def test_word_of_mouth_levers_on_the_complete_network_are_all_acceleration():
    # Libai, Muller & Peres (2013), J. Marketing Research 50(2): with no competition, a fixed market
    # and p > 0, seeding accelerates adoption rather than expanding it; on a continuation to the end
    # of the market every organisation adopts in both arms, so expansion is exactly 0.
    s = _scenario(
        network={"kind": "complete"},
        adoption={"external": 0.02, "word_of_mouth": 0.5},
        levers={"referral": {}, "reference_customers": {"count": 10, "cost_each": 1.0}},
    )
    study = lever_timing(s, pulled_at=[0, 5], replicates=4)
    assert study.exhausted.all()
    rows = study.per_replicate()
    assert (rows["expansion"] == 0).all()
    assert (rows["expanded"] == 0).all() and (rows["lost"] == 0).all()
    # and the levers did something (their whole-life value is all acceleration, and positive)
    table = study.table()
    assert (table["acceleration"] > 0).all()


def test_opening_a_region_that_otherwise_never_opens_is_all_expansion():
    # Three regions with no tie between them (within_region_share = 1): region 2 never opens in the
    # baseline; opened by the lever, its customers are expansion (won only with the lever) and,
    # with no tie to the rest of the market, nothing else changes: acceleration exactly 0, no
    # organisation lost. Follows from the Libai, Muller & Peres (2013) decomposition's definitions.
    s = _scenario(
        market={"regions": 3, "opens": [{"region": 2, "period": "never"}]},
        network={"kind": "regional", "mean_degree": 6, "within_region_share": 1.0},
        adoption={"external": 0.03},
        levers={"open_region": {"region": 2, "cost": 10.0}},
    )
    study = lever_timing(s, pulled_at=[0, 8], replicates=3)
    rows = study.per_replicate()
    assert study.exhausted.all()
    assert (rows["acceleration"] == 0).all() and (rows["lost"] == 0).all()
    assert (rows["expansion"] > 0).all()
    # every organisation of region 2 is won in the end, and only those
    regions = study.baseline[0].region
    assert (rows["expanded"] == int((regions == 2).sum())).all()


def test_a_campaign_with_no_word_of_mouth_matches_the_external_only_closed_form():
    # Closed form, derived: with q = 0 each potential customer adopts at rate p (Bass 1969,
    # Management Science 15(5), with q = 0: F(t) = 1 - exp(-p t)). An organisation adopts by the
    # horizon T iff its Exp(1) resistance E is below its integrated hazard H; on common random
    # numbers the campaign raises H from H0 = p T to H1 = p (T - n) + p_c n (n campaign periods),
    # so it is won only with the campaign iff H0 < E <= H1: a Binomial(N - n0, exp(-H0) - exp(-H1))
    # count per replicate. Tolerance: 4 standard errors of the mean over R replicates.
    N, n0, T, p, pc, n, R = 400, 4, 20, 0.02, 0.15, 3, 40
    s = Scenario.from_dict(
        {
            "market": {"organisations": N, "initial_customers": n0},
            "network": {"kind": "complete"},
            "adoption": {"external": p, "word_of_mouth": 0.0},
            "run": {"periods": T, "step_probability": "exponential"},
            "levers": {"campaign": {"periods": n, "external": pc}},
        }
    )
    study = lever_timing(s, pulled_at=[4], replicates=R, lifetime=0)
    x = study.per_replicate()["incremental_customers"].to_numpy(float)
    pi = math.exp(-p * T) - math.exp(-(p * (T - n) + pc * n))
    mean, se = (N - n0) * pi, math.sqrt((N - n0) * pi * (1 - pi) / R)
    assert x.min() >= 0  # common random numbers: the campaign never loses a customer
    assert abs(x.mean() - mean) < 4 * se, (x.mean(), mean, se)


def test_reference_customers_are_won_in_their_period_on_both_discrete_engines():
    # With p = q = 0 nothing else happens: exactly k more customers from the period on (arithmetic).
    base = {
        "market": {"organisations": 120, "initial_customers": 3},
        "network": {"kind": "random", "mean_degree": 4},
        "adoption": {"external": 0.0, "word_of_mouth": 0.0},
        "run": {"periods": 10},
        "reference": [{"period": 6, "count": 7, "strategy": "hubs"}],
    }
    for engine in ("array", "mesa"):
        s = Scenario.from_dict({**base, "run": {"periods": 10, "engine": engine}})
        r = run_one(s)
        assert r.customers.tolist() == [3] * 6 + [10] * 5, engine
        assert set(np.flatnonzero(r.adoption_period == 6)).isdisjoint(r.initial)


def test_reference_customers_are_chosen_among_those_not_yet_customers():
    # Late in the curve most hubs are customers already; the entry still wins exactly `count` new
    # customers in its period, all of them organisations that were not customers before it, and the
    # run is the run without the entry up to the period before (common random numbers). Arithmetic.
    for engine in ("array", "mesa"):
        s = Scenario.from_dict(
            {
                "market": {"organisations": 150, "initial_customers": 3},
                "network": {"kind": "scale_free", "mean_degree": 4},
                "adoption": {"external": 0.02, "word_of_mouth": 0.6},
                "run": {"periods": 14, "engine": engine},
            }
        )
        plain = run_one(s, (3,))
        with_refs = run_one(s.replace("reference", [{"period": 12, "count": 6, "strategy": "hubs"}]), (3,))
        (chosen,) = with_refs.extra["references"]
        assert chosen.size == 6, engine
        assert (with_refs.adoption_period[chosen] == 12).all(), engine
        assert not ((plain.adoption_period[chosen] >= 0) & (plain.adoption_period[chosen] < 12)).any(), engine
        early = (plain.adoption_period >= 0) & (plain.adoption_period < 12)
        assert (with_refs.adoption_period[early] == plain.adoption_period[early]).all(), engine
        assert ((with_refs.adoption_period >= 0) & (with_refs.adoption_period < 12)).sum() == early.sum(), engine
        assert "references" not in plain.extra


def test_arms_share_network_and_streams_and_the_lever_starts_at_the_period():
    s = _scenario(levers={"campaign": {"periods": 2, "multiplier": 5.0}})
    arm = lever_arm(s, "campaign", 9)
    assert (arm.campaign.entries[0].first, arm.campaign.entries[0].last) == (10, 11)
    assert arm.referral.enrol == "none" and not arm.levers.active
    late = lever_arm(s, "campaign", 15)  # cut at the horizon
    assert late.campaign.entries[0].last == 16
    # before the period pulled the arm's run is the baseline's, organisation by organisation
    a, b = run_one(lever_arm(s, "campaign", 9)), run_one(s.replace({"referral.enrol": "none", "levers": {}}))
    early = (b.adoption_period >= 0) & (b.adoption_period <= 9)
    assert (a.adoption_period[early] == b.adoption_period[early]).all()


def test_best_stage_and_crossover(tmp_path):
    s = _scenario(
        market={"regions": 2, "opens": [{"region": 1, "period": "never"}]},
        network={"kind": "regional", "mean_degree": 6},
        levers={"reference_customers": {"count": 6}, "open_region": {"region": 1}},
    )
    study = lever_timing(s, pulled_at=[0, 4, 8, 12], replicates=5, lifetime=16, bootstrap=200)
    best = study.best()
    assert list(best.columns) == ["pulled_at", "best", "incremental_value", "probability_best"]
    assert best["probability_best"].between(0, 1).all()
    stage = study.stage()
    assert (np.diff(stage["share_reached"]) >= 0).all()
    assert set(stage["stage"]) <= {"before peak", "at peak", "after peak"}
    c = study.crossover()
    assert set(c) >= {"period", "from", "to", "low", "high", "interval"}
    fig = study.figure(by="roi")
    assert type(fig).__name__ == "Figure" and len(fig.axes) == 2
    written = study.save(tmp_path / "levers", figure=False)
    assert {p.name for p in written} >= {"levers.csv", "levers_best.csv", "levers_crossover.csv", "manifest.json"}


def test_register_lever_adds_a_name_the_scenario_accepts():
    register_lever("nothing_at_all", lambda s, t, o: {}, cost=lambda s, t, o: np.zeros(s.run.periods + 1))
    try:
        s = _scenario(levers={"nothing_at_all": {}})
        rows = lever_timing(s, pulled_at=[3], replicates=2, lifetime=0).per_replicate()
        assert (rows["incremental_customers"] == 0).all()
    finally:
        LEVERS.pop("nothing_at_all")


@pytest.mark.parametrize(
    ("change", "words"),
    [
        ({"levers": ["next_product"]}, "levers must be one of"),
        ({"levers": ["warp_drive"]}, "got 'warp_drive'"),
        (
            {"levers": ["reference_customers"], "pulled_at": [16]},
            "levers.pulled_at must be a period between 0 and run.periods - 1 = 15",
        ),
        ({"levers": ["reference_customers"], "pulled_at": [-1]}, "levers.pulled_at must be"),
        ({"levers": ["open_region"]}, "levers.open_region"),
    ],
)
def test_bad_input_is_one_line_naming_the_field(change, words):
    s = _scenario(referral={"enrol": "none"})
    with pytest.raises(ScenarioError) as err:
        lever_timing(s, replicates=1, **change)
    assert words in str(err.value) and "\n" not in str(err.value)


def test_bad_sections_are_refused_at_load():
    with pytest.raises(ScenarioError, match=r"levers.open_region.region must be a region or segment that market.opens"):
        _scenario(market={"regions": 2}, levers={"open_region": {"region": 1}})
    with pytest.raises(ScenarioError, match=r"referral.enrol must be one of all, share, strategy for levers.referral"):
        _scenario(referral={"enrol": "none"}, levers={"referral": {}})
    with pytest.raises(ScenarioError, match=r"levers.pulled_at must be a period between 0 and run.periods - 1 = 15"):
        _scenario(levers={"pulled_at": [3, 16]})
    with pytest.raises(ScenarioError, match=r"levers.campaign.colour"):
        _scenario(levers={"campaign": {"multiplier": 2.0, "colour": "red"}})
    with pytest.raises(ScenarioError, match=r"reference\[0\].period must be a period between 1 and run.periods = 16"):
        _scenario(reference=[{"period": 17, "count": 2}])
    with pytest.raises(ScenarioError, match=r"levers.next_product: not available yet"):
        _scenario(levers={"next_product": {}})
    with pytest.raises(
        ScenarioError, match=r'market.opens\[0\].period must be a period between 1 and run.periods, or "never"'
    ):
        _scenario(market={"regions": 2, "opens": [{"region": 1, "period": "nevr"}]})


def test_a_lever_campaign_that_overlaps_the_scenarios_own_is_one_line_naming_the_lever():
    s = _scenario(campaign=[{"from": 5, "to": 8, "multiplier": 2.0}], levers={"campaign": {"multiplier": 3.0}})
    with pytest.raises(ScenarioError) as err:
        lever_timing(s, pulled_at=[4], replicates=1)
    text = str(err.value)
    assert text.startswith("levers.campaign pulled at the end of period 4: campaign[1]") and "\n" not in text
