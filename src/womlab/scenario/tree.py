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
import hashlib
import tomllib
import warnings
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from womlab.errors import ScenarioError, ScenarioWarning
from womlab.scenario.checks import coerce, drop_none, fail, field_names, hints, unknown_field, utf8_text
from womlab.scenario.fit_spec import FitSpec, Prior, parse_priors
from womlab.scenario.levers import Levers, References
from womlab.scenario.markets import Campaigns, Products, Segments, check_openings
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
    without_effect,
)
from womlab.scenario.shipped import demo_names, demo_path
from womlab.scenario.sweep_spec import Axis, SweepSpec, field_type_in, is_path_field, parse_axes, resolve_path

__all__ = ["Scenario", "load_scenario", "field_type", "parse_assignment", "SECTIONS", "input_fields"]


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
    "product": Products,
    "reference": References,
    "levers": Levers,
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
    product: Products = field(default_factory=Products)
    reference: References = field(default_factory=References)
    levers: Levers = field(default_factory=Levers)

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
        _fill_edgelist_facts(kwargs, market_given if isinstance(market_given, Mapping) else {})
        scenario = cls(**kwargs)
        paths = {}
        for dotted in input_fields():
            section, leaf = dotted.split(".")
            table = data.get(section)
            if isinstance(table, Mapping) and isinstance(table.get(leaf), str):
                paths[dotted] = table[leaf]  # as the user gave it
        _remember(scenario, tuple(_leaves(data)), paths, None)
        return scenario

    def to_dict(self, *, given_paths: bool = False, sections: Iterable[str] | None = None) -> dict[str, Any]:
        """The scenario as nested plain values (TOML/JSON-ready, None fields dropped).

        Parameters
        ----------
        given_paths : bool
            Write input files (``network.path``, ``network.nodes_path``) as the user gave
            them (relative to the scenario file where they were relative) rather than as
            resolved on this machine: the form a manifest records.
        sections : iterable of str, optional
            Only these sections (``name`` and ``seed`` are always kept).
        """
        data = drop_none(dataclasses.asdict(self))
        for key in SECTIONS:  # a section with its own file form (sweep axes keyed by field)
            to_table = getattr(getattr(self, key), "to_table", None)
            if to_table is not None:
                data[key] = to_table()
        if given_paths:
            for dotted, path in self._paths.items():
                section, leaf = dotted.split(".")
                if leaf in data.get(section, {}):
                    data[section][leaf] = path
        if sections is not None:
            keep = {"name", "seed", *sections}
            data = {k: v for k, v in data.items() if k in keep}
        return data

    # ------------------------------------------------------------------ what the user said
    @property
    def given(self) -> tuple[str, ...]:
        """The dotted fields the user set (in the file, with ``replace`` or ``--set``), in order."""
        return self._given

    @property
    def source(self) -> dict[str, str] | None:
        """The scenario file it was loaded from: ``{"path": as given, "sha256": of its bytes}``, or None."""
        return self._source

    def inputs(self) -> list[dict[str, str]]:
        """The input files the scenario names (every ``path`` and ``*_path`` field that is set):
        field, path as the user gave it, and path as resolved here."""
        out = []
        for dotted in input_fields():
            section, leaf = dotted.split(".")
            resolved = getattr(getattr(self, section), leaf)
            if resolved is None:
                continue
            out.append({"field": dotted, "path": self._paths.get(dotted, resolved), "resolved": resolved})
        return out

    def fields_without_effect(self) -> list[str]:
        """One line per field the user set that has no effect here (``adoption.cap`` under the share rule).

        The rules are :data:`womlab.scenario.sections.NO_EFFECT`; :func:`load_scenario` issues
        each line as a :class:`~womlab.errors.ScenarioWarning`.

        Examples
        --------
        A field a sweep makes matter at some point (``network.within_region_share`` with
        ``network.kind`` swept over ``regional``) is not reported: each axis is tried at
        each of its listed values and at both ends of its range.

        >>> s = Scenario.from_dict({"adoption": {"rule": "share", "cap": 0.2}})
        >>> s.fields_without_effect()
        ['adoption.cap = 0.2 has no effect: adoption.rule = "share" (only the capped rule has a ceiling)']
        """
        out = []
        variants: list[Scenario] | None = None
        for dotted in self._given:
            messages = without_effect(self, [dotted])
            if not messages:
                continue
            if variants is None:
                variants = self._axis_variants()
            if all(without_effect(v, [dotted]) for v in variants):
                out.extend(messages)
        return out

    def _axis_variants(self) -> list[Scenario]:
        """The scenario with one sweep axis at a time set to each listed value or range end."""
        variants = []
        for axis in self.sweep.axes:
            for value in axis.values if axis.values is not None else (axis.start, axis.stop):
                try:
                    variants.append(self.replace(axis.name, value))
                except ScenarioError:
                    continue
        return variants

    def replace(self, field_or_changes: str | Mapping[str, Any], value: Any = ..., /) -> Scenario:
        """A new validated scenario with one or more dotted fields changed.

        ``s.replace("adoption.word_of_mouth", 0.2)`` or
        ``s.replace({"network.kind": "ring", "run.periods": 60})``.
        """
        changes = {field_or_changes: value} if isinstance(field_or_changes, str) else dict(field_or_changes)
        if isinstance(field_or_changes, str) and value is ...:
            raise TypeError("replace(field, value): value is missing")
        data = _with_changes(self.to_dict(), changes)
        new = Scenario.from_dict(data)
        paths = {k: v for k, v in self._paths.items() if k not in changes}
        paths.update({k: str(v) for k, v in changes.items() if k in input_fields() and isinstance(v, str)})
        given = tuple(dict.fromkeys([*self._given, *changes]))
        _remember(new, given, paths, self._source)
        return new

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


