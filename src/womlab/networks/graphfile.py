"""Graph files: GraphML and GEXF, read through networkx, ids and region values kept as given.

``network.kind = "graphml"`` or ``"gexf"`` with ``network.path`` reads the file with
``networkx.read_graphml`` / ``networkx.read_gexf`` and turns it into a
:class:`~womlab.networks.network.ReferralNetwork` by
:meth:`~womlab.networks.network.ReferralNetwork.from_networkx`: organisations in the
file's node order, node ids kept in ``labels``, the node attribute ``region`` (or the one
``network.region_attribute`` names; numbers or text) coded 0..R−1 with the values kept.
Directed files are read as undirected (a tie either way is one tie).
"""

from __future__ import annotations

import warnings
from functools import lru_cache
from pathlib import Path
from xml.etree.ElementTree import ParseError

import networkx as nx

from womlab.errors import NetworkError
from womlab.networks.network import ReferralNetwork

__all__ = ["read_graph_file", "graph_file_facts", "GRAPH_FORMATS"]

#: network kind -> (format name, networkx reader)
GRAPH_FORMATS = {"graphml": ("GraphML", nx.read_graphml), "gexf": ("GEXF", nx.read_gexf)}


def read_graph_file(path: str | Path, kind: str = "graphml", *, region: str = "region") -> ReferralNetwork:
    """Read a GraphML or GEXF file into a referral network.

    Parameters
    ----------
    path : str or Path
        The file.
    kind : {"graphml", "gexf"}
        Its format (and the ``kind`` recorded on the network).
    region : str
        The node attribute that holds each organisation's region; without it on any node,
        everyone is in region 0.

    Raises
    ------
    NetworkError
        One line naming ``network.path``, the file and what is allowed, when the file is
        missing or is not readable as that format; or naming the attribute when only some
        nodes carry it.

    Examples
    --------
    >>> import io, networkx as nx, tempfile, os
    >>> g = nx.Graph([("acme", "bolt"), ("bolt", "crane")])
    >>> nx.set_node_attributes(g, {"acme": "north", "bolt": "north", "crane": "south"}, "region")
    >>> path = os.path.join(tempfile.mkdtemp(), "firms.graphml")
    >>> nx.write_graphml(g, path)
    >>> net = read_graph_file(path, "graphml")
    >>> net.labels.tolist(), net.region_values().tolist()
    (['acme', 'bolt', 'crane'], ['north', 'north', 'south'])
    """
    if kind not in GRAPH_FORMATS:
        raise NetworkError(f"network.kind = {kind!r} is not a graph file format; allowed: {', '.join(GRAPH_FORMATS)}")
    name, reader = GRAPH_FORMATS[kind]
    try:
        graph = reader(str(path))
    except FileNotFoundError:
        raise NetworkError(f"network.path: {str(path)!r} does not exist; allowed: an existing {name} file") from None
    except (ParseError, nx.NetworkXError, OSError, ValueError, KeyError, TypeError, AttributeError) as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise NetworkError(
            f"network.path: cannot read {str(path)!r} as {name}: {reason}; allowed: a {name} file "
            f"(as networkx.read_{kind} reads it)"
        ) from None
    if graph.is_directed():
        graph = graph.to_undirected(as_view=False) if not graph.is_multigraph() else nx.MultiGraph(graph)
    return ReferralNetwork.from_networkx(graph, kind, region=region)


def graph_file_facts(kind: str, path: str) -> tuple[int, float, int]:
    """Organisations, mean degree (2·ties / organisations) and regions of a graph file, as read.

    Remembered per file path, size and modification time (a sweep's points read it once).
    """
    p = Path(path)
    return _facts(kind, str(p), p.stat().st_size, p.stat().st_mtime_ns)


@lru_cache(maxsize=32)
def _facts(kind: str, path: str, size: int, mtime: int) -> tuple[int, float, int]:
    with warnings.catch_warnings():  # dropped loops and duplicates are reported when the network is built
        warnings.simplefilter("ignore")
        network = read_graph_file(path, kind)
    return network.n, (2.0 * network.ties / network.n if network.n else 0.0), network.regions
