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
    clock = "discrete"          # or "continuous": exact event times, no time step
    report_every = 1.0          # curve grid, 1/n of a period

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

A sweep (see :mod:`womlab.studies.sweep`) adds a ``[sweep]`` table and its axes, one per dotted
scenario field::

    [sweep]
    design = "grid"             # grid latin sobol morris
    samples = 64                # latin: points; sobol: base sample N (a power of 2); morris: trajectories
    replicates = 10
    [sweep.axes]
    "adoption.word_of_mouth" = { from = 0.05, to = 0.5, steps = 10 }   # log = true for a log scale
    "network.kind" = ["random", "small_world", "regional"]

A fit to an observed series (:func:`womlab.fit_observed`) reads a ``[fit]`` table: the free
fields, their priors in ``[fit.priors]`` keyed by dotted field, and the budget of the
sequential Monte Carlo (:mod:`womlab.scenario.fit_spec`).

Adding a section: write a frozen dataclass with a ``section`` class variable and a
``check(self, scenario)`` method, add it as a field of :class:`Scenario` and to
``SECTIONS``. Loading, type checks, unknown-key messages and ``replace`` are generic.
"""

from __future__ import annotations

import dataclasses
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from womlab.errors import ScenarioError
from womlab.scenario.checks import coerce, drop_none, fail, field_names, hints, unknown_field
from womlab.scenario.fit_spec import FitSpec, Prior, parse_priors
from womlab.scenario.markets import Campaigns, Segments, check_openings
from womlab.scenario.registry import network_file_facts, network_file_kinds
from womlab.scenario.sections import (
    Adoption,
    Market,
    NetworkSpec,
    Referral,
    RunSpec,
    Seeding,
    Study,
    Talkers,
    Thresholds,
)
from womlab.scenario.shipped import demo_names, demo_path
from womlab.scenario.sweep_spec import Axis, SweepSpec, field_type_in, is_path_field, parse_axes, resolve_path

__all__ = ["Scenario", "load_scenario", "field_type", "SECTIONS"]


SECTIONS: dict[str, type] = {
    "market": Market,
    "network": NetworkSpec,
    "adoption": Adoption,
    "run": RunSpec,
    "seeding": Seeding,
    "study": Study,
    "referral": Referral,
    "sweep": SweepSpec,
    "fit": FitSpec,
    "segments": Segments,
    "campaign": Campaigns,
}
_NESTED: dict[tuple[str, str], type] = {
    ("adoption", "talkers_per_customer"): Talkers,
    ("adoption", "threshold"): Thresholds,
    ("sweep", "axes"): Axis,
    ("fit", "priors"): Prior,
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
    fit: FitSpec = field(default_factory=FitSpec)
    segments: Segments = field(default_factory=Segments)
    campaign: Campaigns = field(default_factory=Campaigns)

    def __post_init__(self) -> None:
        if not isinstance(self.seed, int) or self.seed < 0:
            fail("seed", self.seed, "a whole number >= 0")
        for key in SECTIONS:
            getattr(self, key).check(self)
        check_openings(self)  # market.opens reads [segments] and [run], checked above

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
                unknown_field(key, top_known)
            if key in SECTIONS and hasattr(SECTIONS[key], "from_table"):  # a section with its own file form
                kwargs[key] = SECTIONS[key].from_table(value, key)
            elif key in SECTIONS:
                kwargs[key] = _build_section(SECTIONS[key], key, value, base_dir)
            else:
                kwargs[key] = coerce(value, hints(cls)[key], key)
        kwargs.setdefault("market", Market())
        market_given = data.get("market", {})
        _fill_edgelist_facts(kwargs, "organisations" in market_given if isinstance(market_given, Mapping) else False)
        return cls(**kwargs)

    def to_dict(self) -> dict[str, Any]:
        """The scenario as nested plain values (TOML/JSON-ready, None fields dropped)."""
        data = drop_none(dataclasses.asdict(self))
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
                if depth and hasattr(SECTIONS.get(parts[0]), "from_table"):  # checked by its own reader
                    node = node.setdefault(part, {})
                    continue
                known = ["name", "seed", *SECTIONS] if depth == 0 else field_names(_section_type(parts[:depth]))
                if part not in known:
                    unknown_field(".".join(parts[: depth + 1]), known)
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
        """Number of initial customers: ``seeding.budget`` when given, else the ids a ``listed``
        strategy names, else ``market.n_initial``."""
        if self.seeding.budget is not None:
            return self.seeding.budget
        listed = self.seeding.listed_count
        return listed if listed is not None else self.market.n_initial


def _section_type(parts: list[str]) -> type:
    if len(parts) == 1:
        return SECTIONS[parts[0]]
    return _NESTED[(parts[0], parts[1])]


def _build_section(cls: type, dotted: str, value: Any, base_dir: str | Path | None) -> Any:
    if not isinstance(value, Mapping):
        raise ScenarioError(f"[{dotted}] must be a table of fields, got {value!r}")
    types_of = hints(cls)
    known = field_names(cls)
    kwargs = {}
    for key, item in value.items():
        if key not in known:
            unknown_field(f"{dotted}.{key}", known)
        name = f"{dotted}.{key}"
        nested = _NESTED.get((dotted, key))
        if nested is Talkers:
            kwargs[key] = _talkers(item, name)
        elif nested is Axis:
            kwargs[key] = parse_axes(item, name, base_dir)
        elif nested is Prior:
            kwargs[key] = parse_priors(item, name)
        elif nested is not None:
            kwargs[key] = _build_section(nested, name, item, base_dir)
        else:
            kwargs[key] = coerce(item, types_of[key], name)
        if is_path_field(name) and isinstance(kwargs[key], str) and base_dir is not None:
            kwargs[key] = resolve_path(kwargs[key], base_dir)
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


_FILE_NAMES = {"edgelist": "edge list", "graphml": "GraphML file", "gexf": "GEXF file"}


def _fill_edgelist_facts(kwargs: dict[str, Any], size_given: bool) -> None:
    """For an edge-list network, the market size and the mean degree come from the file (in place on ``kwargs``).

    ``network.mean_degree`` is the file's own, 2·ties / organisations, so that every
    derived quantity (the mapped Bass Q, the manifest) uses the network actually read.
    """
    network = kwargs.get("network")
    if network is None or network.kind not in network_file_kinds() or network.path is None or not Path(network.path).is_file():
        return
    if network.nodes_path is not None and not Path(network.nodes_path).is_file():
        return  # NetworkSpec.check names the missing file
    n, mean_degree = network_file_facts(network.kind, network.path, network.nodes_path)
    kwargs["network"] = dataclasses.replace(network, mean_degree=mean_degree)
    market = kwargs["market"]
    if size_given and market.organisations != n:
        raise ScenarioError(
            f"market.organisations must match the {_FILE_NAMES.get(network.kind, 'network file')} "
            f"({n} organisations in {network.path}), "
            f"got {market.organisations}"
        )
    kwargs["market"] = dataclasses.replace(market, organisations=n)


def field_type(dotted: str) -> type:
    """The Python type of the scenario field ``dotted`` (int, float, str or bool).

    Raises ScenarioError with a did-you-mean if no such field exists. Used to validate
    sweep axes; ``adoption.talkers_per_customer`` (a number or a table) counts as float.

    Examples
    --------
    >>> field_type("adoption.word_of_mouth"), field_type("network.kind")
    (<class 'float'>, <class 'str'>)
    """
    return field_type_in(Scenario, dotted)


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario TOML file, or a shipped demo by name (``"demo"``).

    Raises
    ------
    ScenarioError
        If the file is missing, is not valid TOML, or any field is invalid.
    """
    p = Path(path)
    if not p.is_file() and str(path) in demo_names():  # a demo that ships with womlab
        p = demo_path(str(path))
    if not p.is_file():
        raise ScenarioError(
            f"scenario file {str(path)!r} does not exist (the shipped demos are {', '.join(demo_names())})"
        )
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError(f"{path}: not valid TOML: {exc}") from None
    return Scenario.from_dict(data, base_dir=p.parent)
