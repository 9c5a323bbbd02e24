"""Issue 11, parts 2 and 3: the threshold and cascade rules have a time scale of their own.

Threshold: once over its threshold an organisation adopts at rate ``word_of_mouth`` per
period, so the curve converges as the step shrinks and ``word_of_mouth`` changes it.
Cascade: each satisfied customer's one attempt per tie comes one period after it adopted,
whatever the step (the discrete independent cascade of Kempe, Kleinberg & Tardos 2003).
"""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, run_one, run_replicates


def _scenario(rule: str, q: float, time_step: float, p: float = 0.0, **extra) -> Scenario:
    return Scenario.from_dict(
        {
            "seed": 21,
            "market": {"organisations": 2000, "initial_customers": 20},
            "network": {"kind": "random", "mean_degree": 6},
            "adoption": {
                "rule": rule,
                "external": p,
                "word_of_mouth": q,
                "satisfied_share": 0.9,
                "threshold": {"distribution": "uniform", "low": 0.0, "high": 0.4},
                **extra,
            },
            "run": {"periods": 20, "time_step": time_step},
        }
    )


@pytest.mark.parametrize("key", [(0,), (1,), (2,)])
def test_cascade_without_external_influence_is_the_same_for_every_step(key):
    # definition (Kempe et al. 2003): with p = 0 every adoption is an attempt one period after a
    # customer adopted, so it falls on the period grid and the draws (one resistance and one
    # attribution uniform per organisation) meet the same hazards: the runs are identical
    runs = [run_one(_scenario("cascade", 0.3, dt), key) for dt in (1.0, 0.5, 0.25)]
    assert runs[0].customers[-1] > 2 * runs[0].customers[0]  # the cascade spread
    for other in runs[1:]:
        assert np.array_equal(runs[0].adoption_period, other.adoption_period)
        assert np.array_equal(runs[0].referrer, other.referrer)
        assert np.array_equal(runs[0].adoption_time, other.adoption_time, equal_nan=True)


def test_cascade_with_external_influence_tries_one_period_after_each_adoption():
    # with p > 0 external adoptions fall between period ends; a word-of-mouth adoption then comes
    # exactly one period after its referrer's adoption (the referrer's one attempt)
    r = run_one(_scenario("cascade", 0.3, 0.25, p=0.02), (0,))
    by_word = np.flatnonzero(r.referrer >= 0)
    assert by_word.size > 100
    gap = r.adoption_time[by_word] - r.adoption_time[r.referrer[by_word]]
    assert np.allclose(gap, 1.0)
    assert np.any(r.adoption_time % 1 != 0)  # some external adoptions fell inside a period


def _t50(scenario: Scenario, reps: int = 12) -> float:
    shares = run_replicates(scenario, reps).shares().mean(axis=0)
    above = np.flatnonzero(shares >= 0.5)
    i = int(above[0])
    return float(i - 1 + (0.5 - shares[i - 1]) / (shares[i] - shares[i - 1]))


def test_threshold_curve_converges_as_the_step_shrinks():
    # A rate once over the threshold makes the step a discretisation of a continuous-time process:
    # the time to half the market changes less and less as the step halves (common practice,
    # convergence of a time discretisation: successive differences shrink). Before issue 11 the
    # crossing was instant and t50 fell from 13.3 to 9.2 periods as the step went from 1 to 0.1.
    t50 = [_t50(_scenario("threshold", 0.5, dt, p=0.005)) for dt in (1.0, 0.5, 0.25, 0.125)]
    diffs = np.abs(np.diff(t50))
    assert diffs[2] < diffs[0]
    assert diffs[2] < 0.35  # an eighth of a period against a quarter: within a third of a period


def test_threshold_word_of_mouth_changes_the_curve():
    # issue 11: runs with word_of_mouth 0.05 and 0.9 were identical under the instant crossing
    slow, fast = (run_one(_scenario("threshold", q, 0.5, p=0.005), (0,)) for q in (0.05, 0.9))
    assert not np.array_equal(slow.customers, fast.customers)
    assert slow.customers[10] < fast.customers[10]
    # and inf is the old instant crossing: every hop takes one step
    instant = run_one(_scenario("threshold", np.inf, 0.5, p=0.005), (0,))
    assert instant.customers[10] >= fast.customers[10]
