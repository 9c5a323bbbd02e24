"""The referral network as arrays: :class:`ReferralNetwork` (CSR adjacency and a region per
organisation), the form every engine reads, and :func:`from_edges`, which every array
builder ends with.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

import networkx as nx
import numpy as np
import pandas as pd
import scipy.sparse as sp

from womlab.errors import NetworkError
from womlab.networks.kernels import csr_from_ties, first_in_rows, local_clustering

__all__ = ["ReferralNetwork", "from_edges", "balanced_regions", "ordered_ids", "region_codes"]


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
        Original organisation ids (edge lists, graph files, networkx graphs whose nodes are
        not 0..n−1); position i holds the id of organisation i, as given. None: the ids
        are the positions 0..n−1.
    region_names : numpy.ndarray, optional
        Original region values (text or numbers) when they were given: region code r
        stands for ``region_names[r]``. None: the codes are the regions.
    """

    n: int
    indptr: np.ndarray
    indices: np.ndarray
    region: np.ndarray
    kind: str
    complete: bool = False
    labels: np.ndarray | None = None
    region_names: np.ndarray | None = None

    @property
    def ties(self) -> int:
        """Number of undirected ties."""
        if self.complete:
            return self.n * (self.n - 1) // 2
        return int(self.indices.size // 2)

    @property
    def regions(self) -> int:
        return int(self.region.max()) + 1 if self.n else 0

    def ids(self) -> np.ndarray:
        """Organisation ids as given (``labels``), or the positions 0..n−1 when none were given."""
        return np.arange(self.n) if self.labels is None else self.labels

    def region_values(self) -> np.ndarray:
        """Each organisation's region as given (``region_names[region]``), or its code."""
        return self.region if self.region_names is None else self.region_names[self.region]

    def positions(self, ids: Iterable[Any], where: str = "ids") -> np.ndarray:
        """Positions (int32) of organisations given by their ids, in the order given.

        Ids are matched as text (``5`` and ``"5"`` name the same organisation, as in a CSV
        file); without labels the ids are the positions 0..n−1.

        Raises
        ------
        NetworkError
            Naming ``where``, the ids that are not in the network (up to five) and what is
            allowed.
        """
        wanted = [str(v).strip() for v in ids]
        known = pd.Index([str(v) for v in self.ids()])
        pos = known.get_indexer(wanted)
        missing = [w for w, p in zip(wanted, pos) if p < 0]
        if missing:
            shown = ", ".join(repr(m) for m in missing[:5]) + (
                f" and {len(missing) - 5} more" if len(missing) > 5 else ""
            )
            example = ", ".join(repr(str(v)) for v in self.ids()[:3])
            raise NetworkError(
                f"{where}: {len(missing)} id(s) not in the network: {shown}; allowed: the network's "
                f"{self.n} organisation ids (e.g. {example})"
            )
        return pos.astype(np.int32)

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

    def clustering(self) -> float:
        """Mean local clustering coefficient (Watts & Strogatz 1998), organisations of degree
        below 2 counting 0 as in ``networkx.average_clustering``; compiled on the CSR.

        Examples
        --------
        >>> import networkx as nx
        >>> round(ReferralNetwork.from_networkx(nx.karate_club_graph()).clustering(), 4)
        0.5706
        """
        if self.complete:
            return 1.0 if self.n > 2 else 0.0
        if self.n == 0:
            return 0.0
        return float(local_clustering(self.indptr, self.indices).mean())

    def to_networkx(self) -> nx.Graph:
        """A networkx graph on nodes 0..n−1 with a ``region`` attribute (the region as given)
        and, where ids were given, a ``label`` attribute holding each organisation's id."""
        if self.complete:
            g = nx.complete_graph(self.n)
        else:
            g = nx.Graph()
            g.add_nodes_from(range(self.n))
            rows = np.repeat(np.arange(self.n), np.diff(self.indptr))
            upper = rows < self.indices
            g.add_edges_from(zip(rows[upper].tolist(), self.indices[upper].tolist()))
        nx.set_node_attributes(g, dict(enumerate(self.region_values().tolist())), "region")
        if self.labels is not None:
            nx.set_node_attributes(g, dict(enumerate(self.labels.tolist())), "label")
        return g

    @classmethod
    def from_networkx(cls, graph: nx.Graph, kind: str = "custom", *, region: str = "region") -> ReferralNetwork:
        """A referral network from any networkx graph, keeping node ids and region values.

        Organisation i is node i when the nodes are exactly 0..n−1; otherwise the
        organisations follow the graph's node order (for a graph read from a file: the
        file's order) and the node ids are kept in ``labels``, as given (text stays text).
        The node attribute ``region`` (any values: numbers or text) is coded 0..R−1 in
        ascending order of the values (numeric order when all are whole numbers), the
        values kept in ``region_names``; without it everyone is in region 0. Ties are
        undirected: directions, self-loops and repeated ties (multigraphs) are dropped, with
        a warning that counts them.

        Raises
        ------
        NetworkError
            If some nodes carry the region attribute and others do not.

        Examples
        --------
        >>> import networkx as nx
        >>> g = nx.Graph([("Acme", "Bolt"), ("Bolt", "Crane")])
        >>> nx.set_node_attributes(g, {"Acme": "north", "Bolt": "north", "Crane": "south"}, "region")
        >>> net = ReferralNetwork.from_networkx(g)
        >>> net.labels.tolist(), net.region.tolist(), net.region_names.tolist()
        (['Acme', 'Bolt', 'Crane'], [0, 0, 1], ['north', 'south'])
        """
        nodes = list(graph.nodes)
        n = len(nodes)
        plain = all(isinstance(v, (int, np.integer)) and not isinstance(v, bool) for v in nodes) and set(nodes) == set(
            range(n)
        )
        if plain:
            position: dict[Any, int] | None = None
            labels = None
            ordered = range(n)
        else:
            position = {v: i for i, v in enumerate(nodes)}
            labels = _id_array(nodes)
            ordered = nodes
        edges = list(graph.edges())
        if position is None:
            pairs = np.array(edges, dtype=np.int64).reshape(-1, 2)
        else:
            pairs = np.array([(position[u], position[v]) for u, v in edges], dtype=np.int64).reshape(-1, 2)
        src, dst = _undirected(n, pairs[:, 0], pairs[:, 1], f"network {kind!r}")
        attrs = graph.nodes
        has = [region in attrs[v] for v in ordered]
        if any(has) and not all(has):
            lacking = [repr(v) for v, h in zip(ordered, has) if not h][:3]
            raise NetworkError(
                f"network {kind!r}: node attribute {region!r} is missing on {has.count(False)} of {n} nodes "
                f"(e.g. {', '.join(lacking)}); allowed: on every node or on none"
            )
        if any(has):
            codes, names = region_codes([attrs[v][region] for v in ordered])
        else:
            codes, names = np.zeros(n, dtype=np.int32), None
        return from_edges(n, src, dst, codes, kind, labels=labels, region_names=names)


def _id_array(values: list[Any]) -> np.ndarray:
    """Ids as an array: integers stay integers, anything else is kept as given (text as str)."""
    if all(isinstance(v, (int, np.integer)) and not isinstance(v, bool) for v in values):
        return np.asarray(values, dtype=np.int64)
    if all(isinstance(v, str) for v in values):
        return np.asarray(values, dtype=str)
    return np.asarray(values, dtype=object)


def ordered_ids(values: np.ndarray) -> np.ndarray:
    """Unique values, in numeric order when every value is a whole number, else text order."""
    unique = pd.unique(np.asarray(values))
    try:
        as_int = np.array([int(v) for v in unique])
        if not all(float(v) == int(v) for v in unique):
            raise ValueError
        return unique[np.argsort(as_int, kind="stable")]
    except (ValueError, TypeError):
        return unique[np.argsort(np.array([str(v) for v in unique]), kind="stable")]


def region_codes(values: Iterable[Any]) -> tuple[np.ndarray, np.ndarray]:
    """Region codes 0..R−1 in :func:`ordered_ids` order of the values, and the values by code."""
    values = np.asarray(list(values), dtype=object)
    names = ordered_ids(values)
    codes = pd.Index(names).get_indexer(values).astype(np.int32)
    kinds = {type(v) for v in names}
    if kinds <= {int, np.int64, np.int32}:
        names = names.astype(np.int64)
    elif kinds <= {str}:
        names = names.astype(str)
    return codes, names


def _undirected(n: int, a: np.ndarray, b: np.ndarray, what: str) -> tuple[np.ndarray, np.ndarray]:
    """Ties as each undirected pair once: self-loops and repeats dropped, with a warning that counts them."""
    loops = a == b
    a, b = a[~loops], b[~loops]
    first = first_in_rows(int(n), a, b) if a.size else np.zeros(0, dtype=bool)
    repeats = int(a.size - first.sum())
    if loops.any() or repeats:
        warnings.warn(f"{what}: dropped {int(loops.sum())} self-loop(s) and {repeats} duplicate tie(s)", stacklevel=3)
    return a[first], b[first]


def from_edges(
    n: int,
    source: np.ndarray,
    target: np.ndarray,
    region: np.ndarray,
    kind: str,
    labels: np.ndarray | None = None,
    region_names: np.ndarray | None = None,
) -> ReferralNetwork:
    """CSR network from undirected tie arrays (no self-loops or duplicates expected).

    Both directions of every tie are stored; each row's neighbours come out in
    ascending order. Compiled (:func:`womlab.networks.kernels.csr_from_ties`): the
    degrees are counted, each tie is written into its two rows, and each row is sorted
    in place, so the build holds nothing beyond the tie arrays it is given and the CSR
    it returns (int32 ties are the leanest input; any integer type is accepted).

    Examples
    --------
    >>> import numpy as np
    >>> net = from_edges(4, np.array([0, 1, 2]), np.array([1, 2, 3]), np.zeros(4), "path")
    >>> net.indices.tolist(), net.degree().tolist()
    ([1, 0, 2, 1, 3, 2], [1, 2, 2, 1])
    """
    source = np.asarray(source)
    target = np.asarray(target)
    if source.dtype.kind not in "iu":
        source = source.astype(np.int64)
    if target.dtype.kind not in "iu":
        target = target.astype(np.int64)
    indptr, indices = csr_from_ties(int(n), source, target)
    return ReferralNetwork(
        n=n,
        indptr=indptr,
        indices=indices,
        region=np.asarray(region, dtype=np.int32),
        kind=kind,
        labels=labels,
        region_names=region_names,
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
