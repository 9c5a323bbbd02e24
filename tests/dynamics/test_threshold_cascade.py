"""The threshold and independent cascade rules on the array engine.

Monte Carlo checks run many disjoint copies of a small graph in one network: the copies
share no tie and every draw is per organisation, so one run gives that many independent
samples. Tolerances (3 standard errors of the mean over the copies) are fixed before looking.
"""

from __future__ import annotations

import itertools

import networkx as nx
import numpy as np
import pytest

from womlab import ReferralNetwork, Scenario, run_replicates
from womlab.dynamics.array_engine import run_array
from womlab.rules import adoption_rate, draw_thresholds, word_of_mouth_part
from womlab.scenario import Adoption, Thresholds


def copies(graph: nx.Graph, k: int) -> tuple[ReferralNetwork, int]:
    """k disjoint copies of ``graph`` (nodes 0..m−1); copy c holds nodes c·m .. c·m + m − 1."""
    m = graph.number_of_nodes()
    return ReferralNetwork.from_networkx(nx.disjoint_union_all([graph] * k)), m


def scenario(n: int, rule: str, q: float, *, time_step: float = 1.0, periods: int = 6, **adoption) -> Scenario:
    return Scenario.from_dict(
        {
            "seed": 1,
            "market": {"organisations": n, "initial_customers": 0},
            "network": {"kind": "ring", "mean_degree": 2},  # not used: run_array is given the network
            "adoption": {"rule": rule, "external": 0.0, "word_of_mouth": q, "satisfied_share": 1.0, **adoption},
            "run": {"periods": periods, "time_step": time_step},
        }
    )


def live_edge_spread(graph: nx.Graph, seed: int, q: float) -> tuple[float, float]:
    """Exact mean and variance of the cascade's spread from ``seed``: enumerate every live-edge
    subgraph (each tie live with probability q) and count the organisations reachable from the seed
    (Kempe, Kleinberg & Tardos 2003, Claim 2.3)."""
    edges = list(graph.edges())
    mean = second = 0.0
    for live in itertools.product([False, True], repeat=len(edges)):
        prob = np.prod([q if e else 1 - q for e in live])
        h = nx.Graph()
        h.add_nodes_from(graph)
        h.add_edges_from(edge for edge, e in zip(edges, live) if e)
        size = len(nx.node_connected_component(h, seed))
        mean += prob * size
        second += prob * size**2
    return mean, second - mean**2


@pytest.mark.parametrize("graph,expected", [(nx.path_graph(3), 1.75), (nx.complete_graph(3), 2.25)])
def test_live_edge_enumeration_gives_the_published_values(graph, expected):
    # Kempe et al. (2003): path seeded at an end 1 + q + q² = 1.75; triangle 1 + 2[q + (1 − q)q²] = 2.25
    assert live_edge_spread(graph, 0, 0.5)[0] == pytest.approx(expected, abs=1e-12)


@pytest.mark.parametrize("time_step", [1.0, 0.25])
@pytest.mark.parametrize("graph", [nx.path_graph(3), nx.complete_graph(3)], ids=["path", "triangle"])
def test_cascade_spread_matches_the_exact_expectation(graph, time_step):
    # independent cascade, one seed, tie probability 0.5: Monte Carlo mean over 6000 copies within
    # 3 standard errors of the exact live-edge value (for any time step: the chance is spread over
    # the period after the seed became satisfied, with total probability q)
    k = 6000
    network, m = copies(graph, k)
    mean, var = live_edge_spread(graph, 0, 0.5)
    s = scenario(network.n, "cascade", 0.5, time_step=time_step)
    seeds = np.arange(k, dtype=np.int32) * m
    result = run_array(s, network, seeds, np.random.default_rng(2024))
    spread = (result.adoption_period >= 0).reshape(k, m).sum(axis=1)
    assert abs(spread.mean() - mean) <= 3 * np.sqrt(var / k)


def test_cascade_gives_each_new_customer_one_chance_in_the_next_period():
    # definition (Kempe et al. 2003): on a path a-b-c seeded at a, b can adopt only in period 1
    # and c only in period 2; with q = 1 both do, certainly
    k = 2000
    network, m = copies(nx.path_graph(3), k)
    seeds = np.arange(k, dtype=np.int32) * m
    r = run_array(scenario(network.n, "cascade", 0.5), network, seeds, np.random.default_rng(5))
    periods = r.adoption_period.reshape(k, m)
    assert set(np.unique(periods[:, 1])) <= {1, -1}
    assert set(np.unique(periods[:, 2])) <= {2, -1}
    assert np.all(periods[periods[:, 1] == -1, 2] == -1)
    sure = run_array(scenario(network.n, "cascade", 1.0), network, seeds, np.random.default_rng(5))
    assert np.all(sure.adoption_period.reshape(k, m) == [0, 1, 2])
    # the referrer of b is a, of c is b (word of mouth, never external with p = 0)
    ref = r.referrer.reshape(k, m)
    adopted_b = periods[:, 1] == 1
    assert np.all(ref[adopted_b, 1] == (np.arange(k) * m)[adopted_b])


