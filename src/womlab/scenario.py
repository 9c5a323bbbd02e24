"""The scenario: every parameter of a study, as frozen, validated dataclasses.

A scenario is read from a TOML file (:func:`load_scenario`) or built from a plain
dictionary (:meth:`Scenario.from_dict`). It is validated once, on construction; an
invalid value raises :class:`~womlab.errors.ScenarioError` naming the dotted field,
the value and what is allowed. A scenario is never changed in place:
:meth:`Scenario.replace` returns a new, validated one.

The file has one table per section::

    name = "fleet software, regional market"
    seed = 12345

    [market]
    organisations = 12000
    initial_share = 0.01        # or initial_customers = 120
    regions = 6

    [network]
    kind = "regional"           # complete ring regular random small_world regional scale_free edgelist
    mean_degree = 8
    within_region_share = 0.85

    [adoption]
    rule = "share"              # share count capped threshold cascade
    external = 0.01             # Bass p, per period
    word_of_mouth = 0.3         # q, per period
    satisfied_share = 0.6
    talkers_per_customer = 2    # or { distribution = "poisson", mean = 2 }

    [run]
    periods = 40
    time_step = 1.0
    step_probability = "exponential"
    replicates = 100
    engine = "array"
    jobs = 1

    [seeding]                   # optional: who the initial customers are
    strategy = "hubs"           # random hubs bridges pagerank coreness fringe by_region spread greedy
    budget = 120                # or leave out: market.initial_customers / initial_share

    [study]                     # optional: the paired comparison of seeding strategies
    strategies = ["random", "hubs", "bridges", "by_region"]
    replicates = 200
    discount_rate = 0.01        # per period, for discounted customer-periods
    [referral]                  # optional: a referral programme (womlab.evaluate_programme)
    enrol = "all"               # none all share strategy
    start = 5                   # first and last period the programme runs
    end = 30
    talk_multiplier = 1.5       # on an enrolled customer's word of mouth
    reward = 25.0               # per successful referral, to the referrer
    budget = 20000.0
    lifetime_value = 40.0       # or value_per_period = 1.0
    discount_rate = 0.01

A sweep (see :mod:`womlab.sweep`) adds a ``[sweep]`` table and its axes, one per dotted
scenario field::

    [sweep]
    design = "grid"             # grid latin sobol morris
    samples = 64                # latin: points; sobol: base sample N (a power of 2); morris: trajectories
    replicates = 10
    [sweep.axes]
    "adoption.word_of_mouth" = { from = 0.05, to = 0.5, steps = 10 }   # log = true for a log scale
    "network.kind" = ["random", "small_world", "regional"]

Adding a section: write a frozen dataclass with a ``section`` class variable and a
``check(self, scenario)`` method, add it as a field of :class:`Scenario` and to
``SECTIONS``. Loading, type checks, unknown-key messages and ``replace`` are generic.
"""

from __future__ import annotations

import dataclasses
import difflib
import math
import tomllib
import types
import typing
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, ClassVar

from .errors import ScenarioError

__all__ = [
    "Market",
    "NetworkSpec",
    "Talkers",
    "Thresholds",
    "Adoption",
    "RunSpec",
    "Seeding",
    "Study",
    "Axis",
    "SweepSpec",
    "Referral",
    "Scenario",
    "load_scenario",
    "NETWORK_KINDS",
    "RULES",
    "STEP_FORMS",
    "ENGINES",
    "SWEEP_DESIGNS",
]

NETWORK_KINDS = ("complete", "ring", "regular", "random", "small_world", "regional", "scale_free", "edgelist")
RULES = ("share", "count", "capped", "threshold", "cascade")
STEP_FORMS = ("exponential", "linear")
ENGINES = ("array", "mesa")
STUDY_OUTCOMES = ("customers", "customer_periods")
TALKER_DISTRIBUTIONS = ("fixed", "poisson")
THRESHOLD_DISTRIBUTIONS = ("uniform", "fixed", "normal")
SWEEP_DESIGNS = ("grid", "latin", "sobol", "morris")
ENROLMENTS = ("none", "all", "share", "strategy")
REWARD_SCHEMES = ("linear", "bonus", "both")


# ----------------------------------------------------------------------------- checks
def _fail(dotted: str, value: Any, allowed: str) -> typing.NoReturn:
    raise ScenarioError(f"{dotted} must be {allowed}, got {value!r}")


def _in_unit(dotted: str, value: float) -> None:
    if not (0.0 <= value <= 1.0):
        _fail(dotted, value, "in [0, 1]")


def _non_negative(dotted: str, value: float) -> None:
    if not (math.isfinite(value) and value >= 0):
        _fail(dotted, value, "a finite number >= 0")


def _positive_int(dotted: str, value: int) -> None:
    if value < 1:
        _fail(dotted, value, "a whole number >= 1")


def _one_of(dotted: str, value: str, known: tuple[str, ...]) -> None:
    if value not in known:
        close = difflib.get_close_matches(value, known, n=1)
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        raise ScenarioError(f"{dotted} must be one of {', '.join(known)}; got {value!r}{hint}")


