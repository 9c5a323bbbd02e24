"""The array builders as they were before the compiled CSR build (womlab 0.1.0), kept as an oracle.

The compiled builders draw the same random numbers in the same order, so on the same seed
they must build exactly the same network: ``test_builders_unchanged.py`` holds them to
this copy. Not used by the package.
"""

from __future__ import annotations

import networkx as nx
import numpy as np

from womlab.errors import NetworkError
from womlab.networks.network import ReferralNetwork, balanced_regions


def from_edges(
    n: int,
    source: np.ndarray,
    target: np.ndarray,
    region: np.ndarray,
    kind: str,
    labels: np.ndarray | None = None,
) -> ReferralNetwork:
    """CSR network from undirected tie arrays (no self-loops or duplicates expected).

    Both directions of every tie are stored; each row's neighbours come out in
    ascending order. One sort of the int64 keys ``row·n + column`` (O(E log E), a
    third of a second for 10⁷ directed ties) orders rows and columns together.
    """
    source = np.asarray(source, dtype=np.int64)
    target = np.asarray(target, dtype=np.int64)
    keys = np.concatenate([source * n + target, target * n + source])
    keys.sort()
    rows, cols = np.divmod(keys, n)
    del keys
    counts = np.bincount(rows, minlength=n)
    idx_type = np.int32 if rows.size < np.iinfo(np.int32).max else np.int64
    indptr = np.zeros(n + 1, dtype=idx_type)
    np.cumsum(counts, out=indptr[1:])
    return ReferralNetwork(
        n=n,
        indptr=indptr,
        indices=cols.astype(np.int32),
        region=np.asarray(region, dtype=np.int32),
        kind=kind,
        labels=labels,
    )


