"""The ``[sweep]`` section: which scenario fields vary, over which values, how sampled,
and which study runs at every point.

An axis names a dotted scenario field; its type is read off the scenario's own
dataclasses (:func:`field_type_in`), so a field of a new section can be swept with no
change here. Fields that change no result (:data:`FIXED_FIELDS`) and fields the point's
study sets itself may not vary. A list axis may follow another list axis of the same
length (``{ follows = "referral.reward", values = [...] }``): the two move together, one
value of each per point. Values of a path field (``network.path``, ``network.nodes_path``,
any ``*_path``) are resolved against the scenario file's folder, like the field itself.
"""

from __future__ import annotations

import dataclasses
import math
import typing
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, ClassVar

from womlab.errors import ScenarioError
from womlab.scenario.checks import coerce, fail, field_names, hints, one_of, positive_int, unknown_field
from womlab.scenario.registry import sweep_study_fixed_fields, sweep_study_names
from womlab.scenario.sections import Talkers

__all__ = [
    "Axis",
    "SweepSpec",
    "SWEEP_DESIGNS",
    "FIXED_FIELDS",
    "field_type_in",
    "parse_axes",
    "is_path_field",
    "resolve_path",
]

SWEEP_DESIGNS = ("grid", "latin", "sobol", "morris")

FIXED_FIELDS = {
    "name": "the scenario's name changes no result",
    "run.jobs": "the number of worker processes changes no result (give --jobs instead)",
    "run.replicates": "a sweep runs sweep.replicates replicates at every point",
    "study.replicates": "a sweep runs sweep.replicates replicates at every point",
    "run.report_every": "a sweep keeps per-period outcomes, whatever the curve grid",
}
"""Fields a sweep axis may not vary, with the reason (they change no result of a sweep)."""


def is_path_field(dotted: str) -> bool:
    """Whether the scenario field ``dotted`` names a file (``path`` or ``*_path``), resolved against
    the scenario file's folder."""
    leaf = dotted.rsplit(".", 1)[-1]
    return leaf == "path" or leaf.endswith("_path")


def resolve_path(value: str, base_dir: str | Path) -> str:
    """A path field's value resolved against ``base_dir`` (absolute paths are kept)."""
    p = Path(value)
    return str(p if p.is_absolute() else (Path(base_dir) / p).resolve())


