"""Seeding strategies on four network kinds, under two rules, with and without external influence.

Every strategy of base.toml's [study] is compared with random seeding on paired replicates
(womlab.compare_strategies: one network per replicate, common random numbers) for each of
random, small_world, regional and scale_free networks at the same mean degree, under the
``share`` and ``count`` rules, with external influence 0 and 0.01 per period. The scenario is
invented (see base.toml). Writes seeding_experiment.csv (one row per network kind x rule x
external x strategy), seeding_experiment.png and manifest.json into out/seeding/ unless --out
says otherwise (the README's figure is the tracked experiments/seeding/results/).

    python experiments/seeding/run.py [--replicates 30] [--jobs 2] [--out DIR]
"""

from __future__ import annotations

import argparse
import json
import time
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.ticker import FixedFormatter, FixedLocator, NullFormatter

import womlab
from womlab.store import atomic_write, versions

HERE = Path(__file__).resolve().parent
KINDS = ("random", "small_world", "regional", "scale_free")
# word of mouth per rule: share q = 0.4 of the satisfied share; count q = 0.07 per talker,
# about 0.4 / mean degree, so that both rules spread at a similar pace on the random network
RULES = {"share": 0.4, "count": 0.07}
EXTERNAL = (0.0, 0.01)
TICKS = (0.25, 0.5, 0.75, 1, 1.5, 2, 3, 4)
COLOURS = {"random": "#555555", "small_world": "#1f5f8b", "regional": "#2e8b57", "scale_free": "#c0392b"}


def run(replicates: int | None, jobs: int | None) -> pd.DataFrame:
    base = womlab.load_scenario(HERE / "base.toml")
    frames = []
    for kind in KINDS:
        for rule, q in RULES.items():
            for external in EXTERNAL:
                s = base.replace({"network.kind": kind, "adoption.rule": rule,
                                  "adoption.word_of_mouth": q, "adoption.external": external})
                start = time.perf_counter()
                study = womlab.compare_strategies(s, replicates=replicates, jobs=jobs, snapshot=False)
                table = study.strategies_table()
                table.insert(0, "external", external)
                table.insert(0, "rule", rule)
                table.insert(0, "network", kind)
                frames.append(table)
                print(f"{kind:12s} {rule:6s} p={external:<5g} {time.perf_counter() - start:6.1f} s  "
                      + "  ".join(f"{r.strategy}={r.lift_ratio:.2f}" for r in table.itertuples() if r.strategy != "random"),
                      flush=True)
    return pd.concat(frames, ignore_index=True)


def figure(table: pd.DataFrame, base: womlab.Scenario) -> Figure:
    strategies = [s for s in table["strategy"].unique() if s != "random"]
    fig = Figure(figsize=(12, 8.5), layout="constrained")
    axes = fig.subplots(len(RULES), len(EXTERNAL), sharex=True, sharey=True)
    offsets = np.linspace(-0.3, 0.3, len(KINDS))
    for i, rule in enumerate(RULES):
        for j, external in enumerate(EXTERNAL):
            ax = axes[i, j]
            sub = table[(table["rule"] == rule) & (table["external"] == external)]
            for k, kind in enumerate(KINDS):
                rows = sub[sub["network"] == kind].set_index("strategy").loc[strategies]
                y = np.arange(len(strategies)) + offsets[k]
                ax.hlines(y, rows["lift_ratio_low"], rows["lift_ratio_high"], color=COLOURS[kind], lw=1.8)
                ax.plot(rows["lift_ratio"], y, "o", color=COLOURS[kind], ms=4.5,
                        label=kind.replace("_", "-") if (i, j) == (0, 0) else None)
            ax.axvline(1.0, color="#555555", lw=1, ls="--")
            ax.set_xscale("log")
            ax.xaxis.set_major_locator(FixedLocator(TICKS))
            ax.xaxis.set_major_formatter(FixedFormatter([f"{t:g}" for t in TICKS]))
            ax.xaxis.set_minor_formatter(NullFormatter())
            ax.set_yticks(np.arange(len(strategies)), strategies)
            ax.grid(alpha=0.3, axis="x")
            ax.set_title(f"rule = {rule} (q = {RULES[rule]:g}), external p = {external:g}", fontsize=10)
            if i == len(RULES) - 1:
                ax.set_xlabel("lift vs random seeding: ratio of mean discounted customer-periods\n"
                              "(95 % paired-bootstrap interval; log scale)")
    axes[0, 0].invert_yaxis()  # once: the axes share y, so each call would flip all of them
    fig.legend(*axes[0, 0].get_legend_handles_labels(), loc="outside lower center", ncols=len(KINDS), fontsize=9,
               frameon=False, title="network (dot: lift, line: 95 % interval)", title_fontsize=9)
    st = base.study
    fig.suptitle(f"{base.name}: N = {base.market.organisations}, mean degree {base.network.mean_degree:g}, "
                 f"budget {base.n_initial}, {st.replicates} paired replicates, discount {st.discount_rate:g}/period",
                 fontsize=11)
    return fig


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--replicates", type=int, default=None, help="overrides study.replicates")
    parser.add_argument("--jobs", type=int, default=None, help="overrides run.jobs")
    parser.add_argument("--plot-only", action="store_true", help="redraw the figure from OUT/seeding_experiment.csv")
    parser.add_argument("--out", default=str(Path("out") / "seeding"),
                        help="results folder (default out/seeding; the tracked results the README shows are in "
                             "experiments/seeding/results)")
    args = parser.parse_args()
    out = Path(args.out)
    start = time.perf_counter()
    base = womlab.load_scenario(HERE / "base.toml")
    if args.replicates is not None:
        base = base.replace("study.replicates", args.replicates)
    if args.plot_only:
        fig = figure(pd.read_csv(out / "seeding_experiment.csv"), base)
        atomic_write(out / "seeding_experiment.png", lambda p: fig.savefig(p, dpi=120, format="png"))
        return
    table = run(args.replicates, args.jobs)
    atomic_write(out / "seeding_experiment.csv", lambda p: table.to_csv(p, index=False, float_format="%.6g"))
    fig = figure(table, base)
    atomic_write(out / "seeding_experiment.png", lambda p: fig.savefig(p, dpi=120, format="png"))
    info = {"scenario": base.to_dict(), "varied": {"network.kind": list(KINDS), "adoption.rule/word_of_mouth": RULES,
                                                   "adoption.external": list(EXTERNAL)},
            "wall_time_s": round(time.perf_counter() - start, 1), "versions": versions()}
    atomic_write(out / "manifest.json", lambda p: p.write_text(json.dumps(info, indent=2) + "\n", encoding="utf-8"))
    print(f"wrote {out}/seeding_experiment.csv, seeding_experiment.png, manifest.json "
          f"in {time.perf_counter() - start:.0f} s")


if __name__ == "__main__":
    main()