def _with_regions(graph: nx.Graph, region: np.ndarray) -> nx.Graph:
    nx.set_node_attributes(graph, dict(enumerate(region.tolist())), "region")
    return graph


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

    The number of ties is drawn from Binomial(n(n − 1)/2, p) and that many distinct pairs
    are drawn uniformly, which is exactly G(n, p) (given its tie count, G(n, p) is
    uniform over graphs with that many ties).

    References
    ----------
    Erdős, P. & Rényi, A. (1959). On random graphs I. Publicationes Mathematicae 6, 290–297.
    Gilbert, E. N. (1959). Random graphs. Annals of Mathematical Statistics 30, 1141–1144.
    """
    src, dst = _pairs_within(n, mean_degree / (n - 1), rng)
    return from_edges(n, src, dst, balanced_regions(n, regions, rng), "random")


def networkx_random(n: int, mean_degree: float, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """The networkx form of :func:`random` (``fast_gnp_random_graph``), kept as the reference."""
    g = nx.fast_gnp_random_graph(n, mean_degree / (n - 1), seed=rng)
    return _with_regions(g, balanced_regions(n, regions, rng))


def _pairs_within(n: int, p: float, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Each of the n(n − 1)/2 pairs of 0..n−1 independently with probability p."""
    pairs = n * (n - 1) // 2
    m = int(rng.binomial(pairs, min(p, 1.0))) if pairs else 0
    k = rng.choice(pairs, size=m, replace=False) if m else np.zeros(0, dtype=np.int64)
    # k = j(j − 1)/2 + i with 0 <= i < j: invert the triangular numbering
    j = np.floor((1 + np.sqrt(1 + 8 * k.astype(np.float64))) / 2).astype(np.int64)
    j -= (j * (j - 1) // 2) > k
    j += ((j + 1) * j // 2) <= k
    i = k - j * (j - 1) // 2
    return i, j


def _pairs_between(na: int, nb: int, p: float, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Each of the na·nb pairs (a, b) independently with probability p; offsets 0."""
    pairs = na * nb
    m = int(rng.binomial(pairs, min(p, 1.0))) if pairs else 0
    k = rng.choice(pairs, size=m, replace=False) if m else np.zeros(0, dtype=np.int64)
    return k // nb, k % nb


def _lattice(n: int, k: int) -> tuple[np.ndarray, np.ndarray]:
    """Ties of the ring lattice: i – (i + d) mod n for d = 1..k/2, distance-major order."""
    half = int(k) // 2
    src = np.tile(np.arange(n, dtype=np.int64), half)
    dst = (src + np.repeat(np.arange(1, half + 1, dtype=np.int64), n)) % n
    return src, dst


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


def _pair_keys(a: np.ndarray, b: np.ndarray, n: int) -> np.ndarray:
    """One int64 key per undirected pair: min·n + max."""
    return np.minimum(a, b) * n + np.maximum(a, b)


def _first_occurrence(keys: np.ndarray) -> np.ndarray:
    """True where a key appears for the first time (in array order)."""
    first = np.zeros(keys.size, dtype=bool)
    if keys.size:
        _, idx = np.unique(keys, return_index=True)
        first[idx] = True
    return first


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
    src, dst = _lattice(n, mean_degree)
    moved = np.flatnonzero(rng.random(src.size) < rewiring)
    if moved.size:
        kept = np.ones(src.size, dtype=bool)
        kept[moved] = False
        kept_keys = np.sort(_pair_keys(src[kept], dst[kept], n))
        near = src[moved]
        far = rng.integers(0, n, size=moved.size)
        todo = np.arange(moved.size)
        for _ in range(100):
            keys = _pair_keys(near, far, n)
            pos = np.searchsorted(kept_keys, keys).clip(max=max(kept_keys.size - 1, 0))
            clash = (near == far) | (~_first_occurrence(keys))
            if kept_keys.size:
                clash |= kept_keys[pos] == keys
            todo = np.flatnonzero(clash)
            if todo.size == 0:
                break
            far[todo] = rng.integers(0, n, size=todo.size)
        else:
            far[todo] = dst[moved][todo]  # skip these rewirings
            keys = _pair_keys(near, far, n)
            first = _first_occurrence(np.concatenate([kept_keys, keys]))[kept_keys.size :]
            far[~first] = dst[moved][~first]
        dst = dst.copy()
        dst[moved] = far
    return from_edges(n, src, dst, balanced_regions(n, regions), "small_world")


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
        pairs = np.stack([i, j], axis=1).astype(np.int64)
    else:
        for _ in range(100):  # a fresh pairing when repair gets stuck (only for k close to n)
            pairs = rng.permutation(np.repeat(np.arange(n, dtype=np.int64), k)).reshape(-1, 2)
            keys = _pair_keys(pairs[:, 0], pairs[:, 1], n)
            bad = (pairs[:, 0] == pairs[:, 1]) | ~_first_occurrence(keys)
            if not bad.any() or _repair_pairs(pairs, bad, keys, n, rng):
                break
        else:
            raise NetworkError(f"could not build a simple {k}-regular graph on {n} organisations in 100 tries")
    region = balanced_regions(n, regions, rng)
    return from_edges(n, pairs[:, 0], pairs[:, 1], region, "regular")


def _repair_pairs(pairs: np.ndarray, bad: np.ndarray, keys: np.ndarray, n: int, rng: np.random.Generator) -> bool:
    """Switch each bad pair with random good pairs until the pairing is simple (in place).

    Returns False if the switches get stuck (the caller then starts a fresh pairing).
    """
    static = np.sort(keys[~bad])
    removed: set[int] = set()
    added: set[int] = set()
    bad_now = set(np.flatnonzero(bad).tolist())

    def exists(key: int) -> bool:
        if key in added:
            return True
        if key in removed:
            return False
        pos = int(np.searchsorted(static, key))
        return pos < static.size and int(static[pos]) == key

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
    n: int, mean_degree: float, regions: int, within_region_share: float, rng: np.random.Generator
) -> ReferralNetwork:
    """Stochastic block model: balanced regions, a share of each organisation's expected ties inside its region.

    With region sizes nᵣ, the within-region tie probability is w·k / (nᵣ − 1) and the
    between-region one (1 − w)·k / (n − nᵣ), so each organisation expects k ties of which
    a share w are inside its region. Built straight into arrays, block by block, each
    block exactly as :func:`random` (a binomial tie count, then distinct pairs).

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
        src.append(i + starts[a])
        dst.append(j + starts[a])
        for b in range(a + 1, regions):
            i, j = _pairs_between(int(sizes[a]), int(sizes[b]), probs[a, b], rng)
            src.append(i + starts[a])
            dst.append(j + starts[b])
    return from_edges(n, np.concatenate(src), np.concatenate(dst), region, "regional_blocks")


def networkx_regional(
    n: int, mean_degree: float, regions: int, within_region_share: float, rng: np.random.Generator
) -> nx.Graph:
    """The networkx form of :func:`regional` (``stochastic_block_model``), kept as the reference."""
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
    base = np.asarray(listed, dtype=np.int64)
    src_a = np.asarray(src, dtype=np.int64)
    dst_a = np.asarray(dst, dtype=np.int64)
    rows = n - head
    if rows > 0:
        targets = _attach_in_arrays(base, head, rows, m, rng)
        src_a = np.concatenate([src_a, np.repeat(np.arange(head, n, dtype=np.int64), m)])
        dst_a = np.concatenate([dst_a, targets.ravel()])
    region = balanced_regions(n, regions, rng)
    return from_edges(n, src_a, dst_a, region, "scale_free")


def _attach_in_arrays(base: np.ndarray, first: int, rows: int, m: int, rng: np.random.Generator) -> np.ndarray:
    """Targets (rows × m) of newcomers first, first + 1, … given the repeated-nodes list ``base``.

    Row r's list has length L₀ + 2m·r: ``base`` then, per earlier row t, m target slots and
    m copies of newcomer first + t.
    """
    l0 = base.size
    lengths = l0 + 2 * m * np.arange(rows, dtype=np.int64)
    width = m + 4
    draws = np.floor(rng.random((rows, width)) * lengths[:, None]).astype(np.int64)

    select = np.broadcast_to(np.arange(m), (rows, m)).copy()

    def code(pos: np.ndarray) -> np.ndarray:
        # ≥ 0: a target slot t·m + o; < 0: a resolved organisation −(id + 1)
        q = pos - l0
        t, o = np.divmod(q, 2 * m)
        out = np.where(o < m, t * m + o, -(first + t + 1))
        in_base = pos < l0
        out[in_base] = -(base[pos[in_base]] + 1)
        return out

    coded = code(draws.ravel()).reshape(rows, -1)  # fixed while the draws are
    for _ in range(1000):
        pointer = np.take_along_axis(coded, select, axis=1).ravel()
        while True:  # pointer jumping: each round halves every remaining chain
            live = np.flatnonzero(pointer >= 0)
            if live.size == 0:
                break
            pointer[live] = pointer[pointer[live]]
        resolved = -pointer - 1  # organisation in each target slot
        value = np.where(coded >= 0, resolved[np.maximum(coded, 0)], -coded - 1)
        # first m distinct values in each row's sequence of draws
        order = np.argsort(value, axis=1, kind="stable")
        sorted_values = np.take_along_axis(value, order, axis=1)
        repeat = np.zeros_like(value, dtype=bool)
        dup_sorted = np.zeros_like(repeat)
        dup_sorted[:, 1:] = sorted_values[:, 1:] == sorted_values[:, :-1]
        np.put_along_axis(repeat, order, dup_sorted, axis=1)
        fresh = ~repeat
        rank = np.cumsum(fresh, axis=1)
        short = np.flatnonzero(rank[:, -1] < m)
        if short.size:  # some row ran out of draws: give every row m more, then resolve again
            more = np.floor(rng.random((rows, m)) * lengths[:, None]).astype(np.int64)
            draws = np.concatenate([draws, more], axis=1)
            coded = np.concatenate([coded, code(more.ravel()).reshape(rows, m)], axis=1)
            continue
        new_select = np.argsort(~(fresh & (rank <= m)), axis=1, kind="stable")[:, :m]
        if np.array_equal(new_select, select):
            return np.take_along_axis(value, select, axis=1)
        select = new_select
    raise RuntimeError("preferential attachment did not settle")  # pragma: no cover - cannot happen in practice


def networkx_scale_free(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """The networkx form of :func:`scale_free` (``barabasi_albert_graph``), kept as the reference."""
    g = nx.barabasi_albert_graph(n, int(mean_degree) // 2, seed=rng)
    return _with_regions(g, balanced_regions(n, regions, rng))
