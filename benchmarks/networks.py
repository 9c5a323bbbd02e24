"""Benchmark: building each network kind into arrays, time and peak memory, N = 10³ … 10⁷.

Run with ``make bench`` (or ``python benchmarks/networks.py``). Writes
``benchmarks/results/networks.md``: the machine, date and versions, then one row per kind
and N with

- build seconds: the median of several builds at N ≤ 10⁵ (one process, seeds 0, 1, …),
  one build at larger N;
- the network's own size: ``indptr``, ``indices`` and ``region`` in bytes;
- the build's peak memory above what the process held before it, and that peak as a
  multiple of the network's own size. Each (kind, N) is measured in a fresh subprocess
  that imports womlab and builds once at N = 1,000 first (so compilation and imports are
  not counted), then reads its resident set (``/proc/self/statm``) and, after the build,
  its peak resident set (``getrusage`` ``ru_maxrss``). The network is kept while measured,
  so the multiple is at least 1.

With ``--previous`` (on by default up to N = 10⁶), each kind that existed before the compiled
build is also built by the previous builders (kept as the test oracle in
``tests/networks/previous_builders.py``) in the same way, in its own subprocess, and the table
gives the ratio of the two.

And, with ``--whole N``, the whole command ``womlab run`` at that N (small world, mean
degree 10, 100 periods, one replicate, build + run + write) as a subprocess: wall time and
peak resident memory.

Timings on a shared machine are noisy; run it when the machine is quiet and read the
medians.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "benchmarks"))

from about import machine, versions  # noqa: E402

#: the kinds and their structure: mean degree 10 everywhere, 8 regions where a kind uses them
KINDS = {
    "ring": {"kind": "ring", "mean_degree": 10},
    "small_world": {"kind": "small_world", "mean_degree": 10, "rewiring": 0.1},
    "random": {"kind": "random", "mean_degree": 10},
    "regular": {"kind": "regular", "mean_degree": 10},
    "regional": {"kind": "regional", "mean_degree": 10, "within_region_share": 0.85},
    "regional_blocks": {"kind": "regional_blocks", "mean_degree": 10, "within_region_share": 0.85},
    "scale_free": {"kind": "scale_free", "mean_degree": 10},
}

CHILD = r"""
import json, resource, sys, time
sys.path.insert(0, {src!r})
sys.path.insert(0, {tests!r})
import numpy as np
from womlab import Scenario, build_network
if {previous!r}:
    import previous_builders as old
    spec = {network!r}
    kind = {{"regional_blocks": "regional"}}.get(spec["kind"], spec["kind"])
    def build_network(s, rng):
        n, k = s.market.organisations, s.network.mean_degree
        if kind == "regional":
            return old.regional(n, k, s.market.regions, s.network.within_region_share, rng)
        if kind == "small_world":
            return old.small_world(n, int(k), s.network.rewiring, rng, regions=s.market.regions)
        if kind in ("ring", "regular", "scale_free"):
            return getattr(old, kind)(n, int(k), rng, regions=s.market.regions)
        return getattr(old, kind)(n, k, rng, regions=s.market.regions)

def scenario(n):
    return Scenario.from_dict({{"seed": 1, "market": {{"organisations": n, "regions": 8}}, "network": {network!r}}})

