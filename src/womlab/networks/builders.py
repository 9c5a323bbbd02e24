"""Referral networks: who knows whom, and in which region each organisation sits.

Each kind has a plain builder registered by name. Builders take the structure first,
then a ``numpy.random.Generator`` (always seeded: womlab never uses a global random
state) and return a :class:`ReferralNetwork`: compressed sparse rows (int32 ids) plus a
region per organisation, the form every engine reads. :func:`build_network` turns a
scenario's ``[network]`` section into one.

Regions. ``regional`` networks are made of their regions: a small world inside each
region (a ring lattice of the region's organisations, ties rewired inside the region)
with a share of every organisation's ties to other regions, so organisations in one
region know each other's neighbours. ``regional_blocks`` is the older form, a
stochastic block model whose regions are locally tree-like. For other kinds, regions
are balanced: contiguous arcs on the ``ring`` and ``small_world`` lattices (geography
along the ring), a random balanced assignment elsewhere (so that, say, the oldest hubs of
a ``scale_free`` network do not all land in region 0). Edge lists and graph files take
regions from their nodes, else everyone is in region 0.

Every kind is built straight into arrays without a networkx graph in between: tie
arrays (int32), then one compiled pass into CSR (:func:`from_edges`); membership and
duplicate tests use the structure (a lattice tie is found from the two ends' distance,
duplicates by filing pairs under their smaller end), never int64 keys and a global sort,
and random numbers are drawn a chunk at a time. The networkx forms are kept beside them
as ``networkx_<kind>`` references, which the test suite holds the array builders to.
networkx stays the way in (graph files, ``from_networkx``) and the way out
(:meth:`ReferralNetwork.to_networkx`) for analysis.

Adding a kind: write ``def my_kind(n, ..., rng) -> ReferralNetwork``, add an adapter from
the scenario in ``womlab.networks.build.BUILDERS`` and the name to
``womlab.scenario.NETWORK_KINDS``.
"""

from __future__ import annotations

from collections.abc import Callable

import networkx as nx
import numpy as np
from scipy import stats

from womlab.errors import NetworkError
from womlab.networks.kernels import csr_from_ties, first_in_rows, lattice_tie_index, lattice_ties
from womlab.networks.network import ReferralNetwork, balanced_regions, from_edges
from womlab.rules.compiled import compiled

__all__ = [
    "complete",
    "ring",
    "regular",
    "random",
    "small_world",
    "regional",
    "regional_blocks",
    "scale_free",
    "expected_clustering",
    "rewired_lattice_clustering",
    "networkx_ring",
    "networkx_regular",
    "networkx_random",
    "networkx_small_world",
    "networkx_regional_blocks",
    "networkx_scale_free",
]

_CHUNK = 1 << 22  # random numbers drawn at once: bounds the largest builds' temporaries (32 MB of float64)


def _with_regions(graph: nx.Graph, region: np.ndarray) -> nx.Graph:
    nx.set_node_attributes(graph, dict(enumerate(region.tolist())), "region")
    return graph


# ----------------------------------------------------------------------------- drawing
def _uniform_below(rng: np.random.Generator, size: int, p: float) -> tuple[np.ndarray, np.ndarray]:
    """Positions k < size whose uniform uₖ (one per position, in order) is below p, and those uₖ.

    Drawn a chunk at a time: the same numbers as ``rng.random(size)``, without holding them all.
    """
    hits, values = [np.zeros(0, dtype=np.int64)], [np.zeros(0)]
    for start in range(0, size, _CHUNK):
        u = rng.random(min(_CHUNK, size - start))
        k = np.flatnonzero(u < p)
        hits.append(k + start)
        values.append(u[k])
    return np.concatenate(hits), np.concatenate(values)


def _skipped_positions(pairs: int, p: float, rng: np.random.Generator) -> np.ndarray:
    """Positions 0..pairs−1, each present independently with probability p, ascending.

    The gaps between successive present positions are independent Geometric(p) draws
    (Batagelj & Brandes 2005), drawn a chunk at a time until they pass the last position.
    """
    if pairs <= 0 or p <= 0:
        return np.zeros(0, dtype=np.int64)
    p = min(p, 1.0)
    expected = pairs * p
    chunk = int(min(_CHUNK, expected + 6 * np.sqrt(expected) + 16))
    parts, last = [], -1
    while last < pairs:
        positions = np.cumsum(rng.geometric(p, size=chunk))
        positions += last
        last = int(positions[-1])
        parts.append(positions if last < pairs else positions[: np.searchsorted(positions, pairs)])
        chunk = int(min(_CHUNK, 6 * np.sqrt(expected) + 16))
    return parts[0] if len(parts) == 1 else np.concatenate(parts)


