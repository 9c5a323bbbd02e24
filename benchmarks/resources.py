"""Benchmark: the unit costs behind womlab's resource estimate (womlab.scenario.resources).

Run with ``python benchmarks/resources.py``. Writes ``benchmarks/results/resources.md``:
the machine, date and versions, then

1. peak memory of building a network and making one run, each size in a fresh subprocess
   (``resource.getrusage``), less the same process's memory before the build, and the
   bytes per organisation and per tie a least-squares fit gives;
2. seconds per organisation-step of the array, event and Mesa engines, and the fixed
   seconds of one run;
3. seconds of sampled betweenness per source and per (organisations + 2 x ties), and of
   one greedy evaluation.

The estimate's constants (``womlab.scenario.resources.COSTS``) are rounded up from these.
They are rough on purpose: the estimate exists to refuse what cannot fit a machine and to
say "about a minute" rather than "about a day", not to predict seconds.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import platform
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))

CHILD = r"""
import json, resource, sys, time
import numpy as np
import womlab
from womlab.dynamics import engine_for, streams
from womlab.seeding import initial_customers
n, k, kind = int(sys.argv[1]), float(sys.argv[2]), sys.argv[3]
s = womlab.Scenario.from_dict({"seed": 1, "market": {"organisations": n, "initial_share": 0.001, "regions": 6},
    "network": {"kind": kind, "mean_degree": k}, "run": {"periods": 40}})
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
st = streams(1, (0,))
t0 = time.perf_counter()
net = womlab.build_network(s, np.random.default_rng(st.network))
build = time.perf_counter() - t0
init = initial_customers(s, net, np.random.default_rng(st.seeding))
t0 = time.perf_counter()
engine_for(s)(s, net, init, np.random.default_rng(st.dynamics))
run = time.perf_counter() - t0
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({"n": n, "k": k, "kind": kind, "ties": net.ties, "before": before, "peak": peak,
                  "build_s": build, "run_s": run}))
