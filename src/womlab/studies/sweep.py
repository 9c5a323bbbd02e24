"""Parameter sweeps: a design over scenario fields, run in parallel into a resumable store.

A sweep is the ``[sweep]`` section of a scenario (:class:`womlab.scenario.SweepSpec`):
axes — dotted scenario fields with their values — and a design that turns them into
points:

* ``grid``: every combination of the axes' values (the first axis varies slowest);
* ``latin``: ``samples`` points of a Latin hypercube (:class:`scipy.stats.qmc.LatinHypercube`);
* ``sobol``: Saltelli's scheme on a scrambled Sobol' sequence (``samples × (axes + 2)``
  points; :func:`womlab.studies.sensitivity.saltelli_design`), for Sobol indices;
* ``morris``: ``samples`` Morris trajectories (:func:`womlab.studies.sensitivity.morris_design`).

From the unit interval to an axis: a range axis maps u to ``from + u (to − from)``
(on log scale with ``log = true``); a whole-number field gets that value rounded; a
list axis of k values takes value ⌊u k⌋ — a discrete uniform choice, so sampling
designs and Sobol indices treat a categorical axis as a uniformly drawn category. The
design's own random stream is ``SeedSequence(seed, spawn_key=DESIGN_KEY)``.

An axis that follows another (``{ follows = "...", values = [...] }``) is no dimension of
the design: it takes, at each point, the value at the same position as the axis it follows.

What runs at a point is the sweep's study (``sweep.study``, :mod:`womlab.studies.sweep_studies`):
``run`` (one run), ``programme`` (the programme against its baseline, paired) or
``seeding`` (every strategy, paired), or one registered later. Every point is validated
(:meth:`Scenario.replace`, and the study's own check) before anything runs; invalid points
are reported with their axis values. Replicate r of point i runs through
:func:`womlab.studies.runner.run_paired` with spawn key ``(i, r)`` — ``SeedSequence(seed,
spawn_key=(i, r))`` split into network, seeding and dynamics streams — so results are
identical whatever the backend, the number of workers or the order of completion.

Execution groups runs into chunks (several runs per task), runs them on joblib workers
(loky processes on this machine, or a Dask cluster through joblib's Dask backend), and
reduces each replicate inside the worker to one row of the study's outcomes (and, for
the ``run`` study if asked, a compact per-period curve). The driver writes each finished
chunk to the results store (:mod:`womlab.store`) as it arrives; rerunning resumes.

Growing a sweep. Rerunning into a folder with more ``sweep.replicates`` runs only the new
replicates (new spawn keys); a ``grid`` whose axes gained values runs only the new points,
which are numbered after the folder's (a point's number, hence its spawn key, is the order
in which it joined the folder). Anything else that differs is refused, naming it.
"""

from __future__ import annotations

import gc
import hashlib
import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from womlab.errors import ClusterError, ScenarioError, StoreError
from womlab.networks import ReferralNetwork
from womlab.networks.given import as_network
from womlab.scenario import Axis, Scenario, field_type
from womlab.scenario.sweep_spec import FIXED_FIELDS, is_path_field
from womlab.store import STORE_FORMAT, ResultsStore, differences, file_sha256, runs_schema, versions
from womlab.studies.presenting import present
from womlab.studies.runner import run_chunks
from womlab.studies.sensitivity import morris_design, saltelli_design
from womlab.studies.sweep_studies import RUN_OUTCOMES, SweepStudy, sweep_study

__all__ = [
    "OUTCOMES",
    "DESIGN_KEY",
    "design_points",
    "point_scenarios",
    "unit_coordinates",
    "run_point",
    "run_sweep",
    "SweepSummary",
]

OUTCOMES = tuple(o.name for o in RUN_OUTCOMES)
"""Outcome columns of the ``run`` study's rows (besides point, replicate, status, error, wall_time)."""

DESIGN_KEY = (2**31 - 1, 0, 0)
"""Spawn key of the stream that draws latin/sobol/morris designs (never a run's key)."""


# ----------------------------------------------------------------------------- axes
def _is_int(axis: Axis) -> bool:
    return field_type(axis.name) is int


def _scale(axis: Axis, u: np.ndarray) -> np.ndarray:
    u = np.asarray(u, dtype=float)
    if axis.log:
        lo, hi = math.log(axis.start), math.log(axis.stop)
        return np.exp(lo + u * (hi - lo))
    return axis.start + u * (axis.stop - axis.start)


