"""The array engine: one run as a compiled step loop over CSR adjacency.

No per-organisation Python objects. State lives in arrays — a state code per
organisation (:data:`POTENTIAL`, :data:`CUSTOMER`), its talkers, whether it would be
satisfied, its exposure Tᵢ (what its neighbours put in, :func:`womlab.rules.talk_weight`)
and its accumulated hazard — and the whole run, every step, is one compiled function
(:func:`_kernel`, numba, cached on disk). Every rate in a step is computed from the state
at the start of the step, then every adoption is applied at once (synchronous update).

Random draws, all from the dynamics stream and all up front (in Python), in this order:
talkers (Poisson only), satisfaction, one Exp(1) resistance Eᵢ per organisation, one
uniform per organisation for attribution, and (``threshold`` only) the thresholds θᵢ.
Organisation i adopts at the first step at which its summed step hazard
(:func:`womlab.rules.hazard`) reaches Eᵢ — the same per-step probabilities as drawing a
fresh uniform every step, but with a single draw per organisation, so that two variants
compared on the same streams see the same resistances (common random numbers) whatever
the state. The ``threshold`` rule's crossing is a rate ``word_of_mouth`` once over the
threshold (an infinite hazard for ``inf``), the ``cascade`` rule's one chance per tie a
hazard of −ln(1 − q) per satisfied neighbour in the step that ends one period after that
neighbour adopted (:func:`womlab.rules.step_adoption_hazard`; both in :mod:`womlab.rules`).

One step of the kernel:

1. *Weights.* Each customer's weight in its neighbours' Tᵢ is
   :func:`womlab.rules.talk_weight`, boosted by :func:`womlab.dynamics.programme.boosted`
   while a referral programme runs. Where it differs from what Tᵢ holds, the difference
   is added along the customer's CSR row (on the complete network, to one market total).
   Only the customers whose weight can have changed are looked at: the last step's
   adopters, or every customer where weights vary after adoption (``cascade``, a programme).
2. *Hazards.* Every potential customer (a compact list, ascending ids) adds this step's
   hazard (:func:`womlab.rules.step_adoption_hazard`: :func:`womlab.rules.hazard` of
   :func:`womlab.rules.rate` at (Tᵢ, Dᵢ, θᵢ, pᵢ, qᵢ) but under ``cascade``) to its accumulated hazard
   — exactly the arithmetic of the plain loop — and adopts if it reaches Eᵢ.
3. *Attribution.* External with probability :func:`womlab.rules.step_external_part`, else a
   referrer picked among the neighbours with probability ∝ their weight this step
   (:func:`pick_referrers`); a programme pays for the step's referrals
   (:func:`womlab.dynamics.programme.settle_step`, in adopter-id order).
4. *Apply.* Adopters become customers (state code, adoption step).

Churn (customers who leave; its own marked block of the kernel, off unless ``adoption.churn``
or ``adoption.churn_dissatisfied`` is above 0). Each organisation draws one Exp(1) churn
resistance from the churn stream (:func:`womlab.dynamics.streams.mechanism_rng` with
:data:`~womlab.dynamics.streams.CHURN_STREAM`), never from the dynamics stream, so that a run
with churn = 0 is bit for bit the run it always was and churn on or off keeps every other
draw. A customer that adopted in step a stays :func:`womlab.rules.churn_steps` = k steps
(geometric, from its churn rate :func:`womlab.rules.churn_rate` turned into a step hazard by
:func:`womlab.rules.hazard`): it talks up to and through step a + k, and is a *former
customer* (:data:`FORMER`) at the end of that step; it never adopts again.

Warnings (negative word of mouth; its own marked block, off unless ``adoption.warning`` is
above 0). One Exp(1) rejection resistance and one uniform (who warned) per organisation
from the warning stream (:data:`~womlab.dynamics.streams.WARNING_STREAM`). Warners
(:func:`womlab.rules.warns`) fill a second exposure Wᵢ with :func:`womlab.rules.warn_weight`
as talkers fill Tᵢ; a potential customer with Wᵢ > 0 adds
:func:`womlab.rules.step_rejection_hazard` to a second accumulated hazard, and where both
clocks ring in one step :func:`womlab.rules.rejects_first` decides. A rejecter
(:data:`REJECTER`) leaves the potential list for good; its ``warned_by`` is a warning
neighbour picked ∝ its weight in Wᵢ.

Inputs kept general for what comes next. The external rate is given per period and group
(``external[period, group]``, a campaign calendar; one column and a constant now), and the
per-organisation multipliers of p and q (``external_weight``, ``wom_weight``: segments;
empty = 1 for everyone) are applied inside the kernel; states are codes, not booleans, so
a mechanism that adds a state (a churned customer, a region not yet open) is one more code
and one more branch. DEVELOPERS.md says how to add a mechanism here and in the Mesa model.
"""

