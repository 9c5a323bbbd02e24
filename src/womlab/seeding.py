"""Seeding strategies: who the first customers are.

A strategy is a plain function ``(network, budget, rng) -> node ids`` registered by
name in ``STRATEGIES``; it must return ``budget`` distinct ids (int32) and be
deterministic given ``rng``. An unknown name raises an error that lists the known ones.

Adding a strategy: write the function, decorate it with ``@strategy("name")``, and give
it a test that checks its definition on a graph whose answer is known.
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from .errors import ScenarioError
from .networks import ReferralNetwork
from .scenario import Scenario

__all__ = ["STRATEGIES", "strategy", "choose_seeds", "initial_customers", "random"]

Strategy = Callable[[ReferralNetwork, int, np.random.Generator], np.ndarray]
STRATEGIES: dict[str, Strategy] = {}


def strategy(name: str) -> Callable[[Strategy], Strategy]:
    """Register a seeding strategy under ``name``."""

    def register(func: Strategy) -> Strategy:
        STRATEGIES[name] = func
        return func

    return register


@strategy("random")
def random(network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """``budget`` organisations drawn uniformly without replacement."""
    return np.sort(rng.choice(network.n, size=budget, replace=False)).astype(np.int32)


def choose_seeds(name: str, network: ReferralNetwork, budget: int, rng: np.random.Generator) -> np.ndarray:
    """Run the strategy ``name``; raises ScenarioError listing the known names if unknown."""
    try:
        func = STRATEGIES[name]
    except KeyError:
        raise ScenarioError(
            f"unknown seeding strategy {name!r}; known: {', '.join(sorted(STRATEGIES))}"
        ) from None
    if not 0 <= budget <= network.n:
        raise ScenarioError(f"seeding budget must be between 0 and {network.n} organisations, got {budget}")
    seeds = np.asarray(func(network, budget, rng), dtype=np.int32)
    if seeds.size != budget or np.unique(seeds).size != budget:
        raise RuntimeError(f"seeding strategy {name!r} returned {seeds.size} ids, not {budget} distinct ones")
    return seeds


def initial_customers(scenario: Scenario, network: ReferralNetwork, rng: np.random.Generator) -> np.ndarray:
    """The customers at period 0: ``market.n_initial`` organisations chosen at random."""
    return choose_seeds("random", network, scenario.market.n_initial, rng)
