"""The array engine: one run in vectorised numpy over CSR adjacency.

No per-organisation Python objects. State lives in arrays: who is a customer, each
organisation's talkers, whether it would be satisfied, its exposure (the talkers of its
satisfied-customer neighbours, Tᵢ) and its accumulated hazard. Every rate in a step is
computed from the state at the start of the step, then every adoption is applied at
once (synchronous update).

Random draws, all from the dynamics stream and all up front, in this order:
talkers (Poisson only), satisfaction, one Exp(1) resistance Eᵢ per organisation, one
uniform per organisation for attribution, and (``threshold`` only) the thresholds θᵢ.
Organisation i adopts at the first step at which its summed step hazard
(:func:`womlab.rules.step_hazard`) reaches Eᵢ — the same per-step probabilities as
drawing a fresh uniform every step, but with a single draw per organisation, so that two
variants compared on the same streams see the same resistances (common random numbers)
whatever the state. The ``threshold`` rule's crossing is an infinite hazard, the
``cascade`` rule's one chance per tie a hazard of −ln(1 − q) per newly satisfied
neighbour over the period after it became satisfied (both in :mod:`womlab.rules`).

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
  Where what a customer puts into Tᵢ can change after it adopted (``cascade``: only in
  the period after; a referral programme's boost), the step's weights are compared with
  the last step's, O(N), and only the changed rows are applied (with their difference).

What a rule needs from the loop lives in two places: :func:`exposed_hazard` (a step's
hazard from Tᵢ, Dᵢ and, for ``threshold``, θᵢ — the rate itself is
:func:`womlab.rules.adoption_rate`, shared with every engine) and :meth:`_State.weights`
(what each organisation puts into its neighbours' Tᵢ this step,
:func:`womlab.rules.talk_weights` and the programme's boost). A new rule whose rate with
no talking neighbour is not the same for everyone would also change the bucketing of
never-exposed organisations in ``_run_sparse``.

A referral programme (``[referral]``, :mod:`womlab.dynamics.programme`) touches the loop at two
marked points only: the talkers that count in a step (boosted for enrolled satisfied
customers while the programme runs) and, after attribution, the payment for the step's
referrals. Its enrolment draws come from a stream of their own, so the draws above are
the same with or without a programme. Exposure is recomputed in full (one sparse
product) in the steps where the programme starts or stops boosting, and kept up to date
incrementally in between.
"""

from __future__ import annotations

import numpy as np

