"""Compiled loops over tie arrays and CSR rows (numba), shared by the builders.

Each loop here is one pass over arrays the builder already holds; none allocates more
than the arrays it returns. Compiled once per machine (``cache=True``), so a new process
loads them from the cache instead of compiling again.

* :func:`csr_from_ties` — CSR rows from undirected ties: count, scatter, sort each row in
  place (rows are short; no global sort and no int64 keys);
* :func:`lattice_ties` — the ties of ring lattices, one ring per block of consecutive
  organisations (the whole network, or each region), in the order the builders draw on;
* :func:`lattice_tie_index` — which lattice tie, if any, joins two organisations, the
  constant-time membership test that replaces searching sorted keys;
* :func:`first_in_rows` — which ties repeat an earlier one, without sorting the ties;
* :func:`local_clustering` — each organisation's clustering coefficient, by merging
  sorted neighbour rows.
"""

from __future__ import annotations

import numpy as np

from womlab.rules.compiled import compiled

__all__ = ["csr_from_ties", "lattice_ties", "lattice_tie_index", "first_in_rows", "local_clustering"]


@compiled
def _sort_rows(indptr: np.ndarray, indices: np.ndarray) -> None:
    """Sort each row of a CSR in place (insertion sort for short rows: stable and allocation-free)."""
    n = indptr.size - 1
    for i in range(n):
        a, b = indptr[i], indptr[i + 1]
        if b - a > 32:
            indices[a:b] = np.sort(indices[a:b])
            continue
        for p in range(a + 1, b):
            x = indices[p]
            q = p - 1
            while q >= a and indices[q] > x:
                indices[q + 1] = indices[q]
                q -= 1
            indices[q + 1] = x


@compiled
def _fill(n: int, source: np.ndarray, target: np.ndarray, indptr: np.ndarray, indices: np.ndarray) -> None:
    pos = np.empty(n, dtype=np.int64)
    for i in range(n):
        pos[i] = indptr[i]
    for e in range(source.size):
        s, t = source[e], target[e]
        indices[pos[s]] = t
        pos[s] += 1
        indices[pos[t]] = s
        pos[t] += 1


@compiled
def _counts(n: int, source: np.ndarray, target: np.ndarray) -> np.ndarray:
    counts = np.zeros(n + 1, dtype=np.int64)
    for e in range(source.size):
        counts[source[e] + 1] += 1
        counts[target[e] + 1] += 1
    for i in range(n):
        counts[i + 1] += counts[i]
    return counts


