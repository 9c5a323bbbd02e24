"""The compiled builders: the same networks as before where the draws are the same, clustered
regions against their derived clustering, and the compiled clustering against networkx.

Every seed and tolerance here was fixed before the test was first run; each tolerance
states its basis.
"""

from __future__ import annotations

import sys
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
from scipy import stats

from womlab import networks as nw
from womlab.networks.kernels import csr_from_ties, first_in_rows, local_clustering

sys.path.insert(0, str(Path(__file__).parent))
import previous_builders as previous  # noqa: E402


def _same(a: nw.ReferralNetwork, b: nw.ReferralNetwork) -> bool:
    return (
        np.array_equal(a.indptr, b.indptr)
        and np.array_equal(a.indices, b.indices)
        and np.array_equal(a.region, b.region)
    )


# the builders whose draws did not change: the compiled build must give the very same network
UNCHANGED = {
    "ring": lambda m, rng: m.ring(1001, 8, rng, regions=3),
    "small_world": lambda m, rng: m.small_world(3000, 8, 0.2, rng, regions=4),
    "small_world_dense": lambda m, rng: m.small_world(12, 10, 0.5, rng),
    "regular": lambda m, rng: m.regular(2000, 6, rng, regions=3),
    "regular_dense": lambda m, rng: m.regular(10, 8, rng),
    "scale_free": lambda m, rng: m.scale_free(5000, 6, rng, regions=3),
    "scale_free_m1": lambda m, rng: m.scale_free(3000, 2, rng, regions=2),
}


@pytest.mark.parametrize("case", sorted(UNCHANGED))
def test_compiled_builders_build_the_same_networks_as_before(case):
    # the builders before the compiled CSR build (tests/networks/previous_builders.py) as the oracle:
    # same seed, same draws in the same order, so exactly the same ties and regions
    for seed in range(8):
        ours = UNCHANGED[case](nw, np.random.default_rng(seed))
        before = UNCHANGED[case](previous, np.random.default_rng(seed))
        assert _same(ours, before), (case, seed)


def test_csr_from_ties_matches_scipy():
    # scipy.sparse (Virtanen et al. 2020) as the reference CSR: symmetric, rows sorted, every tie twice
    rng = np.random.default_rng(1)
    a = rng.integers(0, 500, 3000)
    b = (a + rng.integers(1, 499, 3000)) % 500
    keep = first_in_rows(500, a, b)
    a, b = a[keep], b[keep]
    indptr, indices = csr_from_ties(500, a.astype(np.int32), b.astype(np.int32))
    import scipy.sparse as sp

    ref = sp.coo_array((np.ones(2 * a.size), (np.r_[a, b], np.r_[b, a])), shape=(500, 500)).tocsr()
    ref.sort_indices()
    assert np.array_equal(indptr, ref.indptr) and np.array_equal(indices, ref.indices)


def test_first_in_rows_marks_later_repeats_in_either_direction():
    # definition: the first occurrence of an undirected pair in array order is kept
    a = np.array([0, 1, 2, 1, 0, 3, 3])
    b = np.array([1, 0, 2, 2, 1, 2, 2])
    assert first_in_rows(4, a, b).tolist() == [True, False, True, True, False, True, False]
    # few pairs among many organisations take the hashing path; it must mark exactly what the rows path marks
    from womlab.networks.kernels import _first_by_rows

    rng = np.random.default_rng(2)
    a = rng.integers(0, 50, 4000)
    b = rng.integers(0, 50, 4000) + 100_000 * rng.integers(0, 2, 4000)
    hashed = first_in_rows(1_000_000, a, b)
    assert np.array_equal(hashed, _first_by_rows(1_000_000, a, b)) and (~hashed).sum() > 1000


@pytest.mark.parametrize("graph", ["karate", "florentine", "random"])
def test_compiled_clustering_is_networkx_clustering(graph):
    # networkx.average_clustering (Watts & Strogatz 1998 local clustering, degree < 2 counts 0) as reference
    g = {
        "karate": nx.karate_club_graph(),  # Zachary (1977)
        "florentine": nx.florentine_families_graph(),  # Padgett & Ansell (1993)
        "random": nx.gnm_random_graph(400, 1600, seed=np.random.default_rng(3)),
    }[graph]
    net = nw.ReferralNetwork.from_networkx(g)
    assert net.clustering() == pytest.approx(nx.average_clustering(g), abs=1e-12)
    ref = nx.clustering(g)
    ids = net.ids()
    local = local_clustering(net.indptr, net.indices)
    assert np.allclose(local, [ref[v] for v in (ids.tolist() if net.labels is not None else range(net.n))])


