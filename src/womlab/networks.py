"""Referral networks: who knows whom, and in which region each organisation sits.

Each kind has a plain builder registered by name. Builders take the structure first,
then a ``numpy.random.Generator`` (always seeded: womlab never uses a global random
state) and return a :class:`networkx.Graph` on nodes 0..n−1 with a ``region`` node
attribute, or a :class:`ReferralNetwork` directly. :func:`build_network` turns a
scenario's ``[network]`` section into a :class:`ReferralNetwork`: compressed sparse rows
(int32 ids) plus a region per organisation, the form every engine reads.

Regions. ``regional`` networks are made of their regions (a stochastic block model).
For other kinds, regions are balanced: contiguous arcs on the ``ring`` and
``small_world`` lattices (geography along the ring), a random balanced assignment
elsewhere (so that, say, the oldest hubs of a ``scale_free`` network do not all land in
region 0). Edge lists take regions from their node file, else everyone is in region 0.

Adding a kind: write ``def my_kind(n, ..., rng) -> nx.Graph | ReferralNetwork``, add an
adapter from the scenario in ``_FROM_SPEC`` and the name to
``womlab.scenario.NETWORK_KINDS``.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import networkx as nx
import numpy as np
import pandas as pd
import scipy.sparse as sp

from .errors import NetworkError
from .scenario import Market, NetworkSpec, Scenario

__all__ = [
    "ReferralNetwork",
    "build_network",
    "complete",
    "ring",
    "regular",
    "random",
    "small_world",
    "regional",
    "scale_free",
    "read_edgelist",
    "balanced_regions",
    "networkx_random",
    "networkx_regional",
]


@dataclass(frozen=True, eq=False)
class ReferralNetwork:
    """A referral network as arrays: CSR adjacency (undirected, both directions stored).

    Attributes
    ----------
    n : int
        Number of organisations.
    indptr, indices : numpy.ndarray
        CSR structure: the neighbours of i are ``indices[indptr[i]:indptr[i+1]]``
        (int32 ids; indptr int32 while the tie count fits, else int64). Empty for the
        complete network, which is never materialised.
    region : numpy.ndarray
        Region of each organisation, int32 codes 0..regions−1.
    kind : str
        The network kind it was built as.
    complete : bool
        Every organisation's neighbourhood is all the others; engines compute from totals.
    labels : numpy.ndarray, optional
        Original organisation ids (edge lists); position i holds the id of organisation i.
    """

    n: int
    indptr: np.ndarray
    indices: np.ndarray
    region: np.ndarray
    kind: str
    complete: bool = False
    labels: np.ndarray | None = None

    @property
    def ties(self) -> int:
        """Number of undirected ties."""
        if self.complete:
            return self.n * (self.n - 1) // 2
        return int(self.indices.size // 2)

    @property
    def regions(self) -> int:
        return int(self.region.max()) + 1 if self.n else 0

    def degree(self) -> np.ndarray:
        """Degree of each organisation (int64)."""
        if self.complete:
            return np.full(self.n, self.n - 1, dtype=np.int64)
        return np.diff(self.indptr).astype(np.int64)

    def matrix(self, dtype: type = np.float32) -> sp.csr_array:
        """Adjacency as a scipy CSR array (not available for the complete network)."""
        if self.complete:
            raise NetworkError("the complete network is never materialised as a matrix; engines use totals")
        data = np.ones(self.indices.size, dtype=dtype)
        return sp.csr_array((data, self.indices, self.indptr), shape=(self.n, self.n))

    def to_networkx(self) -> nx.Graph:
        """A networkx graph with a ``region`` attribute (and ``label`` for edge lists)."""
        if self.complete:
            g = nx.complete_graph(self.n)
        else:
            g = nx.Graph()
            g.add_nodes_from(range(self.n))
            rows = np.repeat(np.arange(self.n), np.diff(self.indptr))
            upper = rows < self.indices
            g.add_edges_from(zip(rows[upper].tolist(), self.indices[upper].tolist()))
        nx.set_node_attributes(g, dict(enumerate(self.region.tolist())), "region")
        if self.labels is not None:
            nx.set_node_attributes(g, dict(enumerate(self.labels.tolist())), "label")
        return g

    @classmethod
    def from_networkx(cls, graph: nx.Graph, kind: str = "custom") -> ReferralNetwork:
        """From a graph on nodes 0..n−1 with an optional integer ``region`` attribute."""
        n = graph.number_of_nodes()
        if set(graph.nodes) != set(range(n)):
            graph = nx.convert_node_labels_to_integers(graph, ordering="sorted")
        edges = np.array([(u, v) for u, v in graph.edges() if u != v], dtype=np.int64).reshape(-1, 2)
        region = np.array([graph.nodes[i].get("region", 0) for i in range(n)], dtype=np.int32)
        return from_edges(n, edges[:, 0], edges[:, 1], region, kind)


def from_edges(
    n: int,
    source: np.ndarray,
    target: np.ndarray,
    region: np.ndarray,
    kind: str,
    labels: np.ndarray | None = None,
) -> ReferralNetwork:
    """CSR network from undirected tie arrays (no self-loops or duplicates expected)."""
    source = np.asarray(source, dtype=np.int64)
    target = np.asarray(target, dtype=np.int64)
    rows = np.concatenate([source, target])
    cols = np.concatenate([target, source])
    order = np.lexsort((cols, rows))
    rows, cols = rows[order], cols[order]
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


# ----------------------------------------------------------------------------- regions
def balanced_regions(n: int, regions: int, rng: np.random.Generator | None = None) -> np.ndarray:
    """Region codes for n organisations, sizes differing by at most one.

    Contiguous blocks (0, 0, …, 1, 1, …) when ``rng`` is None, else a random permutation
    of them.
    """
    codes = (np.arange(n, dtype=np.int64) * regions // n).astype(np.int32)
    return codes if rng is None else rng.permutation(codes)


def _with_regions(graph: nx.Graph, region: np.ndarray) -> nx.Graph:
    nx.set_node_attributes(graph, dict(enumerate(region.tolist())), "region")
    return graph


# ----------------------------------------------------------------------------- builders
def complete(n: int, *, regions: int = 1, rng: np.random.Generator | None = None) -> ReferralNetwork:
    """Everyone knows everyone; stored without ties (engines use totals)."""
    empty = np.zeros(0, dtype=np.int32)
    region = balanced_regions(n, regions, rng)
    return ReferralNetwork(n=n, indptr=np.zeros(n + 1, dtype=np.int32), indices=empty, region=region,
                           kind="complete", complete=True)


def ring(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """Ring lattice: each organisation tied to its ``mean_degree`` nearest neighbours."""
    return _with_regions(nx.watts_strogatz_graph(n, int(mean_degree), 0.0, seed=rng), balanced_regions(n, regions))


def regular(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """Random regular graph: every organisation has exactly ``mean_degree`` ties."""
    g = nx.random_regular_graph(int(mean_degree), n, seed=rng)
    return _with_regions(g, balanced_regions(n, regions, rng))


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


def small_world(n: int, mean_degree: int, rewiring: float, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """Watts–Strogatz small world: ring lattice with each tie rewired with probability ``rewiring``.

    References
    ----------
    Watts, D. J. & Strogatz, S. H. (1998). Collective dynamics of 'small-world' networks.
    Nature 393, 440–442.
    """
    g = nx.watts_strogatz_graph(n, int(mean_degree), rewiring, seed=rng)
    return _with_regions(g, balanced_regions(n, regions))


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
    return from_edges(n, np.concatenate(src), np.concatenate(dst), region, "regional")


def networkx_regional(
    n: int, mean_degree: float, regions: int, within_region_share: float, rng: np.random.Generator
) -> nx.Graph:
    """The networkx form of :func:`regional` (``stochastic_block_model``), kept as the reference."""
    region = balanced_regions(n, regions)
    sizes = np.bincount(region, minlength=regions)
    probs = _block_probabilities(sizes, mean_degree, within_region_share)
    g = nx.Graph(nx.stochastic_block_model(sizes.tolist(), probs.tolist(), seed=rng, sparse=True))
    return _with_regions(g, region)


def scale_free(n: int, mean_degree: int, rng: np.random.Generator, *, regions: int = 1) -> nx.Graph:
    """Barabási–Albert preferential attachment with m = mean_degree / 2 ties per newcomer.

    References
    ----------
    Barabási, A.-L. & Albert, R. (1999). Emergence of scaling in random networks.
    Science 286, 509–512.
    """
    g = nx.barabasi_albert_graph(n, int(mean_degree) // 2, seed=rng)
    return _with_regions(g, balanced_regions(n, regions, rng))


# ----------------------------------------------------------------------------- edge lists
def _read_table(path: str | Path, columns: tuple[str, ...], what: str) -> pd.DataFrame:
    try:
        table = pd.read_csv(path, dtype=str, skipinitialspace=True)
    except (OSError, pd.errors.ParserError, pd.errors.EmptyDataError) as exc:
        raise NetworkError(f"network.{what}: cannot read {str(path)!r}: {exc}") from None
    table.columns = [c.strip() for c in table.columns]
    missing = [c for c in columns if c not in table.columns]
    if missing:
        raise NetworkError(
            f"network.{what}: {str(path)!r} must have columns {', '.join(columns)}; "
            f"missing {', '.join(missing)} (found {', '.join(table.columns)})"
        )
    if table[list(columns)].isna().any().any():
        raise NetworkError(f"network.{what}: {str(path)!r} has empty cells in {', '.join(columns)}")
    return table


def _sorted_ids(values: np.ndarray) -> np.ndarray:
    """Unique ids, in numeric order when every id is a whole number, else text order."""
    unique = pd.unique(values)
    try:
        as_int = np.array([int(v) for v in unique])
        return unique[np.argsort(as_int, kind="stable")]
    except ValueError:
        return np.sort(unique)


def read_edgelist(path: str | Path, nodes_path: str | Path | None = None) -> ReferralNetwork:
    """Read a CSV edge list (``source,target``) and an optional node file (``id,region``).

    Organisation ids are mapped to 0..N−1 (node-file order when a node file is given,
    else ascending id); the original ids are kept in ``labels``. Self-loops and duplicate
    ties are dropped with a warning that counts them. Regions are coded 0..R−1 in
    ascending order of the region values; without a node file everyone is in region 0.

    Raises
    ------
    NetworkError
        If a file cannot be read, lacks a column, or a tie names an id the node file lacks.
    """
    ties = _read_table(path, ("source", "target"), "path")
    src = ties["source"].str.strip().to_numpy()
    dst = ties["target"].str.strip().to_numpy()
    if nodes_path is not None:
        nodes = _read_table(nodes_path, ("id", "region"), "nodes_path")
        ids = nodes["id"].str.strip().to_numpy()
        if len(pd.unique(ids)) != len(ids):
            raise NetworkError(f"network.nodes_path: {str(nodes_path)!r} lists some id more than once")
        region_values = nodes["region"].str.strip().to_numpy()
    else:
        ids = _sorted_ids(np.concatenate([src, dst]))
        region_values = None
    position = pd.Index(ids)
    s = position.get_indexer(src)
    t = position.get_indexer(dst)
    if (s < 0).any() or (t < 0).any():
        bad = np.concatenate([src[s < 0], dst[t < 0]])[:5]
        raise NetworkError(
            f"network.path: ties name ids missing from network.nodes_path, e.g. {', '.join(map(str, bad))}"
        )
    loops = s == t
    lo, hi = np.minimum(s, t)[~loops], np.maximum(s, t)[~loops]
    pairs = np.unique(np.stack([lo, hi], axis=1), axis=0) if lo.size else np.zeros((0, 2), dtype=np.int64)
    duplicates = int(lo.size - pairs.shape[0])
    if loops.any() or duplicates:
        warnings.warn(
            f"{path}: dropped {int(loops.sum())} self-loop(s) and {duplicates} duplicate tie(s)",
            stacklevel=2,
        )
    n = len(ids)
    if region_values is None:
        region = np.zeros(n, dtype=np.int32)
    else:
        region = pd.Index(_sorted_ids(region_values)).get_indexer(region_values).astype(np.int32)
    return from_edges(n, pairs[:, 0], pairs[:, 1], region, "edgelist", labels=np.asarray(ids))


def count_edgelist_organisations(path: str | Path, nodes_path: str | Path | None = None) -> int:
    """Number of organisations an edge list (and node file) defines."""
    if nodes_path is not None:
        return len(_read_table(nodes_path, ("id", "region"), "nodes_path"))
    ties = _read_table(path, ("source", "target"), "path")
    return len(pd.unique(np.concatenate([ties["source"].str.strip().to_numpy(), ties["target"].str.strip().to_numpy()])))


# ----------------------------------------------------------------------------- dispatch
Builder = Callable[[NetworkSpec, Market, np.random.Generator], "nx.Graph | ReferralNetwork"]

_FROM_SPEC: dict[str, Builder] = {
    "complete": lambda s, m, rng: complete(m.organisations, regions=m.regions, rng=rng),
    "ring": lambda s, m, rng: ring(m.organisations, int(s.mean_degree), rng, regions=m.regions),
    "regular": lambda s, m, rng: regular(m.organisations, int(s.mean_degree), rng, regions=m.regions),
    "random": lambda s, m, rng: random(m.organisations, s.mean_degree, rng, regions=m.regions),
    "small_world": lambda s, m, rng: small_world(m.organisations, int(s.mean_degree), s.rewiring, rng, regions=m.regions),
    "regional": lambda s, m, rng: regional(m.organisations, s.mean_degree, m.regions, s.within_region_share, rng),
    "scale_free": lambda s, m, rng: scale_free(m.organisations, int(s.mean_degree), rng, regions=m.regions),
    "edgelist": lambda s, m, rng: read_edgelist(s.path, s.nodes_path),
}


def build_network(scenario: Scenario, rng: np.random.Generator) -> ReferralNetwork:
    """Build the scenario's referral network from the network stream ``rng``.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario, build_network
    >>> s = Scenario.from_dict({"market": {"organisations": 100}, "network": {"kind": "ring", "mean_degree": 4}})
    >>> build_network(s, np.random.default_rng(1)).ties
    200
    """
    kind = scenario.network.kind
    try:
        builder = _FROM_SPEC[kind]
    except KeyError:
        raise NetworkError(f"unknown network kind {kind!r}; known: {', '.join(sorted(_FROM_SPEC))}") from None
    built = builder(scenario.network, scenario.market, rng)
    if isinstance(built, ReferralNetwork):
        return built
    return ReferralNetwork.from_networkx(built, kind)
