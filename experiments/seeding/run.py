"""Seeding strategies on four network kinds, under two rules, with and without external influence.

The experiment is the sweep in sweep.toml (invented scenario): network kind x adoption rule
(with its word of mouth) x external influence, and at every point the paired seeding study
(``[sweep] study = "seeding"``: every strategy of [study] on the same network and the same
random draws per replicate, lift against random seeding with paired-bootstrap intervals).
This script runs (or resumes) that sweep and adds what a sweep cannot: one table of every
strategy at every point, and the figure.

Writes, into --out: seeding_experiment.csv (one row per network kind x rule x external x
strategy: discounted customer-periods and customers with 95 % intervals, lift as ratio and
difference with their intervals, Wilcoxon p-value, paired and unpaired half-widths) and
seeding_experiment.png; the sweep's own results folder (runs.parquet, summary.csv,
report.html) is --sweep.

    python experiments/seeding/run.py [--out DIR] [--sweep DIR] [--jobs N] [--plot-only]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.ticker import FixedFormatter, FixedLocator, NullFormatter

import womlab
from womlab.store import atomic_write

HERE = Path(__file__).resolve().parent
KINDS = ("random", "small_world", "regional_blocks", "scale_free")
TICKS = (0.25, 0.5, 0.75, 1, 1.5, 2, 3, 4)
COLOURS = {"random": "#555555", "small_world": "#1f5f8b", "regional_blocks": "#2e8b57", "scale_free": "#c0392b"}
PER_STRATEGY = ("customers", "t50", "peak_period", "customer_periods")
LIFT = ("lift_ratio", "lift_diff", "wilcoxon_p", "paired_halfwidth", "unpaired_halfwidth")


def table(summary: pd.DataFrame, strategies: tuple[str, ...]) -> pd.DataFrame:
    """One row per point and strategy from the sweep's summary."""
    rows = []
    keys = ["network.kind", "adoption.rule", "adoption.word_of_mouth", "adoption.external"]
    for (kind, rule, q, external), g in summary.groupby(keys, sort=False):
        g = g.set_index("outcome")
        for s in strategies:
            row = {
                "network": kind,
                "rule": rule,
                "word_of_mouth": q,
                "external": external,
                "strategy": s,
                "replicates": int(g["runs"].iloc[0]),
            }
            for name in PER_STRATEGY:
                row[f"{name}_mean"], row[f"{name}_low"], row[f"{name}_high"] = g.loc[
                    f"{name}[{s}]", ["estimate", "low", "high"]
                ]
            for name in LIFT:
                key = f"{name}[{s}]"
                if s == "random":
                    row[name] = {"lift_ratio": 1.0, "lift_diff": 0.0, "wilcoxon_p": 1.0}.get(name, np.nan)
                else:
                    row[name] = g.loc[key, "estimate"]
                if name in ("lift_ratio", "lift_diff"):
                    row[f"{name}_low"] = row[name] if s == "random" else g.loc[key, "low"]
                    row[f"{name}_high"] = row[name] if s == "random" else g.loc[key, "high"]
            rows.append(row)
    return pd.DataFrame(rows)


def figure(table: pd.DataFrame, base: womlab.Scenario) -> Figure:
    strategies = [s for s in table["strategy"].unique() if s != "random"]
    rules = dict(zip(table["rule"], table["word_of_mouth"]))
    externals = sorted(table["external"].unique())
    fig = Figure(figsize=(12, 8.5), layout="constrained")
    axes = fig.subplots(len(rules), len(externals), sharex=True, sharey=True)
    offsets = np.linspace(-0.3, 0.3, len(KINDS))
    for i, rule in enumerate(rules):
        for j, external in enumerate(externals):
            ax = axes[i, j]
            sub = table[(table["rule"] == rule) & (table["external"] == external)]
            for k, kind in enumerate(KINDS):
                rows = sub[sub["network"] == kind].set_index("strategy").loc[strategies]
                y = np.arange(len(strategies)) + offsets[k]
                ax.hlines(y, rows["lift_ratio_low"], rows["lift_ratio_high"], color=COLOURS[kind], lw=1.8)
                ax.plot(
                    rows["lift_ratio"],
                    y,
                    "o",
                    color=COLOURS[kind],
                    ms=4.5,
                    label=kind.replace("_", "-") if (i, j) == (0, 0) else None,
                )
            ax.axvline(1.0, color="#555555", lw=1, ls="--")
            ax.set_xscale("log")
            ax.xaxis.set_major_locator(FixedLocator(TICKS))
            ax.xaxis.set_major_formatter(FixedFormatter([f"{t:g}" for t in TICKS]))
            ax.xaxis.set_minor_formatter(NullFormatter())
            ax.set_yticks(np.arange(len(strategies)), strategies)
            ax.grid(alpha=0.3, axis="x")
            ax.set_title(f"rule = {rule} (q = {rules[rule]:g}), external p = {external:g}", fontsize=10)
            if i == len(rules) - 1:
                ax.set_xlabel(
                    "lift vs random seeding: ratio of mean discounted customer-periods\n"
                    "(95 % paired-bootstrap interval; log scale)"
                )
    axes[0, 0].invert_yaxis()  # once: the axes share y, so each call would flip all of them
    fig.legend(
        *axes[0, 0].get_legend_handles_labels(),
        loc="outside lower center",
        ncols=len(KINDS),
        fontsize=9,
        frameon=False,
        title="network (dot: lift, line: 95 % interval)",
        title_fontsize=9,
    )
    st = base.study
    fig.suptitle(
        f"{base.name}: N = {base.market.organisations}, mean degree {base.network.mean_degree:g}, "
        f"budget {base.n_initial}, {base.sweep.replicates} paired replicates, discount "
        f"{st.discount_rate:g}/period",
        fontsize=11,
    )
    return fig


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--out",
        default="out/experiments/seeding",
        help="folder for seeding_experiment.csv and .png (default %(default)s; the tracked results "
        "are experiments/seeding/results)",
    )
    parser.add_argument(
        "--sweep",
        default="out/experiments/seeding-sweep",
        help="the sweep's results folder (default %(default)s); rerun to resume",
    )
    parser.add_argument("--jobs", type=int, default=None, help="worker processes (default run.jobs)")
    parser.add_argument(
        "--plot-only", action="store_true", help="redraw the figure from --out's seeding_experiment.csv"
    )
    args = parser.parse_args()
    out = Path(args.out)
    start = time.perf_counter()
    base = womlab.load_scenario(HERE / "sweep.toml")
    if args.plot_only:
        result = pd.read_csv(out / "seeding_experiment.csv")
    else:
        done = womlab.run_sweep(base, args.sweep, args.jobs)
        print(
            f"sweep: {done.points} points x {base.sweep.replicates} replicates, {done.ran} run now "
            f"({done.backend}), {done.failures} failed; {args.sweep}/report.html"
        )
        result = table(womlab.sweep_summary(args.sweep), base.study.compared)
        atomic_write(out / "seeding_experiment.csv", lambda p: result.to_csv(p, index=False, float_format="%.6g"))
    fig = figure(result, base)
    atomic_write(out / "seeding_experiment.png", lambda p: fig.savefig(p, dpi=120, format="png"))
    print(f"{time.perf_counter() - start:.0f} s; wrote {out}/seeding_experiment.csv and seeding_experiment.png")


if __name__ == "__main__":
    main()
