"""Referral programme experiment: one invented programme across network kinds and reward levels.

INVENTED scenario (sweep.toml): no real firm, programme or data. The experiment itself is
the sweep in sweep.toml — network kind x reward, the programme evaluated against no
programme at every point on 20 paired replicates (``[sweep] study = "programme"``), the
talk multiplier a reward buys following the reward on an invented, saturating response
curve. This script runs (or resumes) that sweep and adds what a sweep cannot: the reward
at which the return crosses zero, interpolated between the swept rewards, and the figure.

Writes, into --out: roi.csv (one row per network kind and reward: ROI, incremental
customers and value, cost, acceleration, expansion, cost per incremental customer and the
acceleration share, each with its 95 % interval), break_even.csv and roi.png; the sweep's
own results folder (runs.parquet, summary.csv, report.html) is --sweep.

    python experiments/referral/run.py [--out DIR] [--sweep DIR] [--jobs N]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.ticker import NullFormatter

import womlab
from womlab.store import atomic_write

HERE = Path(__file__).resolve().parent
OUTCOMES = (
    "roi",
    "incremental_customers",
    "incremental_value",
    "cost",
    "acceleration",
    "expansion",
    "cost_per_incremental_customer",
    "acceleration_share",
)


def table(summary: pd.DataFrame) -> pd.DataFrame:
    """One row per network kind and reward from the sweep's summary: each outcome's estimate and 95 % interval."""
    rows = []
    keys = ["network.kind", "referral.reward", "referral.talk_multiplier"]
    for (kind, reward, multiplier), g in summary.groupby(keys, sort=False):
        g = g.set_index("outcome")
        row = {"network": kind, "reward": reward, "talk_multiplier": multiplier, "replicates": int(g["runs"].iloc[0])}
        for name in OUTCOMES:
            row[name], row[f"{name}_low"], row[f"{name}_high"] = g.loc[name, ["estimate", "low", "high"]]
        rows.append(row)
    return pd.DataFrame(rows)


def break_even_rewards(table: pd.DataFrame) -> pd.DataFrame:
    """Per network kind, the reward at which ROI crosses 0, interpolated linearly in log(reward)
    between the two rewards around the first sign change (NaN if ROI keeps one sign)."""
    rows = []
    for kind, t in table.groupby("network", sort=False):
        t = t.sort_values("reward")
        r, roi = np.log(t["reward"].to_numpy()), t["roi"].to_numpy()
        cross = np.flatnonzero((roi[:-1] >= 0) & (roi[1:] < 0))
        if cross.size:
            i = cross[0]
            x = r[i] + (0 - roi[i]) * (r[i + 1] - r[i]) / (roi[i + 1] - roi[i])
            rows.append(
                {
                    "network": kind,
                    "break_even_reward": float(np.exp(x)),
                    "between": f"{t['reward'].iloc[i]:g}-{t['reward'].iloc[i + 1]:g}",
                }
            )
        else:
            rows.append({"network": kind, "break_even_reward": float("nan"), "between": ""})
    return pd.DataFrame(rows)


def roi_figure(table: pd.DataFrame, base: womlab.Scenario) -> Figure:
    rewards = sorted(table["reward"].unique())
    fig = Figure(figsize=(10, 4.4), layout="constrained")
    left, right = fig.subplots(1, 2)
    for kind, t in table.groupby("network", sort=False):
        for ax, name in ((left, "roi"), (right, "incremental_customers")):
            yerr = np.vstack([t[name] - t[f"{name}_low"], t[f"{name}_high"] - t[name]])
            ax.errorbar(t["reward"], t[name], yerr=yerr, marker="o", ms=4, capsize=3, lw=1.5, label=kind)
    left.axhline(0.0, color="#555555", lw=1, ls="--")
    left.text(rewards[0], 0.0, " break-even (ROI = 0)", va="bottom", fontsize=8, color="#555555")
    ticks = dict(
        xscale="log", xticks=rewards, xticklabels=[f"{r:g}" for r in rewards], xlabel="reward per successful referral"
    )
    left.set(**ticks, ylabel="ROI = Σ(ΔValue − Cost) / ΣCost", title="return on the programme (95 % intervals)")
    right.set(
        **ticks, ylabel="incremental customers at the horizon", title="customers the programme adds (95 % intervals)"
    )
    for ax in (left, right):
        ax.xaxis.set_minor_formatter(NullFormatter())
        ax.grid(alpha=0.3)
        ax.legend(fontsize=8, frameon=False)
    r = base.referral
    fig.suptitle(
        f"{base.name}: {base.market.organisations} firms, programme periods {r.start}–{r.end} of "
        f"{base.run.periods}\nvalue {r.value_per_period:g} per customer-period, discount "
        f"{r.discount_rate:g}; talk multiplier 1 + 1.5·reward/(reward + 20) (invented)",
        fontsize=9,
    )
    return fig


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--out",
        default="out/experiments/referral",
        help="folder for roi.csv, break_even.csv, roi.png (default %(default)s; the tracked "
        "results are experiments/referral/results)",
    )
    parser.add_argument(
        "--sweep",
        default="out/experiments/referral-sweep",
        help="the sweep's results folder (default %(default)s); rerun to resume",
    )
    parser.add_argument("--jobs", type=int, default=None, help="worker processes (default run.jobs)")
    args = parser.parse_args()
    start = time.perf_counter()
    base = womlab.load_scenario(HERE / "sweep.toml")
    done = womlab.run_sweep(base, args.sweep, args.jobs)
    print(
        f"sweep: {done.points} points x {base.sweep.replicates} replicates, {done.ran} run now "
        f"({done.backend}), {done.failures} failed; {args.sweep}/report.html"
    )
    result = table(womlab.sweep_summary(args.sweep))
    even = break_even_rewards(result)
    out = Path(args.out)
    atomic_write(out / "roi.csv", lambda p: result.to_csv(p, index=False, float_format="%.6g"))
    atomic_write(out / "break_even.csv", lambda p: even.to_csv(p, index=False, float_format="%.4g"))
    fig = roi_figure(result, base)
    atomic_write(out / "roi.png", lambda p: fig.savefig(p, dpi=130, format="png"))
    print(even.to_string(index=False))
    print(f"{time.perf_counter() - start:.0f} s; wrote {out}/roi.csv, break_even.csv, roi.png")


if __name__ == "__main__":
    main()
