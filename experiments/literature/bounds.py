"""Adoption on any network lies between the two-organisation network and the Bass curve (Fibich & Levin 2023).

Result. For the Bass model on a network in which every organisation's word of mouth sums to
q (the ``share`` rule with equal talkers, every customer satisfied) and no organisation is
isolated, the expected adoption is at least that of the two-organisation network (N/2 pairs)
and at most the Bass curve of the infinite complete network (Fibich & Levin 2023, "Universal
bounds for spreading on networks", arXiv:2312.05450; the complete network as the upper bound
already in Fibich & Gibori 2010, Operations Research 58(5)).

Set-up. Continuous clock (the event engine: exact adoption times), p = 0.01, q = 0.4, no
initial customers, N = 2,000, 20 replicates per network kind: the perfect matching (``regular``
with degree 1), ring, random regular, small world (rewiring 0.1), random, regional and
scale-free networks of mean degree 4, and the complete network. The lower bound is the
closed form derived in :mod:`womlab.aggregate.exact` (checked here against the matching's
runs), the upper bound :func:`womlab.bass_share` with Q = q.

Check. At every period the mean share of each kind lies within [lower − 4 SE, upper + 4 SE]
(SE of the mean of the replicates) plus 1/N, one organisation's share; the matching's mean is
within the same tolerance of the closed form on both sides.

    python experiments/literature/bounds.py [--out DIR] [--replicates 20] [--organisations 2000]
"""

from __future__ import annotations

import sys
import time

import numpy as np
import pandas as pd
from common import parser, write
from matplotlib.figure import Figure

import womlab
from womlab.aggregate.exact import two_organisation_share

P, Q, PERIODS = 0.01, 0.4, 60
KINDS = {  # label: network section
    "matching (two-organisation)": {"kind": "regular", "mean_degree": 1},
    "ring": {"kind": "ring", "mean_degree": 4},
    "random regular": {"kind": "regular", "mean_degree": 4},
    "small world 0.1": {"kind": "small_world", "mean_degree": 4, "rewiring": 0.1},
    "random": {"kind": "random", "mean_degree": 4},
    "regional": {"kind": "regional", "mean_degree": 4, "within_region_share": 0.9},
    "scale-free": {"kind": "scale_free", "mean_degree": 4},
    "complete": {"kind": "complete"},
}


def scenario(network: dict, organisations: int, seed: int = 2023) -> womlab.Scenario:
    return womlab.Scenario.from_dict(
        {
            "name": "bounds",
            "seed": seed,
            "market": {"organisations": organisations, "initial_customers": 0, "regions": 4},
            "network": network,
            "adoption": {
                "rule": "share",
                "external": P,
                "word_of_mouth": Q,
                "satisfied_share": 1.0,
                "talkers_per_customer": 1,
            },
            "run": {"periods": PERIODS, "clock": "continuous"},
        }
    )


def check(shares: np.ndarray, lower: np.ndarray, upper: np.ndarray, organisations: int) -> dict[str, float]:
    """How far the mean curve goes past each bound: in standard errors of the mean where the
    runs vary (positive = past the bound), and whether it stays within 4 SE plus one
    organisation's share 1/N (a share moves in steps of 1/N: when every run has reached
    the whole market the mean is 1, a hair above a bound of 1 − 10⁻⁹)."""
    mean = shares.mean(axis=0)
    se = shares.std(axis=0, ddof=1) / np.sqrt(shares.shape[0])
    varies = se[1:] > 0
    below, above = (lower - mean)[1:], (mean - upper)[1:]
    slack = 4 * se[1:] + 1.0 / organisations
    within = bool((below <= slack).all() and (above <= slack).all())
    return {
        "below_lower_se": float((below[varies] / se[1:][varies]).max()),
        "above_upper_se": float((above[varies] / se[1:][varies]).max()),
        "between": within,
    }


def main(argv: list[str] | None = None) -> pd.DataFrame:
    p = parser("bounds", __doc__)
    p.add_argument("--replicates", type=int, default=20, help="replicates per network kind (default 20)")
    p.add_argument("--organisations", type=int, default=2000, help="organisations (default 2000)")
    args = p.parse_args(argv)
    started = time.perf_counter()
    t = np.arange(PERIODS + 1, dtype=float)
    lower, upper = two_organisation_share(t, P, Q), womlab.bass_share(t, P, Q)
    rows, curves = [], {}
    matching_ok = False
    for label, net in KINDS.items():
        s = scenario(net, args.organisations)
        shares = womlab.run_replicates(s, args.replicates).shares()
        if label.startswith("matching"):
            se = shares.std(axis=0, ddof=1) / np.sqrt(shares.shape[0])
            matching_ok = bool((np.abs(shares.mean(axis=0) - lower) <= 4 * se + 1.0 / args.organisations).all())
        network = womlab.build_network(s, np.random.default_rng(womlab.streams(s.seed, (0,)).network))
        isolated = 0 if network.complete else int((network.degree() == 0).sum())
        c = check(shares, lower, upper, args.organisations)
        mean = shares.mean(axis=0)
        rows.append(
            {
                "network": label,
                "isolated": isolated,
                **c,
                "t50": womlab.time_to_share(mean, 0.5),
                "share_at_20": float(mean[20]),
            }
        )
        curves[label] = mean
        print(
            f"{label:28s} isolated {isolated:3d}  past lower {c['below_lower_se']:+7.1f} SE  "
            f"past upper {c['above_upper_se']:+7.1f} SE",
            flush=True,
        )
    table = pd.DataFrame(rows)
    closed_form_gap = float(np.abs(curves["matching (two-organisation)"] - lower).max())
    fig = Figure(figsize=(7.5, 4.8), layout="constrained")
    ax = fig.subplots()
    ax.fill_between(t, lower, upper, color="#dddddd", label="between the bounds")
    ax.plot(t, upper, color="black", lw=2, label="Bass, infinite complete network (upper bound)")
    ax.plot(t, lower, color="black", lw=2, ls="--", label="two-organisation network, closed form (lower bound)")
    for label, mean in curves.items():
        ax.plot(t, mean, lw=1.2, label=label)
    ax.set_xlabel("period")
    ax.set_ylabel("customers, share of market")
    ax.set_title(f"p = {P}, q = {Q}, N = {args.organisations}, {args.replicates} runs per network", fontsize=9)
    ax.legend(fontsize=7, frameon=False)
    ax.grid(alpha=0.3)
    # the matching is the lower bound itself: its mean within 4 SE of the closed form on both sides
    ok = bool(table["between"].all()) and matching_ok
    verdict = {
        "result": "adoption between the two-organisation network and the Bass curve",
        "source": "Fibich & Levin (2023), Universal bounds for spreading on networks; Fibich & Gibori (2010)",
        "setup": f"share rule, p = {P}, q = {Q}, continuous clock, N = {args.organisations}, "
        f"{args.replicates} runs x {len(KINDS)} network kinds",
        "womlab": f"every kind within 4 SE of the band (largest excursions: {table['below_lower_se'].max():+.1f} SE "
        f"below the lower, {table['above_upper_se'].max():+.1f} SE above the upper); matching vs closed "
        f"form: largest gap {closed_form_gap:.4f}",
        "verdict": "reproduced" if ok else "not reproduced",
    }
    write(args.out, table, fig, verdict, started)
    return table


if __name__ == "__main__":
    main(sys.argv[1:])
