"""Successive product generations: the Norton–Bass model, in closed form and as flows between stocks.

Generation i is launched at τ_i (τ_1 = 0 usually) with its own p_i, q_i and its own incremental
market m_i (organisations that only the i-th generation brings in). With
F_i(t) = Bass(t − τ_i; p_i, q_i) (0 before τ_i), Norton & Bass (1987) give the customers of each
generation at time t:

    S_1 = m_1 F_1 (1 − F_2)
    S_2 = F_2 (m_2 + m_1 F_1) (1 − F_3)
    S_i = F_i (m_i + A_{i−1}) (1 − F_{i+1}),  A_i = F_i (m_i + A_{i−1}),  A_0 = 0

(:func:`norton_bass`). Norton & Bass used one p and q for every generation; the form with a p and
q per generation is the usual extension (e.g. Jiang & Jain 2012; cited from memory).

:func:`norton_bass_ode` writes the same model as flows between stocks — untapped incremental
market P_i, customers G_i of generation i — so that each term has a meaning a simulation can
copy: the untapped P_i = m_i (1 − F_i) enters at the Bass hazard h_i = p_i + q_i F_i (0 before τ_i); customers of
generation i − 1 upgrade at the same h_i; whatever arrives at generation i moves on at once to
i + 1 with probability F_{i+1} (the share of generation i + 1's potential already reached), so
late arrivals leapfrog to the newest generation. The ODE is solved with scipy; the test holds
the two together.

References
----------
Norton, J. A. & Bass, F. M. (1987). A diffusion theory model of adoption and substitution for
successive generations of high-technology products. Management Science 33(9), 1069–1086.
"""

from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp

from womlab.errors import WomlabError

__all__ = ["norton_bass", "norton_bass_ode", "generations_difference", "mapped_generations"]


def _bass(t: np.ndarray, p: float, q: float) -> np.ndarray:
    t = np.maximum(t, 0.0)
    if p <= 0:
        return np.zeros_like(t)
    e = np.exp(-(p + q) * t)
    return (1 - e) / (1 + (q / p) * e)


def _check(launch: np.ndarray, p: np.ndarray, q: np.ndarray, market: np.ndarray) -> None:
    if not (launch.shape == p.shape == q.shape == market.shape and launch.ndim == 1 and launch.size):
        raise ValueError("launch, p, q and market need one value per generation each")
    if np.any(np.diff(launch) < 0):
        raise ValueError(f"generations must be launched in order, got launch times {launch.tolist()}")


def norton_bass(t: np.ndarray, launch: np.ndarray, p: np.ndarray, q: np.ndarray, market: np.ndarray) -> np.ndarray:
    """Customers of each generation at times ``t`` (Norton & Bass 1987, closed form); shape (len(t), G).

    Parameters
    ----------
    t : array
        Times.
    launch, p, q, market : array
        Per generation: launch time τ_i, coefficients p_i and q_i, incremental market m_i.

    Examples
    --------
    >>> import numpy as np
    >>> S = norton_bass(np.array([0.0, 10.0, 40.0]), np.array([0.0, 8.0]), np.array([0.02, 0.02]),
    ...                 np.array([0.4, 0.4]), np.array([1000.0, 500.0]))
    >>> S.round(0).tolist()
    [[0.0, 0.0], [713.0, 74.0], [0.0, 1500.0]]
    """
    t = np.asarray(t, dtype=float)
    launch, p, q, market = (np.asarray(x, dtype=float) for x in (launch, p, q, market))
    _check(launch, p, q, market)
    F = np.column_stack([_bass(t - launch[i], p[i], q[i]) * (t >= launch[i]) for i in range(launch.size)])
    G = launch.size
    out = np.empty((t.size, G))
    reached = np.zeros(t.size)  # A_{i-1}
    for i in range(G):
        reached = F[:, i] * (market[i] + reached)
        out[:, i] = reached * (1 - F[:, i + 1]) if i + 1 < G else reached
    return out


