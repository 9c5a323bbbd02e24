"""Successive product generations on the referral network (``[[product]]``), on the array engine's clock.

Generation 1 is the ``[adoption]`` product, launched at period 0; ``[[product]]`` adds generations
2, 3, ... launched later, each with its own p, q and satisfied share. Each organisation holds at
most one generation at a time. Word of mouth runs over the same network: a satisfied customer of
generation g puts its talkers into its neighbours' T_g (what they hear about generation g). One step:

1. *Entry.* A potential customer's rate is :func:`womlab.rules.rate` under ``share`` with the first
   generation's p and q and T = Σ_g T_g (word of mouth about any generation); at adoption it takes
   generation g with probability T_g / T (what its talking neighbours use), or the newest launched
   generation when no neighbour talks.
2. *Upgrade.* A customer of generation g, once g + 1 is launched, moves on at
   :func:`womlab.rules.upgrade_rate` with p_{g+1}, q_{g+1}, newer = Σ_{k>g} T_k and current =
   Σ_{k≥g} T_k, and takes generation k > g with probability T_k / newer (g + 1 when none talks).
3. *Apply.* All moves at once (synchronous update); talk moves from T_old to T_new along the row.

On the complete network with one satisfied share for every generation this is, in the mean field,
the Norton & Bass (1987) model with the whole market in the first generation's potential
(``aggregate.generations``): the entry hazard is p₁ + q₁·s·F₁, the upgrade hazard p_{g+1} + q_{g+1}F_{g+1}
with F_{g+1} the share of generation g's cohort that moved on, and the choice by T_k/T is their
leapfrogging. Draws come from a stream of their own (:func:`product_rng`, derived from the dynamics
stream without advancing it), after the run's usual talkers; referrers are not attributed (−1).
"""

from __future__ import annotations

import numpy as np

from womlab import rules
from womlab.dynamics.run_result import RunResult
from womlab.networks import ReferralNetwork
from womlab.rules import compiled, hazard, neighbour_talkers, rate, upgrade_rate
from womlab.scenario import Scenario

__all__ = ["run_products", "product_rng", "PRODUCT_STREAM"]

#: Last element of the spawn key of the product stream ("PROD" in ASCII).
PRODUCT_STREAM = 0x50524F44


def product_rng(rng: np.random.Generator) -> np.random.Generator:
    """The product-generation stream of a run whose dynamics stream is ``rng`` (``rng`` is not advanced)."""
    seq = rng.bit_generator.seed_seq
    if not isinstance(seq, np.random.SeedSequence):
        raise TypeError("the dynamics generator must be seeded from a numpy SeedSequence")
    child = np.random.SeedSequence(seq.entropy, spawn_key=(*seq.spawn_key, PRODUCT_STREAM), pool_size=seq.pool_size)
    return np.random.default_rng(child)


@compiled
def _heard(indptr, indices, complete, expo, totals, owned, talk, g, i):  # noqa: ANN001, ANN202
    """T_g of organisation i: talkers of its satisfied neighbours on generation g (g = 1..G)."""
    if complete:
        own = talk[g - 1, i] if owned[i] == g else 0.0
        return totals[g - 1] - own
    return expo[g - 1, i]


@compiled
def _products_kernel(
    indptr,
    indices,
    complete,
    share_rule,
    form,
    dt,
    spp,
    steps,
    launch,
    p,
    q,
    tau,
    talk,  # noqa: ANN001, ANN202, PLR0912, PLR0913, PLR0915
    resist_entry,
    resist_up,
    u_choice,
    owned,
    start_step,
):
    """The whole run; updates ``owned`` (0 = none, else generation 1..G) and ``start_step`` (n, G) in place.

    ``talk[g - 1, i]``: what organisation i puts into T_g while on generation g (τᵢ if it would be
    satisfied with g, else 0).
    """
    n = tau.size
    G = p.size
    total = neighbour_talkers(indptr, indices, tau, complete)  # Dᵢ
    expo = np.zeros((G, 0 if complete else n))
    totals = np.zeros(G)
    for i in range(n):  # the initial customers' talk
        g = owned[i]
        if g > 0 and talk[g - 1, i] > 0:
            if complete:
                totals[g - 1] += talk[g - 1, i]
            else:
                for k in range(indptr[i], indptr[i + 1]):
                    expo[g - 1, indices[k]] += talk[g - 1, i]
    entry = np.zeros(n)
    up = np.zeros(n)
    heard = np.zeros(G + 1)
    moved = np.empty(n, dtype=np.int32)
    target = np.empty(n, dtype=np.int32)

    for step in range(1, steps + 1):
        period = (step + spp - 1) // spp
        newest = 0
        for g in range(G):
            if launch[g] <= period:
                newest = g + 1
        nmoved = 0
        for i in range(n):
            g = owned[i]
            if g == newest and g > 0:
                continue  # on the newest generation: nothing to move to
            all_heard = 0.0
            for k in range(1, G + 1):
                heard[k] = _heard(indptr, indices, complete, expo, totals, owned, talk, k, i)
                all_heard += heard[k]
            if g == 0:
                r = rate(share_rule, all_heard, total[i], 0.0, p[0], q[0], 0.0)
                entry[i] += hazard(r, dt, form)
                if entry[i] < resist_entry[i]:
                    continue
                chosen = newest
                if all_heard > 0:  # by what its talking neighbours use
                    goal = u_choice[i, 0] * all_heard
                    running = 0.0
                    for k in range(1, newest + 1):
                        running += heard[k]
                        if running > goal:
                            chosen = k
                            break
            else:
                newer = 0.0
                for k in range(g + 1, G + 1):
                    newer += heard[k]
                current = newer + heard[g]
                up[i] += hazard(upgrade_rate(p[g], q[g], newer, current), dt, form)
                if up[i] < resist_up[i, g - 1]:
                    continue
                chosen = g + 1
                if newer > 0:
                    goal = u_choice[i, g] * newer
                    running = 0.0
                    for k in range(g + 1, newest + 1):
                        running += heard[k]
                        if running > goal:
                            chosen = k
                            break
            moved[nmoved] = i
            target[nmoved] = chosen
            nmoved += 1
        for m in range(nmoved):  # apply: talk leaves the old generation's T and joins the new one's
            i, new = moved[m], target[m]
            old = owned[i]
            for g, sign in ((old, -1.0), (new, 1.0)):
                if g > 0 and talk[g - 1, i] > 0:
                    w = sign * talk[g - 1, i]
                    if complete:
                        totals[g - 1] += w
                    else:
                        for k in range(indptr[i], indptr[i + 1]):
                            expo[g - 1, indices[k]] += w
            owned[i] = new
            start_step[i, new - 1] = step
            up[i] = 0.0


