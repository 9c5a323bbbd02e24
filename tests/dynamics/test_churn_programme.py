"""Churn with a referral programme (referred_churn_multiplier) and the fields that have no effect
under churn, warnings and the cascade rule."""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, run_one


def _programme(engine: str, multiplier: float) -> Scenario:
    return Scenario.from_dict(
        {
            "seed": 4,
            "market": {"organisations": 400 if engine == "array" else 150, "initial_customers": 5},
            "network": {"kind": "random", "mean_degree": 6},
            "adoption": {"rule": "count", "external": 0.01, "word_of_mouth": 0.1, "satisfied_share": 0.9, "churn": 0.3},
            "run": {"periods": 15, "engine": engine},
            "referral": {"enrol": "all", "reward": 1.0, "referred_churn_multiplier": multiplier},
        }
    )


@pytest.mark.parametrize("engine", ["array", "mesa"])
def test_paid_referrals_churn_at_the_multiplier(engine):
    # definition (issue 16; Schmitt, Skiera & Van den Bulte 2011 for why): referred_churn_multiplier = 0
    # means a customer brought in by a paid referral never leaves; everyone else leaves at 0.3 a period
    r = run_one(_programme(engine, 0.0), (0,))
    paid = r.extra["rewarded"]
    left = r.leave_period >= 0
    assert paid.sum() > 10 and left.sum() > 10
    assert not np.any(left & paid)
    # with multiplier 1 paid referrals leave like everyone else (some do, over 15 periods at 0.3)
    same = run_one(_programme(engine, 1.0), (0,))
    assert np.any((same.leave_period >= 0) & same.extra["rewarded"])


def test_multiplier_one_is_the_run_without_it():
    # multiplying a rate by 1 changes no number: the run is the same, bit for bit (common practice)
    with_it = run_one(_programme("array", 1.0), (1,))
    without = run_one(_programme("array", 1.0).replace("referral.referred_churn_multiplier", None), (1,))
    assert np.array_equal(with_it.leave_period, without.leave_period)
    assert np.array_equal(with_it.adoption_period, without.adoption_period)


@pytest.mark.parametrize(
    "data, field",
    [
        (
            {"adoption": {"rule": "cascade", "word_of_mouth": 0.3, "talkers_per_customer": 3}},
            "adoption.talkers_per_customer",
        ),
        (
            {"adoption": {"satisfied_share": 1.0, "churn": 0.1, "churn_dissatisfied": 0.3}},
            "adoption.churn_dissatisfied",
        ),
        ({"adoption": {"satisfied_share": 1.0, "warning": 0.3}}, "adoption.warning"),
        ({"adoption": {"satisfied_share": 0.8, "warning": 0.3, "former_warn": True}}, "adoption.former_warn"),
    ],
)
def test_a_mechanism_field_without_effect_gets_one_warning_naming_it(data, field):
    lines = Scenario.from_dict(data).fields_without_effect()
    assert len(lines) == 1 and lines[0].startswith(f"{field} = ") and "has no effect" in lines[0]


def test_mechanism_fields_in_use_do_not_warn():
    used = {
        "adoption": {
            "satisfied_share": 0.8,
            "churn": 0.1,
            "churn_dissatisfied": 0.3,
            "warning": 0.3,
            "former_warn": True,
            "rejecters_warn": True,
        }
    }
    assert Scenario.from_dict(used).fields_without_effect() == []
    # all satisfied, but former customers warn: the warning has an effect
    former = {"adoption": {"satisfied_share": 1.0, "churn": 0.1, "warning": 0.3, "former_warn": True}}
    assert Scenario.from_dict(former).fields_without_effect() == []
    threshold = {"adoption": {"rule": "threshold", "word_of_mouth": 0.4}}
    assert Scenario.from_dict(threshold).fields_without_effect() == []


def test_a_continued_run_cut_back_is_the_run_to_the_horizon():
    # the engines draw up front, so a run to 30 periods cut back to 20 is the run to 20, churn and
    # warnings included (the continuation that splits acceleration from expansion relies on it)
    from womlab.studies.continuation import truncate

    s = Scenario.from_dict(
        {
            "seed": 6,
            "market": {"organisations": 600, "initial_customers": 6},
            "network": {"kind": "random", "mean_degree": 6},
            "adoption": {
                "word_of_mouth": 0.5,
                "satisfied_share": 0.7,
                "churn": 0.1,
                "warning": 0.4,
                "former_warn": True,
            },
            "run": {"periods": 20},
        }
    )
    short, cut = run_one(s, (0,)), truncate(run_one(s.replace("run.periods", 30), (0,)), 20)
    for name in ("adoption_period", "referrer", "leave_period", "rejection_period", "warned_by"):
        assert np.array_equal(getattr(short, name), getattr(cut, name)), name
    assert np.array_equal(short.curve(), cut.curve())


def test_seeding_study_counts_what_churn_and_warnings_cost():
    # the customer-periods lost to churn are those from each departure to the horizon (an identity):
    # staying customers' periods plus the lost ones are the periods every adopter would have counted
    from womlab import compare_strategies
    from womlab.studies.seeding_study import run_outcomes

    s = Scenario.from_dict(
        {
            "seed": 9,
            "market": {"organisations": 300, "initial_customers": 3},
            "network": {"kind": "random", "mean_degree": 6},
            "adoption": {"word_of_mouth": 0.6, "satisfied_share": 0.7, "churn": 0.1, "warning": 0.4},
            "run": {"periods": 15},
            "study": {"strategies": ["random", "hubs"], "replicates": 4},
        }
    )
    r = run_one(s, (0,))
    out = run_outcomes(r)
    adopted = r.adoption_period[r.adoption_period >= 0]
    every = float(np.sum(15 - np.maximum(adopted, 1) + 1))  # periods 1..T from adoption, had nobody left
    assert out["customer_periods"] + out["customer_periods_lost_to_churn"] == every
    assert out["former_customers"] == r.former_customers[-1] and out["rejecters"] == r.rejecters[-1]
    table = compare_strategies(s).strategies_table()
    for column in ("former_customers_mean", "customer_periods_lost_to_churn_mean", "rejecters_mean"):
        assert (table[column] > 0).all()