def norton_bass_ode(
    t: np.ndarray,
    launch: np.ndarray,
    p: np.ndarray,
    q: np.ndarray,
    market: np.ndarray,
    *,
    rtol: float = 1e-10,
    atol: float = 1e-8,
) -> np.ndarray:
    """Customers of each generation at times ``t`` from the stock-and-flow form (module notes), solved
    with scipy between launches; shape (len(t), G).

    Examples
    --------
    >>> import numpy as np
    >>> args = (np.array([0.0, 8.0]), np.array([0.02, 0.02]), np.array([0.4, 0.4]), np.array([1000.0, 500.0]))
    >>> bool(np.allclose(norton_bass_ode(np.array([0.0, 10.0, 40.0]), *args),
    ...                  norton_bass(np.array([0.0, 10.0, 40.0]), *args), atol=1e-4))
    True
    """
    t = np.asarray(t, dtype=float)
    launch, p, q, market = (np.asarray(x, dtype=float) for x in (launch, p, q, market))
    _check(launch, p, q, market)
    G = launch.size

    def flows(time: float, y: np.ndarray) -> np.ndarray:
        F, C = y[:G], y[G:]  # F_i: share of generation i's own potential reached (P_i = m_i (1 - F_i))
        live = launch <= time
        reached = np.where(live, F, 0.0)
        h = np.where(live, p + q * reached, 0.0)
        dF = h * (1 - F)
        dC = np.zeros(G)
        carry = 0.0
        for i in range(G):
            arriving = h[i] * market[i] * (1 - F[i]) + (h[i] * C[i - 1] if i else 0.0) + carry
            onward = reached[i + 1] if i + 1 < G else 0.0
            dC[i] += arriving * (1 - onward)
            carry = arriving * onward
            if i:
                dC[i - 1] -= h[i] * C[i - 1]
        return np.concatenate([dF, dC])

    y = np.zeros(2 * G)
    edges = sorted({float(t.min()), float(t.max()), *(float(x) for x in launch if t.min() < x < t.max())})
    out = np.empty((t.size, G))
    out[t == edges[0]] = y[G:]
    for lo, hi in zip(edges[:-1], edges[1:]):
        inside = (t > lo) & (t <= hi)
        grid = np.union1d(t[inside], [hi])
        sol = solve_ivp(flows, (lo, hi), y, t_eval=grid, method="LSODA", rtol=rtol, atol=atol)
        if not sol.success:
            raise WomlabError(f"Norton-Bass flows did not solve: {sol.message}")
        out[inside] = sol.y[G:].T[np.searchsorted(grid, t[inside])]
        y = sol.y[:, -1]
    return out


def generations_difference(
    periods: int,
    launch: np.ndarray,
    p: np.ndarray,
    q: np.ndarray,
    satisfied: np.ndarray,
    initial: float,
    *,
    time_step: float = 1.0,
    form: str = "linear",
) -> np.ndarray:
    """The mean field of womlab's product runs on the complete network, on the engines' clock.

    Shares x_g of the market on generation g (x₀ not yet a customer); talk about g is s_g·x_g.
    Per step, from the state at its start: x₀ enters at π(p₁ + q₁ Σ_g s_g x_g), choosing g in
    proportion to s_g x_g among the launched generations (the newest when no one talks); x_g moves
    on at π(p_{g+1} + q_{g+1} Σ_{k>g} s_k x_k / Σ_{k≥g} s_k x_k), choosing k > g in proportion to
    s_k x_k (:mod:`womlab.dynamics.products`). As the step shrinks, with one s for all, it
    approaches Norton & Bass with the whole market in the first generation's potential and
    q₁·s as its word of mouth (tested). Returns x_g per period 0..T, shape (T + 1, G).
    """
    from womlab.rules import step_probability

    launch, p, q, s = (np.asarray(x, dtype=float) for x in (launch, p, q, satisfied))
    G, spp = launch.size, int(round(1 / time_step))
    x = np.zeros(G)
    x[0] = initial
    out = np.empty((periods + 1, G))
    out[0] = x
    for step in range(1, periods * spp + 1):
        period = (step + spp - 1) // spp
        newest = int(np.sum(launch <= period))
        talk = s * x
        move = np.zeros((G + 1, G))  # from (0 = not a customer, g) to generation
        heard = talk[:newest].sum()
        enter = (1 - x.sum()) * float(step_probability(p[0] + q[0] * heard, time_step, form))
        move[0, :newest] = enter * (talk[:newest] / heard if heard > 0 else np.eye(newest)[-1])
        for g in range(newest - 1):
            newer, current = talk[g + 1 : newest].sum(), talk[g:newest].sum()
            r = p[g + 1] + (q[g + 1] * newer / current if current > 0 else 0.0)
            leave = x[g] * float(step_probability(r, time_step, form))
            share = talk[g + 1 : newest] / newer if newer > 0 else np.eye(newest - g - 1)[0]
            move[g + 1, g + 1 : newest] = leave * share
        x = x + move.sum(axis=0) - move[1:].sum(axis=1)
        if step % spp == 0:
            out[period] = x
    return out


def mapped_generations(scenario) -> dict[str, np.ndarray]:  # noqa: ANN001 - a Scenario
    """Launch periods, p, q, satisfied shares and values of a scenario's generations (the first from
    ``[adoption]``), as :func:`generations_difference` and :func:`norton_bass` take them."""
    generations = scenario.product.generations(scenario.adoption)
    return {
        name: np.array([getattr(g, attr) for g in generations], dtype=float)
        for name, attr in (
            ("launch", "launch"),
            ("p", "external"),
            ("q", "word_of_mouth"),
            ("satisfied", "satisfied_share"),
            ("value", "value_per_period"),
        )
    }
