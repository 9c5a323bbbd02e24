"""The engines by name, and which one a scenario runs on.

Every engine has one signature, ``(scenario, network, initial, rng) -> RunResult``:
``array`` (:mod:`womlab.dynamics.array_engine`, the default), ``mesa``
(:mod:`womlab.dynamics.mesa_model`, imported only when asked for) and ``events``
(:mod:`womlab.dynamics.event_engine`, the continuous clock). The three know nothing of
each other; this module is the one place that knows them all.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from womlab.dynamics.array_engine import run_array
from womlab.dynamics.event_engine import run_events
from womlab.dynamics.run_result import RunResult
from womlab.networks import ReferralNetwork
from womlab.scenario import Scenario

__all__ = ["Engine", "ENGINES", "engine_for"]

Engine = Callable[[Scenario, ReferralNetwork, np.ndarray, np.random.Generator], RunResult]


def _mesa_engine(
    scenario: Scenario, network: ReferralNetwork, initial: np.ndarray, rng: np.random.Generator
) -> RunResult:
    from womlab.dynamics.mesa_model import run_mesa  # Mesa is imported only when this engine is asked for

    return run_mesa(scenario, network, initial, rng)


ENGINES: dict[str, Engine] = {"array": run_array, "mesa": _mesa_engine, "events": run_events}


def engine_for(scenario: Scenario) -> Engine:
    """The engine a scenario runs on: the event engine on the continuous clock, else ``run.engine``."""
    return ENGINES["events" if scenario.run.clock == "continuous" else scenario.run.engine]
