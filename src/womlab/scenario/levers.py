"""Growth levers and when to pull them: ``[levers]`` and ``[[reference]]``.

Two optional sections of a scenario, each in its file form::

    [levers]                        # what womlab.lever_timing compares (womlab levers)
    pulled_at = [0, 5, 10, 15]      # periods at whose end a lever is pulled (0..run.periods - 1)
    lifetime = 60                   # optional: periods every arm runs past the horizon, levers off

    [levers.reference_customers]    # one table per lever, keyed by its registered name
    count = 5                       # its settings (each lever says which it reads)
    cost_each = 20.0

    [[reference]]                   # organisations the vendor turns into customers (references)
    period = 6                      # in this period (1..run.periods)
    count = 5                       # this many more, the first a seeding strategy ranks among non-customers
    strategy = "hubs"

A lever pulled at the end of period t acts from period t + 1 on. Which names ``[levers]`` may
hold, and what each table may say, are registered by :mod:`womlab.studies.levers`
(:func:`womlab.scenario.registry.register_lever_name`); ``[[reference]]`` is what the
``reference_customers`` lever adds to a scenario, and may be written by hand. Without these
sections nothing changes.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

from womlab.errors import ScenarioError
from womlab.scenario.checks import coerce, fail, unknown_field
from womlab.scenario.registry import lever_check, lever_names, strategy_names

__all__ = ["LeverSettings", "Levers", "Reference", "References", "NOT_YET"]

#: Levers the practice names that womlab does not pull yet, and why (said when one is asked for).
NOT_YET = {
    "next_product": "not available yet (product generations value each generation apart and cannot be combined "
    "with a programme, campaigns or openings; run womlab run with [[product]] launches instead)",
}


@dataclass(frozen=True)
class LeverSettings:
    """One lever's table in ``[levers]``: its name and its settings, as given (checked by the lever)."""

    name: str
    settings: tuple[tuple[str, Any], ...] = ()

    def get(self, key: str, default: Any = None) -> Any:
        return dict(self.settings).get(key, default)

    def as_dict(self) -> dict[str, Any]:
        return dict(self.settings)


