"""Seeding strategies, the [seeding] and [study] sections, and the paired seeding study.

Each check names where its expected value comes from. Real networks where they fit:
Zachary's karate club (Zachary 1977) and Padgett's Florentine families (Padgett & Ansell
1993), both shipped with networkx.
"""

from __future__ import annotations

import itertools
import math

import networkx as nx
import numpy as np
import pytest
import scipy.sparse as sp
from scipy import stats
from scipy.sparse.csgraph import connected_components

from womlab import ReferralNetwork, Scenario, ScenarioError, choose_seeds, compare_strategies, lift_statistics
from womlab.aggregate import mapped_parameters
from womlab.cli import main
from womlab.dynamics import RunResult
from womlab.seeding import STRATEGIES, greedy, initial_customers, region_quotas
from womlab.studies import run_paired
from womlab.studies.seeding_study import run_outcomes


def net(graph: nx.Graph) -> ReferralNetwork:
    return ReferralNetwork.from_networkx(nx.convert_node_labels_to_integers(graph, ordering="sorted"))


def karate() -> ReferralNetwork:
    return net(nx.karate_club_graph())


def florentine() -> tuple[ReferralNetwork, list[str]]:
    g = nx.florentine_families_graph()
    names = sorted(g.nodes)
    return net(nx.relabel_nodes(g, {name: i for i, name in enumerate(names)})), names


def small_scenario(**seeding) -> Scenario:
    return Scenario.from_dict(
        {
            "market": {"organisations": 34},
            "adoption": {"rule": "count", "external": 0.01, "word_of_mouth": 0.1},
            "run": {"periods": 6},
            "seeding": {"greedy_runs": 3, "greedy_candidates": 12, **seeding},
        }
    )


# ----------------------------------------------------------------------------- every strategy
@pytest.mark.parametrize("name", sorted(STRATEGIES))
def test_every_strategy_returns_budget_distinct_valid_ids(name):
    # the contract of a strategy (womlab.seeding module docstring), on Zachary (1977)'s karate club
    network = karate()
    own = {"strategy": "listed", "ids": [0, 1, 2, 33]} if name == "listed" else {}  # listed: the user's own ids
    seeds = choose_seeds(name, network, 4, np.random.default_rng(3), scenario=small_scenario(**own))
    assert seeds.dtype == np.int32
    assert seeds.size == 4 and np.unique(seeds).size == 4
    assert seeds.min() >= 0 and seeds.max() < network.n
    again = choose_seeds(name, network, 4, np.random.default_rng(3), scenario=small_scenario(**own))
    np.testing.assert_array_equal(seeds, again)  # deterministic given the rng


def test_ties_are_broken_at_random():
    # on a ring every organisation has degree 2, so hubs is a random draw: different rngs, different sets
    ring = net(nx.cycle_graph(200))
    sets = {tuple(sorted(choose_seeds("hubs", ring, 5, np.random.default_rng(s)).tolist())) for s in range(5)}
    assert len(sets) == 5


def test_unknown_strategy_lists_the_known_ones():
    with pytest.raises(ScenarioError, match="known: bridges, by_region, coreness, fringe, greedy, hubs"):
        choose_seeds("hub", karate(), 2, np.random.default_rng(0))
    with pytest.raises(ScenarioError, match=r"seeding.strategy must be one of .*did you mean 'hubs'"):
        Scenario.from_dict({"seeding": {"strategy": "hub"}})


# ----------------------------------------------------------------------------- definitions
def test_hubs_on_a_star_takes_the_centre():
    # the centre of a star has degree n − 1, every leaf degree 1 (definition of degree)
    assert choose_seeds("hubs", net(nx.star_graph(9)), 1, np.random.default_rng(0)).tolist() == [0]


def test_hubs_on_karate_club_are_the_two_leaders():
    # Zachary (1977): the instructor (node 0, degree 16) and the administrator (node 33, degree 17)
    assert set(choose_seeds("hubs", karate(), 2, np.random.default_rng(0)).tolist()) == {0, 33}