# ----------------------------------------------------------------------------- sections
@dataclass(frozen=True, kw_only=True)
class Market:
    """Who can buy: the organisations of the market and who already are customers.

    Parameters
    ----------
    organisations : int
        Market size N. For ``network.kind = "edgelist"`` it may be left out and is then
        the number of organisations in the file.
    initial_customers : int
        Customers at period 0, chosen at random (or by a seeding strategy). 0 is valid:
        adoption then starts from external influence alone, as in the Bass model.
    initial_share : float, optional
        Alternative to ``initial_customers``: a share of N, rounded to the nearest whole.
    regions : int
        Number of regions organisations are split into.
    """

    section: ClassVar[str] = "market"
    organisations: int = 1000
    initial_customers: int | None = None
    initial_share: float | None = None
    regions: int = 1

    def check(self, scenario: Scenario) -> None:
        _positive_int("market.organisations", self.organisations)
        _positive_int("market.regions", self.regions)
        if self.regions > self.organisations:
            _fail("market.regions", self.regions, f"at most market.organisations = {self.organisations}")
        if self.initial_customers is not None and self.initial_share is not None:
            raise ScenarioError(
                "market.initial_customers and market.initial_share are alternatives; give one, "
                f"got {self.initial_customers!r} and {self.initial_share!r}"
            )
        if self.initial_share is not None:
            _in_unit("market.initial_share", self.initial_share)
        if self.initial_customers is not None and not (0 <= self.initial_customers <= self.organisations):
            _fail(
                "market.initial_customers",
                self.initial_customers,
                f"between 0 and market.organisations = {self.organisations}",
            )

    @property
    def n_initial(self) -> int:
        """Number of customers at period 0."""
        if self.initial_customers is not None:
            return self.initial_customers
        if self.initial_share is not None:
            return int(round(self.initial_share * self.organisations))
        return 0


@dataclass(frozen=True, kw_only=True)
class NetworkSpec:
    """The referral network: who knows whom.

    Parameters
    ----------
    kind : str
        One of ``complete, ring, regular, random, small_world, regional, scale_free,
        edgelist``.
    mean_degree : float
        Mean number of ties per organisation (ignored for ``complete`` and ``edgelist``).
        Must be even for ``ring``, ``small_world`` and ``scale_free`` and whole for
        ``regular``.
    rewiring : float
        Watts–Strogatz rewiring probability (``small_world``).
    within_region_share : float
        Share of each organisation's expected ties inside its own region (``regional``).
    path : str, optional
        CSV file with columns ``source,target`` (``edgelist``); relative to the scenario file.
    nodes_path : str, optional
        CSV file with columns ``id,region`` giving each organisation's region (``edgelist``).
    """

    section: ClassVar[str] = "network"
    kind: str = "random"
    mean_degree: float = 8.0
    rewiring: float = 0.1
    within_region_share: float = 0.85
    path: str | None = None
    nodes_path: str | None = None

    def check(self, scenario: Scenario) -> None:
        _one_of("network.kind", self.kind, NETWORK_KINDS)
        _in_unit("network.rewiring", self.rewiring)
        _in_unit("network.within_region_share", self.within_region_share)
        n = scenario.market.organisations
        if self.kind == "edgelist":
            if self.path is None:
                raise ScenarioError('network.path is required when network.kind = "edgelist", got None')
            for name in ("path", "nodes_path"):
                value = getattr(self, name)
                if value is not None and not Path(value).is_file():
                    _fail(f"network.{name}", value, "an existing CSV file")
            return
        if self.kind == "complete":
            return
        k = self.mean_degree
        if not (math.isfinite(k) and 0 < k < n):
            _fail("network.mean_degree", k, f"> 0 and < market.organisations = {n}")
        if self.kind in ("ring", "small_world", "scale_free") and (k != int(k) or int(k) % 2):
            _fail("network.mean_degree", k, f'an even whole number for kind = "{self.kind}"')
        if self.kind == "regular":
            if k != int(k):
                _fail("network.mean_degree", k, 'a whole number for kind = "regular"')
            if (int(k) * n) % 2:
                _fail("network.mean_degree", k, f"such that mean_degree x organisations is even (organisations = {n})")
        if self.kind == "regional" and scenario.market.regions < 2:
            _fail("market.regions", scenario.market.regions, 'at least 2 for network.kind = "regional"')


@dataclass(frozen=True, kw_only=True)
class Talkers:
    """How many people at a satisfied customer talk about the product.

    ``distribution = "fixed"`` gives every organisation ``mean`` talkers; ``"poisson"``
    draws each organisation's count once per run from Poisson(``mean``).
    """

    distribution: str = "fixed"
    mean: float = 1.0


@dataclass(frozen=True, kw_only=True)
class Thresholds:
    """The distribution of the organisations' own thresholds θᵢ (``threshold`` rule).

    θᵢ is drawn once per run: ``uniform`` on (``low``, ``high``] (the default, (0, 1]),
    ``fixed`` at ``mean`` for everyone, or ``normal`` (``mean``, ``sd``) clipped to
    (0, 1]. See :func:`womlab.rules.draw_thresholds`.
    """

    distribution: str = "uniform"
    low: float = 0.0
    high: float = 1.0
    mean: float = 0.5
    sd: float = 0.1


