"""Benchmark: every seeding strategy at N = 1,000 and 10,000, and the centralities against networkx.

Run with ``make bench`` (or ``python benchmarks/seeding.py``). Writes
``benchmarks/results/seeding.md``: the machine, date and versions, then

1. seconds per strategy (``womlab.choose_seeds``, budget 10) on the invented benchmark
   scenario (a clustered regional network, mean degree 10, 8 regions, within-region
   share 0.85; share rule), median of several calls after one call that is not counted
   (compilation); ``greedy`` with its default settings (20 runs per evaluation, 100
   candidates) through the registered engine, once;
2. the centralities side by side in this one process, on the same network: womlab's
   compiled code on the CSR against networkx (and python-igraph where it is installed):
   PageRank, exact betweenness at N = 1,000, sampled betweenness (500 sources) at
   N = 10,000, k-cores; with the ratio networkx / womlab.

Timings on a shared machine are noisy; the ratios measured side by side are what to read.
"""

from __future__ import annotations

import argparse
import datetime as dt
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "src"))
sys.path.insert(0, str(ROOT / "benchmarks"))

import networkx as nx  # noqa: E402
from about import machine, versions  # noqa: E402

from womlab import Scenario, build_network, choose_seeds  # noqa: E402
from womlab.seeding import STRATEGIES, betweenness, core_numbers, pagerank_values  # noqa: E402


def scenario(n: int) -> Scenario:
    """The benchmark's invented scenario."""
    return Scenario.from_dict(
        {
            "name": "seeding benchmark (invented)",
            "seed": 5,
            "market": {"organisations": n, "regions": 8},
            "network": {"kind": "regional", "mean_degree": 10, "within_region_share": 0.85},
            "adoption": {
                "rule": "share",
                "external": 0.002,
                "word_of_mouth": 0.4,
                "satisfied_share": 0.7,
                "talkers_per_customer": 2,
            },
            "run": {"periods": 30},
            "seeding": {"budget": 10},
        }
    )


def _median_time(fn, repeats: int) -> float:
    fn()  # compilation and caches, not counted
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def strategies(sizes: list[int], repeats: int, greedy_sizes: list[int]) -> list[dict]:
    rows = []
    for n in sizes:
        s = scenario(n)
        net = build_network(s, np.random.default_rng(1))
        for name in sorted(STRATEGIES):
            if name == "listed":
                continue  # the user's own ids: nothing to compute
            if name == "greedy":
                if n not in greedy_sizes:
                    continue
                t0 = time.perf_counter()
                choose_seeds(name, net, 10, np.random.default_rng(2), scenario=s)
                seconds = time.perf_counter() - t0
                calls = 1
            else:
                seconds = _median_time(
                    lambda: choose_seeds(name, net, 10, np.random.default_rng(2), scenario=s), repeats
                )
                calls = repeats
            rows.append({"n": n, "strategy": name, "seconds": seconds, "calls": calls})
            print(rows[-1], flush=True)
    return rows


