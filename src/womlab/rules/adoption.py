"""Adoption and satisfaction formulas, as numpy functions shared by every engine.

Each rule gives a potential customer i a rate λᵢ per period from the talkers of its
*satisfied customer* neighbours, counted at the start of the step (synchronous update):

``share``
    λᵢ = p + q · Tᵢ / Dᵢ, where Tᵢ is the sum of talkers over i's satisfied-customer
    neighbours and Dᵢ the sum of talkers over all its neighbours. With equal talkers this
    is q times the share of neighbours that are satisfied customers. An organisation
    with Dᵢ = 0 (isolated, or no neighbour with talkers) feels only p.
``count``
    λᵢ = p + q · Tᵢ: q per talker per period.
``capped``
    λᵢ = min(p + q · Tᵢ, cap): a linear word-of-mouth response with a ceiling, the way
    aggregate stock-and-flow models usually express demand. With ``step_probability =
    "linear"`` and a step of one period this is the per-period probability itself.

``threshold``
    λᵢ = p + ∞·[Tᵢ > 0 and Tᵢ / Dᵢ ≥ θᵢ]: the organisation adopts in the step in which the
    talker-weighted share of its neighbours that are satisfied customers reaches its own
    threshold θᵢ, drawn once per run (:func:`draw_thresholds`), and otherwise feels only
    external influence (Granovetter 1978; Watts 2002). An infinite rate is an infinite step
    hazard, so engines using Exp(1) resistances adopt it at once.
``cascade``
    Independent cascade (Kempe, Kleinberg & Tardos 2003): a customer who has just become
    satisfied has one chance, during the period after, to persuade each potential-customer
    neighbour, with probability q (so ``word_of_mouth`` is a probability in [0, 1]). Its
    talkers play no part: it counts 1 in Tᵢ for that one period (:func:`talk_weights`), and
    λᵢ = p + (−ln(1 − q))·nᵢ with nᵢ the number of such newly satisfied neighbours. With the
    exponential step the hazard over the period is −ln(1 − q) per neighbour, and
    exp(−Σ hazards) = Π(1 − q): exactly independent chances, one per tie, for any time step.
    (With the ``linear`` step the probability is min(1, λ·dt) as for every rule, which is
    not the cascade; use ``exponential``, the default.)

A step of length dt turns a rate into a probability, ``exponential``: 1 − exp(−λ·dt)
(the default), or ``linear``: min(1, λ·dt).

The "independent chances" form met in much of the literature — each period an
organisation is persuaded from outside with probability p′ and by each of its m talking
neighbours independently with probability q′ — is the same model:
1 − (1 − p′)(1 − q′)^m = 1 − exp(−λ) with λ = p + q·m, p = −ln(1 − p′), q = −ln(1 − q′),
i.e. the ``count`` rule with one talker per customer and the exponential step.

At adoption an organisation is satisfied with probability ``satisfied_share``; only
satisfied customers talk. Since satisfaction does not depend on timing, engines may draw
it up front, once per organisation per run (:func:`draw_satisfied`).

Attribution. When an organisation adopts, its cause is drawn in proportion to the parts
of its rate: external with probability p / (p + w), where w is the uncapped
word-of-mouth part, otherwise one satisfied-customer neighbour j with probability
proportional to its weight in Tᵢ (each neighbour's part of w is q·τⱼ/Dᵢ or q·τⱼ; under
``cascade`` the newly satisfied neighbours share w equally; under ``threshold`` a crossing
is word of mouth, w = ∞).

References
----------
Granovetter, M. (1978). Threshold models of collective behavior. American Journal of
Sociology 83, 1420–1443.
Watts, D. J. (2002). A simple model of global cascades on random networks. PNAS 99,
5766–5771.
Kempe, D., Kleinberg, J. & Tardos, É. (2003). Maximizing the spread of influence through a
social network. Proc. KDD 2003, 137–146.
"""

from __future__ import annotations

import numpy as np

from womlab.scenario import Adoption, Talkers, Thresholds

__all__ = [
    "adoption_rate",
    "external_share",
    "step_probability",
    "step_hazard",
    "draw_talkers",
    "draw_satisfied",
    "draw_thresholds",
    "talk_weights",
    "word_of_mouth_part",
]


def _satisfied_share(talking: np.ndarray, total: np.ndarray) -> np.ndarray:
    total = np.asarray(total)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(total > 0, talking / np.where(total > 0, total, 1), 0.0)


def word_of_mouth_part(
    rule: str, talking: np.ndarray, total: np.ndarray, q: float, threshold: np.ndarray | None = None
) -> np.ndarray:
    """The uncapped word-of-mouth rate: q·T/D (``share``), q·T (``count``, ``capped``),
    −ln(1 − q)·n (``cascade``, T = n newly satisfied neighbours), ∞ where T > 0 and
    T/D ≥ θ else 0 (``threshold``)."""
    talking = np.asarray(talking, dtype=float)
    if rule == "share":
        return q * _satisfied_share(talking, total)
    if rule == "threshold":
        if threshold is None:
            raise ValueError("the threshold rule needs each organisation's threshold")
        reached = (talking > 0) & (_satisfied_share(talking, total) >= threshold)
        return np.where(reached, np.inf, 0.0)
    if rule == "cascade":
        with np.errstate(divide="ignore"):
            per_tie = -np.log1p(-q)  # q = 1 gives an infinite hazard: certain persuasion
        out = np.zeros(talking.shape)
        some = talking > 0
        out[some] = per_tie * talking[some]  # (∞·0 never formed: q = 1 with no new neighbour is 0)
        return out
    return q * talking


