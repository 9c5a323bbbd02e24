"""Benchmark: womlab's engines side by side, against the CSR floor and two Mesa models.

Run with ``make bench`` (or ``python benchmarks/engines.py``). Writes
``benchmarks/results/engines.md``: the machine, date and versions, then

1. a new process's first and second run (the compiled kernels loaded from numba's cache, or
   compiled when the cache is empty);
2. seconds per run of the array engine, the event engine (compiled Dijkstra, and the scipy
   path it replaced), the project's Mesa model and a plain Mesa model written as a user
   would (``benchmarks/plain_mesa.py``) on the same invented scenario (small_world, mean
   degree 10, rewiring 0.1, 50 periods) at N = 10³ … 10⁶, each against the floor: one
   float32 CSR sparse product per period on the same matrix. Runs are interleaved and
   ratios taken repeat by repeat;
3. the whole ``womlab run`` command with one replicate at N = 10⁶ and 10⁷ (100 periods):
   wall time and peak memory, and the split into import, network build, run and writing;
4. the issue's targets, each with its number and whether it is met.

Timings on a shared machine are noisy; ratios measured side by side are what to read.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))

from about import machine, versions  # noqa: E402

from womlab import Scenario, build_network  # noqa: E402
from womlab.dynamics import ENGINES  # noqa: E402


def scenario(n: int, periods: int, clock: str = "discrete") -> Scenario:
    """The benchmark's invented scenario: 0.1 % initial customers on a small world."""
    return Scenario.from_dict(
        {
            "name": "benchmark (invented)",
            "seed": 1,
            "market": {"organisations": n, "initial_share": 0.001},
            "network": {"kind": "small_world", "mean_degree": 10, "rewiring": 0.1},
            "adoption": {
                "rule": "share",
                "external": 0.01,
                "word_of_mouth": 0.4,
                "satisfied_share": 0.7,
                "talkers_per_customer": 2,
            },
            "run": {"periods": periods, "clock": clock},
        }
    )


def _initial(n: int, k: int) -> np.ndarray:
    return np.sort(np.random.default_rng(7).choice(n, size=max(k, 1), replace=False)).astype(np.int32)


def _time(fn, repeats: int) -> float:
    best = np.inf
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def floor_seconds(network, periods: int, repeats: int) -> float:
    """One float32 CSR sparse product per period on the network's matrix."""
    matrix = network.matrix(np.float32)
    x = np.ones(network.n, dtype=np.float32)

    def products():
        for _ in range(periods):
            matrix @ x

    return _time(products, repeats)


