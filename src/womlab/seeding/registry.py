"""The registry of seeding strategies, and the entry points that run one by name.

A strategy is registered with :func:`strategy` (which also hands its name down to the
scenario layer, so scenarios validate strategy names without importing this package).
Strategies that simulate (``greedy``) take the simulator from the layer that calls them:
:func:`choose_seeds` and :func:`initial_customers` accept ``simulate``, an engine
``(scenario, network, initial, rng) -> run``; when none is given, the default that the
dynamics layer registered with :func:`register_simulator` is used.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

from womlab.errors import ScenarioError
from womlab.networks import ReferralNetwork
from womlab.scenario import Scenario, progress
from womlab.scenario.registry import register_strategy_name

__all__ = [
    "STRATEGIES",
    "strategy",
    "choose_seeds",
    "initial_customers",
    "register_simulator",
    "default_simulator",
    "Simulator",
]

Strategy = Callable[..., np.ndarray]
STRATEGIES: dict[str, Strategy] = {}
_OPTIONS: dict[str, Callable[[Scenario], dict[str, Any]]] = {}
_SIMULATES: set[str] = set()

#: An engine as seeding strategies see it: (scenario, network, initial ids, dynamics rng) -> a run
#: with a ``customers`` array per period.
Simulator = Callable[[Scenario, ReferralNetwork, np.ndarray, np.random.Generator], Any]
_SIMULATOR: list[Simulator] = []


def register_simulator(simulate: Simulator) -> None:
    """Set the engine strategies that simulate use when their caller gives none (the dynamics layer does this)."""
    _SIMULATOR[:] = [simulate]


def default_simulator() -> Simulator:
    """The engine registered by :func:`register_simulator`."""
    if not _SIMULATOR:  # pragma: no cover - `import womlab` registers the array engine
        raise ScenarioError("no simulator is registered for seeding strategies that simulate; import womlab")
    return _SIMULATOR[0]


def strategy(
    name: str, options: Callable[[Scenario], dict[str, Any]] | None = None, *, simulates: bool = False
) -> Callable[[Strategy], Strategy]:
    """Register a seeding strategy under ``name``.

    ``options`` maps a scenario to the strategy's keyword arguments (its fields of
    ``[seeding]``); strategies without options need none. A strategy that ``simulates``
    is also given ``simulate=`` (the caller's engine, or the registered default).
    """

    def register(func: Strategy) -> Strategy:
        STRATEGIES[name] = func
        register_strategy_name(name)
        if options is not None:
            _OPTIONS[name] = options
        if simulates:
            _SIMULATES.add(name)
        return func

    return register


def choose_seeds(
    name: str,
    network: ReferralNetwork,
    budget: int,
    rng: np.random.Generator,
    *,
    scenario: Scenario | None = None,
    simulate: Simulator | None = None,
) -> np.ndarray:
    """Run the strategy ``name``; raises ScenarioError listing the known names if unknown.

    ``scenario`` supplies the strategy's options from ``[seeding]`` (required for
    ``greedy``, which runs the scenario's rule). ``simulate`` is the engine a strategy
    that simulates runs (default: :func:`default_simulator`, the array engine).

    Examples
    --------
    >>> import networkx as nx, numpy as np
    >>> from womlab import ReferralNetwork, choose_seeds
    >>> star = ReferralNetwork.from_networkx(nx.star_graph(5))
    >>> choose_seeds("hubs", star, 1, np.random.default_rng(0)).tolist()
    [0]
    """
    try:
        func = STRATEGIES[name]
    except KeyError:
        raise ScenarioError(f"unknown seeding strategy {name!r}; known: {', '.join(sorted(STRATEGIES))}") from None
    if not 0 <= budget <= network.n:
        raise ScenarioError(f"seeding budget must be between 0 and {network.n} organisations, got {budget}")
    options = _OPTIONS[name](scenario) if (name in _OPTIONS and scenario is not None) else {}
    if name in _SIMULATES:
        options["simulate"] = default_simulator() if simulate is None else simulate
    with _stage(name, network, scenario):
        seeds = np.asarray(func(network, budget, rng, **options), dtype=np.int32)
    if (
        seeds.size != budget
        or np.unique(seeds).size != budget
        or (budget and not 0 <= seeds.min() <= seeds.max() < network.n)
    ):
        raise RuntimeError(f"seeding strategy {name!r} returned {seeds.size} ids, not {budget} distinct valid ones")
    return seeds


def _stage(name: str, network: ReferralNetwork, scenario: Scenario | None):  # noqa: ANN202 - a context manager
    """Report choosing seeds as a step of its own when it will be slow (sampled betweenness, greedy)."""
    from contextlib import nullcontext

    from womlab.scenario.resources import strategy_seconds

    if scenario is None or strategy_seconds(name, scenario) < SLOW_STAGE:
        return nullcontext()
    return progress.stage(f"{name}: choosing {scenario.n_initial} seeds among {network.n:,} organisations")


#: Choosing seeds is reported as a step of its own when the estimate says it takes longer (seconds).
SLOW_STAGE = 5.0


def initial_customers(
    scenario: Scenario, network: ReferralNetwork, rng: np.random.Generator, *, simulate: Simulator | None = None
) -> np.ndarray:
    """The customers at period 0: ``scenario.n_initial`` organisations chosen by ``seeding.strategy``."""
    return choose_seeds(
        scenario.seeding.strategy, network, scenario.n_initial, rng, scenario=scenario, simulate=simulate
    )
