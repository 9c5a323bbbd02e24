"""The array engine: one run in vectorised numpy over CSR adjacency.

No per-organisation Python objects. State lives in arrays: who is a customer, each
organisation's talkers, whether it would be satisfied, its exposure (the talkers of its
satisfied-customer neighbours, Tᵢ) and its accumulated hazard. Every rate in a step is
computed from the state at the start of the step, then every adoption is applied at
once (synchronous update).

Random draws, all from the dynamics stream and all up front, in this order:
talkers (Poisson only), satisfaction, one Exp(1) resistance Eᵢ per organisation, one
uniform per organisation for attribution. Organisation i adopts at the first step at
which its summed step hazard (:func:`womlab.rules.step_hazard`) reaches Eᵢ — the same
per-step probabilities as drawing a fresh uniform every step, but with a single draw
per organisation, so that two variants compared on the same streams see the same
resistances (common random numbers) whatever the state.

Work only where it matters. A step's hazard is h₀ = step_hazard(rate at Tᵢ = 0) for an
organisation with no talking neighbour, the same for all of them; so organisation i's
summed hazard after s steps is h₀·s + Xᵢ, where Xᵢ adds up h(λᵢ) − h₀ over the steps it
was exposed (Tᵢ > 0). Hence:

* customers need no work at all;
* an organisation never exposed adopts, by external influence alone, at the first step
  s with h₀·s ≥ Eᵢ — known up front, so these are bucketed by step once;
* only exposed potential customers (the *active* set) have rates computed each step;
* exposure is kept up to date incrementally: when organisations start talking, their
  CSR rows add their talkers to their neighbours' Tᵢ (O(ties of the new talkers),
  O(E) over the whole run) instead of one full sparse product ``A @ talking`` per step.

The rule's rate from exposure is computed in one place, :func:`exposed_hazard`; a rule
whose rate is not a function of Tᵢ and Dᵢ changes that function (and the bucketing,
if its rate without talking neighbours is not constant).

A referral programme (``[referral]``, :mod:`womlab.programme`) touches the loop at two
marked points only: the talkers that count in a step (boosted for enrolled satisfied
customers while the programme runs) and, after attribution, the payment for the step's
referrals. Its enrolment draws come from a stream of their own, so the draws above are
the same with or without a programme. Exposure is recomputed in full (one sparse
product) in the steps where the programme starts or stops boosting, and kept up to date
incrementally in between.
"""

from __future__ import annotations

import numpy as np

from . import rules
from .networks import ReferralNetwork
from .programme import ProgrammeRun, start_programme
from .results import RunResult
from .scenario import Adoption, Scenario

__all__ = ["run_array", "pick_referrers", "exposed_hazard"]