@dataclass(frozen=True, kw_only=True)
class Levers:
    """The ``[levers]`` section: periods pulled, continuation lifetime, and one table per lever.

    Parameters
    ----------
    pulled_at : tuple of int, optional
        Periods at whose end each lever is pulled, 0..run.periods − 1 (default: every period).
    lifetime : int, optional
        Periods every arm runs past the horizon with the levers off, for the split into
        acceleration and expansion (default: until the baseline's market is exhausted).
    levers : tuple of LeverSettings
        The levers to compare, in the order given.
    """

    section: ClassVar[str] = "levers"
    pulled_at: tuple[int, ...] | None = None
    lifetime: int | None = None
    levers: tuple[LeverSettings, ...] = ()

    @classmethod
    def from_table(cls, value: Any, dotted: str = "levers") -> Levers:
        if isinstance(value, Levers):
            return value
        if not isinstance(value, Mapping):
            raise ScenarioError(f"[{dotted}] must be a table (pulled_at, lifetime, one table per lever), got {value!r}")
        kwargs: dict[str, Any] = {}
        levers = []
        for key, item in value.items():
            if key == "pulled_at":
                if isinstance(item, (int, str)) or not hasattr(item, "__iter__"):
                    fail(f"{dotted}.pulled_at", item, "a list of periods between 0 and run.periods - 1")
                kwargs["pulled_at"] = tuple(coerce(v, int, f"{dotted}.pulled_at") for v in item)
            elif key == "lifetime":
                kwargs["lifetime"] = None if item is None else coerce(item, int, f"{dotted}.lifetime")
            elif key in lever_names():
                if not isinstance(item, Mapping):
                    fail(f"{dotted}.{key}", item, "a table of the lever's settings")
                levers.append(LeverSettings(str(key), tuple((str(k), v) for k, v in item.items())))
            elif key in NOT_YET:
                raise ScenarioError(f"{dotted}.{key}: {NOT_YET[key]}; allowed: {', '.join(lever_names())}")
            else:
                unknown_field(f"{dotted}.{key}", ["pulled_at", "lifetime", *lever_names()])
        return cls(levers=tuple(levers), **kwargs)

    def to_table(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        if self.pulled_at is not None:
            out["pulled_at"] = list(self.pulled_at)
        if self.lifetime is not None:
            out["lifetime"] = self.lifetime
        for lever in self.levers:
            out[lever.name] = lever.as_dict()
        return out

    @property
    def active(self) -> bool:
        return bool(self.levers) or self.pulled_at is not None

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(lever.name for lever in self.levers)

    def settings(self, name: str) -> dict[str, Any]:
        """The settings table of lever ``name`` ({} when the section does not give one)."""
        for lever in self.levers:
            if lever.name == name:
                return lever.as_dict()
        return {}

    def check(self, scenario: Any) -> None:
        T = scenario.run.periods
        if self.pulled_at is not None:
            if not self.pulled_at:
                fail("levers.pulled_at", [], "a non-empty list of periods between 0 and run.periods - 1")
            for t in self.pulled_at:
                if not 0 <= t < T:
                    fail(
                        "levers.pulled_at",
                        t,
                        f"a period between 0 and run.periods - 1 = {T - 1} (a lever "
                        "pulled at the end of period t acts from t + 1)",
                    )
        if self.lifetime is not None and self.lifetime < 0:
            fail("levers.lifetime", self.lifetime, "a whole number of periods >= 0")
        for lever in self.levers:
            check = lever_check(lever.name)
            if check is not None:
                check(scenario, lever.as_dict(), f"levers.{lever.name}")


@dataclass(frozen=True, kw_only=True)
class Reference:
    """One ``[[reference]]`` entry: ``count`` organisations become customers in ``period``: the first
    in the seeding strategy ``strategy``'s ranking that are not customers by the end of the period
    before (one in a part of the market not yet open stays as it is; see
    :mod:`womlab.dynamics.references`)."""

    period: int
    count: int
    strategy: str = "hubs"


@dataclass(frozen=True, kw_only=True)
class References:
    """The ``[[reference]]`` entries (a list of tables in the file), in the order given."""

    section: ClassVar[str] = "reference"
    entries: tuple[Reference, ...] = ()

    @classmethod
    def from_table(cls, value: Any, dotted: str = "reference") -> References:
        if isinstance(value, References):
            return value
        if isinstance(value, Mapping):
            value = [value]
        if not isinstance(value, (list, tuple)):
            raise ScenarioError(f"[[{dotted}]] must be a list of tables (period, count, strategy), got {value!r}")
        entries = []
        for i, entry in enumerate(value):
            where = f"{dotted}[{i}]"
            if isinstance(entry, Reference):
                entries.append(entry)
                continue
            if not isinstance(entry, Mapping):
                raise ScenarioError(f"{where} must be a table (period, count, strategy), got {entry!r}")
            kwargs: dict[str, Any] = {}
            for key, item in entry.items():
                if key not in ("period", "count", "strategy"):
                    unknown_field(f"{where}.{key}", ["period", "count", "strategy"])
                kwargs[key] = coerce(item, str if key == "strategy" else int, f"{where}.{key}")
            for key in ("period", "count"):
                if key not in kwargs:
                    raise ScenarioError(
                        f"{where}.{key} is required (period: 1..run.periods; count: a whole number >= 0)"
                    )
            entries.append(Reference(**kwargs))
        return cls(entries=tuple(entries))

    def to_table(self) -> list[dict[str, Any]]:
        return [{"period": r.period, "count": r.count, "strategy": r.strategy} for r in self.entries]

    @property
    def active(self) -> bool:
        return any(r.count > 0 for r in self.entries)

    def check(self, scenario: Any) -> None:
        T = scenario.run.periods
        for i, r in enumerate(self.entries):
            where = f"reference[{i}]"
            if not 1 <= r.period <= T:
                fail(f"{where}.period", r.period, f"a period between 1 and run.periods = {T}")
            if not 0 <= r.count <= scenario.market.organisations:
                fail(
                    f"{where}.count",
                    r.count,
                    f"a whole number between 0 and market.organisations = {scenario.market.organisations}",
                )
            if strategy_names() and r.strategy not in strategy_names():
                fail(f"{where}.strategy", r.strategy, f"one of {', '.join(strategy_names())}")
            if r.strategy in ("listed", "greedy"):
                fail(
                    f"{where}.strategy",
                    r.strategy,
                    "a strategy that ranks organisations by the network alone (not listed or greedy)",
                )
        if self.active:
            if scenario.run.clock == "continuous":
                fail("run.clock", "continuous", '"discrete" with [[reference]] (reference customers won in a period)')
            if scenario.adoption.rule == "capped":
                fail(
                    "adoption.rule",
                    "capped",
                    "share, count, threshold or cascade with [[reference]] (the capped "
                    "rule's ceiling would hold back the customers a vendor wins)",
                )
            if scenario.product.active:
                raise ScenarioError("[[reference]] cannot be combined with [[product]] yet; run them apart")
