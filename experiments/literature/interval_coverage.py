"""Verification: how often womlab's 95 % intervals cover the truth at 20 and 24 replicates.

Not a published result but a check of womlab's statistics against data with known truth
(Efron & Tibshirani 1993, An Introduction to the Bootstrap; Hesterberg 2015, The American
Statistician 69(4), on the percentile interval's small-sample undercoverage). Three
statistics the studies report: the lift ratio (ratio of paired means) and lift difference
(mean paired difference) of a seeding study, and the time to half the market of the mean
curve. For each, ``--datasets`` synthetic data sets at 20 and at 24 replicates (the
generators of tests/studies/test_intervals.py: skewed paired counts with ratio 2 and
difference 63; Bass curves with log-normal p and Q, the truth from quadrature) get the
interval womlab reports now (studentised bootstrap with the delta-method standard error) and
the percentile bootstrap it used before (2,000 resamples).

Check. The new intervals cover within 3 binomial standard errors of 95 %.

    python experiments/literature/interval_coverage.py [--out DIR] [--datasets 1000]
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "tests" / "studies"))

from common import parser, write  # noqa: E402
from test_intervals import _bass_curves, _paired_counts  # noqa: E402  the generators the tests use

import womlab  # noqa: E402
from womlab.studies.metrics import curve_metrics_array, mean_curve_interval  # noqa: E402

COUNTS = (20, 24)


def percentile(values: np.ndarray) -> tuple[float, float]:
    lo, hi = np.nanquantile(values, [0.025, 0.975])
    return float(lo), float(hi)


def main(argv: list[str] | None = None) -> pd.DataFrame:
    p = parser("interval_coverage", __doc__)
    p.add_argument("--datasets", type=int, default=1000, help="data sets per replicate count (default 1000)")
    args = p.parse_args(argv)
    started = time.perf_counter()
    t = np.arange(31.0)
    nodes, weights = np.polynomial.hermite_e.hermegauss(60)
    weights = weights / weights.sum()
    a, b = np.meshgrid(nodes, nodes)
    truth_t50 = womlab.time_to_share(
        (_bass_curves(a.ravel(), b.ravel(), t) * np.outer(weights, weights).ravel()[:, None]).sum(axis=0), 0.5
    )
    hits = {
        (stat, method, n): 0
        for stat in ("lift ratio", "lift difference", "t50 of the mean curve")
        for method in ("now", "percentile (before)")
        for n in COUNTS
    }
    for n in COUNTS:
        rng = np.random.default_rng(9000 + n)
        for _ in range(args.datasets):
            x, base = _paired_counts(rng, n)
            out = womlab.lift_statistics(x, base, rng=rng, resamples=2000)
            idx = rng.integers(0, n, (2000, n))
            ratio_b = x[idx].mean(axis=1) / base[idx].mean(axis=1)
            diff_b = (x - base)[idx].mean(axis=1)
            hits[("lift ratio", "now", n)] += out["lift_ratio_low"] <= 2.0 <= out["lift_ratio_high"]
            hits[("lift difference", "now", n)] += out["lift_diff_low"] <= 63.0 <= out["lift_diff_high"]
            lo, hi = percentile(ratio_b)
            hits[("lift ratio", "percentile (before)", n)] += lo <= 2.0 <= hi
            lo, hi = percentile(diff_b)
            hits[("lift difference", "percentile (before)", n)] += lo <= 63.0 <= hi
            shares = _bass_curves(rng.normal(size=n), rng.normal(size=n), t)
            ci = mean_curve_interval(shares, "t50", bootstrap=1000, rng=rng)
            hits[("t50 of the mean curve", "now", n)] += ci.low <= truth_t50 <= ci.high
            idx = rng.integers(0, n, (2000, n))
            lo, hi = percentile(curve_metrics_array(shares[idx].mean(axis=1))["t50"])
            hits[("t50 of the mean curve", "percentile (before)", n)] += lo <= truth_t50 <= hi
        print(f"{n} replicates done", flush=True)
    se = np.sqrt(0.95 * 0.05 / args.datasets)
    table = pd.DataFrame(
        [
            {
                "statistic": s,
                "interval": m,
                "replicates": n,
                "coverage": h / args.datasets,
                "coverage_se": np.sqrt(max(h / args.datasets * (1 - h / args.datasets), 1e-9) / args.datasets),
            }
            for (s, m, n), h in hits.items()
        ]
    )
    print(table.to_string(index=False))
    now = table[table["interval"] == "now"]
    ok = bool(((now["coverage"] - 0.95).abs() <= 3 * se).all())
    fig = Figure(figsize=(7, 3.8), layout="constrained")
    ax = fig.subplots()
    for j, (method, g) in enumerate(table.groupby("interval", sort=False)):
        labels = [f"{s}\n{n} reps" for s, n in zip(g["statistic"], g["replicates"])]
        ax.errorbar(np.arange(len(g)) + 0.15 * j, g["coverage"], yerr=1.96 * g["coverage_se"], fmt="o", label=method)
    ax.set_xticks(np.arange(len(labels)), labels, fontsize=6.5)
    ax.axhline(0.95, color="black", lw=0.8)
    ax.axhspan(0.95 - 3 * se, 0.95 + 3 * se, color="#eeeeee")
    ax.set_ylabel("coverage of the 95 % interval")
    ax.legend(fontsize=8, frameon=False)
    ax.grid(alpha=0.3)
    verdict = {
        "result": "95 % intervals cover 95 % at the replicate counts the studies use",
        "source": "verification (known truth); Efron & Tibshirani (1993); Hesterberg (2015)",
        "setup": f"{args.datasets} synthetic data sets per count, 20 and 24 replicates",
        "womlab": "; ".join(
            f"{r.statistic} {r.replicates}: {r.coverage:.3f} (before {b:.3f})"
            for r, b in zip(now.itertuples(), table[table["interval"] != "now"]["coverage"])
        ),
        "verdict": "reproduced" if ok else "not reproduced",
    }
    write(args.out, table, fig, verdict, started)
    return table


if __name__ == "__main__":
    main(sys.argv[1:])