build_network(scenario(1000), np.random.default_rng(0))  # imports and compilation, not measured
page = __import__("os").sysconf("SC_PAGE_SIZE")
def rss():
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1]) * page
s = scenario({n})
times = []
before = rss()
for r in range({repeats}):
    t0 = time.perf_counter()
    net = build_network(s, np.random.default_rng(r))
    times.append(time.perf_counter() - t0)
    if r + 1 < {repeats}:
        del net
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
own = net.indptr.nbytes + net.indices.nbytes + net.region.nbytes
print(json.dumps({{"seconds": sorted(times)[len(times) // 2], "ties": net.ties, "own": own,
                  "peak_above": max(peak - before, 0)}}))
"""


#: kinds the previous builders had (their regional was today's regional_blocks)
PREVIOUS = ("ring", "small_world", "random", "regular", "regional_blocks", "scale_free")


def measure(kind: str, n: int, repeats: int, previous: bool = False) -> dict:
    code = CHILD.format(
        src=str(ROOT / "src"),
        tests=str(ROOT / "tests" / "networks"),
        network=KINDS[kind],
        n=n,
        repeats=repeats,
        previous=previous,
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    if done.returncode != 0:
        return {"error": done.stderr.strip().splitlines()[-1] if done.stderr.strip() else f"exit {done.returncode}"}
    return json.loads(done.stdout.strip().splitlines()[-1])


def whole_command(n: int, periods: int) -> dict:
    """``womlab run`` on a small world of n organisations, one replicate, as a subprocess."""
    with tempfile.TemporaryDirectory() as tmp:
        config = Path(tmp) / "big.toml"
        config.write_text(
            'name = "benchmark, whole command (invented)"\nseed = 1\n'
            f"[market]\norganisations = {n}\ninitial_share = 0.001\n"
            '[network]\nkind = "small_world"\nmean_degree = 10\nrewiring = 0.1\n'
            '[adoption]\nrule = "share"\nexternal = 0.01\nword_of_mouth = 0.4\nsatisfied_share = 0.7\n'
            f"talkers_per_customer = 2\n[run]\nperiods = {periods}\nreplicates = 1\njobs = 1\n",
            encoding="utf-8",
        )
        womlab = Path(sys.executable).with_name("womlab")
        command = [str(womlab), "run", str(config), "--out", str(Path(tmp) / "out")]
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        done = subprocess.run(command, capture_output=True, text=True)
        wall = time.perf_counter() - t0
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if done.returncode != 0:
        return {"error": done.stderr.strip().splitlines()[-1] if done.stderr.strip() else f"exit {done.returncode}"}
    return {
        "wall_s": wall,
        "cpu_s": (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime),
        "system_s": after.ru_stime - before.ru_stime,
        "peak_mb": after.ru_maxrss / 1024,
    }


def _mb(b: float) -> str:
    return f"{b / 2**20:,.1f}"


def report(rows: list[dict], whole: dict | None, command: str, whole_n: int, periods: int) -> str:
    v = versions(("numpy", "scipy", "networkx", "numba", "womlab"))
    lines = [
        "# Network build benchmark",
        "",
        f"- date: {dt.datetime.now(dt.timezone.utc).strftime('%Y-%m-%d %H:%M UTC')}",
        f"- machine: {machine()}",
        "- versions: " + ", ".join(f"{k} {val}" for k, val in v.items()),
        f"- command: `{command}`",
        "- every kind at mean degree 10 (8 regions where it has them; within-region share 0.85, rewiring 0.1); "
        "build s is the median of the builds (seeds 0, 1, …) in one process, after a build at N = 1,000 that "
        "is not counted (imports, compilation).",
        "- peak above is the process's peak resident set during the builds minus its resident set before them; "
        "the network is held while measured, so the multiple of its own size is at least 1.",
        "- the machine was shared with other work while this ran: seconds are noisy.",
        "",
        "Before: the previous builders (int64 keys, global sorts, choice without replacement), measured the "
        "same way in their own subprocess right after; their `regional` is today's `regional_blocks`.",
        "",
        "| kind | N | ties | builds | build s | network MB | peak above MB | peak / network | before: build s | "
        "before: peak / network | before / now, time |",
        "| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |",
    ]
    for r in rows:
        if "error" in r:
            lines.append(f"| {r['kind']} | {r['n']:,} | — | — | failed: {r['error']} | | | | | | |")
            continue
        b = r.get("before")
        before = (
            "| — | — | — |"
            if not b or "error" in b
            else f"| {b['seconds']:.4g} | {b['peak_above'] / b['own']:.2f}× | {b['seconds'] / r['seconds']:.1f}× |"
        )
        lines.append(
            f"| {r['kind']} | {r['n']:,} | {r['ties']:,} | {r['repeats']} | {r['seconds']:.4g} | {_mb(r['own'])} | "
            f"{_mb(r['peak_above'])} | {r['peak_above'] / r['own']:.2f}× " + before
        )
    if whole is not None:
        lines += [
            "",
            f"## Whole command at N = {whole_n:,}",
            "",
            f"`womlab run` on a small world (mean degree 10, rewiring 0.1), {periods} periods, one replicate, "
            "build + run + write, as a subprocess; peak is its peak resident set (getrusage of children).",
            "",
        ]
        if "error" in whole:
            lines.append(f"failed: {whole['error']}")
        else:
            lines += [
                "| wall s | CPU s | of which system s | peak memory MB |",
                "| ---: | ---: | ---: | ---: |",
                f"| {whole['wall_s']:.1f} | {whole['cpu_s']:.1f} | {whole['system_s']:.1f} | {whole['peak_mb']:,.0f} |",
            ]
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--kinds", nargs="+", default=list(KINDS), choices=list(KINDS))
    ap.add_argument("--sizes", type=int, nargs="+", default=[1_000, 10_000, 100_000, 1_000_000])
    ap.add_argument("--large", type=int, default=10_000_000, help="N also built for --large-kinds; 0 skips it")
    ap.add_argument("--large-kinds", nargs="+", default=["small_world", "random", "regional"], choices=list(KINDS))
    ap.add_argument("--repeats", type=int, default=5, help="builds per (kind, N) up to N = 100,000")
    ap.add_argument(
        "--previous-up-to",
        type=int,
        default=1_000_000,
        help="largest N at which the previous builders are measured too (0: never)",
    )
    ap.add_argument("--whole", type=int, default=10_000_000, help="N of the whole-command run; 0 skips it")
    ap.add_argument("--whole-periods", type=int, default=100)
    ap.add_argument("--out", type=Path, default=ROOT / "benchmarks" / "results" / "networks.md")
    args = ap.parse_args(argv)
    command = "python benchmarks/networks.py" + (" " + " ".join(argv if argv is not None else sys.argv[1:])).rstrip()
    plan = [(k, n) for n in args.sizes for k in args.kinds]
    if args.large:
        plan += [(k, args.large) for k in args.large_kinds]
    rows = []
    for kind, n in plan:
        repeats = args.repeats if n <= 100_000 else 1
        row = {"kind": kind, "n": n, "repeats": repeats, **measure(kind, n, repeats)}
        if kind in PREVIOUS and n <= args.previous_up_to:
            row["before"] = measure(kind, n, repeats, previous=True)
        print(json.dumps(row), flush=True)
        rows.append(row)
    whole = whole_command(args.whole, args.whole_periods) if args.whole else None
    if whole is not None:
        print("whole", json.dumps(whole), flush=True)
    text = report(rows, whole, command.strip(), args.whole, args.whole_periods)
    args.out.parent.mkdir(parents=True, exist_ok=True)
    tmp = args.out.with_suffix(".tmp")
    tmp.write_text(text, encoding="utf-8")
    tmp.replace(args.out)
    print(text)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
