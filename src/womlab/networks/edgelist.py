"""Edge lists: a CSV of ties (``source,target``) and an optional node file (``id,region``).

Organisation ids are mapped to 0..N−1 and kept as labels. The reader is registered with
the scenario layer (:func:`womlab.scenario.registry.register_edgelist_reader`) so that a
scenario takes its market size, mean degree and number of regions from the files.

A file that is not what it should be gets one line naming the field and the file, and
never a line of its contents: a binary or UTF-16 file, invalid UTF-8, a file that is not
a CSV, missing columns (the columns found are named only when they read as column
names), no ties, only self-loops, or one id written two ways (``1`` and ``01``).
"""

from __future__ import annotations

import io
import warnings
from functools import lru_cache
from pathlib import Path

import numpy as np
import pandas as pd

from womlab.errors import NetworkError
from womlab.networks.network import ReferralNetwork
from womlab.networks.tables import from_edge_table
from womlab.scenario.checks import found_columns, utf8_text

__all__ = ["read_edgelist", "count_edgelist_organisations", "edgelist_facts", "read_node_traits", "NODE_TRAITS"]

#: Optional node-file columns that describe an organisation (besides ``id`` and ``region``):
#: its segment (text) and three numbers >= 0 — ``size`` (a weight for value), ``external`` and
#: ``word_of_mouth`` (its own multipliers of p and q).
NODE_TRAITS = ("segment", "size", "external", "word_of_mouth")


def _text(path: str | Path, what: str) -> str:
    """The file's text, or one line saying why it is not UTF-8 text (never its contents)."""
    name = Path(path).name
    try:
        raw = Path(path).read_bytes()
    except OSError as exc:
        raise NetworkError(f"network.{what}: cannot read {name!r}: {exc.strerror}") from None
    try:
        return utf8_text(raw, "CSV")
    except ValueError as exc:
        raise NetworkError(f"network.{what}: {name!r} {exc}") from None


def _read_table(path: str | Path, columns: tuple[str, ...], what: str) -> pd.DataFrame:
    name = Path(path).name
    expected = f"a CSV with columns {','.join(columns)}"
    text = _text(path, what)
    try:
        table = pd.read_csv(io.StringIO(text), dtype=str, skipinitialspace=True)
    except pd.errors.EmptyDataError:
        raise NetworkError(f"network.{what}: {name!r} is empty; expected {expected}") from None
    except (pd.errors.ParserError, ValueError):
        raise NetworkError(f"network.{what}: {name!r} is not {expected} (its rows do not parse as CSV)") from None
    table.columns = [str(c).strip() for c in table.columns]
    missing = [c for c in columns if c not in table.columns]
    if missing:
        raise NetworkError(
            f"network.{what}: {name!r} must be {expected}; missing {', '.join(missing)}"
            f"{found_columns(list(table.columns))}"
        )
    if table[list(columns)].isna().any().any():
        raise NetworkError(f"network.{what}: {name!r} has empty cells in {', '.join(columns)}")
    return table


def _one_spelling(ids: np.ndarray, what: str, path: str | Path) -> None:
    """Refuse ids that are the same whole number written two ways (``1`` and ``01``)."""
    unique = pd.unique(np.asarray([str(v).strip() for v in ids], dtype=object))
    try:
        numbers = np.array([int(v) for v in unique])
    except (ValueError, OverflowError):
        return
    order = np.argsort(numbers, kind="stable")
    same = np.flatnonzero(numbers[order][1:] == numbers[order][:-1])
    if same.size:
        a, b = sorted((str(unique[order[same[0]]]), str(unique[order[same[0] + 1]])))
        raise NetworkError(
            f"network.{what}: {Path(path).name!r} writes one id two ways ({a!r} and {b!r}); "
            "write each organisation's id one way"
        )


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
        One line naming the field and the file (never its contents): a file that is not
        UTF-8 CSV text, lacks a column, holds no ties or only self-loops, writes one id two
        ways, or a tie that names an id the node file lacks.
    """
    ties = _read_table(path, ("source", "target"), "path")
    name = Path(path).name
    src = ties["source"].str.strip().to_numpy()
    dst = ties["target"].str.strip().to_numpy()
    if src.size == 0:
        raise NetworkError(f"network.path: {name!r} holds no ties (a header and no rows)")
    if (src == dst).all():
        raise NetworkError(
            f"network.path: {name!r} holds only self-loops (ties of an organisation to itself); "
            "a referral network needs ties between two organisations"
        )
    _one_spelling(np.concatenate([src, dst]), "path", path)
    nodes = None
    if nodes_path is not None:
        nodes = _read_table(nodes_path, ("id", "region"), "nodes_path")
        _one_spelling(nodes["id"].to_numpy(), "nodes_path", nodes_path)
    where = (f"network.path {name!r}", f"network.nodes_path {Path(nodes_path).name!r}" if nodes_path else "")
    return from_edge_table(ties, nodes, kind="edgelist", where=where)


def count_edgelist_organisations(path: str | Path, nodes_path: str | Path | None = None) -> int:
    """Number of organisations an edge list (and node file) defines."""
    if nodes_path is not None:
        return len(_read_table(nodes_path, ("id", "region"), "nodes_path"))
    ties = _read_table(path, ("source", "target"), "path")
    return len(
        pd.unique(np.concatenate([ties["source"].str.strip().to_numpy(), ties["target"].str.strip().to_numpy()]))
    )


def edgelist_facts(path: str, nodes_path: str | None = None) -> tuple[int, float, int]:
    """Organisations, mean degree (2·ties / organisations) and regions of an edge list, as
    :func:`read_edgelist` reads it.

    Remembered per file path, size and modification time, so that a scenario changed many
    times (a sweep's points) reads its edge list once.
    """
    stamp = tuple(
        (p, Path(p).stat().st_size, Path(p).stat().st_mtime_ns) if p is not None else None for p in (path, nodes_path)
    )
    return _facts(*stamp)


@lru_cache(maxsize=32)
def _facts(edges: tuple, nodes: tuple | None) -> tuple[int, float, int]:
    with warnings.catch_warnings():  # dropped loops and duplicates are reported when the network is built
        warnings.simplefilter("ignore")
        network = read_edgelist(edges[0], None if nodes is None else nodes[0])
    return network.n, (2.0 * network.ties / network.n if network.n else 0.0), network.regions


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
            raise NetworkError(
                f"network.nodes_path {path!r}: column {column!r} has {int(empty.sum())} empty cell(s) "
                f"(row {rows}); allowed: a value in every row"
            )
        if column == "segment":
            out[column] = values.to_numpy()
            continue
        numbers = pd.to_numeric(values, errors="coerce")
        bad = numbers.isna() | ~np.isfinite(numbers) | (numbers < 0)
        if bad.any():
            at = int(np.flatnonzero(bad.to_numpy())[0])
            raise NetworkError(
                f"network.nodes_path {path!r}: column {column!r} row {at + 2} must be a finite number "
                f">= 0, got {values.iloc[at]!r}"
            )
        out[column] = numbers.to_numpy(dtype=float)
    return out
