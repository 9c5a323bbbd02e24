"""Benchmark: the Mesa model, the array engine and the event engine, side by side.

Run with ``make bench`` (or ``python benchmarks/engines.py``). Writes
``benchmarks/results/engines.md``: the machine, date and versions, then

1. seconds per run and organisation-steps per second of each engine (Mesa included, the
   full horizon at every N unless ``--mesa-periods-large`` asks for an estimate) on the same
   invented scenario (small_world, mean degree 10, rewiring 0.1, 50 periods) at
   N = 1,000, 10,000 and 100,000, with their ratios, all measured in this one process,
   interleaved, best of several repeats;
2. each engine against the floor: one CSR sparse product (float32) per period on the
   same matrix;
3. N = 1,000,000 (mean degree 10, 100 periods): network build, one array-engine run and
   one event-engine run, each in a fresh subprocess, with wall time and the process's
   peak resident memory (``resource.getrusage``).

Timings on a shared machine are noisy; ratios measured side by side are what to read.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import platform
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))

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
            "adoption": {"rule": "share", "external": 0.01, "word_of_mouth": 0.4, "satisfied_share": 0.7,
                         "talkers_per_customer": 2},
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


def versions() -> dict[str, str]:
    out = {"python": platform.python_version()}
    for name in ("numpy", "scipy", "networkx", "mesa", "womlab"):
        try:
            out[name] = __import__(name).__version__
        except Exception:  # noqa: BLE001 - a missing library is reported, not fatal
            out[name] = "not installed"
    return out


def machine() -> str:
    cpu = platform.processor() or platform.machine()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return f"{cpu}, {os.cpu_count()} logical cores, {platform.system()} {platform.release()}"


def compare_engines(sizes: list[int], periods: int, mesa_periods_large: int, repeats: int) -> list[dict]:
    rows = []
    have_mesa = True
    try:
        import womlab.dynamics.mesa_model  # noqa: F401
    except ImportError:
        have_mesa = False
    for n in sizes:
        s = scenario(n, periods)
        start = time.perf_counter()
        net = build_network(s, np.random.default_rng(11))
        build = time.perf_counter() - start
        init = _initial(n, s.market.n_initial)
        reps = repeats if n <= 10_000 else max(1, repeats // 2)
        row = {"n": n, "periods": periods, "build_s": build}
        row["floor_s"] = floor_seconds(net, periods, reps)
        row["array_s"] = _time(lambda: ENGINES["array"](s, net, init, np.random.default_rng(3)), reps)
        sc = scenario(n, periods, "continuous")
        row["events_s"] = _time(lambda: ENGINES["events"](sc, net, init, np.random.default_rng(3)), reps)
        if have_mesa:
            def mesa(horizon: int, times: int) -> float:
                sm = scenario(n, horizon).replace("run.engine", "mesa")
                return _time(lambda: ENGINES["mesa"](sm, net, init, np.random.default_rng(3)), times)

            if n <= 10_000 or not mesa_periods_large:
                row["mesa_periods"] = periods
                row["mesa_s"] = mesa(periods, 1 if n > 1000 else reps)
            else:
                # estimated: runs of 2 and of mesa_periods_large periods give the set-up cost and the
                # cost per period (first periods, same draws); the full horizon is set-up + periods x that
                short, long_ = mesa(2, 1), mesa(mesa_periods_large, 1)
                per_period = (long_ - short) / (mesa_periods_large - 2)
                row["mesa_periods"] = mesa_periods_large
                row["mesa_setup_s"] = short - 2 * per_period
                row["mesa_s"] = row["mesa_setup_s"] + periods * per_period
        rows.append(row)
        print(json.dumps(row), flush=True)
    return rows


MILLION_CHILD = r"""
import json, resource, sys, time
import numpy as np
sys.path.insert(0, {src!r})
from womlab import build_network
from womlab.dynamics import ENGINES
sys.path.insert(0, {bench!r})
from engines import scenario, _initial, floor_seconds
what = {what!r}
s = scenario({n}, {periods}, "continuous" if what == "events" else "discrete")
t0 = time.perf_counter()
net = build_network(s, np.random.default_rng(11))
out = {{"build_s": time.perf_counter() - t0}}
init = _initial(net.n, s.market.n_initial)
if what == "floor":
    out["run_s"] = floor_seconds(net, {periods}, 1)
elif what in ("array", "events"):
    t0 = time.perf_counter()
    r = ENGINES[what](s, net, init, np.random.default_rng(3))
    out["run_s"] = time.perf_counter() - t0
    out["final_share"] = float(r.share[-1])