from __future__ import annotations

import numpy as np

from womlab import rules
from womlab.dynamics.markets import market_inputs
from womlab.dynamics.products import run_products
from womlab.dynamics.programme import boosted, idle_ledger, settle_step, start_programme
from womlab.dynamics.references import with_references
from womlab.dynamics.run_result import RunResult
from womlab.dynamics.streams import CHURN_STREAM, WARNING_STREAM, mechanism_rng
from womlab.networks import ReferralNetwork
from womlab.rules import (
    churn_rate,
    churn_steps,
    compiled,
    hazard,
    neighbour_talkers,
    rate,
    rejects_first,
    step_adoption_hazard,
    step_external_part,
    step_rejection_hazard,
    talk_weight,
    warn_weight,
    warns,
)
from womlab.scenario import Scenario

__all__ = ["run_array", "pick_referrers", "POTENTIAL", "CUSTOMER", "FORMER", "REJECTER", "CLOSED"]

#: State code of an organisation that is not (yet) a customer.
POTENTIAL = 0
#: State code of a customer.
CUSTOMER = 1
#: State code of a former customer (one who left: churn).
FORMER = 2
#: State code of a rejecter (warned off the product: negative word of mouth); never adopts.
REJECTER = 3
#: State code of an organisation whose part of the market has not opened yet (``market.opens``).
CLOSED = 4


@compiled
def _pick(indptr, indices, weights, i, u):  # noqa: ANN001, ANN202
    """A neighbour of ``i`` with probability ∝ its weight: the first whose running sum exceeds u × the row's sum."""
    start, end = indptr[i], indptr[i + 1]
    if end <= start:
        return -1
    total = 0.0
    for k in range(start, end):
        total += weights[indices[k]]
    target = u * total
    running = 0.0
    for k in range(start, end):
        running += weights[indices[k]]
        if running > target:
            return indices[k]
    return indices[end - 1]


@compiled
def _cumulative(weights, out):  # noqa: ANN001, ANN202
    running = 0.0
    for k in range(weights.size):
        running += weights[k]
        out[k] = running


@compiled
def _pick_any(cumulative, u):  # noqa: ANN001, ANN202
    """Complete network: the first organisation whose running weight exceeds u × the market's weight."""
    n = cumulative.size
    target = u * cumulative[n - 1]
    lo, hi = 0, n
    while lo < hi:
        mid = (lo + hi) // 2
        if cumulative[mid] > target:
            hi = mid
        else:
            lo = mid + 1
    return min(lo, n - 1)


@compiled
def _picks(indptr, indices, complete, weights, adopters, u, out):  # noqa: ANN001, ANN202
    if complete:
        cumulative = np.empty(weights.size)
        _cumulative(weights, cumulative)
        for a in range(adopters.size):
            out[a] = _pick_any(cumulative, u[a])
    else:
        for a in range(adopters.size):
            out[a] = _pick(indptr, indices, weights, adopters[a], u[a])


