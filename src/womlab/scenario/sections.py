"""The sections of a scenario: market, network, adoption, run, seeding, study, referral.

Each section is a frozen, keyword-only dataclass with a ``section`` class variable and a
``check(self, scenario)`` method that raises :class:`~womlab.errors.ScenarioError` naming
the dotted field. Names of things registered by the layers above (seeding strategies)
are validated against :mod:`womlab.scenario.registry`.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path
from typing import Any, ClassVar, Protocol

from womlab.errors import ScenarioError
from womlab.scenario.checks import fail, found_columns, in_unit, non_negative, one_of, positive_int, utf8_text
from womlab.scenario.registry import strategy_names

__all__ = [
    "Market",
    "NetworkSpec",
    "Talkers",
    "Thresholds",
    "Adoption",
    "RunSpec",
    "Seeding",
    "Study",
    "Referral",
    "ScenarioParts",
    "NoEffect",
    "NO_EFFECT",
    "no_effect",
    "without_effect",
    "NETWORK_KINDS",
    "FILE_KINDS",
    "RULES",
    "STEP_FORMS",
    "ENGINES",
    "CLOCKS",
    "CONTINUOUS_RULES",
    "STUDY_OUTCOMES",
    "TALKER_DISTRIBUTIONS",
    "THRESHOLD_DISTRIBUTIONS",
    "ENROLMENTS",
    "REWARD_SCHEMES",
]

NETWORK_KINDS = (
    "complete",
    "ring",
    "regular",
    "random",
    "small_world",
    "regional",
    "regional_blocks",
    "scale_free",
    "edgelist",
    "graphml",
    "gexf",
)
# Kinds read from a file named by network.path (their size and mean degree come from it)
FILE_KINDS = ("edgelist", "graphml", "gexf")
RULES = ("share", "count", "capped", "threshold", "cascade")
STEP_FORMS = ("exponential", "linear")
ENGINES = ("array", "mesa")
CLOCKS = ("discrete", "continuous")
# Rules whose word-of-mouth influence is a constant rate per satisfied-customer neighbour,
# the ones the continuous clock runs exactly (womlab.dynamics.event_engine). A new rule joins this list
# only if it is of that form.
CONTINUOUS_RULES = ("share", "count")
STUDY_OUTCOMES = ("customers", "customer_periods")
TALKER_DISTRIBUTIONS = ("fixed", "poisson")
THRESHOLD_DISTRIBUTIONS = ("uniform", "fixed", "normal")
ENROLMENTS = ("none", "all", "share", "strategy")
REWARD_SCHEMES = ("linear", "bonus", "both")


@dataclass(frozen=True, kw_only=True)
class Market:
    """Who can buy: the organisations of the market and who already are customers.

    Parameters
    ----------
    organisations : int
        Market size N. For the kinds read from a file (``edgelist``, ``graphml``, ``gexf``) it
        may be left out and is then the number of organisations in the file; if given, it
        must match the file.
    initial_customers : int
        Customers at period 0, chosen at random (or by a seeding strategy). 0 is valid:
        adoption then starts from external influence alone, as in the Bass model.
    initial_share : float, optional
        Alternative to ``initial_customers``: a share of N, rounded to the nearest whole.
    regions : int
        Number of regions organisations are split into.
    opens : list of tables, optional
        Parts of the market that enter later, ``[{region = 3, period = 12}, {segment = "...",
        period = 5}]`` (:class:`womlab.scenario.markets.Opening`): until then their organisations
        are not potential customers, feel no influence and are not counted in the market;
        ``period = "never"``: a part that stays closed (until a lever opens it).
    """

    section: ClassVar[str] = "market"
    organisations: int = 1000
    initial_customers: int | None = None
    initial_share: float | None = None
    regions: int = 1
    opens: tuple[Any, ...] | None = None

    def check(self, scenario: ScenarioParts) -> None:
        positive_int("market.organisations", self.organisations)
        positive_int("market.regions", self.regions)
        if self.regions > self.organisations:
            fail("market.regions", self.regions, f"at most market.organisations = {self.organisations}")
        if self.initial_customers is not None and self.initial_share is not None:
            raise ScenarioError(
                "market.initial_customers and market.initial_share are alternatives; give one, "
                f"got {self.initial_customers!r} and {self.initial_share!r}"
            )
        if self.initial_share is not None:
            in_unit("market.initial_share", self.initial_share)
        if self.initial_customers is not None and not (0 <= self.initial_customers <= self.organisations):
            fail(
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
        One of ``complete, ring, regular, random, small_world, regional, regional_blocks,
        scale_free, edgelist, graphml, gexf``. ``regional``: a small world inside each
        region plus ties to other regions (clustered); ``regional_blocks``: a stochastic
        block model of the regions (no clustering of its own). ``edgelist``, ``graphml``
        and ``gexf`` are read from ``path``.
    mean_degree : float
        Mean number of ties per organisation (taken from the file for the file kinds,
        ignored for ``complete``). Must be even for ``ring``, ``small_world``,
        ``regional`` and ``scale_free`` and whole for ``regular``.
    rewiring : float
        Watts–Strogatz rewiring probability (``small_world``; inside each region for
        ``regional``).
    within_region_share : float
        Share of each organisation's ties inside its own region (``regional``,
        ``regional_blocks``).
    path : str, optional
        The network file, relative to the scenario file: a CSV with columns
        ``source,target`` (``edgelist``), a GraphML (``graphml``) or GEXF (``gexf``) file.
    nodes_path : str, optional
        CSV file with columns ``id,region`` giving each organisation's region (``edgelist``).
    region_attribute : str
        The node attribute holding each organisation's region in a GraphML or GEXF file
        (numbers or text, kept as given); without it everyone is in region 0.
    """

    section: ClassVar[str] = "network"
    kind: str = "random"
    mean_degree: float = 8.0
    rewiring: float = 0.1
    within_region_share: float = 0.85
    path: str | None = None
    nodes_path: str | None = None
    region_attribute: str = "region"

    def check(self, scenario: ScenarioParts) -> None:
        one_of("network.kind", self.kind, NETWORK_KINDS)
        in_unit("network.rewiring", self.rewiring)
        in_unit("network.within_region_share", self.within_region_share)
        n = scenario.market.organisations
        if self.kind in FILE_KINDS:
            if self.path is None:
                raise ScenarioError(f'network.path is required when network.kind = "{self.kind}", got None')
            if self.nodes_path is not None and self.kind != "edgelist":
                fail(
                    "network.nodes_path",
                    self.nodes_path,
                    'only with network.kind = "edgelist" (graph files carry '
                    "their nodes' regions; see network.region_attribute)",
                )
            what = {
                "edgelist": "an existing CSV file",
                "graphml": "an existing GraphML file",
                "gexf": "an existing GEXF file",
            }[self.kind]
            for name in ("path", "nodes_path"):
                value = getattr(self, name)
                if value is not None and not Path(value).is_file():
                    fail(f"network.{name}", value, what if name == "path" else "an existing CSV file")
            return
        if self.kind == "complete":
            return
        k = self.mean_degree
        if not (math.isfinite(k) and 0 < k < n):
            fail("network.mean_degree", k, f"> 0 and < market.organisations = {n}")
        if self.kind in ("ring", "small_world", "regional", "scale_free") and (k != int(k) or int(k) % 2):
            fail("network.mean_degree", k, f'an even whole number for kind = "{self.kind}"')
        if self.kind == "regular":
            if k != int(k):
                fail("network.mean_degree", k, 'a whole number for kind = "regular"')
            if (int(k) * n) % 2:
                fail("network.mean_degree", k, f"such that mean_degree x organisations is even (organisations = {n})")
        if self.kind in ("regional", "regional_blocks") and scenario.market.regions < 2:
            fail("market.regions", scenario.market.regions, f'at least 2 for network.kind = "{self.kind}"')
        smallest = n // scenario.market.regions
        if self.kind == "regional" and smallest <= k:
            fail(
                "network.mean_degree",
                k,
                f"less than the smallest region ({smallest} organisations) for kind = "
                '"regional", whose regions are ring lattices of their own',
            )


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
        Word-of-mouth influence q, per period (per talker for ``count`` and ``capped``); under
        ``threshold`` the rate per period at which an organisation over its threshold adopts
        (``inf``: in the step it crosses); under ``cascade`` the probability of each tie's one
        chance, a period after the persuader adopted.
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

    Customers who leave (churn):

    churn : float
        Rate per period at which a satisfied customer leaves (0: customers stay for ever).
        A customer who leaves is a *former customer*: it no longer talks for the product,
        is not counted in ``customers``, and does not become a customer again within the
        horizon.
    churn_dissatisfied : float, optional
        The same rate for dissatisfied customers; default ``churn``.

    Customers who warn (negative word of mouth):

    warning : float
        Strength of the warnings of dissatisfied customers, in the units of
        ``word_of_mouth`` for the rule in use (a probability per tie under ``cascade``).
        A potential customer exposed to warnings becomes a *rejecter*, who never adopts
        within the horizon, at the rule's word-of-mouth rate with ``warning`` in place of q
        and the warners' talkers in place of the satisfied customers' (0: no warnings).
    former_warn : bool
        Former customers warn too (needs ``warning`` > 0).
    rejecters_warn : bool
        Rejecters pass the warning on (needs ``warning`` > 0).
    """

    section: ClassVar[str] = "adoption"
    rule: str = "share"
    external: float = 0.01
    word_of_mouth: float = 0.3
    satisfied_share: float = 1.0
    talkers_per_customer: Talkers = field(default_factory=Talkers)
    cap: float = 0.05
    threshold: Thresholds = field(default_factory=Thresholds)
    # churn
    churn: float = 0.0
    churn_dissatisfied: float | None = None
    # negative word of mouth
    warning: float = 0.0
    former_warn: bool = False
    rejecters_warn: bool = False

    def check(self, scenario: ScenarioParts) -> None:
        one_of("adoption.rule", self.rule, RULES)
        for name in ("word_of_mouth", "warning"):
            value = getattr(self, name)
            if self.rule == "cascade":
                in_unit(f"adoption.{name}", value)  # a probability per tie under cascade
            elif self.rule == "threshold" and value == math.inf:
                pass  # the instant crossing: the limit of an ever faster rate once over the threshold
            elif not (math.isfinite(value) and value >= 0):
                allowed = (
                    "a finite number >= 0 (or inf under the threshold rule)"
                    if self.rule != "threshold"
                    else ("a number >= 0 or inf")
                )
                fail(f"adoption.{name}", value, allowed)
        th = self.threshold
        one_of("adoption.threshold.distribution", th.distribution, THRESHOLD_DISTRIBUTIONS)
        for name in ("low", "high", "mean"):
            in_unit(f"adoption.threshold.{name}", getattr(th, name))
        non_negative("adoption.threshold.sd", th.sd)
        if th.low >= th.high:
            fail("adoption.threshold.high", th.high, f"> adoption.threshold.low = {th.low}")
        non_negative("adoption.external", self.external)
        in_unit("adoption.satisfied_share", self.satisfied_share)
        in_unit("adoption.cap", self.cap)
        t = self.talkers_per_customer
        one_of("adoption.talkers_per_customer.distribution", t.distribution, TALKER_DISTRIBUTIONS)
        non_negative("adoption.talkers_per_customer.mean", t.mean)
        non_negative("adoption.churn", self.churn)
        if self.churn_dissatisfied is not None:
            non_negative("adoption.churn_dissatisfied", self.churn_dissatisfied)
        for name in ("former_warn", "rejecters_warn"):
            if getattr(self, name) and self.warning == 0:
                fail(
                    f"adoption.{name}",
                    True,
                    "false while adoption.warning = 0 (only warnings make rejecters, and "
                    "only warners pass them on); set adoption.warning > 0 or leave it out",
                )

    @property
    def dissatisfied_churn(self) -> float:
        """The churn rate of dissatisfied customers: ``churn_dissatisfied``, or ``churn`` when not given."""
        return self.churn if self.churn_dissatisfied is None else self.churn_dissatisfied

    @property
    def churns(self) -> bool:
        """Whether any customer can leave (a churn rate above 0)."""
        return self.churn > 0 or self.dissatisfied_churn > 0

    @property
    def warns(self) -> bool:
        """Whether warnings are on (``warning`` above 0)."""
        return self.warning > 0


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
    clock : str
        ``discrete`` (steps of ``time_step``; the array or Mesa engine) or ``continuous``
        (the event engine, :mod:`womlab.dynamics.event_engine`: exact adoption times, no time step; for
        the rules in ``CONTINUOUS_RULES``, with ``engine = "array"``).
    report_every : float
        Spacing of the rows of :meth:`RunResult.curve` on a finer grid (1/n of a period;
        1 gives the period grid). Per-period tables are always on the period grid.
    """

    section: ClassVar[str] = "run"
    periods: int = 40
    time_step: float = 1.0
    step_probability: str = "exponential"
    replicates: int = 100
    engine: str = "array"
    jobs: int = 1
    clock: str = "discrete"
    report_every: float = 1.0

    def check(self, scenario: ScenarioParts) -> None:
        positive_int("run.periods", self.periods)
        positive_int("run.replicates", self.replicates)
        one_of("run.step_probability", self.step_probability, STEP_FORMS)
        one_of("run.engine", self.engine, ENGINES)
        if self.jobs == 0 or self.jobs < -1:
            fail("run.jobs", self.jobs, "a whole number >= 1, or -1 for every core")
        dt = self.time_step
        if not (0 < dt <= 1) or abs(1 / dt - round(1 / dt)) > 1e-9:
            fail("run.time_step", dt, "1/n of a period for a whole n >= 1 (1, 0.5, 0.25, 0.1, ...)")
        r = self.report_every
        if not (0 < r <= 1) or abs(1 / r - round(1 / r)) > 1e-9:
            fail("run.report_every", r, "1/n of a period for a whole n >= 1 (1, 0.5, 0.25, 0.1, ...)")
        one_of("run.clock", self.clock, CLOCKS)
        if r < 1 and self.engine == "mesa" and self.clock == "discrete":
            fail(
                "run.report_every", r, 'a whole period (1) with run.engine = "mesa", which keeps adoption periods only'
            )
        if self.clock == "continuous":
            rule = scenario.adoption.rule
            if rule not in CONTINUOUS_RULES:
                raise ScenarioError(
                    f'adoption.rule = "{rule}" cannot run on run.clock = "continuous": the continuous clock needs '
                    f"word-of-mouth influence at a constant rate per satisfied customer neighbour "
                    f'(rules {", ".join(CONTINUOUS_RULES)}); use run.clock = "discrete"'
                )
            if scenario.adoption.churns:
                raise ScenarioError(
                    f"adoption.churn = {scenario.adoption.churn!r}: churn (customers who leave) runs on run.clock = "
                    '"discrete" only (the event engine keeps adoption times, not stays); use run.clock = "discrete" '
                    "(or adoption.churn = 0 and adoption.churn_dissatisfied = 0)"
                )
            if scenario.adoption.warns:
                raise ScenarioError(
                    f"adoption.warning = {scenario.adoption.warning!r}: warnings cannot run on run.clock = "
                    '"continuous": a potential customer who is warned before it adopts never adopts, which makes '
                    "adoption a race between two spreads that first-passage times do not solve; use "
                    'run.clock = "discrete" (or adoption.warning = 0)'
                )
            if scenario.referral.active:
                raise ScenarioError(
                    f'referral.enrol = "{scenario.referral.enrol}": a referral programme runs on run.clock = "discrete" '
                    f'only (its boost and payments are per period); use run.clock = "discrete"'
                )
            if self.engine != "array":
                raise ScenarioError(
                    f'run.engine = "{self.engine}" runs on run.clock = "discrete" only; '
                    f'run.clock = "continuous" uses the event engine (leave run.engine = "array")'
                )

    @property
    def steps_per_period(self) -> int:
        return int(round(1 / self.time_step))

    @property
    def reports_per_period(self) -> int:
        return int(round(1 / self.report_every))


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
        pagerank, coreness, fringe, by_region, spread, greedy, listed``.
    budget : int, optional
        Number of initial customers (seeds). With ``listed`` it defaults to the number of
        ids listed, and must equal it if given.
    ids : list, optional
        ``listed``: the organisations to seed, by their ids as given in the network file
        (or positions 0..N−1 for generated networks); matched as text, so ``7`` and ``"7"``
        are the same id.
    ids_path : str, optional
        ``listed``: a CSV file with the ids to seed in the column ``ids_column``, one per
        row; relative to the scenario file. An alternative to ``ids``.
    ids_column : str
        The column of ``ids_path`` that holds the ids (default ``id``).
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
    ids: tuple[Any, ...] | None = None
    ids_path: str | None = None
    ids_column: str = "id"

    def check(self, scenario: ScenarioParts) -> None:
        one_of("seeding.strategy", self.strategy, strategy_names())
        m = scenario.market
        self._check_listed(m)
        if self.budget is not None:
            if not (0 <= self.budget <= m.organisations):
                fail("seeding.budget", self.budget, f"between 0 and market.organisations = {m.organisations}")
            given = m.initial_customers is not None or m.initial_share is not None
            if given and m.n_initial != self.budget:
                raise ScenarioError(
                    f"seeding.budget = {self.budget} disagrees with market initial customers = {m.n_initial}; "
                    "give the number of initial customers in one place (or the same number in both)"
                )
        positive_int("seeding.betweenness_sample", self.betweenness_sample)
        non_negative("seeding.betweenness_exact_up_to", self.betweenness_exact_up_to)
        positive_int("seeding.greedy_runs", self.greedy_runs)
        non_negative("seeding.greedy_candidates", self.greedy_candidates)

    def _check_listed(self, m: Market) -> None:
        given = [name for name in ("ids", "ids_path") if getattr(self, name) is not None]
        if self.strategy != "listed":
            if given:
                fail(
                    f"seeding.{given[0]}",
                    getattr(self, given[0]),
                    'used only with seeding.strategy = "listed"; leave it out',
                )
            return
        if len(given) != 1:
            raise ScenarioError(
                'seeding.strategy = "listed" needs exactly one of seeding.ids (a list of organisation '
                f"ids) and seeding.ids_path (a CSV file), got {' and '.join(given) or 'neither'}"
            )
        ids = self.listed_ids()
        if not ids:
            fail(f"seeding.{given[0]}", self.ids_path or list(self.ids or ()), "at least one organisation id")
        repeated = sorted({i for i in ids if ids.count(i) > 1})
        if repeated:
            fail(
                f"seeding.{given[0]}",
                self.ids_path or list(self.ids or ()),
                f"each id once (repeated: {', '.join(repr(r) for r in repeated[:5])})",
            )
        if len(ids) > m.organisations:
            fail(f"seeding.{given[0]}", f"{len(ids)} ids", f"at most market.organisations = {m.organisations}")
        stated = (
            self.budget
            if self.budget is not None
            else (m.n_initial if (m.initial_customers is not None or m.initial_share is not None) else None)
        )
        if stated is not None and stated != len(ids):
            raise ScenarioError(
                f"seeding.{given[0]} lists {len(ids)} organisations but the number of initial customers is {stated} "
                "(seeding.budget or market.initial_customers); give the same number, or leave it out"
            )

    def listed_ids(self) -> list[str]:
        """The ids of ``listed`` as text, from ``ids`` or the ``ids_column`` of ``ids_path``."""
        if self.ids is not None:
            return [str(v).strip() for v in self.ids]
        if self.ids_path is None:
            return []
        return list(_ids_from_file(self.ids_path, self.ids_column))

    @property
    def listed_count(self) -> int | None:
        """The number of seeds a ``listed`` strategy names (None for other strategies)."""
        return len(self.listed_ids()) if self.strategy == "listed" else None


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

    def check(self, scenario: ScenarioParts) -> None:
        if not self.strategies:
            fail("study.strategies", list(self.strategies), "a non-empty list of strategy names")
        known = strategy_names()
        for i, name in enumerate(self.strategies):
            one_of(f"study.strategies[{i}]", name, known)
        if len(set(self.strategies)) != len(self.strategies):
            fail("study.strategies", list(self.strategies), "a list without repeated names")
        if self.replicates is not None:
            positive_int("study.replicates", self.replicates)
        non_negative("study.discount_rate", self.discount_rate)
        one_of("study.outcome", self.outcome, STUDY_OUTCOMES)
        positive_int("study.bootstrap", self.bootstrap)

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
    and is paid for, in order, while the budget lasts. See :mod:`womlab.dynamics.programme`.

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
    lifetime_value_from_churn : bool
        Derive ``lifetime_value`` instead of giving it: ``value_per_period`` (default 1) as the
        geometric annuity of ``adoption.churn`` and ``discount_rate``,
        v·(1 + r)/(1 + r − e^{−δ}) (:func:`womlab.aggregate.geometric_lifetime_value`; Gupta &
        Lehmann 2003). Needs ``adoption.churn`` above 0; one number for every customer, at the
        satisfied customers' rate.
    discount_rate : float
        Discount rate per period r: a value or payment in period t counts (1 + r)^−t.
    lifetime : int, optional
        Periods both arms run past the horizon, the programme off, to split its value into
        acceleration and expansion (:func:`womlab.evaluate_programme`). Default: until the
        baseline's market is exhausted.
    referred_churn_multiplier : float, optional
        Multiplier on the churn rate of the customers the programme brings in (paid
        referrals): below 1 they stay longer (Schmitt, Skiera & Van den Bulte 2011). Needs
        churn (``adoption.churn`` or ``adoption.churn_dissatisfied`` above 0). Default 1.
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
    lifetime: int | None = None
    referred_churn_multiplier: float | None = None
    lifetime_value_from_churn: bool = False

    def check(self, scenario: ScenarioParts) -> None:
        one_of("referral.enrol", self.enrol, ENROLMENTS)
        if self.lifetime is not None and (
            isinstance(self.lifetime, bool) or not isinstance(self.lifetime, int) or self.lifetime < 0
        ):
            fail(
                "referral.lifetime",
                self.lifetime,
                "a whole number of periods >= 0 (leave it out: until the baseline's market is exhausted)",
            )
        in_unit("referral.enrol_share", self.enrol_share)
        n = scenario.market.organisations
        if self.enrol == "strategy":
            one_of("referral.strategy", self.strategy, strategy_names())
            if not 1 <= self.enrol_count <= n:
                fail(
                    "referral.enrol_count",
                    self.enrol_count,
                    f'between 1 and market.organisations = {n} for enrol = "strategy"',
                )
        T = scenario.run.periods
        if not 1 <= self.start <= T:
            fail("referral.start", self.start, f"a period between 1 and run.periods = {T}")
        if self.end is not None and not self.start <= self.end <= T:
            fail("referral.end", self.end, f"a period between referral.start = {self.start} and run.periods = {T}")
        for name in ("talk_multiplier", "extra_talkers", "reward", "bonus", "referred_reward", "discount_rate"):
            non_negative(f"referral.{name}", getattr(self, name))
        one_of("referral.scheme", self.scheme, REWARD_SCHEMES)
        positive_int("referral.bonus_threshold", self.bonus_threshold)
        if self.budget is not None and not (math.isfinite(self.budget) and self.budget > 0):
            fail("referral.budget", self.budget, "a finite number > 0 (leave it out for no cap)")
        if self.value_per_period is not None and self.lifetime_value is not None:
            raise ScenarioError(
                "referral.value_per_period and referral.lifetime_value are alternatives; give one, "
                f"got {self.value_per_period!r} and {self.lifetime_value!r}"
            )
        for name in ("value_per_period", "lifetime_value"):
            if getattr(self, name) is not None:
                non_negative(f"referral.{name}", getattr(self, name))
        if self.referred_churn_multiplier is not None:
            non_negative("referral.referred_churn_multiplier", self.referred_churn_multiplier)
            if not scenario.adoption.churns:
                fail(
                    "referral.referred_churn_multiplier",
                    self.referred_churn_multiplier,
                    "left out while no customer churns (adoption.churn and adoption.churn_dissatisfied are 0); "
                    "set a churn rate > 0",
                )

        if self.lifetime_value_from_churn:
            if self.lifetime_value is not None:
                fail(
                    "referral.lifetime_value_from_churn",
                    True,
                    "false when referral.lifetime_value is given (the "
                    "lifetime value is either given or derived from churn)",
                )
            if scenario.adoption.churn <= 0:
                fail(
                    "referral.lifetime_value_from_churn",
                    True,
                    "false while adoption.churn = 0 (a lifetime value "
                    "derived from churn needs customers who leave); set adoption.churn > 0",
                )

    @property
    def churn_multiplier(self) -> float:
        """``referred_churn_multiplier``, 1 when not given."""
        return 1.0 if self.referred_churn_multiplier is None else float(self.referred_churn_multiplier)

    @property
    def active(self) -> bool:
        """Whether there is a programme at all (``enrol`` is not ``none``)."""
        return self.enrol != "none"

    def last_period(self, periods: int) -> int:
        """The programme's last period on a horizon of ``periods``."""
        return periods if self.end is None else self.end