out["peak_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps(out))
"""


def million(n: int, periods: int) -> dict[str, dict]:
    out = {}
    for what in ("build", "floor", "array", "events"):
        code = MILLION_CHILD.format(src=str(ROOT / "src"), bench=str(ROOT / "benchmarks"), what=what, n=n, periods=periods)
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        out[what] = json.loads(done.stdout.strip().splitlines()[-1])
        print(what, json.dumps(out[what]), flush=True)
    return out


def _fmt(x: float) -> str:
    if x >= 100:
        return f"{x:,.0f}"
    if x >= 1:
        return f"{x:.2f}"
    return f"{x:.4f}"


def _rate(n: int, periods: int, seconds: float) -> str:
    return f"{n * periods / seconds:.2e}"


def report(rows: list[dict], big: dict | None, command: str, big_n: int, big_periods: int) -> str:
    v = versions()
    lines = [
        "# Engine benchmark",
        "",
        f"- date: {dt.datetime.now(dt.timezone.utc):%Y-%m-%d %H:%M} UTC",
        f"- machine: {machine()}",
        "- versions: " + ", ".join(f"{k} {val}" for k, val in v.items()),
        f"- command: `{command}`",
        "- scenario (invented): small_world, mean degree 10, rewiring 0.1, share rule, p = 0.01, q = 0.4, "
        "satisfied share 0.7, 2 talkers, 0.1 % initial customers; one run = one seeded replicate.",
        "- the machine was shared with other work while this ran: seconds are noisy, ratios measured side by "
        "side (interleaved, best of repeats) are what to read.",
        "",
        "## Engines side by side (50 periods)",
        "",
        "Seconds per run (network built once beforehand, not included) and organisation-steps per second "
        "(N × periods / seconds; for the event engine, the same N × periods it covers, with no steps at all). "
        "Floor: one float32 CSR sparse product per period on the same matrix.",
        "",
        "| N | build s | Mesa s | array s | event s | floor s | Mesa org-steps/s | array org-steps/s | event org-steps/s "
        "| Mesa / array | Mesa / event | array / floor | event / floor |",
        "| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |",
    ]
    notes = []
    for r in rows:
        n, p = r["n"], r["periods"]
        mesa = r.get("mesa_s")
        if mesa is not None and r["mesa_periods"] < p:
            notes.append(f"Mesa at N = {n:,} is an estimate: runs of 2 and {r['mesa_periods']} periods gave its set-up "
                         f"({r['mesa_setup_s']:.1f} s: agents and network space) and its cost per period, and the "
                         f"{p}-period figure is set-up + {p} × that (cost per period taken as constant).")
        mark = "*" if mesa is not None and r["mesa_periods"] < p else ""
        cells = [
            f"{n:,}",
            _fmt(r["build_s"]),
            (_fmt(mesa) + mark) if mesa is not None else "n/a",
            _fmt(r["array_s"]),
            _fmt(r["events_s"]),
            _fmt(r["floor_s"]),
            _rate(n, p, mesa) if mesa is not None else "n/a",
            _rate(n, p, r["array_s"]),
            _rate(n, p, r["events_s"]),
            f"{mesa / r['array_s']:,.0f}×" if mesa is not None else "n/a",
            f"{mesa / r['events_s']:,.0f}×" if mesa is not None else "n/a",
            f"{r['array_s'] / r['floor_s']:.2f}×",
            f"{r['events_s'] / r['floor_s']:.2f}×",
        ]
        lines.append("| " + " | ".join(cells) + " |")
    if notes:
        lines += [""] + [f"\\* {x}" for x in notes]
    if not any("mesa_s" in r for r in rows):
        lines += ["", "The Mesa model (womlab.dynamics.mesa_model) is not available in this checkout: its columns are n/a."]
    if big:
        lines += [
            "",
            f"## N = {big_n:,}, mean degree 10, {big_periods} periods",
            "",
            "Each line is a fresh subprocess that builds the network and then does one thing; peak memory is "
            "that process's peak resident set (getrusage ru_maxrss), build included.",
            "",
            "| step | wall s | peak memory MB |",
            "| --- | ---: | ---: |",
            f"| network build (small_world, arrays) | {_fmt(big['build']['build_s'])} | {big['build']['peak_mb']:,.0f} |",
            f"| floor: {big_periods} CSR sparse products | {_fmt(big['floor']['run_s'])} | {big['floor']['peak_mb']:,.0f} |",
            f"| array engine, one run | {_fmt(big['array']['run_s'])} | {big['array']['peak_mb']:,.0f} |",
            f"| event engine, one run | {_fmt(big['events']['run_s'])} | {big['events']['peak_mb']:,.0f} |",
        ]
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[1_000, 10_000, 100_000])
    ap.add_argument("--periods", type=int, default=50)
    ap.add_argument("--mesa-periods-large", type=int, default=0,
                    help="if > 2: above N = 10,000 Mesa runs 2 and this many periods and the full horizon is "
                         "extrapolated (default 0: Mesa runs the full horizon at every N)")
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--million", type=int, default=1_000_000, help="N of the large run; 0 skips it")
    ap.add_argument("--million-periods", type=int, default=100)
    ap.add_argument("--out", type=Path, default=ROOT / "benchmarks" / "results" / "engines.md")
    args = ap.parse_args(argv)
    command = "python benchmarks/engines.py" + (" " + " ".join(argv if argv is not None else sys.argv[1:])).rstrip()
    rows = compare_engines(args.sizes, args.periods, args.mesa_periods_large, args.repeats)
    big = million(args.million, args.million_periods) if args.million else None
    text = report(rows, big, command.strip(), args.million, args.million_periods)
    args.out.parent.mkdir(parents=True, exist_ok=True)
    tmp = args.out.with_suffix(".tmp")
    tmp.write_text(text, encoding="utf-8")
    tmp.replace(args.out)
    print(text)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
