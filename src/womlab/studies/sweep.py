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

Every point is validated (:meth:`Scenario.replace`) before anything runs; invalid points
are reported with their axis values. Replicate r of point i runs as
``studies.run_one(scenario_at_point_i, key=(i, r))`` — ``SeedSequence(seed,
spawn_key=(i, r))`` split into network, seeding and dynamics streams — so results are
identical whatever the backend, the number of workers or the order of completion.

Execution groups runs into chunks (several runs per task), runs them on joblib workers
(loky processes on this machine, or a Dask cluster through joblib's Dask backend), and
reduces each run inside the worker to one outcome row (and, if asked, a compact
per-period curve). The driver writes each finished chunk to the results store
(:mod:`womlab.store`) as it arrives; rerunning resumes.
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from womlab.errors import ScenarioError, StoreError
from womlab.scenario import Axis, Scenario, field_type
from womlab.store import ResultsStore, versions
from womlab.studies.metrics import curve_metrics
from womlab.studies.presenting import present
from womlab.studies.runner import run_one
from womlab.studies.sensitivity import morris_design, saltelli_design

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

OUTCOMES = ("customers", "satisfied_customers", "final_share", "t10", "t50", "t90", "peak_period", "peak_new_share")
"""Outcome columns of a run row (besides point, replicate, status, error, wall_time)."""

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
    axes = scenario.sweep.axes
    if not axes:
        raise ScenarioError("sweep.axes is empty; a sweep needs at least one [sweep.axes] entry")
    return axes


def design_points(scenario: Scenario) -> pd.DataFrame:
    """The points of the scenario's sweep: one row per point.

    Columns: ``point`` (0, 1, …), one column per axis named by its dotted field, and
    for ``sobol`` a ``block`` column (``A``, ``B``, ``AB:<axis>``; rows in the order of
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
    """The validated scenario at every point (``scenario.replace`` with its axis values).

    Raises
    ------
    ScenarioError
        Listing the invalid points (up to five) with their axis values and the reason.
    """
    axes = _require_axes(scenario)
    points = design_points(scenario) if points is None else points
    out, errors = [], []
    for i in range(len(points)):
        changes = _point_changes(points, axes, i)
        try:
            out.append(scenario.replace(changes))
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


# ----------------------------------------------------------------------------- one run
def run_point(scenario: Scenario, point: int, replicate: int, *, curves: bool = False
              ) -> tuple[dict[str, Any], dict[str, np.ndarray] | None]:
    """Run replicate ``replicate`` of sweep point ``point`` and reduce it to an outcome row.

    The run is ``studies.run_one(scenario, key=(point, replicate))``. An exception inside
    the run becomes a row with ``status = "failed"`` and its message; outcomes are then
    missing.

    Returns
    -------
    row : dict
        point, replicate, status, error, the :data:`OUTCOMES`, wall_time (seconds).
    curve : dict of arrays or None
        period, customers, new_customers, satisfied_customers (when ``curves``).
    """
    start = time.perf_counter()
    row: dict[str, Any] = {"point": point, "replicate": replicate}
    try:
        result = run_one(scenario, key=(point, replicate))
        m = curve_metrics(result.share)
        customers, new, satisfied = result.customers, result.new_customers, result.satisfied_customers
        row.update(status="ok", error="", customers=int(customers[-1]), satisfied_customers=int(satisfied[-1]),
                   final_share=m["final_share"], t10=m["t10"], t50=m["t50"], t90=m["t90"],
                   peak_period=int(m["peak_period"]), peak_new_share=m["peak_new_share"])
        curve = None
        if curves:
            curve = {"period": np.arange(customers.size, dtype=np.int32), "customers": customers.astype(np.int32),
                     "new_customers": new.astype(np.int32), "satisfied_customers": satisfied.astype(np.int32)}
    except Exception as exc:  # noqa: BLE001 - a failing run is recorded, and the sweep goes on
        row.update(status="failed", error=f"{type(exc).__name__}: {exc}"[:2000],
                   **{k: None for k in OUTCOMES})
        curve = None
    row["wall_time"] = time.perf_counter() - start
    return row, curve


def _run_chunk(tasks: list[tuple[int, int, Scenario]], curves: bool):  # noqa: ANN202 - (runs, curves) pyarrow tables
    """Worker side: run a chunk of (point, replicate, scenario) and return its tables."""
    import pyarrow as pa

    from womlab.store import CURVES_SCHEMA, RUNS_SCHEMA

    rows, curve_parts = [], []
    for point, replicate, scenario in tasks:
        row, curve = run_point(scenario, point, replicate, curves=curves)
        rows.append(row)
        if curve is not None:
            n = curve["period"].size
            curve_parts.append({"point": np.full(n, point, np.int32), "replicate": np.full(n, replicate, np.int32),
                                **curve})
    runs = pa.Table.from_pylist(rows, schema=RUNS_SCHEMA)
    curve_table = None
    if curves:
        cols = {name: (np.concatenate([c[name] for c in curve_parts]) if curve_parts else np.zeros(0, np.int32))
                for name in CURVES_SCHEMA.names}
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
        Points of the design and runs in the whole sweep (points × replicates).
    skipped : int
        Runs already finished in the folder (a resume), not run again.
    ran : int
        Runs executed by this call.
    failures : int
        Runs of the whole sweep whose status is ``failed``.
    wall_time : float
        Seconds this call took.
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
    report: Path | None = None
    failed: pd.DataFrame = field(default_factory=pd.DataFrame, repr=False)


def _parse_cluster(cluster: str) -> int:
    kind, _, n = cluster.partition(":")
    if kind != "local" or not n.isdigit() or int(n) < 1:
        raise ScenarioError(f"--cluster must be local:N with N >= 1 workers (e.g. local:4), got {cluster!r}")
    return int(n)


def _chunks(pending: list[tuple[int, int]], workers: int, chunk_size: int | None) -> list[list[tuple[int, int]]]:
    if chunk_size is None:
        chunk_size = max(1, min(64, math.ceil(len(pending) / (workers * 8))))
    return [pending[i : i + chunk_size] for i in range(0, len(pending), chunk_size)]


def run_sweep(
    scenario: Scenario,
    out: str | Path,
    jobs: int | None = None,
    *,
    scheduler: str | None = None,
    cluster: str | None = None,
    cluster_processes: bool = True,
    curves: bool = False,
    chunk_size: int | None = None,
    progress: bool = True,
    report: bool = True,
) -> SweepSummary:
    """Run the scenario's sweep into the results folder ``out``, resuming what is there.

    Parameters
    ----------
    scenario : Scenario
        With a ``[sweep]`` section that has at least one axis.
    out : str or Path
        Results folder (:mod:`womlab.store`). If it holds an unfinished sweep of the same
        spec, finished runs are skipped; a different spec is refused.
    jobs : int, optional
        Worker processes on this machine (joblib, loky); default ``scenario.run.jobs``.
    scheduler : str, optional
        Address of a running Dask scheduler (``tcp://host:port``); runs go to its workers
        through joblib's Dask backend. Workers need womlab installed and, for edge-list
        networks, the files at the same paths.
    cluster : str, optional
        ``local:N`` starts a ``distributed.LocalCluster`` of N single-threaded workers
        on this machine (to try the Dask path).
    cluster_processes : bool
        Whether the LocalCluster's workers are processes (default) or threads.
    curves : bool
        Also keep each run's per-period curve (``curves.parquet``).
    chunk_size : int, optional
        Runs per task; by default about an eighth of each worker's share, at most 64.
    progress : bool
        Progress bar (runs done, rate, time left) on standard error.
    report : bool
        Write ``report.html`` (:func:`womlab.results.write_report`) at the end.

    Returns
    -------
    SweepSummary

    Raises
    ------
    ScenarioError
        No axes, or invalid points (before anything runs).
    StoreError
        ``out`` is unusable or was made by a different spec.

    Examples
    --------
    >>> from womlab import Scenario, run_sweep
    >>> s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 2},
    ...                         "run": {"periods": 10},
    ...                         "sweep": {"replicates": 2, "axes": {"adoption.word_of_mouth": [0.2, 0.4]}}})
    >>> run_sweep(s, "out/doc-sweep", progress=False, report=False).runs   # doctest: +SKIP
    4
    """
    from joblib import Parallel, delayed, effective_n_jobs

    start = time.perf_counter()
    if scheduler is not None and cluster is not None:
        raise ScenarioError("give --scheduler or --cluster, not both")
    spec = scenario.sweep
    points = design_points(scenario)
    scenarios = point_scenarios(scenario, points)  # every point validated before anything runs
    replicates = spec.replicates
    library_versions = versions()
    identity_scenario = scenario.to_dict()
    identity_scenario["run"].pop("jobs", None)
    manifest = {
        "format": 1,
        "kind": "sweep",
        "scenario": scenario.to_dict(),
        "sweep": spec.to_table(),
        "root_seed": scenario.seed,
        "spawn_keys": "SeedSequence(root_seed, spawn_key=(point, replicate)), split into network, seeding, dynamics",
        "design_key": list(DESIGN_KEY),
        "points": len(points),
        "replicates": replicates,
        "runs": len(points) * replicates,
        "outcomes": list(OUTCOMES),
        "versions": library_versions,
        "identity": {"scenario": identity_scenario, "curves": bool(curves), "format": 1},
    }
    store = ResultsStore.create_or_resume(out, manifest, points)
    keys = [(i, r) for i in range(len(points)) for r in range(replicates)]
    finished = store.finished()
    pending = [k for k in keys if k not in finished]
    skipped = len(keys) - len(pending)

    client = local = None
    if scheduler is not None or cluster is not None:
        try:
            from dask.distributed import Client, LocalCluster
        except ImportError:  # pragma: no cover - depends on the installation
            raise StoreError("--scheduler/--cluster need dask: pip install 'womlab[cluster]'") from None
        if cluster is not None:
            local = LocalCluster(n_workers=_parse_cluster(cluster), threads_per_worker=1,
                                 processes=cluster_processes, dashboard_address=None)
            client = Client(local)
            backend = f"dask LocalCluster ({cluster}, {'processes' if cluster_processes else 'threads'})"
        else:
            client = Client(scheduler)
            backend = f"dask scheduler {scheduler}"
        workers = max(1, sum(client.nthreads().values()))
    else:
        workers = effective_n_jobs(scenario.run.jobs if jobs is None else jobs)
        backend = f"loky, {workers} workers" if workers > 1 else "in-process"
    session = store.begin_session({"backend": backend, "pending": len(pending), "womlab": library_versions["womlab"]})

    chunks = _chunks(pending, workers, chunk_size)
    tasks = ([(i, r, scenarios[i]) for i, r in chunk] for chunk in chunks)
    from womlab.scenario.progress import bar as progress_bar  # a bar on a terminal, plain lines when piped

    bar = progress_bar(len(keys), "sweep", unit="run", initial=skipped, show=progress, leave=True) if progress else None
    ran = failed_now = 0
    try:
        if client is not None:
            from joblib import parallel_config

            with parallel_config(backend="dask"):
                results = Parallel(n_jobs=-1, return_as="generator_unordered")(
                    delayed(_run_chunk)(t, curves) for t in tasks)
                ran, failed_now = _collect(results, store, session, bar)
        elif workers == 1 or len(chunks) <= 1:
            ran, failed_now = _collect((_run_chunk(t, curves) for t in tasks), store, session, bar)
        else:
            results = Parallel(n_jobs=workers, return_as="generator_unordered")(
                delayed(_run_chunk)(t, curves) for t in tasks)
            ran, failed_now = _collect(results, store, session, bar)
    finally:
        if bar is not None:
            bar.close()
        if client is not None:
            client.close()
        if local is not None:
            local.close()
    store.consolidate()
    runs = store.runs()
    failed = runs[runs["status"] != "ok"]
    store.end_session(session, {"ran": ran, "failed": failed_now, "wall_time_s": round(time.perf_counter() - start, 3)})
    summary = SweepSummary(out=store.path, points=len(points), runs=len(keys), skipped=skipped, ran=ran,
                           failures=len(failed), wall_time=time.perf_counter() - start, backend=backend,
                           failed=failed.reset_index(drop=True))
    if report:
        summary.report = present(summary, "report")
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