from womlab import rules
from womlab.dynamics.programme import ProgrammeRun, start_programme
from womlab.dynamics.run_result import RunResult
from womlab.networks import ReferralNetwork
from womlab.scenario import Adoption, Scenario

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
    rule: str,
    talking: np.ndarray,
    total: np.ndarray,
    adoption: Adoption,
    dt: float,
    form: str,
    threshold: np.ndarray | None = None,
) -> np.ndarray:
    """One step's hazard for organisations with exposure ``talking`` (Tᵢ) and ``total`` (Dᵢ).

    The one place the array engine turns a rule into hazard; the rate itself is
    :func:`womlab.rules.adoption_rate`, shared with every engine. ``threshold`` holds θᵢ
    of the same organisations (``threshold`` rule only).
    """
    return rules.step_hazard(rules.adoption_rate(rule, talking, total, adoption, threshold), dt, form)


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
    n, rule = network.n, adoption.rule
    spp = run.steps_per_period

    tau = rules.draw_talkers(adoption.talkers_per_customer, n, rng)
    would_be_satisfied = rules.draw_satisfied(adoption.satisfied_share, n, rng)
    resistance = rng.standard_exponential(n)
    u_cause = rng.random(n)
    theta = rules.draw_thresholds(adoption.threshold, n, rng) if rule == "threshold" else None

    initial = np.asarray(initial, dtype=np.int32)
    adoption_step = np.full(n, -1, dtype=np.int32)
    referrer = np.full(n, -1, dtype=np.int32)
    customer = np.zeros(n, dtype=bool)
    customer[initial] = True
    adoption_step[initial] = 0
    talk = np.where(customer & would_be_satisfied, tau, np.float32(0))
    programme = start_programme(scenario, network, rng)  # None without a programme; draws nothing from rng

    state = _State(rule, spp, tau, talk, would_be_satisfied, resistance, u_cause, theta, customer, adoption_step,
                   referrer, programme)
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

    def __init__(self, rule, spp, tau, talk, would_be_satisfied, resistance, u_cause, theta, customer,  # noqa: ANN001
                 adoption_step, referrer, programme: ProgrammeRun | None) -> None:
        self.rule, self.spp = rule, spp
        self.tau, self.talk, self.would_be_satisfied = tau, talk, would_be_satisfied
        self.resistance, self.u_cause, self.theta = resistance, u_cause, theta
        self.customer, self.adoption_step, self.referrer = customer, adoption_step, referrer
        self.programme = programme
        # whether a customer's weight in its neighbours' Tᵢ can change after it adopted
        self.varying = rule == "cascade" or programme is not None

    def boosting(self, period: int) -> bool:
        return self.programme is not None and self.programme.running(period)

    def weights(self, step: int, period: int) -> np.ndarray:
        """What each organisation puts into its neighbours' Tᵢ in ``step`` (float32).

        Its talkers if a satisfied customer (``talk``); under ``cascade`` 1 during the
        period after it became a satisfied customer (:func:`womlab.rules.talk_weights`);
        programme: boosted for enrolled satisfied customers while the programme runs.
        """
        talking_customer = self.customer & self.would_be_satisfied
        talk = self.talk
        if self.rule == "cascade":
            # a customer adopted at step s (0: initial) counts in steps s + 1 .. s + spp, its period after
            talk = rules.talk_weights(self.rule, self.tau, talking_customer, self.adoption_step + self.spp >= step)
        if self.boosting(period):
            talk = self.programme.talk(talk, talking_customer, period)
        return talk

    def adopt(self, network, scenario, new, talking_new, total_new, counted, step, period) -> None:  # noqa: ANN001
        """Attribute, pay (programme) and apply the step's adoptions ``new``; ``counted`` = the step's weights."""
        adoption = scenario.adoption
        theta = None if self.theta is None else self.theta[new]
        ext = rules.external_share(adoption.rule, talking_new, total_new, adoption, theta)
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
    """Complete network from totals: every potential customer's exposure is the market's weight."""
    adoption, run = scenario.adoption, scenario.run
    dt, form, rule, spp = run.time_step, run.step_probability, adoption.rule, run.steps_per_period
    potential = np.flatnonzero(~st.customer)
    total = float(st.tau.sum(dtype=np.float64)) - st.tau[potential].astype(np.float64)
    res = st.resistance[potential]
    theta = None if st.theta is None else st.theta[potential]
    hazard = np.zeros(potential.size)
    for step in range(1, run.periods * spp + 1):
        period = (step + spp - 1) // spp
        counted = st.weights(step, period)
        # a potential customer puts nothing in, so its exposure is the whole market's
        talking = np.full(potential.size, counted.sum(dtype=np.float64))
        hazard += exposed_hazard(rule, talking, total, adoption, dt, form, theta)
        hit = hazard >= res
        if not hit.any():
            continue
        st.adopt(network, scenario, potential[hit], talking[hit], total[hit], counted, step, period)
        keep = ~hit
        potential, total, res, hazard = potential[keep], total[keep], res[keep], hazard[keep]
        theta = None if theta is None else theta[keep]