def _native(value: Any, integer: bool) -> Any:
    if integer:
        return int(np.floor(float(value) + 0.5))
    if isinstance(value, np.generic):
        return value.item()
    return value


def grid_values(axis: Axis) -> list[Any]:
    """The values a ``grid`` design takes on ``axis`` (ends included, rounded for whole-number fields)."""
    if axis.values is not None:
        return list(axis.values)
    integer = _is_int(axis)
    raw = _scale(axis, np.linspace(0.0, 1.0, axis.steps))
    values = [_native(v, integer) for v in raw]
    if integer and len(set(values)) < len(values):
        raise ScenarioError(
            f"sweep.axes.{axis.name!r}: {axis.steps} steps from {axis.start:g} to {axis.stop:g} repeat whole "
            f"numbers ({values}); {axis.name} is a whole number, so use fewer steps or a list of values"
        )
    return values


def from_unit(axis: Axis, u: np.ndarray) -> list[Any]:
    """Axis values at unit coordinates ``u`` in [0, 1] (see the module notes)."""
    u = np.asarray(u, dtype=float)
    if axis.values is not None:
        k = len(axis.values)
        idx = np.minimum(np.floor(u * k).astype(int), k - 1)
        return [axis.values[i] for i in idx]
    integer = _is_int(axis)
    return [_native(v, integer) for v in _scale(axis, u)]


def to_unit(axis: Axis, values: Sequence[float]) -> np.ndarray:
    """Unit coordinates of range-axis values (inverse of :func:`from_unit` before rounding)."""
    v = np.asarray(values, dtype=float)
    if axis.values is not None:
        raise ValueError(f"{axis.name} is a list axis; it has no scale")
    if axis.log:
        return (np.log(v) - math.log(axis.start)) / (math.log(axis.stop) - math.log(axis.start))
    return (v - axis.start) / (axis.stop - axis.start)


# ----------------------------------------------------------------------------- design
def _require_axes(scenario: Scenario) -> tuple[Axis, ...]:
    """The design's dimensions: every axis but those that follow another."""
    if not scenario.sweep.axes:
        raise ScenarioError("sweep.axes is empty; a sweep needs at least one [sweep.axes] entry")
    return scenario.sweep.leaders


def design_points(scenario: Scenario) -> pd.DataFrame:
    """The points of the scenario's sweep: one row per point.

    Columns: ``point`` (0, 1, …), one column per axis named by its dotted field (an axis
    that follows another takes the value at the same position), and for ``sobol`` a ``block`` column (``A``, ``B``, ``AB:<axis>``; rows in the order of
    :func:`womlab.studies.sensitivity.saltelli_design`), for ``morris`` a ``trajectory`` column.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"sweep": {"axes": {"adoption.word_of_mouth": {"from": 0.1, "to": 0.3, "steps": 3},
    ...                                            "network.kind": ["random", "ring"]}}})
    >>> design_points(s)["network.kind"].tolist()
    ['random', 'ring', 'random', 'ring', 'random', 'ring']
    """
    spec = scenario.sweep
    axes = _require_axes(scenario)
    names = [a.name for a in axes]
    rng = np.random.default_rng(np.random.SeedSequence(scenario.seed, spawn_key=DESIGN_KEY))
    extra: dict[str, list] = {}
    if spec.design == "grid":
        import itertools

        rows = list(itertools.product(*(grid_values(a) for a in axes)))
        columns = {n: [r[i] for r in rows] for i, n in enumerate(names)}
    else:
        k = len(axes)
        if spec.design == "latin":
            from scipy.stats import qmc

            unit = qmc.LatinHypercube(d=k, rng=rng).random(spec.samples)
        elif spec.design == "sobol":
            unit = saltelli_design(spec.samples, k, rng)
            n = spec.samples
            extra["block"] = ["A"] * n + ["B"] * n + [f"AB:{a}" for a in names for _ in range(n)]
        else:  # morris
            unit = morris_design(k, spec.samples, spec.levels, rng)
            extra["trajectory"] = np.repeat(np.arange(spec.samples), k + 1).tolist()
        columns = {a.name: from_unit(a, unit[:, i]) for i, a in enumerate(axes)}
    for follower in spec.axes:
        if follower.follows is not None:
            leader = spec.axis(follower.follows)
            position = {repr(v): k for k, v in enumerate(leader.values)}
            columns[follower.name] = [follower.values[position[repr(v)]] for v in columns[leader.name]]
    columns = {a.name: columns[a.name] for a in spec.axes}
    frame = pd.DataFrame({"point": np.arange(len(next(iter(columns.values()))), dtype=np.int64)})
    for name, values in columns.items():
        frame[name] = pd.Series(values, dtype=_column_dtype(values))
    for name, values in extra.items():
        frame[name] = values
    return frame