def pick_referrers(network: ReferralNetwork, adopters: np.ndarray, talk: np.ndarray, u: np.ndarray) -> np.ndarray:
    """For each adopter by word of mouth, a talking neighbour chosen with probability ∝ its talkers.

    ``u`` holds one uniform in [0, 1) per adopter; on the complete network every other
    organisation is a neighbour. The same compiled picker the array engine's step uses.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab.networks import from_edges
    >>> star = from_edges(4, np.array([0, 0, 0]), np.array([1, 2, 3]), np.zeros(4, dtype=np.int32), "star")
    >>> pick_referrers(star, np.array([0]), np.array([0, 1, 0, 3], dtype=np.float32), np.array([0.5])).tolist()
    [3]
    """
    adopters = np.ascontiguousarray(adopters, dtype=np.int32)
    out = np.empty(adopters.size, dtype=np.int32)
    if adopters.size:
        _picks(
            network.indptr,
            network.indices,
            network.complete,
            np.ascontiguousarray(talk, dtype=np.float32),
            adopters,
            np.ascontiguousarray(u, dtype=np.float64),
            out,
        )
    return out


@compiled
def _kernel(
    indptr,
    indices,
    complete,
    rule,
    form,
    dt,
    spp,
    steps,
    external,
    group,
    external_weight,
    wom_weight,  # noqa: ANN001, ANN202, PLR0912, PLR0913, PLR0915
    q,
    cap,
    tau,
    satisfied,
    resistance,
    u_cause,
    theta,
    state,
    adoption_step,
    referrer,
    initial,
    varying,
    ledger,
    opens_at,
    churn,
    churn_dissatisfied,
    referred_churn,
    churn_resistance,
    leave_step,
    warning,
    former_warn,
    rejecters_warn,
    reject_resistance,
    u_warn,
    rejection_step,
    warned_by,
):
    """The whole run, step by step (see the module notes); updates ``state``, ``adoption_step``,
    ``referrer``, ``leave_step`` (churn), ``rejection_step`` and ``warned_by`` (warnings) and the
    programme's ``ledger`` in place."""
    n = tau.size
    enrolled = ledger[0]
    start, end, multiplier, extra, exhausted = ledger[1], ledger[2], ledger[7], ledger[8], ledger[10]
    programme = enrolled.size > 0

    total = neighbour_talkers(indptr, indices, tau, complete)  # Dᵢ, fixed for the run

    exposure = np.zeros(0 if complete else n)  # Tᵢ
    market = 0.0  # complete network: Tᵢ of every potential customer
    applied = np.zeros(n, dtype=np.float32)  # what each organisation's weight in Tᵢ is now
    accumulated = np.zeros(n)  # summed step hazard
    customers = np.empty(n, dtype=np.int32)
    ncust = 0
    for i in initial:
        customers[ncust] = i
        ncust += 1
    potential = np.empty(n, dtype=np.int32)
    npot = 0
    for i in range(n):
        if state[i] == POTENTIAL:
            potential[npot] = i
            npot += 1
    adopters = np.empty(n, dtype=np.int32)
    wom = np.empty(n, dtype=np.int32)
    wom_referrer = np.empty(n, dtype=np.int32)
    cumulative = np.empty(n if complete else 0)
    uniform_groups = group.size == 0
    p_weights, q_weights, thresholds = external_weight.size > 0, wom_weight.size > 0, theta.size > 0
    checked = 0  # customers[checked:] have not had their weight applied yet

    opening = opens_at.size > 0
    # ---- churn: set up (nothing happens without a churn resistance per organisation)
    churning = churn_resistance.size > 0
    if churning:
        varying = True  # a customer who leaves stops talking: its weight changes after adoption
        for i in initial:
            leave_step[i] = _stay(satisfied[i], churn, churn_dissatisfied, 1.0, churn_resistance[i], dt, form, 0)
    # ---- end churn

    # ---- warnings: set up (nothing happens without a rejection resistance per organisation)
    warning_on = reject_resistance.size > 0
    nw = n if warning_on else 0
    wexposure = np.zeros(0 if complete else nw)  # Wᵢ
    wmarket = 0.0  # complete network: Wᵢ of every potential customer
    wapplied = np.zeros(nw, dtype=np.float32)  # what each organisation's weight in Wᵢ is now
    raccumulated = np.zeros(nw)  # summed rejection step hazard
    warn_since = np.full(nw, -1, dtype=np.int64)  # the step it began to warn
    rejecters = np.empty(nw, dtype=np.int32)
    nrej = 0
    rejecting = np.empty(nw, dtype=np.int32)
    wcumulative = np.empty(nw if complete else 0)
    if warning_on:
        for i in initial:
            if not satisfied[i]:
                warn_since[i] = 0
    # ---- end warnings

    for step in range(1, steps + 1):
        period = (step + spp - 1) // spp
        boosting = programme and start <= period <= end and exhausted[0] < 0

        # 0. markets that grow: at the first step of a period, the organisations whose part of the
        # market opens join the potential customers (the list rebuilt, so it stays ascending)
        if opening and (step - 1) % spp == 0:
            joined = False
            for i in range(n):
                if state[i] == CLOSED and opens_at[i] <= period:
                    state[i] = POTENTIAL
                    joined = True
            if joined:
                npot = 0
                for i in range(n):
                    if state[i] == POTENTIAL:
                        potential[npot] = i
                        npot += 1

        # 1. weights: apply each changed weight along its row, by its difference
        for c in range(0 if varying else checked, ncust):
            i = customers[c]
            talking = satisfied[i] and state[i] == CUSTOMER
            w = talk_weight(rule, tau[i], talking, adoption_step[i] + spp == step)  # cascade: its one attempt
            if boosting and talking and enrolled[i]:
                w = boosted(w, multiplier, extra)
            if w != applied[i]:
                diff = np.float64(w) - np.float64(applied[i])
                applied[i] = w
                if complete:
                    market += diff
                else:
                    for k in range(indptr[i], indptr[i + 1]):
                        exposure[indices[k]] += diff
        checked = ncust

        # ---- warnings: each warner's weight in its neighbours' Wᵢ (dissatisfied customers; former
        # customers and rejecters where they warn)
        if warning_on:
            for c in range(ncust + nrej):
                i = customers[c] if c < ncust else rejecters[c - ncust]
                st = state[i]
                warner = warns(st == CUSTOMER, satisfied[i], st == FORMER, st == REJECTER, former_warn, rejecters_warn)
                w = warn_weight(rule, tau[i], warner, warn_since[i] + spp == step)
                if w != wapplied[i]:
                    wmarket += _apply(indptr, indices, complete, wexposure, i, np.float64(w) - np.float64(wapplied[i]))
                    wapplied[i] = w
        nrj = 0
        # ---- end warnings

        # 2. hazards of the potential customers; adopters leave the list, which stays ascending
        nad = 0
        keep = 0
        # with no talking neighbour the rate is p whatever Dᵢ and θᵢ, so where p is everyone's
        # its step hazard is computed once (the same value, bit for bit)
        same_p = uniform_groups and not p_weights
        h0 = hazard(rate(rule, 0.0, 1.0, 0.0, external[period, 0], q, cap), dt, form)
        for c in range(npot):
            i = potential[c]
            t = market if complete else exposure[i]
            if t == 0.0 and same_p:
                ha = h0
            else:
                p = external[period, 0 if uniform_groups else group[i]]
                if p_weights:
                    p *= external_weight[i]
                qi = q * wom_weight[i] if q_weights else q
                ha = step_adoption_hazard(rule, t, total[i], theta[i] if thresholds else 0.0, p, qi, cap, dt, form)
            accumulated[i] += ha
            adopts = accumulated[i] >= resistance[i]
            if warning_on:  # ---- warnings: the rejection clock, competing with adoption
                wt = wmarket if complete else wexposure[i]
                if wt != 0.0:
                    hr = step_rejection_hazard(rule, wt, total[i], theta[i] if thresholds else 0.0, warning, dt, form)
                    raccumulated[i] += hr
                    if raccumulated[i] >= reject_resistance[i]:
                        if not adopts or rejects_first(
                            resistance[i] - (accumulated[i] - ha), ha, reject_resistance[i] - (raccumulated[i] - hr), hr
                        ):
                            rejecting[nrj] = i
                            nrj += 1
                            continue
            if adopts:
                adopters[nad] = i
                nad += 1
            else:
                potential[keep] = i
                keep += 1
        npot = keep

        # ---- churn: customers whose stay ends in this step are former customers at its end
        if churning:
            for c in range(ncust):
                i = customers[c]
                if state[i] == CUSTOMER and leave_step[i] == step:
                    state[i] = FORMER
                    if warning_on and former_warn and warn_since[i] < 0:  # ---- warnings: it begins to warn
                        warn_since[i] = step
        # ---- end churn

        # ---- warnings: rejections, each attributed to a warning neighbour ∝ its weight this step
        if warning_on and nrj > 0:
            if complete:
                _cumulative(wapplied, wcumulative)
            for a in range(nrj):
                i = rejecting[a]
                state[i] = REJECTER
                rejection_step[i] = step
                if complete:
                    warned_by[i] = _pick_any(wcumulative, u_warn[i])
                else:
                    warned_by[i] = _pick(indptr, indices, wapplied, i, u_warn[i])
                rejecters[nrej] = i
                nrej += 1
                if rejecters_warn:
                    warn_since[i] = step
        # ---- end warnings

        if nad == 0:
            continue

        # 3. attribution: external, or a referrer ∝ this step's weights; the programme pays
        nwom = 0
        have_cumulative = False
        for a in range(nad):
            i = adopters[a]
            p = external[period, 0 if uniform_groups else group[i]]
            if p_weights:
                p *= external_weight[i]
            qi = q * wom_weight[i] if q_weights else q
            t = market if complete else exposure[i]
            ext = step_external_part(rule, t, total[i], theta[i] if thresholds else 0.0, p, qi, dt, form)
            u = u_cause[i]
            if u < ext:
                continue
            u = (u - ext) / (1 - ext)
            if complete:
                if not have_cumulative:
                    _cumulative(applied, cumulative)
                    have_cumulative = True
                ref = _pick_any(cumulative, u)
            else:
                ref = _pick(indptr, indices, applied, i, u)
            referrer[i] = ref
            wom[nwom] = i
            wom_referrer[nwom] = ref
            nwom += 1
        if programme and nwom:
            settle_step(period, wom, wom_referrer, nwom, ledger)

        # 4. apply
        for a in range(nad):
            i = adopters[a]
            state[i] = CUSTOMER
            adoption_step[i] = step
            customers[ncust] = i
            ncust += 1
            if churning:  # ---- churn: how long it stays
                # a paid referral of a programme churns at referred_churn_multiplier times the rate
                m = referred_churn if programme and ledger[14][i] else 1.0
                leave_step[i] = _stay(satisfied[i], churn, churn_dissatisfied, m, churn_resistance[i], dt, form, step)
            if warning_on and not satisfied[i]:  # ---- warnings: a dissatisfied customer warns from now
                warn_since[i] = step


