"""Lever-timing experiment: which growth lever, when, on three network kinds.

INVENTED scenario (the shipped levers-demo): no real firm, market or data. The demo's vendor
chooses between a referral programme, ten reference customers, a three-period campaign and
entering a fourth region it would otherwise never enter, each pulled at the end of period
0, 3, ..., 27 of 30, on paired replicates (womlab.lever_timing). The same market is run on
three network kinds with the same mean degree: ``random``, ``regional`` with strong
clustering by region (95 % of ties inside the region, 5 % rewiring inside it) and
``scale_free``. The question: at which stage of the baseline's S-curve does expanding the
market overtake the word-of-mouth levers, and does clustering by region move that crossover?

Writes, into --out: levers.csv (every network kind, lever and period pulled: the LeverStudy
table), crossover.csv (per network kind and criterion — incremental value to the horizon,
whole-life incremental value, ROI — the period at which the best lever changes, with its
bootstrap interval, and the baseline's share reached then), best.csv (per kind and period,
the best lever by incremental value and the share of replicates in which it is best) and
levers.png.

    python experiments/lever_timing/run.py [--out DIR] [--jobs N] [--replicates R]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

import womlab
from womlab.results.levers import LEVER_COLOURS
from womlab.store import atomic_write

KINDS = {
    "random": {"network.kind": "random"},
    "regional, strongly clustered": {
        "network.kind": "regional",
        "network.within_region_share": 0.95,
        "network.rewiring": 0.05,
    },
    "scale_free": {"network.kind": "scale_free"},
}
CRITERIA = ("incremental_value", "incremental_value_lifetime", "roi")


def figure(studies: dict[str, womlab.LeverStudy]) -> Figure:
    fig = Figure(figsize=(13, 7), layout="constrained")
    axes = fig.subplots(2, len(studies), sharex=True, height_ratios=(3, 2))
    for j, (kind, study) in enumerate(studies.items()):
        top, bottom = axes[0, j], axes[1, j]
        table = study.table()
        for name in study.levers:
            rows = table[table["lever"] == name]
            top.fill_between(
                rows["pulled_at"],
                rows["incremental_value_low"],
                rows["incremental_value_high"],
                color=LEVER_COLOURS[name],
                alpha=0.15,
                lw=0,
            )
            top.plot(
                rows["pulled_at"], rows["incremental_value"], "o-", ms=3, lw=1.6, color=LEVER_COLOURS[name], label=name
            )
        cross = study.crossover("incremental_value")
        curve = study.curve()
        bottom.plot(curve["period"], curve["share"], color="#1f5f8b", lw=2)
        bottom.fill_between(curve["period"], curve["share_q05"], curve["share_q95"], color="#1f5f8b", alpha=0.18, lw=0)
        peak = int(study.stage()["peak_period"].iloc[0])
        bottom.axvline(peak, color="#1f5f8b", ls=":", lw=1.2)
        for ax in (top, bottom):
            ax.grid(alpha=0.3)
            if np.isfinite(cross["period"]):
                ax.axvline(cross["period"], color="#555555", ls="--", lw=1.2)
                if np.isfinite(cross["low"]):
                    ax.axvspan(cross["low"], cross["high"], color="#999999", alpha=0.15, lw=0)
        top.set_title(kind, fontsize=10)
        top.axhline(0, color="#555555", lw=0.8)
        bottom.set_ylim(0, 1.0)
        bottom.set_xlabel("period pulled (dotted: most new customers)")
        if j == 0:
            top.set_ylabel("incremental discounted value to the horizon")
            bottom.set_ylabel("baseline customer share")
            top.legend(fontsize=8, frameon=False)
    fig.suptitle(
        "Which lever, when (invented levers-demo market; dashed: crossover, shaded: its 95 % interval)", fontsize=11
    )
    return fig


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--out",
        default="out/experiments/lever_timing",
        help="folder for levers.csv, crossover.csv, best.csv, levers.png (default %(default)s; the "
        "tracked results are experiments/lever_timing/results)",
    )
    parser.add_argument("--jobs", type=int, default=None, help="worker processes (default run.jobs)")
    parser.add_argument("--replicates", type=int, default=None, help="paired replicates (default run.replicates)")
    args = parser.parse_args()
    start = time.perf_counter()
    base = womlab.load_scenario("levers-demo")
    studies, tables, crossings, bests = {}, [], [], []
    for kind, changes in KINDS.items():
        s = base.replace(changes)
        study = womlab.lever_timing(s, replicates=args.replicates, jobs=args.jobs)
        studies[kind] = study
        table = study.table()
        table.insert(0, "network", kind)
        tables.append(table)
        stage = study.stage().set_index("pulled_at")
        for by in CRITERIA:
            c = study.crossover(by)
            at = stage.loc[int(c["period"]), "share_reached"] if np.isfinite(c["period"]) else np.nan
            crossings.append(
                {
                    "network": kind,
                    **c,
                    "share_reached_at_crossover": at,
                    "peak_period": int(stage["peak_period"].iloc[0]),
                    "replicates": study.replicates,
                }
            )
        best = study.best()
        best.insert(0, "network", kind)
        bests.append(best)
        print(f"{kind}: {time.perf_counter() - start:.0f} s")
    out = Path(args.out)
    levers, crossover, best = pd.concat(tables), pd.DataFrame(crossings), pd.concat(bests)
    atomic_write(out / "levers.csv", lambda p: levers.to_csv(p, index=False, float_format="%.6g"))
    atomic_write(out / "crossover.csv", lambda p: crossover.to_csv(p, index=False, float_format="%.4g"))
    atomic_write(out / "best.csv", lambda p: best.to_csv(p, index=False, float_format="%.4g"))
    fig = figure(studies)
    atomic_write(out / "levers.png", lambda p: fig.savefig(p, dpi=130, format="png"))
    with pd.option_context("display.width", 200):
        print(crossover.to_string(index=False))
    print(f"{time.perf_counter() - start:.0f} s; wrote {out}/levers.csv, crossover.csv, best.csv, levers.png")


if __name__ == "__main__":
    main()