def _column_dtype(values: list[Any]) -> Any:
    if all(isinstance(v, bool) for v in values):
        return bool
    if all(isinstance(v, int) and not isinstance(v, bool) for v in values):
        return np.int64
    if all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in values):
        return np.float64
    return object


def _point_changes(points: pd.DataFrame, axes: Sequence[Axis], i: int) -> dict[str, Any]:
    row = points.iloc[i]
    return {a.name: _native(row[a.name], False) for a in axes}


def point_scenarios(scenario: Scenario, points: pd.DataFrame | None = None) -> list[Scenario]:
    """The validated scenario at every point (``scenario.replace`` with its axis values),
    each also checked by the sweep's study (a ``programme`` point needs a programme).

    Raises
    ------
    ScenarioError
        Listing the invalid points (up to five) with their axis values and the reason.
    """
    _require_axes(scenario)
    axes = scenario.sweep.axes
    study = sweep_study(scenario.sweep.study)
    points = design_points(scenario) if points is None else points
    out, errors = [], []
    for i in range(len(points)):
        changes = _point_changes(points, axes, i)
        try:
            at = scenario.replace(changes)
            if study.check is not None:
                study.check(at)
            out.append(at)
        except ScenarioError as exc:
            where = ", ".join(f"{k} = {v!r}" for k, v in changes.items())
            errors.append(f"point {int(points['point'].iloc[i])} ({where}): {exc}")
    if errors:
        shown = "; ".join(errors[:5]) + (f"; ... and {len(errors) - 5} more" if len(errors) > 5 else "")
        raise ScenarioError(f"{len(errors)} of {len(points)} sweep points are invalid: {shown}")
    return out


def unit_coordinates(scenario: Scenario, points: pd.DataFrame) -> np.ndarray:
    """Unit coordinates of the points' (rounded) range-axis values, shape (points, axes)."""
    axes = _require_axes(scenario)
    return np.column_stack([to_unit(a, points[a.name].to_numpy(dtype=float)) for a in axes])


# ----------------------------------------------------------------------------- one replicate
def run_point(
    scenario: Scenario,
    point: int,
    replicate: int,
    *,
    curves: bool = False,
    network: ReferralNetwork | None = None,
    study: SweepStudy | None = None,
) -> tuple[dict[str, Any], dict[str, np.ndarray] | None]:
    """Run replicate ``replicate`` of sweep point ``point`` and reduce it to a row of the study's outcomes.

    The study is ``study`` or the scenario's ``sweep.study``; it runs through
    :func:`womlab.studies.runner.run_paired` on spawn key ``(point, replicate)`` (for the
    ``run`` study that is exactly ``studies.run_one(scenario, key=(point, replicate))``). An
    exception inside the run becomes a row with ``status = "failed"`` and its message;
    outcomes are then missing.

    Returns
    -------
    row : dict
        point, replicate, status, error, the study's outcomes, wall_time (seconds).
    curve : dict of arrays or None
        period, customers, new_customers, satisfied_customers (when ``curves``).
    """
    study = sweep_study(scenario.sweep.study) if study is None else study
    start = time.perf_counter()
    row: dict[str, Any] = {"point": point, "replicate": replicate}
    try:
        outcomes, curve = study.run(scenario, (point, replicate), network, curves)
        row.update(status="ok", error="", **outcomes)
    except Exception as exc:  # noqa: BLE001 - a failing run is recorded, and the sweep goes on
        row.update(
            status="failed",
            error=f"{type(exc).__name__}: {exc}"[:2000],
            **{o.name: None for o in study.outcomes(scenario)},
        )
        curve = None
    row["wall_time"] = time.perf_counter() - start
    return row, curve


