"""Seeding strategies: who the first customers are.

A strategy is a plain function ``(network, budget, rng, *, options) -> node ids``
registered by name in ``STRATEGIES``; it returns ``budget`` distinct ids (int32), is
deterministic given ``rng``, and breaks ties at random (one uniform per organisation
from ``rng`` as the last sort key). Its keyword options, if any, come from the
scenario's ``[seeding]`` section through the adapter it was registered with, so the
function itself stays usable on any network without a scenario. An unknown name raises
an error that lists the known ones.

=============  ==============================================================================
``random``     ``budget`` organisations drawn uniformly without replacement
``hubs``       highest degree
``bridges``    highest betweenness (sampled betweenness above ``betweenness_exact_up_to``)
``pagerank``   highest PageRank (damping 0.85)
``coreness``   highest k-core number, ties by degree
``fringe``     lowest degree
``by_region``  budget split across regions in proportion to their size (largest
               remainders), hubs within each region
``spread``     hubs, skipping any organisation tied to one already chosen
``greedy``     greedy influence maximisation with lazy evaluation (CELF) on Monte Carlo
               runs of the scenario's own rule
``listed``     the organisations the user lists by id (``seeding.ids`` or ``ids_path``)
=============  ==============================================================================

Betweenness, PageRank and k-cores are computed on the network's CSR arrays by compiled
code (:mod:`womlab.seeding.centrality`), never through networkx objects, so every
strategy but ``greedy`` takes seconds at 10⁴–10⁵ organisations.

Adding a strategy: write the function, decorate it with ``@strategy("name")`` (with an
``options`` adapter if it reads fields of ``[seeding]``), and give it a test that checks
its definition on a graph whose answer is known.
"""

from __future__ import annotations

import heapq
import warnings
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from womlab.errors import ScenarioError
from womlab.networks import ReferralNetwork
from womlab.scenario import Scenario
from womlab.seeding import centrality
from womlab.seeding.registry import Simulator, default_simulator, strategy

__all__ = [
    "random",
    "hubs",
    "bridges",
    "pagerank",
    "coreness",
    "fringe",
    "by_region",
    "spread",
    "greedy",
    "listed",
    "region_quotas",
    "engine_objective",
]


# ----------------------------------------------------------------------------- helpers
def _ranked(budget: int, rng: np.random.Generator, *keys: np.ndarray) -> np.ndarray:
    """The first ``budget`` organisations sorted by ``keys`` (most important first, ascending),
    ties broken by one uniform per organisation from ``rng``."""
    n = keys[0].size
    tiebreak = rng.random(n)
    order = np.lexsort((tiebreak, *reversed(keys)))
    return order[:budget].astype(np.int32)


def _score(values: np.ndarray) -> np.ndarray:
    """Scores rounded to 12 decimals, so that floating-point noise between tied
    organisations (symmetric positions) does not pre-empt the random tie-break."""
    return np.round(np.asarray(values, dtype=np.float64), 12)


def _neighbours(network: ReferralNetwork, i: int) -> np.ndarray:
    return network.indices[network.indptr[i] : network.indptr[i + 1]]


