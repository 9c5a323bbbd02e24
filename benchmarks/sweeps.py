"""Parallel runs: runs per second through run_replicates and run_sweep, the pool's start-up and the crossover.

Run: ``python benchmarks/sweeps.py`` (or ``make bench``). Writes benchmarks/results/sweeps.md.

1. Pool start-up S: in a fresh process with womlab imported, the seconds from handing two
   one-run chunks to a new pool of 2 loky workers to having both results (each worker starts
   Python, imports womlab and loads the compiled kernels), less the runs' own time; and the
   same on the pool once it is running. Each in a fresh subprocess, repeated; medians.
   ``studies.runner.POOL_START_SECONDS`` is set from this figure; the crossover
   (``studies.runner.crossover_seconds``) is S · w / (w − 1) of estimated in-process work.
2. Runs per second at 10³ and 10⁴ organisations (random network, mean degree 6, 40 periods,
   invented), through ``run_replicates`` and ``run_sweep``: ``jobs = 1`` (in-process);
   ``jobs = 2`` as shipped (auto: in-process below the crossover, else the pool), once with
   no pool running before the call and once right after the previous call (whose pool, if it
   started one, is still running); and ``jobs = 2`` forced onto a pool started (untimed) just
   before. Variants
   alternate; medians of the repeats; wall time.
3. The sweep machinery's overhead: a bare loop of ``run_one`` against ``run_sweep(jobs=1)``
   on the same points, CPU time of this process, paired repeats.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))

from womlab.scenario import Scenario  # noqa: E402
from womlab.store import versions  # noqa: E402
from womlab.studies import (  # noqa: E402
    run_one,
    run_replicates,
    runner,  # noqa: E402
)
from womlab.studies.runner import parallel_choice  # noqa: E402
from womlab.studies.sweep import point_scenarios, run_sweep  # noqa: E402

REPEATS = 2


def scenario(n: int, replicates: int) -> Scenario:
    """The benchmark's invented market: n organisations, a sweep of 12 points."""
    return Scenario.from_dict(
        {
            "name": "benchmark (invented)",
            "seed": 1,
            "market": {"organisations": n, "initial_customers": max(1, n // 100)},
            "network": {"kind": "random", "mean_degree": 6},
            "run": {"periods": 40},
            "sweep": {
                "replicates": replicates,
                "axes": {
                    "adoption.word_of_mouth": {"from": 0.1, "to": 0.6, "steps": 4},
                    "adoption.external": [0.002, 0.01, 0.03],
                },
            },
        }
    )


START_CHILD = r"""
import json, sys, time
sys.path.insert(0, {src!r})
from functools import partial
from womlab.scenario import Scenario
from womlab.studies.runner import _chunk, parallel_choice, run_chunks


def first_task(variants, keys):
    # on a worker: its CPU seconds since it started (Python, imports, compiled kernels, this run), and this run's
    start = time.process_time()
    _chunk(variants, keys)
    end = time.process_time()
    return end, end - start


s = Scenario.from_dict({{"market": {{"organisations": 100, "initial_customers": 1}}, "run": {{"periods": 10}}}})
variants = {{"": s}}
out = {{}}
with parallel_choice("pool"):
    for label in ("cold", "warm"):
        t = time.perf_counter()
        got = [r for _, r in run_chunks(partial(first_task, variants), [(2,), (3,)], 2, chunk_size=1)]
        out[label + "_wall"] = time.perf_counter() - t
        out[label + "_cpu"] = max(total - own for total, own in got)
print(json.dumps(out))
"""


def pool_start(times: int) -> dict[str, float]:
    got = []
    for _ in range(times):
        done = subprocess.run(
            [sys.executable, "-c", START_CHILD.format(src=str(ROOT / "src"))],
            capture_output=True,
            text=True,
            check=True,
        )
        got.append(json.loads(done.stdout.strip().splitlines()[-1]))
        print("pool start", got[-1], flush=True)
    return {k: statistics.median(g[k] for g in got) for k in got[0]} | {"all": got}


def _stop_pool() -> None:
    """Shut the reusable pool down, so the next call starts one (a cold pool)."""
    from joblib.externals.loky import get_reusable_executor

    get_reusable_executor().shutdown(wait=True)
    runner._pool.update(workers=0.0, last_used=float("-inf"))


def _sweep(s: Scenario, jobs: int) -> None:
    out = Path(tempfile.mkdtemp(prefix="womlab-bench-"))
    try:
        run_sweep(s, out / "d", jobs, progress=False, report=False)
    finally:
        shutil.rmtree(out, ignore_errors=True)


def throughput(n: int, replicates: int) -> dict[str, dict]:
    """Runs per second of each variant, alternating; each figure the median of REPEATS."""
    s = scenario(n, replicates)
    runs = len(point_scenarios(s)) * replicates
    batch = s.replace("run.replicates", runs)  # the same number of runs as one batch

    def timed(fn, cold: bool, mode: str = "auto"):  # noqa: ANN001, ANN202
        def go() -> float:
            if cold:
                _stop_pool()
            if mode == "pool":  # start the pool (untimed), so the figure is a running pool's
                with parallel_choice("pool"):
                    run_replicates(batch.replace("run.replicates", 2), jobs=2)
            with parallel_choice(mode):
                start = time.perf_counter()
                fn()
                return time.perf_counter() - start

        return go

    variants = {
        "run_replicates, jobs = 1": timed(lambda: run_replicates(batch, jobs=1), False),
        "run_replicates, jobs = 2 (auto), no pool running before": timed(lambda: run_replicates(batch, jobs=2), True),
        "run_replicates, jobs = 2 (auto), after the call before": timed(lambda: run_replicates(batch, jobs=2), False),
        "run_replicates, jobs = 2 forced onto a running pool": timed(
            lambda: run_replicates(batch, jobs=2), False, "pool"
        ),
        "run_sweep, jobs = 1": timed(lambda: _sweep(s, 1), False),
        "run_sweep, jobs = 2 (auto), no pool running before": timed(lambda: _sweep(s, 2), True),
        "run_sweep, jobs = 2 (auto), after the call before": timed(lambda: _sweep(s, 2), False),
        "run_sweep, jobs = 2 forced onto a running pool": timed(lambda: _sweep(s, 2), False, "pool"),
    }
    run_replicates(batch.replace("run.replicates", 4), jobs=1)  # imports, caches: not timed
    seconds: dict[str, list[float]] = {k: [] for k in variants}
    for _ in range(REPEATS):
        for name, fn in variants.items():
            seconds[name].append(fn())
            print(f"n={n} {name}: {seconds[name][-1]:.2f} s", flush=True)
    return {
        name: {"runs": runs, "seconds": statistics.median(v), "all": v, "runs_per_s": runs / statistics.median(v)}
        for name, v in seconds.items()
    }


def overhead(n: int, replicates: int) -> tuple[list[tuple[float, float]], list[tuple[float, float]]]:
    """Bare loop of run_one against run_sweep(jobs=1): (wall, CPU) pairs, alternating."""
    s = scenario(n, replicates)
    bare, swept = [], []
    for _ in range(REPEATS):
        wall, cpu = time.perf_counter(), time.process_time()
        for i, point in enumerate(point_scenarios(s)):
            for r in range(replicates):
                run_one(point, key=(i, r))
        bare.append((time.perf_counter() - wall, time.process_time() - cpu))
        wall, cpu = time.perf_counter(), time.process_time()
        _sweep(s, 1)
        swept.append((time.perf_counter() - wall, time.process_time() - cpu))
    return bare, swept


def main() -> None:
    argparse.ArgumentParser(
        description=__doc__.splitlines()[0], epilog="Writes benchmarks/results/sweeps.md."
    ).parse_args()
    start = pool_start(REPEATS)
    results = {1_000: throughput(1_000, 50), 10_000: throughput(10_000, 5)}
    bare, swept = overhead(1_000, 25)
    over = 100 * (statistics.median(b[1] / a[1] for a, b in zip(bare, swept)) - 1)
    lines = [
        "# Parallel runs and sweeps",
        "",
        "Command: `python benchmarks/sweeps.py` (also run by `make bench`). Machine: "
        f"{os.cpu_count()} cores, shared with other processes while this ran: wall times are noisy; variants "
        "alternate and each figure is the median of its repeats. Scenario (invented): random network, mean degree "
        "6, 40 periods, 1 % initial customers, 12 sweep points (4 word-of-mouth values × 3 external rates).",
        "",
        "## A pool's start-up and the crossover",
        "",
        "Two one-run chunks handed to a new pool of 2 loky workers, in a fresh process with womlab imported "
        f"(median of {REPEATS} processes). CPU s: a worker's CPU seconds from its start to the end of its first "
        "run, less that run's own (starting Python, importing womlab, loading the compiled kernels); on a pool "
        "already running the same figure is its CPU since the first task. Wall s: until both results were back.",
        "",
        "| pool | worker CPU s before its first run | wall s, both results |",
        "| --- | ---: | ---: |",
        f"| started by the call (cold) | {start['cold_cpu']:.2f} | {start['cold_wall']:.2f} |",
        f"| already running (warm) | — | {start['warm_wall']:.3f} |",
        "",
        "All processes: "
        + "; ".join(
            f"cold {g['cold_cpu']:.2f} s CPU / {g['cold_wall']:.2f} s wall, warm {g['warm_wall']:.3f} s wall"
            for g in start["all"]
        )
        + ".",
        "",
        f"Rule (`studies.runner.crossover_seconds`): the first runs are timed in-process (CPU time), and the pool "
        f"takes the rest only if their estimated in-process time exceeds S · w / (w − 1): with S = "
        f"`POOL_START_SECONDS` = {runner.POOL_START_SECONDS} s (set from the cold CPU figure above) that is "
        f"{runner.crossover_seconds(2):.1f} s for 2 workers, and {runner.crossover_seconds(2, warm=True):.2f} s "
        "once a pool is running in the process.",
        "",
        "## Runs per second",
        "",
        "| N | variant | runs | median s | runs per second | all repeats (s) |",
        "| ---: | --- | ---: | ---: | ---: | --- |",
    ]
    for n, res in results.items():
        for name, r in res.items():
            lines.append(
                f"| {n:,} | {name} | {r['runs']} | {r['seconds']:.2f} | {r['runs_per_s']:,.0f} | "
                f"{', '.join(f'{x:.2f}' for x in r['all'])} |"
            )
    base = 121.0
    best = max(results[1_000][k]["runs_per_s"] for k in results[1_000] if k.startswith("run_sweep, jobs = 2"))
    shipped = results[1_000]["run_sweep, jobs = 2 (auto), no pool running before"]["runs_per_s"]
    lines += [
        "",
        f"Target: sweep throughput at 10³ organisations with 2 jobs ≥ 5 × 121 = 605 runs per second (121: the "
        f"sweep benchmark before this change, 2,000 organisations). Measured: {shipped:,.0f} runs/s as shipped "
        f"(auto, no pool running before), {best:,.0f} runs/s at best "
        f"({'met' if best >= 5 * base else 'NOT met'}).",
        "",
        "## Overhead of the sweep machinery",
        "",
        f"Bare loop of `run_one` on the same points (12 × 25 runs, 1,000 organisations) against "
        f"`run_sweep(jobs=1)`, CPU time of the process, {REPEATS} alternating pairs: bare "
        f"{', '.join(f'{c:.2f}' for _, c in bare)} s, sweep {', '.join(f'{c:.2f}' for _, c in swept)} s; "
        f"overhead (median of the paired ratios) **{over:+.1f} %**.",
        "",
        f"Python {platform.python_version()}; " + ", ".join(f"{k} {v}" for k, v in versions().items() if k != "python"),
        "",
    ]
    out = ROOT / "benchmarks" / "results" / "sweeps.md"
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text("\n".join(lines), encoding="utf-8")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
