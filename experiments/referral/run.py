"""Referral programme experiment: one invented programme across network kinds and reward levels.

INVENTED scenario (programme.toml): no real firm, programme or data. The reward paid
per successful referral buys extra word of mouth through an invented, saturating
response curve, talk multiplier = 1 + 1.5 * reward / (reward + 20): a reward of 20 makes
an enrolled satisfied customer's word of mouth count 1.75 times. Each (network kind,
reward) point is evaluated with womlab.evaluate_programme on paired replicates (the
programme run and the no-programme run share network and random draws).

Writes roi.csv (one row per network kind and reward: ROI with its 95 % interval and the
other outcomes), break_even.csv and roi.png into out/referral/ unless --out says otherwise
(the README's figure is the tracked experiments/referral/results/roi.png). Run from the
repository root:

    python experiments/referral/run.py [--replicates 20] [--jobs 2] [--out DIR]
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
KINDS = ("random", "small_world", "regional", "scale_free")
REWARDS = (2.5, 5.0, 10.0, 20.0, 40.0, 80.0)


def multiplier(reward: float) -> float:
    """Invented response: the talk multiplier a reward buys (saturating)."""
    return 1.0 + 1.5 * reward / (reward + 20.0)


def main(replicates: int | None = None, jobs: int | None = None, out: str | Path = Path("out") / "referral") -> pd.DataFrame:
    base = womlab.load_scenario(HERE / "programme.toml")
    rows = []
    start = time.perf_counter()
    for kind in KINDS:
        for reward in REWARDS:
            s = base.replace({"network.kind": kind, "referral.reward": reward,
                              "referral.talk_multiplier": multiplier(reward)})
            study = womlab.evaluate_programme(s, replicates, jobs=jobs, degrees=False)
            summ = study.summary().set_index("outcome")
            row = {"network": kind, "reward": reward, "talk_multiplier": multiplier(reward),
                   "replicates": study.replicates}
            for name in ("roi", "incremental_customers", "incremental_value", "cost", "acceleration", "expansion",
                         "cost_per_incremental_customer"):
                row[name] = summ.loc[name, "estimate"]
                row[f"{name}_low"] = summ.loc[name, "low"]
                row[f"{name}_high"] = summ.loc[name, "high"]
            row["break_even_period"] = summ.loc["break_even_period", "estimate"]
            rows.append(row)
            print(f"{kind:12s} reward {reward:5.1f}: ROI {row['roi']:6.2f} "
                  f"[{row['roi_low']:.2f}, {row['roi_high']:.2f}]", flush=True)
    table = pd.DataFrame(rows)
    out = Path(out)
    atomic_write(out / "roi.csv", lambda p: table.to_csv(p, index=False, float_format="%.6g"))
    even = break_even_rewards(table)
    atomic_write(out / "break_even.csv", lambda p: even.to_csv(p, index=False, float_format="%.4g"))
    print(even.to_string(index=False))
    fig = roi_figure(table, base)
    atomic_write(out / "roi.png", lambda p: fig.savefig(p, dpi=130, format="png"))
    print(f"{len(rows)} points in {time.perf_counter() - start:.0f} s; wrote {out}/roi.csv, "
          f"{out}/break_even.csv and {out}/roi.png")
    return table


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
            rows.append({"network": kind, "break_even_reward": float(np.exp(x)),
                         "between": f"{t['reward'].iloc[i]:g}-{t['reward'].iloc[i + 1]:g}"})
        else:
            rows.append({"network": kind, "break_even_reward": float("nan"), "between": ""})
    return pd.DataFrame(rows)


def roi_figure(table: pd.DataFrame, base: womlab.Scenario) -> Figure:
    fig = Figure(figsize=(10, 4.2), layout="constrained")
    left, right = fig.subplots(1, 2)
    for kind in KINDS:
        t = table[table["network"] == kind]
        yerr = np.vstack([t["roi"] - t["roi_low"], t["roi_high"] - t["roi"]])
        left.errorbar(t["reward"], t["roi"], yerr=yerr, marker="o", ms=4, capsize=3, lw=1.5, label=kind)
        yerr = np.vstack([t["incremental_customers"] - t["incremental_customers_low"],
                          t["incremental_customers_high"] - t["incremental_customers"]])
        right.errorbar(t["reward"], t["incremental_customers"], yerr=yerr, marker="o", ms=4, capsize=3, lw=1.5,
                       label=kind)
    left.axhline(0.0, color="#555555", lw=1, ls="--")
    left.text(REWARDS[0], 0.0, " break-even (ROI = 0)", va="bottom", fontsize=8, color="#555555")
    left.set(xscale="log", xticks=REWARDS, xticklabels=[f"{r:g}" for r in REWARDS], xlabel="reward per successful referral", ylabel="ROI = (ΔValue − Cost) / Cost",
             title="return on the programme (95 % intervals)")
    right.set(xscale="log", xticks=REWARDS, xticklabels=[f"{r:g}" for r in REWARDS], xlabel="reward per successful referral", ylabel="incremental customers at the horizon",
              title="customers the programme adds (95 % intervals)")
    for ax in (left, right):
        ax.xaxis.set_minor_formatter(NullFormatter())
        ax.grid(alpha=0.3)
        ax.legend(fontsize=8, frameon=False)
    r = base.referral
    fig.suptitle(f"{base.name}: {base.market.organisations} firms, programme periods {r.start}–{r.end} of "
                 f"{base.run.periods}\nvalue {r.value_per_period:g} per customer-period, discount "
                 f"{r.discount_rate:g}; talk multiplier 1 + 1.5·reward/(reward + 20) (invented)", fontsize=9)
    return fig


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--replicates", type=int, default=None, help="overrides run.replicates of programme.toml")
    parser.add_argument("--jobs", type=int, default=None, help="overrides run.jobs")
    parser.add_argument("--out", default=str(Path("out") / "referral"),
                        help="results folder (default out/referral; the tracked results the README shows are in "
                             "experiments/referral/results)")
    args = parser.parse_args()
    main(args.replicates, args.jobs, args.out)
