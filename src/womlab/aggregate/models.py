"""Aggregate models of growth: one market, everyone talks to everyone.

* The Bass model, dF/dt = (1 − F)(p + Q·F), in closed form (:func:`bass_share`) and as
  an ODE solved with scipy (:func:`bass_ode`).
* Its discrete difference equation, in either step form (:func:`bass_difference`):
  F ← F + (1 − F)·π(p + Q·F), with π the step probability of :mod:`womlab.rules`.
* The capped Bass difference model (:func:`capped_bass_difference`): the Bass difference
  equation in customer counts, with the adoption rate per period capped at
  ``adoption.cap`` — talkers = customers × satisfied share × talkers per customer,
  buying = available × π(min(external + slope × talkers, cap)). Without a cap it is the
  Bass difference equation itself. This is how Bass diffusion is written as a
  stock-and-flow model (two stocks, potential customers and customers, and one flow
  between them; Sterman 2000, ch. 9, from memory); womlab names it by what it computes.
  Its former name :func:`stock_and_flow` still works.
* :func:`mapped_parameters`, the micro-to-macro mapping from a scenario.
* :func:`churn_curves`: with churn, Bass with churn (:mod:`womlab.aggregate.churn`) mapped
  from the scenario.

The degree-based mean-field model is in :mod:`womlab.aggregate.mean_field`.

References
----------
Bass, F. M. (1969). A new product growth for model consumer durables. Management
Science 15(5), 215–227.

Sterman, J. D. (2000). Business Dynamics: Systems Thinking and Modeling for a Complex
World. Irwin/McGraw-Hill. Chapter 9, the Bass diffusion model in stock-and-flow form
(cited from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.integrate import solve_ivp

from womlab.aggregate.churn import CHURN_CURVE_COLUMNS, bass_churn_difference, bass_churn_ode
from womlab.aggregate.markets import group_curves
from womlab.errors import WomlabError
from womlab.rules import step_probability
from womlab.scenario import Scenario
from womlab.scenario.markets import openings

__all__ = [
    "AggregateParameters",
    "mapped_parameters",
    "bass_share",
    "bass_density",
    "bass_ode",
    "bass_difference",
    "capped_bass_difference",
    "stock_and_flow",
    "aggregate_curve",
    "churn_curves",
    "bass_peak_time",
    "AGGREGATE_LABELS",
]

#: Plain labels of the aggregate curves a comparison sets beside the network runs.
AGGREGATE_LABELS = {
    "bass_mapped": "Bass ODE, mapped p, Q",
    "bass_difference": "Bass difference model, mapped",
    "capped_bass_difference": "Bass difference model with a rate ceiling, mapped",
    "degree_mean_field": "degree mean-field model",
    "bass_fitted": "Bass fitted to the network",
    "segment_model": "segment model (segments, calendar, openings), mapped",
    "bass_churn_mapped": "Bass with churn/warnings ODE, mapped",
    "bass_churn_difference": "Bass with churn/warnings difference model, mapped",
}


@dataclass(frozen=True)
class AggregateParameters:
    """Aggregate parameters mapped from a scenario.

    Attributes
    ----------
    p : float
        External influence (Bass coefficient of innovation), per period.
    Q : float
        Aggregate word-of-mouth strength (Bass coefficient of imitation), per period, for
        the customer share F = C/N.
    initial_share : float
        F(0), the share of the market that are customers at period 0.
    mean_degree : float
        k̄ of the network (N − 1 on the complete network).
    mean_talkers : float
        τ̄, mean talkers per organisation.
    slope : float
        Slope of the capped Bass difference model: buying per potential customer per
        talker in the market.
    cap : float or None
        Ceiling on the per-period buying rate (``capped`` rule), else None.
    """

    p: float
    Q: float
    initial_share: float
    mean_degree: float
    mean_talkers: float
    slope: float
    cap: float | None


def _mean_degree(scenario: Scenario) -> float:
    """k̄: N − 1 on the complete network, else ``network.mean_degree`` (an edge list's own,
    which the scenario reads from the file when it is loaded)."""
    if scenario.network.kind == "complete":
        return float(scenario.market.organisations - 1)
    return float(scenario.network.mean_degree)


def mapped_parameters(scenario: Scenario) -> AggregateParameters:
    """Map a scenario to aggregate Bass parameters and the capped Bass difference slope (mean field).

    Derivation. Let C be the number of customers, F = C/N their share and s the satisfied
    share. Under the mean-field assumption a potential customer's k neighbours are a
    random draw from the N − 1 *other* organisations, of which C are customers (it is not
    one itself), so a share s·C/(N − 1) of its neighbours are satisfied customers, each
    with τ̄ talkers on average:

    * ``share``: λ = p + q·T/D ≈ p + q·(s·C/(N − 1)·k·τ̄)/(k·τ̄) = p + q·s·F·N/(N − 1), hence
      **Q = q·s·N/(N − 1)**, independent of degree and talkers; exact on the complete
      network.
    * ``count``: λ = p + q·T ≈ p + q·τ̄·k̄·s·C/(N − 1), hence **Q = q·s·τ̄·k̄·N/(N − 1)**; on
      the complete network (k̄ = N − 1) this is q·s·τ̄·N, exactly what every potential
      customer hears from the s·C·τ̄ talkers in the market; on a random regular graph with
      fixed talkers k̄ = k.
    * ``capped``: λ = min(p + q·T, cap) ≈ min(p + Q·F, cap) with the ``count`` Q. In
      stock-and-flow terms talkers = C·s·τ̄, and each potential customer is a neighbour of
      a share k̄/(N − 1) of them, so buying = available × min(p + slope·talkers, cap) with
      **slope = q·k̄/(N − 1)** (q on the complete network: every talker reaches every
      potential customer). For ``share`` the slope is q/((N − 1)·τ̄), the same Q.
    * ``threshold`` and ``cascade`` have no Bass counterpart (a threshold crossing is all
      or nothing; a cascade customer talks for one period only), so **Q = NaN** and
      :func:`aggregate_curve` is NaN: their runs are shown without an aggregate curve.

    Examples
    --------
    >>> from womlab import Scenario, mapped_parameters
    >>> s = Scenario.from_dict({"market": {"organisations": 1001},
    ...                         "adoption": {"rule": "share", "word_of_mouth": 0.5, "satisfied_share": 0.6}})
    >>> round(mapped_parameters(s).Q, 6)   # 0.5 · 0.6 · 1001/1000
    0.3003
    """
    a, m = scenario.adoption, scenario.market
    n = m.organisations
    k = _mean_degree(scenario)
    tau = a.talkers_per_customer.mean
    s = a.satisfied_share
    q = a.word_of_mouth
    others = n / (n - 1) if n > 1 else 1.0  # F = C/N, but a potential customer's neighbours are among N − 1
    if a.rule == "share":
        Q = q * s * others
    elif a.rule in ("threshold", "cascade"):
        Q = float("nan")
    else:
        Q = q * s * tau * k * others
    return AggregateParameters(
        p=a.external,
        Q=Q,
        initial_share=scenario.n_initial / n,
        mean_degree=k,
        mean_talkers=tau,
        slope=q * k / max(n - 1, 1) if a.rule != "share" else q / (max(n - 1, 1) * max(tau, 1e-300)),
        cap=a.cap if a.rule == "capped" else None,
    )


def bass_share(t: np.ndarray | float, p: float, Q: float, initial_share: float = 0.0) -> np.ndarray:
    """Closed-form Bass cumulative share F(t) with F(0) = ``initial_share``.

    F(t) = (1 − c·e^{−(p+Q)t}) / (1 + (Q/p)·c·e^{−(p+Q)t}), c = (1 − F₀)/(1 + (Q/p)·F₀);
    with F₀ = 0 this is Bass's (1 − e^{−(p+Q)t}) / (1 + (Q/p)·e^{−(p+Q)t}). For p = 0 it is
    the logistic F₀e^{Qt} / (1 − F₀ + F₀e^{Qt}).

    References
    ----------
    Bass (1969), eq. (5).
    """
    t = np.asarray(t, dtype=float)
    f0 = float(initial_share)
    if p <= 0:
        if Q <= 0 or f0 <= 0:
            return np.full_like(t, f0)
        g = f0 * np.exp(Q * t)
        return g / (1 - f0 + g)
    c = (1 - f0) / (1 + (Q / p) * f0)
    e = c * np.exp(-(p + Q) * t)
    return (1 - e) / (1 + (Q / p) * e)


def bass_density(t: np.ndarray | float, p: float, Q: float, initial_share: float = 0.0) -> np.ndarray:
    """Bass adoption rate f(t) = dF/dt = (1 − F)(p + Q·F), with F from :func:`bass_share`.

    With F(0) = 0 this equals Bass's ((p + Q)²/p)·e^{−(p+Q)t} / (1 + (Q/p)·e^{−(p+Q)t})².

    Examples
    --------
    >>> round(float(bass_density(0.0, 0.03, 0.38)), 6)   # f(0) = p
    0.03
    """
    f = bass_share(t, p, Q, initial_share)
    return (1 - f) * (p + Q * f)


def bass_peak_time(p: float, Q: float, initial_share: float = 0.0) -> float:
    """Time of the Bass adoption-rate peak, t* = ln((1 − F₀)·Q / (p + Q·F₀)) / (p + Q).

    The rate (1 − F)(p + Q·F) peaks at F* = (Q − p)/(2Q); solving :func:`bass_share` for
    F(t*) = F* gives t* above, which is Bass's ln(Q/p)/(p + Q) from F(0) = 0 (Bass 1969)
    and the logistic's ln((1 − F₀)/F₀)/Q when p = 0. It is 0 when the rate only falls
    (Q <= p, or F₀ already at or past F*), and infinite when nothing ever happens
    (p = 0 and F₀ = 0). NaN when Q is NaN (a rule without a Bass counterpart).

    Examples
    --------
    >>> round(bass_peak_time(0.03, 0.38), 4)   # ln(0.38/0.03)/0.41
    6.1926
    >>> round(bass_peak_time(0.0, 0.5, 0.01), 4)   # ln(99)/0.5
    9.1902
    """
    if Q != Q:
        return float("nan")
    if p <= 0 and initial_share <= 0:
        return float("inf") if Q >= 0 else 0.0
    if Q <= p:
        return 0.0
    x = (1 - initial_share) * Q / (p + Q * initial_share)
    return float(np.log(x) / (p + Q)) if x > 1 else 0.0


def bass_ode(
    t: np.ndarray, p: float, Q: float, initial_share: float = 0.0, *, rtol: float = 1e-10, atol: float = 1e-12
) -> np.ndarray:
    """Bass share on the grid ``t`` from ``scipy.integrate.solve_ivp`` (checks ``success``)."""
    t = np.asarray(t, dtype=float)
    sol = solve_ivp(
        lambda _, f: (1 - f) * (p + Q * f),
        (float(t[0]), float(t[-1])),
        [initial_share],
        t_eval=t,
        method="LSODA",
        rtol=rtol,
        atol=atol,
    )
    if not sol.success:
        raise WomlabError(f"Bass ODE did not solve: {sol.message}")
    return sol.y[0]


def bass_difference(
    periods: int, p: float, Q: float, initial_share: float = 0.0, *, time_step: float = 1.0, form: str = "linear"
) -> np.ndarray:
    """Discrete Bass model, F ← F + (1 − F)·π(p + Q·F), reported on periods 0..T.

    ``form`` is the step form of :func:`womlab.rules.step_probability`; ``linear`` with a
    step of one period is the textbook difference equation F_{t+1} = F_t + (p + Q·F_t)(1 − F_t).
    """
    spp = int(round(1 / time_step))
    out = np.empty(periods + 1)
    f = out[0] = initial_share
    for period in range(1, periods + 1):
        for _ in range(spp):
            f = f + (1 - f) * float(step_probability(p + Q * f, time_step, form))
        out[period] = f
    return out


def capped_bass_difference(
    periods: int,
    organisations: int,
    initial_customers: float,
    *,
    slope: float,
    satisfied_share: float,
    talkers_per_customer: float,
    external: float = 0.0,
    cap: float | None = None,
    time_step: float = 1.0,
    form: str = "linear",
) -> np.ndarray:
    """The Bass difference model in customer counts with a ceiling on the adoption rate; customers on periods 0..T.

    Each step: talkers = customers × satisfied_share × talkers_per_customer;
    available = organisations − customers; buying = available × π(min(external +
    slope × talkers, cap)), with π the step probability of the step form; buying moves
    from the potential customers to the customers. With ``cap = None`` and
    slope = Q / (organisations × satisfied_share × talkers_per_customer) this is
    :func:`bass_difference` in counts (Bass 1969); the cap is the aggregate form of the
    ``capped`` rule. It is the stock-and-flow form of Bass diffusion (Sterman 2000, ch. 9,
    from memory), and was called ``stock_and_flow`` before.

    Examples
    --------
    >>> c = capped_bass_difference(3, 1000, 10, slope=0.001, satisfied_share=1.0, talkers_per_customer=1.0,
    ...                            external=0.01, cap=0.02)
    >>> [round(float(x), 2) for x in c]
    [10.0, 29.8, 49.2, 68.22]
    """
    spp = int(round(1 / time_step))
    out = np.empty(periods + 1)
    c = out[0] = float(initial_customers)
    for period in range(1, periods + 1):
        for _ in range(spp):
            talkers = c * satisfied_share * talkers_per_customer
            rate = external + slope * talkers
            if cap is not None:
                rate = min(rate, cap)
            c = c + (organisations - c) * float(step_probability(rate, time_step, form))
        out[period] = c
    return out


#: Former name of :func:`capped_bass_difference`, kept so that code written for it keeps working.
stock_and_flow = capped_bass_difference


def aggregate_curve(scenario: Scenario) -> np.ndarray:
    """The aggregate prediction of the customer share on periods 0..T, same step and form.

    ``share`` and ``count``: the Bass difference equation with the mapped p and Q, or on
    the continuous clock (``run.clock = "continuous"``) the Bass closed form itself;
    ``capped``: the capped Bass difference model with the mapped slope and cap. With ``[segments]``,
    a ``[[campaign]]`` calendar or ``market.opens``: the segment model of
    :mod:`womlab.aggregate.markets` (share and count; NaN for other rules). With churn
    (``adoption.churn`` or ``churn_dissatisfied`` above 0) or warnings (``adoption.warning``
    above 0) the installed base of Bass with churn and warnings (:func:`churn_curves`; NaN
    for ``capped``, and with churn or warnings in a market with segments, a calendar or
    openings, which no aggregate model here has together).
    """
    a, run = scenario.adoption, scenario.run
    changing = scenario.segments.active or scenario.campaign.active or bool(openings(scenario.market))
    if (a.churns or a.warns) and changing:  # no aggregate model has both yet
        return np.full(run.periods + 1, np.nan)
    if a.churns or a.warns:
        return churn_curves(scenario, continuous=run.clock == "continuous")["customers"].to_numpy()
    if scenario.segments.active or scenario.campaign.active or openings(scenario.market):  # the segment model
        if a.rule not in ("share", "count"):
            return np.full(run.periods + 1, np.nan)
        return group_curves(scenario)[0][:, 0]
    par = mapped_parameters(scenario)
    if run.clock == "continuous":
        return bass_share(np.arange(run.periods + 1, dtype=float), par.p, par.Q, par.initial_share)
    if a.rule in ("threshold", "cascade"):
        return np.full(run.periods + 1, np.nan)
    if a.rule == "capped":
        n = scenario.market.organisations
        customers = capped_bass_difference(
            run.periods,
            n,
            scenario.n_initial,
            slope=par.slope,
            satisfied_share=a.satisfied_share,
            talkers_per_customer=par.mean_talkers,
            external=par.p,
            cap=par.cap,
            time_step=run.time_step,
            form=run.step_probability,
        )
        return customers / n
    return bass_difference(
        run.periods, par.p, par.Q, par.initial_share, time_step=run.time_step, form=run.step_probability
    )


def churn_curves(scenario: Scenario, *, continuous: bool = False) -> pd.DataFrame:
    """The aggregate counterpart of a scenario with churn or warnings, mapped as
    :func:`mapped_parameters` maps it: Q_s = Q/s, the word of mouth per satisfied-customer
    share (q·N/(N − 1) under ``share``, q·τ̄·k̄·N/(N − 1) under ``count``), and Q⁻ the same with
    ``warning`` for q.

    The difference form on the run's own step and step form, or with ``continuous`` the
    ODE on the period grid. Rules without a Bass counterpart (``threshold``, ``cascade``)
    and ``capped`` give NaN curves.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"adoption": {"churn": 0.05}, "run": {"periods": 12}})
    >>> c = churn_curves(s)
    >>> bool((c["ever_customers"] >= c["customers"]).all()), len(c)
    (True, 13)
    """
    a, run = scenario.adoption, scenario.run
    par = mapped_parameters(scenario)
    t = np.arange(run.periods + 1)
    if a.rule not in ("share", "count"):
        return pd.DataFrame({"period": t, **{c: np.full(t.size, np.nan) for c in CHURN_CURVE_COLUMNS[1:]}})
    s = a.satisfied_share
    n = scenario.market.organisations
    others = n / (n - 1) if n > 1 else 1.0  # as in mapped_parameters: neighbours are among the N − 1 others
    # Q_s = q·unit (Q/s of the mapping), Q⁻ = warning·unit
    unit = others * (1.0 if a.rule == "share" else par.mean_talkers * par.mean_degree)
    q_satisfied = a.word_of_mouth * unit
    common = {
        "satisfied_share": s,
        "churn": a.churn,
        "churn_dissatisfied": a.dissatisfied_churn,
        "initial_share": par.initial_share,
        "warning_rate": a.warning * unit,
        "former_warn": a.former_warn,
        "rejecters_warn": a.rejecters_warn,
    }
    if continuous:
        return bass_churn_ode(t.astype(float), par.p, q_satisfied, **common)
    return bass_churn_difference(
        run.periods, par.p, q_satisfied, time_step=run.time_step, form=run.step_probability, **common
    )
