"""What the layers above the scenario register here, so that it can validate without importing them.

The scenario is the lowest layer of womlab: it imports nothing of womlab but
:mod:`womlab.errors`. Two checks need knowledge that lives higher up, and those layers
hand it down when they are imported (``import womlab`` imports them all):

* the names of the seeding strategies (:mod:`womlab.seeding` registers each one with
  :func:`register_strategy_name`), against which ``seeding.strategy``,
  ``study.strategies`` and ``referral.strategy`` are checked;
* how to read a network file's size, mean degree and regions (:mod:`womlab.networks`
  registers a reader per file kind — edge list, GraphML, GEXF — with
  :func:`register_network_file_reader`), which the scenario uses to take
  ``market.organisations``, ``network.mean_degree`` and (with a node file)
  ``market.regions`` from the file.
* the names of the studies a sweep point can run (:mod:`womlab.studies.sweep_studies`
  registers each with :func:`register_sweep_study_name`, with the fields that study sets
  itself), against which ``sweep.study`` and the sweep's axes are checked.
* the levers a ``[levers]`` section may set (:mod:`womlab.studies.levers` registers each with
  :func:`register_lever_name`, with the check of its settings).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

__all__ = [
    "register_strategy_name",
    "strategy_names",
    "register_network_file_reader",
    "network_file_facts",
    "network_file_kinds",
    "register_edgelist_reader",
    "edgelist_facts",
    "register_sweep_study_name",
    "sweep_study_names",
    "sweep_study_fixed_fields",
    "register_lever_name",
    "lever_names",
    "lever_check",
]

_STRATEGY_NAMES: set[str] = set()
_SWEEP_STUDIES: dict[str, dict[str, str]] = {}
_FILE_READERS: dict[str, Callable[[str, str | None], tuple]] = {}
_LEVERS: dict[str, Callable[..., None] | None] = {}


def register_strategy_name(name: str) -> None:
    """Make ``name`` a valid seeding strategy in scenarios (called by the seeding registry)."""
    _STRATEGY_NAMES.add(name)


def strategy_names() -> tuple[str, ...]:
    """The registered seeding strategy names, sorted."""
    return tuple(sorted(_STRATEGY_NAMES))


def register_network_file_reader(kind: str, reader: Callable[[str, str | None], tuple]) -> None:
    """Set the function ``(path, nodes_path) -> (organisations, mean degree[, regions])`` of network
    files of ``kind`` (a reader that gives no regions means one region)."""
    _FILE_READERS[kind] = reader


def network_file_kinds() -> tuple[str, ...]:
    """The network kinds read from a file (those with a registered reader)."""
    return tuple(sorted(_FILE_READERS))


def network_file_facts(kind: str, path: str | Path, nodes_path: str | Path | None = None) -> tuple[int, float, int]:
    """Organisations, mean degree and regions of a network file, by the reader :mod:`womlab.networks` registered."""
    if kind not in _FILE_READERS:  # pragma: no cover - `import womlab` registers them
        raise RuntimeError(f"no reader is registered for network files of kind {kind!r}; import womlab")
    facts = tuple(_FILE_READERS[kind](str(path), None if nodes_path is None else str(nodes_path)))
    return int(facts[0]), float(facts[1]), int(facts[2]) if len(facts) > 2 else 1


def register_edgelist_reader(reader: Callable[[str, str | None], tuple]) -> None:
    """Set the function ``(path, nodes_path) -> (organisations, mean degree, regions)`` of edge lists."""
    register_network_file_reader("edgelist", reader)


def edgelist_facts(path: str | Path, nodes_path: str | Path | None) -> tuple[int, float, int]:
    """Organisations, mean degree and regions of an edge list, by the reader :mod:`womlab.networks` registered."""
    return network_file_facts("edgelist", path, nodes_path)


def register_sweep_study_name(name: str, fixed_fields: dict[str, str] | None = None) -> None:
    """Make ``name`` a valid ``sweep.study``; ``fixed_fields`` maps the dotted fields that study
    sets itself (so that a sweep axis may not vary them) to the reason, said in the error."""
    _SWEEP_STUDIES[name] = dict(fixed_fields or {})


def sweep_study_names() -> tuple[str, ...]:
    """The registered sweep study names, in the order registered."""
    return tuple(_SWEEP_STUDIES)


def sweep_study_fixed_fields(name: str) -> dict[str, str]:
    """Dotted field → reason, for the fields sweep study ``name`` sets itself ({} if unknown)."""
    return dict(_SWEEP_STUDIES.get(name, {}))


def register_lever_name(name: str, check: Callable[..., None] | None = None) -> None:
    """Make ``name`` a valid lever in ``[levers]``; ``check(scenario, settings, dotted)`` validates its
    table (raising ScenarioError naming the field)."""
    _LEVERS[name] = check


def lever_names() -> tuple[str, ...]:
    """The registered lever names, in the order registered."""
    return tuple(_LEVERS)


def lever_check(name: str) -> Callable[..., None] | None:
    """The check of lever ``name``'s settings (None: no check)."""
    return _LEVERS.get(name)