"""


def memory_rows() -> list[dict]:
    rows = []
    for kind, n, k in (
        ("random", 200_000, 8),
        ("random", 200_000, 40),
        ("random", 800_000, 8),
        ("regional", 200_000, 8),
        ("small_world", 200_000, 10),
        ("scale_free", 200_000, 8),
    ):
        out = subprocess.run(
            [sys.executable, "-c", CHILD, str(n), str(k), kind], capture_output=True, text=True, check=True, cwd=ROOT
        )
        rows.append(json.loads(out.stdout.strip().splitlines()[-1]))
    return rows


def engine_rows() -> list[dict]:
    import womlab
    from womlab.dynamics import engine_for, streams
    from womlab.seeding import initial_customers

    rows = []
    for engine, clock, n in (
        ("array", "discrete", 1_000),
        ("array", "discrete", 100_000),
        ("array", "continuous", 100_000),
        ("mesa", "discrete", 5_000),
    ):
        s = womlab.Scenario.from_dict(
            {
                "seed": 1,
                "market": {"organisations": n, "initial_share": 0.001},
                "network": {"kind": "random", "mean_degree": 8},
                "run": {"periods": 40, "engine": engine, "clock": clock},
            }
        )
        st = streams(1, (0,))
        net = womlab.build_network(s, np.random.default_rng(st.network))
        init = initial_customers(s, net, np.random.default_rng(st.seeding))
        best = np.inf
        for _ in range(3):
            t0 = time.perf_counter()
            engine_for(s)(s, net, init, np.random.default_rng(st.dynamics))
            best = min(best, time.perf_counter() - t0)
        rows.append(
            {
                "engine": engine if clock == "discrete" else "event",
                "n": n,
                "periods": 40,
                "run_s": best,
                "s_per_org_step": best / (n * 40),
            }
        )
    return rows


def seeding_rows() -> list[dict]:
    import womlab
    from womlab.seeding import choose_seeds

    rows = []
    s = womlab.Scenario.from_dict(
        {
            "seed": 1,
            "market": {"organisations": 12_000, "initial_customers": 10},
            "network": {"kind": "random", "mean_degree": 8},
            "run": {"periods": 40},
            "seeding": {"betweenness_exact_up_to": 100, "betweenness_sample": 50},
        }
    )
    net = womlab.build_network(s, np.random.default_rng(1))
    t0 = time.perf_counter()
    choose_seeds("bridges", net, 10, np.random.default_rng(2), scenario=s)
    sec = time.perf_counter() - t0
    rows.append(
        {
            "step": "sampled betweenness, 50 sources, N = 12,000, mean degree 8",
            "s": sec,
            "per_unit": sec / (50 * (net.n + 2 * net.ties)),
            "unit": "s per source x (N + 2 ties)",
        }
    )
    g = s.replace(
        {
            "market.organisations": 300,
            "market.initial_customers": 3,
            "seeding.greedy_runs": 5,
            "seeding.greedy_candidates": 20,
        }
    )
    net = womlab.build_network(g, np.random.default_rng(1))
    t0 = time.perf_counter()
    choose_seeds("greedy", net, 3, np.random.default_rng(2), scenario=g)
    sec = time.perf_counter() - t0
    rows.append({"step": "greedy, N = 300, 20 candidates, 5 runs, budget 3", "s": sec, "per_unit": sec, "unit": "s"})
    return rows


def main() -> None:
    argparse.ArgumentParser(
        description=__doc__.splitlines()[0], epilog="Writes benchmarks/results/resources.md."
    ).parse_args()
    mem = memory_rows()
    a = np.array([[1.0, r["n"], r["ties"]] for r in mem])
    b = np.array([r["peak"] - r["before"] for r in mem], dtype=float)
    coef, *_ = np.linalg.lstsq(a, b, rcond=None)
    eng = engine_rows()
    seed = seeding_rows()
    import womlab

    lines = [
        "# Resource estimate: unit costs",
        "",
        f"- date: {dt.datetime.now(dt.timezone.utc):%Y-%m-%d %H:%M} UTC",
        f"- machine: {platform.processor() or platform.machine()}, {len(__import__('os').sched_getaffinity(0))} "
        f"logical cores, {platform.system()} {platform.release()}",
        f"- versions: python {platform.python_version()}, numpy {np.__version__}, womlab {womlab.__version__}",
        "- command: `python benchmarks/resources.py`",
        "- the machine may be shared: read these as orders of magnitude.",
        "",
        "## Peak memory of one network build and one run (40 periods), fresh subprocess each",
        "",
        "| kind | N | ties | peak − before MB | build s | run s |",
        "| --- | ---: | ---: | ---: | ---: | ---: |",
        *[
            f"| {r['kind']} | {r['n']:,} | {r['ties']:,} | {(r['peak'] - r['before']) / 2**20:.0f} | {r['build_s']:.2f} | "
            f"{r['run_s']:.2f} |"
            for r in mem
        ],
        "",
        f"Least squares: {coef[1]:.0f} bytes per organisation, {coef[2]:.0f} bytes per tie "
        f"(intercept {coef[0] / 2**20:.0f} MB).",
        "",
        "## Engines, seconds per organisation-step (random network, mean degree 8, best of 3)",
        "",
        "| engine | N | run s | s per organisation-step |",
        "| --- | ---: | ---: | ---: |",
        *[f"| {r['engine']} | {r['n']:,} | {r['run_s']:.4f} | {r['s_per_org_step']:.2e} |" for r in eng],
        "",
        "## Seeding steps",
        "",
        "| step | s | per unit |",
        "| --- | ---: | ---: |",
        *[f"| {r['step']} | {r['s']:.2f} | {r['per_unit']:.2e} {r['unit']} |" for r in seed],
        "",
    ]
    out = ROOT / "benchmarks" / "results" / "resources.md"
    out.write_text("\n".join(lines), encoding="utf-8")
    print("\n".join(lines))


if __name__ == "__main__":
    main()