def _ids_from_file(path: str, column: str) -> tuple[str, ...]:
    """The ids in ``column`` of the CSV file ``path`` (stripped text), remembered per file version."""
    p = Path(path)
    if not p.is_file():
        fail("seeding.ids_path", path, "an existing CSV file")
    return _read_ids(str(p), column, p.stat().st_mtime_ns, p.stat().st_size)


@lru_cache(maxsize=32)
def _read_ids(path: str, column: str, mtime: int, size: int) -> tuple[str, ...]:
    name = Path(path).name
    try:
        text = utf8_text(Path(path).read_bytes(), "CSV")
        rows = list(csv.reader(io.StringIO(text, newline="")))
    except OSError as exc:
        raise ScenarioError(f"seeding.ids_path: cannot read {name!r}: {exc.strerror}") from None
    except ValueError as exc:
        raise ScenarioError(f"seeding.ids_path: {name!r} {exc}") from None
    except csv.Error:
        raise ScenarioError(f"seeding.ids_path: {name!r} is not a CSV (its rows do not parse)") from None
    header = [h.strip() for h in rows[0]] if rows else []
    if column not in header:
        raise ScenarioError(  # never the file's first line, unless it reads as a CSV header
            f"seeding.ids_path: {name!r} must have a column {column!r} (seeding.ids_column)"
            f"{found_columns(header) if header else ' (it is empty)'}"
        )
    at = header.index(column)
    ids = []
    for line, row in enumerate(rows[1:], start=2):
        value = row[at].strip() if at < len(row) else ""
        if not value:
            raise ScenarioError(
                f"seeding.ids_path: {name!r} line {line} has no id in column {column!r}; "
                "allowed: an organisation id on every row"
            )
        ids.append(value)
    return tuple(ids)


