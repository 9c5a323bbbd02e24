"""Markets whose organisations differ and whose marketing changes: ``[segments]`` and ``[[campaign]]``.

Two optional sections of a scenario, each in its file form::

    [segments.influentials]     # one table per segment, keyed by its name
    share = 0.1                 # of the market (shares sum to 1)
    external = 2.0              # multiplier of adoption.external (p)
    word_of_mouth = 1.5         # multiplier of adoption.word_of_mouth (q)
    satisfied_share = 0.9       # default: adoption.satisfied_share
    talkers = 3                 # talkers per customer (mean); default: adoption.talkers_per_customer
    value_per_period = 5.0      # value of one of its customers per period; default 1

    [segments.imitators]
    share = 0.9

    [[campaign]]                # external influence that comes and goes
    from = 5                    # first and last period, inclusive
    to = 8
    external = 0.05             # p in those periods (or multiplier = 4: times adoption.external)
    segment = "imitators"       # optional: only this segment (or region = 2: only that region)

Without these sections nothing changes: every organisation has the ``[adoption]`` values
and p is ``adoption.external`` in every period.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, fields
from typing import Any, ClassVar

from womlab.errors import ScenarioError
from womlab.scenario.checks import coerce, fail, hints, in_unit, non_negative, unknown_field
from womlab.scenario.sections import no_effect

__all__ = [
    "Segment",
    "Segments",
    "Campaign",
    "Campaigns",
    "Opening",
    "openings",
    "check_openings",
    "Product",
    "Products",
    "SHARE_TOLERANCE",
    "NEVER",
    "opening_period",
]

#: ``market.opens`` period of a part of the market that never opens in the run.
NEVER = "never"

#: How far the segment shares may sum from 1 (rounding in a hand-written file).
SHARE_TOLERANCE = 1e-6


@dataclass(frozen=True, kw_only=True)
class Segment:
    """One segment of the market; every value but ``name`` optional.

    Parameters
    ----------
    name : str
        The segment's name (its key in ``[segments]``).
    share : float, optional
        Its share of the market, for generated networks (an edge list's node file says
        each organisation's segment in its ``segment`` column instead).
    external, word_of_mouth : float
        Multipliers of ``adoption.external`` (p) and ``adoption.word_of_mouth`` (q) for its
        organisations (default 1).
    satisfied_share : float, optional
        Probability that one of its new customers is satisfied (default
        ``adoption.satisfied_share``).
    talkers : float, optional
        Mean talkers per customer, drawn as ``adoption.talkers_per_customer.distribution``
        says (default that table's mean).
    value_per_period : float
        Value of one of its customers in each period (default 1).
    """

    name: str
    share: float | None = None
    external: float = 1.0
    word_of_mouth: float = 1.0
    satisfied_share: float | None = None
    talkers: float | None = None
    value_per_period: float = 1.0


@dataclass(frozen=True, kw_only=True)
class Segments:
    """The ``[segments]`` section: the market's segments, in the order given (codes 0, 1, ...).

    Empty (the default): one market, every organisation with the ``[adoption]`` values.
    """

    section: ClassVar[str] = "segments"
    #: A sweep axis names a segment's field as ``segments.NAME.FIELD`` (``scenario.field_type``).
    KEYED_BY_NAME: ClassVar[type] = Segment
    groups: tuple[Segment, ...] = ()

    @classmethod
    def from_table(cls, value: Any, dotted: str = "segments") -> Segments:
        """Read ``{name: {share = ..., ...}, ...}`` (the TOML form)."""
        if isinstance(value, Segments):
            return value
        if not isinstance(value, Mapping):
            raise ScenarioError(f"[{dotted}] must be a table of segments keyed by name, got {value!r}")
        types_of = hints(Segment)
        known = [f.name for f in fields(Segment) if f.name != "name"]
        groups = []
        for name, entry in value.items():
            if not isinstance(entry, Mapping):
                raise ScenarioError(
                    f"[{dotted}.{name}] must be a table (share, external, word_of_mouth, "
                    f"satisfied_share, talkers, value_per_period), got {entry!r}"
                )
            kwargs: dict[str, Any] = {"name": str(name)}
            for key, item in entry.items():
                if key not in known:
                    unknown_field(f"{dotted}.{name}.{key}", known)
                kwargs[key] = coerce(item, types_of[key], f"{dotted}.{name}.{key}")
            groups.append(Segment(**kwargs))
        return cls(groups=tuple(groups))

    def to_table(self) -> dict[str, dict[str, Any]]:
        """The TOML form (None fields left out)."""
        return {
            g.name: {
                f.name: getattr(g, f.name)
                for f in fields(Segment)
                if f.name != "name" and getattr(g, f.name) is not None
            }
            for g in self.groups
        }

    def check(self, scenario: Any) -> None:
        if not self.groups:
            return
        _discrete_only(scenario, "[segments] (organisations that differ by segment)")
        from_file = scenario.network.kind == "edgelist"
        for g in self.groups:
            where = f"segments.{g.name}"
            for name in ("external", "word_of_mouth", "value_per_period"):
                non_negative(f"{where}.{name}", getattr(g, name))
            if g.satisfied_share is not None:
                in_unit(f"{where}.satisfied_share", g.satisfied_share)
            if g.talkers is not None:
                non_negative(f"{where}.talkers", g.talkers)
            if from_file:
                if g.share is not None:
                    fail(
                        f"{where}.share",
                        g.share,
                        "left out for an edge-list network, whose node file gives each "
                        "organisation's segment (column segment)",
                    )
            elif g.share is None:
                fail(f"{where}.share", None, "a share of the market in [0, 1] (the shares of all segments sum to 1)")
            else:
                in_unit(f"{where}.share", g.share)
        if not from_file:
            total = sum(float(g.share or 0.0) for g in self.groups)
            if abs(total - 1.0) > SHARE_TOLERANCE:
                shares = ", ".join(f"{g.name} = {g.share}" for g in self.groups)
                raise ScenarioError(f"segments shares must sum to 1, got {total:.6g} ({shares})")
        if scenario.network.kind in ("graphml", "gexf"):
            fail(
                "network.kind",
                scenario.network.kind,
                'a generated kind or "edgelist" with [segments] (a graph file\'s segments are not read)',
            )

    @property
    def active(self) -> bool:
        return bool(self.groups)

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(g.name for g in self.groups)

    def code(self, name: str, where: str) -> int:
        """The code of segment ``name``; a ScenarioError naming ``where`` if there is none."""
        if name not in self.names:
            fail(where, name, f"one of the [segments] names ({', '.join(self.names) or 'none defined'})")
        return self.names.index(name)


@dataclass(frozen=True, kw_only=True)
class Campaign:
    """One ``[[campaign]]`` entry: external influence over periods ``first``..``last`` (inclusive).

    In the file: ``from``, ``to``, then ``external`` (p itself) or ``multiplier`` (times
    ``adoption.external``), and optionally ``region`` (a region code, or its value as given
    in a node file) or ``segment`` (a ``[segments]`` name). A segment's own ``external``
    multiplier still applies on top.
    """

    first: int
    last: int
    external: float | None = None
    multiplier: float | None = None
    region: Any = None
    segment: str | None = None

    FILE_NAMES: ClassVar[dict[str, str]] = {"from": "first", "to": "last"}

    def p(self, base: float) -> float:
        """p during the campaign, given ``adoption.external`` = ``base``."""
        return float(self.external) if self.external is not None else float(base) * float(self.multiplier or 0.0)


@dataclass(frozen=True, kw_only=True)
class Campaigns:
    """The ``[[campaign]]`` entries (a list of tables in the file), in the order given."""

    section: ClassVar[str] = "campaign"
    entries: tuple[Campaign, ...] = ()

    @classmethod
    def from_table(cls, value: Any, dotted: str = "campaign") -> Campaigns:
        if isinstance(value, Campaigns):
            return value
        if isinstance(value, Mapping):
            value = [value]
        if not isinstance(value, (list, tuple)):
            raise ScenarioError(
                f"[[{dotted}]] must be a list of tables (from, to, external or multiplier), got {value!r}"
            )
        known = ["from", "to", "external", "multiplier", "region", "segment"]
        entries = []
        for i, entry in enumerate(value):
            where = f"{dotted}[{i}]"
            if not isinstance(entry, Mapping):
                raise ScenarioError(f"{where} must be a table (from, to, external or multiplier), got {entry!r}")
            kwargs: dict[str, Any] = {}
            for key, item in entry.items():
                if key not in known:
                    unknown_field(f"{where}.{key}", known)
                name = Campaign.FILE_NAMES.get(key, key)
                if name in ("first", "last"):
                    kwargs[name] = coerce(item, int, f"{where}.{key}")
                elif name in ("external", "multiplier"):
                    kwargs[name] = coerce(item, float, f"{where}.{key}")
                elif name == "segment":
                    kwargs[name] = coerce(item, str, f"{where}.{key}")
                else:
                    if isinstance(item, bool) or not isinstance(item, (int, str)):
                        fail(f"{where}.region", item, "a region code or a region value as given")
                    kwargs[name] = item
            for key in ("from", "to"):
                if Campaign.FILE_NAMES[key] not in kwargs:
                    raise ScenarioError(f"{where}.{key} is required (a period between 1 and run.periods)")
            entries.append(Campaign(**kwargs))
        return cls(entries=tuple(entries))

    def to_table(self) -> list[dict[str, Any]]:
        out = []
        for c in self.entries:
            row: dict[str, Any] = {"from": c.first, "to": c.last}
            for name in ("external", "multiplier", "region", "segment"):
                if getattr(c, name) is not None:
                    row[name] = getattr(c, name)
            out.append(row)
        return out

    @property
    def active(self) -> bool:
        return bool(self.entries)

    def check(self, scenario: Any) -> None:
        if self.entries:
            _discrete_only(scenario, "[[campaign]] (external influence that changes by period)")
        T = scenario.run.periods
        segments: Segments = scenario.segments
        regions = scenario.market.regions
        for i, c in enumerate(self.entries):
            where = f"campaign[{i}]"
            if not 1 <= c.first <= T:
                fail(f"{where}.from", c.first, f"a period between 1 and run.periods = {T}")
            if not c.first <= c.last <= T:
                fail(f"{where}.to", c.last, f"a period between {where}.from = {c.first} and run.periods = {T}")
            if (c.external is None) == (c.multiplier is None):
                raise ScenarioError(
                    f"{where} needs exactly one of external (p in those periods) and multiplier "
                    f"(times adoption.external), got external = {c.external!r} and "
                    f"multiplier = {c.multiplier!r}"
                )
            value = c.external if c.external is not None else c.multiplier
            non_negative(f"{where}.{'external' if c.external is not None else 'multiplier'}", float(value))
            if c.region is not None and c.segment is not None:
                raise ScenarioError(
                    f"{where}: give region or segment, not both, got region = {c.region!r} and segment = {c.segment!r}"
                )
            if c.segment is not None:
                segments.code(c.segment, f"{where}.segment")
            if (
                c.region is not None
                and isinstance(c.region, int)
                and scenario.network.kind not in ("edgelist",)
                and not 0 <= c.region < regions
            ):
                fail(f"{where}.region", c.region, f"a region code between 0 and market.regions - 1 = {regions - 1}")
        for i, a in enumerate(self.entries):
            for j in range(i):
                b = self.entries[j]
                if a.first <= b.last and b.first <= a.last and _same_group(a, b):
                    raise ScenarioError(
                        f"campaign[{i}] (periods {a.first}-{a.last}) overlaps campaign[{j}] (periods {b.first}-{b.last}) "
                        f"on {_group_words(a, b)}; allowed: at most one campaign per period on each region or segment"
                    )


def _discrete_only(scenario: Any, mechanism: str) -> None:
    """The continuous clock's first-passage times need rates that are constant in time and alike per tie kind:
    refused there in one line naming the mechanism and the clock."""
    if scenario.run.clock == "continuous":
        raise ScenarioError(
            f'{mechanism} runs on run.clock = "discrete" only, got run.clock = "continuous" '
            '(the event engine needs one constant p and q for everyone); use run.clock = "discrete"'
        )


def _same_group(a: Campaign, b: Campaign) -> bool:
    """Whether two campaigns can reach the same organisation (one restricted by region, the other by
    segment, do: an organisation has both)."""
    if a.region is not None and b.region is not None:
        return str(a.region) == str(b.region)
    if a.segment is not None and b.segment is not None:
        return a.segment == b.segment
    return True


def _group_words(a: Campaign, b: Campaign) -> str:
    for c in (a, b):
        if c.region is not None:
            return f"region {c.region!r}"
        if c.segment is not None:
            return f"segment {c.segment!r}"
    return "the whole market"


@dataclass(frozen=True, kw_only=True)
class Opening:
    """One entry of ``market.opens``: a region (code, or value as given in a node file) or a segment
    that enters the market in ``period``. Before it, its organisations are not potential customers,
    feel no influence and are not counted in the market. ``period = "never"`` (None here): a part
    that stays closed for the whole run, and past it (a lever may open it; :mod:`womlab.studies.levers`)."""

    period: int | None
    region: Any = None
    segment: str | None = None


def openings(market: Any) -> tuple[Opening, ...]:
    """``market.opens`` as :class:`Opening` entries (a table or a list of tables in the file)."""
    value = market.opens
    if value is None:
        return ()
    if isinstance(value, Mapping):
        value = (value,)
    out = []
    for i, entry in enumerate(value):
        where = f"market.opens[{i}]"
        if isinstance(entry, Opening):
            out.append(entry)
            continue
        if not isinstance(entry, Mapping):
            raise ScenarioError(
                f'{where} must be a table {{region = 3, period = 12}} or {{segment = "...", '
                f"period = 12}}, got {entry!r}"
            )
        for key in entry:
            if key not in ("region", "segment", "period"):
                unknown_field(f"{where}.{key}", ["region", "segment", "period"])
        if "period" not in entry:
            raise ScenarioError(f"{where}.period is required (the period in which it opens, 1..run.periods)")
        region = entry.get("region")
        if region is not None and (isinstance(region, bool) or not isinstance(region, (int, str))):
            fail(f"{where}.region", region, "a region code or a region value as given")
        segment = entry.get("segment")
        never = isinstance(entry["period"], str) and entry["period"] == NEVER
        if isinstance(entry["period"], str) and not never:
            fail(f"{where}.period", entry["period"], f'a period between 1 and run.periods, or "{NEVER}"')
        out.append(
            Opening(
                period=None if never else coerce(entry["period"], int, f"{where}.period"),
                region=region,
                segment=None if segment is None else coerce(segment, str, f"{where}.segment"),
            )
        )
    return tuple(out)


def opening_period(opening: Opening, periods: int) -> int:
    """The period in which ``opening``'s part enters a run of ``periods`` periods: its own period, or
    ``periods + 1`` (after the run's end) for one that never opens."""
    return periods + 1 if opening.period is None else int(opening.period)


def check_openings(scenario: Any) -> None:
    """Each opening names one region that exists or one segment of ``[segments]``, and a period in 1..T."""
    entries = openings(scenario.market)
    if not entries:
        return
    _discrete_only(scenario, "market.opens (a market that grows)")
    T, regions = scenario.run.periods, scenario.market.regions
    seen: dict[str, int] = {}
    for i, o in enumerate(entries):
        where = f"market.opens[{i}]"
        if o.period is not None and not 1 <= o.period <= T:
            fail(f"{where}.period", o.period, f'a period between 1 and run.periods = {T}, or "{NEVER}"')
        if (o.region is None) == (o.segment is None):
            raise ScenarioError(
                f"{where} needs exactly one of region and segment, got region = {o.region!r} and "
                f"segment = {o.segment!r}"
            )
        if o.segment is not None:
            scenario.segments.code(o.segment, f"{where}.segment")
        elif scenario.network.kind != "edgelist" and not (isinstance(o.region, int) and 0 <= o.region < regions):
            fail(f"{where}.region", o.region, f"a region code between 0 and market.regions - 1 = {regions - 1}")
        key = f"region {o.region!r}" if o.region is not None else f"segment {o.segment!r}"
        if key in seen:
            raise ScenarioError(
                f"{where} opens {key} again (market.opens[{seen[key]}] opens it); "
                "allowed: one opening per region or segment"
            )
        seen[key] = i


def _every_segment_sets(s: Any, name: str) -> bool:
    groups = s.segments.groups
    return bool(groups) and all(getattr(g, name) is not None for g in groups)


no_effect(
    "adoption.satisfied_share",
    lambda s: _every_segment_sets(s, "satisfied_share"),
    lambda s: "every segment of [segments] sets its own satisfied_share",
)
no_effect(
    "adoption.talkers_per_customer.mean",
    lambda s: _every_segment_sets(s, "talkers"),
    lambda s: "every segment of [segments] sets its own talkers (the distribution still applies)",
)


@dataclass(frozen=True, kw_only=True)
class Product:
    """One later product generation (``[[product]]``); the first generation is the ``[adoption]`` one.

    Parameters
    ----------
    launch : int
        The period it is launched in (1..run.periods), after the generation before it.
    external, word_of_mouth : float
        Its p (the upgrade hazard's external part) and q (driven by the share of an organisation's
        talking customer neighbours already on it or later). Default: the ``[adoption]`` values.
    satisfied_share : float, optional
        Probability that one of its customers is satisfied (default ``adoption.satisfied_share``).
    value_per_period : float
        Value of one of its customers per period (default 1; the first generation's is 1).
    name : str, optional
        Default ``generation 2``, ``generation 3``, ...
    """

    launch: int
    external: float | None = None
    word_of_mouth: float | None = None
    satisfied_share: float | None = None
    value_per_period: float = 1.0
    name: str | None = None


@dataclass(frozen=True, kw_only=True)
class Products:
    """The ``[[product]]`` entries: the second, third, ... generations, in launch order."""

    section: ClassVar[str] = "product"
    entries: tuple[Product, ...] = ()

    @classmethod
    def from_table(cls, value: Any, dotted: str = "product") -> Products:
        if isinstance(value, Products):
            return value
        if isinstance(value, Mapping):
            value = [value]
        if not isinstance(value, (list, tuple)):
            raise ScenarioError(
                f"[[{dotted}]] must be a list of tables (launch, external, word_of_mouth, ...), got {value!r}"
            )
        types_of = hints(Product)
        known = [f.name for f in fields(Product)]
        entries = []
        for i, entry in enumerate(value):
            where = f"{dotted}[{i}]"
            if not isinstance(entry, Mapping):
                raise ScenarioError(f"{where} must be a table (launch, external, word_of_mouth, ...), got {entry!r}")
            kwargs: dict[str, Any] = {}
            for key, item in entry.items():
                if key not in known:
                    unknown_field(f"{where}.{key}", known)
                kwargs[key] = coerce(item, types_of[key], f"{where}.{key}")
            if "launch" not in kwargs:
                raise ScenarioError(f"{where}.launch is required (the period it is launched in, 1..run.periods)")
            entries.append(Product(**kwargs))
        return cls(entries=tuple(entries))

    def to_table(self) -> list[dict[str, Any]]:
        return [
            {f.name: getattr(p, f.name) for f in fields(Product) if getattr(p, f.name) is not None}
            for p in self.entries
        ]

    @property
    def active(self) -> bool:
        return bool(self.entries)

    def generations(self, adoption: Any) -> list[Product]:
        """Every generation, the first from ``[adoption]`` (launched at 0), defaults filled in."""
        first = Product(
            launch=0,
            external=adoption.external,
            word_of_mouth=adoption.word_of_mouth,
            satisfied_share=adoption.satisfied_share,
            value_per_period=1.0,
            name="generation 1",
        )
        out = [first]
        for i, p in enumerate(self.entries):
            out.append(
                Product(
                    launch=p.launch,
                    external=adoption.external if p.external is None else p.external,
                    word_of_mouth=adoption.word_of_mouth if p.word_of_mouth is None else p.word_of_mouth,
                    satisfied_share=adoption.satisfied_share if p.satisfied_share is None else p.satisfied_share,
                    value_per_period=p.value_per_period,
                    name=p.name or f"generation {i + 2}",
                )
            )
        return out

    def check(self, scenario: Any) -> None:
        if not self.entries:
            return
        _discrete_only(scenario, "[[product]] (successive product generations)")
        T = scenario.run.periods
        previous = 0
        for i, p in enumerate(self.entries):
            where = f"product[{i}]"
            if not previous < p.launch <= T:
                fail(
                    f"{where}.launch",
                    p.launch,
                    f"a period after the previous generation's launch ({previous}) and at most run.periods = {T}",
                )
            previous = p.launch
            for name in ("external", "word_of_mouth", "value_per_period"):
                if getattr(p, name) is not None:
                    non_negative(f"{where}.{name}", getattr(p, name))
            if p.satisfied_share is not None:
                in_unit(f"{where}.satisfied_share", p.satisfied_share)
        names = [g.name for g in self.generations(scenario.adoption)]
        if len(set(names)) != len(names):
            fail("product names", names, "different names for different generations")
        # what the product run does not combine with yet: one line each, naming the field
        if scenario.adoption.rule != "share":
            fail(
                "adoption.rule",
                scenario.adoption.rule,
                "share with [[product]] (generations are run under the share rule only)",
            )
        for active, what in (
            (scenario.segments.active, "[segments]"),
            (scenario.campaign.active, "[[campaign]]"),
            (bool(openings(scenario.market)), "market.opens"),
            (scenario.referral.active, "a referral programme ([referral])"),
            (scenario.adoption.churns, "churn (adoption.churn, adoption.churn_dissatisfied)"),
            (scenario.adoption.warns, "warnings (adoption.warning)"),
        ):
            if active:
                raise ScenarioError(f"[[product]] cannot be combined with {what} yet; run them apart")


def market_lines(scenario: Any) -> list[tuple[str, str]]:
    """What ``[segments]``, ``[[campaign]]``, ``market.opens`` and ``[[product]]`` say, as (label, text)
    rows for ``womlab check``; empty when none is given.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"segments": {"few": {"share": 0.1, "external": 4}, "many": {"share": 0.9}},
    ...                         "campaign": [{"from": 3, "to": 5, "multiplier": 2, "segment": "many"}]})
    >>> for label, text in market_lines(s):
    ...     print(f"{label}: {text}")
    segments: few 10 % (p x4, q x1), many 90 % (p x1, q x1)
    campaigns: periods 3-5 p x2 (segment many)
    """
    rows = []
    if scenario.segments.active:
        parts = []
        for g in scenario.segments.groups:
            share = "" if g.share is None else f" {100 * g.share:g} %"
            parts.append(f"{g.name}{share} (p x{g.external:g}, q x{g.word_of_mouth:g})")
        rows.append(("segments", ", ".join(parts)))
    if scenario.campaign.active:
        parts = []
        for c in scenario.campaign.entries:
            what = f"p = {c.external:g}" if c.external is not None else f"p x{c.multiplier:g}"
            where = f" (region {c.region})" if c.region is not None else f" (segment {c.segment})" if c.segment else ""
            parts.append(f"periods {c.first}-{c.last} {what}{where}")
        rows.append(("campaigns", "; ".join(parts)))
    entries = openings(scenario.market)
    if entries:
        rows.append(
            (
                "opens later",
                ", ".join(
                    f"{'region ' + str(o.region) if o.region is not None else 'segment ' + str(o.segment)} "
                    + ("never (unless a lever opens it)" if o.period is None else f"in period {o.period}")
                    for o in entries
                ),
            )
        )
    if scenario.product.active:
        rows.append(
            (
                "product generations",
                ", ".join(
                    f"{g.name} (period {g.launch}, p {g.external:g}, q {g.word_of_mouth:g})"
                    for g in scenario.product.generations(scenario.adoption)
                ),
            )
        )
    return rows