def test_threshold_rule_crosses_iff_share_reaches_theta():
    # Granovetter (1978): adopt once the share of adopting neighbours reaches one's threshold.
    # b with satisfied neighbour a and potential customer c, equal talkers: share w = 1/2
    a = Adoption(rule="threshold", external=0.0)
    talking, total = np.array([1.0, 1.0, 1.0]), np.array([2.0, 2.0, 2.0])
    theta = np.array([0.5 - 1e-9, 0.5, 0.5 + 1e-9])
    # word_of_mouth = inf: the instant crossing (the limit of an ever faster rate once over θ)
    assert np.isinf(word_of_mouth_part("threshold", talking, total, np.inf, theta)).tolist() == [True, True, False]
    # a finite word_of_mouth q is the rate per period once over the threshold
    assert word_of_mouth_part("threshold", talking, total, 0.3, theta).tolist() == [0.3, 0.3, 0.0]
    assert adoption_rate("threshold", talking, total, a, theta)[2] == 0.0


@pytest.mark.parametrize("theta,adopts", [(0.5, True), (0.5 + 1e-9, False)])
def test_threshold_path_b_adopts_iff_theta_at_most_w(theta, adopts):
    # path a-b-c seeded at a, fixed thresholds: b's share is w = 1/2, so b adopts in period 1 iff
    # theta <= 1/2; then c (share 1) follows in period 2 (Watts 2002 cascade on a path; the instant
    # crossing, word_of_mouth = inf, each hop one step)
    network, _ = copies(nx.path_graph(3), 1)
    s = scenario(3, "threshold", np.inf, threshold={"distribution": "fixed", "mean": theta})
    r = run_array(s, network, np.array([0], dtype=np.int32), np.random.default_rng(0))
    assert r.adoption_period.tolist() == ([0, 1, 2] if adopts else [0, -1, -1])


@pytest.mark.parametrize("leaves", [1, 3])
def test_uniform_thresholds_give_adoption_probability_w(leaves):
    # b tied to a seed and to `leaves` others: w = 1 / (1 + leaves); with θ ~ U(0, 1],
    # P(b adopts in period 1) = P(θ <= w) = w under the instant crossing (word_of_mouth = inf).
    # 5000 copies; 3 binomial standard errors.
    k = 5000
    g = nx.star_graph(leaves + 1)  # centre 0 = b, leaf 1 = a (seed), the rest potential customers
    network, m = copies(g, k)
    s = scenario(network.n, "threshold", np.inf, periods=1)
    seeds = np.arange(k, dtype=np.int32) * m + 1
    r = run_array(s, network, seeds, np.random.default_rng(77))
    b = r.adoption_period.reshape(k, m)[:, 0] == 1
    w = 1 / (1 + leaves)
    assert abs(b.mean() - w) <= 3 * np.sqrt(w * (1 - w) / k)


def test_threshold_draws():
    rng = np.random.default_rng(0)
    u = draw_thresholds(Thresholds(), 100_000, rng)
    assert u.min() > 0 and u.max() <= 1
    # uniform on (0, 1]: mean 1/2, sd 1/sqrt(12); 4 standard errors of the mean at N = 100,000
    assert abs(u.mean() - 0.5) <= 4 / np.sqrt(12 * 100_000)
    assert np.all(draw_thresholds(Thresholds(distribution="fixed", mean=0.3), 5, rng) == 0.3)
    nrm = draw_thresholds(Thresholds(distribution="normal", mean=0.2, sd=0.3), 1000, rng)
    assert nrm.min() > 0 and nrm.max() <= 1


def test_new_rules_run_as_batches_without_an_aggregate_curve():
    for rule in ("threshold", "cascade"):
        s = Scenario.from_dict(
            {
                "market": {"organisations": 300, "initial_customers": 10},
                "network": {"kind": "random", "mean_degree": 6},
                "adoption": {"rule": rule, "external": 0.01, "word_of_mouth": 0.3},
                "run": {"periods": 10},
            }
        )
        batch = run_replicates(s, 2)
        assert np.isnan(batch.summary()["aggregate"]).all()
        assert (batch.shares()[:, -1] > 10 / 300).all()


def test_cascade_word_of_mouth_must_be_a_probability():
    from womlab import ScenarioError

    with pytest.raises(ScenarioError, match=r"adoption.word_of_mouth must be in \[0, 1\], got 1.5"):
        Scenario.from_dict({"adoption": {"rule": "cascade", "word_of_mouth": 1.5}})


def test_cascade_hazard_is_independent_chances_per_tie():
    # algebra of independent events (Kempe et al. 2003): n newly satisfied neighbours, each with one
    # chance q, persuade with probability 1 − (1 − q)^n; plus external p': 1 − (1 − p')(1 − q)^n
    from womlab.rules import step_probability

    q, p1 = 0.3, 0.02
    a = Adoption(rule="cascade", external=-np.log1p(-p1), word_of_mouth=q)
    n = np.arange(5, dtype=float)
    rate = adoption_rate("cascade", n, np.zeros(5), a)
    assert step_probability(rate, 1.0, "exponential") == pytest.approx(1 - (1 - p1) * (1 - q) ** n, abs=1e-12)