@dataclass(frozen=True, kw_only=True)
class Axis:
    """One axis of a sweep: a dotted scenario field and the values it takes.

    Either a list of ``values`` (numbers or text, e.g. network kinds) or a range
    ``start``..``stop`` (TOML keys ``from`` and ``to``), on a log scale if ``log``.
    ``steps`` (range axes, ``grid`` design only) is the number of evenly spaced values,
    ends included. A whole-number field gets rounded values. ``follows`` names another
    list axis of as many values: this axis then takes its k-th value wherever that axis
    takes its k-th (the two are one dimension of the design).
    """

    name: str
    values: tuple | None = None
    start: float | None = None
    stop: float | None = None
    steps: int | None = None
    log: bool = False
    follows: str | None = None

    @property
    def is_range(self) -> bool:
        return self.values is None

    def to_table(self) -> Any:
        """The axis as written in a scenario file: a list, ``{follows, values}`` or ``{from, to, steps, log}``."""
        if self.follows is not None:
            return {"follows": self.follows, "values": list(self.values or ())}
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
    study : str
        What runs at every point: ``run`` (one run per replicate; adoption outcomes),
        ``programme`` (the referral programme against its baseline, paired; its
        economics), ``seeding`` (every ``study.strategies`` strategy, paired; their
        outcomes and lifts against random) — or a study registered later
        (:func:`womlab.studies.sweep_studies.register_sweep_study`).
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
    study: str = "run"
    axes: tuple[Axis, ...] = ()

    def check(self, scenario: object) -> None:
        one_of("sweep.design", self.design, SWEEP_DESIGNS)
        one_of("sweep.study", self.study, sweep_study_names() or ("run",))
        positive_int("sweep.samples", self.samples)
        positive_int("sweep.replicates", self.replicates)
        if self.design == "sobol" and (self.samples < 2 or self.samples & (self.samples - 1)):
            fail(
                "sweep.samples",
                self.samples,
                'a power of 2 >= 2 for design = "sobol" (balance of the Sobol\' sequence)',
            )
        if self.design == "morris" and (self.levels < 2 or self.levels % 2):
            fail("sweep.levels", self.levels, 'an even whole number >= 2 for design = "morris"')
        fixed = {**FIXED_FIELDS, **sweep_study_fixed_fields(self.study)}
        for axis in self.axes:
            if axis.name in fixed:
                raise ScenarioError(
                    f"sweep.axes.{axis.name!r}: {axis.name} may not vary in a sweep: {fixed[axis.name]}"
                )
            _check_axis(axis, self.design, type(scenario))
        _check_followers(self.axes)

    def to_table(self) -> dict[str, Any]:
        """The section as written in a scenario file (axes keyed by dotted field)."""
        return {
            "design": self.design,
            "samples": self.samples,
            "replicates": self.replicates,
            "levels": self.levels,
            "study": self.study,
            "axes": {a.name: a.to_table() for a in self.axes},
        }

    @property
    def leaders(self) -> tuple[Axis, ...]:
        """The axes that are dimensions of the design (every axis but those that follow another)."""
        return tuple(a for a in self.axes if a.follows is None)

    def axis(self, name: str) -> Axis:
        for a in self.axes:
            if a.name == name:
                return a
        raise KeyError(name)


def field_type_in(root: type, dotted: str) -> type:
    """The Python type (int, float, str or bool) of the field ``dotted`` of the dataclass ``root``.

    ``root`` is the scenario class; its ``sweep`` field cannot itself be swept. Raises
    ScenarioError with a did-you-mean if no such field exists;
    ``adoption.talkers_per_customer`` (a number or a table) counts as float.
    """
    parts = dotted.split(".")
    top = [name for name in field_names(root) if name != "sweep"]
    if parts[0] not in top:
        unknown_field(dotted if len(parts) == 1 else parts[0], top)
    hint: Any = hints(root)[parts[0]]
    for depth in range(1, len(parts)):
        if getattr(hint, "KEYED_BY_NAME", None) is not None:  # a section keyed by name: segments.NAME.FIELD
            if depth == len(parts) - 1:
                raise ScenarioError(
                    f"{dotted} is not a field; name one as {parts[0]}.NAME.FIELD "
                    f"({', '.join(n for n in field_names(hint.KEYED_BY_NAME) if n != 'name')})"
                )
            hint = hint.KEYED_BY_NAME
            continue
        if not dataclasses.is_dataclass(hint):
            unknown_field(".".join(parts[: depth + 1]), [])
        known = field_names(hint)
        if parts[depth] not in known:
            unknown_field(".".join(parts[: depth + 1]), known)
        hint = hints(hint)[parts[depth]]
    if hint is Talkers:
        return float
    if dataclasses.is_dataclass(hint):
        raise ScenarioError(
            f"{dotted} is a table of fields; a sweep axis must name one of them "
            f"({', '.join(dotted + '.' + n for n in field_names(hint))})"
        )
    args = [a for a in typing.get_args(hint) if a is not type(None)]
    return args[0] if args else hint


