"""Sweep machinery: runs per second, overhead against a bare loop, loky against Dask.

Run: ``python benchmarks/sweeps.py`` (or ``make bench``). Writes benchmarks/results/sweeps.md.

Everything is measured side by side in one process on the same points (12 points × 25
replicates of 2,000 organisations on a random network, 40 periods; array engine), each
variant several times, alternating. The overhead is a ratio of CPU times of this process
(bare loop against ``jobs = 1``, both in-process), which other processes on a shared
machine barely disturb; the backends are compared by wall time, fastest repeat. Times are end to end: a sweep's time includes designing and validating the
points, creating the results folder, writing part files, consolidating, and (for the
parallel backends) handing chunks to workers; the loky pool is reused between repeats
(joblib keeps it warm). Dask is measured twice: ``cluster="local:2"`` starts a
LocalCluster in every call (what ``--cluster local:2`` costs), and ``scheduler=`` sends
the sweep to a LocalCluster of 2 worker processes started once, outside the timing
(what a running cluster costs per sweep).
"""

from __future__ import annotations

import os
import platform
import shutil
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from womlab.store import versions  # noqa: E402
from womlab.scenario import Scenario  # noqa: E402
from womlab.store import ResultsStore  # noqa: E402
from womlab.studies import run_one  # noqa: E402
from womlab.studies.sweep import point_scenarios, run_sweep  # noqa: E402

REPEATS = 5        # bare loop against jobs = 1, alternating, CPU time
PARALLEL_REPEATS = 2
SCENARIO = Scenario.from_dict({
    "name": "benchmark (invented)",
    "seed": 1,
    "market": {"organisations": 2000, "initial_customers": 20},
    "network": {"kind": "random", "mean_degree": 6},
    "run": {"periods": 40},
    "sweep": {"replicates": 25, "axes": {
        "adoption.word_of_mouth": {"from": 0.1, "to": 0.6, "steps": 4},
        "adoption.external": [0.002, 0.01, 0.03]}},
})


def bare_loop() -> tuple[float, float]:
    """The same runs with no sweep machinery: run_one per (point, replicate), nothing kept.

    Returns (wall seconds, CPU seconds of this process)."""
    wall, cpu = time.perf_counter(), time.process_time()
    scenarios = point_scenarios(SCENARIO)
    for i, s in enumerate(scenarios):
        for r in range(SCENARIO.sweep.replicates):
            run_one(s, key=(i, r))
    return time.perf_counter() - wall, time.process_time() - cpu


RUN_TIME: dict[str, list[float]] = {}


def sweep(**kwargs) -> tuple[float, float]:
    """Wall and CPU seconds of one sweep call; also notes the summed per-run wall time in RUN_TIME."""
    out = Path(tempfile.mkdtemp(prefix="womlab-bench-"))
    try:
        wall, cpu = time.perf_counter(), time.process_time()
        run_sweep(SCENARIO, out / "d", progress=False, report=False, **kwargs)
        result = time.perf_counter() - wall, time.process_time() - cpu
        RUN_TIME.setdefault(repr(sorted(kwargs.items())), []).append(
            float(ResultsStore(out / "d").runs()["wall_time"].sum()))
        return result
    finally:
        shutil.rmtree(out, ignore_errors=True)


