"""The event engine: exact adoption times on a continuous clock, no time step.

For the rules whose word-of-mouth influence is a constant rate per satisfied-customer
neighbour (``share`` and ``count``, :data:`womlab.scenario.CONTINUOUS_RULES`), a
potential customer i adopts at rate λᵢ(t) = p + Σⱼ wⱼᵢ, the sum over its neighbours j
that are satisfied customers at time t, with wⱼᵢ = q·τⱼ/Dᵢ (``share``) or q·τⱼ
(``count``); τⱼ are j's talkers and Dᵢ the talkers of all of i's neighbours. By the
memorylessness of competing exponential clocks this continuous-time process has
exactly the law of first-passage times

    tᵢ = min(Eᵢ, min over satisfied neighbours j of tⱼ + Dⱼᵢ),
    Eᵢ ~ Exp(p),  Dⱼᵢ ~ Exp(wⱼᵢ),  tᵢ = 0 for the initial customers,

since satisfaction and talkers do not depend on timing and can be drawn up front. That
is a shortest-path problem from a virtual source tied to every organisation i by an arc
of length Eᵢ (0 to the initial customers) and to nothing else: Dijkstra's algorithm,
compiled (numba) over the CSR — an indexed binary heap for arrivals by word of mouth, the
external arrivals merged in from one sort — O(E log N), stopped at the horizon; each tie's rate is :func:`womlab.rules.wom_part` of the tie's two ends, computed
as the tie is reached. It gives the same arrival times and predecessors as
:func:`scipy.sparse.csgraph.dijkstra` on the same graph (a test holds it to that). The
predecessor of each organisation on its path is who persuaded it: the virtual source
means external influence (referrer −1), a neighbour means that neighbour.

Random draws, from the dynamics stream, in this order: talkers (Poisson only) and
satisfaction (as the array engine), one Exp(1) per organisation (Eᵢ = that / p — the
array engine's resistance, so the two engines share it), then one Exp(1) per stored
direction of every tie in CSR order (Dⱼᵢ = that / wⱼᵢ; drawn for every tie whatever its
ends, so the stream's layout does not depend on who is satisfied).

The complete network is never materialised: there every potential customer i has
the same integrated hazard Hᵢ(t) = p·t + cᵢ·Y(t), with Y(t) = ∫₀ᵗ X(s) ds, X the
talkers of all satisfied customers, and cᵢ = q/(Σ τ − τᵢ) (``share``) or q (``count``).
So organisations with equal cᵢ (one group per distinct talker count) adopt in the order
of their Exp(1) resistances, and the next adoption is the earliest of each group's
next: an exact event-driven simulation on totals (compiled), O(N·G) for G groups, with attribution
drawn afterwards from the running totals (external with probability p/λᵢ, else a
satisfied customer with probability ∝ its talkers). Its draws: talkers, satisfaction,
one Exp(1) resistance and one uniform (attribution) per organisation.

References
----------
Hammersley, J. M. & Welsh, D. J. A. (1965). First-passage percolation, subadditive
processes, stochastic networks, and generalized renewal theory. In Bernoulli–Bayes–Laplace
Anniversary Volume, 61–110.
Dijkstra, E. W. (1959). A note on two problems in connexion with graphs. Numerische
Mathematik 1, 269–271.
Gillespie, D. T. (1977). Exact stochastic simulation of coupled chemical reactions.
Journal of Physical Chemistry 81, 2340–2361.
"""

from __future__ import annotations

import numpy as np

from womlab import rules
from womlab.dynamics.run_result import RunResult
from womlab.errors import ScenarioError
from womlab.networks import ReferralNetwork
from womlab.rules import compiled, wom_part
from womlab.rules.adoption import SHARE
from womlab.scenario import CONTINUOUS_RULES, Scenario

__all__ = ["run_events", "tie_rates"]


