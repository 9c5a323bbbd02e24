"""Reference customers won in a given period (``[[reference]]``), as the engines take it.

A ``[[reference]]`` entry says that in period t the vendor turns ``count`` more organisations
into customers, chosen by a seeding strategy. :func:`with_references` writes this into the
campaign calendar the engines already read (``external[period, group]``, see
:mod:`womlab.dynamics.markets`), so no engine needs a branch of its own: each chosen
organisation gets a column of its own group's calendar in which p is :data:`REFERENCE_RATE`
in period t. Its step hazard there is at least 10³ (exponential step form, time step ≥ 10⁻³)
or infinite (linear form), so it adopts in the first step of period t unless it is a customer
already or its part of the market is not yet open (then it stays as it is): exp(−10³) is 0 in
double precision. Its adoption is external (the probability of a word-of-mouth attribution is
at most w / 10⁶, w its word-of-mouth rate).

Who is chosen: the first ``count`` organisations, in the order the strategy ranks them, that
are not customers at the end of the period before, and were not chosen by an earlier entry. To
know who the customers are then, the engine first runs the same scenario without
``[[reference]]`` on a copy of the run's own dynamics stream: that run is the run itself up to
the period before (the same draws, and nothing differs until the period), so the choice is the
one a vendor would make looking at its customers then. (With several entries the later ones are
judged on that run too, so a customer won through an earlier entry's word of mouth may be
chosen again; it stays a customer.) Ties in the strategy's ranking are broken by a stream of
its own, derived from the dynamics stream without advancing it, as the segment placement and
the programme's enrolment are, so that adding references leaves every other draw of the run
untouched and paired arms keep common random numbers.
"""

from __future__ import annotations

import copy
from collections.abc import Callable
from dataclasses import replace

import numpy as np

from womlab.dynamics.markets import MarketInputs
from womlab.dynamics.run_result import RunResult
from womlab.networks import ReferralNetwork
from womlab.scenario import Scenario
from womlab.seeding import choose_seeds

__all__ = ["REFERENCE_RATE", "REFERENCE_STREAM", "reference_rng", "reference_choice", "with_references"]

#: p (per period) of a chosen organisation in its reference period.
REFERENCE_RATE = 1e6
#: Last element of the spawn key of the stream that breaks ties among references ("REFC" in ASCII).
REFERENCE_STREAM = 0x52454643


def reference_rng(rng: np.random.Generator) -> np.random.Generator:
    """The reference stream of a run whose dynamics stream is ``rng`` (``rng`` is not advanced)."""
    seq = rng.bit_generator.seed_seq
    if not isinstance(seq, np.random.SeedSequence):
        raise TypeError("the dynamics generator must be seeded from a numpy SeedSequence")
    child = np.random.SeedSequence(seq.entropy, spawn_key=(*seq.spawn_key, REFERENCE_STREAM), pool_size=seq.pool_size)
    return np.random.default_rng(child)


def reference_choice(
    scenario: Scenario,
    network: ReferralNetwork,
    initial: np.ndarray,
    rng: np.random.Generator,
    simulate: Callable[..., RunResult] | None = None,
) -> list[np.ndarray]:
    """The organisations each ``[[reference]]`` entry turns into customers (ids, in the strategy's order).

    ``rng`` is the run's dynamics stream (not advanced). ``simulate`` is the run's engine
    ``(scenario, network, initial, rng) -> RunResult``: it runs the scenario without
    ``[[reference]]`` on a copy of ``rng`` to see who the customers are before each entry's
    period; without it only the seeds at period 0 are passed over.
    """
    own = reference_rng(rng)
    taken = {int(i) for i in np.asarray(initial).ravel()}
    adopted = None
    if simulate is not None:
        plain = simulate(scenario.replace("reference", []), network, initial, copy.deepcopy(rng))
        adopted = plain.adoption_period
    out = []
    for entry in scenario.reference.entries:
        before = set(taken)
        if adopted is not None:
            before.update(int(i) for i in np.flatnonzero((adopted >= 0) & (adopted < entry.period)))
        budget = min(network.n, entry.count + len(before))
        ranked = choose_seeds(entry.strategy, network, budget, own, scenario=scenario)
        chosen = [int(i) for i in ranked if int(i) not in before][: entry.count]
        taken.update(chosen)
        out.append(np.array(chosen, dtype=np.int32))
    return out


def with_references(
    scenario: Scenario,
    network: ReferralNetwork,
    initial: np.ndarray,
    rng: np.random.Generator,
    market: MarketInputs,
    simulate: Callable[..., RunResult] | None = None,
) -> tuple[MarketInputs, tuple[np.ndarray, ...]]:
    """``market`` with the ``[[reference]]`` entries written into its calendar, and the organisations
    each entry chose (``market`` itself and () without any). ``simulate``: see :func:`reference_choice`."""
    if not scenario.reference.active:
        return market, ()
    T, n = scenario.run.periods, network.n
    base = np.full((T + 1, 1), float(scenario.adoption.external)) if market.external is None else market.external
    group = np.zeros(n, dtype=np.int32) if market.group is None else market.group.astype(np.int32)
    width = base.shape[1]
    columns = [base]
    group = group.copy()
    chosen_all = tuple(reference_choice(scenario, network, initial, rng, simulate))
    for j, chosen in enumerate(chosen_all):
        if chosen.size == 0:
            continue
        pulse = base.copy()
        pulse[scenario.reference.entries[j].period, :] = REFERENCE_RATE
        group[chosen] = group[chosen] + width * len(columns)
        columns.append(pulse)
    if len(columns) == 1:
        return market, chosen_all
    table, group = np.ascontiguousarray(np.hstack(columns)), np.ascontiguousarray(group)
    return replace(market, external=table, group=group), chosen_all
