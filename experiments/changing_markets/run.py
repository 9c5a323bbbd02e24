"""Changing markets: two segments, a region that opens later, a second product generation.

One invented market (4,000 organisations in four regions, the share rule, p = 0.01, q = 0.4,
satisfied share 0.6) in three variations, each set against its aggregate model:

    (a) two segments — a fifth of the market "influentials" (50 times the external influence,
        half a talker each), the rest "imitators" (no external influence) — on three network
        kinds: the dip between two peaks of new customers that Van den Bulte & Joshi (2007)
        describe, in the segment model and on each network;
    (b) region 3 (a quarter of the market) opening in period 5, 15 or 25 (regional network);
    (c) a second product generation (p = 0.02, q = 0.5, value 2 per period against 1) launched
        in period 8, 16 or 24 (random network): the portfolio's value against the launch period.

Writes results/table_a.csv, table_b.csv, table_c.csv, figure_a.png, figure_b.png, figure_c.png
and manifest.json into --out (default out/experiments/changing_markets; the README's tracked
copies are in experiments/changing_markets/results/, written only when asked):

    python experiments/changing_markets/run.py [--replicates 50] [--jobs 2] [--out DIR]
"""

from __future__ import annotations

import argparse
import json
import time
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

import womlab
from womlab.aggregate import mapped_segments, segment_curves
from womlab.store import atomic_write, versions

BASE = {
    "name": "changing markets (invented)",
    "seed": 20261203,
    "market": {"organisations": 4000, "initial_customers": 0, "regions": 4},
    "network": {"kind": "random", "mean_degree": 8, "rewiring": 0.1, "within_region_share": 0.85},
    "adoption": {"rule": "share", "external": 0.01, "word_of_mouth": 0.4, "satisfied_share": 0.6},
    "run": {"periods": 40},
}
SEGMENTS = {
    "influentials": {"share": 0.2, "external": 50.0, "talkers": 0.5},
    "imitators": {"share": 0.8, "external": 0.0},
}
KINDS = ("random", "small_world", "regional")
OPENINGS = (5, 15, 25)
LAUNCHES = (8, 16, 24)


def _scenario(**changes) -> womlab.Scenario:
    data = json.loads(json.dumps(BASE))
    for key, value in changes.items():
        if isinstance(value, dict) and key in data:
            data[key].update(value)
        else:
            data[key] = value
    return womlab.Scenario.from_dict(data)


def _dip(new: np.ndarray) -> tuple[float, int, int]:
    """Depth of the dip (1 − trough / first peak) between the first two peaks of a new-customer curve,
    with the periods of the trough and the second peak; (0, -1, -1) when there is one peak only."""
    peaks = [
        t for t in range(len(new)) if (t == 0 or new[t] > new[t - 1]) and (t == len(new) - 1 or new[t] >= new[t + 1])
    ]
    if len(peaks) < 2:
        return 0.0, -1, -1
    a, b = peaks[0], max(peaks[1:], key=lambda t: new[t])
    trough = a + int(np.argmin(new[a : b + 1]))
    return float(1 - new[trough] / new[a]), trough + 1, b + 1  # periods (new[t] is period t + 1)


def part_a(replicates: int, jobs: int) -> tuple[pd.DataFrame, dict]:
    rows, curves = [], {}
    for kind in KINDS:
        s = _scenario(network={"kind": kind}, segments=SEGMENTS)
        batch = womlab.run_replicates(s, replicates, jobs=jobs)
        new = np.diff(batch.shares(), axis=1).mean(axis=0)
        model = np.diff(segment_curves(s) @ mapped_segments(s).weights)
        curves[kind] = (new, model)
        for what, curve in (("network mean", new), ("segment model", model)):
            depth, trough, second = _dip(curve)
            rows.append(
                {
                    "network": kind,
                    "curve": what,
                    "first_peak": float(curve[0]),
                    "dip_depth": depth,
                    "trough_period": trough,
                    "second_peak_period": second,
                    "second_peak": float(curve[second - 1]) if second > 0 else np.nan,
                    "rise_after_trough": float(curve[second - 1] / curve[trough - 1] - 1) if second > 0 else 0.0,
                }
            )
    return pd.DataFrame(rows), curves


def part_b(replicates: int, jobs: int) -> tuple[pd.DataFrame, dict]:
    rows, curves = [], {}
    for opens in (None, *OPENINGS):
        market = {"opens": [{"region": 3, "period": opens}]} if opens else {}
        s = _scenario(network={"kind": "regional"}, market=market)
        batch = womlab.run_replicates(s, replicates, jobs=jobs)
        final = batch.shares()
        current = np.vstack([r.share_of_current_market for r in batch.runs])
        aggregate = batch.aggregate()
        curves[opens] = (np.median(final, axis=0), np.median(current, axis=0), aggregate)
        t50 = womlab.replicate_metrics(final)["t50"]
        rows.append(
            {
                "region_3_opens": opens or 0,
                "t50_final_market_median": float(np.median(t50)),
                "share_at_30_median": float(np.median(final[:, 30])),
                "share_at_30_aggregate": float(aggregate[30]),
                "share_of_current_market_at_opening_median": float(np.median(current[:, opens])) if opens else np.nan,
            }
        )
    return pd.DataFrame(rows), curves


