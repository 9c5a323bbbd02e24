"""Exact expected adoption on networks where it can be written down.

Three results, each derived here and checked against the engines and the published forms
in the tests; they bound, or exactly predict, what a network run should give.

The two-organisation network (a perfect matching: N/2 pairs). Each organisation feels p,
and p + q once its one neighbour has adopted (the ``share`` rule with equal talkers and
every customer satisfied). A pair leaves "neither adopted" at rate 2p; one member is then
a customer and the other adopts at rate p + q. For one member A, with B adopting first at
s < t and A still out at t,

    P(A out at t) = e^{−2pt} + ∫₀ᵗ p e^{−2ps} e^{−(p+q)(t−s)} ds
                  = (q e^{−2pt} − p e^{−(p+q)t}) / (q − p)        (q ≠ p),

and e^{−2pt}(1 + pt) at q = p. :func:`two_organisation_share` is 1 minus this. It is the
slowest adoption on any network without isolated organisations, and the Bass curve (the
infinite complete network) the fastest (Fibich & Levin 2023).

The k-regular tree (and the networks that look like one locally: the ring, k = 2, and
random k-regular networks as N grows). Let u(t) be the probability that an organisation
has not adopted by t when one of its neighbours is held out of the market (the *cavity*);
its k − 1 other neighbours are then independent copies of the same process. Under the
``share`` rule with equal talkers each satisfied customer neighbour adds a = q/k to the
rate (``count``: a = q·τ), a neighbour adopts satisfied with probability s, and the start
is random with share x₀. With τ a neighbour's adoption time,

    u(t) = (1 − x₀) e^{−pt} g(t)^{k−1},   g(t) = 1 − s + s E[e^{−a (t − τ)⁺}],
    F(t) = 1 − (1 − x₀) e^{−pt} g(t)^k   (the organisation with all k neighbours),

because given that the organisation has not adopted, each neighbour's subtree evolves as a
cavity process and the survival factor exp(−∫ rate) splits into one factor per neighbour.
Differentiating, g′ = −a (g − (1 − s) − s u) with g(0) = 1: one ODE
(:func:`regular_tree_share` with ``time_step=None``). For k = 2, s = 1, x₀ = 0 it has the
closed form F(t) = 1 − exp(−(p + q)t + (q/p)(1 − e^{−pt})), the two-sided ring
(Fibich & Gibori 2010).

The array engine's own step. With a step Δt and the exponential step form, an
organisation's survival over step n is exp(−(p + a·Aₙ₋₁)Δt), Aₙ₋₁ its satisfied-customer
neighbours at the start of the step; the product over steps again splits per neighbour,
so with τ the step of a neighbour's adoption (0 for the initial customers),

    uₙ = (1 − x₀) e^{−p n Δt} gₙ^{k−1},   gₙ = 1 − s + s E[e^{−a Δt (n − τ)⁺}],

and E[e^{−aΔt (n − τ)⁺}] = Gₙ + uₙ₋₁ with Gₙ = e^{−aΔt}(Gₙ₋₁ + P(τ = n − 1)), G₀ = 0 — a
recursion exact on the tree for every Δt (the step's own law, not an approximation of the
ODE). The linear step form does not split per neighbour and has no such law here.

References
----------
Fibich, G. & Levin, T. (2023). Universal bounds for spreading on networks. arXiv:2312.05450.
Fibich, G. & Gibori, R. (2010). Aggregate diffusion dynamics in agent-based models with a
spatial structure. Operations Research 58(5), 1450–1468.
Bass, F. M. (1969). A new product growth model for consumer durables. Management Science
15(5), 215–227.
"""

from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp

from womlab.errors import WomlabError

__all__ = ["two_organisation_share", "ring_share", "regular_tree_share"]


def two_organisation_share(t: np.ndarray | float, p: float, q: float) -> np.ndarray:
    """Expected adoption on the two-organisation network (N/2 pairs), from no customers.

    1 − (q e^{−2pt} − p e^{−(p+q)t}) / (q − p), and 1 − e^{−2pt}(1 + pt) at q = p (derived
    in the module notes). The lower bound of Fibich & Levin (2023).

    Examples
    --------
    >>> round(float(two_organisation_share(0.0, 0.01, 0.3)), 12)
    0.0
    >>> round(float(two_organisation_share(10.0, 0.02, 0.02)), 6)   # q = p
    0.195616
    """
    t = np.asarray(t, dtype=float)
    if p <= 0:
        return np.zeros_like(t)
    if abs(q - p) < 1e-12 * max(p, q):
        return 1 - np.exp(-2 * p * t) * (1 + p * t)
    return 1 - (q * np.exp(-2 * p * t) - p * np.exp(-(p + q) * t)) / (q - p)