def test_bridges_on_a_barbell_takes_the_bridge():
    # barbell_graph(5, 1): two 5-cliques joined through node 5; every shortest path between the
    # bells passes node 5 and its two neighbours 4 and 6 (Freeman 1977 betweenness)
    barbell = net(nx.barbell_graph(5, 1))
    assert choose_seeds("bridges", barbell, 1, np.random.default_rng(0)).tolist() == [5]
    assert set(choose_seeds("bridges", barbell, 3, np.random.default_rng(0)).tolist()) == {4, 5, 6}


def test_bridges_on_florentine_families_is_medici():
    # Padgett & Ansell (1993): the Medici sit between the other families (highest betweenness)
    network, names = florentine()
    assert names[choose_seeds("bridges", network, 1, np.random.default_rng(0))[0]] == "Medici"


def test_sampled_betweenness_uses_the_sample_size():
    # above exact_up_to, networkx samples k sources (Brandes & Pich 2007); with k = n it is exact
    from womlab.seeding import bridges

    barbell = net(nx.barbell_graph(5, 1))
    exact = bridges(barbell, 3, np.random.default_rng(1))
    full_sample = bridges(barbell, 3, np.random.default_rng(1), exact_up_to=0, sample=barbell.n)
    assert set(full_sample.tolist()) == set(exact.tolist())
    a = bridges(karate(), 4, np.random.default_rng(2), exact_up_to=10, sample=5)
    b = bridges(karate(), 4, np.random.default_rng(2), exact_up_to=10, sample=5)
    np.testing.assert_array_equal(a, b)


def test_pagerank_matches_networkx():
    # reference library: networkx.pagerank (Brin & Page 1998), damping 0.85
    network = karate()
    pr = nx.pagerank(nx.karate_club_graph(), alpha=0.85)
    top = sorted(pr, key=pr.get, reverse=True)[:3]
    assert choose_seeds("pagerank", network, 3, np.random.default_rng(0)).tolist() == top


def test_coreness_takes_the_innermost_core_by_degree():
    # Seidman (1983) k-cores via networkx.core_number; karate club's innermost core is the 4-core
    g = nx.karate_club_graph()
    core = nx.core_number(g)
    inner = sorted(v for v in g if core[v] == max(core.values()))
    seeds = choose_seeds("coreness", karate(), len(inner), np.random.default_rng(0))
    assert sorted(seeds.tolist()) == inner
    degrees = [g.degree(v) for v in seeds.tolist()]
    assert degrees == sorted(degrees, reverse=True)  # ties within the core broken by degree


def test_fringe_takes_leaves():
    # a star's leaves and a path's two ends have degree 1, the lowest (definition of degree)
    seeds = choose_seeds("fringe", net(nx.star_graph(9)), 9, np.random.default_rng(0))
    assert 0 not in seeds.tolist()
    assert set(choose_seeds("fringe", net(nx.path_graph(10)), 2, np.random.default_rng(0)).tolist()) == {0, 9}


def test_region_quotas_are_largest_remainders():
    # Hamilton's method (Balinski & Young 1982): sizes 50/30/20, budget 7 -> exact 3.5/2.1/1.4,
    # floors 3/2/1, the one seed left goes to the largest remainder (0.5): 4/2/1
    region = np.repeat([0, 1, 2], [50, 30, 20])
    assert region_quotas(region, 7, np.random.default_rng(0)).tolist() == [4, 2, 1]
    assert region_quotas(region, 100, np.random.default_rng(0)).tolist() == [50, 30, 20]


def test_by_region_honours_the_split_and_takes_hubs_within():
    g = nx.gnm_random_graph(100, 300, seed=np.random.default_rng(5))
    region = np.repeat([0, 1, 2], [50, 30, 20])
    nx.set_node_attributes(g, dict(enumerate(region.tolist())), "region")
    network = ReferralNetwork.from_networkx(g)
    seeds = choose_seeds("by_region", network, 7, np.random.default_rng(0))
    assert np.bincount(region[seeds], minlength=3).tolist() == [4, 2, 1]
    degree = network.degree()
    for r in range(3):
        members = np.flatnonzero(region == r)
        chosen = seeds[region[seeds] == r]
        # no unchosen member of the region has a higher degree than a chosen one
        assert degree[chosen].min() >= degree[np.setdiff1d(members, chosen)].max()


