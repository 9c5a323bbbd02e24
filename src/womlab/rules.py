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
proportional to its talkers τⱼ (each neighbour's part of w is q·τⱼ/Dᵢ or q·τⱼ).
"""

from __future__ import annotations

import numpy as np

from .scenario import Adoption, Talkers

__all__ = [
    "adoption_rate",
    "external_share",
    "step_probability",
    "step_hazard",
    "draw_talkers",
    "draw_satisfied",
]


def word_of_mouth_part(rule: str, talking: np.ndarray, total: np.ndarray, q: float) -> np.ndarray:
    """The uncapped word-of-mouth rate q·T/D (``share``) or q·T (``count``, ``capped``)."""
    talking = np.asarray(talking)
    if rule == "share":
        total = np.asarray(total)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(total > 0, q * talking / np.where(total > 0, total, 1), 0.0)
    return q * talking


def adoption_rate(rule: str, talking: np.ndarray, total: np.ndarray, adoption: Adoption) -> np.ndarray:
    """Rate λ per period for each potential customer.

    Parameters
    ----------
    rule : str
        ``share``, ``count`` or ``capped``.
    talking : array
        Tᵢ, sum of talkers over each organisation's satisfied-customer neighbours.
    total : array
        Dᵢ, sum of talkers over all its neighbours (used by ``share`` only).
    adoption : Adoption
        Supplies p (``external``), q (``word_of_mouth``) and ``cap``.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab.scenario import Adoption
    >>> adoption_rate("share", np.array([1.0, 0.0]), np.array([4.0, 0.0]), Adoption(external=0.01, word_of_mouth=0.4))
    array([0.11, 0.01])
    """
    p = adoption.external
    rate = p + word_of_mouth_part(rule, talking, total, adoption.word_of_mouth)
    if rule == "capped":
        rate = np.minimum(rate, adoption.cap)
    return rate


def external_share(rule: str, talking: np.ndarray, total: np.ndarray, adoption: Adoption) -> np.ndarray:
    """Probability that an adoption is caused by external influence: p / (p + w).

    w is the uncapped word-of-mouth part; where p + w = 0 the share is 1.
    """
    p = adoption.external
    w = word_of_mouth_part(rule, talking, total, adoption.word_of_mouth)
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
