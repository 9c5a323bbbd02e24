"""Aggregate models of markets whose organisations differ and whose marketing changes.

* :func:`segment_ode` and :func:`segment_difference`: K segments, each with its own external
  influence p_k(t) (a campaign calendar makes it change by period) and word of mouth from every
  segment, dF_k/dt = (p_k(t) + Σ_j Q_kj F_j)(1 − F_k), F_k the customer share of segment k; the
  market's share is Σ_k θ_k F_k, θ_k the segments' shares of the market.
* :func:`van_den_bulte_joshi`: the two-segment model of Van den Bulte & Joshi (2007), influentials
  (share θ) who hear only each other, imitators who hear both — the special case
  Q = [[q₁, 0], [w·q₂, (1 − w)·q₂]].
* :func:`bass_calendar_share`: the Bass model with an external influence that changes by period,
  dF/dt = (p(t) + Q·F)(1 − F), p constant within each period, in closed form piece by piece.
* :func:`mapped_segments`: the mean-field mapping of a scenario's ``[segments]`` and
  ``[[campaign]]`` to those parameters (derivation in its docstring).

References
----------
Van den Bulte, C. & Joshi, Y. V. (2007). New product diffusion with influentials and imitators.
Marketing Science 26(3), 400–421.
Bass, F. M., Krishnan, T. V. & Jain, D. C. (1994). Why the Bass model fits without decision
variables. Marketing Science 13(3), 203–223 (the Generalized Bass Model, in which marketing effort
x(t) multiplies the whole hazard, dF/dt = x(t)(p + qF)(1 − F); womlab's calendar changes p alone).
Horsky, D. & Simon, L. S. (1983). Advertising and the diffusion of new products. Marketing Science
2(1), 1–17 (advertising entering the coefficient of innovation only, the form womlab's calendar
has; cited from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

from womlab.errors import WomlabError
from womlab.rules import step_probability
from womlab.scenario import Scenario
from womlab.scenario.markets import opening_period, openings

__all__ = [
    "SegmentParameters",
    "mapped_segments",
    "segment_ode",
    "segment_difference",
    "van_den_bulte_joshi",
    "bass_calendar_share",
    "external_by_period",
    "opening_by_group",
    "segment_curves",
    "group_curves",
]


@dataclass(frozen=True)
class SegmentParameters:
    """Aggregate parameters of a market of K groups (segments, or region × segment cells).

    Attributes
    ----------
    names : tuple of str
        One per group.
    weights : numpy.ndarray
        θ_k, each group's share of the market (sums to 1).
    p : numpy.ndarray
        External influence per period and group, shape (periods + 1, K); row 0 unused.
    Q : numpy.ndarray
        Word of mouth, (K, K): Q[k, j] is group k's hazard per unit of group j's customer share.
    initial : numpy.ndarray
        Customer share of each group at period 0.
    opens : numpy.ndarray
        Period in which each group enters the market (0: from the start; ``market.opens``).
    """

    names: tuple[str, ...]
    weights: np.ndarray
    p: np.ndarray
    Q: np.ndarray
    initial: np.ndarray
    opens: np.ndarray | None = None


def _segment_values(
    scenario: Scenario,
) -> tuple[tuple[str, ...], np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Names, shares, p multipliers, q multipliers, satisfied shares, mean talkers per segment."""
    a, seg = scenario.adoption, scenario.segments
    if not seg.active:
        one = np.ones(1)
        return ("market",), one, one, one, np.array([a.satisfied_share]), np.array([a.talkers_per_customer.mean])
    groups = seg.groups
    return (
        seg.names,
        np.array([float(g.share or 0.0) for g in groups]),
        np.array([g.external for g in groups]),
        np.array([g.word_of_mouth for g in groups]),
        np.array([a.satisfied_share if g.satisfied_share is None else g.satisfied_share for g in groups]),
        np.array([a.talkers_per_customer.mean if g.talkers is None else g.talkers for g in groups]),
    )


@dataclass(frozen=True)
class _Cells:
    """The groups the aggregate model tracks: segments, or region × segment cells when a campaign or an
    opening names a region (cell r·K + k)."""

    regions: int
    segments: tuple[str, ...]
    region: np.ndarray  # region of each cell
    segment: np.ndarray  # segment of each cell
    weights: np.ndarray  # share of the market