# ----------------------------------------------------------------------------- strategies
@strategy("random")
def random(network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """``budget`` organisations drawn uniformly without replacement."""
    return np.sort(rng.choice(network.n, size=budget, replace=False)).astype(np.int32)


@strategy("hubs")
def hubs(network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """The ``budget`` organisations of highest degree (ties at random).

    References
    ----------
    Hinz, O., Skiera, B., Barrot, C. & Becker, J. U. (2011). Seeding strategies for viral
    marketing: an empirical comparison. Journal of Marketing 75(6), 55–71.
    """
    return _ranked(budget, rng, -network.degree())


@strategy("fringe")
def fringe(network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """The ``budget`` organisations of lowest degree (ties at random).

    References
    ----------
    Hinz, O. et al. (2011), Journal of Marketing 75(6), 55–71 ("fringes" seeding).
    """
    return _ranked(budget, rng, network.degree())


@strategy(
    "bridges",
    options=lambda s: {"exact_up_to": s.seeding.betweenness_exact_up_to, "sample": s.seeding.betweenness_sample},
)
def bridges(
    network: ReferralNetwork, budget: int, rng: np.random.Generator, *, exact_up_to: int = 3000, sample: int = 500
) -> np.ndarray:
    """The ``budget`` organisations of highest betweenness centrality (ties at random).

    Exact (Brandes' algorithm) up to ``exact_up_to`` organisations; above, estimated
    from ``sample`` source organisations drawn from ``rng`` without replacement (Brandes &
    Pich 2007), both by :func:`womlab.seeding.centrality.betweenness` on the CSR.

    References
    ----------
    Freeman, L. C. (1977). A set of measures of centrality based on betweenness.
    Sociometry 40, 35–41.
    Brandes, U. (2001). A faster algorithm for betweenness centrality. Journal of
    Mathematical Sociology 25, 163–177.
    Brandes, U. & Pich, C. (2007). Centrality estimation in large networks. International
    Journal of Bifurcation and Chaos 17, 2303–2318.
    """
    if network.complete:
        return _ranked(budget, rng, np.zeros(network.n))
    sources = None
    if network.n > exact_up_to:
        sources = rng.choice(network.n, size=min(int(sample), network.n), replace=False)
    values = centrality.betweenness(network, sources)
    return _ranked(budget, rng, -_score(values))


@strategy("pagerank")
def pagerank(network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """The ``budget`` organisations of highest PageRank (damping 0.85; ties at random).

    Power iteration on the CSR (:func:`womlab.seeding.centrality.pagerank`), the same
    iteration and tolerance (1e-10 per organisation) as ``networkx.pagerank``.

    References
    ----------
    Brin, S. & Page, L. (1998). The anatomy of a large-scale hypertextual web search
    engine. Computer Networks and ISDN Systems 30, 107–117.
    """
    if network.complete or network.ties == 0:
        return _ranked(budget, rng, np.zeros(network.n))
    values = centrality.pagerank(network, alpha=0.85, tol=1e-10)
    return _ranked(budget, rng, -_score(values))


@strategy("coreness")
def coreness(network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """The ``budget`` organisations of highest k-core number, ties by degree, then at random.

    References
    ----------
    Seidman, S. B. (1983). Network structure and minimum degree. Social Networks 5, 269–287.
    Kitsak, M. et al. (2010). Identification of influential spreaders in complex networks.
    Nature Physics 6, 888–893.
    """
    degree = network.degree()
    core = centrality.core_numbers(network)  # compiled on the CSR (Batagelj & Zaversnik 2003)
    return _ranked(budget, rng, -core, -degree)


def region_quotas(region: np.ndarray, budget: int, rng: np.random.Generator) -> np.ndarray:
    """Seeds per region in proportion to region sizes, by largest remainders (Hamilton).

    Region r gets ⌊b·nᵣ/N⌋ seeds, and the b − Σ⌊·⌋ seeds left over go one each to the
    regions with the largest fractional parts b·nᵣ/N − ⌊b·nᵣ/N⌋ (ties at random). No
    region gets more seeds than it has organisations.

    References
    ----------
    Balinski, M. L. & Young, H. P. (1982). Fair Representation. Yale University Press
    (Hamilton's method of largest remainders).
    """
    sizes = np.bincount(np.asarray(region), minlength=int(np.max(region)) + 1 if len(region) else 0)
    n = int(sizes.sum())
    exact = budget * sizes / n
    quota = np.floor(exact).astype(np.int64)
    left = budget - int(quota.sum())
    frac = exact - quota
    order = np.lexsort((rng.random(sizes.size), -frac))
    quota[order[:left]] += 1
    return quota


@strategy("by_region")
def by_region(network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """Budget split across regions in proportion to their size, hubs within each region.

    The split is :func:`region_quotas`; within region r the nᵣ seeds are its
    organisations of highest degree (ties at random).
    """
    quota = region_quotas(network.region, budget, rng)
    degree = network.degree()
    chosen = []
    for r, k in enumerate(quota):
        if k == 0:
            continue
        members = np.flatnonzero(network.region == r)
        chosen.append(members[_ranked(int(k), rng, -degree[members])])
    return np.concatenate(chosen).astype(np.int32) if chosen else np.zeros(0, dtype=np.int32)


@strategy("spread")
def spread(network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """Hubs, no two seeds adjacent: highest degree first, skipping any organisation tied
    to one already chosen.

    If the network has fewer than ``budget`` organisations that can be pairwise non-adjacent
    along that order (a dense network or a large budget), the rest of the budget goes to
    the next hubs and a warning says how many seeds are adjacent to another.
    """
    order = _ranked(network.n, rng, -network.degree())
    blocked = np.zeros(network.n, dtype=bool)
    chosen: list[int] = []
    for i in order:
        if len(chosen) == budget:
            break
        if blocked[i]:
            continue
        chosen.append(int(i))
        if network.complete:
            blocked[:] = True
        else:
            blocked[_neighbours(network, int(i))] = True
        blocked[i] = True
    if len(chosen) < budget:
        taken = np.zeros(network.n, dtype=bool)
        taken[chosen] = True
        extra = [int(i) for i in order if not taken[i]][: budget - len(chosen)]
        warnings.warn(
            f"seeding strategy 'spread': only {len(chosen)} of {budget} seeds can be pairwise non-adjacent "
            f"on this network; the other {len(extra)} are the next hubs",
            stacklevel=2,
        )
        chosen.extend(extra)
    return np.asarray(chosen, dtype=np.int32)


def _listed_options(s: Scenario) -> dict[str, Any]:
    where = "seeding.ids" if s.seeding.ids is not None else f"seeding.ids_path {s.seeding.ids_path!r}"
    return {"ids": s.seeding.listed_ids(), "where": where}


@strategy("listed", options=_listed_options)
def listed(
    network: ReferralNetwork, budget: int, rng: np.random.Generator, *, ids: Sequence[Any] = (), where: str = "ids"
) -> np.ndarray:
    """The organisations listed by id, as given in the network's file (``network.labels``),
    or by position 0..N−1 for a generated network; matched as text.

    ``rng`` is not used: the seeds are the user's. In a scenario: ``seeding.strategy =
    "listed"`` with ``ids = [...]`` or ``ids_path = "seeds.csv"`` (column ``id``).

    Raises
    ------
    NetworkError
        Naming ``where``, the ids not in the network and what is allowed.
    ScenarioError
        If the number of ids differs from the budget.

    Examples
    --------
    >>> import networkx as nx, numpy as np
    >>> net = ReferralNetwork.from_networkx(nx.Graph([("acme", "bolt"), ("bolt", "crane")]))
    >>> listed(net, 2, np.random.default_rng(0), ids=["crane", "acme"]).tolist()
    [2, 0]
    """
    seeds = network.positions(ids, where=where)
    if seeds.size != budget:
        raise ScenarioError(
            f"{where} lists {seeds.size} organisations but the seeding budget is {budget}; give the same number"
        )
    return seeds


def engine_objective(
    scenario: Scenario,
    network: ReferralNetwork,
    runs: int,
    rng: np.random.Generator,
    simulate: Simulator | None = None,
) -> Callable[[np.ndarray], float]:
    """σ̂(S): total customers at the horizon over ``runs`` Monte Carlo runs of ``simulate``
    (default: the registered engine, the array engine) from seeds S, each run on its own
    dynamics stream drawn once from ``rng``.

    Every evaluation reuses the same ``runs`` streams (common random numbers), so σ̂ is
    a fixed function of the seed set and greedy compares sets on equal terms. Totals are
    whole numbers, so marginal gains are exact.
    """
    simulate = default_simulator() if simulate is None else simulate
    seqs = np.random.SeedSequence(int(rng.integers(2**63))).spawn(runs)

    def sigma(seeds: np.ndarray) -> float:
        seeds = np.asarray(seeds, dtype=np.int32)
        return float(sum(int(simulate(scenario, network, seeds, np.random.default_rng(s)).customers[-1]) for s in seqs))

    return sigma


def _greedy_options(s: Scenario) -> dict[str, Any]:
    return {"scenario": s, "runs": s.seeding.greedy_runs, "candidates": s.seeding.greedy_candidates}


@strategy("greedy", options=_greedy_options, simulates=True)
def greedy(
    network: ReferralNetwork,
    budget: int,
    rng: np.random.Generator,
    *,
    scenario: Scenario | None = None,
    runs: int = 20,
    candidates: int = 100,
    objective: Callable[[np.ndarray], float] | None = None,
    lazy: bool = True,
    simulate: Simulator | None = None,
) -> np.ndarray:
    """Greedy influence maximisation: add, ``budget`` times, the organisation with the
    largest marginal gain in expected customers at the horizon.

    The expectation is estimated by :func:`engine_objective` (``runs`` Monte Carlo runs of
    the scenario's own rule on fixed streams) unless ``objective`` is given. With
    ``lazy=True`` (CELF) a candidate's gain is recomputed only when it reaches the top of
    the queue with a gain computed for an older seed set; for a submodular objective
    stale gains are upper bounds, so CELF picks exactly the set plain greedy picks
    (``lazy=False``), usually with far fewer evaluations. For a monotone submodular
    objective the greedy set reaches at least 1 − 1/e of the best set's value.

    Parameters
    ----------
    scenario : Scenario
        Supplies the rule and horizon of the Monte Carlo runs (required without ``objective``).
    runs : int
        Monte Carlo runs per evaluation.
    candidates : int
        Only the ``candidates`` highest-degree organisations are considered (ties at
        random); 0 considers every organisation. Greedy costs about
        ``candidates × runs`` engine runs for the first seed, so it is for modest N.
    objective : callable, optional
        σ(seeds) → value, replacing the Monte Carlo estimate.
    lazy : bool
        CELF lazy evaluation (default) or plain greedy.
    simulate : callable, optional
        The engine of the Monte Carlo runs, ``(scenario, network, initial, rng) -> run``;
        given by the caller (:func:`womlab.seeding.choose_seeds` passes its own), else
        the registered default (the array engine).

    References
    ----------
    Kempe, D., Kleinberg, J. & Tardos, É. (2003). Maximizing the spread of influence
    through a social network. Proc. KDD 2003, 137–146.
    Leskovec, J., Krause, A., Guestrin, C., Faloutsos, C., VanBriesen, J. & Glance, N.
    (2007). Cost-effective outbreak detection in networks. Proc. KDD 2007, 420–429.
    Nemhauser, G. L., Wolsey, L. A. & Fisher, M. L. (1978). An analysis of approximations
    for maximizing submodular set functions I. Mathematical Programming 14, 265–294.
    """
    if budget == 0:
        return np.zeros(0, dtype=np.int32)
    pool_size = network.n if candidates <= 0 else min(int(candidates), network.n)
    if pool_size < budget:
        raise ScenarioError(
            f"seeding.greedy_candidates = {candidates} is smaller than the budget {budget}; "
            "allowed: 0 (every organisation) or at least the budget"
        )
    pool = _ranked(pool_size, rng, -network.degree())
    if objective is None:
        if scenario is None:
            raise ScenarioError("seeding strategy 'greedy' needs a scenario (its rule) or an objective")
        objective = engine_objective(scenario, network, runs, rng, simulate)
    # tie-break key per candidate, fixed for the whole search: equal gains go to the lower key
    key = {int(v): float(x) for v, x in zip(pool, rng.random(pool.size))}
    chosen: list[int] = []
    base = objective(np.zeros(0, dtype=np.int32))

    def gain(v: int) -> float:
        return objective(np.asarray([*chosen, v], dtype=np.int32)) - base

    if not lazy:
        remaining = [int(v) for v in pool]
        for _ in range(budget):
            best = min(remaining, key=lambda v: (-gain(v), key[v]))
            chosen.append(best)
            remaining.remove(best)
            base = objective(np.asarray(chosen, dtype=np.int32))
        return np.asarray(chosen, dtype=np.int32)

    heap = [(-gain(int(v)), key[int(v)], int(v), 0) for v in pool]
    heapq.heapify(heap)
    while len(chosen) < budget:
        neg, k, v, computed_for = heapq.heappop(heap)
        if computed_for == len(chosen):
            chosen.append(v)
            base -= neg  # base + gain
            continue
        heapq.heappush(heap, (-gain(v), k, v, len(chosen)))
    return np.asarray(chosen, dtype=np.int32)
