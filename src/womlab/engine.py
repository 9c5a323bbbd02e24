"""The array engine: one run in vectorised numpy over CSR adjacency.

No per-organisation Python objects. State lives in arrays: who is a customer, each
organisation's talkers, whether it would be satisfied, and its summed hazard. Each step
computes every rate from the state at the start of the step (one sparse product,
``A @ talking``), then applies every adoption at once (synchronous update).

Random draws, all from the dynamics stream and all up front, in this order:
talkers (Poisson only), satisfaction, one Exp(1) resistance Eᵢ per organisation, one
uniform per organisation for attribution, and (``threshold`` only) the thresholds θᵢ.
Organisation i adopts at the first step at which its summed step hazard
(:func:`womlab.rules.step_hazard`) reaches Eᵢ — the same per-step probabilities as drawing a fresh uniform every step, but with a single draw
per organisation, so that two variants compared on the same streams see the same
resistances (common random numbers) whatever the state. The ``threshold`` rule's crossing
is an infinite hazard, the ``cascade`` rule's one chance per tie a hazard of −ln(1 − q)
per newly satisfied neighbour over the period after it became satisfied (both in
:mod:`womlab.rules`).

A referral programme (``[referral]``, :mod:`womlab.programme`) touches the loop at two
marked points only: the talkers that count in a step (boosted for enrolled satisfied
customers while the programme runs) and, after attribution, the payment for the step's
referrals. Its enrolment draws come from a stream of their own, so the draws above are
the same with or without a programme.
"""

from __future__ import annotations

import numpy as np

from . import rules
from .programme import start_programme
from .networks import ReferralNetwork
from .results import RunResult
from .scenario import Scenario

__all__ = ["run_array", "pick_referrers"]


def pick_referrers(
    network: ReferralNetwork, adopters: np.ndarray, talk: np.ndarray, u: np.ndarray
) -> np.ndarray:
    """For each adopter by word of mouth, a talking neighbour chosen with probability ∝ its talkers.

    ``u`` holds one uniform in [0, 1) per adopter. On the complete network every other
    organisation is a neighbour.
    """
    if adopters.size == 0:
        return np.zeros(0, dtype=np.int32)
    if network.complete:
        c = np.cumsum(talk, dtype=np.float64)
        # adopters are potential customers, so their own talk is 0 and need not be removed
        pos = np.searchsorted(c, u * c[-1], side="right")
        return np.minimum(pos, network.n - 1).astype(np.int32)
    start = network.indptr[adopters].astype(np.int64)
    stop = network.indptr[adopters + 1].astype(np.int64)
    lengths = stop - start
    offsets = np.repeat(start - np.cumsum(lengths) + lengths, lengths) + np.arange(lengths.sum())
    nbrs = network.indices[offsets]
    c = np.cumsum(talk[nbrs], dtype=np.float64)
    seg_end = np.cumsum(lengths)
    seg_start = seg_end - lengths
    base = np.where(seg_start > 0, c[np.maximum(seg_start - 1, 0)], 0.0)
    total = c[seg_end - 1] - base
    pos = np.searchsorted(c, base + u * total, side="right")
    pos = np.clip(pos, seg_start, seg_end - 1)
    return nbrs[pos].astype(np.int32)


def run_array(
    scenario: Scenario, network: ReferralNetwork, initial: np.ndarray, rng: np.random.Generator
) -> RunResult:
    """One run of the scenario's rule on ``network`` from the customers ``initial``.

    Parameters
    ----------
    scenario : Scenario
        Supplies the adoption rule and the run's horizon, step and step form.
    network : ReferralNetwork
        The referral network.
    initial : numpy.ndarray
        Ids of the customers at period 0.
    rng : numpy.random.Generator
        The dynamics stream.
    """
    adoption, run = scenario.adoption, scenario.run
    n, dt, form, rule = network.n, run.time_step, run.step_probability, adoption.rule
    spp = run.steps_per_period

    tau = rules.draw_talkers(adoption.talkers_per_customer, n, rng)
    would_be_satisfied = rules.draw_satisfied(adoption.satisfied_share, n, rng)
    resistance = rng.standard_exponential(n)
    u_cause = rng.random(n)
    theta = rules.draw_thresholds(adoption.threshold, n, rng) if rule == "threshold" else None

    adoption_period = np.full(n, -1, dtype=np.int32)
    referrer = np.full(n, -1, dtype=np.int32)
    customer = np.zeros(n, dtype=bool)
    customer[initial] = True
    adoption_period[initial] = 0
    fresh_until = np.full(n, -1, dtype=np.int64)  # last step of each customer's first period satisfied
    fresh_until[initial] = spp
    talk = rules.talk_weights(rule, tau, customer & would_be_satisfied, fresh_until >= 1)
    hazard = np.zeros(n)
    programme = start_programme(scenario, network, rng)  # None without a programme; draws nothing from rng

    if network.complete:
        all_talkers = np.full(n, tau.sum(dtype=np.float64)) - tau
        matrix = None
    else:
        matrix = network.matrix(np.float32)
        all_talkers = matrix @ tau

    for step in range(1, run.periods * spp + 1):
        if rule == "cascade":
            talk = rules.talk_weights(rule, tau, customer & would_be_satisfied, fresh_until >= step)
        period = (step + spp - 1) // spp
        # programme: the talkers that count this step (``talk`` itself without a boost)
        counted = talk if programme is None else programme.talk(talk, customer & would_be_satisfied, period)
        if matrix is None:
            talking = counted.sum(dtype=np.float64) - counted
        else:
            talking = matrix @ counted
        potential = ~customer
        rate = rules.adoption_rate(rule, talking, all_talkers, adoption, theta)
        hazard += np.where(potential, rules.step_hazard(rate, dt, form), 0.0)
        new = np.flatnonzero(potential & (hazard >= resistance))
        if new.size == 0:
            continue
        ext = rules.external_share(rule, talking[new], all_talkers[new], adoption, None if theta is None else theta[new])
        by_wom = u_cause[new] >= ext
        wom = new[by_wom]
        if wom.size:
            u = (u_cause[wom] - ext[by_wom]) / (1 - ext[by_wom])
            referrer[wom] = pick_referrers(network, wom, counted, u)
            if programme is not None:  # programme: pay for this step's attributed referrals
                programme.settle(period, wom, referrer[wom])
        customer[new] = True
        adoption_period[new] = period
        fresh_until[new] = step + spp
        talk[new] = np.where(would_be_satisfied[new], tau[new], np.float32(0))

    return RunResult(
        periods=run.periods,
        adoption_period=adoption_period,
        referrer=referrer,
        satisfied=customer & would_be_satisfied,
        region=network.region,
        initial=np.asarray(initial, dtype=np.int32),
        engine="array",
        extra={} if programme is None else programme.record(),
    )