def tie_rates(rule: str, network: ReferralNetwork, tau: np.ndarray, talking: np.ndarray, q: float) -> np.ndarray:
    """Rate wⱼᵢ each stored tie j → i carries (CSR order, row j), 0 where j does not talk.

    ``tau`` are everyone's talkers, ``talking`` the talkers of those who would talk once
    customers (τⱼ if satisfied, else 0). ``share``: q·τⱼ/Dᵢ with Dᵢ the talkers of all
    of i's neighbours; ``count``: q·τⱼ. It is :func:`womlab.rules.word_of_mouth_part`
    split per neighbour.
    """
    rows = np.repeat(np.arange(network.n, dtype=np.int32), np.diff(network.indptr))
    total = network.matrix(np.float64) @ tau.astype(np.float64) if rule == "share" else None
    if rule == "share":
        return rules.word_of_mouth_part(rule, talking[rows].astype(np.float64), total[network.indices], q)
    return rules.word_of_mouth_part(rule, talking[rows].astype(np.float64), None, q)


def run_events(
    scenario: Scenario, network: ReferralNetwork, initial: np.ndarray, rng: np.random.Generator
) -> RunResult:
    """One run on the continuous clock: exact adoption times by first passage.

    Parameters
    ----------
    scenario : Scenario
        Supplies the rule (``share`` or ``count``), p, q, satisfaction, talkers and the
        horizon ``run.periods`` (``time_step`` and ``step_probability`` play no part).
    network : ReferralNetwork
        The referral network (the complete network is run from totals).
    initial : numpy.ndarray
        Ids of the customers at time 0.
    rng : numpy.random.Generator
        The dynamics stream.

    Returns
    -------
    RunResult
        With ``adoption_time`` (NaN = not by the horizon), ``adoption_period =
        ceil(adoption_time)``, and each word-of-mouth adopter's referrer.

    Raises
    ------
    ScenarioError
        If the rule cannot run on the continuous clock.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario, build_network
    >>> from womlab.dynamics.event_engine import run_events
    >>> s = Scenario.from_dict({"market": {"organisations": 500, "initial_customers": 5},
    ...                         "network": {"kind": "small_world", "mean_degree": 6}, "run": {"clock": "continuous", "periods": 20}})
    >>> r = run_events(s, build_network(s, np.random.default_rng(1)), np.arange(5), np.random.default_rng(2))
    >>> len(r.curve())
    21
    """
    adoption, run = scenario.adoption, scenario.run
    if adoption.rule not in CONTINUOUS_RULES:
        raise ScenarioError(
            f'adoption.rule = "{adoption.rule}" cannot run on run.clock = "continuous" '
            f"(rules {', '.join(CONTINUOUS_RULES)} only)"
        )
    n, horizon = network.n, float(run.periods)
    tau = rules.draw_talkers(adoption.talkers_per_customer, n, rng)
    would_be_satisfied = rules.draw_satisfied(adoption.satisfied_share, n, rng)
    talking = np.where(would_be_satisfied, tau, np.float32(0))
    initial = np.asarray(initial, dtype=np.int32)
    if network.complete:
        time, referrer = _complete(scenario, tau, would_be_satisfied, talking, initial, rng)
    else:
        time, referrer = _first_passage(scenario, network, tau, talking, initial, rng)
    adopted = time <= horizon
    time = np.where(adopted, time, np.nan)
    adoption_period = np.where(adopted, np.ceil(np.nan_to_num(time)), -1).astype(np.int32)
    referrer = np.where(adopted, referrer, -1).astype(np.int32)
    return RunResult(
        periods=run.periods,
        adoption_period=adoption_period,
        referrer=referrer,
        satisfied=adopted & would_be_satisfied,
        region=network.region,
        initial=initial,
        engine="events",
        adoption_time=time,
        report_every=run.report_every,
    )


@compiled
def _sift_up(heap, position, key, h):  # noqa: ANN001, ANN202
    node = heap[h]
    while h > 0:
        parent = (h - 1) // 2
        if key[heap[parent]] <= key[node]:
            break
        heap[h] = heap[parent]
        position[heap[h]] = h
        h = parent
    heap[h] = node
    position[node] = h


