"""Referral networks against published facts, networkx, and real edge lists."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest

from womlab import NetworkError, Scenario, build_network, mapped_parameters, read_edgelist


def _net(kind, n=2000, seed=1, **network):
    market = {"organisations": n, "regions": network.pop("regions", 1)}
    s = Scenario.from_dict({"market": market, "network": {"kind": kind, **network}})
    return build_network(s, np.random.default_rng(seed))


def _simple(net):
    g = net.to_networkx()
    assert nx.number_of_selfloops(g) == 0
    assert g.number_of_edges() == net.ties  # no duplicate ties were stored
    return g


def test_ring_lattice_clustering_at_rewiring_zero():
    # Watts & Strogatz (1998): a ring lattice with k neighbours has clustering 3(k-2)/(4(k-1)).
    for k in (4, 6, 10):
        for kind, extra in (("ring", {}), ("small_world", {"rewiring": 0.0})):
            g = _simple(_net(kind, n=600, mean_degree=k, **extra))
            assert nx.average_clustering(g) == pytest.approx(3 * (k - 2) / (4 * (k - 1)), abs=1e-12)
            assert set(dict(g.degree()).values()) == {k}


def test_small_world_clustering_falls_as_barrat_weigt():
    # Barrat & Weigt (2000): C(beta) ~ C(0)(1 - beta)^3 for the Watts-Strogatz model.
    # Tolerance 0.03 (absolute) for N = 4000: finite-N deviations of a few thousandths, plus the
    # approximation's own error at moderate beta (from memory of the paper's figure: within ~0.02).
    k, c0 = 8, 3 * 6 / (4 * 7)
    for beta in (0.1, 0.3):
        g = _simple(_net("small_world", n=4000, mean_degree=k, rewiring=beta))
        assert nx.average_clustering(g) == pytest.approx(c0 * (1 - beta) ** 3, abs=0.03)
        assert 2 * g.number_of_edges() / g.number_of_nodes() == pytest.approx(k)


def test_erdos_renyi_giant_component_at_mean_degree_two():
    # Erdős & Rényi (1960): the giant component share S solves S = 1 - exp(-c S); at c = 2, S = 0.7968.
    # Tolerance 0.015: the giant component's share has sd ~ 0.005 at N = 20,000 (3 sd).
    from scipy.optimize import brentq

    s_root = brentq(lambda s: s - 1 + np.exp(-2 * s), 0.1, 1)
    assert s_root == pytest.approx(0.7968, abs=1e-4)
    g = _simple(_net("random", n=20_000, mean_degree=2.0, seed=5))
    giant = max(len(c) for c in nx.connected_components(g)) / g.number_of_nodes()
    assert giant == pytest.approx(s_root, abs=0.015)


def test_random_network_degrees_are_poisson():
    # G(n, p) degrees are Binomial(n-1, p) ~ Poisson(c) (Erdős & Rényi 1959); mean and variance c.
    deg = _net("random", n=20_000, mean_degree=6.0, seed=2).degree()
    assert deg.mean() == pytest.approx(6.0, abs=0.1)
    assert deg.var() == pytest.approx(6.0, rel=0.08)


def test_barabasi_albert_share_of_minimum_degree():
    # Dorogovtsev, Mendes & Samukhin (2000): P(k) = 2m(m+1)/(k(k+1)(k+2)), so P(m) = 2/(m+2) = 0.4 for m = 3.
    # Tolerance 0.015 at N = 20,000 (binomial sd 0.0035 plus finite-size bias of the exact formula).
    deg = _net("scale_free", n=20_000, mean_degree=6, seed=3).degree()
    assert np.mean(deg == 3) == pytest.approx(0.4, abs=0.015)
    assert deg.min() == 3


def test_random_regular_and_complete():
    deg = _net("regular", n=1000, mean_degree=5).degree()
    assert np.all(deg == 5)
    net = _net("complete", n=300)
    assert net.complete and net.indices.size == 0  # never materialised
    assert net.ties == 300 * 299 // 2 and np.all(net.degree() == 299)
    with pytest.raises(NetworkError):
        net.matrix()


def test_regional_block_model_expected_ties():
    # Stochastic block model (Holland, Laskey & Leinhardt 1983): expected within-region ties
    # sum_r p_in C(n_r, 2) and mean degree k. With w = 0.8 and k = 10 each organisation expects 8
    # ties inside its region. Tolerance: 4 sd of a binomial tie count.
    n, k, w, regions = 6000, 10.0, 0.8, 5
    net = _net("regional_blocks", n=n, mean_degree=k, within_region_share=w, regions=regions, seed=4)
    _simple(net)
    rows = np.repeat(np.arange(n), np.diff(net.indptr))
    within = int(np.sum(net.region[rows] == net.region[net.indices]) // 2)
    expected_within = n * k * w / 2
    assert abs(within - expected_within) < 4 * np.sqrt(expected_within)
    assert np.bincount(net.region).tolist() == [1200] * 5


def test_regions_are_balanced_for_every_kind():
    for kind, extra in (("random", {}), ("ring", {}), ("scale_free", {}), ("small_world", {})):
        net = _net(kind, n=1003, mean_degree=4, regions=4, **extra)
        sizes = np.bincount(net.region)
        assert sizes.size == 4 and sizes.max() - sizes.min() <= 1


def test_edgelist_karate_club(tmp_path):
    # Zachary (1977), "An information flow model for conflict and fission in small groups":
    # 34 members, 78 ties, as shipped by networkx. Real input through the CSV edge-list path.
    g = nx.karate_club_graph()
    path = tmp_path / "karate.csv"
    path.write_text("source,target\n" + "".join(f"{u},{v}\n" for u, v in g.edges()))
    nodes = tmp_path / "members.csv"
    nodes.write_text("id,region\n" + "".join(f"{i},{d['club']}\n" for i, d in g.nodes(data=True)))
    s = Scenario.from_dict({"network": {"kind": "edgelist", "path": str(path), "nodes_path": str(nodes)}})
    assert s.market.organisations == 34
    assert s.network.mean_degree == pytest.approx(2 * 78 / 34)  # the file's own, read when the scenario loads
    assert mapped_parameters(s.replace("adoption.rule", "count")).mean_degree == pytest.approx(2 * 78 / 34)
    net = build_network(s, np.random.default_rng(0))
    assert net.n == 34 and net.ties == 78
    assert sorted(np.diff(net.indptr).tolist()) == sorted(d for _, d in g.degree())
    assert np.bincount(net.region).tolist() == [17, 17]  # Mr. Hi's club and the Officer's
    back = net.to_networkx()
    assert nx.is_isomorphic(back, nx.Graph(g.edges()))


def test_edgelist_florentine_families_text_ids_and_cleaning(tmp_path):
    # Padgett & Ansell (1993), Florentine marriage ties as shipped by networkx: 15 families, 20 ties.
    g = nx.florentine_families_graph()
    lines = [f"{u},{v}" for u, v in g.edges()]
    lines += ["Medici,Medici", "Medici,Tornabuoni", "Tornabuoni,Medici"]  # a loop and two duplicates
    path = tmp_path / "marriages.csv"
    path.write_text("source,target\n" + "\n".join(lines) + "\n")
    with pytest.warns(UserWarning, match=r"dropped 1 self-loop\(s\) and 2 duplicate tie\(s\)"):
        net = read_edgelist(path)
    assert net.n == 15 and net.ties == 20
    medici = int(np.flatnonzero(net.labels == "Medici")[0])
    assert net.degree()[medici] == g.degree("Medici") == 6


def test_edgelist_errors_name_the_field(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("from,to\n1,2\n")
    with pytest.raises(NetworkError, match=r"network.path: .* must be a CSV with columns source,target; missing"):
        read_edgelist(bad)
    good = tmp_path / "ties.csv"
    good.write_text("source,target\n1,2\n2,3\n")
    nodes = tmp_path / "nodes.csv"
    nodes.write_text("id,region\n1,a\n2,b\n")
    with pytest.raises(NetworkError, match="missing from network.nodes_path"):
        read_edgelist(good, nodes)


def test_builders_never_use_global_random_state():
    a = _net("small_world", n=500, mean_degree=6, rewiring=0.2, seed=11)
    b = _net("small_world", n=500, mean_degree=6, rewiring=0.2, seed=11)
    c = _net("small_world", n=500, mean_degree=6, rewiring=0.2, seed=12)
    assert np.array_equal(a.indices, b.indices)
    assert not np.array_equal(a.indices, c.indices)