@compiled
def _apply(indptr, indices, complete, exposure, i, diff):  # noqa: ANN001, ANN202
    """Add ``diff`` along organisation i's row of ``exposure``; on the complete network return it
    (for the market total) instead."""
    if complete:
        return diff
    for k in range(indptr[i], indptr[i + 1]):
        exposure[indices[k]] += diff
    return 0.0


@compiled
def _stay(satisfied, churn, churn_dissatisfied, multiplier, resistance, dt, form, step):  # noqa: ANN001, ANN202
    """Churn: the step in which a customer that adopted in ``step`` leaves (−1: never)."""
    k = churn_steps(resistance, hazard(churn_rate(satisfied, churn, churn_dissatisfied, multiplier), dt, form))
    return -1 if k < 0 else step + k


def run_array(
    scenario: Scenario,
    network: ReferralNetwork,
    initial: np.ndarray,
    rng: np.random.Generator,
    *,
    external: np.ndarray | None = None,
    group: np.ndarray | None = None,
    external_weight: np.ndarray | None = None,
    wom_weight: np.ndarray | None = None,
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
    external : numpy.ndarray, optional
        External influence p per period (shape ``(periods + 1,)``; entry 0 unused) or per
        period and group (``(periods + 1, groups)``, with ``group``): a campaign calendar.
        Default: ``adoption.external`` in every period.
    group : numpy.ndarray, optional
        Each organisation's column of ``external`` (int, 0..groups − 1).
    external_weight, wom_weight : numpy.ndarray, optional
        Per-organisation multipliers of p and of q (segments). Default 1.

    Returns
    -------
    RunResult
        With ``adoption_time`` = the end of the step of adoption (NaN = never).

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario, build_network
    >>> s = Scenario.from_dict({"market": {"organisations": 500, "initial_customers": 5},
    ...                         "network": {"kind": "small_world", "mean_degree": 6}, "run": {"periods": 20}})
    >>> r = run_array(s, build_network(s, np.random.default_rng(1)), np.arange(5), np.random.default_rng(2))
    >>> len(r.curve()), int(r.customers[0])
    (21, 5)
    """
    if scenario.product.active:  # successive product generations: a run of their own (dynamics.products)
        return run_products(scenario, network, initial, rng)
    adoption, run = scenario.adoption, scenario.run
    n, rule = network.n, adoption.rule
    spp = run.steps_per_period
    # segments and the campaign calendar (all None without them; drawn from a stream of their own)
    market = market_inputs(scenario, network, rng)
    # [[reference]]: customers won in a period, written into the calendar
    market, references = with_references(scenario, network, initial, rng, market, simulate=run_array)
    external = market.external if external is None else external
    group = market.group if group is None else group
    external_weight = market.external_weight if external_weight is None else external_weight
    wom_weight = market.word_of_mouth_weight if wom_weight is None else wom_weight

    tau = np.ascontiguousarray(
        rules.draw_talkers(adoption.talkers_per_customer, n, rng, market.talkers), dtype=np.float32
    )
    satisfied_share = adoption.satisfied_share if market.satisfied_share is None else market.satisfied_share
    would_be_satisfied = np.ascontiguousarray(rules.draw_satisfied(satisfied_share, n, rng))
    resistance = rng.standard_exponential(n)
    u_cause = rng.random(n)
    theta = rules.draw_thresholds(adoption.threshold, n, rng) if rule == "threshold" else np.zeros(0)
    programme = start_programme(scenario, network, rng)  # None without a programme; draws nothing from rng
    # churn: one Exp(1) per organisation from its own stream (nothing drawn from rng)
    churn_resistance = mechanism_rng(rng, CHURN_STREAM).standard_exponential(n) if adoption.churns else np.zeros(0)
    leave_step = np.full(n if adoption.churns else 0, -1, dtype=np.int64)
    # warnings: one Exp(1) rejection resistance and one uniform (who warned) per organisation, own stream
    nw = n if adoption.warns else 0
    reject_resistance, u_warn = np.zeros(0), np.zeros(0)
    if nw:
        warn_rng = mechanism_rng(rng, WARNING_STREAM)
        reject_resistance = warn_rng.standard_exponential(nw)
        u_warn = warn_rng.random(nw)
    rejection_step = np.full(nw, -1, dtype=np.int32)
    warned_by = np.full(nw, -1, dtype=np.int32)

    initial = np.ascontiguousarray(initial, dtype=np.int32)
    state = np.full(n, POTENTIAL, dtype=np.int8)
    opens_at = np.zeros(0, dtype=np.int32) if market.opens_at is None else market.opens_at
    if opens_at.size:  # markets that grow: closed until their period; a seed there is left out
        state[opens_at > 0] = CLOSED
        initial = np.ascontiguousarray(initial[opens_at[initial] == 0])
    state[initial] = CUSTOMER
    adoption_step = np.full(n, -1, dtype=np.int32)
    adoption_step[initial] = 0
    referrer = np.full(n, -1, dtype=np.int32)

    table = _external_table(adoption.external, run.periods, external)
    groups = _per_org(group, n, np.int32, "group")
    if groups.size and (groups.min() < 0 or groups.max() >= table.shape[1]):
        raise ValueError(
            f"group must hold column numbers 0..{table.shape[1] - 1} of external, got {groups.min()}..{groups.max()}"
        )
    _kernel(
        network.indptr,
        network.indices,
        network.complete,
        rules.rule_code(rule),
        rules.form_code(run.step_probability),
        float(run.time_step),
        int(spp),
        int(run.periods * spp),
        table,
        groups,
        _per_org(external_weight, n, np.float64, "external_weight"),
        _per_org(wom_weight, n, np.float64, "wom_weight"),
        float(adoption.word_of_mouth),
        float(adoption.cap),
        tau,
        would_be_satisfied,
        resistance,
        u_cause,
        np.ascontiguousarray(theta, dtype=np.float64),
        state,
        adoption_step,
        referrer,
        initial,
        rule == "cascade" or programme is not None,
        idle_ledger() if programme is None else programme.ledger,
        opens_at,
        float(adoption.churn),
        float(adoption.dissatisfied_churn),
        float(scenario.referral.churn_multiplier),
        churn_resistance,
        leave_step,
        float(adoption.warning),
        bool(adoption.former_warn),
        bool(adoption.rejecters_warn),
        reject_resistance,
        u_warn,
        rejection_step,
        warned_by,
    )

    adopted = adoption_step >= 0
    adoption_period = np.where(adopted, (adoption_step + spp - 1) // spp, -1).astype(np.int32)
    return RunResult(
        periods=run.periods,
        adoption_period=adoption_period,
        referrer=referrer,
        satisfied=adopted & would_be_satisfied,
        region=network.region,
        initial=initial,
        engine="array",
        adoption_time=np.where(adopted, adoption_step / spp, np.nan),
        report_every=run.report_every,
        extra=_with_references({} if programme is None else programme.record(), references),
        segment=market.segment,
        segment_names=market.segment_names,
        value=market.value,
        opens_at=market.opens_at,
        leave_period=_leave_period(leave_step, run.periods, spp) if adoption.churns else None,
        leave_time=np.where((leave_step >= 0) & (leave_step <= run.periods * spp), leave_step / spp, np.nan)
        if adoption.churns
        else None,
        rejection_period=np.where(rejection_step >= 0, (rejection_step + spp - 1) // spp, -1).astype(np.int32)
        if nw
        else None,
        warned_by=warned_by if nw else None,
        rejection_time=np.where(rejection_step >= 0, rejection_step / spp, np.nan) if nw else None,
    )


def _with_references(extra: dict, references: tuple[np.ndarray, ...]) -> dict:
    """``extra`` with the organisations each ``[[reference]]`` entry chose (``references``: a tuple
    of id arrays, one per entry), when there are any."""
    if references:
        extra["references"] = references
    return extra


def _leave_period(leave_step: np.ndarray, periods: int, spp: int) -> np.ndarray:
    """Churn: the period in which each customer left, −1 if it did not by the horizon."""
    left = (leave_step >= 0) & (leave_step <= periods * spp)
    return np.where(left, (leave_step + spp - 1) // spp, -1).astype(np.int32)


def _external_table(p: float, periods: int, given: np.ndarray | None) -> np.ndarray:
    if given is None:
        return np.full((periods + 1, 1), float(p))
    table = np.asarray(given, dtype=np.float64)
    if table.ndim == 1:
        table = table[:, None]
    if table.ndim != 2 or table.shape[0] != periods + 1 or np.any(table < 0) or not np.all(np.isfinite(table)):
        raise ValueError(
            f"external must be finite rates >= 0 of shape (periods + 1,) or (periods + 1, groups) with "
            f"periods = {periods}, got shape {table.shape}"
        )
    return np.ascontiguousarray(table)


def _per_org(values: np.ndarray | None, n: int, dtype: type, name: str) -> np.ndarray:
    if values is None:
        return np.zeros(0, dtype=dtype)
    out = np.ascontiguousarray(values, dtype=dtype)
    if out.shape != (n,) or np.any(out < 0):
        raise ValueError(f"{name} must hold one value >= 0 per organisation ({n}), got shape {out.shape}")
    return out
