"""Networks built straight into arrays, held to published facts and to networkx's builders.

Every seed and tolerance here was fixed before the test was first run; each tolerance
states its basis.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats
from scipy.sparse.csgraph import connected_components

from womlab import networks as nw


def _simple_and_symmetric(net: nw.ReferralNetwork) -> None:
    rows = np.repeat(np.arange(net.n), np.diff(net.indptr))
    cols = net.indices.astype(np.int64)
    assert not np.any(rows == cols), "self-loop"
    keys = rows * net.n + cols
    assert np.all(np.diff(keys) > 0), "rows not sorted or a duplicate tie"
    assert np.array_equal(np.sort(cols * net.n + rows), keys), "not symmetric"
    assert net.indices.dtype == np.int32 and net.indptr.dtype == np.int32


def _clustering(net: nw.ReferralNetwork) -> float:
    # compiled on the CSR; held to networkx.average_clustering in test_lean_builders.py
    return net.clustering()


BUILDERS = {
    "ring": lambda rng: nw.ring(600, 6, rng),
    "small_world": lambda rng: nw.small_world(600, 6, 0.2, rng),
    "regular": lambda rng: nw.regular(600, 5, rng),
    "random": lambda rng: nw.random(600, 6.0, rng),
    "regional": lambda rng: nw.regional(600, 6, 4, 0.8, rng, rewiring=0.1),
    "regional_blocks": lambda rng: nw.regional_blocks(600, 6.0, 4, 0.8, rng),
    "scale_free": lambda rng: nw.scale_free(600, 6, rng),
}


@pytest.mark.parametrize("kind", sorted(BUILDERS))
def test_no_self_loops_or_duplicates(kind):
    # common practice: a referral network is a simple undirected graph
    for seed in range(3):
        _simple_and_symmetric(BUILDERS[kind](np.random.default_rng(seed)))


@pytest.mark.parametrize("k", [2, 4, 6, 10])
def test_ring_clustering_at_rewiring_zero(k):
    # Watts & Strogatz (1998): the ring lattice has clustering 3(k − 2) / (4(k − 1)), exactly
    rng = np.random.default_rng(1)
    for net in (nw.ring(200, k, rng), nw.small_world(200, k, 0.0, rng)):
        assert _clustering(net) == pytest.approx(3 * (k - 2) / (4 * (k - 1)), abs=1e-12)
        assert np.all(net.degree() == k)


def test_ring_is_networkx_ring():
    # the lattice has no randomness: the same ties as networkx's watts_strogatz_graph(p = 0)
    rng = np.random.default_rng(2)
    ours = nw.ring(101, 8, rng)
    ref = nw.ReferralNetwork.from_networkx(nw.networkx_ring(101, 8, rng))
    assert np.array_equal(ours.indptr, ref.indptr) and np.array_equal(ours.indices, ref.indices)


@pytest.mark.parametrize("beta", [0.1, 0.3])
def test_small_world_clustering_barrat_weigt(beta):
    # Barrat & Weigt (2000), On the properties of small-world network models: C(β) ≈ C(0)(1 − β)³.
    # Tolerance 0.025: local clustering lies in [0, 1], so the SD of the mean over n = 5000
    # nearly independent organisations is at most sqrt(1/4 / 5000) = 0.0071; 3 such SDs plus
    # the O(k/n) = 0.002 triangles the formula leaves out.
    n, k = 5000, 10
    c0 = 3 * (k - 2) / (4 * (k - 1))
    net = nw.small_world(n, k, beta, np.random.default_rng(3))
    assert _clustering(net) == pytest.approx(c0 * (1 - beta) ** 3, abs=0.025)
    assert net.ties == n * k // 2  # rewiring keeps the number of ties


def test_random_giant_component_at_mean_degree_two():
    # Erdős & Rényi (1960): giant component share S solves S = 1 − exp(−2S), S = 0.7968 at mean degree 2.
    # Tolerance 0.015: its SD at n = 20000 is about sqrt(S(1 − S)/n)·(1/(1 − 2(1 − S))) ≈ 0.005 (common practice).
    n = 20_000
    net = nw.random(n, 2.0, np.random.default_rng(4))
    _, labels = connected_components(net.matrix(), directed=False)
    assert np.bincount(labels).max() / n == pytest.approx(0.7968, abs=0.015)


def test_scale_free_degree_m_share():
    # Dorogovtsev, Mendes & Samukhin (2000): share of degree-m organisations is 2/(m + 2) = 0.4 for m = 3.
    # Tolerance 0.015: binomial SE sqrt(0.4·0.6/20000) = 0.0035, about 4 SE.
    n, m = 20_000, 3
    net = nw.scale_free(n, 2 * m, np.random.default_rng(5))
    deg = net.degree()
    assert deg.min() == m
    assert np.mean(deg == m) == pytest.approx(2 / (m + 2), abs=0.015)
    # ties: m from the star, then m per newcomer (Barabási & Albert 1999)
    assert net.ties == m + m * (n - m - 1)


def test_regional_expected_ties_per_block():
    # Holland, Laskey & Leinhardt (1983): in a stochastic block model the ties between blocks a
    # and b are Binomial(pairs_ab, P_ab); each block's count within 4 binomial SD.
    n, regions, k, w = 3000, 3, 8.0, 0.85
    net = nw.regional_blocks(n, k, regions, w, np.random.default_rng(6))
    sizes = np.bincount(net.region, minlength=regions)
    probs = nw.builders._block_probabilities(sizes, k, w)
    rows = np.repeat(np.arange(n), np.diff(net.indptr))
    ra, rb = net.region[rows], net.region[net.indices]
    for a in range(regions):
        for b in range(a, regions):
            pairs = sizes[a] * (sizes[a] - 1) / 2 if a == b else sizes[a] * sizes[b]
            directed = np.sum((ra == a) & (rb == b))
            observed = directed / 2 if a == b else directed
            mean, sd = pairs * probs[a, b], np.sqrt(pairs * probs[a, b] * (1 - probs[a, b]))
            assert abs(observed - mean) < 4 * sd, (a, b, observed, mean)


@pytest.mark.parametrize("n,k", [(1000, 3), (1000, 10), (10, 8), (7, 6)])
def test_regular_degrees_exact(n, k):
    # definition of a k-regular graph; (7, 6) is the complete graph, (10, 8) a dense case that needs repair
    net = nw.regular(n, k, np.random.default_rng(7))
    assert np.all(net.degree() == k)
    _simple_and_symmetric(net)


# ------------------------------------------------------------------ against networkx, statistically
def _pooled(build, reps: int, seed: int):
    degrees, clustering = [], []
    for r in range(reps):
        built = build(np.random.default_rng([seed, r]))
        net = built if isinstance(built, nw.ReferralNetwork) else nw.ReferralNetwork.from_networkx(built)
        degrees.append(net.degree())
        clustering.append(_clustering(net))
    return np.concatenate(degrees), np.array(clustering)


PAIRS = {
    "small_world": (
        lambda rng: nw.small_world(2000, 8, 0.2, rng),
        lambda rng: nw.networkx_small_world(2000, 8, 0.2, rng),
    ),
    "regular": (lambda rng: nw.regular(2000, 6, rng), lambda rng: nw.networkx_regular(2000, 6, rng)),
    "random": (lambda rng: nw.random(2000, 6.0, rng), lambda rng: nw.networkx_random(2000, 6.0, rng)),
    "regional_blocks": (
        lambda rng: nw.regional_blocks(2000, 6.0, 4, 0.8, rng),
        lambda rng: nw.networkx_regional_blocks(2000, 6.0, 4, 0.8, rng),
    ),
    "scale_free": (lambda rng: nw.scale_free(2000, 6, rng), lambda rng: nw.networkx_scale_free(2000, 6, rng)),
}


@pytest.mark.parametrize("kind", sorted(PAIRS))
def test_array_builder_matches_networkx(kind):
    # networkx (Hagberg, Schult & Swart 2008) as the reference: pooled degree samples of 6
    # realisations each agree by two-sample KS (p > 0.001; conservative for discrete
    # degrees), and mean clustering agrees within 4 SE of the difference (SE from the
    # realisations' spread, floored at 0.001 for the near-zero clustering of random graphs).
    ours_deg, ours_c = _pooled(PAIRS[kind][0], 6, 11)
    ref_deg, ref_c = _pooled(PAIRS[kind][1], 6, 12)
    if kind != "regular":
        assert stats.ks_2samp(ours_deg, ref_deg).pvalue > 0.001
    assert ours_deg.mean() == pytest.approx(ref_deg.mean(), rel=0.03)
    se = np.sqrt(ours_c.var(ddof=1) / ours_c.size + ref_c.var(ddof=1) / ref_c.size)
    assert abs(ours_c.mean() - ref_c.mean()) < 4 * max(se, 0.001)


def test_build_network_uses_array_builders():
    from womlab import Scenario, build_network

    for kind in ("ring", "regular", "small_world", "scale_free", "random", "regional", "regional_blocks"):
        s = Scenario.from_dict(
            {"market": {"organisations": 300, "regions": 3}, "network": {"kind": kind, "mean_degree": 6}}
        )
        net = build_network(s, np.random.default_rng(0))
        assert net.kind == kind and net.regions == 3
        assert net.to_networkx().number_of_edges() == net.ties  # the way out to networkx