@pytest.mark.parametrize("graph", ["karate", "florentine", "grid"])
def test_spread_has_no_adjacent_pair(graph):
    # independence checked by networkx; budgets are what hubs-first can spread on each graph
    # (on the karate club nodes 33 and 0 together neighbour all but a few: 4 seeds)
    g, budget, first = {
        "karate": (nx.karate_club_graph(), 4, 33),  # node 33 has the highest degree (Zachary 1977)
        "florentine": (nx.convert_node_labels_to_integers(nx.florentine_families_graph(), ordering="sorted"), 5, None),
        "grid": (nx.convert_node_labels_to_integers(nx.grid_2d_graph(8, 8)), 12, None),
    }[graph]
    seeds = choose_seeds("spread", net(g), budget, np.random.default_rng(0)).tolist()
    assert not any(g.has_edge(a, b) for a, b in itertools.combinations(seeds, 2))
    degree = dict(g.degree())
    assert degree[seeds[0]] == max(degree.values())  # still hubs first
    if first is not None:
        assert seeds[0] == first


def test_spread_warns_when_the_budget_cannot_be_spread():
    # a star: once the centre is chosen every leaf is adjacent to it
    with pytest.warns(UserWarning, match="only 1 of 3 seeds can be pairwise non-adjacent"):
        seeds = choose_seeds("spread", net(nx.star_graph(6)), 3, np.random.default_rng(0))
    assert seeds[0] == 0 and np.unique(seeds).size == 3


# ----------------------------------------------------------------------------- greedy
def live_edge_objective(graph: nx.Graph, q: float, samples: int, seed: int):
    """Independent-cascade spread by live-edge subgraphs (Kempe, Kleinberg & Tardos 2003, Claim 2.3):
    keep each tie with probability q; the spread of S is the number reachable from S. Summed over
    fixed samples, a coverage function: monotone and submodular."""
    rng = np.random.default_rng(seed)
    n = graph.number_of_nodes()
    edges = np.array(graph.edges())
    labels = []
    for _ in range(samples):
        keep = edges[rng.random(len(edges)) < q]
        a = (
            sp.coo_array((np.ones(len(keep)), (keep[:, 0], keep[:, 1])), shape=(n, n))
            if len(keep)
            else sp.coo_array((n, n))
        )
        _, lab = connected_components(a, directed=False)
        labels.append((lab, np.bincount(lab)))

    def sigma(seeds):
        return float(sum(sizes[np.unique(lab[np.asarray(seeds, dtype=int)])].sum() for lab, sizes in labels))

    return sigma


@pytest.mark.parametrize("graph_seed", [1, 2, 3])
def test_greedy_reaches_one_minus_one_over_e_of_the_optimum(graph_seed):
    # Nemhauser, Wolsey & Fisher (1978): greedy on a monotone submodular function reaches
    # (1 − 1/e) of the optimum; Kempe et al. (2003) for influence spread. Brute force over all
    # 3-sets of a 14-organisation random graph.
    g = nx.gnm_random_graph(14, 20, seed=np.random.default_rng(graph_seed))
    sigma = live_edge_objective(g, 0.4, 40, seed=graph_seed)
    network = ReferralNetwork.from_networkx(g)
    seeds = greedy(network, 3, np.random.default_rng(0), objective=sigma, candidates=0)
    best = max(sigma(s) for s in itertools.combinations(range(14), 3))
    assert sigma(seeds) >= (1 - 1 / math.e) * best