class ScenarioParts(Protocol):
    """The whole scenario as a section's ``check`` reads it (:class:`womlab.scenario.Scenario` is one).

    Sections check fields against each other (a referral window within ``run.periods``,
    a budget within ``market.organisations``); typing the argument by what they read
    keeps this module from importing the scenario class built from these sections.
    """

    @property
    def market(self) -> Market: ...

    @property
    def network(self) -> NetworkSpec: ...

    @property
    def adoption(self) -> Adoption: ...

    @property
    def run(self) -> RunSpec: ...

    @property
    def seeding(self) -> Seeding: ...

    @property
    def referral(self) -> Referral: ...


# ----------------------------------------------------------------------------- fields without effect
@dataclass(frozen=True)
class NoEffect:
    """A field that has no effect while ``when(scenario)`` holds, and why (``because(scenario)``).

    ``field`` is a dotted field, or a table (``adoption.threshold``) that covers its fields.
    """

    field: str
    when: Callable[[Any], bool]
    because: Callable[[Any], str]


#: Every field-without-effect rule; :func:`no_effect` adds one. A given field that matches a
#: rule whose ``when`` holds gets a one-line warning (:func:`without_effect`), so that a
#: value a user set, or a sweep varies, is never silently ignored.
NO_EFFECT: list[NoEffect] = []


