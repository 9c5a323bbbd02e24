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
    rule = "share"              # share count capped
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

    [referral]                  # optional: a referral programme (womlab.evaluate_programme)
    enrol = "all"               # none all share strategy
    start = 5                   # first and last period the programme runs
    end = 30
    talk_multiplier = 1.5       # on an enrolled customer's word of mouth
    reward = 25.0               # per successful referral, to the referrer
    budget = 20000.0
    lifetime_value = 40.0       # or value_per_period = 1.0
    discount_rate = 0.01

Adding a section: write a frozen dataclass with a ``section`` class variable and a
``check(self, scenario)`` method, add it as a field of :class:`Scenario` and to
``SECTIONS``. Loading, type checks, unknown-key messages and ``replace`` are generic.
"""

from __future__ import annotations

import dataclasses
import difflib
import math
import tomllib
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
    "Adoption",
    "RunSpec",
    "Referral",
    "Scenario",
    "load_scenario",
    "NETWORK_KINDS",
    "RULES",
    "STEP_FORMS",
    "ENGINES",
]

NETWORK_KINDS = ("complete", "ring", "regular", "random", "small_world", "regional", "scale_free", "edgelist")
RULES = ("share", "count", "capped")
STEP_FORMS = ("exponential", "linear")
ENGINES = ("array", "mesa")
TALKER_DISTRIBUTIONS = ("fixed", "poisson")
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
class Adoption:
    """The adoption rule: the rate at which a potential customer becomes a customer.

    Parameters
    ----------
    rule : str
        ``share``: λ = p + q·T/D; ``count``: λ = p + q·T; ``capped``: λ = min(p + q·T, cap).
        T is the sum of talkers over the organisation's satisfied-customer neighbours,
        D the sum of talkers over all its neighbours. See :mod:`womlab.rules`.
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
    """

    section: ClassVar[str] = "adoption"
    rule: str = "share"
    external: float = 0.01
    word_of_mouth: float = 0.3
    satisfied_share: float = 1.0
    talkers_per_customer: Talkers = field(default_factory=Talkers)
    cap: float = 0.05

    def check(self, scenario: Scenario) -> None:
        _one_of("adoption.rule", self.rule, RULES)
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


SECTIONS: dict[str, type] = {
    "market": Market,
    "network": NetworkSpec,
    "adoption": Adoption,
    "run": RunSpec,
    "referral": Referral,
}
_NESTED: dict[tuple[str, str], type] = {("adoption", "talkers_per_customer"): Talkers}


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
    referral: Referral = field(default_factory=Referral)

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
        return _drop_none(dataclasses.asdict(self))

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
    args = typing.get_args(hint)
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