class _Active:
    """The exposed potential customers, kept compact: ids, Dᵢ, Eᵢ, θᵢ and Xᵢ (hazard beyond h₀·steps)."""

    def __init__(self, total: np.ndarray, resistance: np.ndarray, theta: np.ndarray | None) -> None:
        self._total, self._resistance, self._theta = total, resistance, theta
        self.ids = np.zeros(0, dtype=np.int32)
        self.total, self.resistance, self.extra = np.zeros(0), np.zeros(0), np.zeros(0)
        self.theta = None if theta is None else np.zeros(0)

    def add(self, fresh: np.ndarray) -> None:
        self.ids = np.concatenate([self.ids, fresh])
        self.total = np.concatenate([self.total, self._total[fresh]])
        self.resistance = np.concatenate([self.resistance, self._resistance[fresh]])
        self.extra = np.concatenate([self.extra, np.zeros(fresh.size)])
        if self.theta is not None:
            self.theta = np.concatenate([self.theta, self._theta[fresh]])

    def keep(self, mask: np.ndarray) -> None:
        self.ids, self.total, self.resistance, self.extra = (
            self.ids[mask], self.total[mask], self.resistance[mask], self.extra[mask])
        if self.theta is not None:
            self.theta = self.theta[mask]


def _run_sparse(network: ReferralNetwork, scenario: Scenario, st: _State) -> None:
    """CSR network: work on the exposed potential customers only; exposure updated incrementally."""
    adoption, run = scenario.adoption, scenario.run
    n, dt, form, rule, spp = network.n, run.time_step, run.step_probability, adoption.rule, run.steps_per_period
    steps = run.periods * spp
    customer, resistance = st.customer, st.resistance
    matrix = network.matrix(np.float64)
    total = matrix @ st.tau.astype(np.float64)  # Dᵢ, fixed for the run
    zero = np.zeros(1)
    h0 = float(exposed_hazard(rule, zero, zero, adoption, dt, form, zero + 1)[0])  # a step's hazard, no talking neighbour
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
    active = _Active(total, resistance, st.theta)
    applied = None  # the weights Tᵢ holds, where they can change after adoption
    speakers = np.zeros(0, dtype=np.int32)

    def expose(candidates: np.ndarray) -> None:
        fresh = candidates[~exposed[candidates] & ~customer[candidates]]
        if fresh.size:
            stamp[fresh] = np.arange(fresh.size)
            fresh = fresh[stamp[fresh] == np.arange(fresh.size)]  # one of each
            exposed[fresh] = True
            active.add(fresh)

    def apply(rows: np.ndarray, weight: np.ndarray) -> None:
        """Add ``weight`` of each organisation in ``rows`` to its neighbours' Tᵢ (their CSR rows)."""
        offsets, lengths = _row_entries(network, rows)
        nbrs = network.indices[offsets]
        w = np.repeat(weight, lengths)
        np.add.at(talking, nbrs, w)
        expose(nbrs[w > 0])

    for step in range(1, steps + 1):
        period = (step + spp - 1) // spp
        if step == 1:  # one sparse product to start from
            counted = st.weights(step, period)
            talking = matrix @ counted.astype(np.float64)
            expose(np.flatnonzero(talking > 0))
            applied = counted.copy() if st.varying else None
        elif st.varying:  # apply only the weights that changed, by their difference
            counted = st.weights(step, period)
            changed = np.flatnonzero(counted != applied)
            if changed.size:
                apply(changed, counted[changed].astype(np.float64) - applied[changed].astype(np.float64))
                applied[changed] = counted[changed]
        else:  # only last step's adopters started talking
            counted = st.talk
            if speakers.size:
                apply(speakers, counted[speakers].astype(np.float64))
        parts = []
        hit = None
        if active.ids.size:
            if finite:
                active.extra += exposed_hazard(rule, talking[active.ids], active.total, adoption, dt, form, active.theta) - h0
            hit = h0 * step + active.extra >= active.resistance
            parts.append(active.ids[hit])
        outside = due[bounds[step - 1] : bounds[step]]
        if outside.size:
            outside = outside[~customer[outside] & (~exposed[outside] | (not finite))]
            parts.append(outside)
        new = np.sort(np.concatenate(parts)) if parts else np.zeros(0, dtype=np.int32)
        if new.size == 0:
            speakers = new
            continue
        st.adopt(network, scenario, new, talking[new], total[new], counted, step, period)
        speakers = new[st.talk[new] > 0]
        if hit is not None and hit.any():
            active.keep(~hit)
