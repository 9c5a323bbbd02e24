"""Network versus aggregate model: one invented market on ten referral networks.

Every scenario in this folder has the same market, rule and parameters (mapped Bass
Q = 0.384) and differs only in its network. For each, womlab.compare runs the replicates
and sets the network beside the aggregate curves; this script collects the headline
numbers into one table and draws one combined figure:

    results/table.csv    t50 delay vs the Bass difference model, peak-rate ratio,
                         Q_eff / Q_mapped (each with its 95 % bootstrap interval), the
                         degree mean-field model's t50 and RMSE beside Bass's, and the
                         mean clustering of the first replicate's network
    results/figure.png   mean curves beside Bass; gap over time; Q_eff / Q_mapped
    results/manifest.json  versions, settings and wall time

Run from the repository root (about a minute or two on two cores); results go to
out/experiments/network_vs_aggregate/ unless --out says otherwise (the README's figure and
table are the tracked ones in experiments/network_vs_aggregate/results/, written only when
asked):

    python experiments/network_vs_aggregate/run.py [--replicates 20] [--jobs 2] [--out DIR]
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
from womlab.dynamics.streams import streams
from womlab.store import atomic_write, versions

HERE = Path(__file__).resolve().parent
ORDER = [
    "complete",
    "random",
    "scale_free",
    "small_world_0.2",
    "small_world_0.02",
    "regional_blocks_0.7",
    "regional_blocks_0.95",
    "regional_0.7",
    "regional_0.95",
    "ring",
]
LABELS = {
    "complete": "complete",
    "random": "random (Erdős–Rényi)",
    "scale_free": "scale-free (Barabási–Albert)",
    "small_world_0.2": "small world, rewiring 0.2",
    "small_world_0.02": "small world, rewiring 0.02",
    "regional_blocks_0.7": "regional blocks, 70 % within region",
    "regional_blocks_0.95": "regional blocks, 95 % within region",
    "regional_0.7": "clustered regions, 70 % within region",
    "regional_0.95": "clustered regions, 95 % within region",
    "ring": "ring lattice",
}


def run_all(replicates: int | None, jobs: int | None) -> tuple[pd.DataFrame, dict]:
    rows, comparisons = [], {}
    for stem in ORDER:
        scenario = womlab.load_scenario(HERE / f"{stem}.toml")
        start = time.perf_counter()
        c = womlab.compare(scenario, replicates, jobs=jobs, bootstrap=1000, fit_bootstrap=200)
        h = c.headline()
        m = c.metrics.set_index("metric")
        rows.append(
            {
                "network": stem,
                "replicates": c.batch.replicates,
                "t50_network": h["t50_network"],
                "t50_bass_difference": float(m.loc["t50", "bass_difference"]),
                "t50_delay": h["t50_delay"],
                "t50_delay_low": h["t50_delay_low"],
                "t50_delay_high": h["t50_delay_high"],
                "peak_ratio": h["peak_ratio"],
                "peak_ratio_low": h["peak_ratio_low"],
                "peak_ratio_high": h["peak_ratio_high"],
                "Q_ratio": h["Q_ratio"],
                "Q_ratio_low": h["Q_ratio_low"],
                "Q_ratio_high": h["Q_ratio_high"],
                "Q_eff": h["Q_eff"],
                "p_eff": h["p_eff"],
                "m_eff": h["m_eff"],
                "fit_converged": bool(c.bass_fit.success),
                "t50_degree_mean_field": h["t50_degree_mean_field"],
                "rmse_bass_difference": h["rmse_reference"],
                "rmse_degree_mean_field": h["rmse_degree_mean_field"],
                "final_share": float(m.loc["final_share", "network"]),
                "clustering": womlab.build_network(
                    scenario, np.random.default_rng(streams(scenario.seed, (0,)).network)
                ).clustering(),
                "seconds": round(time.perf_counter() - start, 2),
            }
        )
        comparisons[stem] = c
        print(
            f"{stem:>20}: t50 delay {h['t50_delay']:+.2f}, peak ratio {h['peak_ratio']:.3f}, "
            f"Q_eff/Q_mapped {h['Q_ratio']:.3f} ({rows[-1]['seconds']:.1f} s)",
            flush=True,
        )
    return pd.DataFrame(rows), comparisons


def combined_figure(table: pd.DataFrame, comparisons: dict) -> Figure:
    fig = Figure(figsize=(13, 8.5), layout="constrained")
    grid = fig.add_gridspec(2, 2, width_ratios=[1.35, 1])
    curves, gaps, bars = fig.add_subplot(grid[0, 0]), fig.add_subplot(grid[1, 0]), fig.add_subplot(grid[:, 1])
    colours = dict(zip(ORDER, [f"C{i}" for i in range(len(ORDER))]))
    first = comparisons[ORDER[0]]
    t = np.arange(first.batch.scenario.run.periods + 1)
    bass = first.curves["bass_difference"]
    curves.plot(t, bass, color="black", lw=2.4, ls="--", label="Bass difference model (mapped Q = 0.384)")
    for stem in ORDER:
        c = comparisons[stem]
        mean = c.batch.shares().mean(axis=0)
        curves.plot(t, mean, color=colours[stem], lw=1.6, label=LABELS[stem])
        gaps.plot(t, mean - c.curves["bass_difference"], color=colours[stem], lw=1.6)
        if stem == "scale_free":
            gaps.plot(
                t,
                c.curves["degree_mean_field"] - c.curves["bass_difference"],
                color=colours[stem],
                lw=1.0,
                ls=":",
                label="degree mean-field − Bass, scale-free",
            )
        if stem in ("scale_free", "random"):
            curves.plot(
                t,
                c.curves["degree_mean_field"],
                color=colours[stem],
                lw=1.0,
                ls=":",
                label=f"degree mean-field, {LABELS[stem].split(' (')[0]}",
            )
    curves.set_ylabel("customers, share of market (mean of runs)")
    curves.set_ylim(0, 1.02)
    curves.set_xlim(0, t[-1])
    curves.grid(alpha=0.3)
    curves.legend(fontsize=7.5, frameon=False, loc="lower right")
    curves.set_title("One invented market on ten referral networks (mean degree 8, count rule)", fontsize=10)
    gaps.axhline(0, color="black", lw=0.8)
    gaps.set_ylabel("gap: network − Bass difference model")
    gaps.set_xlabel("period")
    gaps.set_xlim(0, t[-1])
    gaps.grid(alpha=0.3)
    gaps.legend(fontsize=7.5, frameon=False, loc="lower right")

    y = np.arange(len(table))[::-1]
    ratio = table["Q_ratio"].to_numpy()
    err = np.vstack([ratio - table["Q_ratio_low"], table["Q_ratio_high"] - ratio])
    bars.barh(y, ratio, color=[colours[s] for s in table["network"]], alpha=0.8, xerr=err, capsize=3)
    bars.axvline(1, color="black", lw=0.8, ls="--")
    bars.set_yticks(y, [LABELS[s] for s in table["network"]], fontsize=8.5)
    bars.set_xlabel("Q_eff / Q_mapped: fitted ÷ mapped word of mouth\n(bars: 95 % bootstrap interval)")
    for yi, (_, row) in zip(y, table.iterrows()):
        bars.text(
            max(row["Q_ratio_high"], 0.05) + 0.02,
            yi,
            f"{row['Q_ratio']:.2f}   t50 {row['t50_delay']:+.1f}   peak ×{row['peak_ratio']:.2f}",
            va="center",
            fontsize=7.5,
        )
    bars.set_xlim(0, max(1.5, float(table["Q_ratio_high"].max()) + 0.6))
    bars.set_title("Word of mouth kept, t50 delay (periods), peak-rate ratio", fontsize=10)
    bars.grid(alpha=0.3, axis="x")
    return fig


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--replicates", type=int, default=None, help="overrides each file's run.replicates")
    parser.add_argument("--jobs", type=int, default=None, help="overrides each file's run.jobs")
    parser.add_argument(
        "--out",
        default="out/experiments/network_vs_aggregate",
        help="results folder (default %(default)s; the tracked results the README shows "
        "are in experiments/network_vs_aggregate/results)",
    )
    args = parser.parse_args()
    out = Path(args.out)
    start = time.perf_counter()
    table, comparisons = run_all(args.replicates, args.jobs)
    atomic_write(out / "table.csv", lambda p: table.to_csv(p, index=False, float_format="%.4g"))
    fig = combined_figure(table, comparisons)
    atomic_write(out / "figure.png", lambda p: fig.savefig(p, dpi=120, format="png"))
    manifest = {
        "scenarios": {s: comparisons[s].scenario.to_dict() for s in ORDER},
        "bootstrap": 1000,
        "fit_bootstrap": 200,
        "wall_time_s": round(time.perf_counter() - start, 1),
        "versions": versions(),
    }
    atomic_write(out / "manifest.json", lambda p: p.write_text(json.dumps(manifest, indent=2) + "\n", encoding="utf-8"))
    print(
        table[
            [
                "network",
                "clustering",
                "t50_delay",
                "peak_ratio",
                "Q_ratio",
                "Q_ratio_low",
                "Q_ratio_high",
                "t50_degree_mean_field",
                "rmse_bass_difference",
                "rmse_degree_mean_field",
            ]
        ].to_string(index=False)
    )
    print(f"wrote {out}/table.csv, figure.png, manifest.json in {time.perf_counter() - start:.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