@compiled
def _sift_down(heap, position, key, h, size):  # noqa: ANN001, ANN202
    node = heap[h]
    while True:
        child = 2 * h + 1
        if child >= size:
            break
        if child + 1 < size and key[heap[child + 1]] < key[heap[child]]:
            child += 1
        if key[node] <= key[heap[child]]:
            break
        heap[h] = heap[child]
        position[heap[h]] = h
        h = child
    heap[h] = node
    position[node] = h


@compiled
def _first_passage_kernel(
    indptr,
    indices,
    rule,
    q,
    tau,
    talking,
    external_time,
    external_order,
    start,
    delay,  # noqa: ANN001, ANN202
    horizon,
):
    """Dijkstra's algorithm from the virtual source over the CSR, stopped at the horizon.

    The source's arcs (external influence: ``external_time``, visited in ``external_order``)
    are merged in as a sorted list rather than pushed onto the heap; the indexed binary heap
    holds only the arrivals by word of mouth (and the initial customers at 0). Returns arrival
    times (inf beyond the horizon) and predecessors (−1: the source)."""
    n = tau.size
    total = np.zeros(n)  # Dᵢ (share only)
    if rule == SHARE:
        for i in range(n):
            s = 0.0
            for k in range(indptr[i], indptr[i + 1]):
                s += tau[indices[k]]
            total[i] = s
    dist = np.full(n, np.inf)
    pred = np.full(n, -1, dtype=np.int64)
    heap = np.empty(n, dtype=np.int64)
    position = np.full(n, -1, dtype=np.int64)  # −1: not in the heap, −2: settled
    size = 0
    if external_time.size:
        for i in range(n):
            dist[i] = external_time[i]
    for i in range(n):
        if start[i]:
            dist[i] = 0.0
            heap[size] = i
            position[i] = size
            size += 1
    e = 0
    m = external_order.size
    while True:
        # the next external arrival still standing: not settled, not beaten by word of mouth
        while e < m:
            j = external_order[e]
            if position[j] == -1 and dist[j] == external_time[j]:
                break
            e += 1
        from_heap = size > 0 and (e >= m or dist[heap[0]] <= external_time[external_order[e]])
        if from_heap:
            i = heap[0]
        elif e < m:
            i = external_order[e]
            e += 1
        else:
            break
        d = dist[i]
        if d > horizon:
            break
        if from_heap:
            size -= 1
            if size > 0:
                heap[0] = heap[size]
                position[heap[0]] = 0
                _sift_down(heap, position, dist, 0, size)
        position[i] = -2  # settled
        if talking[i] <= 0:
            continue
        for k in range(indptr[i], indptr[i + 1]):
            j = indices[k]
            if position[j] == -2:
                continue
            w = wom_part(rule, np.float64(talking[i]), total[j], 0.0, q)  # wⱼᵢ: i's part of j's rate
            if w <= 0:
                continue
            arrival = d + delay[k] / w
            if arrival < dist[j]:
                dist[j] = arrival
                pred[j] = i
                if position[j] == -1:
                    heap[size] = j
                    position[j] = size
                    size += 1
                _sift_up(heap, position, dist, position[j])
    for i in range(n):
        if position[i] != -2:
            dist[i] = np.inf
            pred[i] = -1
    return dist, pred


def _first_passage(
    scenario: Scenario,
    network: ReferralNetwork,
    tau: np.ndarray,
    talking: np.ndarray,
    initial: np.ndarray,
    rng: np.random.Generator,
) -> tuple[np.ndarray, np.ndarray]:
    """Shortest paths from a virtual source: arrival times and predecessors (compiled Dijkstra)."""
    adoption = scenario.adoption
    n = network.n
    external = rng.standard_exponential(n)
    delay = rng.standard_exponential(network.indices.size)
    start = np.zeros(n, dtype=bool)
    start[initial] = True
    p = float(adoption.external)
    if p > 0:
        external_time = external / p  # Eᵢ: the source's arc to each organisation
        external_order = np.flatnonzero(~start)
        external_order = external_order[np.argsort(external_time[external_order], kind="stable")]
    else:
        external_time, external_order = np.zeros(0), np.zeros(0, dtype=np.int64)
    dist, pred = _first_passage_kernel(
        network.indptr,
        network.indices,
        rules.rule_code(adoption.rule),
        float(adoption.word_of_mouth),
        np.ascontiguousarray(tau, dtype=np.float32),
        np.ascontiguousarray(talking, dtype=np.float32),
        external_time,
        external_order.astype(np.int64),
        start,
        delay,
        float(scenario.run.periods),
    )
    return dist, pred