def adoption_rate(
    rule: str, talking: np.ndarray, total: np.ndarray, adoption: Adoption, threshold: np.ndarray | None = None
) -> np.ndarray:
    """Rate λ per period for each potential customer.

    Parameters
    ----------
    rule : str
        ``share``, ``count``, ``capped``, ``threshold`` or ``cascade``.
    talking : array
        Tᵢ, the sum over each organisation's neighbours of :func:`talk_weights`
        (talkers of satisfied customers; under ``cascade`` the number of newly
        satisfied neighbours).
    total : array
        Dᵢ, sum of talkers over all its neighbours (used by ``share`` and ``threshold``).
    adoption : Adoption
        Supplies p (``external``), q (``word_of_mouth``) and ``cap``.
    threshold : array, optional
        θᵢ per organisation (``threshold`` only; :func:`draw_thresholds`).

    Examples
    --------
    >>> import numpy as np
    >>> from womlab.scenario import Adoption
    >>> adoption_rate("share", np.array([1.0, 0.0]), np.array([4.0, 0.0]), Adoption(external=0.01, word_of_mouth=0.4))
    array([0.11, 0.01])
    """
    p = adoption.external
    rate = p + word_of_mouth_part(rule, talking, total, adoption.word_of_mouth, threshold)
    if rule == "capped":
        rate = np.minimum(rate, adoption.cap)
    return rate


def external_share(
    rule: str, talking: np.ndarray, total: np.ndarray, adoption: Adoption, threshold: np.ndarray | None = None
) -> np.ndarray:
    """Probability that an adoption is caused by external influence: p / (p + w).

    w is the uncapped word-of-mouth part; where p + w = 0 the share is 1, where w = ∞ it is 0.
    """
    p = adoption.external
    w = word_of_mouth_part(rule, talking, total, adoption.word_of_mouth, threshold)
    s = p + w
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(s > 0, p / np.where(s > 0, s, 1), 1.0)


def step_probability(rate: np.ndarray | float, dt: float, form: str) -> np.ndarray:
    """Probability of adopting within a step of length ``dt`` at rate ``rate``.

    ``exponential``: 1 − exp(−λ·dt); ``linear``: min(1, λ·dt).
    """
    rate = np.asarray(rate, dtype=float)
    if form == "exponential":
        return -np.expm1(-rate * dt)
    if form == "linear":
        return np.minimum(1.0, rate * dt)
    raise ValueError(f"step_probability must be exponential or linear, got {form!r}")


def step_hazard(rate: np.ndarray | float, dt: float, form: str) -> np.ndarray:
    """Integrated hazard h of one step, so that 1 − exp(−h) is :func:`step_probability`.

    An engine that draws one Exp(1) resistance Eᵢ per organisation and lets it adopt at
    the first step where the summed hazard reaches Eᵢ has exactly the per-step adoption
    probabilities of :func:`step_probability` (the survival function of a sum of hazards
    is the product of the steps' survival probabilities).
    """
    rate = np.asarray(rate, dtype=float)
    if form == "exponential":
        return rate * dt
    if form == "linear":
        x = np.minimum(1.0, rate * dt)
        with np.errstate(divide="ignore"):
            return -np.log1p(-x)
    raise ValueError(f"step_probability must be exponential or linear, got {form!r}")


def draw_talkers(talkers: Talkers, n: int, rng: np.random.Generator) -> np.ndarray:
    """Talkers per organisation (float32), drawn once per run: fixed or Poisson(mean)."""
    if talkers.distribution == "fixed":
        return np.full(n, talkers.mean, dtype=np.float32)
    if talkers.distribution == "poisson":
        return rng.poisson(talkers.mean, size=n).astype(np.float32)
    raise ValueError(f"talkers distribution must be fixed or poisson, got {talkers.distribution!r}")


def draw_satisfied(satisfied_share: float, n: int, rng: np.random.Generator) -> np.ndarray:
    """Whether each organisation would be satisfied once a customer (bool), drawn up front."""
    return rng.random(n) < satisfied_share


def draw_thresholds(thresholds: Thresholds, n: int, rng: np.random.Generator) -> np.ndarray:
    """Each organisation's threshold θᵢ (float64), drawn once per run.

    ``uniform``: low + (high − low)·(1 − U), U ~ U[0, 1), i.e. uniform on (low, high];
    ``fixed``: ``mean`` for everyone (no draw); ``normal``: N(mean, sd²) clipped to
    [1e-12, 1] (a threshold of exactly 0 would need no satisfied neighbour at all).

    References
    ----------
    Granovetter, M. (1978). Threshold models of collective behavior. American Journal of
    Sociology 83, 1420–1443 (uniform thresholds); Watts, D. J. (2002), PNAS 99, 5766–5771
    (normally distributed thresholds).
    """
    if thresholds.distribution == "uniform":
        return thresholds.low + (thresholds.high - thresholds.low) * (1.0 - rng.random(n))
    if thresholds.distribution == "fixed":
        return np.full(n, thresholds.mean, dtype=np.float64)
    if thresholds.distribution == "normal":
        return np.clip(rng.normal(thresholds.mean, thresholds.sd, size=n), 1e-12, 1.0)
    raise ValueError(f"threshold distribution must be uniform, fixed or normal, got {thresholds.distribution!r}")


def talk_weights(rule: str, tau: np.ndarray, satisfied_customer: np.ndarray, fresh: np.ndarray) -> np.ndarray:
    """What each organisation puts into its neighbours' Tᵢ at the start of a step (float32).

    Every rule but ``cascade``: its talkers τ if it is a satisfied customer, else 0.
    ``cascade``: 1 during the period after it became a satisfied customer (``fresh``), else 0.
    """
    if rule == "cascade":
        return np.where(satisfied_customer & fresh, np.float32(1), np.float32(0))
    return np.where(satisfied_customer, tau, np.float32(0)).astype(np.float32, copy=False)
