"""Bad news: what dissatisfied customers who leave and warn cost, on three referral networks.

The invented market of the network-vs-aggregate experiment (sample-tracking software sold to
4,000 research laboratories; its scenario files are reused from
experiments/network_vs_aggregate/, on the complete, random and clustered regional networks),
with customers who leave (churn 0.02 per period if satisfied, 0.06 if not) and, in one arm,
dissatisfied customers who warn as strongly as satisfied ones recommend (warning = the
rule's word_of_mouth). The satisfied share is swept from 1.0 down to 0.5. All arms of one
network kind run paired (the same networks and random draws). Each lab is worth 1 per
period while a customer, discounted at 1 % per period, to the horizon (50 periods).

    results/table.csv      per network kind and satisfied share: the value of the market
                           with and without warnings (mean over replicates), the share of the
                           all-satisfied market's value lost to dissatisfaction in each arm
                           (with a 95 % t interval over the paired replicates), rejecters,
                           and, with warnings, the network against Bass with churn and
                           warnings (installed base at the horizon, time to half the market
                           of ever customers)
    results/figure.png     value lost against the dissatisfied share; installed base against
                           Bass with churn and warnings
    results/manifest.json  versions, settings and wall time

Run from the repository root (about a minute on two cores); results go to
out/experiments/bad_news/ unless --out says otherwise:

    python experiments/bad_news/run.py [--replicates 12] [--jobs 2] [--out DIR]
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
from womlab.store import atomic_write, versions
from womlab.studies.bad_news import silent
from womlab.studies.intervals import t_interval
from womlab.studies.metrics import time_to_share
from womlab.studies.programme import customer_values

HERE = Path(__file__).resolve().parent
SOURCE = HERE.parent / "network_vs_aggregate"
KINDS = {"complete": "complete", "random": "random (Erdős–Rényi)", "regional_0.7": "clustered regions, 70 % within"}
SHARES = (1.0, 0.9, 0.8, 0.7, 0.6, 0.5)
CHURN, CHURN_DISSATISFIED, DISCOUNT = 0.02, 0.06, 0.01
SHOWN_SHARE = 0.7  # the satisfied share of the right-hand panel


def scenario(stem: str) -> womlab.Scenario:
    base = womlab.load_scenario(SOURCE / f"{stem}.toml")
    q = base.adoption.word_of_mouth
    return base.replace(
        {
            "name": f"{base.name.split(':')[0]}: {KINDS[stem]}, churn and warnings (invented)",
            "adoption.churn": CHURN,
            "adoption.churn_dissatisfied": CHURN_DISSATISFIED,
            "adoption.warning": q,  # warnings as strong as recommendations
            "referral.value_per_period": 1.0,
            "referral.discount_rate": DISCOUNT,
        }
    )


def arms(s: womlab.Scenario) -> dict[str, womlab.Scenario]:
    out = {}
    for share in SHARES:
        with_share = s.replace("adoption.satisfied_share", share)
        out[f"warned_{share}"] = with_share
        out[f"silent_{share}"] = silent(with_share)
    return out


def value(run: womlab.RunResult, s: womlab.Scenario) -> float:
    return float(customer_values(run.adoption_period, s.referral, run.periods, run.leave_period).sum())


def run_kind(stem: str, replicates: int, jobs: int) -> tuple[list[dict], dict]:
    s = scenario(stem)
    variants = arms(s)
    runs = womlab.run_paired(variants, replicates, jobs=jobs)
    n = s.market.organisations
    values = {name: np.array([value(r, variants[name]) for r in runs[name]]) for name in variants}
    reference = values["silent_1.0"]  # every customer satisfied, nobody warns
    rows = []
    for share in SHARES:
        warned = variants[f"warned_{share}"]
        row = {
            "network": stem,
            "satisfied_share": share,
            "dissatisfied_share": round(1 - share, 2),
            "replicates": replicates,
        }
        for arm in ("silent", "warned"):
            v = values[f"{arm}_{share}"]
            lost = (reference - v) / reference
            ci = t_interval(lost)
            row[f"value_{arm}"] = float(v.mean())
            row[f"lost_share_{arm}"] = float(lost.mean())
            row[f"lost_share_{arm}_low"], row[f"lost_share_{arm}_high"] = ci.low, ci.high
        row["rejecters_share"] = float(np.mean([r.rejecters[-1] for r in runs[f"warned_{share}"]]) / n)
        if share < 1.0:  # the network against Bass with churn and warnings, warned arm
            model = womlab.churn_curves(warned)
            ever = np.vstack([r.ever_share for r in runs[f"warned_{share}"]]).mean(axis=0)
            installed = np.vstack([r.share for r in runs[f"warned_{share}"]]).mean(axis=0)
            row["installed_base_network"] = float(installed[-1])
            row["installed_base_model"] = float(model["customers"].iloc[-1])
            row["t50_ever_network"] = time_to_share(ever, 0.5)
            row["t50_ever_model"] = time_to_share(model["ever_customers"].to_numpy(), 0.5)
        rows.append(row)
    shown = f"warned_{SHOWN_SHARE}"
    curves = {
        "network": np.vstack([r.share for r in runs[shown]]).mean(axis=0),
        "model": womlab.churn_curves(variants[shown])["customers"].to_numpy(),
    }
    return rows, curves


def figure(table: pd.DataFrame, curves: dict) -> Figure:
    fig = Figure(figsize=(13, 5.6), layout="constrained")
    left, right = fig.subplots(1, 2)
    colours = dict(zip(KINDS, ("C0", "C1", "C2")))
    left.plot([0, 0.5], [0, 0.5], color="black", lw=0.8, ls=":", label="loss = dissatisfied share")
    for stem, label in KINDS.items():
        t = table[table["network"] == stem]
        x = t["dissatisfied_share"].to_numpy()
        for arm, ls, what in (("warned", "-", "warn"), ("silent", "--", "stay silent")):
            y = t[f"lost_share_{arm}"].to_numpy()
            left.errorbar(
                x,
                y,
                yerr=[y - t[f"lost_share_{arm}_low"], t[f"lost_share_{arm}_high"] - y],
                color=colours[stem],
                ls=ls,
                marker="o" if arm == "warned" else "s",
                ms=4,
                capsize=2,
                label=f"{label}: dissatisfied customers {what}",
            )
    left.set_xlabel("dissatisfied share of customers (1 − satisfied share)")
    left.set_ylabel("share of the all-satisfied market's value lost\n(discounted, to period 50; 95 % t interval)")
    left.set_title("Value lost to dissatisfaction", fontsize=10)
    left.grid(alpha=0.3)
    left.legend(fontsize=7.5, frameon=False, loc="upper left")
    for stem, label in KINDS.items():
        c = curves[stem]
        t = np.arange(c["network"].size)
        right.plot(t, c["network"], color=colours[stem], lw=2, label=f"{label}, network (mean)")
    # every kind maps to the same aggregate model (mapped Q = 0.384 for all three)
    right.plot(
        t,
        curves["complete"]["model"],
        color="black",
        lw=1.4,
        ls="--",
        label="Bass with churn and warnings, mapped (the same for all three)",
    )
    right.set_xlabel("period")
    right.set_ylabel("customers now (installed base), share of market")
    right.set_title(f"Installed base with churn and warnings, satisfied share {SHOWN_SHARE}", fontsize=10)
    right.grid(alpha=0.3)
    right.set_ylim(0, 1)
    right.legend(fontsize=7.5, frameon=False, loc="upper right")
    fig.suptitle(
        "Bad news in an invented market: 4,000 research labs, churn 0.02 (satisfied) / 0.06 (dissatisfied) "
        "per period, warnings as strong as recommendations",
        fontsize=10.5,
    )
    return fig


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--replicates", type=int, default=12, help="paired replicates per network kind")
    parser.add_argument("--jobs", type=int, default=2, help="worker processes (results do not depend on it)")
    parser.add_argument(
        "--out",
        default="out/experiments/bad_news",
        help="results folder (default %(default)s; the tracked results the README shows are in "
        "experiments/bad_news/results)",
    )
    args = parser.parse_args()
    out = Path(args.out)
    start = time.perf_counter()
    rows, curves = [], {}
    for stem in KINDS:
        kind_rows, curves[stem] = run_kind(stem, args.replicates, args.jobs)
        rows += kind_rows
        print(f"{stem}: done ({time.perf_counter() - start:.0f} s)", flush=True)
    table = pd.DataFrame(rows)
    atomic_write(out / "table.csv", lambda p: table.to_csv(p, index=False, float_format="%.4g"))
    fig = figure(table, curves)
    atomic_write(out / "figure.png", lambda p: fig.savefig(p, dpi=120, format="png"))
    manifest = {
        "scenarios": {stem: scenario(stem).to_dict() for stem in KINDS},
        "satisfied_shares": list(SHARES),
        "replicates": args.replicates,
        "wall_time_s": round(time.perf_counter() - start, 1),
        "versions": versions(),
    }
    atomic_write(out / "manifest.json", lambda p: p.write_text(json.dumps(manifest, indent=2) + "\n", encoding="utf-8"))
    print(
        table[
            [
                "network",
                "dissatisfied_share",
                "lost_share_silent",
                "lost_share_warned",
                "rejecters_share",
                "installed_base_network",
                "installed_base_model",
                "t50_ever_network",
                "t50_ever_model",
            ]
        ].to_string(index=False, float_format=lambda v: f"{v:.3f}")
    )
    print(f"wrote {out}/table.csv, figure.png, manifest.json in {time.perf_counter() - start:.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