def no_effect(field_: str, when: Callable[[Any], bool], because: Callable[[Any], str]) -> None:
    """Declare that ``field_`` has no effect while ``when(scenario)`` holds, for the reason ``because(scenario)``."""
    NO_EFFECT.append(NoEffect(field_, when, because))


def _value(scenario: Any, dotted: str) -> Any:
    node = scenario
    for part in dotted.split("."):
        node = getattr(node, part, None)
    return node


def without_effect(scenario: Any, given: Iterable[str]) -> list[str]:
    """One message per given field that has no effect in ``scenario``, in the order given.

    ``given`` holds the dotted fields the user set (in the file, with ``--set`` or through
    ``Scenario.replace``), so a default never warns.
    """
    out = []
    for dotted in given:
        for rule in NO_EFFECT:
            if (dotted == rule.field or dotted.startswith(rule.field + ".")) and rule.when(scenario):
                value = _value(scenario, dotted)
                shown = f"{value:g}" if isinstance(value, float) else repr(value)
                out.append(f"{dotted} = {shown} has no effect: {rule.because(scenario)}")
                break
    return out


def _uses(scenario: Any, name: str) -> bool:
    """Whether any part of the scenario chooses organisations with the strategy ``name``."""
    r = scenario.referral
    return (
        scenario.seeding.strategy == name
        or name in scenario.study.strategies
        or (r.enrol == "strategy" and r.strategy == name)
    )