@compiled
def _triangle_pairs(k: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Ascending positions k = j(j − 1)/2 + i (0 ≤ i < j) back to the pairs (i, j), by walking j up."""
    i_out = np.empty(k.size, dtype=np.int32)
    j_out = np.empty(k.size, dtype=np.int32)
    j, base = 1, 0
    for e in range(k.size):
        while k[e] >= base + j:
            base += j
            j += 1
        i_out[e] = k[e] - base
        j_out[e] = j
    return i_out, j_out


def _pairs_within(n: int, p: float, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Each of the n(n − 1)/2 pairs of 0..n−1 independently with probability p (int32 ends)."""
    return _triangle_pairs(_skipped_positions(n * (n - 1) // 2, p, rng))


def _pairs_between(na: int, nb: int, p: float, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Each of the na·nb pairs (a, b) independently with probability p; offsets 0 (int32 ends)."""
    k = _skipped_positions(na * nb, p, rng)
    a, b = np.divmod(k, nb)
    return a.astype(np.int32), b.astype(np.int32)


class _Lattice:
    """Ring lattices of half-width ``half`` on blocks of consecutive organisations (the whole
    network, or each region), and the rewiring of some of their ties' far ends."""

    def __init__(self, sizes: np.ndarray, half: int):
        self.sizes = np.asarray(sizes, dtype=np.int64)
        self.starts = np.concatenate([[0], np.cumsum(self.sizes)[:-1]]).astype(np.int64)
        self.offsets = self.starts * half
        self.half = half
        self.block = np.repeat(np.arange(self.sizes.size, dtype=np.int32), self.sizes)
        self.n = int(self.sizes.sum())
        self.src, self.dst = lattice_ties(self.starts, self.sizes, half)
        self.moved = np.zeros(0, dtype=bool)

    def _kept(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """True where (aₖ, bₖ) is a lattice tie that stays in place (found from the ends' distance)."""
        idx = lattice_tie_index(a, b, self.block, self.starts, self.sizes, self.offsets, self.half)
        hit = idx >= 0
        hit[hit] = ~self.moved[idx[hit]]
        return hit

    def rewire(self, moved: np.ndarray, draw: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
        """Give the ``moved`` ties new far ends; returns ``dst`` with them in place.

        ``draw(todo)`` gives fresh far ends for the moved ties at positions ``todo`` (within
        ``moved``). A far end that makes a self-loop, repeats an earlier moved tie or lands
        on a kept lattice tie is drawn again, all such at once, for up to 100 rounds; a tie
        still in conflict then stays where it was (as when an organisation is already
        tied to everyone it could be).
        """
        self.moved = np.zeros(self.src.size, dtype=bool)
        self.moved[moved] = True
        near = self.src[moved]
        original = self.dst[moved]
        far = draw(np.arange(moved.size))
        for _ in range(100):
            clash = (near == far) | ~first_in_rows(self.n, near, far) | self._kept(near, far)
            todo = np.flatnonzero(clash)
            if todo.size == 0:
                break
            far[todo] = draw(todo)
        else:
            far[todo] = original[todo]  # skip these rewirings
            first = first_in_rows(self.n, near, far) & ~self._kept(near, far)
            far[~first] = original[~first]
        self.dst[moved] = far
        return self.dst


# ----------------------------------------------------------------------------- builders
def complete(n: int, *, regions: int = 1, rng: np.random.Generator | None = None) -> ReferralNetwork:
    """Everyone knows everyone; stored without ties (engines use totals)."""
    empty = np.zeros(0, dtype=np.int32)
    region = balanced_regions(n, regions, rng)
    return ReferralNetwork(
        n=n, indptr=np.zeros(n + 1, dtype=np.int32), indices=empty, region=region, kind="complete", complete=True
    )


def random(n: int, mean_degree: float, rng: np.random.Generator, *, regions: int = 1) -> ReferralNetwork:
    """Erdős–Rényi G(n, p) with p = mean_degree / (n − 1), built straight into arrays.

    Every pair is present independently with probability p. The present pairs are found
    by skipping: in a fixed order of the n(n − 1)/2 pairs, the gaps between successive
    present pairs are independent Geometric(p) draws (Batagelj & Brandes 2005), so work
    and memory grow with n plus the ties made, never with the pairs.

    References
    ----------
    Erdős, P. & Rényi, A. (1959). On random graphs I. Publicationes Mathematicae 6, 290–297.
    Gilbert, E. N. (1959). Random graphs. Annals of Mathematical Statistics 30, 1141–1144.
    Batagelj, V. & Brandes, U. (2005). Efficient generation of large random networks.
    Physical Review E 71, 036113.
    """
    src, dst = _pairs_within(n, mean_degree / (n - 1), rng)
    return from_edges(n, src, dst, balanced_regions(n, regions, rng), "random")


def networkx_random(n: int, mean_degree: float, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """The networkx form of :func:`random` (``fast_gnp_random_graph``), kept as the reference."""
    g = nx.fast_gnp_random_graph(n, mean_degree / (n - 1), seed=rng)
    return _with_regions(g, balanced_regions(n, regions, rng))


def _lattice(n: int, k: int) -> tuple[np.ndarray, np.ndarray]:
    """Ties of the ring lattice: i – (i + d) mod n for d = 1..k/2, distance-major order (int32)."""
    return lattice_ties(np.zeros(1, dtype=np.int64), np.full(1, n, dtype=np.int64), int(k) // 2)


def ring(n: int, mean_degree: int, rng: np.random.Generator | None = None, *, regions: int = 1) -> ReferralNetwork:
    """Ring lattice: each organisation tied to its ``mean_degree`` nearest neighbours.

    Organisation i is tied to i ± 1, …, i ± k/2 (mod n); built straight into arrays.
    Regions are contiguous arcs. ``rng`` is accepted for a uniform signature and unused.

    References
    ----------
    Watts, D. J. & Strogatz, S. H. (1998). Collective dynamics of 'small-world' networks.
    Nature 393, 440–442 (the lattice at rewiring 0).
    """
    src, dst = _lattice(n, mean_degree)
    return from_edges(n, src, dst, balanced_regions(n, regions), "ring")


def networkx_ring(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """The networkx form of :func:`ring` (``watts_strogatz_graph`` at rewiring 0), kept as the reference."""
    return _with_regions(nx.watts_strogatz_graph(n, int(mean_degree), 0.0, seed=rng), balanced_regions(n, regions))


def small_world(
    n: int, mean_degree: int, rewiring: float, rng: np.random.Generator, *, regions: int = 1
) -> ReferralNetwork:
    """Watts–Strogatz small world, built straight into arrays.

    Start from the :func:`ring` lattice; each lattice tie i – (i + d) keeps its near end i
    and has its far end rewired, with probability ``rewiring``, to an organisation drawn
    uniformly, avoiding self-loops and duplicate ties (a far end that would make one is
    drawn again; after 100 rounds a still-conflicting tie stays where it was, as when an
    organisation is already tied to everyone). All decisions are drawn at once: one
    uniform per lattice tie (distance-major, node order, as in the published model),
    then one far end per rewired tie, then redraws for conflicts.

    The published procedure rewires ties one at a time, so a tie may not land on a
    lattice pair whose own turn comes later; here conflicts are checked against the
    final set of ties, so it may land on a lattice pair that is itself rewired away. The
    two differ only in such rare coincidences (of order k²β/n per tie); the test suite
    holds this builder to networkx's statistically.

    References
    ----------
    Watts, D. J. & Strogatz, S. H. (1998). Collective dynamics of 'small-world' networks.
    Nature 393, 440–442.
    """
    lattice = _Lattice(np.array([n]), int(mean_degree) // 2)
    moved, _ = _uniform_below(rng, lattice.src.size, rewiring)
    dst = lattice.rewire(moved, lambda todo: rng.integers(0, n, size=todo.size)) if moved.size else lattice.dst
    return from_edges(n, lattice.src, dst, balanced_regions(n, regions), "small_world")


def networkx_small_world(
    n: int, mean_degree: int, rewiring: float, rng: np.random.Generator, *, regions: int = 1
) -> nx.Graph:
    """The networkx form of :func:`small_world` (``watts_strogatz_graph``), kept as the reference."""
    g = nx.watts_strogatz_graph(n, int(mean_degree), rewiring, seed=rng)
    return _with_regions(g, balanced_regions(n, regions))


def regular(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> ReferralNetwork:
    """Random regular graph, built straight into arrays: every organisation has exactly k ties.

    Method: the configuration model with repair. Each organisation gets k stubs and one
    random permutation pairs them all. Each pair that is a self-loop or repeats an
    earlier pair is then repaired by a switch: with a randomly chosen good pair (c, d),
    the bad pair (a, b) and (c, d) become (a, c) and (b, d) (orientation at random), tried
    again with another good pair whenever the switch would itself make a loop or a
    duplicate. Degrees are kept exactly throughout.

    Uniformity caveat. The configuration model conditioned on being simple is exactly
    uniform over simple k-regular graphs (Bollobás 1980), but full rejection succeeds
    with probability about exp(−(k² − 1)/4) (Bender & Canfield 1978; value from memory),
    hopeless beyond k ≈ 6. Repair keeps the good pairs, so the result is not exactly
    uniform; the expected number of repaired pairs is about (k − 1)/2 + (k − 1)²/4 (loops
    and double ties of the configuration model, same sources), independent of n, so the
    distortion touches a vanishing share of ties as n grows. networkx's
    :func:`networkx_regular` (Steger & Wormald 1999, asymptotically uniform for small k)
    is the reference the suite compares this builder with.

    Raises
    ------
    NetworkError
        If n·k is odd or k ≥ n, or 100 fresh pairings all fail to repair (possible only
        for k close to n).

    References
    ----------
    Bollobás, B. (1980). A probabilistic proof of an asymptotic formula for the number of
    labelled regular graphs. European Journal of Combinatorics 1, 311–316.
    """
    k = int(mean_degree)
    if (n * k) % 2 or not 0 <= k < n:
        raise NetworkError(f"a {k}-regular graph on {n} organisations needs 0 <= k < n and n·k even")
    if k == n - 1:  # the one simple (n − 1)-regular graph
        i, j = np.triu_indices(n, 1)
        pairs = np.stack([i, j], axis=1).astype(np.int32)
    else:
        for _ in range(100):  # a fresh pairing when repair gets stuck (only for k close to n)
            pairs = np.repeat(np.arange(n, dtype=np.int32), k)
            rng.shuffle(pairs)  # the same permutation as rng.permutation of the stubs
            pairs = pairs.reshape(-1, 2)
            bad = (pairs[:, 0] == pairs[:, 1]) | ~first_in_rows(n, pairs[:, 0], pairs[:, 1])
            if not bad.any() or _repair_pairs(pairs, bad, n, rng):
                break
        else:
            raise NetworkError(f"could not build a simple {k}-regular graph on {n} organisations in 100 tries")
    region = balanced_regions(n, regions, rng)
    return from_edges(n, pairs[:, 0], pairs[:, 1], region, "regular")


def _repair_pairs(pairs: np.ndarray, bad: np.ndarray, n: int, rng: np.random.Generator) -> bool:
    """Switch each bad pair with random good pairs until the pairing is simple (in place).

    Whether a pair exists is looked up in the CSR of the pairing as drawn (a binary search
    in one row), corrected by the switches made so far. Returns False if the switches get
    stuck (the caller then starts a fresh pairing).
    """
    indptr, indices = csr_from_ties(n, pairs[:, 0], pairs[:, 1])
    removed: set[int] = set()
    added: set[int] = set()
    bad_now = set(np.flatnonzero(bad).tolist())

    def exists(key: int) -> bool:
        if key in added:
            return True
        if key in removed:
            return False
        lo, hi = divmod(key, n)
        row = indices[indptr[lo] : indptr[lo + 1]]
        pos = int(np.searchsorted(row, hi))
        return pos < row.size and int(row[pos]) == hi

    budget = 100 * (len(bad_now) + 10)
    for b in sorted(bad_now):
        a, a2 = int(pairs[b, 0]), int(pairs[b, 1])
        while True:
            budget -= 1
            if budget < 0:
                return False
            g = int(rng.integers(pairs.shape[0]))
            if g in bad_now:
                continue
            c, d = (int(pairs[g, 0]), int(pairs[g, 1]))
            if rng.random() < 0.5:
                c, d = d, c
            k1, k2 = min(a, c) * n + max(a, c), min(a2, d) * n + max(a2, d)
            if a == c or a2 == d or k1 == k2 or exists(k1) or exists(k2):
                continue
            old = min(c, d) * n + max(c, d)
            if old in added:
                added.discard(old)
            else:
                removed.add(old)
            for key in (k1, k2):
                removed.discard(key)
                added.add(key)
            pairs[b] = (a, c)
            pairs[g] = (a2, d)
            bad_now.discard(b)
            break
    return True


def networkx_regular(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """The networkx form of :func:`regular` (``random_regular_graph``), kept as the reference."""
    g = nx.random_regular_graph(int(mean_degree), n, seed=rng)
    return _with_regions(g, balanced_regions(n, regions, rng))


def _block_probabilities(sizes: np.ndarray, mean_degree: float, within_region_share: float) -> np.ndarray:
    n = int(sizes.sum())
    p_in = within_region_share * mean_degree / np.maximum(sizes - 1, 1)
    p_out = (1 - within_region_share) * mean_degree / (n - sizes)
    probs = np.sqrt(np.outer(p_out, p_out))
    np.fill_diagonal(probs, p_in)
    return np.minimum(probs, 1.0)


def regional(
    n: int,
    mean_degree: int,
    regions: int,
    within_region_share: float,
    rng: np.random.Generator,
    *,
    rewiring: float = 0.0,
) -> ReferralNetwork:
    """Clustered regions: a small world inside each region, and a share of ties to other regions.

    Regions are balanced blocks of consecutive organisations. Inside each region the
    organisations sit on a ring lattice of the region's own (each tied to its k/2
    nearest on either side, the ring closing within the region), so neighbours share
    neighbours as in Watts & Strogatz (1998). Then every lattice tie i – j (i the near end)
    keeps i and, with one uniform per tie in lattice order: with probability
    1 − ``within_region_share`` its far end moves to an organisation drawn uniformly from
    the *other* regions; with probability ``within_region_share`` · ``rewiring`` it moves
    to one drawn uniformly from i's own region; otherwise it stays. Far ends that would
    make a self-loop or a duplicate are drawn again (as in :func:`small_world`). Every
    organisation has k ties on average, exactly n·k/2 ties in all, a share
    ``within_region_share`` of them inside regions in expectation.

    The mean local clustering is :func:`rewired_lattice_clustering` with the share of ties
    left in place s = within_region_share · (1 − rewiring): at s = 1 it is the lattice's
    3(k − 2)/(4(k − 1)), and it falls roughly as s³ (Barrat & Weigt 2000).

    Raises
    ------
    NetworkError
        If k is not even, fewer than 2 regions, or a region has k or fewer organisations.

    References
    ----------
    Watts, D. J. & Strogatz, S. H. (1998). Collective dynamics of 'small-world' networks.
    Nature 393, 440–442.
    Barrat, A. & Weigt, M. (2000). On the properties of small-world network models.
    European Physical Journal B 13, 547–560.
    """
    k = int(mean_degree)
    sizes = np.bincount(balanced_regions(n, regions), minlength=regions).astype(np.int64)
    if k != mean_degree or k % 2 or k < 2 or regions < 2 or sizes.min() <= k:
        raise NetworkError(
            f"a clustered regional network needs an even mean degree k >= 2, at least 2 regions and more than k "
            f"organisations per region; got k = {mean_degree}, {regions} regions of {int(sizes.min())} or more"
        )
    lattice = _Lattice(sizes, k // 2)
    cross_share = 1.0 - within_region_share
    moved, u = _uniform_below(rng, lattice.src.size, cross_share + within_region_share * rewiring)
    if moved.size:
        cross = u < cross_share
        del u
        region_of_tie = lattice.block[lattice.src[moved]]
        start = lattice.starts.astype(np.int32)[region_of_tie]  # int32 throughout: these live while far ends are drawn
        size = sizes.astype(np.int32)[region_of_tie]
        del region_of_tie
        high = np.where(cross, np.int32(n) - size, size)

        def draw(todo: np.ndarray) -> np.ndarray:
            x = rng.integers(0, high[todo])
            outside = np.where(x < start[todo], x, x + size[todo])
            return np.where(cross[todo], outside, start[todo] + x).astype(np.int32)

        dst = lattice.rewire(moved, draw)
    else:
        dst = lattice.dst
    return from_edges(n, lattice.src, dst, lattice.block.copy(), "regional")


def rewired_lattice_clustering(mean_degree: int, kept_share: float) -> float:
    """Expected mean local clustering of a ring lattice whose ties keep their far end with
    probability ``kept_share`` and otherwise move it to an organisation drawn at random
    (:func:`small_world`, :func:`regional`; the ring lattice at ``kept_share`` = 1).

    Derivation (with h = k/2 and s = ``kept_share``). Organisation i is the near end of h
    lattice ties (i → i + d), which it keeps whatever happens to their far end, and the
    far end of h (i − d → i). Let B₁, B₂ ~ Binomial(h, s) count those that stay lattice
    ties, and R ~ Poisson(h(1 − s)) the moved far ends that land on i. Then i's degree is
    h + B₂ + R. Its lattice neighbours on one side are all pairwise tied in the lattice
    (C(h, 2) pairs a side), and i − a, i + b are tied when a + b ≤ h (h(h − 1)/2 pairs);
    given B₁ and B₂ the surviving sides are uniform subsets, so the expected surviving
    adjacent pairs are C(B₁, 2) + C(B₂, 2) + (h − 1)B₁B₂/(2h), each closing a triangle if
    its own tie stayed too (probability s, independently). Hence

        E[C] = Σ P(B₁) P(B₂) P(R) · s [C(B₁,2) + C(B₂,2) + (h−1)B₁B₂/(2h)] / C(h + B₂ + R, 2),

    counting 0 for degree below 2 (as ``networkx.average_clustering``). Triangles closed by
    moved ties are left out (of order k²/n per organisation, n the organisations a far
    end is drawn from). At s = 1 it is the lattice's 3(k − 2)/(4(k − 1)) (Watts & Strogatz
    1998) exactly; the ratio of the means of triangles and pairs instead gives Barrat &
    Weigt's (2000) C(0)(1 − β)³ with β = 1 − s.

    Examples
    --------
    >>> round(rewired_lattice_clustering(10, 1.0), 6) == round(3 * 8 / (4 * 9), 6)
    True
    >>> round(rewired_lattice_clustering(8, 0.85 * 0.9), 3)
    0.293
    """
    h = int(mean_degree) // 2
    s = float(kept_share)
    if h < 1:
        return 0.0
    b = np.arange(h + 1)
    pb = stats.binom.pmf(b, h, s)
    lam = h * (1 - s)
    r = np.arange(int(lam + 12 * np.sqrt(lam) + 30))
    pr = stats.poisson.pmf(r, lam) if lam > 0 else (r == 0).astype(float)
    b1, b2, rr = np.meshgrid(b, b, r, indexing="ij")
    closed = s * (b1 * (b1 - 1) / 2 + b2 * (b2 - 1) / 2 + (h - 1) * b1 * b2 / (2 * h))
    d = h + b2 + rr
    pairs = d * (d - 1) / 2
    c = np.divide(closed, pairs, out=np.zeros_like(closed, dtype=float), where=pairs > 0)
    return float(np.einsum("i,j,k,ijk->", pb, pb, pr, c))


def expected_clustering(
    kind: str,
    organisations: int,
    mean_degree: float,
    *,
    rewiring: float = 0.0,
    within_region_share: float = 1.0,
) -> float | None:
    """The mean local clustering a builder gives in expectation, where it is known; else None.

    ``ring``, ``small_world`` and ``regional``: :func:`rewired_lattice_clustering` with the
    share of ties left in place (1, 1 − rewiring, within_region_share · (1 − rewiring));
    ``random``: p · P(degree ≥ 2) with p = k/(n − 1), since in G(n, p) any two neighbours
    are tied with probability p (Erdős & Rényi 1959); ``complete``: 1. Other kinds (block
    models, scale-free, regular, files) have no closed form here: None.

    Examples
    --------
    >>> round(expected_clustering("ring", 1000, 8), 4)
    0.6429
    """
    k = mean_degree
    if kind == "complete":
        return 1.0 if organisations > 2 else 0.0
    if kind == "ring":
        return rewired_lattice_clustering(int(k), 1.0)
    if kind == "small_world":
        return rewired_lattice_clustering(int(k), 1.0 - rewiring)
    if kind == "regional":
        return rewired_lattice_clustering(int(k), within_region_share * (1.0 - rewiring))
    if kind == "random":
        p = k / (organisations - 1)
        return float(p * stats.binom.sf(1, organisations - 1, p))
    return None


def regional_blocks(
    n: int, mean_degree: float, regions: int, within_region_share: float, rng: np.random.Generator
) -> ReferralNetwork:
    """Regions as blocks of a stochastic block model (locally tree-like, no clustering of its own).

    Balanced regions; with region sizes nᵣ, the within-region tie probability is
    w·k / (nᵣ − 1) and the between-region one (1 − w)·k / (n − nᵣ), so each organisation
    expects k ties of which a share w are inside its region. Built straight into arrays,
    block by block, each block's pairs drawn as in :func:`random`. This was womlab's
    ``regional`` kind before regions were given clustering (:func:`regional`).

    References
    ----------
    Holland, P. W., Laskey, K. B. & Leinhardt, S. (1983). Stochastic blockmodels: first
    steps. Social Networks 5, 109–137.
    """
    region = balanced_regions(n, regions)
    sizes = np.bincount(region, minlength=regions)
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    probs = _block_probabilities(sizes, mean_degree, within_region_share)
    src, dst = [], []
    for a in range(regions):
        i, j = _pairs_within(int(sizes[a]), probs[a, a], rng)
        src.append(i + np.int32(starts[a]))
        dst.append(j + np.int32(starts[a]))
        for b in range(a + 1, regions):
            i, j = _pairs_between(int(sizes[a]), int(sizes[b]), probs[a, b], rng)
            src.append(i + np.int32(starts[a]))
            dst.append(j + np.int32(starts[b]))
    return from_edges(n, np.concatenate(src), np.concatenate(dst), region, "regional_blocks")


def networkx_regional_blocks(
    n: int, mean_degree: float, regions: int, within_region_share: float, rng: np.random.Generator
) -> nx.Graph:
    """The networkx form of :func:`regional_blocks` (``stochastic_block_model``), kept as the reference."""
    region = balanced_regions(n, regions)
    sizes = np.bincount(region, minlength=regions)
    probs = _block_probabilities(sizes, mean_degree, within_region_share)
    g = nx.Graph(nx.stochastic_block_model(sizes.tolist(), probs.tolist(), seed=rng, sparse=True))
    return _with_regions(g, region)


def scale_free(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> ReferralNetwork:
    """Barabási–Albert preferential attachment with m = mean_degree / 2, built straight into arrays.

    The process is the published one, in the form networkx uses: start from a star on
    m + 1 organisations (0 at the centre); each newcomer s = m + 1, …, n − 1 ties to m
    distinct organisations drawn from the repeated-nodes list (every organisation listed
    once per tie it has, so the draw is proportional to degree), drawing again while a
    draw repeats one already chosen; then the list gains the m targets and m copies of s.

    In arrays: the list's length before newcomer s is fixed (2m(s − m)), so every draw
    can be made at once as a uniform position in the list, and a position is resolved to
    an organisation by following where it points (a newcomer's own copies name it; a
    target slot names whatever that earlier draw resolved to), by pointer jumping. Each
    newcomer takes the first m distinct organisations of its own sequence of draws, so
    resolving and re-selecting until nothing changes reproduces the one-at-a-time
    process exactly (in distribution). The first newcomers, whose lists are short and
    draws repeat often, run one at a time.

    References
    ----------
    Barabási, A.-L. & Albert, R. (1999). Emergence of scaling in random networks.
    Science 286, 509–512.
    Batagelj, V. & Brandes, U. (2005). Efficient generation of large random networks.
    Physical Review E 71, 036113 (the list of repeated nodes as positions).
    """
    m = int(mean_degree) // 2
    if not 1 <= m < n:
        raise NetworkError(f"Barabási–Albert needs 1 <= m = mean_degree/2 < n, got m = {m}, n = {n}")
    # the star, then the first newcomers one at a time
    listed = [0] * m + list(range(1, m + 1))
    src = [0] * m
    dst = list(range(1, m + 1))
    head = min(n, m + 1 + 50 * m)
    for s in range(m + 1, head):
        chosen: list[int] = []
        while len(chosen) < m:
            x = listed[int(rng.integers(len(listed)))]
            if x not in chosen:
                chosen.append(x)
        src.extend([s] * m)
        dst.extend(chosen)
        listed.extend(chosen)
        listed.extend([s] * m)
    head_ties = len(src)
    rows = max(n - head, 0)
    total = head_ties + m * rows
    src_a = np.empty(total, dtype=np.int32)
    dst_a = np.empty(total, dtype=np.int32)
    src_a[:head_ties] = src
    dst_a[:head_ties] = dst
    if rows > 0:
        targets = _attach_in_arrays(np.asarray(listed, dtype=np.int32), head, rows, m, rng)
        src_a[head_ties:] = np.repeat(np.arange(head, n, dtype=np.int32), m)
        dst_a[head_ties:] = targets.ravel()
        del targets
    region = balanced_regions(n, regions, rng)
    return from_edges(n, src_a, dst_a, region, "scale_free")


def _draw_positions(rng: np.random.Generator, lengths: np.ndarray, width: int) -> np.ndarray:
    """floor(u · lengthᵣ) for a rows × width matrix of uniforms drawn row by row, a chunk of rows at a time."""
    rows = lengths.size
    out = np.empty((rows, width), dtype=np.int32 if lengths[-1] < np.iinfo(np.int32).max else np.int64)
    step = max(1, _CHUNK // width)
    for r0 in range(0, rows, step):
        r1 = min(rows, r0 + step)
        out[r0:r1] = np.floor(rng.random((r1 - r0, width)) * lengths[r0:r1, None])
    return out


@compiled
def _resolve(base: np.ndarray, draws: np.ndarray, targets: np.ndarray, first: int, m: int, start: int) -> int:
    """Each newcomer, in order from row ``start``, takes the first m distinct organisations
    its draws name; returns the first row whose draws name fewer than m, or −1."""
    l0 = base.size
    rows, width = draws.shape
    for r in range(start, rows):
        count = 0
        for c in range(width):
            pos = draws[r, c]
            if pos < l0:
                value = base[pos]
            else:
                t, o = divmod(pos - l0, 2 * m)
                value = targets[t, o] if o < m else first + t
            seen = False
            for q in range(count):
                if targets[r, q] == value:
                    seen = True
                    break
            if not seen:
                targets[r, count] = value
                count += 1
                if count == m:
                    break
        if count < m:
            return r
    return -1


def _attach_in_arrays(base: np.ndarray, first: int, rows: int, m: int, rng: np.random.Generator) -> np.ndarray:
    """Targets (rows × m, int32) of newcomers first, first + 1, … given the repeated-nodes list ``base``.

    Row r's list has length L₀ + 2m·r: ``base`` then, per earlier row t, m target slots and
    m copies of newcomer first + t. All draws are made first (m + 4 per row, as positions
    in each row's list); then, newcomer by newcomer, a position names ``base``, an
    earlier newcomer's target slot (already resolved) or that newcomer itself. A row whose
    draws name fewer than m distinct organisations gets m more draws, and so does every
    row (drawn after all the others), and resolving goes on from that row.
    """
    lengths = base.size + 2 * m * np.arange(rows, dtype=np.int64)
    draws = _draw_positions(rng, lengths, m + 4)
    targets = np.empty((rows, m), dtype=np.int32)
    short = _resolve(base, draws, targets, first, m, 0)
    while short >= 0:
        draws = np.concatenate([draws, _draw_positions(rng, lengths, m).astype(draws.dtype)], axis=1)
        short = _resolve(base, draws, targets, first, m, short)
    return targets


def networkx_scale_free(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """The networkx form of :func:`scale_free` (``barabasi_albert_graph``), kept as the reference."""
    g = nx.barabasi_albert_graph(n, int(mean_degree) // 2, seed=rng)
    return _with_regions(g, balanced_regions(n, regions, rng))
