"""Referral programmes inside a run: who is enrolled, what the programme does to word of mouth, what it pays.

A programme (the ``[referral]`` section, :class:`~womlab.scenario.Referral`) enrols
organisations, boosts the word of mouth of enrolled satisfied customers while it runs,
and pays for every successful referral — an adoption in the programme's window that the
engine attributes to an enrolled referrer — until its budget is spent. Engines hold one
:class:`ProgrammeRun` per run and call it at two points of each step:
:meth:`ProgrammeRun.talk` (the talkers that count this step) and
:meth:`ProgrammeRun.settle` (pay for this step's attributed referrals). Keeping the
rules here means every engine runs the same programme. What a programme returns (its
economics against a baseline) is a study: :mod:`womlab.studies.programme`.

Randomness. Enrolment (``share``, or a strategy's tie-breaking) draws from its own
stream: a SeedSequence with the run's dynamics entropy and spawn key extended by
:data:`ENROLMENT_STREAM`. It is built without consuming or spawning from the dynamics
stream, so a programme run sees exactly the dynamics draws of its baseline — whatever
order an engine makes them in — and two programme variants on one replicate enrol the
same organisations (common random numbers). A programme with ``talk_multiplier = 1``,
no extra talkers and no payments therefore reproduces its baseline exactly.
"""

from __future__ import annotations

import numpy as np

from womlab.dynamics.streams import mechanism_rng
from womlab.networks import ReferralNetwork
from womlab.rules import compiled
from womlab.scenario import Referral, Scenario
from womlab.seeding import choose_seeds

__all__ = [
    "ENROLMENT_STREAM",
    "PROGRAMME_ENGINES",
    "ProgrammeRun",
    "boosted",
    "settle_step",
    "idle_ledger",
    "enrolment_rng",
    "enrolled_organisations",
    "start_programme",
]

#: Extra spawn-key word of the enrolment stream ("REFR" in ASCII): far above any child
#: index that spawning from the dynamics stream would ever produce.
ENROLMENT_STREAM = 0x52454652

#: Engines that apply a referral programme inside their step loop.
PROGRAMME_ENGINES = ("array", "mesa")


def enrolment_rng(rng: np.random.Generator) -> np.random.Generator:
    """The enrolment stream of a run whose dynamics stream is ``rng``.

    Derived from ``rng``'s SeedSequence (entropy and spawn key, extended by
    :data:`ENROLMENT_STREAM`, :func:`womlab.dynamics.streams.mechanism_rng`); ``rng`` itself
    is neither advanced nor spawned from.
    """
    return mechanism_rng(rng, ENROLMENT_STREAM)


def enrolled_organisations(
    referral: Referral, network: ReferralNetwork, rng: np.random.Generator, *, scenario: Scenario | None = None
) -> np.ndarray:
    """Which organisations the programme enrols (bool per organisation).

    ``all``: everyone; ``share``: each independently with probability ``enrol_share``;
    ``strategy``: the ``enrol_count`` organisations chosen by
    :func:`womlab.seeding.choose_seeds` (with ``scenario`` supplying the strategy's options
    from ``[seeding]``, which ``greedy`` needs); ``none``: nobody. ``rng`` is the enrolment stream.
    """
    n = network.n
    if referral.enrol == "all":
        return np.ones(n, dtype=bool)
    if referral.enrol == "share":
        return rng.random(n) < referral.enrol_share
    if referral.enrol == "strategy":
        out = np.zeros(n, dtype=bool)
        out[choose_seeds(referral.strategy, network, referral.enrol_count, rng, scenario=scenario)] = True
        return out
    return np.zeros(n, dtype=bool)


@compiled
def boosted(talk: np.float32, multiplier: np.float32, extra: np.float32) -> np.float32:
    """The talkers an enrolled satisfied customer counts with while the programme runs (float32):
    ``talk_multiplier`` × talk + ``extra_talkers``."""
    return multiplier * talk + extra


@compiled
def _boost_all(talk, boost, multiplier, extra, out):  # noqa: ANN001, ANN202
    for i in range(talk.size):
        out[i] = boosted(talk[i], multiplier, extra) if boost[i] else talk[i]


@compiled
def settle_step(period, adopters, referrers, count, ledger):  # noqa: ANN001, ANN201
    """Pay for one step's word-of-mouth adoptions, in the order given (ascending adopter id).

    ``ledger`` is :attr:`ProgrammeRun.ledger`: the programme's arrays and constants, updated
    in place. The one implementation of the payment rules: :meth:`ProgrammeRun.settle` and the
    array engine's compiled step both call it.
    """
    (
        enrolled,
        start,
        end,
        budget,
        per_referral,
        bonus,
        bonus_threshold,
        _multiplier,
        _extra,
        spent,
        exhausted,
        cost,
        paid,
        paid_by,
        rewarded,
    ) = ledger
    if exhausted[0] >= 0 or period < start or period > end:
        return
    for k in range(count):
        ref = referrers[k]
        if not enrolled[ref]:
            continue
        price = per_referral
        if bonus != 0.0 and paid_by[ref] + 1 == bonus_threshold:
            price += bonus
        if spent[0] + price > budget:  # a payment is made whole or not at all
            exhausted[0] = period
            return
        spent[0] += price
        cost[period] += price
        paid[period] += 1
        paid_by[ref] += 1
        rewarded[adopters[k]] = True
    if spent[0] >= budget:
        exhausted[0] = period


