"""The seeding layer: who the first customers are.

Knows networks and the scenario (below), nothing of dynamics or studies (above).
``registry`` holds the strategies by name and the entry points (:func:`choose_seeds`,
:func:`initial_customers`); ``strategies`` the strategies themselves. A strategy that
simulates (``greedy``) is handed its simulator by the caller, or uses the one the
dynamics layer registers (:func:`register_simulator`).
"""

from __future__ import annotations

from womlab.seeding.centrality import betweenness, core_numbers
from womlab.seeding.centrality import pagerank as pagerank_values
from womlab.seeding.registry import (
    STRATEGIES,
    Simulator,
    choose_seeds,
    default_simulator,
    initial_customers,
    register_simulator,
    strategy,
)
from womlab.seeding.strategies import (
    bridges,
    by_region,
    coreness,
    engine_objective,
    fringe,
    greedy,
    hubs,
    listed,
    pagerank,
    random,
    region_quotas,
    spread,
)

__all__ = [
    "STRATEGIES",
    "Simulator",
    "strategy",
    "choose_seeds",
    "initial_customers",
    "register_simulator",
    "default_simulator",
    "random",
    "hubs",
    "bridges",
    "pagerank",
    "coreness",
    "fringe",
    "by_region",
    "spread",
    "greedy",
    "listed",
    "region_quotas",
    "engine_objective",
    "betweenness",
    "core_numbers",
    "pagerank_values",
]
