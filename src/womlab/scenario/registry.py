"""What the layers above the scenario register here, so that it can validate without importing them.

The scenario is the lowest layer of womlab: it imports nothing of womlab but
:mod:`womlab.errors`. Two checks need knowledge that lives higher up, and those layers
hand it down when they are imported (``import womlab`` imports them all):

* the names of the seeding strategies (:mod:`womlab.seeding` registers each one with
  :func:`register_strategy_name`), against which ``seeding.strategy``,
  ``study.strategies`` and ``referral.strategy`` are checked;
* how to read an edge list's size and mean degree (:mod:`womlab.networks` registers its
  reader with :func:`register_edgelist_reader`), which the scenario uses to take
  ``market.organisations`` and ``network.mean_degree`` from the file;
* the names of the studies a sweep point can run (:mod:`womlab.studies.sweep_studies`
  registers each with :func:`register_sweep_study_name`, with the fields that study sets
  itself), against which ``sweep.study`` and the sweep's axes are checked.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

__all__ = ["register_strategy_name", "strategy_names", "register_edgelist_reader", "edgelist_facts",
           "register_sweep_study_name", "sweep_study_names", "sweep_study_fixed_fields"]

_STRATEGY_NAMES: set[str] = set()
_SWEEP_STUDIES: dict[str, dict[str, str]] = {}
_EDGELIST_READER: list[Callable[[str, str | None], tuple[int, float]]] = []


def register_strategy_name(name: str) -> None:
    """Make ``name`` a valid seeding strategy in scenarios (called by the seeding registry)."""
    _STRATEGY_NAMES.add(name)


def strategy_names() -> tuple[str, ...]:
    """The registered seeding strategy names, sorted."""
    return tuple(sorted(_STRATEGY_NAMES))


def register_edgelist_reader(reader: Callable[[str, str | None], tuple[int, float]]) -> None:
    """Set the function ``(path, nodes_path) -> (organisations, mean degree)`` of edge lists."""
    _EDGELIST_READER[:] = [reader]


def edgelist_facts(path: str | Path, nodes_path: str | Path | None) -> tuple[int, float]:
    """Organisations and mean degree of an edge list, by the reader :mod:`womlab.networks` registered."""
    if not _EDGELIST_READER:  # pragma: no cover - `import womlab` registers it
        raise RuntimeError("no edge-list reader is registered; import womlab (womlab.networks registers it)")
    return _EDGELIST_READER[0](str(path), None if nodes_path is None else str(nodes_path))


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