@dataclass(frozen=True, kw_only=True)
class Adoption:
    """The adoption rule: the rate at which a potential customer becomes a customer.

    Parameters
    ----------
    rule : str
        ``share``: λ = p + q·T/D; ``count``: λ = p + q·T; ``capped``: λ = min(p + q·T, cap);
        ``threshold``: adopts once T/D reaches its own θᵢ (plus p); ``cascade``: independent
        cascade, each newly satisfied customer persuades each neighbour with probability q
        during the next period (plus p). T is the sum of talkers over the organisation's
        satisfied-customer neighbours, D the sum of talkers over all its neighbours. See
        :mod:`womlab.rules`.
    external : float
        External influence p (Bass coefficient of innovation), per period.
    word_of_mouth : float
        Word-of-mouth influence q, per period (per talker for ``count`` and ``capped``).
    satisfied_share : float
        Probability that a new customer is satisfied; only satisfied customers talk.
    talkers_per_customer : float or Talkers
        A number (every organisation has that many talkers) or a table
        ``{distribution = "poisson", mean = 2}``.
    cap : float
        Ceiling on the adoption rate per period (``capped``).
    threshold : Thresholds
        Distribution of the organisations' thresholds (``threshold``), e.g.
        ``{distribution = "uniform", low = 0, high = 1}``.
    """

    section: ClassVar[str] = "adoption"
    rule: str = "share"
    external: float = 0.01
    word_of_mouth: float = 0.3
    satisfied_share: float = 1.0
    talkers_per_customer: Talkers = field(default_factory=Talkers)
    cap: float = 0.05
    threshold: Thresholds = field(default_factory=Thresholds)

    def check(self, scenario: Scenario) -> None:
        _one_of("adoption.rule", self.rule, RULES)
        if self.rule == "cascade":
            _in_unit("adoption.word_of_mouth", self.word_of_mouth)  # a probability per tie under cascade
        th = self.threshold
        _one_of("adoption.threshold.distribution", th.distribution, THRESHOLD_DISTRIBUTIONS)
        for name in ("low", "high", "mean"):
            _in_unit(f"adoption.threshold.{name}", getattr(th, name))
        _non_negative("adoption.threshold.sd", th.sd)
        if th.low >= th.high:
            _fail("adoption.threshold.high", th.high, f"> adoption.threshold.low = {th.low}")
        _non_negative("adoption.external", self.external)
        _non_negative("adoption.word_of_mouth", self.word_of_mouth)
        _in_unit("adoption.satisfied_share", self.satisfied_share)
        _in_unit("adoption.cap", self.cap)
        t = self.talkers_per_customer
        _one_of("adoption.talkers_per_customer.distribution", t.distribution, TALKER_DISTRIBUTIONS)
        _non_negative("adoption.talkers_per_customer.mean", t.mean)


@dataclass(frozen=True, kw_only=True)
class RunSpec:
    """How runs are executed.

    Parameters
    ----------
    periods : int
        Horizon in periods; results have one row per period, 0..periods (period 0 is
        the seeded state).
    time_step : float
        Length of one step of the discrete engines, 1/n of a period for a whole n.
    step_probability : str
        How a rate λ becomes a step probability: ``exponential`` 1 − exp(−λ·dt) or
        ``linear`` min(1, λ·dt).
    replicates : int
        Number of seeded replicate runs.
    engine : str
        ``array`` (fast, numpy) or ``mesa`` (one Mesa agent per organisation).
    jobs : int
        Parallel worker processes (joblib); −1 uses every core.
    """

    section: ClassVar[str] = "run"
    periods: int = 40
    time_step: float = 1.0
    step_probability: str = "exponential"
    replicates: int = 100
    engine: str = "array"
    jobs: int = 1

    def check(self, scenario: Scenario) -> None:
        _positive_int("run.periods", self.periods)
        _positive_int("run.replicates", self.replicates)
        _one_of("run.step_probability", self.step_probability, STEP_FORMS)
        _one_of("run.engine", self.engine, ENGINES)
        if self.jobs == 0 or self.jobs < -1:
            _fail("run.jobs", self.jobs, "a whole number >= 1, or -1 for every core")
        dt = self.time_step
        if not (0 < dt <= 1) or abs(1 / dt - round(1 / dt)) > 1e-9:
            _fail("run.time_step", dt, "1/n of a period for a whole n >= 1 (1, 0.5, 0.25, 0.1, ...)")

    @property
    def steps_per_period(self) -> int:
        return int(round(1 / self.time_step))


