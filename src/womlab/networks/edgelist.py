"""Edge lists: a CSV of ties (``source,target``) and an optional node file (``id,region``).

Organisation ids are mapped to 0..N−1 and kept as labels. The reader is registered with
the scenario layer (:func:`womlab.scenario.registry.register_edgelist_reader`) so that a
scenario takes its market size and mean degree from the file.
"""

from __future__ import annotations

import warnings
from functools import lru_cache
from pathlib import Path

import numpy as np
import pandas as pd

from womlab.errors import NetworkError
from womlab.networks.network import ReferralNetwork
from womlab.networks.tables import from_edge_table

__all__ = ["read_edgelist", "count_edgelist_organisations", "edgelist_facts", "read_node_traits", "NODE_TRAITS"]

#: Optional node-file columns that describe an organisation (besides ``id`` and ``region``):
#: its segment (text) and three numbers >= 0 — ``size`` (a weight for value), ``external`` and
#: ``word_of_mouth`` (its own multipliers of p and q).
NODE_TRAITS = ("segment", "size", "external", "word_of_mouth")


def _read_table(path: str | Path, columns: tuple[str, ...], what: str) -> pd.DataFrame:
    try:
        table = pd.read_csv(path, dtype=str, skipinitialspace=True)
    except (OSError, pd.errors.ParserError, pd.errors.EmptyDataError) as exc:
        raise NetworkError(f"network.{what}: cannot read {str(path)!r}: {exc}") from None
    table.columns = [c.strip() for c in table.columns]
    missing = [c for c in columns if c not in table.columns]
    if missing:
        raise NetworkError(
            f"network.{what}: {str(path)!r} must have columns {', '.join(columns)}; "
            f"missing {', '.join(missing)} (found {', '.join(table.columns)})"
        )
    if table[list(columns)].isna().any().any():
        raise NetworkError(f"network.{what}: {str(path)!r} has empty cells in {', '.join(columns)}")
    return table


def read_edgelist(path: str | Path, nodes_path: str | Path | None = None) -> ReferralNetwork:
    """Read a CSV edge list (``source,target``) and an optional node file (``id,region``).

    Organisation ids are mapped to 0..N−1 (node-file order when a node file is given,
    else ascending id); the original ids are kept in ``labels``. Self-loops and duplicate
    ties are dropped with a warning that counts them. Regions are coded 0..R−1 in
    ascending order of the region values, the values kept in ``region_names``; without a
    node file everyone is in region 0. The mapping is :func:`womlab.networks.tables.from_edge_table`'s.

    Raises
    ------
    NetworkError
        If a file cannot be read, lacks a column, or a tie names an id the node file lacks.
    """
    ties = _read_table(path, ("source", "target"), "path")
    nodes = _read_table(nodes_path, ("id", "region"), "nodes_path") if nodes_path is not None else None
    return from_edge_table(ties, nodes, kind="edgelist", where=(f"network.path {str(path)!r}", f"network.nodes_path {str(nodes_path)!r}"))


def count_edgelist_organisations(path: str | Path, nodes_path: str | Path | None = None) -> int:
    """Number of organisations an edge list (and node file) defines."""
    if nodes_path is not None:
        return len(_read_table(nodes_path, ("id", "region"), "nodes_path"))
    ties = _read_table(path, ("source", "target"), "path")
    return len(pd.unique(np.concatenate([ties["source"].str.strip().to_numpy(), ties["target"].str.strip().to_numpy()])))



def edgelist_facts(path: str, nodes_path: str | None = None) -> tuple[int, float]:
    """Organisations and mean degree (2·ties / organisations) of an edge list, as :func:`read_edgelist` reads it.

    Remembered per file path, size and modification time, so that a scenario changed many
    times (a sweep's points) reads its edge list once.
    """
    stamp = tuple((p, Path(p).stat().st_size, Path(p).stat().st_mtime_ns) if p is not None else None
                  for p in (path, nodes_path))
    return _facts(*stamp)


@lru_cache(maxsize=32)
def _facts(edges: tuple, nodes: tuple | None) -> tuple[int, float]:
    with warnings.catch_warnings():  # dropped loops and duplicates are reported when the network is built
        warnings.simplefilter("ignore")
        network = read_edgelist(edges[0], None if nodes is None else nodes[0])
    return network.n, (2.0 * network.ties / network.n if network.n else 0.0)


def read_node_traits(nodes_path: str | Path) -> pd.DataFrame:
    """The node file's optional columns ``segment``, ``size``, ``external``, ``word_of_mouth``, in node order.

    Only the columns present are returned (an empty table when none is); ``segment`` as text,
    the others as float. Remembered per file version.

    Raises
    ------
    NetworkError
        One line naming the file and the column: an empty cell (with its row; the header is
        row 1), or a number column holding something other than a finite number >= 0.
    """
    p = Path(nodes_path)
    return _traits(str(p), p.stat().st_size, p.stat().st_mtime_ns).copy()


@lru_cache(maxsize=32)
def _traits(path: str, size: int, mtime: int) -> pd.DataFrame:
    table = _read_table(path, ("id",), "nodes_path")
    out = pd.DataFrame(index=range(len(table)))
    for column in NODE_TRAITS:
        if column not in table.columns:
            continue
        values = table[column].str.strip()
        empty = values.isna() | (values == "")
        if empty.any():
            rows = ", ".join(str(int(r) + 2) for r in np.flatnonzero(empty.to_numpy())[:5])
            raise NetworkError(f"network.nodes_path {path!r}: column {column!r} has {int(empty.sum())} empty cell(s) "
                               f"(row {rows}); allowed: a value in every row")
        if column == "segment":
            out[column] = values.to_numpy()
            continue
        numbers = pd.to_numeric(values, errors="coerce")
        bad = numbers.isna() | ~np.isfinite(numbers) | (numbers < 0)
        if bad.any():
            at = int(np.flatnonzero(bad.to_numpy())[0])
            raise NetworkError(f"network.nodes_path {path!r}: column {column!r} row {at + 2} must be a finite number "
                               f">= 0, got {values.iloc[at]!r}")
        out[column] = numbers.to_numpy(dtype=float)
    return out
