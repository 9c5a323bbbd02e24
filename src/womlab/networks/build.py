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

__all__ = ["build_network", "BUILDERS", "network_clustering_line"]

Builder = Callable[[NetworkSpec, Market, np.random.Generator], "nx.Graph | ReferralNetwork"]

BUILDERS: dict[str, Builder] = {
    "complete": lambda s, m, rng: builders.complete(m.organisations, regions=m.regions, rng=rng),
    "ring": lambda s, m, rng: builders.ring(m.organisations, int(s.mean_degree), rng, regions=m.regions),
    "regular": lambda s, m, rng: builders.regular(m.organisations, int(s.mean_degree), rng, regions=m.regions),
    "random": lambda s, m, rng: builders.random(m.organisations, s.mean_degree, rng, regions=m.regions),
    "small_world": lambda s, m, rng: builders.small_world(
        m.organisations, int(s.mean_degree), s.rewiring, rng, regions=m.regions
    ),
    "regional": lambda s, m, rng: builders.regional(
        m.organisations, int(s.mean_degree), m.regions, s.within_region_share, rng, rewiring=s.rewiring
    ),
    "regional_blocks": lambda s, m, rng: builders.regional_blocks(
        m.organisations, s.mean_degree, m.regions, s.within_region_share, rng
    ),
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


def network_clustering_line(scenario: Scenario, rng: np.random.Generator) -> str:
    """The mean local clustering of the network built from ``rng``, beside the builder's expected
    value where it has one (:func:`womlab.networks.builders.expected_clustering`), as one line.

    ``womlab check`` passes replicate 0's network stream, so the figure is that of the
    network the first run sees; the expected value is what the kind gives on average.

    Examples
    --------
    >>> import numpy as np
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"market": {"organisations": 400}, "network": {"kind": "ring", "mean_degree": 6}})
    >>> network_clustering_line(s, np.random.default_rng(0))
    '0.6 (one network built from the seed; expected 0.6 for ring)'
    """
    net = build_network(scenario, rng)
    spec = scenario.network
    expected = builders.expected_clustering(
        spec.kind,
        scenario.market.organisations,
        spec.mean_degree,
        rewiring=spec.rewiring,
        within_region_share=spec.within_region_share,
    )
    known = f"expected {expected:.4g} for {spec.kind}" if expected is not None else f"no closed form for {spec.kind}"
    return f"{net.clustering():.4g} (one network built from the seed; {known})"