@dataclass(frozen=True, kw_only=True)
class Seeding:
    """Who the initial customers are: a seeding strategy and its budget.

    The number of initial customers is ``budget`` when given, else
    ``market.initial_customers`` (or ``market.initial_share``); giving both with
    different values is an error, so a scenario never says two things at once. The
    strategy then chooses *which* organisations they are (``random`` by default: the
    initial customers drawn uniformly, as without this section).

    Parameters
    ----------
    strategy : str
        A name registered in :data:`womlab.seeding.STRATEGIES`: ``random, hubs, bridges,
        pagerank, coreness, fringe, by_region, spread, greedy``.
    budget : int, optional
        Number of initial customers (seeds).
    betweenness_exact_up_to : int
        ``bridges`` computes exact betweenness up to this many organisations and
        sampled betweenness above it.
    betweenness_sample : int
        Number of source organisations sampled for betweenness on larger networks.
    greedy_runs : int
        Monte Carlo runs of the scenario's rule per evaluation of a seed set (``greedy``).
    greedy_candidates : int
        ``greedy`` considers only this many highest-degree organisations as candidates
        (0: every organisation).
    """

    section: ClassVar[str] = "seeding"
    strategy: str = "random"
    budget: int | None = None
    betweenness_exact_up_to: int = 3000
    betweenness_sample: int = 500
    greedy_runs: int = 20
    greedy_candidates: int = 100

    def check(self, scenario: Scenario) -> None:
        from .seeding import STRATEGIES  # late import: seeding imports scenario; the registry is the truth

        _one_of("seeding.strategy", self.strategy, tuple(sorted(STRATEGIES)))
        m = scenario.market
        if self.budget is not None:
            if not (0 <= self.budget <= m.organisations):
                _fail("seeding.budget", self.budget, f"between 0 and market.organisations = {m.organisations}")
            given = m.initial_customers is not None or m.initial_share is not None
            if given and m.n_initial != self.budget:
                raise ScenarioError(
                    f"seeding.budget = {self.budget} disagrees with market initial customers = {m.n_initial}; "
                    "give the number of initial customers in one place (or the same number in both)"
                )
        _positive_int("seeding.betweenness_sample", self.betweenness_sample)
        _non_negative("seeding.betweenness_exact_up_to", self.betweenness_exact_up_to)
        _positive_int("seeding.greedy_runs", self.greedy_runs)
        _non_negative("seeding.greedy_candidates", self.greedy_candidates)


@dataclass(frozen=True, kw_only=True)
class Study:
    """The paired comparison of seeding strategies (:func:`womlab.compare_strategies`).

    Parameters
    ----------
    strategies : list of str
        Strategies to compare; ``random`` (the baseline of every lift) is added first
        when missing.
    replicates : int, optional
        Paired replicates; defaults to ``run.replicates``.
    discount_rate : float
        Discount rate per period r of the discounted customer-periods
        Σₜ customersₜ / (1 + r)ᵗ, t = 1..T.
    outcome : str
        The outcome lifts are computed on: ``customers`` (at the horizon) or
        ``customer_periods`` (discounted).
    bootstrap : int
        Paired bootstrap resamples for the lift intervals.
    """

    section: ClassVar[str] = "study"
    strategies: tuple[str, ...] = ("random", "hubs", "bridges", "pagerank", "coreness", "fringe", "by_region", "spread")
    replicates: int | None = None
    discount_rate: float = 0.0
    outcome: str = "customers"
    bootstrap: int = 2000

    def check(self, scenario: Scenario) -> None:
        from .seeding import STRATEGIES

        if not self.strategies:
            _fail("study.strategies", list(self.strategies), "a non-empty list of strategy names")
        known = tuple(sorted(STRATEGIES))
        for i, name in enumerate(self.strategies):
            _one_of(f"study.strategies[{i}]", name, known)
        if len(set(self.strategies)) != len(self.strategies):
            _fail("study.strategies", list(self.strategies), "a list without repeated names")
        if self.replicates is not None:
            _positive_int("study.replicates", self.replicates)
        _non_negative("study.discount_rate", self.discount_rate)
        _one_of("study.outcome", self.outcome, STUDY_OUTCOMES)
        _positive_int("study.bootstrap", self.bootstrap)

    @property
    def compared(self) -> tuple[str, ...]:
        """The strategies as run: ``random`` first, then the others in the order given."""
        return ("random", *(s for s in self.strategies if s != "random"))


