"""Centralities computed on the network's own CSR arrays, compiled (numba), no networkx objects.

* :func:`pagerank` — power iteration, the same iteration and stopping rule as
  ``networkx.pagerank`` (damping, uniform teleport, organisations without ties spread
  their weight uniformly; stop when the L1 change is below N·tol);
* :func:`betweenness` — Brandes' accumulation over breadth-first searches from every
  organisation, or from a sample of them (Brandes & Pich 2007), scaled as
  ``networkx.betweenness_centrality(normalized=True)``;
* :func:`core_numbers` — k-core numbers by the bucket algorithm of Batagelj & Zaversnik,
  O(ties).

The tests hold each to networkx on the karate club, the Florentine families and random
graphs. Compiled once per machine (``cache=True``).
"""

from __future__ import annotations

import numpy as np

from womlab.networks import ReferralNetwork
from womlab.rules.compiled import compiled

__all__ = ["pagerank", "betweenness", "core_numbers"]


@compiled
def _pagerank(indptr: np.ndarray, indices: np.ndarray, alpha: float, tol: float, max_iter: int) -> np.ndarray:
    n = indptr.size - 1
    x = np.full(n, 1.0 / n)
    share = np.empty(n)
    new = np.empty(n)
    for _ in range(max_iter):
        dangling = 0.0
        for i in range(n):
            d = indptr[i + 1] - indptr[i]
            if d == 0:
                dangling += x[i]
                share[i] = 0.0
            else:
                share[i] = x[i] / d
        base = alpha * dangling / n + (1.0 - alpha) / n
        err = 0.0
        for i in range(n):
            s = 0.0
            for p in range(indptr[i], indptr[i + 1]):
                s += share[indices[p]]
            new[i] = alpha * s + base
            err += abs(new[i] - x[i])
        x, new = new, x
        if err < n * tol:
            break
    return x


def pagerank(network: ReferralNetwork, alpha: float = 0.85, tol: float = 1e-10, max_iter: int = 100) -> np.ndarray:
    """PageRank of each organisation by power iteration on the CSR.

    Same iteration as ``networkx.pagerank`` with its default uniform personalisation:
    xᵢ ← α Σⱼ∈N(i) xⱼ/dⱼ + α·(weight of organisations without ties)/N + (1 − α)/N, from the
    uniform start, until the L1 change is below N·``tol`` or ``max_iter`` iterations.

    References
    ----------
    Brin, S. & Page, L. (1998). The anatomy of a large-scale hypertextual web search
    engine. Computer Networks and ISDN Systems 30, 107–117.

    Examples
    --------
    >>> import networkx as nx
    >>> net = ReferralNetwork.from_networkx(nx.star_graph(3))
    >>> pagerank(net).round(4).tolist()
    [0.4797, 0.1734, 0.1734, 0.1734]
    """
    if network.n == 0:
        return np.zeros(0)
    if network.complete:
        return np.full(network.n, 1.0 / network.n)
    return _pagerank(network.indptr, network.indices, float(alpha), float(tol), int(max_iter))


@compiled
def _brandes(indptr: np.ndarray, indices: np.ndarray, sources: np.ndarray) -> np.ndarray:
    n = indptr.size - 1
    bc = np.zeros(n)
    sigma = np.zeros(n)
    dist = np.full(n, -1, dtype=np.int64)
    delta = np.zeros(n)
    order = np.empty(n, dtype=np.int64)
    for s in sources:
        # breadth-first search from s, counting shortest paths
        for i in range(n):
            sigma[i] = 0.0
            dist[i] = -1
            delta[i] = 0.0
        sigma[s] = 1.0
        dist[s] = 0
        order[0] = s
        head, tail = 0, 1
        while head < tail:
            v = order[head]
            head += 1
            for p in range(indptr[v], indptr[v + 1]):
                w = indices[p]
                if dist[w] < 0:
                    dist[w] = dist[v] + 1
                    order[tail] = w
                    tail += 1
                if dist[w] == dist[v] + 1:
                    sigma[w] += sigma[v]
        # dependencies, farthest first; predecessors of w are its neighbours one step nearer
        for q in range(tail - 1, 0, -1):
            w = order[q]
            coeff = (1.0 + delta[w]) / sigma[w]
            for p in range(indptr[w], indptr[w + 1]):
                v = indices[p]
                if dist[v] == dist[w] - 1:
                    delta[v] += sigma[v] * coeff
            bc[w] += delta[w]
    return bc


