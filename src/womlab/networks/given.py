"""A network the caller brings: a :class:`ReferralNetwork`, a networkx graph or a pandas edge table.

:func:`as_network` is the one place where such a network becomes the arrays every engine
reads, checked against the scenario's market size; every study that takes ``network=``
and the Mesa model go through it. :func:`node_attributes` keeps what a networkx graph
says about each organisation, for per-organisation results.
"""

from __future__ import annotations

import dataclasses
from typing import Any

import networkx as nx
import numpy as np
import pandas as pd

from womlab.errors import NetworkError
from womlab.networks.network import ReferralNetwork
from womlab.scenario import Scenario

__all__ = ["GivenNetwork", "as_network", "node_attributes", "organisation_ids", "mapped_with"]

#: What ``network=`` accepts.
GivenNetwork = ReferralNetwork | nx.Graph | pd.DataFrame


def as_network(network: Any, organisations: int | None = None) -> ReferralNetwork:
    """The referral network of ``network``, checked against the market size.

    Parameters
    ----------
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame
        A network as arrays (used as it is); an undirected networkx graph (any node ids,
        an optional whole-number ``region`` attribute; directions and self-loops are
        dropped); or an edge table with columns ``source`` and ``target`` (one row per
        tie, ids of any kind).
    organisations : int, optional
        The scenario's ``market.organisations``; the network must have exactly that many.

    Returns
    -------
    ReferralNetwork
        Organisation i is the i-th node id in ascending order when the ids are not
        already 0..N−1; the ids as given are kept in ``labels``.

    Raises
    ------
    NetworkError
        For anything else, an edge table without ``source`` and ``target``, or a size
        that disagrees with ``organisations``.

    Examples
    --------
    >>> import networkx as nx
    >>> net = as_network(nx.florentine_families_graph(), 15)
    >>> net.n, net.ties, str(net.labels[0])
    (15, 20, 'Acciaiuoli')
    >>> as_network(nx.path_graph(4), 5)
    Traceback (most recent call last):
    ...
    womlab.errors.NetworkError: the network has 4 organisations but market.organisations is 5; they must agree (set market.organisations = 4, or give a network of 5)
    """
    if isinstance(network, ReferralNetwork):
        net = network
    elif isinstance(network, nx.Graph):
        net = _from_graph(network)
    elif isinstance(network, pd.DataFrame):
        missing = [c for c in ("source", "target") if c not in network.columns]
        if missing:
            raise NetworkError(
                f"an edge table needs columns source and target; missing {', '.join(missing)} "
                f"(found {', '.join(map(str, network.columns))})"
            )
        if network[["source", "target"]].isna().any().any():
            raise NetworkError("an edge table has empty cells in source or target")
        net = _from_graph(nx.from_pandas_edgelist(network, "source", "target"))
    else:
        raise NetworkError(
            f"network must be a womlab ReferralNetwork, a networkx graph or a pandas edge table "
            f"(columns source, target), got {type(network).__name__}"
        )
    if organisations is not None and net.n != organisations:
        raise NetworkError(
            f"the network has {net.n} organisations but market.organisations is {organisations}; they must agree "
            f"(set market.organisations = {net.n}, or give a network of {organisations})"
        )
    return net


def _from_graph(graph: nx.Graph) -> ReferralNetwork:
    if graph.is_directed():
        graph = graph.to_undirected(as_view=True)
    net = ReferralNetwork.from_networkx(graph)
    if net.labels is None and set(graph.nodes) != set(range(graph.number_of_nodes())):
        # the ids as given, in the order from_networkx numbers them (ascending)
        net = dataclasses.replace(net, labels=np.asarray(sorted(graph.nodes), dtype=object))
    return net


def organisation_ids(network: ReferralNetwork) -> np.ndarray:
    """The ids of the organisations as given (``labels``), else 0..N−1."""
    return np.arange(network.n) if network.labels is None else np.asarray(network.labels)


def node_attributes(given: Any, network: ReferralNetwork) -> pd.DataFrame | None:
    """Node attributes of a networkx graph, one row per organisation of ``network`` (its order).

    ``None`` for anything but a networkx graph, or a graph whose nodes carry no
    attributes. ``region`` is left out (the network holds it).

    Examples
    --------
    >>> import networkx as nx
    >>> g = nx.karate_club_graph()
    >>> node_attributes(g, as_network(g))["club"].value_counts().to_dict()
    {'Mr. Hi': 17, 'Officer': 17}
    """
    if not isinstance(given, nx.Graph):
        return None
    ids = organisation_ids(network).tolist()
    rows = [{k: v for k, v in given.nodes[i].items() if k != "region"} for i in ids]
    if not any(rows):
        return None
    return pd.DataFrame(rows)


def mapped_with(scenario: Scenario, network: ReferralNetwork | None) -> Scenario:
    """The scenario the aggregate models are mapped from when the runs are on ``network``.

    The mapping (:func:`womlab.aggregate.mapped_parameters`) reads the mean degree from
    ``[network]``; with a network of your own that section does not describe it, so the
    mean degree is measured on the network (kind ``random``: any mean degree is valid
    there). ``scenario`` itself when ``network`` is None or has no ties.

    Examples
    --------
    >>> import networkx as nx
    >>> s = Scenario.from_dict({"market": {"organisations": 34}, "network": {"kind": "ring", "mean_degree": 4}})
    >>> round(mapped_with(s, as_network(nx.karate_club_graph(), 34)).network.mean_degree, 3)
    4.588
    """
    if network is None or network.complete or network.ties == 0:
        return scenario
    return scenario.replace({"network.kind": "random", "network.mean_degree": 2.0 * network.ties / network.n})
