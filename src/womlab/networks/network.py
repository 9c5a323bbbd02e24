"""The referral network as arrays: :class:`ReferralNetwork` (CSR adjacency and a region per
organisation), the form every engine reads, and :func:`from_edges`, which every array
builder ends with.
"""

from __future__ import annotations

from dataclasses import dataclass

import networkx as nx
import numpy as np
import scipy.sparse as sp

from womlab.errors import NetworkError

__all__ = ["ReferralNetwork", "from_edges", "balanced_regions"]


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