def scipy_first_passage(scenario, network, initial, rng):  # noqa: ANN001, ANN201
    """The event engine's first passage as womlab ran it before the compiled kernel: the same
    draws, the graph with a virtual source built as a scipy CSR array and solved by
    scipy.sparse.csgraph.dijkstra (in C), stopped at the horizon. Kept here as the yardstick
    the compiled Dijkstra is measured against (and tested against, tests/dynamics)."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import dijkstra

    from womlab import rules
    from womlab.dynamics.event_engine import tie_rates

    adoption, n = scenario.adoption, network.n
    tau = rules.draw_talkers(adoption.talkers_per_customer, n, rng)
    sat = rules.draw_satisfied(adoption.satisfied_share, n, rng)
    talking = np.where(sat, tau, np.float32(0))
    external = rng.standard_exponential(n)
    delay = rng.standard_exponential(network.indices.size)
    w = tie_rates(adoption.rule, network, tau, talking, adoption.word_of_mouth)
    live = w > 0
    delay = np.divide(delay, w, out=delay, where=live)
    running = np.concatenate([[0], np.cumsum(live, dtype=np.int64)])
    counts = running[network.indptr[1:]] - running[network.indptr[:-1]]
    start = np.zeros(n, dtype=bool)
    start[initial] = True
    src_len = np.where(start, 0.0, external / adoption.external)
    indptr = np.zeros(n + 2, dtype=np.int64)
    np.cumsum(counts, out=indptr[1 : n + 1])
    indptr[n + 1] = indptr[n] + n
    graph = sp.csr_array(
        (
            np.concatenate([delay[live], src_len]),
            np.concatenate([network.indices[live], np.arange(n, dtype=np.int32)]),
            indptr,
        ),
        shape=(n + 1, n + 1),
    )
    return dijkstra(graph, directed=True, indices=n, return_predecessors=True, limit=float(scenario.run.periods))


def compare_engines(sizes: list[int], periods: int, repeats: int, mesa_up_to: int, plain_up_to: int) -> list[dict]:
    """Seconds per run of every engine at each N, interleaved; ratios taken repeat by repeat, medians reported."""
    from womlab.dynamics.mesa_model import ReferralModel  # noqa: F401 - imported here so its import is not timed

    sys.path.insert(0, str(ROOT / "benchmarks"))
    import plain_mesa

    rows = []
    for n in sizes:
        s = scenario(n, periods)
        sc = scenario(n, periods, "continuous")
        start = time.perf_counter()
        net = build_network(s, np.random.default_rng(11))
        build = time.perf_counter() - start
        init = _initial(n, s.market.n_initial)
        what = {
            "floor": lambda: floor_seconds(net, periods, 1),
            "array": lambda: _time(lambda: ENGINES["array"](s, net, init, np.random.default_rng(3)), 1),
            "events": lambda: _time(lambda: ENGINES["events"](sc, net, init, np.random.default_rng(3)), 1),
            "events_scipy": lambda: _time(lambda: scipy_first_passage(sc, net, init, np.random.default_rng(3)), 1),
        }
        if n <= mesa_up_to:
            sm = s.replace("run.engine", "mesa")
            what["mesa"] = lambda: _time(lambda: ENGINES["mesa"](sm, net, init, np.random.default_rng(3)), 1)
        if n <= plain_up_to:
            graph = net.to_networkx()
            a = s.adoption
            kwargs = dict(
                p=a.external,
                q=a.word_of_mouth,
                satisfied_share=a.satisfied_share,
                talkers=float(a.talkers_per_customer.mean),
                initial=init.tolist(),
                seed=3,
            )
            what["plain_mesa"] = lambda: _time(lambda: plain_mesa.run(graph, periods, **kwargs), 1)
        for name in ("array", "events", "events_scipy"):  # compile or load the kernels, warm caches: not timed
            what[name]()
        reps = repeats if n <= 100_000 else max(2, repeats // 2)
        seconds: dict[str, list[float]] = {k: [] for k in what}
        for r in range(reps):
            for name, fn in what.items():
                if name in ("mesa", "plain_mesa") and r >= (2 if n <= 1_000 else 1):
                    continue  # the Mesa models are slow enough that one or two runs measure them
                seconds[name].append(fn())
        row = {"n": n, "periods": periods, "build_s": build, "repeats": reps}
        for name, values in seconds.items():
            row[f"{name}_s"] = float(np.median(values))
        floor = np.array(seconds["floor"])
        for name in ("array", "events", "events_scipy"):
            row[f"{name}_per_floor"] = float(np.median(np.array(seconds[name]) / floor))
        row["events_per_scipy"] = float(np.median(np.array(seconds["events"]) / np.array(seconds["events_scipy"])))
        for name in ("mesa", "plain_mesa"):
            if name in seconds:
                k = len(seconds[name])
                row[f"{name}_per_array"] = float(np.median(np.array(seconds[name]) / np.array(seconds["array"][:k])))
        rows.append(row)
        print(json.dumps(row), flush=True)
    return rows


COLD_CHILD = r"""
import json, sys, time
t0 = time.perf_counter()
import numpy as np
sys.path.insert(0, {src!r})
from womlab import build_network
from womlab.dynamics import ENGINES
sys.path.insert(0, {bench!r})
from engines import scenario, _initial
t1 = time.perf_counter()
s = scenario(1000, 50)
net = build_network(s, np.random.default_rng(11))
init = _initial(net.n, s.market.n_initial)
t2 = time.perf_counter()
ENGINES["array"](s, net, init, np.random.default_rng(3))
t3 = time.perf_counter()
ENGINES["array"](s, net, init, np.random.default_rng(3))
t4 = time.perf_counter()
print(json.dumps({{"import_s": t1 - t0, "first_run_s": t3 - t2, "second_run_s": t4 - t3}}))
"""


def cold_and_warm() -> dict[str, dict]:
    """A new process's first array run against its second: with an empty compilation cache (womlab
    compiles its kernels) and with the cache that run left (every later process)."""
    import tempfile

    out = {}
    with tempfile.TemporaryDirectory(prefix="womlab-numba-cache-") as cache:
        env = dict(os.environ, NUMBA_CACHE_DIR=cache)
        for label in ("empty cache (first process ever)", "cached (every later process)"):
            code = COLD_CHILD.format(src=str(ROOT / "src"), bench=str(ROOT / "benchmarks"))
            done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, env=env)
            out[label] = json.loads(done.stdout.strip().splitlines()[-1])
            print(label, json.dumps(out[label]), flush=True)
    return out


WHOLE_CONFIG = """# benchmark scenario (invented): {n:,} organisations on a small world, 100 periods
name = "benchmark {n} (invented)"
seed = 1
[market]
organisations = {n}
initial_share = 0.001
[network]
kind = "small_world"
mean_degree = 10
rewiring = 0.1
[adoption]
rule = "share"
external = 0.01
word_of_mouth = 0.4
satisfied_share = 0.7
talkers_per_customer = 2
[run]
periods = {periods}
replicates = 1
jobs = 1
"""

SPLIT_CHILD = r"""
import json, resource, sys, time
t0 = time.perf_counter()
import numpy as np
sys.path.insert(0, {src!r})
from womlab import load_scenario, build_network, save_batch
from womlab.dynamics import engine_for, streams
from womlab.seeding import initial_customers
from womlab.studies import Batch
s = load_scenario({config!r})
t1 = time.perf_counter(); c1 = time.process_time()
st = streams(s.seed, (0,))
net = build_network(s, np.random.default_rng(st.network))
t2 = time.perf_counter(); c2 = time.process_time()
peak_build = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
init = initial_customers(s, net, np.random.default_rng(st.seeding))
r = engine_for(s)(s, net, init, np.random.default_rng(st.dynamics))
t3 = time.perf_counter(); c3 = time.process_time()
save_batch(Batch(scenario=s, runs=[r]), {out!r})
t4 = time.perf_counter(); c4 = time.process_time()
print(json.dumps({{"import_s": t1 - t0, "build_s": t2 - t1, "run_s": t3 - t2, "write_s": t4 - t3,
                  "import_cpu_s": c1, "build_cpu_s": c2 - c1, "run_cpu_s": c3 - c2, "write_cpu_s": c4 - c3,
                  "peak_after_build_mb": peak_build,
                  "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, "final_share": float(r.share[-1])}}))
"""


def whole_command(n: int, periods: int) -> dict:
    """``womlab run`` of one replicate as a whole process (wall time, peak memory), and the same
    steps timed inside one process: import, network build, run, writing the results folder."""
    import shutil
    import tempfile

    folder = Path(tempfile.mkdtemp(prefix="womlab-bench-"))
    try:
        config = folder / "bench.toml"
        config.write_text(WHOLE_CONFIG.format(n=n, periods=periods), encoding="utf-8")
        womlab = Path(sys.executable).with_name("womlab")
        start = time.perf_counter()
        proc = subprocess.Popen(
            [str(womlab), "run", str(config), "--out", str(folder / "out"), "--quiet"],
            stdout=subprocess.DEVNULL,
            stderr=subprocess.PIPE,
        )
        _, status, usage = os.wait4(proc.pid, 0)
        wall = time.perf_counter() - start
        if status != 0:
            raise RuntimeError(f"womlab run failed: {proc.stderr.read().decode()}")
        out = {
            "n": n,
            "periods": periods,
            "wall_s": wall,
            "peak_mb": usage.ru_maxrss / 1024,
            "cpu_s": usage.ru_utime + usage.ru_stime,
        }
        code = SPLIT_CHILD.format(src=str(ROOT / "src"), config=str(config), out=str(folder / "split"))
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        out["split"] = json.loads(done.stdout.strip().splitlines()[-1])
        print("whole", json.dumps(out), flush=True)
        return out
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def _fmt(x: float) -> str:
    if x >= 100:
        return f"{x:,.0f}"
    if x >= 1:
        return f"{x:.2f}"
    return f"{x:.4f}"


def _rate(n: int, periods: int, seconds: float) -> str:
    return f"{n * periods / seconds:.2e}"


def _x(v: float | None, digits: int = 2) -> str:
    return "n/a" if v is None else f"{v:,.{digits}f}×"


def report(rows: list[dict], cold: dict, whole: list[dict], command: str) -> str:
    v = versions(("numpy", "scipy", "networkx", "mesa", "numba", "joblib", "womlab"))
    lines = [
        "# Engine benchmark",
        "",
        f"- date: {dt.datetime.now(dt.timezone.utc):%Y-%m-%d %H:%M} UTC",
        f"- machine: {machine()}",
        "- versions: " + ", ".join(f"{k} {val}" for k, val in v.items()),
        f"- command: `{command}`",
        "- scenario (invented): small_world, mean degree 10, rewiring 0.1, share rule, p = 0.01, q = 0.4, "
        "satisfied share 0.7, 2 talkers, 0.1 % initial customers; one run = one seeded replicate.",
        "- the machine was shared with other work while this ran: seconds are noisy; ratios are taken repeat by "
        "repeat between runs made one after the other (interleaved), and their median is reported.",
        "",
        "## Engines side by side",
        "",
        "Seconds per run (median; network built once beforehand, not included). Floor: one float32 CSR sparse "
        "product per period on the same matrix. Event (scipy): the event engine's first passage through "
        "`scipy.sparse.csgraph.dijkstra`, the path womlab used before its compiled Dijkstra (kept in this file). "
        "Project Mesa: `womlab.dynamics.mesa_model`; plain Mesa: `benchmarks/plain_mesa.py`, the same rule as a "
        "Mesa user would write it. The Mesa models run at the smaller sizes only.",
        "",
        "| N | periods | floor s | array s | event s | event (scipy) s | project Mesa s | plain Mesa s "
        "| array / floor | event / floor | event / event (scipy) | project Mesa / array | plain Mesa / array |",
        "| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |",
    ]
    for r in rows:
        cells = [
            f"{r['n']:,}",
            str(r["periods"]),
            _fmt(r["floor_s"]),
            _fmt(r["array_s"]),
            _fmt(r["events_s"]),
            _fmt(r["events_scipy_s"]),
            _fmt(r["mesa_s"]) if "mesa_s" in r else "n/a",
            _fmt(r["plain_mesa_s"]) if "plain_mesa_s" in r else "n/a",
            _x(r["array_per_floor"]),
            _x(r["events_per_floor"]),
            _x(r["events_per_scipy"]),
            _x(r.get("mesa_per_array"), 0),
            _x(r.get("plain_mesa_per_array"), 0),
        ]
        lines.append("| " + " | ".join(cells) + " |")
    lines += [
        "",
        "## A new process: first run and second run",
        "",
        "N = 1,000, 50 periods, array engine, each line a fresh process. The first run of a process loads the "
        "compiled kernels from numba's on-disk cache (or compiles them, when the cache is empty: the first "
        "process after an install or a change of the code).",
        "",
        "| cache | import s | first run s | second run s |",
        "| --- | ---: | ---: | ---: |",
    ]
    for label, c in cold.items():
        lines.append(f"| {label} | {_fmt(c['import_s'])} | {_fmt(c['first_run_s'])} | {_fmt(c['second_run_s'])} |")
    if whole:
        lines += [
            "",
            "## The whole command",
            "",
            "`womlab run CONFIG --out DIR --quiet` with one replicate (`replicates = 1`, `jobs = 1`) as one "
            "process: wall time and peak resident memory (os.wait4). Then the same steps timed inside one process "
            "(import, network build, run, writing the results folder).",
            "",
            "| N | periods | wall s | CPU s | peak MB | import s | build s | run s | write s | peak after build MB |",
            "| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |",
        ]
        for w in whole:
            sp_ = w["split"]

            def both(key: str, sp_: dict = sp_) -> str:  # wall, and CPU in brackets where recorded
                cpu = sp_.get(key.replace("_s", "_cpu_s"))
                return _fmt(sp_[key]) + (f" ({_fmt(cpu)} CPU)" if cpu is not None else "")

            lines.append(
                f"| {w['n']:,} | {w['periods']} | {_fmt(w['wall_s'])} | {_fmt(w['cpu_s'])} | "
                f"{w['peak_mb']:,.0f} | {both('import_s')} | {both('build_s')} | "
                f"{both('run_s')} | {both('write_s')} | {sp_['peak_after_build_mb']:,.0f} |"
            )
    lines += ["", "## Targets", ""] + targets(rows, whole)
    return "\n".join(lines) + "\n"


def targets(rows: list[dict], whole: list[dict]) -> list[str]:
    """The issue's targets, each with the measured number and met / not met."""
    out = []

    def line(text: str, ok: bool) -> None:
        out.append(f"- {'met' if ok else 'NOT met'}: {text}")

    big = [r for r in rows if 1_000 <= r["n"] <= 1_000_000]
    if big:
        worst = max(big, key=lambda r: r["array_per_floor"])
        line(
            "array engine ≤ 1.0× the CSR floor at every N from 10³ to 10⁶: "
            + ", ".join(f"{r['array_per_floor']:.2f}× at {r['n']:,}" for r in big)
            + f" (worst {worst['array_per_floor']:.2f}×)",
            worst["array_per_floor"] <= 1.0,
        )
    at = {r["n"]: r for r in rows}
    if 10_000 in at and "mesa_per_array" in at[10_000]:
        r = at[10_000]
        line(f"≥ 300× the project's Mesa model at 10⁴: {r['mesa_per_array']:,.0f}×", r["mesa_per_array"] >= 300)
    if 10_000 in at and "plain_mesa_per_array" in at[10_000]:
        r = at[10_000]
        line(
            f"≥ 1,000× a plain Mesa model at 10⁴: {r['plain_mesa_per_array']:,.0f}×", r["plain_mesa_per_array"] >= 1000
        )
    limits = {1_000_000: (10, 1024), 10_000_000: (60, 4096)}
    for w in whole:
        if w["n"] in limits and w["periods"] == 100:
            secs, mb = limits[w["n"]]
            line(
                f"{w['n']:,} organisations × 100 periods, whole command ≤ {secs} s and ≤ {mb / 1024:g} GB: "
                f"{w['wall_s']:.1f} s, {w['peak_mb']:,.0f} MB (build {w['split']['build_s']:.1f} s, "
                f"run {w['split']['run_s']:.1f} s)",
                w["wall_s"] <= secs and w["peak_mb"] <= mb,
            )
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="*", default=[1_000, 10_000, 100_000, 1_000_000])
    ap.add_argument("--periods", type=int, default=50)
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--mesa-up-to", type=int, default=10_000, help="largest N the project's Mesa model runs at")
    ap.add_argument("--plain-up-to", type=int, default=10_000, help="largest N the plain Mesa model runs at")
    ap.add_argument(
        "--whole",
        type=int,
        nargs="*",
        default=[1_000_000, 10_000_000],
        help="N of the whole-command runs (100 periods); none to skip",
    )
    ap.add_argument("--whole-periods", type=int, default=100)
    ap.add_argument("--out", type=Path, default=ROOT / "benchmarks" / "results" / "engines.md")
    args = ap.parse_args(argv)
    command = "python benchmarks/engines.py" + (" " + " ".join(argv if argv is not None else sys.argv[1:])).rstrip()
    cold = cold_and_warm()
    rows = compare_engines(args.sizes, args.periods, args.repeats, args.mesa_up_to, args.plain_up_to)
    whole = [whole_command(n, args.whole_periods) for n in args.whole]
    text = report(rows, cold, whole, command.strip())
    args.out.parent.mkdir(parents=True, exist_ok=True)
    tmp = args.out.with_suffix(".tmp")
    tmp.write_text(text, encoding="utf-8")
    tmp.replace(args.out)
    print(text)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
