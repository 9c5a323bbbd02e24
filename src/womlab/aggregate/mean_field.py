"""The degree-based (heterogeneous) mean-field model of adoption on a network.

Built from a network's actual degree distribution (anything with a ``degree()`` method,
or a degree sequence), with the scenario's own rule (:func:`womlab.rules.adoption_rate`):
how much of the gap between a network and the Bass curve degree heterogeneity explains.

References
----------
Pastor-Satorras, R. & Vespignani, A. (2001). Epidemic spreading in scale-free networks.
Physical Review Letters 86(14), 3200–3203.
"""

from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp

from womlab.errors import WomlabError
from womlab.rules import adoption_rate, step_probability
from womlab.scenario import Adoption, Scenario

__all__ = ["degree_classes", "degree_mean_field", "degree_mean_field_curve"]


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
    >>> from womlab.aggregate import bass_share
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