# What the user said is remembered beside the fields, not as fields: it is no part of a scenario's
# value (two scenarios with the same fields are equal however they were written).
Scenario._given = ()  # type: ignore[attr-defined]
Scenario._paths = {}  # type: ignore[attr-defined]
Scenario._source = None  # type: ignore[attr-defined]


def input_fields() -> tuple[str, ...]:
    """Every scenario field that names an input file (``path`` or ``*_path``, resolved against the
    scenario file's folder), e.g. ``network.path``, ``network.nodes_path``, ``seeding.ids_path``."""
    return tuple(
        f"{section}.{name}"
        for section, cls in SECTIONS.items()
        for name in field_names(cls)
        if is_path_field(f"{section}.{name}")
    )


def _remember(scenario: Scenario, given: tuple[str, ...], paths: dict[str, str], source: dict | None) -> None:
    object.__setattr__(scenario, "_given", given)
    object.__setattr__(scenario, "_paths", dict(paths))
    object.__setattr__(scenario, "_source", source)


def _leaves(data: Mapping[str, Any], prefix: str = "") -> Iterable[str]:
    """The dotted fields a nested table sets (a sweep's axes count as one field)."""
    for key, value in data.items():
        dotted = f"{prefix}{key}"
        if isinstance(value, Mapping) and dotted != "sweep.axes":
            yield from _leaves(value, dotted + ".")
        else:
            yield dotted


def _with_changes(data: dict[str, Any], changes: Mapping[str, Any]) -> dict[str, Any]:
    """``data`` with each dotted field of ``changes`` set; unknown names are refused with a did-you-mean."""
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
    return data


def parse_assignment(text: str) -> tuple[str, Any]:
    """Read ``field=value`` (as ``womlab --set`` takes it): the value as a TOML value, else as text.

    Examples
    --------
    >>> parse_assignment("adoption.word_of_mouth=0.2")
    ('adoption.word_of_mouth', 0.2)
    >>> parse_assignment("network.kind=ring")
    ('network.kind', 'ring')
    >>> parse_assignment('study.strategies=["random", "hubs"]')
    ('study.strategies', ['random', 'hubs'])
    """
    name, sep, value = text.partition("=")
    name, value = name.strip(), value.strip()
    if not sep or not name:
        raise ScenarioError(f"--set must be field=value (e.g. adoption.word_of_mouth=0.2), got {text!r}")
    try:
        parsed = tomllib.loads(f"v = {value}")["v"]
    except (tomllib.TOMLDecodeError, RecursionError):
        parsed = value
    return name, parsed


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