class ProgrammeRun:
    """A programme's state during one run: enrolment, window, payments and budget.

    Parameters
    ----------
    referral : Referral
    enrolled : numpy.ndarray
        bool per organisation.
    periods : int
        The run's horizon T.

    Notes
    -----
    Payments. A successful referral is an adoption in a period of the window
    [``start``, ``end``] whose referrer is enrolled. Within a step, referrals are paid in
    order of the referred organisation's id. Each costs ``referred_reward``, plus
    ``reward`` under ``linear``/``both``, plus ``bonus`` under ``bonus``/``both`` when it
    is the referrer's ``bonus_threshold``-th paid referral. A payment is made whole or not
    at all: the first one that would take the total past ``budget`` is refused, and from
    then on nothing is paid and the boost stops (from the next step). The boost also
    stops once the total reaches the budget exactly. The total spent is the running sum
    of the payments in the order they are made.

    The state lives in :attr:`ledger`, a tuple of arrays and constants that the compiled
    functions :func:`settle_step` and :func:`boosted` read and update, so the array
    engine's compiled step runs the same programme as this class's methods.
    """

    def __init__(self, referral: Referral, enrolled: np.ndarray, periods: int) -> None:
        self.referral = referral
        self.enrolled = np.asarray(enrolled, dtype=bool)
        self.start = int(referral.start)
        self.end = int(referral.last_period(periods))
        n = self.enrolled.size
        self.budget = np.inf if referral.budget is None else float(referral.budget)
        self.cost = np.zeros(periods + 1)  # undiscounted payments per period
        self.paid = np.zeros(periods + 1, dtype=np.int64)  # paid referrals per period
        self.paid_by = np.zeros(n, dtype=np.int64)  # paid referrals per referrer
        self.rewarded = np.zeros(n, dtype=bool)  # adoption was a paid referral
        self._spent = np.zeros(1)
        self._exhausted = np.full(1, -1, dtype=np.int64)  # period in which the budget ran out, −1 if never
        linear = referral.scheme in ("linear", "both")
        self._per_referral = float(referral.referred_reward + (referral.reward if linear else 0.0))
        self._bonus = float(referral.bonus if referral.scheme in ("bonus", "both") else 0.0)
        self._m = np.float32(referral.talk_multiplier)
        self._extra = np.float32(referral.extra_talkers)
        self.ledger = (
            self.enrolled,
            self.start,
            self.end,
            float(self.budget),
            self._per_referral,
            self._bonus,
            int(referral.bonus_threshold),
            self._m,
            self._extra,
            self._spent,
            self._exhausted,
            self.cost,
            self.paid,
            self.paid_by,
            self.rewarded,
        )

    @property
    def spent(self) -> float:
        """Total paid so far."""
        return float(self._spent[0])

    @property
    def exhausted_period(self) -> int:
        """Period in which the budget ran out, −1 if it has not."""
        return int(self._exhausted[0])

    @property
    def exhausted(self) -> bool:
        return self.exhausted_period >= 0

    def running(self, period: int) -> bool:
        """Whether the boost applies in ``period``: inside the window, budget not spent."""
        return self.start <= period <= self.end and not self.exhausted

    def talk(self, talk: np.ndarray, talking_customer: np.ndarray, period: int) -> np.ndarray:
        """Talkers that count this step: boosted for enrolled satisfied customers while running.

        ``talk`` is the engine's talkers per organisation (0 for non-talkers);
        ``talking_customer`` marks the satisfied customers. Outside the window, or once the
        budget is spent, ``talk`` itself is returned. With multiplier 1 and no extra
        talkers the values are ``talk``'s, bit for bit.
        """
        if not self.running(period):
            return talk
        talk = np.ascontiguousarray(talk, dtype=np.float32)
        out = np.empty_like(talk)
        _boost_all(
            talk,
            np.ascontiguousarray(self.enrolled & np.asarray(talking_customer, dtype=bool)),
            self._m,
            self._extra,
            out,
        )
        return out

    def settle(self, period: int, adopters: np.ndarray, referrers: np.ndarray) -> None:
        """Pay for the step's word-of-mouth adoptions ``adopters`` attributed to ``referrers``."""
        adopters = np.asarray(adopters, dtype=np.int64)
        referrers = np.asarray(referrers, dtype=np.int64)
        if adopters.size == 0:
            return
        order = np.argsort(adopters, kind="stable")
        settle_step(
            int(period),
            np.ascontiguousarray(adopters[order]),
            np.ascontiguousarray(referrers[order]),
            adopters.size,
            self.ledger,
        )

    def record(self) -> dict:
        """The run's programme outcome, for :attr:`RunResult.extra`."""
        return {
            "programme_cost": self.cost.copy(),
            "programme_paid_referrals": self.paid.copy(),
            "enrolled": self.enrolled.copy(),
            "rewarded": self.rewarded.copy(),
            "budget_exhausted_period": int(self.exhausted_period),
        }


def idle_ledger(n: int = 0) -> tuple:
    """A ledger of the types :attr:`ProgrammeRun.ledger` has, for a run without a programme
    (so a compiled step takes one signature with or without one); nothing is ever paid from it."""
    return (
        np.zeros(n, dtype=bool),
        1,
        0,
        0.0,
        0.0,
        0.0,
        1,
        np.float32(1.0),
        np.float32(0.0),
        np.zeros(1),
        np.full(1, -1, dtype=np.int64),
        np.zeros(1),
        np.zeros(1, dtype=np.int64),
        np.zeros(n, dtype=np.int64),
        np.zeros(n, dtype=bool),
    )


def start_programme(scenario: Scenario, network: ReferralNetwork, rng: np.random.Generator) -> ProgrammeRun | None:
    """The programme of a run whose dynamics stream is ``rng``, or None without one.

    Draws enrolment from :func:`enrolment_rng` (``rng`` is not advanced).
    """
    referral = scenario.referral
    if not referral.active:
        return None
    enrolled = enrolled_organisations(referral, network, enrolment_rng(rng), scenario=scenario)
    return ProgrammeRun(referral, enrolled, scenario.run.periods)
