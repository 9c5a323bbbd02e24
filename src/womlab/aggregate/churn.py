"""Bass with churn and warnings: the aggregate counterpart of customers who leave and warn.

Everyone talks to everyone, as in :mod:`womlab.aggregate.models`, and customers leave at
rate δ per period and do not come back. With the installed base split into satisfied
customers A_s and dissatisfied ones A_d (only the satisfied talk, and each kind has its
own churn rate), the former customers L and the potential customers 1 − A_s − A_d − L,
as shares of the market:

    dA_s/dt = s·(p + Q_s·A_s)(1 − A_s − A_d − L) − δ_s·A_s
    dA_d/dt = (1 − s)·(p + Q_s·A_s)(1 − A_s − A_d − L) − δ_d·A_d
    dL/dt   = δ_s·A_s + δ_d·A_d

with Q_s = Q/s the word of mouth per satisfied-customer share (Q the mapped Bass Q of
:func:`womlab.aggregate.models.mapped_parameters`, which counts satisfied customers through
s). With one rate δ for both, A = A_s + A_d keeps A_s = s·A and this is the Bass model with
churn dA/dt = (p + Q·A)(1 − A − L) − δ·A (the disadoption extension of Bass; Mahajan,
Muller & Bass 1990, review in *J. Marketing* 54(1), 1–26, §"Repeat purchase and
disadoption"). The difference form takes the engine's steps: in a step of length dt a
potential customer adopts with the step probability π(p + Q_s·A_s) and a customer at the
start of the step leaves with π(δ), both from the stocks at the start of the step (a
customer cannot leave in the step it adopted), so it is the mean-field recursion of the
array engine (Kurtz 1970 on the complete network).

Warnings (negative word of mouth). Potential customers are also lost to rejection, at rate
Q⁻·X, X the share of warners (dissatisfied customers A_d, and with ``former_warn`` the
former customers, with ``rejecters_warn`` the rejecters R): dR/dt = Q⁻·X·(potential), the
potential share being 1 − A_s − A_d − L − R (Goldenberg, Libai, Moldovan & Muller 2007 give
the agent form; this is its mean field). In the difference form the two clocks compete
within a step with constant hazards h_a and h_r: a potential customer adopts with
probability h_a/(h_a + h_r)·(1 − e^{−(h_a + h_r)}) and rejects with h_r/(h_a + h_r)·(the
same), the competing-risks law (Kalbfleisch & Prentice 2002, *The Statistical Analysis of
Failure Time Data*, ch. 8) that the engines' two resistances give.

The scenario's mapping is :func:`womlab.aggregate.models.churn_curves`.

The mean time a customer stays, in periods, is dt / (1 − e^{−h}) with h the step hazard of
δ (:func:`expected_stay`): the mean of a geometric number of steps; 1/δ as the step shrinks
and 1/(1 − e^{−δ}) for one-period exponential steps.

References
----------
Bass, F. M. (1969). A new product growth for model consumer durables. Management Science
15(5), 215–227.
Mahajan, V., Muller, E. & Bass, F. M. (1990). New product diffusion models in marketing: a
review and directions for research. Journal of Marketing 54(1), 1–26.
Goldenberg, J., Libai, B., Moldovan, S. & Muller, E. (2007). The NPV of bad news.
International Journal of Research in Marketing 24, 186–200.
Kurtz, T. G. (1970). Solutions of ordinary differential equations as limits of pure jump
Markov processes. Journal of Applied Probability 7(1), 49–58.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from scipy.integrate import solve_ivp

from womlab.errors import WomlabError
from womlab.rules import form_code, hazard, step_probability

__all__ = [
    "CHURN_CURVE_COLUMNS",
    "bass_churn_ode",
    "bass_churn_difference",
    "expected_stay",
    "geometric_lifetime_value",
]

#: Columns of the churn curves: shares of the market per period.
CHURN_CURVE_COLUMNS = ("period", "customers", "former_customers", "ever_customers", "rejecters")


def _table(t: np.ndarray, a_s: np.ndarray, a_d: np.ndarray, left: np.ndarray, rejecters: np.ndarray) -> pd.DataFrame:
    customers = a_s + a_d
    return pd.DataFrame(
        {
            "period": t,
            "customers": customers,
            "former_customers": left,
            "ever_customers": customers + left,
            "rejecters": rejecters,
        }
    )


def _warners(a_d: float, left: float, rejecters: float, former_warn: bool, rejecters_warn: bool) -> float:
    return a_d + (left if former_warn else 0.0) + (rejecters if rejecters_warn else 0.0)


def _start(initial_share: float, satisfied_share: float) -> tuple[float, float]:
    return satisfied_share * initial_share, (1 - satisfied_share) * initial_share


def bass_churn_ode(
    t: np.ndarray,
    p: float,
    q_satisfied: float,
    *,
    satisfied_share: float = 1.0,
    churn: float = 0.0,
    churn_dissatisfied: float | None = None,
    initial_share: float = 0.0,
    warning_rate: float = 0.0,
    former_warn: bool = False,
    rejecters_warn: bool = False,
) -> pd.DataFrame:
    """Bass with churn (and warnings) as an ODE on the grid ``t`` (``scipy.integrate.solve_ivp``, LSODA).

    Parameters
    ----------
    t : numpy.ndarray
        Times in periods, ascending, from 0.
    p : float
        External influence per period.
    q_satisfied : float
        Q_s, the word of mouth per satisfied-customer share (the mapped Q over s).
    satisfied_share : float
        s, the share of new customers who are satisfied.
    churn, churn_dissatisfied : float
        δ_s and δ_d per period (δ_d defaults to δ_s).
    initial_share : float
        Customers at t = 0, satisfied in the share s.
    warning_rate : float
        Q⁻, the rate of rejection per warner share (0: no warnings).
    former_warn, rejecters_warn : bool
        Whether former customers, and rejecters, warn too.

    Returns
    -------
    pandas.DataFrame
        ``period`` (= t), ``customers`` (installed base), ``former_customers``,
        ``ever_customers``, ``rejecters``, all shares of the market.

    Examples
    --------
    >>> c = bass_churn_ode(np.arange(4.0), 0.0, 0.0, churn=0.1, initial_share=0.5)
    >>> round(float(c["customers"].iloc[-1]), 6) == round(0.5 * math.exp(-0.3), 6)
    True
    """
    t = np.asarray(t, dtype=float)
    s = float(satisfied_share)
    d_s = float(churn)
    d_d = d_s if churn_dissatisfied is None else float(churn_dissatisfied)

    def flow(_: float, y: np.ndarray) -> list[float]:
        a_s, a_d, left, rej = y
        potential = 1 - a_s - a_d - left - rej
        adopt = (p + q_satisfied * a_s) * potential
        reject = warning_rate * _warners(a_d, left, rej, former_warn, rejecters_warn) * potential
        return [s * adopt - d_s * a_s, (1 - s) * adopt - d_d * a_d, d_s * a_s + d_d * a_d, reject]

    sol = solve_ivp(
        flow,
        (float(t[0]), float(t[-1])),
        [*_start(initial_share, s), 0.0, 0.0],
        t_eval=t,
        method="LSODA",
        rtol=1e-10,
        atol=1e-12,
    )
    if not sol.success:
        raise WomlabError(f"Bass-with-churn ODE did not solve: {sol.message}")
    return _table(t, sol.y[0], sol.y[1], sol.y[2], sol.y[3])


def bass_churn_difference(
    periods: int,
    p: float,
    q_satisfied: float,
    *,
    satisfied_share: float = 1.0,
    churn: float = 0.0,
    churn_dissatisfied: float | None = None,
    initial_share: float = 0.0,
    time_step: float = 1.0,
    form: str = "exponential",
    warning_rate: float = 0.0,
    former_warn: bool = False,
    rejecters_warn: bool = False,
) -> pd.DataFrame:
    """Bass with churn in difference form on the engine's steps, reported on periods 0..T.

    Each step, from the stocks at its start: potential customers adopt with probability
    π(p + Q_s·A_s), a share s of them satisfied; satisfied (dissatisfied) customers leave
    with π(δ_s) (π(δ_d)); π is the step probability of :func:`womlab.rules.step_probability`.
    With δ = 0 this is :func:`womlab.aggregate.models.bass_difference` with Q = s·Q_s. With
    warnings, adoption and rejection compete within the step (module notes).

    Parameters and returns as :func:`bass_churn_ode`, plus ``periods``, ``time_step`` and
    ``form`` (``exponential`` or ``linear``).

    Examples
    --------
    >>> c = bass_churn_difference(2, 0.0, 0.0, churn=0.5, initial_share=1.0, form="linear")
    >>> c["customers"].tolist(), c["former_customers"].tolist()
    ([1.0, 0.5, 0.25], [0.0, 0.5, 0.75])
    """
    spp = int(round(1 / time_step))
    s = float(satisfied_share)
    d_d = float(churn) if churn_dissatisfied is None else float(churn_dissatisfied)
    leave_s = float(step_probability(float(churn), time_step, form))
    leave_d = float(step_probability(d_d, time_step, form))
    code = form_code(form)
    a_s, a_d = _start(initial_share, s)
    left = rej = 0.0
    out = np.empty((periods + 1, 4))
    out[0] = a_s, a_d, left, rej
    for period in range(1, periods + 1):
        for _ in range(spp):
            potential = 1 - a_s - a_d - left - rej
            if warning_rate > 0:
                h_a = float(hazard(p + q_satisfied * a_s, time_step, code))
                x = _warners(a_d, left, rej, former_warn, rejecters_warn)
                h_r = float(hazard(warning_rate * x, time_step, code))
                adopt_p, reject_p = _compete(h_a, h_r)
                adopt, reject = potential * adopt_p, potential * reject_p
            else:
                adopt, reject = potential * float(step_probability(p + q_satisfied * a_s, time_step, form)), 0.0
            gone_s, gone_d = a_s * leave_s, a_d * leave_d
            a_s, a_d, left = a_s - gone_s + s * adopt, a_d - gone_d + (1 - s) * adopt, left + gone_s + gone_d
            rej += reject
        out[period] = a_s, a_d, left, rej
    return _table(np.arange(periods + 1), out[:, 0], out[:, 1], out[:, 2], out[:, 3])


def _compete(h_a: float, h_r: float) -> tuple[float, float]:
    """Probabilities of adopting and of rejecting in a step with constant hazards h_a and h_r
    (an infinite hazard wins at once; a tie of two goes to adoption, as in the engines)."""
    if math.isinf(h_a):
        return 1.0, 0.0
    if math.isinf(h_r):
        return 0.0, 1.0
    total = h_a + h_r
    if total <= 0:
        return 0.0, 0.0
    either = -math.expm1(-total)
    return h_a / total * either, h_r / total * either


def expected_stay(churn: float, time_step: float = 1.0, form: str = "exponential") -> float:
    """Mean time a customer stays, in periods: dt / (1 − e^{−h}), h the step hazard of ``churn``
    (a geometric number of steps; the mean of the geometric law, e.g. Feller 1968, *An
    Introduction to Probability Theory and Its Applications* I, §XI.2); ∞ without churn.

    Examples
    --------
    >>> round(expected_stay(0.1), 4), round(expected_stay(0.1, 0.001), 2)
    (10.5083, 10.0)
    """
    h = float(hazard(float(churn), float(time_step), form_code(form)))
    return math.inf if h <= 0 else float(time_step) / -math.expm1(-h)


def geometric_lifetime_value(
    value_per_period: float, churn: float, discount_rate: float, *, time_step: float = 1.0, form: str = "exponential"
) -> float:
    """Expected discounted value of a new customer who earns ``value_per_period`` in every period
    it is a customer, the period it adopts included, and leaves at rate ``churn``.

    The geometric annuity m·(1 + r)/(1 + r − s): m the value per period, r the discount rate
    per period and s the share of customers still there a period later, here e^{−h·n} with h
    the step hazard of δ and n steps per period (e^{−δ} with the exponential step), the
    retention form of customer lifetime value (Gupta & Lehmann 2003, "Customers as assets",
    Journal of Interactive Marketing 17(1), 9–24; the formula from memory). It is
    Σ_{j≥0} m·(s/(1 + r))^j: a customer is there in its j-th period after adopting with
    probability s^j. Exact for one-period steps, where womlab counts a customer in each period
    from its adoption to the one before it leaves (:func:`womlab.studies.customer_values`);
    with finer steps a customer who adopts within a period stays into the next a little
    longer than s. Infinite when nobody leaves and nothing is discounted.

    Examples
    --------
    >>> round(geometric_lifetime_value(1.0, 0.1, 0.05), 4)
    7.2333
    >>> geometric_lifetime_value(2.0, 0.0, 0.25)   # no churn: the perpetuity m (1 + r) / r
    10.0
    """
    spp = int(round(1 / float(time_step)))
    s = math.exp(-float(hazard(float(churn), float(time_step), form_code(form))) * spp)
    r = float(discount_rate)
    if 1 + r - s <= 0:
        return math.inf
    return float(value_per_period) * (1 + r) / (1 + r - s)