def _no_one_enrolled(s: Any) -> bool:
    return s.referral.enrol == "none" or (s.referral.enrol == "share" and s.referral.enrol_share == 0)


def _enrolment(s: Any) -> str:
    if s.referral.enrol == "none":
        return 'referral.enrol = "none" enrols no one'
    return 'referral.enrol = "share" with referral.enrol_share = 0 enrols no one'


no_effect(
    "adoption.cap",
    lambda s: s.adoption.rule != "capped",
    lambda s: f'adoption.rule = "{s.adoption.rule}" (only the capped rule has a ceiling)',
)
no_effect(
    "adoption.threshold",
    lambda s: s.adoption.rule != "threshold",
    lambda s: f'adoption.rule = "{s.adoption.rule}" (thresholds belong to the threshold rule)',
)
_FILE_KINDS = ("edgelist", "graphml", "gexf")


def _kinds(s: Any) -> set[str]:
    """The network kinds a scenario runs on: its own, and those a fit chooses among."""
    fit = getattr(s, "fit", None)
    return {s.network.kind, *(getattr(fit, "network_kinds", ()) or ())}


no_effect(
    "network.rewiring",
    lambda s: not _kinds(s) & {"small_world", "regional"},
    lambda s: f'network.kind = "{s.network.kind}" (rewiring shapes small worlds: kinds small_world, regional)',
)
no_effect(
    "network.within_region_share",
    lambda s: not _kinds(s) & {"regional", "regional_blocks"},
    lambda s: f'network.kind = "{s.network.kind}" (it shapes regions: kinds regional, regional_blocks)',
)
no_effect(
    "network.mean_degree",
    lambda s: s.network.kind == "complete" or s.network.kind in _FILE_KINDS,
    lambda s: (
        "every organisation is tied to every other on the complete network"
        if s.network.kind == "complete"
        else "a network file has its own mean degree, read from the file"
    ),
)
no_effect(
    "network.path",
    lambda s: s.network.kind not in _FILE_KINDS,
    lambda s: f'network.kind = "{s.network.kind}" (a file is read for kinds {", ".join(_FILE_KINDS)} only)',
)
no_effect(
    "network.nodes_path",
    lambda s: s.network.kind != "edgelist",
    lambda s: f'network.kind = "{s.network.kind}" (a node file is read for kind = "edgelist" only)',
)
no_effect(
    "network.region_attribute",
    lambda s: s.network.kind not in ("graphml", "gexf"),
    lambda s: f'network.kind = "{s.network.kind}" (it names a GraphML or GEXF node attribute)',
)
no_effect(
    "market.regions",
    lambda s: s.network.kind == "edgelist" and s.network.nodes_path is None,
    lambda s: "an edge list without network.nodes_path puts every organisation in one region",
)
for _name in (
    "referral.strategy",
    "referral.enrol_count",
    "referral.start",
    "referral.end",
    "referral.talk_multiplier",
    "referral.extra_talkers",
    "referral.scheme",
    "referral.reward",
    "referral.bonus",
    "referral.bonus_threshold",
    "referral.referred_reward",
    "referral.budget",
):
    no_effect(_name, _no_one_enrolled, _enrolment)