@compiled
def _complete_kernel(values, bounds, ids, resistance, talking, x, p, horizon, k, order, x_at, time):  # noqa: ANN001, ANN202
    """The event loop on totals: the next adoption is the earliest of each group's next."""
    groups = values.size
    heads = bounds[:groups].copy()
    t = 0.0
    y = 0.0
    while True:
        best = -1
        best_dt = np.inf
        for g in range(groups):
            h = heads[g]
            if h < bounds[g + 1]:
                rate = p + values[g] * x
                if rate > 0:
                    dt = max(resistance[ids[h]] - p * t - values[g] * y, 0.0) / rate
                    if dt < best_dt:
                        best = g
                        best_dt = dt
        if best < 0 or t + best_dt > horizon:
            break
        t += best_dt
        y += x * best_dt
        i = ids[heads[best]]
        heads[best] += 1
        time[i] = t
        order[k] = i
        x_at[k] = x
        k += 1
        x += talking[i]
    return k


def _complete(
    scenario: Scenario,
    tau: np.ndarray,
    would_be_satisfied: np.ndarray,
    talking: np.ndarray,
    initial: np.ndarray,
    rng: np.random.Generator,
) -> tuple[np.ndarray, np.ndarray]:
    """Exact event-driven run on the complete network from totals (see the module notes)."""
    adoption = scenario.adoption
    n, p, q, horizon = tau.size, adoption.external, adoption.word_of_mouth, float(scenario.run.periods)
    resistance = rng.standard_exponential(n)
    u_cause = rng.random(n)
    time = np.full(n, np.inf)
    time[initial] = 0.0
    potential = np.ones(n, dtype=bool)
    potential[initial] = False
    all_talkers = float(tau.sum(dtype=np.float64))
    # c_i per organisation: the weight of Y(t) in its hazard
    if adoption.rule == "share":
        d = all_talkers - tau.astype(np.float64)
        c = np.divide(q, d, out=np.zeros(n), where=d > 0)
    else:
        c = np.full(n, float(q))
    values, group = np.unique(c, return_inverse=True)
    # organisations by group, each group in order of its resistances
    ids = np.flatnonzero(potential)
    ids = ids[np.lexsort((resistance[ids], group[ids]))]
    bounds = np.searchsorted(group[ids], np.arange(values.size + 1), side="left")
    order = np.empty(n, dtype=np.int64)  # adopters in time order (initial first)
    x_at = np.empty(n)  # talkers X just before each adoption
    order[: initial.size] = initial
    x_at[: initial.size] = 0.0
    k = _complete_kernel(
        values,
        bounds,
        ids,
        resistance,
        np.ascontiguousarray(talking, dtype=np.float32),
        float(talking[initial].sum(dtype=np.float64)),
        float(p),
        horizon,
        initial.size,
        order,
        x_at,
        time,
    )
    # attribution: external with probability p / (p + c_i X), else ∝ talkers among earlier adopters
    referrer = np.full(n, -1, dtype=np.int64)
    adopters = order[initial.size : k]
    if adopters.size:
        xs = x_at[initial.size : k]
        wom = c[adopters] * xs
        ext = np.divide(p, p + wom, out=np.ones(adopters.size), where=(p + wom) > 0)
        u = u_cause[adopters]
        by_wom = u >= ext
        cum = np.cumsum(talking[order[:k]].astype(np.float64))
        target = xs[by_wom] * (u[by_wom] - ext[by_wom]) / (1 - ext[by_wom])
        pos = np.searchsorted(cum, target, side="right")
        referrer[adopters[by_wom]] = order[np.minimum(pos, k - 1)]
    return time, referrer