def main() -> None:
    import statistics

    from dask.distributed import LocalCluster

    runs = len(point_scenarios(SCENARIO)) * SCENARIO.sweep.replicates
    shape = f"{len(point_scenarios(SCENARIO))} points × {SCENARIO.sweep.replicates} replicates"
    sweep(jobs=1)  # warm imports and caches once, unmeasured

    # 1. overhead: bare loop against jobs = 1, alternating; CPU time of this process (other
    #    processes on the machine barely change it), wall time beside it.
    bare_t, one_t = [], []
    for _ in range(REPEATS):
        bare_t.append(bare_loop())
        one_t.append(sweep(jobs=1))
        print(f"bare {bare_t[-1][0]:.2f} s wall {bare_t[-1][1]:.2f} s cpu; "
              f"jobs=1 {one_t[-1][0]:.2f} s wall {one_t[-1][1]:.2f} s cpu", flush=True)
    ratios = [o[1] / b[1] for b, o in zip(bare_t, one_t)]
    overhead = 100 * (statistics.median(ratios) - 1)
    bare_cpu = statistics.median(b[1] for b in bare_t)
    one_cpu = statistics.median(o[1] for o in one_t)

    # 2. parallel backends, wall time, fastest of PARALLEL_REPEATS (jobs = 1 included again, same conditions)
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None)
    variants = {
        "jobs = 1 (in-process)": lambda: sweep(jobs=1),
        "jobs = 2 (loky), automatic chunks": lambda: sweep(jobs=2),
        "jobs = 2 (loky), one run per task": lambda: sweep(jobs=2, chunk_size=1),
        "Dask, running LocalCluster of 2 worker processes (--scheduler)": lambda: sweep(
            scheduler=cluster.scheduler_address),
        "Dask, LocalCluster of 2 worker processes started by the call (--cluster local:2)":
            lambda: sweep(cluster="local:2"),
    }
    sweep(jobs=2)  # start the loky pool once, unmeasured
    times: dict[str, list[float]] = {k: [] for k in variants}
    for _ in range(PARALLEL_REPEATS):
        for name, func in variants.items():
            times[name].append(func()[0])
            print(f"{name}: {times[name][-1]:.2f} s", flush=True)
    cluster.close()
    best = {k: min(v) for k, v in times.items()}
    one = best["jobs = 1 (in-process)"]
    loky = best["jobs = 2 (loky), automatic chunks"]
    lines = [
        "# Sweep benchmarks",
        "",
        f"Command: `python benchmarks/sweeps.py` (also run by `make bench`). {runs} runs ({shape}; 2,000",
        "organisations, random network, 40 periods, array engine). Machine: "
        f"{os.cpu_count()} cores, shared with other processes (up to six other sessions' tests and builds) while "
        "this ran: wall times are noisy; ratios come from measurements taken side by side, alternating.",
        "",
        "## Overhead of the sweep machinery",
        "",
        f"Bare loop of `run_one` on the same points against `run_sweep(jobs=1)` (outcome rows, part files, "
        f"consolidation, manifest), {REPEATS} alternating pairs, CPU time of the process:",
        "",
        "| | median CPU (s) | all repeats, CPU / wall (s) |",
        "| --- | ---: | --- |",
        f"| bare loop | {bare_cpu:.2f} | {', '.join(f'{c:.2f} / {w:.2f}' for w, c in bare_t)} |",
        f"| sweep, jobs = 1 | {one_cpu:.2f} | {', '.join(f'{c:.2f} / {w:.2f}' for w, c in one_t)} |",
        "",
        f"Overhead (median of the paired CPU ratios): **{overhead:+.1f} %** (target under 10 %).",
        "",
        "## Backends",
        "",
        f"Wall time, fastest of {PARALLEL_REPEATS} alternating repeats:",
        "",
        "| variant | best time (s) | runs per second | all repeats (s) |",
        "| --- | ---: | ---: | --- |",
    ]
    for name, t in best.items():
        lines.append(f"| {name} | {t:.2f} | {runs / t:.1f} | {', '.join(f'{x:.2f}' for x in times[name])} |")
    inflation = min(RUN_TIME[repr([("jobs", 2)])]) / min(RUN_TIME[repr([("jobs", 1)])])
    lines += [
        "",
        f"- Contention check: the runs' own wall times, summed, are {inflation:.2f}× longer in the two loky "
        "workers than in-process, fastest call of each (1.0: two free cores; about 2: the workers shared about one "
        "core's worth of CPU with the machine's other processes during at least one call).",
        f"- jobs = 2 over jobs = 1: {one / loky:.2f}× with automatic chunks, "
        f"{one / best['jobs = 2 (loky), one run per task']:.2f}× with one run per task.",
        f"- Dask against loky jobs = 2: a running cluster "
        f"{best['Dask, running LocalCluster of 2 worker processes (--scheduler)'] / loky:.2f}× the time; "
        f"a LocalCluster started by the call "
        f"{best['Dask, LocalCluster of 2 worker processes started by the call (--cluster local:2)'] / loky:.2f}× "
        "(start-up of the cluster included).",
        "",
        f"Python {platform.python_version()}; " + ", ".join(f"{k} {v}" for k, v in versions().items() if k != "python"),
        "",
    ]
    out = Path(__file__).resolve().parent / "results" / "sweeps.md"
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text("\n".join(lines), encoding="utf-8")
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