@pytest.mark.parametrize("graph_seed", [4, 5, 6])
def test_celf_picks_the_same_set_as_plain_greedy(graph_seed):
    # Leskovec et al. (2007): lazy evaluation is exact for a submodular objective
    g = nx.gnm_random_graph(30, 50, seed=np.random.default_rng(graph_seed))
    sigma = live_edge_objective(g, 0.3, 30, seed=graph_seed)
    network = ReferralNetwork.from_networkx(g)
    lazy = greedy(network, 4, np.random.default_rng(9), objective=sigma, candidates=0, lazy=True)
    plain = greedy(network, 4, np.random.default_rng(9), objective=sigma, candidates=0, lazy=False)
    np.testing.assert_array_equal(lazy, plain)


def test_greedy_candidates_smaller_than_budget_is_an_error():
    with pytest.raises(ScenarioError, match="greedy_candidates = 2 is smaller than the budget 3"):
        greedy(karate(), 3, np.random.default_rng(0), objective=lambda s: 0.0, candidates=2)


def test_greedy_simulates_with_the_engine_its_caller_passes():
    # greedy never imports an engine: choose_seeds hands it the caller's simulator
    calls = []

    def simulate(scenario, network, seeds, rng):  # noqa: ANN001, ANN202 - an engine's signature
        calls.append(tuple(int(x) for x in seeds))
        customers = np.array([0, len(seeds) + int(0 in seeds) * 10])  # seeding organisation 0 pays most
        return type("Run", (), {"customers": customers})()

    s = Scenario.from_dict(
        {
            "market": {"organisations": 34},
            "network": {"kind": "random", "mean_degree": 4},
            "seeding": {"greedy_runs": 2, "greedy_candidates": 0},
        }
    )
    seeds = choose_seeds("greedy", karate(), 1, np.random.default_rng(0), scenario=s, simulate=simulate)
    assert seeds.tolist() == [0]
    assert len(calls) == 2 * 35  # 2 runs for the empty set, then 2 per candidate (CELF's first pass)


# ----------------------------------------------------------------------------- scenario
def test_seeding_budget_and_market_initial_customers():
    s = Scenario.from_dict({"market": {"organisations": 34}, "seeding": {"strategy": "hubs", "budget": 2}})
    assert s.n_initial == 2
    assert mapped_parameters(s).initial_share == pytest.approx(2 / 34)
    assert set(initial_customers(s, karate(), np.random.default_rng(0)).tolist()) == {0, 33}
    same = Scenario.from_dict({"market": {"organisations": 34, "initial_customers": 2}, "seeding": {"budget": 2}})
    assert same.n_initial == 2
    with pytest.raises(ScenarioError, match="seeding.budget = 3 disagrees with market initial customers = 2"):
        Scenario.from_dict({"market": {"organisations": 34, "initial_customers": 2}, "seeding": {"budget": 3}})
    with pytest.raises(ScenarioError, match="seeding.budget must be between 0 and market.organisations = 34"):
        Scenario.from_dict({"market": {"organisations": 34}, "seeding": {"budget": 35}})


def test_study_section_is_validated():
    with pytest.raises(ScenarioError, match=r"study.strategies\[1\] must be one of"):
        Scenario.from_dict({"study": {"strategies": ["random", "hubz"]}})
    with pytest.raises(ScenarioError, match="study.strategies must be a list without repeated names"):
        Scenario.from_dict({"study": {"strategies": ["hubs", "hubs"]}})
    with pytest.raises(ScenarioError, match="study.outcome must be one of customers, customer_periods"):
        Scenario.from_dict({"study": {"outcome": "t50"}})
    assert Scenario.from_dict({"study": {"strategies": ["hubs"]}}).study.compared == ("random", "hubs")


# ----------------------------------------------------------------------------- paired study
def test_discounted_customer_periods():
    # present value of a stream (common practice): customers 1, 2, 3 at periods 0, 1, 2, r = 0.1:
    # 2 / 1.1 + 3 / 1.1² = 4.297521
    r = RunResult(
        periods=2,
        adoption_period=np.array([0, 1, 2, -1], dtype=np.int32),
        referrer=np.full(4, -1, np.int32),
        satisfied=np.ones(4, bool),
        region=np.zeros(4, np.int32),
        initial=np.array([0], np.int32),
        engine="test",
    )
    out = run_outcomes(r, 0.1)
    assert out["customer_periods"] == pytest.approx(2 / 1.1 + 3 / 1.21, rel=1e-12)
    assert out["customers"] == 3 and out["peak_period"] == 1
    assert out["t50"] == pytest.approx(1.0)  # share 0.5 reached exactly at period 1