def _row_entries(network: ReferralNetwork, ids: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Positions in ``network.indices`` of the rows ``ids``, concatenated, and each row's length."""
    start = network.indptr[ids].astype(np.int64)
    lengths = network.indptr[ids + 1].astype(np.int64) - start
    total = int(lengths.sum())
    offsets = np.repeat(start - np.cumsum(lengths) + lengths, lengths) + np.arange(total)
    return offsets, lengths


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
    offsets, lengths = _row_entries(network, adopters)
    nbrs = network.indices[offsets]
    c = np.cumsum(talk[nbrs], dtype=np.float64)
    seg_end = np.cumsum(lengths)
    seg_start = seg_end - lengths
    base = np.where(seg_start > 0, c[np.maximum(seg_start - 1, 0)], 0.0)
    total = c[seg_end - 1] - base
    pos = np.searchsorted(c, base + u * total, side="right")
    pos = np.clip(pos, seg_start, seg_end - 1)
    return nbrs[pos].astype(np.int32)


def exposed_hazard(
    rule: str, talking: np.ndarray, total: np.ndarray, adoption: Adoption, dt: float, form: str
) -> np.ndarray:
    """One step's hazard for organisations with exposure ``talking`` (Tᵢ) and ``total`` (Dᵢ).

    The one place the array engine turns a rule into hazard; the rate itself is
    :func:`womlab.rules.adoption_rate`, shared with every engine.
    """
    return rules.step_hazard(rules.adoption_rate(rule, talking, total, adoption), dt, form)


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

    Returns
    -------
    RunResult
        With ``adoption_time`` = the end of the step of adoption (NaN = never).
    """
    adoption, run = scenario.adoption, scenario.run
    n, dt, form, rule = network.n, run.time_step, run.step_probability, adoption.rule
    spp = run.steps_per_period

    tau = rules.draw_talkers(adoption.talkers_per_customer, n, rng)
    would_be_satisfied = rules.draw_satisfied(adoption.satisfied_share, n, rng)
    resistance = rng.standard_exponential(n)
    u_cause = rng.random(n)

    initial = np.asarray(initial, dtype=np.int32)
    adoption_step = np.full(n, -1, dtype=np.int32)
    referrer = np.full(n, -1, dtype=np.int32)
    customer = np.zeros(n, dtype=bool)
    customer[initial] = True
    adoption_step[initial] = 0
    talk = np.where(customer & would_be_satisfied, tau, np.float32(0))
    programme = start_programme(scenario, network, rng)  # None without a programme; draws nothing from rng

    state = _State(tau, talk, would_be_satisfied, resistance, u_cause, customer, adoption_step, referrer, programme)
    if network.complete:
        _run_complete(network, scenario, state)
    else:
        _run_sparse(network, scenario, state)

    adopted = adoption_step >= 0
    adoption_period = np.where(adopted, (adoption_step + spp - 1) // spp, -1).astype(np.int32)
    return RunResult(
        periods=run.periods,
        adoption_period=adoption_period,
        referrer=referrer,
        satisfied=customer & would_be_satisfied,
        region=network.region,
        initial=initial,
        engine="array",
        adoption_time=np.where(adopted, adoption_step / spp, np.nan),
        report_every=run.report_every,
        extra={} if programme is None else programme.record(),
    )


class _State:
    """One run's per-organisation arrays (no per-organisation objects), shared by the step loops."""

    def __init__(self, tau, talk, would_be_satisfied, resistance, u_cause, customer, adoption_step, referrer,  # noqa: ANN001
                 programme: ProgrammeRun | None) -> None:
        self.tau, self.talk, self.would_be_satisfied = tau, talk, would_be_satisfied
        self.resistance, self.u_cause = resistance, u_cause
        self.customer, self.adoption_step, self.referrer = customer, adoption_step, referrer
        self.programme = programme

    def boosting(self, period: int) -> bool:
        return self.programme is not None and self.programme.running(period)

    def counted(self, period: int) -> np.ndarray:
        """Programme: the talkers that count in ``period`` (``talk`` itself without a boost)."""
        if not self.boosting(period):
            return self.talk
        return self.programme.talk(self.talk, self.customer & self.would_be_satisfied, period)

    def adopt(self, network, scenario, new, talking_new, total_new, step, period) -> None:  # noqa: ANN001
        """Attribute, pay (programme) and apply the step's adoptions ``new``."""
        adoption = scenario.adoption
        counted = self.counted(period)
        ext = rules.external_share(adoption.rule, talking_new, total_new, adoption)
        by_wom = self.u_cause[new] >= ext
        wom = new[by_wom]
        if wom.size:
            u = (self.u_cause[wom] - ext[by_wom]) / (1 - ext[by_wom])
            self.referrer[wom] = pick_referrers(network, wom, counted, u)
            if self.programme is not None:  # programme: pay for this step's attributed referrals
                self.programme.settle(period, wom, self.referrer[wom])
        self.customer[new] = True
        self.adoption_step[new] = step
        self.talk[new] = np.where(self.would_be_satisfied[new], self.tau[new], np.float32(0))


def _run_complete(network: ReferralNetwork, scenario: Scenario, st: _State) -> None:
    """Complete network from totals: every potential customer's exposure is the market's talk."""
    adoption, run = scenario.adoption, scenario.run
    dt, form, rule, spp = run.time_step, run.step_probability, adoption.rule, run.steps_per_period
    potential = np.flatnonzero(~st.customer)
    total = float(st.tau.sum(dtype=np.float64)) - st.tau[potential].astype(np.float64)
    res = st.resistance[potential]
    hazard = np.zeros(potential.size)
    for step in range(1, run.periods * spp + 1):
        period = (step + spp - 1) // spp
        # a potential customer's own talk is 0, so its exposure is the whole market's
        talking = np.full(potential.size, st.counted(period).sum(dtype=np.float64))
        hazard += exposed_hazard(rule, talking, total, adoption, dt, form)
        hit = hazard >= res
        if not hit.any():
            continue
        st.adopt(network, scenario, potential[hit], talking[hit], total[hit], step, period)
        keep = ~hit
        potential, total, res, hazard = potential[keep], total[keep], res[keep], hazard[keep]


def _run_sparse(network: ReferralNetwork, scenario: Scenario, st: _State) -> None:
    """CSR network: work on the exposed potential customers only; exposure updated incrementally."""
    adoption, run = scenario.adoption, scenario.run
    n, dt, form, rule, spp = network.n, run.time_step, run.step_probability, adoption.rule, run.steps_per_period
    steps = run.periods * spp
    customer, resistance = st.customer, st.resistance
    matrix = network.matrix(np.float64)
    total = matrix @ st.tau.astype(np.float64)  # Dᵢ, fixed for the run
    zero = np.zeros(1)
    h0 = float(exposed_hazard(rule, zero, zero, adoption, dt, form)[0])  # a step's hazard with no talking neighbour
    finite = bool(np.isfinite(h0))

    # never-exposed organisations adopt by external influence at the first step s with h0·s >= Eᵢ
    if h0 > 0:
        with np.errstate(over="ignore", invalid="ignore"):
            first = np.ceil(resistance / h0) if finite else np.ones(n)
        first = np.where(first < 1, 1, first)
        due = np.flatnonzero(first <= steps)
        due = due[np.argsort(first[due], kind="stable")].astype(np.int32)
        bounds = np.searchsorted(first[due], np.arange(1, steps + 2), side="left")
    else:
        due, bounds = np.zeros(0, dtype=np.int32), np.zeros(steps + 2, dtype=np.int64)

    talking = np.zeros(n)  # Tᵢ
    exposed = np.zeros(n, dtype=bool)
    stamp = np.zeros(n, dtype=np.int64)  # scratch for de-duplicating newly exposed ids
    # the active set (exposed potential customers), kept compact: ids, Dᵢ, Eᵢ, Xᵢ
    a_ids = np.zeros(0, dtype=np.int32)
    a_total, a_res, a_extra = np.zeros(0), np.zeros(0), np.zeros(0)
    speakers = np.zeros(0, dtype=np.int32)
    boosting = None

    def expose(candidates: np.ndarray) -> None:
        nonlocal a_ids, a_total, a_res, a_extra
        fresh = candidates[~exposed[candidates] & ~customer[candidates]]
        if fresh.size:
            stamp[fresh] = np.arange(fresh.size)
            fresh = fresh[stamp[fresh] == np.arange(fresh.size)]  # one of each
            exposed[fresh] = True
            a_ids = np.concatenate([a_ids, fresh])
            a_total = np.concatenate([a_total, total[fresh]])
            a_res = np.concatenate([a_res, resistance[fresh]])
            a_extra = np.concatenate([a_extra, np.zeros(fresh.size)])

    for step in range(1, steps + 1):
        period = (step + spp - 1) // spp
        if st.boosting(period) != boosting:  # first step, or the programme starts or stops boosting
            boosting = st.boosting(period)
            talking = matrix @ st.counted(period).astype(np.float64)
            expose(np.flatnonzero(talking > 0))
        elif speakers.size:  # exposure from those who started talking last step
            offsets, lengths = _row_entries(network, speakers)
            nbrs = network.indices[offsets]
            counted = np.repeat(st.counted(period)[speakers].astype(np.float64), lengths)
            np.add.at(talking, nbrs, counted)
            expose(nbrs[counted > 0])
        parts = []
        hit = None
        if a_ids.size:
            if finite:
                a_extra += exposed_hazard(rule, talking[a_ids], a_total, adoption, dt, form) - h0
            hit = h0 * step + a_extra >= a_res
            parts.append(a_ids[hit])
        outside = due[bounds[step - 1] : bounds[step]]
        if outside.size:
            outside = outside[~customer[outside] & (~exposed[outside] | (not finite))]
            parts.append(outside)
        new = np.sort(np.concatenate(parts)) if parts else np.zeros(0, dtype=np.int32)
        speakers = np.zeros(0, dtype=np.int32)
        if new.size == 0:
            continue
        st.adopt(network, scenario, new, talking[new], total[new], step, period)
        speakers = new if boosting else new[st.talk[new] > 0]  # a boost may make a silent customer count
        if hit is not None and hit.any():
            keep = ~hit
            a_ids, a_total, a_res, a_extra = a_ids[keep], a_total[keep], a_res[keep], a_extra[keep]