def run_products(
    scenario: Scenario, network: ReferralNetwork, initial: np.ndarray, rng: np.random.Generator
) -> RunResult:
    """One run with successive product generations (``[[product]]``; module notes).

    Initial customers hold the first generation. Returns a :class:`RunResult` whose
    ``adoption_period`` is each organisation's first adoption and whose ``extra`` holds
    ``product_start`` (n, G: the period it took up each generation, −1 never), ``product_names``
    and ``product_values``; :meth:`RunResult.product_curves` tables them.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario, build_network
    >>> s = Scenario.from_dict({"market": {"organisations": 400, "initial_customers": 4},
    ...     "network": {"kind": "random", "mean_degree": 6}, "run": {"periods": 30},
    ...     "product": [{"launch": 12, "word_of_mouth": 0.5}]})
    >>> r = run_products(s, build_network(s, np.random.default_rng(1)), np.arange(4),
    ...                  np.random.default_rng(np.random.SeedSequence(2)))
    >>> table = r.product_curves()
    >>> sorted(table["product"].unique())
    ['all', 'generation 1', 'generation 2']
    """
    adoption, run = scenario.adoption, scenario.run
    n, spp = network.n, run.steps_per_period
    generations = scenario.product.generations(adoption)
    G = len(generations)
    tau = np.ascontiguousarray(rules.draw_talkers(adoption.talkers_per_customer, n, rng), dtype=np.float64)
    own = product_rng(rng)  # everything else from the product stream
    satisfied = np.vstack([rules.draw_satisfied(g.satisfied_share, n, own) for g in generations])
    resist_entry = own.standard_exponential(n)
    resist_up = own.standard_exponential((n, max(G - 1, 1)))
    u_choice = own.random((n, G))
    talk = np.ascontiguousarray(np.where(satisfied, tau[None, :], 0.0))
    owned = np.zeros(n, dtype=np.int32)
    initial = np.asarray(initial, dtype=np.int64)
    owned[initial] = 1
    start_step = np.full((n, G), -1, dtype=np.int32)
    start_step[initial, 0] = 0
    _kernel_args = (
        network.indptr,
        network.indices,
        network.complete,
        rules.rule_code("share"),
        rules.form_code(run.step_probability),
        float(run.time_step),
        int(spp),
        int(run.periods * spp),
        np.array([g.launch for g in generations], dtype=np.int64),
        np.array([g.external for g in generations], dtype=np.float64),
        np.array([g.word_of_mouth for g in generations], dtype=np.float64),
        tau,
        talk,
        resist_entry,
        np.ascontiguousarray(resist_up),
        np.ascontiguousarray(u_choice),
        owned,
        start_step,
    )
    _products_kernel(*_kernel_args)
    start = np.where(start_step >= 0, (start_step + spp - 1) // spp, -1).astype(np.int32)
    ever = start_step >= 0
    first_step = np.where(ever, start_step, np.iinfo(np.int32).max).min(axis=1)
    adopted = ever.any(axis=1)
    first = np.where(adopted, (first_step + spp - 1) // spp, -1).astype(np.int32)
    current = np.where(owned > 0, owned - 1, 0)
    return RunResult(
        periods=run.periods,
        adoption_period=first,
        referrer=np.full(n, -1, dtype=np.int32),
        satisfied=(owned > 0) & satisfied[current, np.arange(n)],
        region=network.region,
        initial=np.sort(initial).astype(np.int32),
        engine="array",
        adoption_time=np.where(adopted, first_step / spp, np.nan),
        report_every=run.report_every,
        extra={
            "product_start": start,
            "product_names": tuple(g.name for g in generations),
            "product_values": np.array([g.value_per_period for g in generations]),
        },
    )