def ring_share(t: np.ndarray | float, p: float, q: float) -> np.ndarray:
    """Expected adoption on the two-sided ring (``share`` rule, everyone satisfied, no
    initial customers): 1 − exp(−(p + q)t + (q/p)(1 − e^{−pt})) (Fibich & Gibori 2010).

    Examples
    --------
    >>> round(float(ring_share(5.0, 0.01, 0.4)), 6)
    0.094418
    """
    t = np.asarray(t, dtype=float)
    if p <= 0:
        return np.zeros_like(t)
    return 1 - np.exp(-(p + q) * t + (q / p) * (1 - np.exp(-p * t)))


def regular_tree_share(
    periods: int,
    degree: int,
    external: float,
    per_neighbour: float,
    *,
    satisfied_share: float = 1.0,
    initial_share: float = 0.0,
    time_step: float | None = None,
) -> np.ndarray:
    """Expected customer share on periods 0..T on a k-regular tree (module notes).

    Parameters
    ----------
    periods : int
        T.
    degree : int
        k ≥ 1.
    external : float
        p per period.
    per_neighbour : float
        a, the rate one satisfied-customer neighbour adds: q/k under ``share`` with equal
        talkers, q·τ under ``count`` with τ talkers each.
    satisfied_share : float
        s.
    initial_share : float
        x₀, the share of initial customers, placed at random.
    time_step : float, optional
        None: the continuous-time law (ODE, solved with ``solve_ivp``); a step Δt (a whole
        number of steps per period): the array engine's exact law with the exponential
        step form.

    Examples
    --------
    >>> f = regular_tree_share(40, 2, 0.01, 0.2, time_step=None)
    >>> bool(np.allclose(f, ring_share(np.arange(41.0), 0.01, 0.4), atol=1e-8))
    True
    """
    if degree < 1 or periods < 0:
        raise WomlabError(f"regular_tree_share needs degree >= 1 and periods >= 0, got {degree}, {periods}")
    p, a, s, x0, k = float(external), float(per_neighbour), float(satisfied_share), float(initial_share), int(degree)
    t = np.arange(periods + 1, dtype=float)
    if time_step is None:

        def rhs(time: float, y: np.ndarray) -> np.ndarray:
            g = y[0]
            u = (1 - x0) * np.exp(-p * time) * g ** (k - 1)
            return np.array([-a * (g - (1 - s) - s * u)])

        sol = solve_ivp(rhs, (0.0, float(periods)), [1.0], t_eval=t, method="LSODA", rtol=1e-10, atol=1e-12)
        if not sol.success:
            raise WomlabError(f"the tree law did not solve: {sol.message}")
        return 1 - (1 - x0) * np.exp(-p * t) * sol.y[0] ** k
    spp = int(round(1 / time_step))
    if spp < 1 or abs(spp * time_step - 1) > 1e-9:
        raise WomlabError(f"time_step must divide a period into whole steps, got {time_step}")
    steps = periods * spp
    decay = np.exp(-a * time_step)
    u = np.empty(steps + 1)
    g_out = np.empty(steps + 1)
    u[0] = 1 - x0  # cavity: not an initial customer
    g_out[0] = 1.0
    big_g = 0.0
    p_tau = x0  # P(τ = 0): an initial customer
    for n in range(1, steps + 1):
        big_g = decay * (big_g + p_tau)  # Σ_{τ ≤ n−1} P(τ) e^{−aΔt(n − τ)}
        g = 1 - s + s * (big_g + u[n - 1])
        u[n] = (1 - x0) * np.exp(-p * n * time_step) * g ** (k - 1)
        g_out[n] = g
        p_tau = u[n - 1] - u[n]  # P(τ = n), used at the next step
    n = np.arange(steps + 1)
    f = 1 - (1 - x0) * np.exp(-p * n * time_step) * g_out**k
    return f[::spp]