# ----------------------------------------------------------------------------- G(n, p) by skipping
def test_random_tie_count_is_binomial():
    # Gilbert (1959): the tie count of G(n, p) is Binomial(n(n − 1)/2, p). 200 graphs at n = 300,
    # p = 0.02: their counts against that binomial by KS (p > 0.001, fixed before looking)
    n, p = 300, 0.02
    counts = [nw.random(n, p * (n - 1), np.random.default_rng([9, r])).ties for r in range(200)]
    pairs = n * (n - 1) // 2
    assert stats.kstest(counts, stats.binom(pairs, p).cdf).pvalue > 0.001
    assert np.mean(counts) == pytest.approx(pairs * p, abs=4 * np.sqrt(pairs * p * (1 - p) / 200))


def test_random_every_pair_equally_likely():
    # Gilbert (1959): each pair is present with the same probability p, whatever its place in the
    # order the skipping walks. Over 400 graphs on 40 organisations at p = 0.1, each pair's count is
    # Binomial(400, 0.1): the 780 counts against it by a chi-square on their histogram (p > 0.001)
    n, reps = 40, 400
    hits = np.zeros((n, n))
    for r in range(reps):
        net = nw.random(n, 0.1 * (n - 1), np.random.default_rng([10, r]))
        rows = np.repeat(np.arange(n), np.diff(net.indptr))
        hits[rows, net.indices] += 1
    counts = hits[np.triu_indices(n, 1)]
    ref = stats.binom(reps, 0.1)
    edges = [0, 30, 35, 38, 40, 42, 45, 50, reps + 1]
    observed = np.histogram(counts, bins=edges)[0]
    expected = np.diff(ref.cdf(np.array(edges) - 1)) * counts.size
    assert stats.chisquare(observed, expected * observed.sum() / expected.sum()).pvalue > 0.001


# ----------------------------------------------------------------------------- clustered regions
def test_regional_without_moves_is_a_ring_lattice_per_region():
    # Watts & Strogatz (1998): the ring lattice's clustering is 3(k − 2)/(4(k − 1)) exactly; with every
    # tie kept inside its region each region is that lattice on its own organisations
    k = 8
    net = nw.regional(1200, k, 4, 1.0, np.random.default_rng(0))
    assert np.all(net.degree() == k)
    rows = np.repeat(np.arange(net.n), np.diff(net.indptr))
    assert np.all(net.region[rows] == net.region[net.indices])
    assert net.clustering() == pytest.approx(3 * (k - 2) / (4 * (k - 1)), abs=1e-12)
    assert nw.rewired_lattice_clustering(k, 1.0) == pytest.approx(3 * (k - 2) / (4 * (k - 1)), abs=1e-12)


@pytest.mark.parametrize("k,w,beta", [(8, 0.85, 0.1), (8, 0.7, 0.0), (10, 0.95, 0.0), (6, 0.5, 0.2)])
def test_regional_clustering_is_the_derived_value(k, w, beta):
    # the builder's value, derived in rewired_lattice_clustering from the lattice (Watts & Strogatz 1998)
    # with a share s = w(1 − β) of ties left in place. Tolerance: 4 SE of the mean of n = 8000 local
    # clusterings (SE from their own spread) plus 2k²/nᵣ for the triangles moved ties close, which the
    # derivation leaves out (at most k²/nᵣ per organisation in expectation; nᵣ = 2000, common practice)
    n, regions = 8000, 4
    net = nw.regional(n, k, regions, w, np.random.default_rng([k, int(100 * w)]), rewiring=beta)
    local = local_clustering(net.indptr, net.indices)
    expected = nw.rewired_lattice_clustering(k, w * (1 - beta))
    se = local.std(ddof=1) / np.sqrt(n)
    assert abs(local.mean() - expected) < 4 * se + 2 * k**2 / (n / regions), (local.mean(), expected)
    # every organisation keeps its k/2 near-end ties: n·k/2 ties exactly, mean degree k
    assert net.ties == n * k // 2
    # the share of ties inside regions is w in expectation: Binomial(n·k/2, w) within 4 SD
    rows = np.repeat(np.arange(n), np.diff(net.indptr))
    within = np.sum(net.region[rows] == net.region[net.indices]) // 2
    assert abs(within - w * net.ties) < 4 * np.sqrt(net.ties * w * (1 - w)) + 1