no_effect(
    "referral.enrol_share",
    lambda s: s.referral.enrol != "share",
    lambda s: f'referral.enrol = "{s.referral.enrol}" (the share applies to enrol = "share")',
)
for _name in ("referral.strategy", "referral.enrol_count"):
    no_effect(
        _name,
        lambda s: s.referral.enrol != "strategy",
        lambda s: f'referral.enrol = "{s.referral.enrol}" (it applies to enrol = "strategy")',
    )
for _name in ("referral.bonus", "referral.bonus_threshold"):
    no_effect(
        _name,
        lambda s: s.referral.scheme == "linear",
        lambda s: 'referral.scheme = "linear" pays no bonus (use "bonus" or "both")',
    )
no_effect(
    "referral.reward",
    lambda s: s.referral.scheme == "bonus",
    lambda s: 'referral.scheme = "bonus" pays the bonus only (use "linear" or "both")',
)
no_effect(
    "adoption.talkers_per_customer",
    lambda s: s.adoption.rule == "cascade",
    lambda s: 'adoption.rule = "cascade" (each tie is one chance with probability word_of_mouth; talkers play no part)',
)
# churn and warnings: fields of a mechanism that cannot act in the scenario
no_effect(
    "adoption.churn_dissatisfied",
    lambda s: s.adoption.satisfied_share == 1,
    lambda s: "adoption.satisfied_share = 1 (no customer is dissatisfied)",
)
no_effect(
    "adoption.warning",
    lambda s: s.adoption.satisfied_share == 1 and not (s.adoption.former_warn and s.adoption.churns),
    lambda s: (
        "adoption.satisfied_share = 1 and no former customer warns (only dissatisfied customers, former "
        "customers with former_warn and rejecters with rejecters_warn warn)"
    ),
)
no_effect(
    "adoption.former_warn",
    lambda s: not s.adoption.churns,
    lambda s: (
        "no customer churns (adoption.churn and adoption.churn_dissatisfied are 0), so there are no former customers"
    ),
)
for _name in ("run.time_step", "run.step_probability"):
    no_effect(
        _name,
        lambda s: s.run.clock == "continuous",
        lambda s: 'run.clock = "continuous" has no time step (exact adoption times)',
    )
for _name in ("seeding.betweenness_exact_up_to", "seeding.betweenness_sample"):
    no_effect(_name, lambda s: not _uses(s, "bridges"), lambda s: "no strategy in use is bridges")
for _name in ("seeding.greedy_runs", "seeding.greedy_candidates"):
    no_effect(_name, lambda s: not _uses(s, "greedy"), lambda s: "no strategy in use is greedy")
for _name in ("seeding.ids", "seeding.ids_path", "seeding.ids_column"):
    no_effect(_name, lambda s: not _uses(s, "listed"), lambda s: "no strategy in use is listed")