def betweenness(network: ReferralNetwork, sources: np.ndarray | None = None) -> np.ndarray:
    """Betweenness centrality of each organisation, exact or from a sample of source organisations.

    Brandes' algorithm: one breadth-first search per source, then dependencies
    accumulated from the farthest organisations back. With ``sources`` None every
    organisation is a source (exact); otherwise only those given, and the sums are scaled
    by N/k as an estimate of the exact value (Brandes & Pich 2007). Normalised as
    ``networkx.betweenness_centrality(normalized=True)``: by 1/((N − 1)(N − 2)).

    References
    ----------
    Freeman, L. C. (1977). A set of measures of centrality based on betweenness.
    Sociometry 40, 35–41.
    Brandes, U. (2001). A faster algorithm for betweenness centrality. Journal of
    Mathematical Sociology 25, 163–177.
    Brandes, U. & Pich, C. (2007). Centrality estimation in large networks. International
    Journal of Bifurcation and Chaos 17, 2303–2318.

    Examples
    --------
    >>> import networkx as nx
    >>> net = ReferralNetwork.from_networkx(nx.path_graph(3))
    >>> betweenness(net).tolist()
    [0.0, 1.0, 0.0]
    """
    n = network.n
    if network.complete or n <= 2:
        return np.zeros(n)
    chosen = np.arange(n, dtype=np.int64) if sources is None else np.asarray(sources, dtype=np.int64)
    bc = _brandes(network.indptr, network.indices, chosen)
    scale = 1.0 / ((n - 1) * (n - 2))
    if sources is not None and chosen.size:
        scale *= n / chosen.size
    return bc * scale


@compiled
def _cores(indptr: np.ndarray, indices: np.ndarray) -> np.ndarray:
    n = indptr.size - 1
    deg = np.empty(n, dtype=np.int64)
    top = 0
    for i in range(n):
        deg[i] = indptr[i + 1] - indptr[i]
        top = max(top, deg[i])
    # organisations sorted by degree in buckets; pos[v] its place, start[d] the first of degree d
    start = np.zeros(top + 2, dtype=np.int64)
    for i in range(n):
        start[deg[i] + 1] += 1
    for d in range(top + 1):
        start[d + 1] += start[d]
    fill = start.copy()
    vert = np.empty(n, dtype=np.int64)
    pos = np.empty(n, dtype=np.int64)
    for v in range(n):
        pos[v] = fill[deg[v]]
        vert[pos[v]] = v
        fill[deg[v]] += 1
    for q in range(n):
        v = vert[q]
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            if deg[u] > deg[v]:
                du = deg[u]
                pu = pos[u]
                pw = start[du]
                w = vert[pw]
                if u != w:  # swap u to the front of its bucket
                    pos[u], pos[w] = pw, pu
                    vert[pu], vert[pw] = w, u
                start[du] += 1
                deg[u] -= 1
    return deg


def core_numbers(network: ReferralNetwork) -> np.ndarray:
    """k-core number of each organisation: the largest k such that it lies in a subgraph
    where everyone has at least k ties (int64).

    References
    ----------
    Seidman, S. B. (1983). Network structure and minimum degree. Social Networks 5, 269–287.
    Batagelj, V. & Zaversnik, M. (2003). An O(m) algorithm for cores decomposition of
    networks. arXiv:cs/0310049.

    Examples
    --------
    >>> import networkx as nx
    >>> net = ReferralNetwork.from_networkx(nx.barbell_graph(4, 1))
    >>> core_numbers(net).tolist()
    [3, 3, 3, 3, 2, 3, 3, 3, 3]
    """
    if network.complete:
        return np.full(network.n, max(network.n - 1, 0), dtype=np.int64)
    return _cores(network.indptr, network.indices)
