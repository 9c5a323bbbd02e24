"""What the layers above the scenario register here, so that it can validate without importing them.

The scenario is the lowest layer of womlab: it imports nothing of womlab but
:mod:`womlab.errors`. Two checks need knowledge that lives higher up, and those layers
hand it down when they are imported (``import womlab`` imports them all):

* the names of the seeding strategies (:mod:`womlab.seeding` registers each one with
  :func:`register_strategy_name`), against which ``seeding.strategy``,
  ``study.strategies`` and ``referral.strategy`` are checked;
* how to read an edge list's size, mean degree and regions (:mod:`womlab.networks`
  registers its reader with :func:`register_edgelist_reader`), which the scenario uses to
  take ``market.organisations``, ``network.mean_degree`` and, with a node file,
  ``market.regions`` from the files.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

__all__ = ["register_strategy_name", "strategy_names", "register_edgelist_reader", "edgelist_facts"]

_STRATEGY_NAMES: set[str] = set()
_EDGELIST_READER: list[Callable[[str, str | None], tuple]] = []


def register_strategy_name(name: str) -> None:
    """Make ``name`` a valid seeding strategy in scenarios (called by the seeding registry)."""
    _STRATEGY_NAMES.add(name)


def strategy_names() -> tuple[str, ...]:
    """The registered seeding strategy names, sorted."""
    return tuple(sorted(_STRATEGY_NAMES))


def register_edgelist_reader(reader: Callable[[str, str | None], tuple]) -> None:
    """Set the function ``(path, nodes_path) -> (organisations, mean degree, regions)`` of edge lists
    (a reader that returns only the first two is taken to mean one region)."""
    _EDGELIST_READER[:] = [reader]


def edgelist_facts(path: str | Path, nodes_path: str | Path | None) -> tuple[int, float, int]:
    """Organisations, mean degree and regions of an edge list, by the reader :mod:`womlab.networks` registered."""
    if not _EDGELIST_READER:  # pragma: no cover - `import womlab` registers it
        raise RuntimeError("no edge-list reader is registered; import womlab (womlab.networks registers it)")
    facts = tuple(_EDGELIST_READER[0](str(path), None if nodes_path is None else str(nodes_path)))
    return (int(facts[0]), float(facts[1]), int(facts[2]) if len(facts) > 2 else 1)
