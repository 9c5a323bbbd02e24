"""The networks layer: referral networks built into arrays, edge lists, regions.

Knows the scenario (below) and nothing of seeding, dynamics or studies (above).
``network`` holds :class:`ReferralNetwork` and :func:`from_edges`; ``builders`` one
function per kind (built straight into arrays, each with its networkx reference form);
``edgelist`` the CSV reader; ``build`` the dispatch from a scenario's ``[network]``.
"""

from __future__ import annotations

from womlab.networks.build import BUILDERS, build_network, network_clustering_line
from womlab.networks.builders import (
    complete,
    expected_clustering,
    networkx_random,
    networkx_regional_blocks,
    networkx_regular,
    networkx_ring,
    networkx_scale_free,
    networkx_small_world,
    random,
    regional,
    regional_blocks,
    regular,
    rewired_lattice_clustering,
    ring,
    scale_free,
    small_world,
)
from womlab.networks.edgelist import count_edgelist_organisations, edgelist_facts, read_edgelist
from womlab.networks.graphfile import GRAPH_FORMATS, graph_file_facts, read_graph_file
from womlab.networks.network import ReferralNetwork, balanced_regions, from_edges
from womlab.networks.tables import from_edge_table
from womlab.scenario.registry import register_edgelist_reader, register_network_file_reader

register_edgelist_reader(edgelist_facts)
for _kind in GRAPH_FORMATS:
    register_network_file_reader(_kind, lambda path, nodes_path, kind=_kind: graph_file_facts(kind, path))

__all__ = [
    "ReferralNetwork",
    "BUILDERS",
    "build_network",
    "network_clustering_line",
    "from_edges",
    "complete",
    "ring",
    "regular",
    "random",
    "small_world",
    "regional",
    "regional_blocks",
    "expected_clustering",
    "rewired_lattice_clustering",
    "from_edge_table",
    "scale_free",
    "read_edgelist",
    "count_edgelist_organisations",
    "edgelist_facts",
    "read_graph_file",
    "graph_file_facts",
    "balanced_regions",
    "networkx_ring",
    "networkx_regular",
    "networkx_random",
    "networkx_small_world",
    "networkx_regional_blocks",
    "networkx_scale_free",
]