def _check_axis(axis: Axis, design: str, root: type) -> None:
    where = f"sweep.axes.{axis.name!r}"
    try:
        kind = field_type_in(root, axis.name)
    except ScenarioError as exc:
        raise ScenarioError(f"{where}: {exc}") from None
    if axis.values is not None:
        if len(axis.values) == 0:
            fail(where, [], "a non-empty list of values")
        if axis.follows is None and len(set(map(repr, axis.values))) != len(axis.values):
            fail(where, list(axis.values), "a list without repeated values")
        if design == "morris":
            fail(
                where, list(axis.values), 'a range { from, to } for design = "morris" (elementary effects need a scale)'
            )
        return
    if kind not in (int, float):
        fail(where, axis.to_table(), f"a list of values ({axis.name} is {kind.__name__}, not a number)")
    for key, value in (("from", axis.start), ("to", axis.stop)):
        if value is None:
            raise ScenarioError(f"{where}.{key} is required for a range axis (or give a list of values)")
        if not math.isfinite(value):
            fail(f"{where}.{key}", value, "a finite number")
    if axis.start == axis.stop:
        fail(f"{where}.to", axis.stop, f"different from 'from' = {axis.start}")
    if axis.log and (axis.start <= 0 or axis.stop <= 0):
        fail(where, axis.to_table(), "a range of positive numbers when log = true")
    if design == "grid":
        if axis.steps is None:
            raise ScenarioError(f'{where}.steps is required for a range axis with design = "grid"')
        if axis.steps < 2:
            fail(f"{where}.steps", axis.steps, "a whole number >= 2")


def _check_followers(axes: tuple[Axis, ...]) -> None:
    by_name = {a.name: a for a in axes}
    for axis in axes:
        if axis.follows is None:
            continue
        where = f"sweep.axes.{axis.name!r}.follows"
        leader = by_name.get(axis.follows)
        if leader is None:
            fail(
                where,
                axis.follows,
                f"another axis of this sweep ({', '.join(repr(a.name) for a in axes if a is not axis)})",
            )
        if leader.values is None or leader.follows is not None:
            fail(where, axis.follows, "a list axis that follows no other (a range axis has no k-th value)")
        if len(leader.values) != len(axis.values or ()):
            fail(
                f"sweep.axes.{axis.name!r}.values",
                list(axis.values or ()),
                f"{len(leader.values)} values, as many as {axis.follows!r} has",
            )


def parse_axes(value: Any, dotted: str, base_dir: str | Path | None = None) -> tuple[Axis, ...]:
    """Parse the ``[sweep.axes]`` table: dotted field name → list, {follows, values} or {from, to, steps, log}.

    Values of a path field (:func:`is_path_field`) are resolved against ``base_dir`` (the
    scenario file's folder) when it is given.
    """
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
            axes.append(Axis(name=str(name), values=_paths(tuple(spec), str(name), base_dir)))
            continue
        if not isinstance(spec, Mapping):
            raise ScenarioError(f"{where} must be a list of values or a table {{ from, to, steps, log }}, got {spec!r}")
        if "follows" in spec:
            for key in spec:
                if key not in ("follows", "values"):
                    unknown_field(f"{where}.{key}", ["follows", "values"])
            values = spec.get("values")
            if not isinstance(values, (list, tuple)) or any(
                isinstance(v, (dict, list, tuple)) or v is None for v in values
            ):
                raise ScenarioError(f"{where}.values must be a list of numbers, text or true/false, got {values!r}")
            axes.append(
                Axis(
                    name=str(name),
                    values=_paths(tuple(values), str(name), base_dir),
                    follows=coerce(spec["follows"], str, f"{where}.follows"),
                )
            )
            continue
        known = ["from", "to", "steps", "log", "follows"]
        for key in spec:
            if key not in known:
                unknown_field(f"{where}.{key}", known)
        axes.append(
            Axis(
                name=str(name),
                start=coerce(spec.get("from"), float | None, f"{where}.from"),
                stop=coerce(spec.get("to"), float | None, f"{where}.to"),
                steps=coerce(spec.get("steps"), int | None, f"{where}.steps"),
                log=coerce(spec.get("log", False), bool, f"{where}.log"),
            )
        )
    return tuple(axes)


def _paths(values: tuple, name: str, base_dir: str | Path | None) -> tuple:
    if base_dir is None or not is_path_field(name):
        return values
    return tuple(resolve_path(v, base_dir) if isinstance(v, str) else v for v in values)