def test_identical_strategies_give_exactly_zero_paired_difference():
    # common random numbers (Law 2015, §11.2): two variants that are the same model on the same
    # streams give identical runs, so every paired difference is exactly zero
    s = Scenario.from_dict(
        {
            "market": {"organisations": 300, "initial_customers": 5},
            "network": {"kind": "random", "mean_degree": 6},
            "run": {"periods": 15},
        }
    )
    variants = {"a": s.replace("seeding.strategy", "random"), "b": s.replace("seeding.strategy", "random")}
    runs = run_paired(variants, 8)
    for a, b in zip(runs["a"], runs["b"]):
        np.testing.assert_array_equal(a.adoption_period, b.adoption_period)
    x = np.array([r.customers[-1] for r in runs["a"]], dtype=float)
    out = lift_statistics(x, np.array([r.customers[-1] for r in runs["b"]], dtype=float), rng=np.random.default_rng(0))
    assert out["lift_diff"] == 0 and out["lift_diff_low"] == 0 and out["lift_diff_high"] == 0
    assert out["lift_ratio"] == 1 and out["wilcoxon_p"] == 1.0 and out["paired_halfwidth"] == 0


def test_lift_intervals_agree_with_scipy():
    # reference library: the paired half-width is scipy.stats.ttest_rel's 95 % interval, the
    # unpaired one ttest_ind's (pooled, equal sizes); the paired percentile bootstrap of a mean
    # (Efron & Tibshirani 1993) lies within 10 % of the t half-width at R = 200 (O(1/sqrt R) error;
    # the bootstrap SE with 2000 resamples is about 2 % of it) — tolerance fixed before looking
    rng = np.random.default_rng(42)
    common = rng.normal(100, 10, 200)
    base = common + rng.normal(0, 2, 200)
    x = common + 3 + rng.normal(0, 2, 200)
    out = lift_statistics(x, base, rng=np.random.default_rng(1))
    paired = stats.ttest_rel(x, base).confidence_interval(0.95)
    unpaired = stats.ttest_ind(x, base).confidence_interval(0.95)
    assert out["paired_halfwidth"] == pytest.approx((paired.high - paired.low) / 2, rel=1e-9)
    assert out["unpaired_halfwidth"] == pytest.approx((unpaired.high - unpaired.low) / 2, rel=1e-9)
    assert out["lift_diff_low"] == pytest.approx(paired.low, abs=0.1 * out["paired_halfwidth"])
    assert out["lift_diff_high"] == pytest.approx(paired.high, abs=0.1 * out["paired_halfwidth"])
    assert out["wilcoxon_p"] == pytest.approx(stats.wilcoxon(x - base).pvalue)
    assert out["variance_reduction"] > 0.9  # shared N(0, 10²) term: 1 − 8 / (2·104) ≈ 0.96 in expectation


def study_scenario() -> Scenario:
    return Scenario.from_dict(
        {
            "name": "invented: seeding study test",
            "seed": 11,
            "market": {"organisations": 250, "regions": 3},
            "network": {"kind": "scale_free", "mean_degree": 4},
            "adoption": {"rule": "share", "external": 0.002, "word_of_mouth": 0.3},
            "run": {"periods": 12},
            "seeding": {"budget": 3},
            "study": {
                "strategies": ["hubs", "fringe"],
                "replicates": 12,
                "discount_rate": 0.02,
                "outcome": "customer_periods",
                "bootstrap": 300,
            },
        }
    )