def _cells(scenario: Scenario) -> _Cells:
    names, theta = _segment_values(scenario)[:2]
    named_region = any(c.region is not None for c in scenario.campaign.entries) or any(
        o.region is not None for o in openings(scenario.market)
    )
    R = scenario.market.regions if named_region else 1
    n = scenario.market.organisations
    region_share = np.bincount((np.arange(n) * R // n), minlength=R) / n  # balanced regions
    region = np.repeat(np.arange(R), len(names))
    segment = np.tile(np.arange(len(names)), R)
    return _Cells(R, names, region, segment, region_share[region] * theta[segment])


def _cell_names(cells: _Cells) -> tuple[str, ...]:
    if cells.regions == 1:
        return cells.segments
    return tuple(f"region {r}, {cells.segments[k]}" for r, k in zip(cells.region, cells.segment))


def _matches(cells: _Cells, scenario: Scenario, region: object, segment: str | None) -> np.ndarray:
    if region is not None:
        return cells.region == int(region) if isinstance(region, int) else np.zeros(cells.region.size, bool)
    if segment is not None:
        return cells.segment == scenario.segments.code(segment, "segment")
    return np.ones(cells.region.size, dtype=bool)


def external_by_period(scenario: Scenario) -> np.ndarray:
    """Base p per period and group from the calendar, shape (periods + 1, groups) (segments, or region
    × segment cells when a campaign or an opening names a region), before the segments' multipliers.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"run": {"periods": 4}, "campaign": [{"from": 2, "to": 3, "external": 0.05}]})
    >>> external_by_period(s)[:, 0].round(3).tolist()
    [0.01, 0.01, 0.05, 0.05, 0.01]
    """
    cells = _cells(scenario)
    T, base = scenario.run.periods, float(scenario.adoption.external)
    table = np.full((T + 1, cells.weights.size), base)
    for c in scenario.campaign.entries:
        table[c.first : c.last + 1, _matches(cells, scenario, c.region, c.segment)] = c.p(base)
    return table


def opening_by_group(scenario: Scenario) -> np.ndarray:
    """The period in which each group enters the market (0: from the start), as the engines decide
    it per organisation (the latest opening naming its region or its segment)."""
    cells = _cells(scenario)
    out = np.zeros(cells.weights.size, dtype=np.int64)
    for o in openings(scenario.market):
        hit = _matches(cells, scenario, o.region, o.segment)
        out[hit] = np.maximum(out[hit], opening_period(o, scenario.run.periods))
    return out


def mapped_segments(scenario: Scenario) -> SegmentParameters:
    """Map ``[segments]``, ``[[campaign]]`` and ``market.opens`` to the segment model (mean field).

    Derivation. Segment j holds θ_j·N organisations with τ̄_j talkers each on average, a share
    s_j of its customers satisfied; F_j is its customer share. A potential customer of segment k
    has external influence e_k·p(t) and word of mouth w_k·q (its multipliers). Under the
    mean-field assumption its neighbours are a random draw from the market, so

    * ``share``: T/D ≈ Σ_j θ_j τ̄_j s_j F_j / Σ_j θ_j τ̄_j, hence
      **Q_kj = w_k q θ_j τ̄_j s_j / (Σ_i θ_i τ̄_i − τ̄_k / N)**: its neighbours are drawn from
      the N − 1 others, so D leaves out its own talkers (the N/(N − 1) of
      :func:`womlab.aggregate.mapped_parameters`, to which one segment reduces).
    * ``count``: T ≈ k̄ Σ_j θ_j τ̄_j s_j F_j · N/(N − 1), hence
      **Q_kj = w_k q k̄ θ_j τ̄_j s_j N/(N − 1)**.
    * other rules: Q is NaN (no Bass counterpart, as for one market).

    When a campaign or an opening names a region, the groups are region × segment cells (regions
    balanced, segments placed independently of regions: cell share = region share × θ_k) with
    the same formulas. Closed organisations are still neighbours (D counts them; they have no
    satisfied talkers), so a part that opens late hears the word of mouth of the whole market.
    A region named by its value in a node file (text) is not mapped: its campaign or opening is
    left out of the aggregate model (regions are codes here). Every open group starts at the
    market's initial share (initial customers are drawn from the
    whole market, and those in a closed part are left out); a closed group starts at 0.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"adoption": {"word_of_mouth": 0.4},
    ...     "segments": {"few": {"share": 0.5, "talkers": 3}, "many": {"share": 0.5}}})
    >>> mapped_segments(s).Q.round(3).tolist()
    [[0.3, 0.1], [0.3, 0.1]]
    """
    a, n = scenario.adoption, scenario.market.organisations
    _, _, e_k, w_k, s_k, tau_k = _segment_values(scenario)
    cells = _cells(scenario)
    theta, e, w, sat, tau = (
        cells.weights,
        e_k[cells.segment],
        w_k[cells.segment],
        s_k[cells.segment],
        tau_k[cells.segment],
    )
    p = external_by_period(scenario) * e[None, :]
    talk = theta * tau * sat
    if a.rule == "share":
        denominator = np.full(theta.size, float(np.sum(theta * tau))) - tau / n  # itself not among its neighbours
        Q = w[:, None] * a.word_of_mouth * talk[None, :] / denominator[:, None]
    elif a.rule == "count":
        k = float(n - 1) if scenario.network.kind == "complete" else float(scenario.network.mean_degree)
        Q = w[:, None] * a.word_of_mouth * k * talk[None, :] * (n / (n - 1) if n > 1 else 1.0)
    else:
        Q = np.full((theta.size, theta.size), np.nan)
    opens = opening_by_group(scenario)
    initial = np.where(opens == 0, scenario.n_initial / n, 0.0)
    return SegmentParameters(names=_cell_names(cells), weights=theta, p=p, Q=Q, initial=initial, opens=opens)


def segment_difference(
    p: np.ndarray,
    Q: np.ndarray,
    initial: np.ndarray,
    *,
    time_step: float = 1.0,
    form: str = "linear",
    opens: np.ndarray | None = None,
) -> np.ndarray:
    """The segment model on the engines' clock: F_k ← F_k + (1 − F_k)·π(p_k(period) + Σ_j Q_kj F_j).

    ``p`` has one row per period 0..T (row 0 unused) and one column per group; π is the step
    probability of :func:`womlab.rules.step_probability`. With ``opens`` (a period per group), a
    group stays where it is before the period in which it opens (a market that grows). Returns
    F, shape (T + 1, K).

    Examples
    --------
    >>> import numpy as np
    >>> F = segment_difference(np.full((3, 1), 0.1), np.array([[0.0]]), np.zeros(1))
    >>> F[:, 0].round(3).tolist()
    [0.0, 0.1, 0.19]
    """
    p = np.asarray(p, dtype=float)
    Q = np.asarray(Q, dtype=float)
    spp = int(round(1 / time_step))
    out = np.empty(p.shape)
    f = out[0] = np.asarray(initial, dtype=float)
    for period in range(1, p.shape[0]):
        live = 1.0 if opens is None else (np.asarray(opens) <= period).astype(float)
        for _ in range(spp):
            f = f + live * (1 - f) * step_probability(p[period] + Q @ f, time_step, form)
        out[period] = f
    return out


def segment_ode(
    t: np.ndarray, p: np.ndarray, Q: np.ndarray, initial: np.ndarray, *, rtol: float = 1e-10, atol: float = 1e-12
) -> np.ndarray:
    """dF_k/dt = (p_k(t) + Σ_j Q_kj F_j)(1 − F_k) solved with scipy on the grid ``t``; F of shape (len(t), K).

    ``p`` is a vector (constant external influence per group) or a (periods + 1, K) table, p
    in period k (the times (k − 1, k]) being row k.
    """
    t = np.asarray(t, dtype=float)
    p = np.asarray(p, dtype=float)
    Q = np.asarray(Q, dtype=float)
    table = p if p.ndim == 2 else None

    def rate(time: float, f: np.ndarray) -> np.ndarray:
        pk = p if table is None else table[min(max(int(np.ceil(time - 1e-12)), 1), table.shape[0] - 1)]
        return (pk + Q @ f) * (1 - f)

    # integrate period by period so that the solver never steps across a jump of p
    breaks = [float(k) for k in range(int(np.floor(t[0])) + 1, int(np.ceil(t[-1])))] if table is not None else []
    edges = [float(t[0]), *breaks, float(t[-1])]
    out = np.empty((t.size, Q.shape[0]))
    f = np.asarray(initial, dtype=float)
    out[t == t[0]] = f
    for lo, hi in zip(edges[:-1], edges[1:]):
        if hi <= lo:
            continue
        inside = (t > lo) & (t <= hi)
        grid = np.union1d(t[inside], [hi])
        sol = solve_ivp(rate, (lo, hi), f, t_eval=grid, method="LSODA", rtol=rtol, atol=atol)
        if not sol.success:
            raise WomlabError(f"segment ODE did not solve: {sol.message}")
        out[inside] = sol.y.T[np.searchsorted(grid, t[inside])]
        f = sol.y[:, -1]
    return out


def van_den_bulte_joshi(
    t: np.ndarray,
    theta: float,
    p1: float,
    q1: float,
    p2: float,
    q2: float,
    w: float,
    initial: tuple[float, float] = (0.0, 0.0),
) -> np.ndarray:
    """The influentials-and-imitators model of Van den Bulte & Joshi (2007) on the grid ``t``.

    Influentials (share θ of the market): dF₁/dt = (p₁ + q₁F₁)(1 − F₁); imitators (1 − θ):
    dF₂/dt = (p₂ + q₂[w·F₁ + (1 − w)·F₂])(1 − F₂). Returns a table (len(t), 3): the market's
    share θF₁ + (1 − θ)F₂, then F₁ and F₂.

    References
    ----------
    Van den Bulte, C. & Joshi, Y. V. (2007). New product diffusion with influentials and
    imitators. Marketing Science 26(3), 400–421 (their equations for the two segments' hazards).

    Examples
    --------
    >>> import numpy as np
    >>> out = van_den_bulte_joshi(np.array([0.0, 10.0]), 0.2, 0.01, 0.5, 0.0, 0.4, 0.5)
    >>> out.shape, bool(out[1, 1] > out[1, 2])
    ((2, 3), True)
    """
    Q = np.array([[q1, 0.0], [w * q2, (1 - w) * q2]])
    F = segment_ode(t, np.array([p1, p2]), Q, np.asarray(initial, dtype=float))
    return np.column_stack([theta * F[:, 0] + (1 - theta) * F[:, 1], F])


def bass_calendar_share(p_by_period: np.ndarray, Q: float, initial_share: float = 0.0, *, every: int = 1) -> np.ndarray:
    """Bass share with p changing by period, dF/dt = (p(t) + Q·F)(1 − F), in closed form.

    Within a period p is constant, and from F₀ at its start the Riccati equation gives
    (p + Q·F)/(1 − F) = A·e^{(p+Q)t} with A = (p + Q·F₀)/(1 − F₀), i.e.
    F(t) = (A·e^{(p+Q)t} − p) / (Q + A·e^{(p+Q)t}) (separation of variables and partial
    fractions; with one constant p it is Bass's own closed form). ``p_by_period[k]`` is p in
    period k (row 0 unused). Returns F at times 0, 1/every, ..., T.

    References
    ----------
    Bass, F. M. (1969). Management Science 15(5), 215–227 (the constant-p closed form);
    Bass, Krishnan & Jain (1994), Marketing Science 13(3), 203–223 (time-varying influence).

    Examples
    --------
    >>> import numpy as np
    >>> from womlab.aggregate import bass_share
    >>> F = bass_calendar_share(np.full(11, 0.03), 0.4)
    >>> bool(np.allclose(F, bass_share(np.arange(11.0), 0.03, 0.4)))
    True
    """
    p_by_period = np.asarray(p_by_period, dtype=float)
    T = p_by_period.size - 1
    out = np.empty(T * every + 1)
    f = out[0] = float(initial_share)
    for period in range(1, T + 1):
        p = float(p_by_period[period])
        start = f
        for j in range(1, every + 1):
            out[(period - 1) * every + j] = f = _riccati(start, p, Q, j / every)
    return out


def _riccati(f0: float, p: float, Q: float, t: float) -> float:
    if f0 >= 1.0:
        return 1.0
    if p + Q == 0:
        return f0
    A = (p + Q * f0) / (1 - f0)
    if A == 0:  # p = 0 and F₀ = 0: nothing starts
        return 0.0
    # divided through by A·e^{rt} so that large rt cannot overflow
    decay = np.exp(-(p + Q) * t)
    return float((1 - p / A * decay) / (1 + Q / A * decay))


def segment_curves(scenario: Scenario) -> np.ndarray:
    """Each segment's customer share on periods 0..T from the mapped segment model, on the engines'
    step and step form (:func:`segment_difference`); shape (T + 1, K), one column without segments.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"run": {"periods": 5}, "campaign": [{"from": 2, "to": 3, "multiplier": 3}],
    ...                         "segments": {"few": {"share": 0.2, "external": 2}, "many": {"share": 0.8}}})
    >>> segment_curves(s).shape
    (6, 2)
    """
    par = mapped_segments(scenario)
    run = scenario.run
    return segment_difference(
        par.p, par.Q, par.initial, time_step=run.time_step, form=run.step_probability, opens=par.opens
    )


def group_curves(scenario: Scenario, by: str | None = None) -> tuple[np.ndarray, tuple[str, ...]]:
    """The aggregate customer share per group on periods 0..T, and the groups' names.

    ``by = None``: the whole market (customers over all N organisations, the final market);
    ``"segment"`` or ``"region"``: each segment's or region's share. Under the mean-field
    assumption regions differ only by their campaigns and opening periods; without either, each
    region's column is the market's curve.
    """
    F = segment_curves(scenario)
    cells = _cells(scenario)
    w = cells.weights
    if by is None:
        return (F @ w)[:, None], ("market",)
    if by == "segment":
        of, names = cells.segment, cells.segments
    elif by == "region":
        of, names = cells.region, tuple(str(r) for r in range(scenario.market.regions))
        if cells.regions == 1:
            return np.repeat((F @ w)[:, None], len(names), axis=1), names
    else:
        raise ValueError(f'by must be "segment" or "region", got {by!r}')
    out = np.empty((F.shape[0], len(names)))
    for g in range(len(names)):
        inside = of == g
        out[:, g] = F[:, inside] @ w[inside] / w[inside].sum()
    return out, names
