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
    λᵢ = p + q·[Tᵢ > 0 and Tᵢ / Dᵢ ≥ θᵢ]: once the talker-weighted share of its neighbours
    that are satisfied customers reaches its own threshold θᵢ, drawn once per run
    (:func:`draw_thresholds`), the organisation adopts at rate q per period (plus p); below
    it, it feels only external influence (Granovetter 1978; Watts 2002). The crossing has a
    time scale of its own, 1/q periods on average, so the curve converges as the step
    shrinks. ``word_of_mouth = inf`` is the limit of an ever faster crossing: an infinite
    step hazard, so the organisation adopts in the step in which it crosses (the
    synchronous threshold model of Watts 2002, each hop one step; its time scale is then
    the step's).
``cascade``
    Independent cascade (Kempe, Kleinberg & Tardos 2003): a customer who has just become
    satisfied has one chance to persuade each potential-customer neighbour, with
    probability q (so ``word_of_mouth`` is a probability in [0, 1]), and that chance comes
    at a defined time: one period after it became a customer, in the step that ends then,
    whatever the time step (as in the discrete independent cascade, where the persuader
    tries in the period after it adopted). Its talkers play no part: it counts 1 in Tᵢ in
    that one step (:func:`talk_weights`), and the step's hazard is the external part
    plus (−ln(1 − q))·nᵢ, nᵢ the number of neighbours whose chance falls in the step
    (:func:`step_adoption_hazard`): exp(−Σ) = Π(1 − q), exactly one independent chance per
    tie. With p = 0 every adoption falls on the period grid and a run is the same for every
    time step; with p > 0 external adoptions fall between, and their chances one period
    after them. (:func:`rate` gives p + (−ln(1 − q))·nᵢ, the hazard per period that a
    one-period step integrates.)

A step of length dt turns a rate into a probability, ``exponential``: 1 − exp(−λ·dt)
(the default), or ``linear``: min(1, λ·dt).

Two forms, one formula. Each formula is written once, as a scalar compiled function
(:func:`rate`, :func:`wom_part`, :func:`external_part`, :func:`probability`,
:func:`hazard`, :func:`talk_weight`; rules and step forms by integer code,
:data:`RULE_CODES` and :data:`FORM_CODES`). The array engine's compiled step and the
Mesa model call these directly, one organisation at a time; the vector functions
(:func:`adoption_rate`, :func:`word_of_mouth_part`, :func:`external_share`,
:func:`step_probability`, :func:`step_hazard`, :func:`talk_weights`), which the
aggregate models, the mean-field model and the event engine call, loop the same scalar
functions over arrays.

The "independent chances" form met in much of the literature — each period an
organisation is persuaded from outside with probability p′ and by each of its m talking
neighbours independently with probability q′ — is the same model:
1 − (1 − p′)(1 − q′)^m = 1 − exp(−λ) with λ = p + q·m, p = −ln(1 − p′), q = −ln(1 − q′),
i.e. the ``count`` rule with one talker per customer and the exponential step.

At adoption an organisation is satisfied with probability ``satisfied_share``; only
satisfied customers talk. Since satisfaction does not depend on timing, engines may draw
it up front, once per organisation per run (:func:`draw_satisfied`).

Customers who leave (churn). A customer leaves at rate δᵢ per period (:func:`churn_rate`:
``churn`` if satisfied, ``churn_dissatisfied`` if not, times the programme's
``referred_churn_multiplier`` for a paid referral), from the step after it adopted; a step
turns the rate into a probability as for adoption (:func:`churn_steps`: the number of
steps a customer stays is geometric, P(stays more than j steps) = exp(−j·h), h the step
hazard, so its mean is dt / (1 − e^{−δ·dt}) periods under the exponential step: 1/δ as
the step shrinks, 1/(1 − e^{−δ}) for one-period steps). A former customer does not talk
and does not adopt again within the horizon.

Customers who warn (negative word of mouth). Warners — dissatisfied customers, and with
``former_warn`` former customers, with ``rejecters_warn`` rejecters (:func:`warns`) — put
what a talker would put into a second exposure Wᵢ (:func:`warn_weight`), and a potential
customer becomes a rejecter at rate ρᵢ = the rule's word-of-mouth part with ``warning`` in
place of q and Wᵢ in place of Tᵢ (:func:`rejection_rate`; under ``cascade`` one chance per
new warner, one period after it began to warn). Adoption and rejection are competing
risks: two independent clocks, and where both ring in one step the one whose crossing
came first within the step wins, the step's hazards taken as constant over it
(:func:`rejects_first`, :func:`crossing_fraction`). A rejection records who warned: a
warner picked in proportion to its weight in Wᵢ. The design is that of Goldenberg,
Libai, Moldovan & Muller (2007).

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
Goldenberg, J., Libai, B., Moldovan, S. & Muller, E. (2007). The NPV of bad news.
International Journal of Research in Marketing 24, 186–200.
"""

from __future__ import annotations

import math

import numpy as np

from womlab.rules.compiled import compiled
from womlab.scenario import RULES, STEP_FORMS, Adoption, Talkers, Thresholds

__all__ = [
    "RULE_CODES",
    "FORM_CODES",
    "rule_code",
    "form_code",
    "rate",
    "wom_part",
    "external_part",
    "upgrade_rate",
    "probability",
    "hazard",
    "talk_weight",
    "adoption_rate",
    "external_share",
    "step_probability",
    "step_hazard",
    "draw_talkers",
    "draw_satisfied",
    "draw_thresholds",
    "talk_weights",
    "neighbour_talkers",
    "word_of_mouth_part",
    "step_adoption_hazard",
    "step_external_part",
    "step_adoption_probability",
    "churn_rate",
    "churn_steps",
    "warns",
    "warn_weight",
    "rejection_rate",
    "step_rejection_hazard",
    "rejects_first",
    "crossing_fraction",
    "rejection_rates",
]

#: Rule name → the integer code the compiled formulas take (the order of ``scenario.RULES``).
RULE_CODES = {name: code for code, name in enumerate(RULES)}
#: Step form name → integer code (the order of ``scenario.STEP_FORMS``).
FORM_CODES = {name: code for code, name in enumerate(STEP_FORMS)}
SHARE, COUNT, CAPPED, THRESHOLD, CASCADE = (RULE_CODES[r] for r in ("share", "count", "capped", "threshold", "cascade"))
EXPONENTIAL, LINEAR = FORM_CODES["exponential"], FORM_CODES["linear"]


def rule_code(rule: str) -> int:
    """The integer code of ``rule`` for the compiled formulas."""
    try:
        return RULE_CODES[rule]
    except KeyError:
        raise ValueError(f"adoption.rule must be one of {', '.join(RULES)}, got {rule!r}") from None


def form_code(form: str) -> int:
    """The integer code of a step form for the compiled formulas."""
    try:
        return FORM_CODES[form]
    except KeyError:
        raise ValueError(f"step_probability must be exponential or linear, got {form!r}") from None


# ----------------------------------------------------------------------------- the formulas, once
@compiled
def _share_of(talking: float, total: float) -> float:
    return talking / total if total > 0 else 0.0


@compiled
def wom_part(rule: int, talking: float, total: float, threshold: float, q: float) -> float:
    """The uncapped word-of-mouth rate of one organisation: q·T/D (``share``), q·T (``count``,
    ``capped``), −ln(1 − q)·n (``cascade``, T = n newly satisfied neighbours), q where T > 0
    and T/D ≥ θ else 0 (``threshold``; q = ∞ the instant crossing).

    Examples
    --------
    >>> wom_part(RULE_CODES["share"], 1.0, 4.0, 0.0, 0.4)
    0.1
    """
    if rule == SHARE:
        return q * _share_of(talking, total)
    if rule == THRESHOLD:
        return q if talking > 0 and _share_of(talking, total) >= threshold else 0.0
    if rule == CASCADE:
        if talking > 0:
            return -math.log1p(-q) * talking if q < 1.0 else math.inf  # q = 1: certain persuasion
        return 0.0  # (∞·0 never formed: q = 1 with no new neighbour is 0)
    return q * talking


@compiled
def rate(rule: int, talking: float, total: float, threshold: float, p: float, q: float, cap: float) -> float:
    """Rate λ per period of one potential customer: p + the word-of-mouth part, at most ``cap``
    under ``capped``.

    Examples
    --------
    >>> rate(RULE_CODES["capped"], 10.0, 0.0, 0.0, 0.01, 0.02, 0.05)
    0.05
    """
    r = p + wom_part(rule, talking, total, threshold, q)
    if rule == CAPPED and r > cap:
        return cap
    return r


@compiled
def upgrade_rate(p: float, q: float, newer: float, current: float) -> float:
    """Rate per period at which a customer of a product generation moves to a later one.

    ``newer``: the talkers of its satisfied customer neighbours on a later generation; ``current``:
    those on its own generation or later. The rate is p + q·newer/current (p where no neighbour on
    its generation or later talks): on the complete network newer/current is the share of the
    generation's customers who have moved on, the F of Norton & Bass's upgrade hazard p + q·F.

    References
    ----------
    Norton, J. A. & Bass, F. M. (1987). A diffusion theory model of adoption and substitution for
    successive generations of high-technology products. Management Science 33(9), 1069–1086.

    Examples
    --------
    >>> upgrade_rate(0.02, 0.5, 1.0, 4.0)
    0.145
    """
    return p + q * newer / current if current > 0 else p


@compiled
def external_part(rule: int, talking: float, total: float, threshold: float, p: float, q: float) -> float:
    """Probability that an adoption is caused by external influence: p / (p + w), w the
    uncapped word-of-mouth part; 1 where p + w = 0, 0 where w = ∞."""
    s = p + wom_part(rule, talking, total, threshold, q)
    return p / s if s > 0 else 1.0


@compiled
def probability(rate: float, dt: float, form: int) -> float:
    """Probability of adopting within a step of length ``dt``: 1 − exp(−λ·dt) (``exponential``)
    or min(1, λ·dt) (``linear``)."""
    if form == EXPONENTIAL:
        return -math.expm1(-rate * dt)
    x = rate * dt
    return 1.0 if x > 1.0 else x


@compiled
def hazard(rate: float, dt: float, form: int) -> float:
    """Integrated hazard h of one step, so that 1 − exp(−h) is :func:`probability`."""
    if form == EXPONENTIAL:
        return rate * dt
    x = rate * dt
    if x >= 1.0:
        return math.inf
    return -math.log1p(-x)


@compiled
def talk_weight(rule: int, talkers: np.float32, satisfied_customer: bool, fresh: bool) -> np.float32:
    """What one organisation puts into its neighbours' Tᵢ at the start of a step (float32):
    its talkers τ if a satisfied customer, else 0; under ``cascade`` 1 in the step of its
    persuasion attempt, the one that ends a period after it became a customer (``fresh``),
    else 0."""
    if rule == CASCADE:
        return np.float32(1.0) if satisfied_customer and fresh else np.float32(0.0)
    return np.float32(talkers) if satisfied_customer else np.float32(0.0)


@compiled
def step_adoption_hazard(
    rule: int, talking: float, total: float, threshold: float, p: float, q: float, cap: float, dt: float, form: int
) -> float:
    """Integrated hazard of adopting within one step of length ``dt`` (what the engines add up).

    Every rule but ``cascade``: :func:`hazard` of :func:`rate`. ``cascade``: the external part
    over the step, :func:`hazard` of p, plus −ln(1 − q) for each neighbour whose one chance
    falls in this step (``talking`` of them): the chance comes at a defined time, whatever
    the step.

    Examples
    --------
    >>> c = RULE_CODES["cascade"]
    >>> round(step_adoption_hazard(c, 2.0, 0.0, 0.0, 0.0, 0.5, 1.0, 0.1, FORM_CODES["exponential"]), 6)
    1.386294
    """
    if rule == CASCADE:
        return hazard(p, dt, form) + wom_part(rule, talking, total, threshold, q)
    return hazard(rate(rule, talking, total, threshold, p, q, cap), dt, form)


@compiled
def step_external_part(
    rule: int, talking: float, total: float, threshold: float, p: float, q: float, dt: float, form: int
) -> float:
    """Probability that an adoption in a step of length ``dt`` is caused by external influence.

    :func:`external_part` for every rule but ``cascade``, whose chances are not spread over
    time: there the external hazard of the step against the chances' (1 where both are 0,
    0 where a chance is certain)."""
    if rule == CASCADE:
        h = hazard(p, dt, form)
        s = h + wom_part(rule, talking, total, threshold, q)
        return h / s if s > 0 else 1.0
    return external_part(rule, talking, total, threshold, p, q)


@compiled
def step_adoption_probability(
    rule: int, talking: float, total: float, threshold: float, p: float, q: float, cap: float, dt: float, form: int
) -> float:
    """Probability of adopting within one step: 1 − exp(−:func:`step_adoption_hazard`); for every
    rule but ``cascade`` computed as :func:`probability` of :func:`rate` (the same number)."""
    if rule == CASCADE:
        return -math.expm1(-step_adoption_hazard(rule, talking, total, threshold, p, q, cap, dt, form))
    return probability(rate(rule, talking, total, threshold, p, q, cap), dt, form)


# ----------------------------------------------------------------------------- churn
@compiled
def churn_rate(satisfied: bool, churn: float, churn_dissatisfied: float, multiplier: float) -> float:
    """δᵢ, the rate per period at which a customer leaves: ``churn`` if satisfied, else
    ``churn_dissatisfied``, times ``multiplier`` (the programme's ``referred_churn_multiplier``
    for a paid referral, else 1).

    Examples
    --------
    >>> churn_rate(False, 0.02, 0.1, 0.5)
    0.05
    """
    return (churn if satisfied else churn_dissatisfied) * multiplier


@compiled
def churn_steps(resistance: float, step_hazard: float) -> int:
    """How many steps a customer stays: the least k ≥ 1 with k·h ≥ E, h the step hazard of its
    churn rate (:func:`hazard`) and E its Exp(1) churn resistance; −1 (never) when h = 0.

    P(k > j) = P(E > j·h) = exp(−j·h): the geometric law of a per-step probability
    1 − exp(−h), so the mean stay is 1 / (1 − exp(−h)) steps.

    Examples
    --------
    >>> churn_steps(1.0, 0.3), churn_steps(0.2, math.inf), churn_steps(5.0, 0.0)
    (4, 1, -1)
    """
    if step_hazard <= 0.0:
        return -1
    x = resistance / step_hazard
    if x >= 4e18:  # beyond any horizon (and any whole number of steps)
        return -1
    k = math.ceil(x)
    return k if k >= 1 else 1


# ----------------------------------------------------------------------------- warnings
@compiled
def warns(
    customer: bool, satisfied: bool, former: bool, rejecter: bool, former_warn: bool, rejecters_warn: bool
) -> bool:
    """Whether an organisation warns its neighbours now: a dissatisfied customer always; a
    former customer with ``former_warn``; a rejecter with ``rejecters_warn``."""
    if customer:
        return not satisfied
    if former:
        return former_warn
    if rejecter:
        return rejecters_warn
    return False


@compiled
def warn_weight(rule: int, talkers: np.float32, warning_now: bool, fresh: bool) -> np.float32:
    """What one warner puts into its neighbours' warning exposure Wᵢ at the start of a step
    (float32): as a talker puts into Tᵢ (:func:`talk_weight`), its talkers τ while it warns;
    under ``cascade`` 1 in the step one period after it began to warn (``fresh``)."""
    return talk_weight(rule, talkers, warning_now, fresh)


@compiled
def rejection_rate(rule: int, warned: float, total: float, threshold: float, warning: float) -> float:
    """ρᵢ, the rate per period at which a potential customer becomes a rejecter: the rule's
    word-of-mouth part (:func:`wom_part`) with ``warning`` for q and Wᵢ for Tᵢ — warning·W/D
    (``share``), warning·W (``count``, ``capped``: no cap), −ln(1 − warning)·n (``cascade``),
    ``warning`` once W/D ≥ θᵢ (``threshold``, its own θᵢ).

    Examples
    --------
    >>> rejection_rate(RULE_CODES["share"], 1.0, 4.0, 0.0, 0.2)
    0.05
    """
    return wom_part(rule, warned, total, threshold, warning)


@compiled
def step_rejection_hazard(
    rule: int, warned: float, total: float, threshold: float, warning: float, dt: float, form: int
) -> float:
    """Integrated hazard of becoming a rejecter within one step: :func:`hazard` of
    :func:`rejection_rate`; under ``cascade`` −ln(1 − warning) per new warner whose chance
    falls in the step."""
    if rule == CASCADE:
        return wom_part(rule, warned, total, threshold, warning)
    return hazard(rejection_rate(rule, warned, total, threshold, warning), dt, form)


@compiled
def rejects_first(adopt_left: float, adopt_hazard: float, reject_left: float, reject_hazard: float) -> bool:
    """Both clocks rang in one step: whether the rejection came first.

    ``adopt_left`` (``reject_left``) is what was left of the Exp(1) resistance at the start
    of the step, ``adopt_hazard`` (``reject_hazard``) the step's hazard; with the hazard
    constant over the step, each crossing comes at the fraction left / hazard of it (0 for
    an infinite hazard). The earlier wins; a tie goes to adoption.

    Examples
    --------
    >>> rejects_first(0.5, 1.0, 0.1, 1.0), rejects_first(0.1, 1.0, 0.5, 1.0)
    (True, False)
    """
    fa = adopt_left / adopt_hazard if adopt_hazard < math.inf else 0.0
    fr = reject_left / reject_hazard if reject_hazard < math.inf else 0.0
    return fr < fa


@compiled
def crossing_fraction(step_hazard: float, u: float) -> float:
    """Where in a step an Exp(1) clock rang, given that it rang in the step: the fraction of
    the step's (constant) hazard h used, drawn from a uniform ``u``.

    The rest of the resistance at the start of the step is Exp(1) (memorylessness); given
    that it is at most h its distribution function is (1 − e^{−x}) / (1 − e^{−h}), so the
    crossing is x = −ln(1 − u·(1 − e^{−h})) and the fraction x / h (0 for h = ∞). An engine
    that draws a fresh uniform per step (the Mesa model) uses this to settle
    :func:`rejects_first` with the law the resistances give.

    Examples
    --------
    >>> round(crossing_fraction(1e-9, 0.25), 6), crossing_fraction(math.inf, 0.7)
    (0.25, 0.0)
    """
    if step_hazard == math.inf:
        return 0.0
    return -math.log1p(u * math.expm1(-step_hazard)) / step_hazard


# ----------------------------------------------------------------------------- the same, over arrays
@compiled
def _rate_loop(rule, talking, total, threshold, p, q, cap, out):  # noqa: ANN001, ANN202
    for k in range(out.size):
        out[k] = rate(rule, talking[k], total[k], threshold[k], p, q, cap)


@compiled
def _wom_loop(rule, talking, total, threshold, q, out):  # noqa: ANN001, ANN202
    for k in range(out.size):
        out[k] = wom_part(rule, talking[k], total[k], threshold[k], q)


@compiled
def _external_loop(rule, talking, total, threshold, p, q, out):  # noqa: ANN001, ANN202
    for k in range(out.size):
        out[k] = external_part(rule, talking[k], total[k], threshold[k], p, q)


@compiled
def _step_loop(rates, dt, form, as_hazard, out):  # noqa: ANN001, ANN202
    for k in range(out.size):
        out[k] = hazard(rates[k], dt, form) if as_hazard else probability(rates[k], dt, form)


@compiled
def _talk_loop(rule, tau, satisfied_customer, fresh, out):  # noqa: ANN001, ANN202
    for k in range(out.size):
        out[k] = talk_weight(rule, tau[k], satisfied_customer[k], fresh[k])


def _flat(*arrays):  # noqa: ANN001, ANN202
    """Broadcast to one shape; return that shape and contiguous float64 1-d copies."""
    given = [np.asarray(a, dtype=np.float64) for a in arrays]
    shape = np.broadcast_shapes(*(a.shape for a in given))
    return shape, [_flat_copy(a, shape, np.float64) for a in given]


def _flat_copy(a: np.ndarray, shape: tuple, dtype: type) -> np.ndarray:
    """``a`` as a writeable contiguous 1-d array of ``shape``'s size (copied only where needed)."""
    if a.shape != shape or not a.flags.c_contiguous or not a.flags.writeable:
        a = np.array(np.broadcast_to(a, shape), dtype=dtype, order="C")
    return a.reshape(-1)