def _run_chunk(
    name: str, tasks: list[tuple[int, int, Scenario]], curves: bool, columns: list, network: ReferralNetwork | None
):  # noqa: ANN202 - (runs, curves) pyarrow tables
    """Worker side: run a chunk of (point, replicate, scenario) of study ``name`` and return its tables."""
    import pyarrow as pa

    from womlab.store import CURVES_SCHEMA

    study = sweep_study(name)
    rows, curve_parts = [], []
    for point, replicate, scenario in tasks:
        row, curve = run_point(scenario, point, replicate, curves=curves, network=network, study=study)
        rows.append(row)
        if curve is not None:
            n = curve["period"].size
            curve_parts.append(
                {"point": np.full(n, point, np.int32), "replicate": np.full(n, replicate, np.int32), **curve}
            )
    runs = pa.Table.from_pylist(rows, schema=runs_schema(columns))
    curve_table = None
    if curves:
        cols = {
            name: (np.concatenate([c[name] for c in curve_parts]) if curve_parts else np.zeros(0, np.int32))
            for name in CURVES_SCHEMA.names
        }
        curve_table = pa.table(cols, schema=CURVES_SCHEMA)
    return runs, curve_table


# ----------------------------------------------------------------------------- a sweep
@dataclass
class SweepSummary:
    """What one call of :func:`run_sweep` did.

    Attributes
    ----------
    out : Path
        The results folder.
    points, runs : int
        Points of the sweep and runs in the whole sweep (points × replicates).
    skipped : int
        Runs already finished in the folder (a resume), not run again.
    ran : int
        Runs executed by this call.
    failures : int
        Runs of the whole sweep whose status is ``failed``.
    wall_time : float
        Seconds this call took.
    backend : str
        Where the runs ran.
    study : str
        The study run at every point.
    added_points, added_replicates : int
        How much this call grew the folder's sweep (0 for a new or unchanged one).
    notices : list of str
        One line per damaged file set aside (its runs were run again).
    report : Path or None
        The report page, if written.
    """

    out: Path
    points: int
    runs: int
    skipped: int
    ran: int
    failures: int
    wall_time: float
    backend: str
    study: str = "run"
    added_points: int = 0
    added_replicates: int = 0
    notices: list[str] = field(default_factory=list)
    report: Path | None = None
    failed: pd.DataFrame = field(default_factory=pd.DataFrame, repr=False)


def _parse_cluster(cluster: str) -> int:
    kind, _, n = cluster.partition(":")
    if kind != "local" or not n.isdigit() or int(n) < 1:
        raise ScenarioError(f"--cluster must be local:N with N >= 1 workers (e.g. local:4), got {cluster!r}")
    return int(n)


def _chunk_size(pending: int, workers: int, chunk_size: int | None) -> int:
    return max(1, min(64, math.ceil(pending / (workers * 8)))) if chunk_size is None else chunk_size


def _chunks(pending: list[tuple[int, int]], workers: int, chunk_size: int | None) -> list[list[tuple[int, int]]]:
    chunk_size = _chunk_size(len(pending), workers, chunk_size)
    return [pending[i : i + chunk_size] for i in range(0, len(pending), chunk_size)]


# ----------------------------------------------------------------------------- identity, inputs, growing
def _network_identity(network: ReferralNetwork | None) -> dict[str, Any] | None:
    if network is None:
        return None
    h = hashlib.sha256()
    for array in (network.indptr, network.indices, network.region):
        h.update(np.ascontiguousarray(array).tobytes())
    return {
        "given": True,
        "organisations": network.n,
        "ties": network.ties,
        "complete": network.complete,
        "sha256": h.hexdigest(),
    }


def _identity(scenario: Scenario, curves: bool, network: ReferralNetwork | None) -> dict[str, Any]:
    """What must match for a folder to be resumed or grown: everything but the fields that change no
    result (``sweep_spec.FIXED_FIELDS``: run.jobs, the scenario's name, ...), the replicates and (grid)
    the axes' values, which may grow."""
    base = scenario.to_dict()
    base.pop("sweep", None)
    for dotted in FIXED_FIELDS:  # fields that change no result of a sweep
        section, _, name = dotted.rpartition(".")
        (base.get(section, {}) if section else base).pop(name, None)
    spec = scenario.sweep
    sweep: dict[str, Any] = {
        "design": spec.design,
        "study": spec.study,
        "axes": {a.name: ({"follows": a.follows} if a.follows else "") for a in spec.axes},
    }
    if spec.design != "grid":
        sweep.update(samples=spec.samples, axes={a.name: a.to_table() for a in spec.axes})
    if spec.design == "morris":
        sweep["levels"] = spec.levels
    return {
        "scenario": base,
        "sweep": sweep,
        "curves": bool(curves),
        "format": STORE_FORMAT,
        "network": _network_identity(network),
    }


