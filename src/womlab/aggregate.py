"""Aggregate models of growth: one market, everyone talks to everyone.

* The Bass model, dF/dt = (1 − F)(p + Q·F), in closed form (:func:`bass_share`) and as
  an ODE solved with scipy (:func:`bass_ode`).
* Its discrete difference equation, in either step form (:func:`bass_difference`):
  F ← F + (1 − F)·π(p + Q·F), with π the step probability of :mod:`womlab.rules`.
* The stock-and-flow difference model (:func:`stock_and_flow`): potential customers and
  customers as two stocks, talkers = customers × satisfied share × talkers per
  customer, buying = available × min(external + slope × talkers, cap).
* :func:`mapped_parameters`, the micro-to-macro mapping from a scenario.
* The degree-based (heterogeneous) mean-field model (:func:`degree_mean_field`), built
  from a network's actual degree distribution, as an ODE or in either step form.

References
----------
Bass, F. M. (1969). A new product growth for model consumer durables. Management
Science 15(5), 215–227.
Pastor-Satorras, R. & Vespignani, A. (2001). Epidemic spreading in scale-free networks.
Physical Review Letters 86(14), 3200–3203.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

from .errors import WomlabError
from .rules import adoption_rate, step_probability
from .scenario import Adoption, Scenario

__all__ = [
    "AggregateParameters",
    "mapped_parameters",
    "bass_share",
    "bass_density",
    "bass_ode",
    "bass_difference",
    "stock_and_flow",
    "aggregate_curve",
    "bass_peak_time",
    "degree_classes",
    "degree_mean_field",
    "degree_mean_field_curve",
]


@dataclass(frozen=True)
class AggregateParameters:
    """Aggregate parameters mapped from a scenario.

    Attributes
    ----------
    p : float
        External influence (Bass coefficient of innovation), per period.
    Q : float
        Aggregate word-of-mouth strength (Bass coefficient of imitation), per period.
    initial_share : float
        F(0), the share of the market that are customers at period 0.
    mean_degree : float
        k̄ of the network (N − 1 on the complete network).
    mean_talkers : float
        τ̄, mean talkers per organisation.
    slope : float
        Stock-and-flow slope: buying per potential customer per talker in the market.
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
    if scenario.network.kind == "complete":
        return float(scenario.market.organisations - 1)
    if scenario.network.kind == "edgelist":
        from .networks import read_edgelist

        return float(read_edgelist(scenario.network.path, scenario.network.nodes_path).degree().mean())
    return float(scenario.network.mean_degree)