def test_compare_strategies_is_paired_and_independent_of_jobs():
    # determinism (design: a run depends only on the root seed and its spawn key, never on workers)
    s = study_scenario()
    one = compare_strategies(s, jobs=1)
    two = compare_strategies(s, jobs=2)
    assert one.strategies == ("random", "hubs", "fringe")
    assert one.runs.equals(two.runs)
    table = one.strategies_table()
    assert table.loc[0, "strategy"] == "random" and table.loc[0, "lift_diff"] == 0
    assert len(one.runs) == 3 * 12
    assert one.snapshot is not None and set(one.snapshot[1]) == {"random", "hubs", "fringe"}
    network, first = one.snapshot
    degree = network.degree()
    assert degree[first["hubs"].initial].min() >= np.sort(degree)[-3]  # the replayed replicate 0 seeds the hubs
    assert one.runs.query("replicate == 0 and strategy == 'hubs'")["customers"].item() == first["hubs"].customers[-1]


def test_cli_seeding_writes_the_results_folder(tmp_path, capsys):
    config = tmp_path / "study.toml"
    config.write_text(
        'name = "invented: cli seeding"\nseed = 3\n[market]\norganisations = 150\n'
        '[network]\nkind = "random"\nmean_degree = 5\n[run]\nperiods = 10\n'
        '[seeding]\nbudget = 3\n[study]\nstrategies = ["hubs", "spread"]\nreplicates = 6\nbootstrap = 200\n',
        encoding="utf-8",
    )
    assert main(["seeding", str(config), "--out", str(tmp_path / "out"), "--quiet", "--replicates", "4"]) == 0
    names = {p.name for p in (tmp_path / "out").iterdir()}
    assert {"strategies.csv", "runs.csv", "seeding.png", "network.png", "manifest.json"} <= names
    import pandas as pd

    runs = pd.read_csv(tmp_path / "out" / "runs.csv")
    assert list(runs.columns[:6]) == ["replicate", "strategy", "customers", "t50", "peak_period", "customer_periods"]
    assert len(runs) == 3 * 4
    bad = tmp_path / "bad.toml"
    bad.write_text('[study]\nstrategies = ["hubz"]\n', encoding="utf-8")
    capsys.readouterr()
    assert main(["seeding", str(bad), "--out", str(tmp_path / "o2")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "study.strategies[0]" in err[0] and "did you mean 'hubs'" in err[0]


# ----------------------------------------------------------------------------- compiled centralities
def _graphs():
    return {
        "karate": nx.karate_club_graph(),  # Zachary (1977)
        "florentine": nx.convert_node_labels_to_integers(
            nx.florentine_families_graph(), ordering="sorted"
        ),  # Padgett & Ansell (1993)
        "random": nx.gnm_random_graph(300, 900, seed=np.random.default_rng(4)),
        "with_isolates": nx.disjoint_union(nx.barbell_graph(5, 2), nx.empty_graph(3)),
    }


@pytest.mark.parametrize("name", ["karate", "florentine", "random", "with_isolates"])
def test_compiled_centralities_equal_networkx(name):
    # reference library: networkx (Hagberg, Schult & Swart 2008) — exact betweenness (Brandes 2001),
    # k-cores (Seidman 1983) to the integer, PageRank (Brin & Page 1998) to the stopping tolerance:
    # both stop when the L1 change is below N·1e-10, so values differ by at most a few 1e-9
    from womlab.seeding import betweenness, core_numbers, pagerank_values

    g = _graphs()[name]
    network = ReferralNetwork.from_networkx(g)
    n = g.number_of_nodes()
    ref_bc = nx.betweenness_centrality(g)
    assert np.allclose(betweenness(network), [ref_bc[i] for i in range(n)], atol=1e-12)
    ref_core = nx.core_number(g)
    assert core_numbers(network).tolist() == [ref_core[i] for i in range(n)]
    ref_pr = nx.pagerank(g, alpha=0.85, tol=1e-10, weight=None)  # ties unweighted, as womlab stores them
    ours = pagerank_values(network)
    assert np.allclose(ours, [ref_pr[i] for i in range(n)], atol=1e-8)
    # and they rank alike: the same order wherever networkx's values differ by more than the tolerance
    ref = np.array([ref_pr[i] for i in range(n)])
    i, j = np.triu_indices(n, 1)
    clear = np.abs(ref[i] - ref[j]) > 1e-7
    assert np.all(np.sign(ours[i] - ours[j])[clear] == np.sign(ref[i] - ref[j])[clear])


def test_sampled_betweenness_estimates_the_exact_value():
    # Brandes & Pich (2007): with k sources drawn uniformly, (N/k)·Σ over sources is unbiased for the
    # exact betweenness; and with the sources given, it equals networkx's betweenness_centrality_subset
    # over those sources to all targets, scaled the same way
    from womlab.seeding import betweenness

    g = nx.karate_club_graph()
    network = ReferralNetwork.from_networkx(g)
    sources = np.array([0, 5, 16, 33])
    ours = betweenness(network, sources)
    sub = nx.betweenness_centrality_subset(g, sources.tolist(), list(g), normalized=False)
    n = g.number_of_nodes()
    # networkx's subset form halves undirected counts; ours counts each source's paths once per target
    assert np.allclose(ours, [2 * sub[i] / ((n - 1) * (n - 2)) * n / sources.size for i in range(n)], atol=1e-12)


def test_listed_seeds_the_organisations_named(tmp_path):
    # Padgett & Ansell (1993)'s Florentine families, text ids kept as given: seeding by name
    g = nx.florentine_families_graph()
    network = ReferralNetwork.from_networkx(g)
    s = Scenario.from_dict(
        {"market": {"organisations": 15}, "seeding": {"strategy": "listed", "ids": ["Medici", "Strozzi"]}}
    )
    assert s.n_initial == 2  # the budget is the number listed
    seeds = initial_customers(s, network, np.random.default_rng(0))
    assert network.labels[seeds].tolist() == ["Medici", "Strozzi"]
    ids = tmp_path / "pilot.csv"
    ids.write_text("firm,note\nPazzi,first call\nGinori,\n", encoding="utf-8")
    s2 = Scenario.from_dict(
        {"market": {"organisations": 15}, "seeding": {"strategy": "listed", "ids_path": str(ids), "ids_column": "firm"}}
    )
    assert network.labels[initial_customers(s2, network, np.random.default_rng(0))].tolist() == ["Pazzi", "Ginori"]


def test_listed_refuses_what_it_cannot_seed(tmp_path):
    from womlab import NetworkError

    network = ReferralNetwork.from_networkx(nx.florentine_families_graph())
    s = Scenario.from_dict(
        {"market": {"organisations": 15}, "seeding": {"strategy": "listed", "ids": ["Medici", "Borgia"]}}
    )
    with pytest.raises(NetworkError, match=r"seeding.ids: 1 id\(s\) not in the network: 'Borgia'; allowed: "):
        initial_customers(s, network, np.random.default_rng(0))
    with pytest.raises(ScenarioError, match="lists 2 organisations but the number of initial customers is 3"):
        Scenario.from_dict(
            {
                "market": {"organisations": 15, "initial_customers": 3},
                "seeding": {"strategy": "listed", "ids": ["Medici", "Strozzi"]},
            }
        )
    with pytest.raises(ScenarioError, match="needs exactly one of seeding.ids"):
        Scenario.from_dict({"market": {"organisations": 15}, "seeding": {"strategy": "listed"}})
    with pytest.raises(ScenarioError, match=r"seeding.ids must be each id once \(repeated: 'Medici'\)"):
        Scenario.from_dict(
            {"market": {"organisations": 15}, "seeding": {"strategy": "listed", "ids": ["Medici", "Medici"]}}
        )
    with pytest.raises(ScenarioError, match='used only with seeding.strategy = "listed"'):
        Scenario.from_dict({"seeding": {"strategy": "hubs", "ids": [1]}})
    bad = tmp_path / "seeds.csv"
    bad.write_text("name\nMedici\n", encoding="utf-8")
    with pytest.raises(ScenarioError, match=r"seeding.ids_path: .*seeds.csv' must have a column 'id'"):
        Scenario.from_dict({"market": {"organisations": 15}, "seeding": {"strategy": "listed", "ids_path": str(bad)}})