@dataclass(frozen=True, kw_only=True)
class Referral:
    """A referral programme, and the economics it is judged by.

    An organisation is *enrolled* by ``enrol``; while the programme runs (periods
    ``start`` .. ``end``, and until the budget is spent) an enrolled satisfied customer's
    talkers count ``talk_multiplier`` times, plus ``extra_talkers``, in its neighbours'
    word-of-mouth rate (the denominator Dᵢ of the ``share`` rule is left as it is: the
    programme adds word of mouth, it does not change whom a neighbour listens to). Every
    adoption in the window attributed to an enrolled referrer is a successful referral
    and is paid for, in order, while the budget lasts. See :mod:`womlab.programme`.

    Parameters
    ----------
    enrol : str
        ``none`` (no programme: the baseline), ``all`` (every customer), ``share`` (each
        organisation independently with probability ``enrol_share``) or ``strategy``
        (the ``enrol_count`` organisations a seeding strategy chooses).
    enrol_share : float
        Probability of enrolment for ``enrol = "share"``.
    strategy : str
        Seeding strategy name (:data:`womlab.seeding.STRATEGIES`) for ``enrol = "strategy"``.
    enrol_count : int
        Number of organisations the strategy enrols.
    start, end : int
        First and last period (inclusive) in which the programme runs; ``end`` defaults
        to the horizon ``run.periods``.
    talk_multiplier : float
        Multiplier on an enrolled satisfied customer's talkers (1: no boost).
    extra_talkers : float
        Talkers added to an enrolled satisfied customer (0: none).
    scheme : str
        ``linear`` (``reward`` per successful referral), ``bonus`` (``bonus`` once, when a
        referrer's paid referrals reach ``bonus_threshold``) or ``both``.
    reward, bonus : float
        Payments to the referrer.
    bonus_threshold : int
        Number of paid referrals at which the bonus is paid.
    referred_reward : float
        Payment to the referred organisation for each successful referral (any scheme).
    budget : float, optional
        Cap on total payments (undiscounted). A payment that does not fit is not made;
        from then on nothing is paid and the boost stops. Default: no cap.
    value_per_period : float, optional
        Value of a customer in each period it is a customer, from its adoption period to
        the horizon. Default 1 when ``lifetime_value`` is not given.
    lifetime_value : float, optional
        Alternative to ``value_per_period``: a customer's whole value, counted at its
        adoption period.
    discount_rate : float
        Discount rate per period r: a value or payment in period t counts (1 + r)^−t.
    """

    section: ClassVar[str] = "referral"
    enrol: str = "none"
    enrol_share: float = 1.0
    strategy: str = "hubs"
    enrol_count: int = 0
    start: int = 1
    end: int | None = None
    talk_multiplier: float = 1.0
    extra_talkers: float = 0.0
    scheme: str = "linear"
    reward: float = 0.0
    bonus: float = 0.0
    bonus_threshold: int = 3
    referred_reward: float = 0.0
    budget: float | None = None
    value_per_period: float | None = None
    lifetime_value: float | None = None
    discount_rate: float = 0.0

    def check(self, scenario: Scenario) -> None:
        _one_of("referral.enrol", self.enrol, ENROLMENTS)
        _in_unit("referral.enrol_share", self.enrol_share)
        n = scenario.market.organisations
        if self.enrol == "strategy":
            from .seeding import STRATEGIES  # late import: seeding imports scenario; the registry is the truth

            _one_of("referral.strategy", self.strategy, tuple(sorted(STRATEGIES)))
            if not 1 <= self.enrol_count <= n:
                _fail("referral.enrol_count", self.enrol_count,
                      f'between 1 and market.organisations = {n} for enrol = "strategy"')
        T = scenario.run.periods
        if not 1 <= self.start <= T:
            _fail("referral.start", self.start, f"a period between 1 and run.periods = {T}")
        if self.end is not None and not self.start <= self.end <= T:
            _fail("referral.end", self.end, f"a period between referral.start = {self.start} and run.periods = {T}")
        for name in ("talk_multiplier", "extra_talkers", "reward", "bonus", "referred_reward", "discount_rate"):
            _non_negative(f"referral.{name}", getattr(self, name))
        _one_of("referral.scheme", self.scheme, REWARD_SCHEMES)
        _positive_int("referral.bonus_threshold", self.bonus_threshold)
        if self.budget is not None and not (math.isfinite(self.budget) and self.budget > 0):
            _fail("referral.budget", self.budget, "a finite number > 0 (leave it out for no cap)")
        if self.value_per_period is not None and self.lifetime_value is not None:
            raise ScenarioError(
                "referral.value_per_period and referral.lifetime_value are alternatives; give one, "
                f"got {self.value_per_period!r} and {self.lifetime_value!r}"
            )
        for name in ("value_per_period", "lifetime_value"):
            if getattr(self, name) is not None:
                _non_negative(f"referral.{name}", getattr(self, name))

    @property
    def active(self) -> bool:
        """Whether there is a programme at all (``enrol`` is not ``none``)."""
        return self.enrol != "none"

    def last_period(self, periods: int) -> int:
        """The programme's last period on a horizon of ``periods``."""
        return periods if self.end is None else self.end


@dataclass(frozen=True, kw_only=True)
class Axis:
    """One axis of a sweep: a dotted scenario field and the values it takes.

    Either a list of ``values`` (numbers or text, e.g. network kinds) or a range
    ``start``..``stop`` (TOML keys ``from`` and ``to``), on a log scale if ``log``.
    ``steps`` (range axes, ``grid`` design only) is the number of evenly spaced values,
    ends included. A whole-number field gets rounded values.
    """

    name: str
    values: tuple | None = None
    start: float | None = None
    stop: float | None = None
    steps: int | None = None
    log: bool = False

    @property
    def is_range(self) -> bool:
        return self.values is None

    def to_table(self) -> Any:
        """The axis as written in a scenario file: a list, or ``{from, to, steps, log}``."""
        if self.values is not None:
            return list(self.values)
        table: dict[str, Any] = {"from": self.start, "to": self.stop}
        if self.steps is not None:
            table["steps"] = self.steps
        if self.log:
            table["log"] = True
        return table