def mapped_parameters(scenario: Scenario) -> AggregateParameters:
    """Map a scenario to aggregate Bass and stock-and-flow parameters (mean field).

    Derivation. Let F be the customer share and s the satisfied share, so a share s·F of
    organisations are satisfied customers. Under the mean-field assumption a potential
    customer's neighbours are a random draw from the market, so a share s·F of its k
    neighbours talk, each with τ̄ talkers on average:

    * ``share``: λ = p + q·T/D ≈ p + q·(s·F·k·τ̄)/(k·τ̄) = p + q·s·F, hence **Q = q·s**,
      independent of degree and talkers. On the complete network this is exact up to
      the factor N/(N − 1) (an organisation is not its own neighbour).
    * ``count``: λ = p + q·T ≈ p + q·τ̄·k̄·s·F, hence **Q = q·s·τ̄·k̄**; on a random regular
      graph with fixed talkers k̄ = k exactly, and on the complete network k̄ = N − 1.
    * ``capped``: λ = min(p + q·T, cap) ≈ min(p + Q·F, cap) with the ``count`` Q. In
      stock-and-flow terms talkers = C·s·τ̄ (C customers), and each potential customer
      meets a share k̄/N of them, so buying = available × min(p + slope·talkers, cap) with
      **slope = q·k̄/N**.
    * ``threshold`` and ``cascade`` have no Bass counterpart (a threshold crossing is all
      or nothing; a cascade customer talks for one period only), so **Q = NaN** and
      :func:`aggregate_curve` is NaN: their runs are shown without an aggregate curve.

    Examples
    --------
    >>> from womlab import Scenario, mapped_parameters
    >>> s = Scenario.from_dict({"adoption": {"rule": "share", "word_of_mouth": 0.5, "satisfied_share": 0.6}})
    >>> round(mapped_parameters(s).Q, 6)
    0.3
    """
    a, m = scenario.adoption, scenario.market
    n = m.organisations
    k = _mean_degree(scenario)
    tau = a.talkers_per_customer.mean
    s = a.satisfied_share
    q = a.word_of_mouth
    if a.rule == "share":
        Q = q * s
    elif a.rule in ("threshold", "cascade"):
        Q = float("nan")
    else:
        Q = q * s * tau * k
    return AggregateParameters(
        p=a.external,
        Q=Q,
        initial_share=scenario.n_initial / n,
        mean_degree=k,
        mean_talkers=tau,
        slope=q * k / n if a.rule != "share" else q / (n * max(tau, 1e-300)),
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


def bass_peak_time(p: float, Q: float) -> float:
    """Time of the Bass adoption-rate peak from F(0) = 0: t* = ln(Q/p)/(p + Q) (Bass 1969)."""
    return float(np.log(Q / p) / (p + Q)) if Q > p > 0 else 0.0


def bass_ode(t: np.ndarray, p: float, Q: float, initial_share: float = 0.0, *, rtol: float = 1e-10, atol: float = 1e-12) -> np.ndarray:
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


def stock_and_flow(
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
    """Stock-and-flow difference model; returns customers on periods 0..T.

    Each step: talkers = customers × satisfied_share × talkers_per_customer;
    available = organisations − customers; buying = available × π(min(external +
    slope × talkers, cap)), with π the step probability of the step form; buying moves
    from the potential-customer stock to the customer stock.
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


def aggregate_curve(scenario: Scenario) -> np.ndarray:
    """The aggregate prediction of the customer share on periods 0..T, same step and form.

    ``share`` and ``count``: the Bass difference equation with the mapped p and Q, or on
    the continuous clock (``run.clock = "continuous"``) the Bass closed form itself;
    ``capped``: the stock-and-flow model with the mapped slope and cap.
    """
    a, run = scenario.adoption, scenario.run
    par = mapped_parameters(scenario)
    if run.clock == "continuous":
        return bass_share(np.arange(run.periods + 1, dtype=float), par.p, par.Q, par.initial_share)
    if a.rule in ("threshold", "cascade"):
        return np.full(run.periods + 1, np.nan)
    if a.rule == "capped":
        n = scenario.market.organisations
        customers = stock_and_flow(
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
    return bass_difference(run.periods, par.p, par.Q, par.initial_share, time_step=run.time_step, form=run.step_probability)


# ----------------------------------------------------------------------------- degree mean field
def degree_classes(degrees: np.ndarray | object) -> tuple[np.ndarray, np.ndarray]:
    """Degree classes k and their shares P(k) of a network or a degree sequence.

    Parameters
    ----------
    degrees : ReferralNetwork or array of int
        Anything with a ``degree()`` method (a :class:`~womlab.networks.ReferralNetwork`),
        or one degree per organisation.

    Returns
    -------
    k : numpy.ndarray
        The distinct degrees, ascending (float).
    share : numpy.ndarray
        P(k), summing to 1.

    Raises
    ------
    WomlabError
        If the sequence is empty or has a negative degree.
    """
    seq = degrees.degree() if hasattr(degrees, "degree") else degrees
    seq = np.asarray(seq, dtype=np.int64).ravel()
    if seq.size == 0:
        raise WomlabError("degree_mean_field needs at least one degree, got an empty sequence")
    if (seq < 0).any():
        raise WomlabError(f"degrees must be >= 0, got {int(seq.min())}")
    k, counts = np.unique(seq, return_counts=True)
    return k.astype(float), counts / seq.size


def degree_mean_field(
    degrees: np.ndarray | object,
    adoption: Adoption,
    periods: int,
    *,
    initial_share: float = 0.0,
    time_step: float = 1.0,
    form: str = "ode",
    by_degree: bool = False,
) -> np.ndarray | tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Degree-based (heterogeneous) mean-field model of adoption on a network.

    Organisations are grouped by degree k, with shares P(k) from the network's actual
    degree sequence; ρₖ is the customer share of class k. A random neighbour (the end of
    a random tie) has degree k with probability k·P(k)/k̄, so the chance that it is a
    satisfied customer is

        Θ = Σₖ k·P(k)·s·ρₖ / k̄ .

    A potential customer of degree k then sees, on average, talking talkers Tₖ = τ̄·k·Θ
    out of Dₖ = τ̄·k, and its rate is the scenario's rule applied to them
    (:func:`womlab.rules.adoption_rate`, the one formula both engines use):
    ``share`` p + q·Θ (p alone for k = 0), ``count`` p + q·τ̄·k·Θ, ``capped``
    min(p + q·τ̄·k·Θ, cap). Each class follows dρₖ/dt = (1 − ρₖ)·λₖ(Θ).

    On a regular graph (every k equal) with the ``count`` rule this is exactly the Bass
    model with Q = q·s·τ̄·k; with the ``share`` rule exactly Bass with Q = q·s.

    Parameters
    ----------
    degrees : ReferralNetwork or array of int
        The network (its ``degree()``) or a degree sequence.
    adoption : womlab.scenario.Adoption
        Rule, p, q, satisfied share s, talkers τ̄ (its mean) and cap.
    periods : int
        Horizon T; the result is reported on periods 0..T.
    initial_share : float
        ρₖ(0) for every class (initial customers chosen at random).
    time_step : float
        Step of the discrete forms, 1/n of a period.
    form : str
        ``"ode"``: the continuous model, solved with ``scipy.integrate.solve_ivp``
        (``success`` checked); ``"exponential"`` or ``"linear"``: the step form of
        :func:`womlab.rules.step_probability`, ρₖ ← ρₖ + (1 − ρₖ)·π(λₖ), matching a
        discrete run on the same grid.
    by_degree : bool
        Also return the classes and ρₖ per period.

    Returns
    -------
    share : numpy.ndarray
        F = Σₖ P(k)·ρₖ on periods 0..T.
    k, rho : numpy.ndarray
        Only with ``by_degree``: the degree classes and an array (T + 1, classes).

    Raises
    ------
    WomlabError
        On an unknown ``form`` or if the ODE solver fails.

    References
    ----------
    Pastor-Satorras, R. & Vespignani, A. (2001). Epidemic spreading in scale-free
    networks. Physical Review Letters 86(14), 3200–3203.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab.scenario import Adoption
    >>> a = Adoption(rule="count", external=0.01, word_of_mouth=0.05, satisfied_share=1.0)
    >>> f = degree_mean_field(np.full(100, 6), a, 10, form="ode")
    >>> bool(np.allclose(f, bass_share(np.arange(11), 0.01, 0.3), atol=1e-7))
    True
    """
    k, pk = degree_classes(degrees)
    kbar = float(k @ pk)
    tau = float(adoption.talkers_per_customer.mean)
    s = float(adoption.satisfied_share)
    weight = k * pk / kbar if kbar > 0 else np.zeros_like(k)
    talkers = tau * k

    def rates(rho: np.ndarray) -> np.ndarray:
        theta = float(weight @ (s * rho))
        return adoption_rate(adoption.rule, talkers * theta, talkers, adoption)

    rho0 = np.full(k.size, float(initial_share))
    if form == "ode":
        t = np.arange(periods + 1, dtype=float)
        sol = solve_ivp(
            lambda _, rho: (1 - rho) * rates(rho),
            (0.0, float(periods)),
            rho0,
            t_eval=t,
            method="LSODA",
            rtol=1e-10,
            atol=1e-12,
        )
        if not sol.success:
            raise WomlabError(f"degree mean-field ODE did not solve: {sol.message}")
        rho_t = np.clip(sol.y.T, 0.0, 1.0)
    elif form in ("exponential", "linear"):
        spp = int(round(1 / time_step))
        rho_t = np.empty((periods + 1, k.size))
        rho = rho_t[0] = rho0
        for period in range(1, periods + 1):
            for _ in range(spp):
                rho = rho + (1 - rho) * step_probability(rates(rho), time_step, form)
            rho_t[period] = rho
    else:
        raise WomlabError(f"degree_mean_field form must be one of ode, exponential, linear; got {form!r}")
    share = rho_t @ pk
    return (share, k, rho_t) if by_degree else share


def degree_mean_field_curve(scenario: Scenario, network: object, *, form: str | None = None) -> np.ndarray:
    """:func:`degree_mean_field` for a scenario on ``network``, on periods 0..T.

    ``form`` defaults to the run's own step form and time step (the ODE on the continuous
    clock), so the curve sits beside the network runs on the same grid; ``form="ode"``
    gives the continuous model.
    """
    run = scenario.run
    if form is None and run.clock == "continuous":
        form = "ode"
    return degree_mean_field(
        network,
        scenario.adoption,
        run.periods,
        initial_share=scenario.n_initial / scenario.market.organisations,
        time_step=run.time_step,
        form=run.step_probability if form is None else form,
    )