def _threshold_or_zero(rule: str, threshold: np.ndarray | None) -> np.ndarray | float:
    if threshold is None:
        if rule == "threshold":
            raise ValueError("the threshold rule needs each organisation's threshold")
        return 0.0
    return threshold


def word_of_mouth_part(
    rule: str, talking: np.ndarray, total: np.ndarray | None, q: float, threshold: np.ndarray | None = None
) -> np.ndarray:
    """:func:`wom_part` over arrays: the uncapped word-of-mouth rate of each organisation.

    ``total`` may be None for rules that do not use Dᵢ (``count``, ``capped``, ``cascade``).
    """
    shape, (t, d, th) = _flat(talking, 0.0 if total is None else total, _threshold_or_zero(rule, threshold))
    out = np.empty(t.size)
    _wom_loop(rule_code(rule), t, d, th, float(q), out)
    return out.reshape(shape)


def adoption_rate(
    rule: str, talking: np.ndarray, total: np.ndarray, adoption: Adoption, threshold: np.ndarray | None = None
) -> np.ndarray:
    """Rate λ per period for each potential customer (:func:`rate` over arrays).

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
    shape, (t, d, th) = _flat(talking, total, _threshold_or_zero(rule, threshold))
    out = np.empty(t.size)
    cap = float(adoption.cap) if adoption.cap is not None else math.inf
    _rate_loop(rule_code(rule), t, d, th, float(adoption.external), float(adoption.word_of_mouth), cap, out)
    return out.reshape(shape)


def external_share(
    rule: str, talking: np.ndarray, total: np.ndarray, adoption: Adoption, threshold: np.ndarray | None = None
) -> np.ndarray:
    """Probability that an adoption is caused by external influence: p / (p + w) (:func:`external_part`
    over arrays).

    w is the uncapped word-of-mouth part; where p + w = 0 the share is 1, where w = ∞ it is 0.
    """
    shape, (t, d, th) = _flat(talking, total, _threshold_or_zero(rule, threshold))
    out = np.empty(t.size)
    _external_loop(rule_code(rule), t, d, th, float(adoption.external), float(adoption.word_of_mouth), out)
    return out.reshape(shape)


@compiled
def _rejection_loop(rule, warned, total, threshold, warning, out):  # noqa: ANN001, ANN202
    for k in range(out.size):
        out[k] = rejection_rate(rule, warned[k], total[k], threshold[k], warning)


def rejection_rates(
    rule: str, warned: np.ndarray, total: np.ndarray, warning: float, threshold: np.ndarray | None = None
) -> np.ndarray:
    """ρᵢ per potential customer (:func:`rejection_rate` over arrays): the rate of becoming a
    rejecter from the warners' weights Wᵢ (``warned``) and all neighbours' talkers Dᵢ.

    Examples
    --------
    >>> rejection_rates("count", np.array([0.0, 2.0]), np.array([4.0, 4.0]), 0.1).tolist()
    [0.0, 0.2]
    """
    shape, (w, d, th) = _flat(warned, total, _threshold_or_zero(rule, threshold))
    out = np.empty(w.size)
    _rejection_loop(rule_code(rule), w, d, th, float(warning), out)
    return out.reshape(shape)


def _steps(rates: np.ndarray | float, dt: float, form: str, as_hazard: bool) -> np.ndarray:
    code = form_code(form)
    shape, (r,) = _flat(rates)
    out = np.empty(r.size)
    _step_loop(r, float(dt), code, as_hazard, out)
    return out.reshape(shape)


def step_probability(rate: np.ndarray | float, dt: float, form: str) -> np.ndarray:
    """Probability of adopting within a step of length ``dt`` at rate ``rate`` (:func:`probability`
    over arrays).

    ``exponential``: 1 − exp(−λ·dt); ``linear``: min(1, λ·dt).

    Examples
    --------
    >>> float(step_probability(0.5, 1.0, "linear"))
    0.5
    """
    return _steps(rate, dt, form, False)


def step_hazard(rate: np.ndarray | float, dt: float, form: str) -> np.ndarray:
    """Integrated hazard h of one step, so that 1 − exp(−h) is :func:`step_probability`
    (:func:`hazard` over arrays).

    An engine that draws one Exp(1) resistance Eᵢ per organisation and lets it adopt at
    the first step where the summed hazard reaches Eᵢ has exactly the per-step adoption
    probabilities of :func:`step_probability` (the survival function of a sum of hazards
    is the product of the steps' survival probabilities).
    """
    return _steps(rate, dt, form, True)


def draw_talkers(talkers: Talkers, n: int, rng: np.random.Generator, mean: np.ndarray | None = None) -> np.ndarray:
    """Talkers per organisation (float32), drawn once per run: fixed or Poisson(mean).

    ``mean`` (one value per organisation: segments) replaces ``talkers.mean``; the
    distribution stays ``talkers.distribution``.
    """
    m = talkers.mean if mean is None else np.asarray(mean, dtype=np.float64)
    if talkers.distribution == "fixed":
        return np.full(n, m, dtype=np.float32) if mean is None else np.asarray(m, dtype=np.float32).copy()
    if talkers.distribution == "poisson":
        return rng.poisson(m, size=n).astype(np.float32)
    raise ValueError(f"talkers distribution must be fixed or poisson, got {talkers.distribution!r}")


def draw_satisfied(satisfied_share: float | np.ndarray, n: int, rng: np.random.Generator) -> np.ndarray:
    """Whether each organisation would be satisfied once a customer (bool), drawn up front.

    ``satisfied_share`` is one probability, or one per organisation (segments).
    """
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


@compiled
def neighbour_talkers(indptr, indices, tau, complete):  # noqa: ANN001, ANN201
    """Dᵢ of every organisation: the talkers of all of its neighbours on the CSR ``indptr``,
    ``indices`` (everyone else's on the complete network), fixed for a run; what the engines'
    kernels divide by under ``share`` and compare with under ``threshold``."""
    n = tau.size
    total = np.empty(n)
    if complete:
        everyone = 0.0
        for i in range(n):
            everyone += tau[i]
        for i in range(n):
            total[i] = everyone - tau[i]
    else:
        for i in range(n):
            s = 0.0
            for k in range(indptr[i], indptr[i + 1]):
                s += tau[indices[k]]
            total[i] = s
    return total


def talk_weights(rule: str, tau: np.ndarray, satisfied_customer: np.ndarray, fresh: np.ndarray) -> np.ndarray:
    """What each organisation puts into its neighbours' Tᵢ at the start of a step (float32;
    :func:`talk_weight` over arrays).

    Every rule but ``cascade``: its talkers τ if it is a satisfied customer, else 0.
    ``cascade``: 1 in the step of its persuasion attempt, one period after it became a
    customer (``fresh``), else 0.
    """
    given = [
        np.asarray(tau, dtype=np.float32),
        np.asarray(satisfied_customer, dtype=bool),
        np.asarray(fresh, dtype=bool),
    ]
    shape = np.broadcast_shapes(*(a.shape for a in given))
    flat = [_flat_copy(a, shape, a.dtype.type) for a in given]
    out = np.empty(shape, dtype=np.float32)
    _talk_loop(rule_code(rule), *flat, out.reshape(-1))
    return out
