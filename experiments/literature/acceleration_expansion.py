"""On a fixed market with external influence, a programme's value is all acceleration in the end (Libai, Muller & Peres 2013).

Result. When every potential customer adopts eventually (external influence p > 0, a fixed
market, no churn or competition), a word-of-mouth programme cannot add customers, only bring
them in sooner: over the life of the market its whole value is acceleration and expansion is
0 (Libai, B., Muller, E. & Peres, R. 2013, "Decomposing the value of word-of-mouth seeding
programs: acceleration versus expansion", Journal of Marketing Research 50(2), 161–176).
Measured at a short horizon instead, customers the baseline wins just after the horizon
look like expansion.

Set-up. Complete network of 1,000 organisations, 1 % initial customers, p = 0.01, q = 0.3,
satisfied share 0.8; a programme enrolling every customer doubles their word of mouth for
the whole 10-period horizon, reward 1 per referral, value 1 per customer per period,
discount rate 1 % per period; 20 paired replicates (womlab.evaluate_programme), the
continuation run until both arms' markets are exhausted.

Check. Whole-life expansion is exactly 0 in every replicate; the split at the horizon is
reported beside it.

    python experiments/literature/acceleration_expansion.py [--out DIR] [--replicates 20]
"""

from __future__ import annotations

import sys
import time

import numpy as np
import pandas as pd
from common import parser, write
from matplotlib.figure import Figure

import womlab


def scenario(seed: int = 5) -> womlab.Scenario:
    return womlab.Scenario.from_dict(
        {
            "name": "acceleration and expansion",
            "seed": seed,
            "market": {"organisations": 1000, "initial_customers": 10},
            "network": {"kind": "complete"},
            "adoption": {"external": 0.01, "word_of_mouth": 0.3, "satisfied_share": 0.8},
            "run": {"periods": 10},
            "referral": {
                "enrol": "all",
                "talk_multiplier": 2.0,
                "reward": 1.0,
                "value_per_period": 1.0,
                "discount_rate": 0.01,
            },
        }
    )


def main(argv: list[str] | None = None) -> pd.DataFrame:
    p = parser("acceleration_expansion", __doc__)
    p.add_argument("--replicates", type=int, default=20, help="paired replicates (default 20)")
    args = p.parse_args(argv)
    started = time.perf_counter()
    study = womlab.evaluate_programme(scenario(), args.replicates, degrees=False)
    runs = study.per_replicate()
    summary = study.summary().set_index("outcome")
    at_horizon = runs["expansion_at_horizon"].sum() / runs["incremental_value"].sum()
    lifetime = runs["expansion"].sum() / runs["incremental_value_lifetime"].sum()
    rows = []
    for name in (
        "incremental_value",
        "acceleration_at_horizon",
        "expansion_at_horizon",
        "incremental_value_lifetime",
        "acceleration",
        "expansion",
        "expanded_at_horizon",
        "expanded",
    ):
        rows.append({"outcome": name, **summary.loc[name, ["estimate", "low", "high"]].to_dict()})
    table = pd.DataFrame(rows)
    print(table.to_string(index=False))
    fig = Figure(figsize=(6, 3.6), layout="constrained")
    ax = fig.subplots()
    parts = {
        "at the horizon (10 periods)": (
            summary.loc["acceleration_at_horizon", "estimate"],
            summary.loc["expansion_at_horizon", "estimate"],
        ),
        f"whole life (continued to {int(runs['continued_to'].iloc[0])} periods)": (
            summary.loc["acceleration", "estimate"],
            summary.loc["expansion", "estimate"],
        ),
    }
    y = np.arange(len(parts))
    acc = [v[0] for v in parts.values()]
    exp = [v[1] for v in parts.values()]
    ax.barh(y, acc, color="#1f5f8b", label="acceleration")
    ax.barh(y, exp, left=acc, color="#c0392b", label="expansion")
    ax.set_yticks(y, list(parts))
    ax.set_xlabel("value of the programme per replicate (discounted customer-periods)")
    ax.legend(fontsize=8, frameon=False)
    ax.set_title("complete network, p = 0.01, fixed market", fontsize=9)
    ok = bool((runs["expansion"] == 0).all() and (runs["expanded"] == 0).all())
    verdict = {
        "result": "with p > 0 on a fixed market a programme's whole-life value is acceleration only",
        "source": "Libai, Muller & Peres (2013), Decomposing the value of word-of-mouth seeding programs, JMR 50(2)",
        "setup": f"complete network N = 1000, p = 0.01, q = 0.3, programme doubling word of mouth for 10 periods, "
        f"{args.replicates} paired replicates, continued until exhausted",
        "womlab": f"expansion {100 * lifetime:.1f} % of the whole-life value (every replicate exactly 0); at the "
        f"horizon {100 * at_horizon:.1f} % was labelled expansion",
        "verdict": "reproduced" if ok else "not reproduced",
    }
    write(args.out, table, fig, verdict, started)
    return table


if __name__ == "__main__":
    main(sys.argv[1:])