def centralities(sizes: list[int], repeats: int, nx_betweenness_up_to: int, betweenness_up_to: int) -> list[dict]:
    try:
        import igraph
    except ImportError:
        igraph = None
    rows = []
    for n in sizes:
        net = build_network(scenario(n), np.random.default_rng(1))
        g = net.to_networkx()
        ig = igraph.Graph(n=net.n, edges=list(g.edges())) if igraph is not None else None
        rng = np.random.default_rng(3)
        sources = rng.choice(n, size=min(500, n), replace=False) if n > 3000 else None
        k = None if sources is None else sources.size
        cases = {
            "pagerank": (
                lambda: pagerank_values(net),
                lambda: nx.pagerank(g, alpha=0.85, tol=1e-10),
                (lambda: ig.pagerank(damping=0.85)) if ig else None,
            ),
            ("betweenness, exact" if k is None else f"betweenness, {k} sources"): (
                lambda: betweenness(net, sources),
                lambda: nx.betweenness_centrality(g, k=k, seed=np.random.default_rng(4)),
                (lambda: ig.betweenness(sources=None if sources is None else sources.tolist())) if ig else None,
            ),
            "k-cores": (lambda: core_numbers(net), lambda: nx.core_number(g), (lambda: ig.coreness()) if ig else None),
        }
        for what, (ours, ref, other) in cases.items():
            if what.startswith("betweenness") and n > betweenness_up_to:
                continue  # minutes for every library at this size; the strategies table has it at 10,000
            slow = what.startswith("betweenness") and n > nx_betweenness_up_to  # networkx takes minutes
            row = {
                "n": n,
                "what": what,
                "womlab": _median_time(ours, repeats),
                "networkx": None if slow else _median_time(ref, max(1, repeats // 3) if n > 3000 else repeats),
            }
            row["igraph"] = _median_time(other, repeats) if other is not None else None
            rows.append(row)
            print(row, flush=True)
    return rows


def report(strategy_rows: list[dict], central_rows: list[dict], command: str) -> str:
    lines = [
        "# Seeding benchmark",
        "",
        f"- date: {dt.datetime.now(dt.timezone.utc).strftime('%Y-%m-%d %H:%M UTC')}",
        f"- machine: {machine()}",
        "- versions: "
        + ", ".join(
            f"{k} {v}" for k, v in versions(("numpy", "scipy", "networkx", "numba", "igraph", "womlab")).items()
        ),
        f"- command: `{command}`",
        "- scenario (invented): clustered regional network, mean degree 10, 8 regions, within-region share 0.85, "
        "rewiring 0.1; share rule, p = 0.002, q = 0.4, satisfied share 0.7, 2 talkers, 30 periods; budget 10.",
        "- the machine was shared with other work while this ran: seconds are noisy, ratios measured side by side "
        "are what to read.",
        "",
        "## Each strategy (`choose_seeds`)",
        "",
        "Median seconds of the calls after one that is not counted; greedy, at the sizes --greedy-sizes "
        "names, once with its default settings (20 Monte Carlo runs per evaluation, 100 candidates) through the "
        "registered engine.",
        "",
        "| strategy | " + " | ".join(f"N = {n:,} s" for n in sorted({r["n"] for r in strategy_rows})) + " |",
        "| --- |" + " ---: |" * len({r["n"] for r in strategy_rows}),
    ]
    sizes = sorted({r["n"] for r in strategy_rows})
    for name in sorted({r["strategy"] for r in strategy_rows}):
        cells = []
        for n in sizes:
            hit = [r for r in strategy_rows if r["n"] == n and r["strategy"] == name]
            cells.append(f"{hit[0]['seconds']:.4g}" if hit else "—")
        lines.append(f"| {name} | " + " | ".join(cells) + " |")
    lines += [
        "",
        "## Centralities side by side",
        "",
        "womlab: compiled on the CSR (`womlab.seeding.centrality`); networkx on the same network as a "
        "networkx graph (conversion not counted; its betweenness is timed only up to the N the command "
        "line allows, as it takes minutes); igraph where installed (graph built beforehand).",
        "",
        "| N | centrality | womlab s | networkx s | igraph s | networkx / womlab |",
        "| ---: | --- | ---: | ---: | ---: | ---: |",
    ]
    for r in central_rows:
        ig = f"{r['igraph']:.4g}" if r["igraph"] is not None else "not installed"
        ref = "not run" if r["networkx"] is None else f"{r['networkx']:.4g}"
        ratio = "—" if r["networkx"] is None else f"{r['networkx'] / r['womlab']:,.0f}×"
        lines.append(f"| {r['n']:,} | {r['what']} | {r['womlab']:.4g} | {ref} | {ig} | {ratio} |")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[1_000, 10_000])
    ap.add_argument(
        "--greedy-sizes",
        type=int,
        nargs="*",
        default=[1_000],
        help="sizes at which greedy runs (default 1,000: at 10,000 it takes minutes)",
    )
    ap.add_argument("--central-sizes", type=int, nargs="+", default=[1_000, 10_000, 100_000])
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument(
        "--betweenness-up-to",
        type=int,
        default=10_000,
        help="largest N at which betweenness is timed in the side-by-side table",
    )
    ap.add_argument(
        "--networkx-betweenness-up-to",
        type=int,
        default=10_000,
        help="largest N at which networkx's betweenness is timed (it takes minutes at 10,000)",
    )
    ap.add_argument("--out", type=Path, default=ROOT / "benchmarks" / "results" / "seeding.md")
    args = ap.parse_args(argv)
    command = "python benchmarks/seeding.py" + (" " + " ".join(argv if argv is not None else sys.argv[1:])).rstrip()
    rows = strategies(args.sizes, args.repeats, args.greedy_sizes)
    central = centralities(args.central_sizes, args.repeats, args.networkx_betweenness_up_to, args.betweenness_up_to)
    text = report(rows, central, command.strip())
    args.out.parent.mkdir(parents=True, exist_ok=True)
    tmp = args.out.with_suffix(".tmp")
    tmp.write_text(text, encoding="utf-8")
    tmp.replace(args.out)
    print(text)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
