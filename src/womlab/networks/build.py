"""Building a scenario's network: each kind's builder, chosen by ``network.kind``."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

import numpy as np

from womlab.errors import NetworkError
from womlab.networks import builders
from womlab.networks.edgelist import read_edgelist
from womlab.networks.graphfile import read_graph_file
from womlab.networks.network import ReferralNetwork
from womlab.scenario import Market, NetworkSpec, Scenario

if TYPE_CHECKING:
    import networkx as nx

__all__ = ["build_network", "BUILDERS"]

Builder = Callable[[NetworkSpec, Market, np.random.Generator], "nx.Graph | ReferralNetwork"]

BUILDERS: dict[str, Builder] = {
    "complete": lambda s, m, rng: builders.complete(m.organisations, regions=m.regions, rng=rng),
    "ring": lambda s, m, rng: builders.ring(m.organisations, int(s.mean_degree), rng, regions=m.regions),
    "regular": lambda s, m, rng: builders.regular(m.organisations, int(s.mean_degree), rng, regions=m.regions),
    "random": lambda s, m, rng: builders.random(m.organisations, s.mean_degree, rng, regions=m.regions),
    "small_world": lambda s, m, rng: builders.small_world(m.organisations, int(s.mean_degree), s.rewiring, rng, regions=m.regions),
    "regional": lambda s, m, rng: builders.regional(m.organisations, int(s.mean_degree), m.regions, s.within_region_share, rng,
                                                    rewiring=s.rewiring),
    "regional_blocks": lambda s, m, rng: builders.regional_blocks(m.organisations, s.mean_degree, m.regions,
                                                                  s.within_region_share, rng),
    "scale_free": lambda s, m, rng: builders.scale_free(m.organisations, int(s.mean_degree), rng, regions=m.regions),
    "edgelist": lambda s, m, rng: read_edgelist(s.path, s.nodes_path),
    "graphml": lambda s, m, rng: read_graph_file(s.path, "graphml", region=s.region_attribute),
    "gexf": lambda s, m, rng: read_graph_file(s.path, "gexf", region=s.region_attribute),
}


def build_network(scenario: Scenario, rng: np.random.Generator) -> ReferralNetwork:
    """Build the scenario's referral network from the network stream ``rng``.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario, build_network
    >>> s = Scenario.from_dict({"market": {"organisations": 100}, "network": {"kind": "ring", "mean_degree": 4}})
    >>> build_network(s, np.random.default_rng(1)).ties
    200
    """
    kind = scenario.network.kind
    try:
        builder = BUILDERS[kind]
    except KeyError:
        raise NetworkError(f"unknown network kind {kind!r}; known: {', '.join(sorted(BUILDERS))}") from None
    built = builder(scenario.network, scenario.market, rng)
    if isinstance(built, ReferralNetwork):
        return built
    return ReferralNetwork.from_networkx(built, kind)