def _input_files(scenarios: Sequence[Scenario]) -> dict[str, str]:
    """Every file a scenario field names (edge list, node file, any ``*_path``) → its SHA-256."""
    paths: set[str] = set()

    def walk(node: Any, prefix: str) -> None:
        if isinstance(node, dict):
            for key, value in node.items():
                walk(value, f"{prefix}{key}.")
        elif isinstance(node, str) and is_path_field(prefix[:-1]):
            paths.add(node)

    for s in scenarios:
        data = s.to_dict()
        data.pop("sweep", None)
        walk(data, "")
    return {p: file_sha256(p) for p in sorted(paths) if Path(p).is_file()}


def _key(row: pd.Series, names: list[str]) -> tuple:
    out = []
    for name in names:
        v = row[name]
        if isinstance(v, (float, np.floating)):
            v = float(f"{float(v):.12g}")  # a grid value recomputed from a changed range may differ in the last bit
        elif isinstance(v, np.generic):
            v = v.item()
        out.append(v)
    return tuple(out)


def _grow_points(stored: pd.DataFrame, design: pd.DataFrame, spec: Any, where: str) -> pd.DataFrame:
    """The folder's points followed by the design's new ones (grid), or the folder's (others, which must not differ)."""
    names = [a.name for a in spec.axes]
    if spec.design != "grid":
        same = len(stored) == len(design) and all(
            _key(a, names) == _key(b, names) for (_, a), (_, b) in zip(stored.iterrows(), design.iterrows())
        )
        if not same:
            raise StoreError(f"results folder {where!r}: points.parquet differs from this sweep's points")
        return stored
    have = {_key(r, names) for _, r in stored.iterrows()}
    wanted = {_key(r, names) for _, r in design.iterrows()}
    gone = [r for _, r in stored.iterrows() if _key(r, names) not in wanted]
    if gone:
        shown = ", ".join(f"{n} = {_native(gone[0][n], False)!r}" for n in names)
        raise StoreError(
            f"results folder {where!r}: {len(gone)} of its points are not in this sweep's grid (e.g. point "
            f"{int(gone[0]['point'])}: {shown}); a grid can gain values, not lose them. Use a new --out folder."
        )
    new = design[[(_key(r, names) not in have) for _, r in design.iterrows()]].copy()
    new["point"] = np.arange(len(stored), len(stored) + len(new), dtype=np.int64)
    if new.empty:
        return stored
    return pd.concat([stored, new[stored.columns]], ignore_index=True)


def _rebuild_points(scenario: Scenario, history: list[dict[str, Any]]) -> pd.DataFrame:
    """The folder's points replayed from the specs it grew through (for a lost points.parquet)."""
    base = scenario.to_dict()
    points = None
    for table in history:
        s = Scenario.from_dict({**base, "sweep": table})
        design = design_points(s)
        points = design if points is None else _grow_points(points, design, s.sweep, "")
    return points


def _open(
    store: ResultsStore, scenario: Scenario, design: pd.DataFrame, manifest: dict[str, Any]
) -> tuple[pd.DataFrame, int, int]:
    """Create the folder, or reopen (and grow) it. Returns the points, points added, replicates added."""
    spec = scenario.sweep
    where = str(store.path)
    if not store.exists():
        store.create({**manifest, "history": [spec.to_table()]}, design)
        return design, 0, 0
    old = store.manifest()
    if old.get("format") != STORE_FORMAT:
        raise StoreError(
            f"results folder {where!r} was written in store format {old.get('format')}, this womlab writes "
            f"format {STORE_FORMAT}; read it with `womlab report`, and run this sweep into a new --out folder"
        )
    diff = differences(old.get("identity", {}), manifest["identity"])
    if diff:
        raise StoreError(
            f"results folder {where!r} was made by a different sweep; refusing to mix results. "
            f"Differences: {'; '.join(diff)}. Use a new --out folder, or the scenario that made it."
        )
    for path, digest in old.get("inputs", {}).items():
        now = manifest["inputs"].get(path)
        if now is not None and now != digest:
            raise StoreError(
                f"input file {path!r} has changed since this sweep started (SHA-256 {digest[:12]}… there, "
                f"{now[:12]}… now); restore it, or run the sweep into a new --out folder"
            )
    if spec.replicates < old["replicates"]:
        raise StoreError(
            f"results folder {where!r} holds {old['replicates']} replicates per point, this sweep asks "
            f"for {spec.replicates}; a sweep can be extended with more replicates, not cut"
        )
    store.tidy()
    stored = store.read_points()
    history = old.get("history", [old.get("sweep")])
    if stored is None:
        stored = _rebuild_points(scenario, history)
        store.write_points(stored)
    points = _grow_points(stored, design, spec, where)
    added_points, added_replicates = len(points) - len(stored), spec.replicates - old["replicates"]
    if added_points or added_replicates:
        store.write_points(points)
        store.write_manifest(
            {
                **old,
                "sweep": spec.to_table(),
                "scenario": manifest["scenario"],
                "points": len(points),
                "replicates": spec.replicates,
                "runs": len(points) * spec.replicates,
                "inputs": {**old.get("inputs", {}), **manifest["inputs"]},
                "history": [*history, spec.to_table()],
            }
        )
    elif manifest["inputs"].keys() - old.get("inputs", {}).keys():
        store.write_manifest({**old, "inputs": {**old.get("inputs", {}), **manifest["inputs"]}})
    return points, added_points, added_replicates