def test_derived_clustering_matches_networkx_small_worlds():
    # outside check of the derivation itself: networkx's watts_strogatz_graph (Hagberg et al. 2008)
    # moves a share β of lattice far ends, so its mean clustering is rewired_lattice_clustering(k,
    # 1 − β). 6 realisations at n = 3000; tolerance 4 SE of their mean plus 2k²/n (as above)
    for k, beta in ((8, 0.2), (10, 0.05)):
        values = [
            nx.average_clustering(nx.watts_strogatz_graph(3000, k, beta, seed=np.random.default_rng([4, r])))
            for r in range(6)
        ]
        se = np.std(values, ddof=1) / np.sqrt(len(values))
        assert abs(np.mean(values) - nw.rewired_lattice_clustering(k, 1 - beta)) < 4 * se + 2 * k**2 / 3000
        # and Barrat & Weigt's (2000) ratio-of-means form is near it (within 0.025, as the suite's small-world test)
        c0 = 3 * (k - 2) / (4 * (k - 1))
        assert nw.rewired_lattice_clustering(k, 1 - beta) == pytest.approx(c0 * (1 - beta) ** 3, abs=0.025)


def test_regional_regions_are_networkx_small_worlds_when_no_tie_leaves():
    # at within_region_share = 1 each region is a Watts–Strogatz small world of its own: pooled degrees
    # of 6 realisations (4 regions of 500) against networkx's watts_strogatz_graph(500, 6, 0.2) × 4 by
    # two-sample KS (p > 0.001), mean clustering within 4 SE of the difference, as the suite's other
    # networkx comparisons
    ours_deg, ours_c, ref_deg, ref_c = [], [], [], []
    for r in range(6):
        net = nw.regional(2000, 6, 4, 1.0, np.random.default_rng([5, r]), rewiring=0.2)
        ours_deg.append(net.degree())
        ours_c.append(net.clustering())
        gs = [nx.watts_strogatz_graph(500, 6, 0.2, seed=np.random.default_rng([6, r, q])) for q in range(4)]
        ref_deg.append(np.concatenate([[d for _, d in g.degree()] for g in gs]))
        ref_c.append(np.mean([nx.average_clustering(g) for g in gs]))
    assert stats.ks_2samp(np.concatenate(ours_deg), np.concatenate(ref_deg)).pvalue > 0.001
    se = np.sqrt(np.var(ours_c, ddof=1) / 6 + np.var(ref_c, ddof=1) / 6)
    assert abs(np.mean(ours_c) - np.mean(ref_c)) < 4 * max(se, 0.001)


def test_expected_clustering_of_random_graphs():
    # Erdős & Rényi (1959): two neighbours of an organisation are tied with probability p, so the mean
    # local clustering is p·P(degree ≥ 2); one graph at n = 20000, mean degree 10, within 4 SE
    n, k = 20_000, 10.0
    net = nw.random(n, k, np.random.default_rng(8))
    local = local_clustering(net.indptr, net.indices)
    assert abs(local.mean() - nw.expected_clustering("random", n, k)) < 4 * local.std(ddof=1) / np.sqrt(n)
    assert nw.expected_clustering("scale_free", n, 6) is None


def test_regional_refuses_what_it_cannot_build():
    from womlab import NetworkError

    with pytest.raises(NetworkError, match="even mean degree"):
        nw.regional(100, 5, 2, 0.8, np.random.default_rng(0))
    with pytest.raises(NetworkError, match="more than k organisations per region"):
        nw.regional(40, 8, 5, 0.8, np.random.default_rng(0))
