"""The array engine and the Mesa model are the same model: their curves agree statistically.

The two engines draw differently — the array engine one Exp(1) resistance per
organisation against its summed step hazard, the Mesa model a fresh uniform per
potential customer per step, plus its own satisfaction and referrer draws — so only
the distribution of the curves can agree, and these tests check exactly that.

Every case runs R_ARRAY replicates on the array engine and R_MESA on the Mesa model,
from different root seeds, so the two samples are independent (each replicate builds
its own network and initial customers from its own streams). Seeds, replicate counts
and thresholds were fixed before any result was looked at.

Tolerance basis. Under the hypothesis that the engines agree, the difference of the
mean customer counts at a period, divided by its standard error
sqrt(s_a²/R_a + s_m²/R_m), is approximately standard normal (central limit theorem,
hundreds of replicates per side); |z| > 4 has probability 6.3e-5, so over the 205
comparisons of this file (every period of every case, plus the final satisfied
customers, the number of word-of-mouth adoptions and, with a programme, of paid
referrals) the chance of a false alarm is below 1.3 % (Bonferroni). The two-sample
Kolmogorov–Smirnov test (scipy.stats.ks_2samp) on the final and the mid-curve counts
must give p > 0.001: 22 tests, a false-alarm chance below 2.2 %; counts are whole
numbers, and ties make the test conservative. A real difference between the engines — a rule applied to the wrong state, a sub-step counted twice, a
satisfied share ignored — moves the means by many standard errors.

The covering set: every network kind, each rule (share, count, capped) on at least two
kinds and threshold and cascade once each, both step forms, fixed and Poisson talkers, satisfied shares below 1, zero
initial customers once (external influence alone starts it), time_step = 0.5 once,
and a referral programme (womlab.dynamics.programme) with a budget once; churn once and
warnings (with churn, former customers and rejecters warning) once, each test stating its own
comparisons beside the 205 above.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
from scipy import stats

from womlab import Scenario, run_replicates

N = 500
R_ARRAY = 200
R_MESA = 200
SEED_ARRAY = 7001
SEED_MESA = 7002
Z_MAX = 4.0
KS_P_MIN = 1e-3

CASES = {
    "complete": (
        {"kind": "complete"},
        {"rule": "share", "external": 0.01, "word_of_mouth": 0.5, "satisfied_share": 0.7},
        {"periods": 18, "step_probability": "exponential"},
        0,
    ),
    "ring": (
        {"kind": "ring", "mean_degree": 6},
        {"rule": "count", "external": 0.01, "word_of_mouth": 0.15},
        {"periods": 15, "step_probability": "linear"},
        5,
    ),
    "regular": (
        {"kind": "regular", "mean_degree": 6},
        {
            "rule": "capped",
            "external": 0.01,
            "word_of_mouth": 0.1,
            "cap": 0.3,
            "satisfied_share": 0.8,
            "talkers_per_customer": 2,
        },
        {"periods": 12, "step_probability": "linear"},
        5,
    ),
    "random": (
        {"kind": "random", "mean_degree": 8},
        {
            "rule": "share",
            "external": 0.01,
            "word_of_mouth": 0.5,
            "satisfied_share": 0.6,
            "talkers_per_customer": {"distribution": "poisson", "mean": 2},
        },
        {"periods": 24, "step_probability": "linear"},
        5,
    ),
    "small_world": (
        {"kind": "small_world", "mean_degree": 8, "rewiring": 0.1},
        {
            "rule": "count",
            "external": 0.005,
            "word_of_mouth": 0.08,
            "talkers_per_customer": {"distribution": "poisson", "mean": 1.5},
        },
        {"periods": 15, "step_probability": "exponential"},
        5,
    ),
    "regional": (
        {"kind": "regional", "mean_degree": 8, "within_region_share": 0.85},
        {"rule": "capped", "external": 0.01, "word_of_mouth": 0.1, "cap": 0.4, "satisfied_share": 0.8},
        {"periods": 14, "step_probability": "exponential"},
        5,
    ),
    "scale_free": (
        {"kind": "scale_free", "mean_degree": 6},
        {"rule": "share", "external": 0.01, "word_of_mouth": 0.6, "satisfied_share": 0.9},
        {"periods": 14, "step_probability": "exponential", "time_step": 0.5},
        5,
    ),
    # Granovetter (1978) thresholds, uniform on (0, 0.6]: once over its threshold an organisation
    # adopts at rate word_of_mouth = 0.5 per period
    "threshold": (
        {"kind": "small_world", "mean_degree": 8, "rewiring": 0.2},
        {
            "rule": "threshold",
            "external": 0.01,
            "word_of_mouth": 0.5,
            "satisfied_share": 0.9,
            "threshold": {"distribution": "uniform", "low": 0.0, "high": 0.6},
        },
        {"periods": 12, "step_probability": "exponential"},
        5,
    ),
    # Kempe, Kleinberg & Tardos (2003) independent cascade, one chance per tie in the step that
    # ends one period after a customer adopted; half-period steps test that "one period"
    "cascade": (
        {"kind": "random", "mean_degree": 6},
        {"rule": "cascade", "external": 0.01, "word_of_mouth": 0.25, "satisfied_share": 0.8},
        {"periods": 14, "step_probability": "exponential", "time_step": 0.5},
        5,
    ),
}


def _scenario(
    network: dict,
    adoption: dict,
    run: dict,
    initial: int,
    seed: int,
    engine: str,
    *,
    organisations: int | None = N,
    regions: int = 4,
) -> Scenario:
    market = {"initial_customers": initial, "regions": regions}
    if organisations is not None:  # an edge list gives its own size
        market["organisations"] = organisations
    return Scenario.from_dict(
        {
            "seed": seed,
            "market": market,
            "network": network,
            "adoption": adoption,
            "run": {**run, "engine": engine},
        }
    )


def _within(a: np.ndarray, m: np.ndarray, what: str) -> None:
    """Means of the columns of a (array engine) and m (Mesa) within Z_MAX standard errors."""
    se = np.sqrt(a.var(axis=0, ddof=1) / len(a) + m.var(axis=0, ddof=1) / len(m))
    gap = np.abs(a.mean(axis=0) - m.mean(axis=0))
    bad = np.flatnonzero(gap > Z_MAX * se + 1e-9)  # where both sides are constant the means must be equal
    assert bad.size == 0, (
        f"mean {what} differ by more than {Z_MAX} standard errors at {bad.tolist()}: "
        f"array {a.mean(axis=0)[bad].round(2).tolist()}, mesa {m.mean(axis=0)[bad].round(2).tolist()}, "
        f"se {se[bad].round(2).tolist()}"
    )


def _outcomes(runs: list) -> tuple[np.ndarray, np.ndarray]:
    """Customers per replicate and period; final satisfied customers, word-of-mouth adoptions
    (and, with a referral programme, paid referrals)."""
    curves = np.vstack([r.customers for r in runs]).astype(float)
    ends = np.array(
        [
            (
                r.satisfied_customers[-1],
                (r.referrer >= 0).sum(),
                *([r.extra["programme_paid_referrals"].sum()] if "programme_paid_referrals" in r.extra else []),
            )
            for r in runs
        ],
        dtype=float,
    )
    return curves, ends


def _check_agree(array: Scenario, mesa: Scenario) -> None:
    a, a_ends = _outcomes(run_replicates(array, R_ARRAY, jobs=2).runs)
    m, m_ends = _outcomes(run_replicates(mesa, R_MESA, jobs=2).runs)
    _within(a, m, "customers, by period,")
    _within(a_ends, m_ends, "final [satisfied customers, word-of-mouth adoptions, paid referrals]")
    # mid-curve: the first period at which the array engine's mean reaches half its final mean
    mid = int(np.argmax(a.mean(axis=0) >= 0.5 * a.mean(axis=0)[-1]))
    for label, t in (("final", -1), ("mid-curve", mid)):
        p = stats.ks_2samp(a[:, t], m[:, t]).pvalue
        assert p > KS_P_MIN, f"{label} counts (period {t}) differ: KS p = {p:.2e}"


@pytest.mark.slow
@pytest.mark.parametrize("case", list(CASES))
def test_engines_agree_on_each_network_kind_and_rule(case: str) -> None:
    index = list(CASES).index(case)
    network, adoption, run, initial = CASES[case]
    _check_agree(
        _scenario(network, adoption, run, initial, SEED_ARRAY + 10 * index, "array"),
        _scenario(network, adoption, run, initial, SEED_MESA + 10 * index, "mesa"),
    )


@pytest.mark.slow
def test_engines_agree_on_karate_club_edge_list(tmp_path) -> None:
    # Zachary (1977), "An information flow model for conflict and fission in small groups":
    # the karate club network as shipped by networkx, written out as a real edge-list input,
    # with the two factions of the split as the regions.
    graph = nx.karate_club_graph()
    ties = tmp_path / "karate.csv"
    ties.write_text("source,target\n" + "".join(f"{u},{v}\n" for u, v in graph.edges()))
    nodes = tmp_path / "karate_nodes.csv"
    nodes.write_text("id,region\n" + "".join(f"{i},{graph.nodes[i]['club']}\n" for i in graph.nodes))
    network = {"kind": "edgelist", "path": str(ties), "nodes_path": str(nodes)}
    adoption = {"rule": "count", "external": 0.02, "word_of_mouth": 0.1, "satisfied_share": 0.8}
    run = {"periods": 18, "step_probability": "exponential"}
    kw = {"organisations": None, "regions": 2}
    array = _scenario(network, adoption, run, 2, SEED_ARRAY + 100, "array", **kw)
    mesa = _scenario(network, adoption, run, 2, SEED_MESA + 100, "mesa", **kw)
    assert array.market.organisations == 34
    _check_agree(array, mesa)


@pytest.mark.slow
def test_engines_agree_with_a_referral_programme() -> None:
    # Half the organisations enrolled, their word of mouth tripled in periods 3-10, one unit
    # paid per successful referral until a budget of 230 is spent (spent in most runs, not all).
    network = {"kind": "random", "mean_degree": 8}
    adoption = {"rule": "count", "external": 0.01, "word_of_mouth": 0.06, "satisfied_share": 0.8}
    run = {"periods": 14, "step_probability": "exponential"}
    referral = {
        "enrol": "share",
        "enrol_share": 0.5,
        "start": 3,
        "end": 10,
        "talk_multiplier": 3.0,
        "reward": 1.0,
        "budget": 230.0,
    }
    array, mesa = (
        _scenario(network, adoption, run, 5, seed, engine).replace({f"referral.{k}": v for k, v in referral.items()})
        for seed, engine in ((SEED_ARRAY + 200, "array"), (SEED_MESA + 200, "mesa"))
    )
    _check_agree(array, mesa)


@pytest.mark.slow
def test_engines_agree_with_churn() -> None:
    # Churn (issue 16): satisfied customers leave at 0.08 per period, dissatisfied ones at 0.3, on
    # half-period steps. The array engine draws one Exp(1) churn resistance per organisation, the Mesa
    # model a fresh uniform per customer per step, both from the churn stream. Installed base and
    # former customers by period (2 × 15 comparisons more, each at the file's |z| <= 4: a false-alarm
    # chance below 0.2 % for this test, Bonferroni) and KS on the installed base as above.
    network = {"kind": "small_world", "mean_degree": 6, "rewiring": 0.2}
    adoption = {
        "rule": "share",
        "external": 0.02,
        "word_of_mouth": 0.6,
        "satisfied_share": 0.7,
        "churn": 0.08,
        "churn_dissatisfied": 0.3,
    }
    run = {"periods": 14, "step_probability": "exponential", "time_step": 0.5}
    array = _scenario(network, adoption, run, 5, SEED_ARRAY + 300, "array", organisations=300)
    mesa = _scenario(network, adoption, run, 5, SEED_MESA + 300, "mesa", organisations=300)
    _check_agree(array, mesa)
    a_runs = run_replicates(array, R_ARRAY, jobs=2).runs
    m_runs = run_replicates(mesa, R_MESA, jobs=2).runs
    former = [np.vstack([r.former_customers for r in runs]).astype(float) for runs in (a_runs, m_runs)]
    _within(*former, "former customers, by period,")
    assert former[0][:, -1].mean() > 10  # churn did something to compare


@pytest.mark.slow
def test_engines_agree_with_warnings() -> None:
    # Warnings (issue 16): dissatisfied customers (30 %), former customers and rejecters warn at
    # strength 0.5 under the count rule, with churn. The array engine draws one Exp(1) rejection
    # resistance per organisation, the Mesa model a fresh uniform per exposed organisation per step,
    # both from the warning stream. Customers and rejecters by period (2 × 13 comparisons more, each at
    # |z| <= 4: a false-alarm chance below 0.2 % for this test, Bonferroni) and KS as above.
    network = {"kind": "random", "mean_degree": 6}
    adoption = {
        "rule": "count",
        "external": 0.01,
        "word_of_mouth": 0.12,
        "satisfied_share": 0.7,
        "warning": 0.5,
        "former_warn": True,
        "rejecters_warn": True,
        "churn": 0.1,
    }
    run = {"periods": 12, "step_probability": "exponential"}
    array = _scenario(network, adoption, run, 5, SEED_ARRAY + 400, "array", organisations=300)
    mesa = _scenario(network, adoption, run, 5, SEED_MESA + 400, "mesa", organisations=300)
    _check_agree(array, mesa)
    rejecters = [
        np.vstack([r.rejecters for r in run_replicates(s, reps, jobs=2).runs]).astype(float)
        for s, reps in ((array, R_ARRAY), (mesa, R_MESA))
    ]
    _within(*rejecters, "rejecters, by period,")
    assert rejecters[0][:, -1].mean() > 10  # warnings did something to compare