# ----------------------------------------------------------------------------- where runs run
_NO_HTTP = {"distributed.scheduler.http.routes": [], "distributed.worker.http.routes": []}


def _connect(
    scheduler: str | None, cluster: str | None, processes: bool, security: Any, timeout: float
) -> tuple[Any, Any, str, int]:
    """(client, local cluster, backend label, workers) for a Dask run; raises ClusterError in one line."""
    try:
        import dask
        from dask.distributed import Client, LocalCluster
    except ImportError:  # pragma: no cover - depends on the installation
        raise ClusterError("--scheduler/--cluster need dask: pip install 'womlab[cluster]'") from None
    if cluster is not None:
        n = _parse_cluster(cluster)
        try:
            from distributed.security import Security

            credentials = Security.temporary()  # a new CA and certificate, in memory: only this process holds them
        except ImportError:  # pragma: no cover - depends on the installation
            raise ClusterError(
                "--cluster needs the cryptography package for its TLS credentials: pip install 'womlab[cluster]'"
            ) from None
        local = None
        try:
            with dask.config.set(_NO_HTTP):  # no dashboard, no info pages: the HTTP servers serve nothing
                local = LocalCluster(
                    n_workers=n,
                    threads_per_worker=1,
                    processes=processes,
                    dashboard_address=None,
                    security=credentials,
                    host="127.0.0.1",
                )
                client = Client(local, security=credentials, timeout=timeout)
        except Exception as exc:  # noqa: BLE001 - one line, never a traceback
            if local is not None:
                local.close()
            raise ClusterError(f"cannot start a local Dask cluster ({cluster}): {exc}") from None
        return client, local, f"dask LocalCluster ({cluster}, {'processes' if processes else 'threads'}, TLS)", n
    # A client that failed to start is closed when it is garbage-collected; if that happens while
    # another client starts its event-loop thread, the two wait on each other (seen in the suite).
    # Collect such leftovers here, at a safe point, and again right after a failure.
    gc.collect()
    reason = None
    try:
        client = Client(scheduler, timeout=timeout, security=security)
    except Exception as exc:  # noqa: BLE001 - malformed, unreachable or refusing: one line
        reason = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
    if reason is not None:
        gc.collect()  # outside the handler, so the failed client is no longer held by the traceback
        raise ClusterError(f"cannot reach the scheduler at {scheduler} within {timeout:g} s: {reason[:200]}")
    return client, None, f"dask scheduler {scheduler}", max(1, sum(client.nthreads().values()))


def _results(
    study: str,
    tasks: list,
    curves: bool,
    columns: list,
    network: ReferralNetwork | None,
    workers: int,
    client: Any,
    chosen: dict[str, str],
) -> Any:
    """Chunk results, in any order: on the Dask client's cluster, or in-process / on the reusable
    loky pool as :func:`womlab.studies.runner.run_chunks` chooses (it records its choice in ``chosen``)."""
    if client is not None:
        from joblib import Parallel, delayed, parallel_config

        with parallel_config(backend="dask"):
            yield from Parallel(n_jobs=-1, return_as="generator_unordered")(
                delayed(_run_chunk)(study, chunk, curves, columns, network) for chunk in tasks
            )
        return
    items = [task for chunk in tasks for task in chunk]
    size = len(tasks[0]) if tasks else None
    run = partial(_run_chunk, study, curves=curves, columns=columns, network=network)
    yield from (result for _, result in run_chunks(run, items, workers, chunk_size=size, chosen=chosen))