@dataclass(frozen=True, kw_only=True)
class SweepSpec:
    """A parameter sweep: which scenario fields vary, over which values, how sampled.

    Parameters
    ----------
    design : str
        ``grid`` (every combination of the axes' values), ``latin`` (Latin hypercube of
        ``samples`` points), ``sobol`` (Saltelli sampling on a scrambled Sobol' sequence:
        ``samples × (axes + 2)`` points, for Sobol indices) or ``morris`` (``samples``
        Morris trajectories of ``axes + 1`` points, for elementary effects).
    samples : int
        Points (``latin``), base sample N (``sobol``, a power of 2), or trajectories
        (``morris``). Not used by ``grid``.
    replicates : int
        Seeded replicate runs at every point.
    levels : int
        Number of grid levels of each axis in the Morris design (even, >= 2).
    axes : tuple of Axis
        Read from the ``[sweep.axes]`` table, one key per dotted scenario field. With
        ``latin``, ``sobol`` and ``morris`` a list axis is sampled as a discrete uniform
        choice among its values (the unit interval split into equal parts); ``morris``
        takes range axes only.
    """

    section: ClassVar[str] = "sweep"
    design: str = "grid"
    samples: int = 64
    replicates: int = 10
    levels: int = 4
    axes: tuple[Axis, ...] = ()

    def check(self, scenario: Scenario) -> None:
        _one_of("sweep.design", self.design, SWEEP_DESIGNS)
        _positive_int("sweep.samples", self.samples)
        _positive_int("sweep.replicates", self.replicates)
        if self.design == "sobol" and (self.samples < 2 or self.samples & (self.samples - 1)):
            _fail("sweep.samples", self.samples, 'a power of 2 >= 2 for design = "sobol" (balance of the Sobol\' sequence)')
        if self.design == "morris" and (self.levels < 2 or self.levels % 2):
            _fail("sweep.levels", self.levels, 'an even whole number >= 2 for design = "morris"')
        for axis in self.axes:
            _check_axis(axis, self.design)

    def to_table(self) -> dict[str, Any]:
        """The section as written in a scenario file (axes keyed by dotted field)."""
        return {
            "design": self.design,
            "samples": self.samples,
            "replicates": self.replicates,
            "levels": self.levels,
            "axes": {a.name: a.to_table() for a in self.axes},
        }

    def axis(self, name: str) -> Axis:
        for a in self.axes:
            if a.name == name:
                return a
        raise KeyError(name)


def field_type(dotted: str) -> type:
    """The Python type of the scenario field ``dotted`` (int, float, str or bool).

    Raises ScenarioError with a did-you-mean if no such field exists. Used to validate
    sweep axes; ``adoption.talkers_per_customer`` (a number or a table) counts as float.
    """
    parts = dotted.split(".")
    top = ["name", "seed", *(k for k in SECTIONS if k != "sweep")]
    if parts[0] not in top:
        _unknown(dotted if len(parts) == 1 else parts[0], top)
    hint: Any = _hints(Scenario)[parts[0]]
    for depth in range(1, len(parts)):
        if not dataclasses.is_dataclass(hint):
            _unknown(".".join(parts[: depth + 1]), [])
        known = _field_names(hint)
        if parts[depth] not in known:
            _unknown(".".join(parts[: depth + 1]), known)
        hint = _hints(hint)[parts[depth]]
    if hint is Talkers:
        return float
    if dataclasses.is_dataclass(hint):
        raise ScenarioError(f"{dotted} is a table of fields; a sweep axis must name one of them "
                            f"({', '.join(dotted + '.' + n for n in _field_names(hint))})")
    args = [a for a in typing.get_args(hint) if a is not type(None)]
    return args[0] if args else hint


def _check_axis(axis: Axis, design: str) -> None:
    where = f"sweep.axes.{axis.name!r}"
    try:
        kind = field_type(axis.name)
    except ScenarioError as exc:
        raise ScenarioError(f"{where}: {exc}") from None
    if axis.values is not None:
        if len(axis.values) == 0:
            _fail(where, [], "a non-empty list of values")
        if len(set(map(repr, axis.values))) != len(axis.values):
            _fail(where, list(axis.values), "a list without repeated values")
        if design == "morris":
            _fail(where, list(axis.values), 'a range { from, to } for design = "morris" (elementary effects need a scale)')
        return
    if kind not in (int, float):
        _fail(where, axis.to_table(), f"a list of values ({axis.name} is {kind.__name__}, not a number)")
    for key, value in (("from", axis.start), ("to", axis.stop)):
        if value is None:
            raise ScenarioError(f"{where}.{key} is required for a range axis (or give a list of values)")
        if not math.isfinite(value):
            _fail(f"{where}.{key}", value, "a finite number")
    if axis.start == axis.stop:
        _fail(f"{where}.to", axis.stop, f"different from 'from' = {axis.start}")
    if axis.log and (axis.start <= 0 or axis.stop <= 0):
        _fail(where, axis.to_table(), "a range of positive numbers when log = true")
    if design == "grid":
        if axis.steps is None:
            raise ScenarioError(f'{where}.steps is required for a range axis with design = "grid"')
        if axis.steps < 2:
            _fail(f"{where}.steps", axis.steps, "a whole number >= 2")


