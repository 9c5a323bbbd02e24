"""The peer for the engine benchmark: the same word-of-mouth model written as a Mesa user would write it.

One agent per organisation on Mesa's network space, each step every potential customer
looks at its neighbourhood, adds up the talkers of satisfied customers and of everyone,
and draws against the ``share`` rule's step probability 1 − exp(−(p + q·T/D)·dt); adopters
are applied after everyone has decided (``step`` then ``advance``), and an adopter is
satisfied with probability s. No caching, no arrays, no attribution: the textbook form,
with Mesa's own idioms (``cell.neighborhood``, ``AgentSet.do``, ``model.random``). It is
not part of womlab; ``benchmarks/engines.py`` times it beside womlab's engines.
"""

from __future__ import annotations

import math

import mesa
import networkx as nx
from mesa.discrete_space import FixedAgent, Network


class Firm(FixedAgent):
    def __init__(self, model: Market, cell, talkers: float) -> None:  # noqa: ANN001
        super().__init__(model)
        self.cell = cell
        self.talkers = talkers
        self.customer = False
        self.satisfied = False
        self.adopting = False

    def step(self) -> None:
        if self.customer:
            return
        talking = total = 0.0
        for other in self.cell.neighborhood.agents:
            total += other.talkers
            if other.customer and other.satisfied:
                talking += other.talkers
        model = self.model
        rate = model.p + (model.q * talking / total if total > 0 else 0.0)
        self.adopting = self.random.random() < 1 - math.exp(-rate * model.dt)

    def advance(self) -> None:
        if self.adopting:
            self.customer = True
            self.adopting = False
            self.satisfied = self.random.random() < self.model.satisfied_share


class Market(mesa.Model):
    def __init__(
        self,
        graph: nx.Graph,
        *,
        p: float,
        q: float,
        satisfied_share: float,
        talkers: float,
        initial: list[int],
        dt: float = 1.0,
        seed: int = 0,
    ) -> None:
        super().__init__(seed=seed)
        self.p, self.q, self.satisfied_share, self.dt = p, q, satisfied_share, dt
        self.space = Network(graph, random=self.random)
        for node in graph.nodes:
            Firm(self, self.space[node], talkers)
        firms = {firm.cell.coordinate: firm for firm in self.agents}
        for node in initial:
            firms[node].customer = True
            firms[node].satisfied = self.random.random() < satisfied_share
        self.datacollector = mesa.DataCollector(
            model_reporters={"customers": lambda m: sum(1 for a in m.agents if a.customer)}
        )
        self.datacollector.collect(self)

    def step(self) -> None:
        self.agents.do("step")
        self.agents.do("advance")
        self.datacollector.collect(self)


def run(graph: nx.Graph, periods: int, **kwargs) -> list[int]:
    """Customers per period (period 0 first) of one run."""
    model = Market(graph, **kwargs)
    for _ in range(periods):
        model.step()
    return model.datacollector.get_model_vars_dataframe()["customers"].tolist()