def part_c(replicates: int, jobs: int) -> tuple[pd.DataFrame, dict]:
    rows, curves = [], {}
    for launch in LAUNCHES:
        s = _scenario(
            product=[{"launch": launch, "external": 0.02, "word_of_mouth": 0.5, "value_per_period": 2.0}],
            market={"initial_customers": 10},
        )
        batch = womlab.run_replicates(s, replicates, jobs=jobs)
        table = batch.product_curves()
        value = table[table["product"] == "all"].pivot(index="replicate", columns="period", values="value").to_numpy()
        summary = batch.product_summary()
        curves[launch] = summary
        total = value[:, 1:].sum(axis=1)
        model = summary[summary["product"] == "generation 2"]["aggregate"].to_numpy()
        rows.append(
            {
                "launch": launch,
                "portfolio_value_mean": float(total.mean()),
                "portfolio_value_sd": float(total.std(ddof=1)),
                "second_generation_share_at_40_mean": float(
                    summary[(summary["product"] == "generation 2") & (summary["period"] == 40)]["mean"].iloc[0]
                ),
                "second_generation_share_at_40_aggregate": float(model[-1]),
            }
        )
    return pd.DataFrame(rows), curves


def figure_a(curves: dict) -> Figure:
    fig = Figure(figsize=(11, 3.8), layout="constrained")
    axes = fig.subplots(1, 3, sharey=True)
    for ax, kind in zip(axes, KINDS):
        new, model = curves[kind]
        t = np.arange(1, new.size + 1)
        ax.plot(t, new, color="#1f5f8b", lw=2, label="network, mean of the runs")
        ax.plot(t, model, color="#c0392b", lw=1.4, ls="--", label="segment model")
        ax.set_title(kind, fontsize=10)
        ax.set_xlabel("period")
        ax.grid(alpha=0.3)
    axes[0].set_ylabel("new customers per period, share of market")
    axes[0].legend(fontsize=8, frameon=False)
    fig.suptitle("(a) influentials and imitators (invented market): the dip between two peaks", fontsize=11)
    return fig


def figure_b(curves: dict) -> Figure:
    fig = Figure(figsize=(11, 4), layout="constrained")
    left, right = fig.subplots(1, 2)
    colours = {None: "#555555", 5: "#1f5f8b", 15: "#d35400", 25: "#27ae60"}
    for opens, (final, current, aggregate) in curves.items():
        label = "all open from the start" if opens is None else f"region 3 opens in period {opens}"
        t = np.arange(final.size)
        left.plot(t, final, color=colours[opens], lw=2, label=label)
        left.plot(t, aggregate, color=colours[opens], lw=1, ls="--")
        right.plot(t, current, color=colours[opens], lw=2, label=label)
    left.set_ylabel("customers, share of the final market\n(dashed: aggregate model)")
    right.set_ylabel("customers, share of the market open then")
    for ax in (left, right):
        ax.set_xlabel("period")
        ax.grid(alpha=0.3)
    right.legend(fontsize=8, frameon=False)
    fig.suptitle("(b) a region that opens later (regional network, invented market; medians of the runs)", fontsize=11)
    return fig


def figure_c(curves: dict, table: pd.DataFrame) -> Figure:
    fig = Figure(figsize=(11, 4), layout="constrained")
    left, right = fig.subplots(1, 2, width_ratios=[2, 1])
    colours = dict(zip(LAUNCHES, ("#1f5f8b", "#d35400", "#27ae60")))
    for launch, summary in curves.items():
        for product, ls in (("generation 1", "-"), ("generation 2", "--")):
            rows = summary[summary["product"] == product]
            left.plot(
                rows["period"], rows["mean"], color=colours[launch], ls=ls, lw=1.8, label=f"launch {launch}: {product}"
            )
    left.set_xlabel("period")
    left.set_ylabel("customers on the generation, share of market (mean)")
    left.grid(alpha=0.3)
    left.legend(fontsize=7, frameon=False, ncol=2)
    right.errorbar(
        table["launch"],
        table["portfolio_value_mean"],
        yerr=2 * table["portfolio_value_sd"] / np.sqrt(REPS[0]),
        color="#2c3e50",
        marker="o",
        capsize=3,
    )
    right.set_xlabel("launch period of generation 2")
    right.set_ylabel("portfolio value, periods 1-40 (mean ± 2 SE)")
    right.grid(alpha=0.3)
    fig.suptitle("(c) a second product generation (random network, invented market)", fontsize=11)
    return fig


REPS = [50]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--replicates", type=int, default=50, help="replicates per case (default 50)")
    parser.add_argument("--jobs", type=int, default=2, help="worker processes (default 2; results do not depend on it)")
    parser.add_argument(
        "--out",
        default="out/experiments/changing_markets",
        help="folder for the tables, figures and manifest (default %(default)s; the tracked results "
        "are experiments/changing_markets/results)",
    )
    args = parser.parse_args()
    REPS[0] = args.replicates
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    start = time.perf_counter()
    a, ca = part_a(args.replicates, args.jobs)
    b, cb = part_b(args.replicates, args.jobs)
    c, cc = part_c(args.replicates, args.jobs)
    for name, table in (("table_a.csv", a), ("table_b.csv", b), ("table_c.csv", c)):
        table.to_csv(out / name, index=False, float_format="%.4g")
    figure_a(ca).savefig(out / "figure_a.png", dpi=110)
    figure_b(cb).savefig(out / "figure_b.png", dpi=110)
    figure_c(cc, c).savefig(out / "figure_c.png", dpi=110)
    manifest = {
        "replicates": args.replicates,
        "base": BASE,
        "segments": SEGMENTS,
        "openings": OPENINGS,
        "launches": LAUNCHES,
        "versions": versions(),
        "wall_seconds": round(time.perf_counter() - start, 1),
    }
    text = json.dumps(manifest, indent=2, default=str)
    atomic_write(out / "manifest.json", lambda tmp: tmp.write_text(text, encoding="utf-8"))
    print(a.to_string(index=False), b.to_string(index=False), c.to_string(index=False), sep="\n\n")


if __name__ == "__main__":
    main()