def _fill_edgelist_facts(kwargs: dict[str, Any], market_given: Mapping[str, Any]) -> None:
    """For a network read from a file, the market size, the mean degree and (from a node file,
    or a graph file's region attribute) the number of regions come from the file (in place on
    ``kwargs``).

    ``network.mean_degree`` is the file's own, 2·ties / organisations, so that every
    derived quantity (the mapped Bass Q, the manifest) uses the network actually read.
    """
    network = kwargs.get("network")
    if (
        network is None
        or network.kind not in network_file_kinds()
        or network.path is None
        or not Path(network.path).is_file()
    ):
        return
    if network.nodes_path is not None and not Path(network.nodes_path).is_file():
        return  # NetworkSpec.check names the missing file
    n, mean_degree, regions = network_file_facts(network.kind, network.path, network.nodes_path)
    kwargs["network"] = dataclasses.replace(network, mean_degree=mean_degree)
    market = kwargs["market"]
    name = Path(network.path).name
    if "organisations" in market_given and market.organisations != n:
        raise ScenarioError(
            f"market.organisations must match the {_FILE_NAMES.get(network.kind, 'network file')} "
            f"({n} organisations in {name}), "
            f"got {market.organisations}"
        )
    changes: dict[str, Any] = {"organisations": n}
    if network.nodes_path is not None or regions > 1:  # a node file, or a graph file's region attribute
        source = (
            ("node file", Path(network.nodes_path).name)
            if network.nodes_path is not None
            else (_FILE_NAMES.get(network.kind, "network file"), name)
        )
        if "regions" in market_given and market.regions != regions:
            raise ScenarioError(
                f"market.regions must match the {source[0]} ({regions} regions in {source[1]}), got {market.regions}"
            )
        changes["regions"] = regions
    kwargs["market"] = dataclasses.replace(market, **changes)


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


def load_scenario(path: str | Path, changes: Mapping[str, Any] | None = None) -> Scenario:
    """Read and validate a scenario TOML file, or a shipped demo by name (``"demo"``), with
    optional changes to its fields.

    Parameters
    ----------
    path : str or Path
        A UTF-8 TOML file (a UTF-8 byte-order mark is allowed), or a shipped demo's name.
        Input files it names are resolved against its folder.
    changes : mapping, optional
        Dotted field → value, applied to the file's values before validation, exactly
        as if the file said them (``womlab --set field=value``).

    Every field the user set that has no effect (:meth:`Scenario.fields_without_effect`)
    is issued as a :class:`~womlab.errors.ScenarioWarning`.

    Raises
    ------
    ScenarioError
        If the file is missing or unreadable, is not UTF-8 text, is not valid TOML, holds
        no scenario at all, or any field is invalid: one line naming what is wrong.
    """
    p = Path(path)
    if not p.is_file() and str(path) in demo_names():  # a demo that ships with womlab
        p = demo_path(str(path))
    if not p.is_file():
        raise ScenarioError(
            f"scenario file {str(path)!r} does not exist (the shipped demos are {', '.join(demo_names())})"
        )
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise ScenarioError(f"scenario file {str(path)!r} cannot be read: {exc.strerror}") from None
    try:
        text = utf8_text(raw, "TOML")
    except ValueError as exc:
        raise ScenarioError(f"{path}: {exc}") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError(f"{path}: not valid TOML: {exc}") from None
    except RecursionError:
        raise ScenarioError(f"{path}: not valid TOML: tables or lists nested too deeply to read") from None
    if not data:
        raise ScenarioError(
            f"{path}: holds no scenario (the file is empty or only comments); "
            "give at least a name and the sections that differ from the defaults"
        )
    if changes:
        data = _with_changes(data, changes)
    scenario = Scenario.from_dict(data, base_dir=p.parent)
    object.__setattr__(scenario, "_source", {"path": str(path), "sha256": hashlib.sha256(raw).hexdigest()})
    for message in scenario.fields_without_effect():
        warnings.warn(message, ScenarioWarning, stacklevel=2)
    return scenario
