"""A referral network from pandas tables: ties (``source``, ``target``) and optional nodes (``id``, ``region``).

The one mapping from ids as given to organisations 0..N−1, used by the CSV edge-list
reader (:func:`womlab.networks.edgelist.read_edgelist`) and by anyone holding the tables
in Python already (:func:`from_edge_table`).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from womlab.errors import NetworkError
from womlab.networks.network import ReferralNetwork, _id_array, _undirected, from_edges, ordered_ids, region_codes

__all__ = ["from_edge_table"]


def _column(frame: pd.DataFrame, name: str, where: str) -> np.ndarray:
    if name not in frame.columns:
        raise NetworkError(
            f"{where} must have a column {name!r}; found {', '.join(map(str, frame.columns)) or 'no columns'}"
        )
    values = frame[name]
    if values.isna().any():
        raise NetworkError(
            f"{where} has {int(values.isna().sum())} empty cell(s) in column {name!r}; allowed: an id in every row"
        )
    values = values.to_numpy()
    if values.dtype == object:
        values = np.array([v.strip() if isinstance(v, str) else v for v in values], dtype=object)
    return values


def from_edge_table(
    ties: pd.DataFrame,
    nodes: pd.DataFrame | None = None,
    *,
    source: str = "source",
    target: str = "target",
    id: str = "id",  # noqa: A002 - the column's name
    region: str = "region",
    kind: str = "edge_table",
    where: tuple[str, str] = ("edge table", "node table"),
) -> ReferralNetwork:
    """A referral network from a table of ties and, optionally, a table of organisations.

    Ids are kept as given in ``labels`` (text stays text; whole numbers stay numbers).
    With a node table the organisations are its rows, in its order, and every tie must
    name ids it lists; without one they are every id the ties name, in ascending order
    (numeric when all are whole numbers). The node table's ``region`` column (numbers or
    text; optional) is coded 0..R−1 in ascending order of its values, the values kept
    in ``region_names``. Self-loops and duplicate ties (either direction) are dropped with
    a warning that counts them.

    Parameters
    ----------
    ties : pandas.DataFrame
        One row per tie, columns ``source`` and ``target`` (names configurable).
    nodes : pandas.DataFrame, optional
        One row per organisation, column ``id`` and optionally ``region``.
    kind : str
        The network kind recorded on the result.
    where : (str, str)
        How errors name the two tables (the CSV reader passes its scenario fields).

    Raises
    ------
    NetworkError
        A missing column, an empty cell, an id listed twice in the node table, or a tie
        naming an id the node table lacks; the message names the table, the value and
        what is allowed.

    Examples
    --------
    >>> import pandas as pd
    >>> ties = pd.DataFrame({"source": ["acme", "bolt"], "target": ["bolt", "crane"]})
    >>> nodes = pd.DataFrame({"id": ["crane", "bolt", "acme"], "region": ["south", "north", "north"]})
    >>> net = from_edge_table(ties, nodes)
    >>> net.labels.tolist(), net.region_values().tolist(), net.degree().tolist()
    (['crane', 'bolt', 'acme'], ['south', 'north', 'north'], [1, 2, 1])
    """
    src = _column(ties, source, where[0])
    dst = _column(ties, target, where[0])
    if nodes is not None:
        ids = _column(nodes, id, where[1])
        if len(pd.unique(ids)) != len(ids):
            repeated = pd.Series(ids)[pd.Series(ids).duplicated()].iloc[0]
            raise NetworkError(f"{where[1]} lists some id more than once (e.g. {repeated!r}); allowed: each id once")
        region_values = _column(nodes, region, where[1]) if region in nodes.columns else None
    else:
        ids = ordered_ids(np.concatenate([src, dst]))
        region_values = None
    # ids are matched as text, so that 7 and "7" in two tables name the same organisation
    position = pd.Index([str(v) for v in ids])
    s = position.get_indexer([str(v) for v in src])
    t = position.get_indexer([str(v) for v in dst])
    if (s < 0).any() or (t < 0).any():
        bad = pd.unique(np.concatenate([src[s < 0], dst[t < 0]]))[:5]
        raise NetworkError(
            f"{where[0]}: ties name ids missing from {where[1]}, e.g. {', '.join(map(str, bad))}; "
            f"allowed: ids listed in its {id!r} column"
        )
    n = len(ids)
    a, b = _undirected(n, s.astype(np.int64), t.astype(np.int64), where[0])
    if region_values is None:
        codes, names = np.zeros(n, dtype=np.int32), None
    else:
        codes, names = region_codes(region_values)
    return from_edges(n, a, b, codes, kind, labels=_id_array(list(ids)), region_names=names)