def _axes(value: Any, dotted: str) -> tuple[Axis, ...]:
    """Parse the ``[sweep.axes]`` table: dotted field name → list, or {from, to, steps, log}."""
    if isinstance(value, (list, tuple)) and all(isinstance(a, Axis) for a in value):
        return tuple(value)
    if not isinstance(value, Mapping):
        raise ScenarioError(f"[{dotted}] must be a table of dotted field = values, got {value!r}")
    axes = []
    for name, spec in value.items():
        where = f"{dotted}.{name!r}"
        if isinstance(spec, (list, tuple)):
            for i, v in enumerate(spec):
                if isinstance(v, (dict, list, tuple)) or v is None:
                    raise ScenarioError(f"{where}[{i}] must be a number, text or true/false, got {v!r}")
            axes.append(Axis(name=str(name), values=tuple(spec)))
            continue
        if not isinstance(spec, Mapping):
            raise ScenarioError(f"{where} must be a list of values or a table {{ from, to, steps, log }}, got {spec!r}")
        known = ["from", "to", "steps", "log"]
        for key in spec:
            if key not in known:
                _unknown(f"{where}.{key}", known)
        axes.append(
            Axis(
                name=str(name),
                start=_coerce(spec.get("from"), float | None, f"{where}.from"),
                stop=_coerce(spec.get("to"), float | None, f"{where}.to"),
                steps=_coerce(spec.get("steps"), int | None, f"{where}.steps"),
                log=_coerce(spec.get("log", False), bool, f"{where}.log"),
            )
        )
    return tuple(axes)


SECTIONS: dict[str, type] = {
    "market": Market,
    "network": NetworkSpec,
    "adoption": Adoption,
    "run": RunSpec,
    "seeding": Seeding,
    "study": Study,
    "referral": Referral,
    "sweep": SweepSpec,
}
_NESTED: dict[tuple[str, str], type] = {
    ("adoption", "talkers_per_customer"): Talkers,
    ("adoption", "threshold"): Thresholds,
    ("sweep", "axes"): Axis,
}


@dataclass(frozen=True, kw_only=True)
class Scenario:
    """A whole study's parameters; frozen and validated on construction.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"market": {"organisations": 500}, "network": {"kind": "ring", "mean_degree": 4}})
    >>> s.replace("adoption.word_of_mouth", 0.2).adoption.word_of_mouth
    0.2
    """

    name: str = "unnamed"
    seed: int = 0
    market: Market = field(default_factory=Market)
    network: NetworkSpec = field(default_factory=NetworkSpec)
    adoption: Adoption = field(default_factory=Adoption)
    run: RunSpec = field(default_factory=RunSpec)
    seeding: Seeding = field(default_factory=Seeding)
    study: Study = field(default_factory=Study)
    referral: Referral = field(default_factory=Referral)
    sweep: SweepSpec = field(default_factory=SweepSpec)

    def __post_init__(self) -> None:
        if not isinstance(self.seed, int) or self.seed < 0:
            _fail("seed", self.seed, "a whole number >= 0")
        for key in SECTIONS:
            getattr(self, key).check(self)

    # ------------------------------------------------------------------ construction
    @classmethod
    def from_dict(cls, data: Mapping[str, Any], *, base_dir: str | Path | None = None) -> Scenario:
        """Build and validate a scenario from nested plain values (as read from TOML).

        Relative file paths in the ``network`` section are resolved against ``base_dir``
        (the scenario file's folder when loaded with :func:`load_scenario`).
        """
        if not isinstance(data, Mapping):
            raise ScenarioError(f"a scenario must be a table of sections, got {type(data).__name__}")
        top_known = ["name", "seed", *SECTIONS]
        kwargs: dict[str, Any] = {}
        for key, value in data.items():
            if key not in top_known:
                _unknown(key, top_known)
            if key in SECTIONS:
                kwargs[key] = _build_section(SECTIONS[key], key, value, base_dir)
            else:
                kwargs[key] = _coerce(value, _hints(cls)[key], key)
        kwargs.setdefault("market", Market())
        market_given = data.get("market", {})
        _fill_edgelist_size(kwargs, "organisations" in market_given if isinstance(market_given, Mapping) else False)
        return cls(**kwargs)

    def to_dict(self) -> dict[str, Any]:
        """The scenario as nested plain values (TOML/JSON-ready, None fields dropped)."""
        data = _drop_none(dataclasses.asdict(self))
        for key in SECTIONS:  # a section with its own file form (sweep axes keyed by field)
            to_table = getattr(getattr(self, key), "to_table", None)
            if to_table is not None:
                data[key] = to_table()
        return data

    def replace(self, field_or_changes: str | Mapping[str, Any], value: Any = ..., /) -> Scenario:
        """A new validated scenario with one or more dotted fields changed.

        ``s.replace("adoption.word_of_mouth", 0.2)`` or
        ``s.replace({"network.kind": "ring", "run.periods": 60})``.
        """
        changes = {field_or_changes: value} if isinstance(field_or_changes, str) else dict(field_or_changes)
        if isinstance(field_or_changes, str) and value is ...:
            raise TypeError("replace(field, value): value is missing")
        data = self.to_dict()
        for dotted, new in changes.items():
            parts = dotted.split(".")
            node = data
            for depth, part in enumerate(parts[:-1]):
                known = ["name", "seed", *SECTIONS] if depth == 0 else _field_names(_section_type(parts[:depth]))
                if part not in known:
                    _unknown(".".join(parts[: depth + 1]), known)
                child = node.get(part)
                if not isinstance(child, dict):
                    child = {} if child is None else {"mean": child}
                    node[part] = child
                node = child
            node[parts[-1]] = new
        return Scenario.from_dict(data)

    # ------------------------------------------------------------------ derived
    @property
    def organisations(self) -> int:
        return self.market.organisations

    @property
    def n_initial(self) -> int:
        """Number of initial customers: ``seeding.budget`` when given, else ``market.n_initial``."""
        return self.seeding.budget if self.seeding.budget is not None else self.market.n_initial