def run_sweep(
    scenario: Scenario,
    out: str | Path,
    jobs: int | None = None,
    *,
    network: Any = None,
    scheduler: str | None = None,
    cluster: str | None = None,
    cluster_processes: bool = True,
    security: Any = None,
    connect_timeout: float = 10.0,
    curves: bool = False,
    chunk_size: int | None = None,
    progress: bool = True,
    report: bool = True,
    wait: float = 0.0,
    notify: Callable[[str], None] | None = None,
) -> SweepSummary:
    """Run the scenario's sweep into the results folder ``out``, resuming (or growing) what is there.

    Parameters
    ----------
    scenario : Scenario
        With a ``[sweep]`` section that has at least one axis; ``sweep.study`` says what
        runs at every point (``run``, ``programme``, ``seeding``, or a registered study).
    out : str or Path
        Results folder (:mod:`womlab.store`). If it holds a sweep of the same spec, finished
        runs are skipped; more replicates, or a grid with more values, run only what is new;
        any other difference is refused.
    jobs : int, optional
        Worker processes on this machine (joblib, loky); default ``scenario.run.jobs``.
    network : ReferralNetwork, networkx graph or pandas table, optional
        Run every point on this network (a table has columns ``source``, ``target``)
        instead of building one per replicate; its size must be ``market.organisations``,
        and no ``network.*`` axis may vary.
    scheduler : str, optional
        Address of a running Dask scheduler (``tcp://host:port`` or ``tls://host:port``);
        runs go to its workers through joblib's Dask backend. Workers need womlab
        installed and, for edge-list networks, the files at the same paths.
    cluster : str, optional
        ``local:N`` starts a ``distributed.LocalCluster`` of N single-threaded workers on
        this machine, on 127.0.0.1 with TLS and temporary credentials that only this
        process holds, and no dashboard.
    cluster_processes : bool
        Whether the LocalCluster's workers are processes (default) or threads.
    security : distributed.Security, optional
        Credentials for ``scheduler``; by default Dask's own configuration
        (``distributed.comm.tls.*``), so a scheduler that needs TLS works as it does for
        any Dask client.
    connect_timeout : float
        Seconds to wait for ``scheduler`` before giving up (one line, nothing created).
    curves : bool
        Also keep each run's per-period curve (``curves.parquet``; the ``run`` study).
    chunk_size : int, optional
        Runs per task; by default about an eighth of each worker's share, at most 64.
    progress : bool
        Progress bar (runs done, rate, time left) on standard error.
    report : bool
        Write ``report.html`` (:func:`womlab.results.write_report`) at the end.
    wait : float
        Seconds to wait for another process writing ``out`` to finish; 0 refuses at once.
    notify : callable, optional
        Called with each one-line notice (a damaged file set aside and its runs redone).

    Returns
    -------
    SweepSummary

    Raises
    ------
    ScenarioError
        No axes, invalid points, a study that cannot run at a point, or a given network
        that does not fit (before anything runs).
    ClusterError
        The scheduler cannot be reached, or the local cluster not started (before any
        folder is created).
    StoreError
        ``out`` is unusable, is being written by another process, was made by a different
        spec, or an input file changed since it was started.

    Examples
    --------
    >>> from womlab import Scenario, run_sweep
    >>> s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 2},
    ...                         "run": {"periods": 10},
    ...                         "sweep": {"replicates": 2, "axes": {"adoption.word_of_mouth": [0.2, 0.4]}}})
    >>> run_sweep(s, "out/doc-sweep", progress=False, report=False).runs   # doctest: +SKIP
    4
    """
    from joblib import effective_n_jobs

    start = time.perf_counter()
    if scheduler is not None and cluster is not None:
        raise ScenarioError("give --scheduler or --cluster, not both")
    spec = scenario.sweep
    study = sweep_study(spec.study)
    if curves and not study.curves:
        raise ScenarioError(f'curves are kept for sweep.study = "run" only, got sweep.study = "{spec.study}"')
    given = None
    if network is not None:
        given = as_network(network, scenario.market.organisations)
        for axis in spec.axes:
            if axis.name.startswith("network.") or axis.name == "market.organisations":
                raise ScenarioError(
                    f"sweep.axes.{axis.name!r}: the network is given (network=), so {axis.name} cannot vary"
                )
    if cluster is not None:
        _parse_cluster(cluster)
    design = design_points(scenario)
    design_scenarios = point_scenarios(scenario, design)  # every point validated before anything runs
    columns = [[o.name, o.kind] for o in study.outcomes(scenario)]
    library_versions = versions()
    manifest = {
        "format": STORE_FORMAT,
        "kind": "sweep",
        "study": spec.study,
        "scenario": scenario.to_dict(),
        "sweep": spec.to_table(),
        "root_seed": scenario.seed,
        "spawn_keys": "SeedSequence(root_seed, spawn_key=(point, replicate)), split into network, seeding, dynamics",
        "design_key": list(DESIGN_KEY),
        "points": len(design),
        "replicates": spec.replicates,
        "runs": len(design) * spec.replicates,
        "columns": columns,
        "outcomes": [c[0] for c in columns],
        "inputs": _input_files(design_scenarios),
        "versions": library_versions,
        "identity": _identity(scenario, curves, given),
    }

    store = ResultsStore(out, notify=notify)
    store.check_usable()  # a file, or a folder of other files: refused before anything starts
    client = local = None
    if scheduler is not None or cluster is not None:  # reached (or refused) before any folder is created
        client, local, backend, workers = _connect(scheduler, cluster, cluster_processes, security, connect_timeout)
    else:
        workers = effective_n_jobs(scenario.run.jobs if jobs is None else jobs)
        backend = "in-process" if workers <= 1 else f"up to {workers} loky workers, in-process below the crossover"
    try:
        with store.locked(wait):
            points, added_points, added_replicates = _open(store, scenario, design, manifest)
            scenarios = design_scenarios if points is design else point_scenarios(scenario, points)
            numbers = points["point"].astype(int).tolist()
            keys = [(i, r) for i in numbers for r in range(spec.replicates)]
            finished = store.finished()
            pending = [k for k in keys if k not in finished]
            skipped = len(keys) - len(pending)
            session = store.begin_session(
                {
                    "backend": backend,
                    "pending": len(pending),
                    "womlab": library_versions["womlab"],
                    "added_points": added_points,
                    "added_replicates": added_replicates,
                }
            )
            at = dict(zip(numbers, scenarios))
            tasks = [[(i, r, at[i]) for i, r in chunk] for chunk in _chunks(pending, workers, chunk_size)]
            bar = None
            if progress:  # a bar on a terminal, a few plain lines when piped
                from womlab.scenario.progress import bar as progress_bar

                bar = progress_bar(
                    len(keys), f"sweep ({spec.study})", unit="run", initial=skipped, show=True, leave=True
                )
            try:
                chosen = {"backend": backend}
                ran, failed_now = _collect(
                    _results(spec.study, tasks, curves, columns, given, workers, client, chosen), store, session, bar
                )
                backend = chosen["backend"]
            finally:
                if bar is not None:
                    bar.close()
            store.consolidate()
            runs = store.runs()
            failed = runs[runs["status"] != "ok"]
            store.end_session(
                session,
                {
                    "ran": ran,
                    "failed": failed_now,
                    "backend": backend,
                    "wall_time_s": round(time.perf_counter() - start, 3),
                },
            )
            summary = SweepSummary(
                out=store.path,
                points=len(points),
                runs=len(keys),
                skipped=skipped,
                ran=ran,
                failures=len(failed),
                wall_time=time.perf_counter() - start,
                backend=backend,
                study=spec.study,
                added_points=added_points,
                added_replicates=added_replicates,
                notices=list(store.notices),
                failed=failed.reset_index(drop=True),
            )
            if report:
                summary.report = present(summary, "report")
    finally:
        if client is not None:
            client.close()
        if local is not None:
            local.close()
    summary.wall_time = time.perf_counter() - start
    return summary


def _collect(results, store, session: str, bar) -> tuple[int, int]:  # noqa: ANN001
    ran = failed = 0
    for number, (runs, curves) in enumerate(results):
        store.write_part(session, number, runs, curves)
        n = runs.num_rows
        bad = sum(1 for s in runs.column("status").to_pylist() if s != "ok")
        ran, failed = ran + n, failed + bad
        if bar is not None:
            bar.update(n)
            if failed:
                bar.set_postfix(failed=failed)
    return ran, failed