def csr_from_ties(n: int, source: np.ndarray, target: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """CSR (``indptr``, ``indices``) storing each undirected tie in both rows, rows ascending.

    ``indices`` is int32; ``indptr`` int32 while the stored entries fit, else int64.
    Memory: the two returned arrays and one int64 per organisation.

    Examples
    --------
    >>> import numpy as np
    >>> indptr, indices = csr_from_ties(3, np.array([0, 1]), np.array([2, 0]))
    >>> indptr.tolist(), indices.tolist()
    ([0, 2, 3, 4], [1, 2, 0, 0])
    """
    counts = _counts(int(n), source, target)
    entries = int(counts[-1])
    idx_type = np.int32 if entries < np.iinfo(np.int32).max else np.int64
    indptr = counts.astype(idx_type)
    del counts
    indices = np.empty(entries, dtype=np.int32)
    _fill(int(n), source, target, indptr, indices)
    _sort_rows(indptr, indices)
    return indptr, indices


@compiled
def lattice_ties(starts: np.ndarray, sizes: np.ndarray, half: int) -> tuple[np.ndarray, np.ndarray]:
    """Ties of a ring lattice on each block: i – start + (i − start + d) mod size, d = 1..half.

    Block-major, then distance-major, then organisation order (the order of the
    published model's one uniform per tie, block by block). int32 arrays of
    Σ size·half ties.
    """
    total = 0
    for b in range(starts.size):
        total += sizes[b] * half
    src = np.empty(total, dtype=np.int32)
    dst = np.empty(total, dtype=np.int32)
    e = 0
    for b in range(starts.size):
        s0, m = starts[b], sizes[b]
        for d in range(1, half + 1):
            for i in range(m):
                src[e] = s0 + i
                j = i + d
                if j >= m:
                    j -= m
                dst[e] = s0 + j
                e += 1
    return src, dst


@compiled
def lattice_tie_index(
    a: np.ndarray,
    b: np.ndarray,
    block: np.ndarray,
    starts: np.ndarray,
    sizes: np.ndarray,
    offsets: np.ndarray,
    half: int,
) -> np.ndarray:
    """Index into :func:`lattice_ties`'s arrays of the lattice tie joining aₖ and bₖ, −1 if none.

    ``block`` is each organisation's block and ``offsets`` the first tie of each block;
    ties only join organisations of one block.
    """
    out = np.full(a.size, -1, dtype=np.int64)
    for k in range(a.size):
        x, y = a[k], b[k]
        r = block[x]
        if block[y] != r or x == y:
            continue
        m, s0 = sizes[r], starts[r]
        d = (y - x) % m
        if 1 <= d <= half:
            out[k] = offsets[r] + (d - 1) * m + (x - s0)
            continue
        d = (x - y) % m
        if 1 <= d <= half:
            out[k] = offsets[r] + (d - 1) * m + (y - s0)
    return out


@compiled
def _first_by_hashing(n: int, a: np.ndarray, b: np.ndarray, slots: int) -> np.ndarray:
    """First occurrences by an open-addressing table of pairs seen (``slots`` a power of two)."""
    m = a.size
    table = np.full(slots, -1, dtype=np.int64)
    mask = slots - 1
    first = np.ones(m, dtype=np.bool_)
    for k in range(m):
        lo, hi = min(a[k], b[k]), max(a[k], b[k])
        key = np.int64(lo) * n + hi
        h = (key * np.int64(-7046029254386353131)) >> 20 & mask  # multiplicative hashing
        while True:
            if table[h] == -1:
                table[h] = key
                break
            if table[h] == key:
                first[k] = False
                break
            h = (h + 1) & mask
    return first


def first_in_rows(n: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """True where the undirected pair (aₖ, bₖ) appears for the first time, in array order.

    Few pairs among many organisations (the moved ties of a rewiring): a table of the
    pairs seen, one probe per pair. Otherwise each pair is filed under its smaller end
    in arrival order and each row sorted stably by the larger end, so the first of equal
    pairs is the earliest. Either way memory is O(pairs + organisations) and there is no
    global sort.
    """
    m = int(a.size)
    if 4 * m < n:
        slots = 1 << max(4, int(2 * m).bit_length())
        return _first_by_hashing(int(n), a, b, slots)
    return _first_by_rows(int(n), a, b)


@compiled
def _first_by_rows(n: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    m = a.size
    counts = np.zeros(n + 1, dtype=np.int64)
    for k in range(m):
        lo = min(a[k], b[k])
        counts[lo + 1] += 1
    for i in range(n):
        counts[i + 1] += counts[i]
    pos = counts[:-1].copy()
    order = np.empty(m, dtype=np.int64)
    for k in range(m):
        lo = min(a[k], b[k])
        order[pos[lo]] = k
        pos[lo] += 1
    first = np.ones(m, dtype=np.bool_)
    for i in range(n):
        lo_, hi_ = counts[i], counts[i + 1]
        # stable insertion sort of the row by the larger end (rows are short)
        for p in range(lo_ + 1, hi_):
            k = order[p]
            key = max(a[k], b[k])
            q = p - 1
            while q >= lo_ and max(a[order[q]], b[order[q]]) > key:
                order[q + 1] = order[q]
                q -= 1
            order[q + 1] = k
        for p in range(lo_ + 1, hi_):
            if max(a[order[p]], b[order[p]]) == max(a[order[p - 1]], b[order[p - 1]]):
                first[order[p]] = False
    return first


@compiled
def local_clustering(indptr: np.ndarray, indices: np.ndarray) -> np.ndarray:
    """Each organisation's local clustering coefficient: triangles through it over the
    pairs of its neighbours (0 below degree 2), on a simple graph with sorted rows.

    Each triangle i < j < l is found once by merging the rows of i and j above j.
    """
    n = indptr.size - 1
    tri = np.zeros(n, dtype=np.int64)
    for i in range(n):
        for p in range(indptr[i], indptr[i + 1]):
            j = indices[p]
            if j <= i:
                continue
            # common neighbours l > j of i and j
            x, xe = p + 1, indptr[i + 1]
            y, ye = indptr[j], indptr[j + 1]
            while y < ye and indices[y] <= j:
                y += 1
            while x < xe and y < ye:
                u, v = indices[x], indices[y]
                if u == v:
                    tri[i] += 1
                    tri[j] += 1
                    tri[u] += 1
                    x += 1
                    y += 1
                elif u < v:
                    x += 1
                else:
                    y += 1
    out = np.zeros(n, dtype=np.float64)
    for i in range(n):
        d = indptr[i + 1] - indptr[i]
        if d >= 2:
            out[i] = 2.0 * tri[i] / (d * (d - 1.0))
    return out