def _section_type(parts: list[str]) -> type:
    if len(parts) == 1:
        return SECTIONS[parts[0]]
    return _NESTED[(parts[0], parts[1])]


def _field_names(cls: type) -> list[str]:
    return [f.name for f in dataclasses.fields(cls)]


def _hints(cls: type) -> dict[str, Any]:
    return typing.get_type_hints(cls)


def _unknown(dotted: str, known: list[str]) -> typing.NoReturn:
    leaf = dotted.rsplit(".", 1)[-1]
    prefix = dotted[: -len(leaf)]
    close = difflib.get_close_matches(leaf, known, n=1)
    hint = f"; did you mean {prefix}{close[0]!r}?" if close else ""
    raise ScenarioError(f"unknown field {dotted!r}{hint} (known here: {', '.join(known)})")


def _build_section(cls: type, dotted: str, value: Any, base_dir: str | Path | None) -> Any:
    if not isinstance(value, Mapping):
        raise ScenarioError(f"[{dotted}] must be a table of fields, got {value!r}")
    hints = _hints(cls)
    known = _field_names(cls)
    kwargs = {}
    for key, item in value.items():
        if key not in known:
            _unknown(f"{dotted}.{key}", known)
        name = f"{dotted}.{key}"
        nested = _NESTED.get((dotted, key))
        if nested is Talkers:
            kwargs[key] = _talkers(item, name)
        elif nested is Axis:
            kwargs[key] = _axes(item, name)
        elif nested is not None:
            kwargs[key] = _build_section(nested, name, item, base_dir)
        else:
            kwargs[key] = _coerce(item, hints[key], name)
        if cls is NetworkSpec and key in ("path", "nodes_path") and kwargs[key] is not None and base_dir is not None:
            p = Path(kwargs[key])
            kwargs[key] = str(p if p.is_absolute() else (Path(base_dir) / p).resolve())
    return cls(**kwargs)


def _talkers(value: Any, dotted: str) -> Talkers:
    if isinstance(value, Talkers):
        return value
    if isinstance(value, bool) or not isinstance(value, (int, float, Mapping)):
        raise ScenarioError(
            f'{dotted} must be a number or a table {{distribution = "poisson", mean = 2}}, got {value!r}'
        )
    if isinstance(value, Mapping):
        return _build_section(Talkers, dotted, value, None)
    return Talkers(distribution="fixed", mean=float(value))


def _coerce(value: Any, hint: Any, dotted: str) -> Any:
    """Check ``value`` against a field's type hint; ints are accepted for floats."""
    union = typing.get_origin(hint) in (typing.Union, types.UnionType)
    args = typing.get_args(hint) if union else ()  # a list hint's own args are its items, not alternatives
    optional = type(None) in args
    base = next((a for a in args if a is not type(None)), hint) if args else hint
    if value is None:
        if optional:
            return None
        raise ScenarioError(f"{dotted} must not be empty")
    if base is float:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise ScenarioError(f"{dotted} must be a number, got {value!r}")
        return float(value)
    if base is int:
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        if isinstance(value, bool) or not isinstance(value, int):
            raise ScenarioError(f"{dotted} must be a whole number, got {value!r}")
        return value
    if base is str:
        if not isinstance(value, str):
            raise ScenarioError(f"{dotted} must be text, got {value!r}")
        return value
    if base is bool:
        if not isinstance(value, bool):
            raise ScenarioError(f"{dotted} must be true or false, got {value!r}")
        return value
    if typing.get_origin(base) in (list, tuple):
        if not isinstance(value, (list, tuple)):
            raise ScenarioError(f"{dotted} must be a list, got {value!r}")
        (item_hint,) = typing.get_args(base)[:1] or (Any,)
        return tuple(value if item_hint is Any else (_coerce(v, item_hint, f"{dotted}[{i}]") for i, v in enumerate(value)))
    return value


def _fill_edgelist_size(kwargs: dict[str, Any], size_given: bool) -> None:
    """For an edge-list network, the market size comes from the file (in place on ``kwargs``)."""
    network = kwargs.get("network")
    if network is None or network.kind != "edgelist" or network.path is None or not Path(network.path).is_file():
        return
    from .networks import count_edgelist_organisations  # late import: networks imports scenario

    n = count_edgelist_organisations(network.path, network.nodes_path)
    market = kwargs["market"]
    if size_given and market.organisations != n:
        raise ScenarioError(
            f"market.organisations must match the edge list ({n} organisations in {network.path}), "
            f"got {market.organisations}"
        )
    kwargs["market"] = dataclasses.replace(market, organisations=n)


def _drop_none(value: Any) -> Any:
    if isinstance(value, dict):
        return {k: _drop_none(v) for k, v in value.items() if v is not None}
    if isinstance(value, (list, tuple)):
        return [_drop_none(v) for v in value]
    return value


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario TOML file.

    Raises
    ------
    ScenarioError
        If the file is missing, is not valid TOML, or any field is invalid.
    """
    p = Path(path)
    if not p.is_file():
        raise ScenarioError(f"scenario file {str(path)!r} does not exist")
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError(f"{path}: not valid TOML: {exc}") from None
    return Scenario.from_dict(data, base_dir=p.parent)
