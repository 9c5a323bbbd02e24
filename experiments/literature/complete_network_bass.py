"""On the complete network the runs follow the Bass model: fitted word of mouth equals the mapped one (Bass 1969).

Result. With everyone talking to everyone, the network model is the Bass model (Bass, F. M.
1969, "A new product growth model for consumer durables", Management Science 15(5)); as N
grows the share follows it (Kurtz, T. G. 1970, "Solutions of ordinary differential equations
as limits of pure jump Markov processes", J. Applied Probability 7), so the fitted word of
mouth Q_eff equals the mapped Q: Q_eff / Q_mapped = 1. The array engine moves in steps, so the
model it follows is the Bass difference form in its own step; a fit of the closed form
absorbs the step's own bias.

Set-up. Complete network, N = 4,000, 1 % initial customers, p = 0.01, q = 0.5, satisfied
share 0.8, 30 periods, steps 1, 0.5 and 0.25 (exponential step form), 20 replicates
(womlab.compare); the fit of the difference form in the run's step (what womlab reports) and,
beside it, the closed form fitted to the same mean curve (what it reported before).

Check. The 95 % interval of Q_eff / Q_mapped from the difference-form fit contains 1 at every
step.

    python experiments/literature/complete_network_bass.py [--out DIR] [--replicates 20]
"""

from __future__ import annotations

import sys
import time

import pandas as pd
from common import parser, write
from matplotlib.figure import Figure

import womlab

STEPS = (1.0, 0.5, 0.25)


def scenario(step: float, seed: int = 3) -> womlab.Scenario:
    return womlab.Scenario.from_dict(
        {
            "name": "complete network",
            "seed": seed,
            "market": {"organisations": 4000, "initial_customers": 40},
            "network": {"kind": "complete"},
            "adoption": {"external": 0.01, "word_of_mouth": 0.5, "satisfied_share": 0.8},
            "run": {"periods": 30, "time_step": step},
        }
    )


def main(argv: list[str] | None = None) -> pd.DataFrame:
    p = parser("complete_network_bass", __doc__)
    p.add_argument("--replicates", type=int, default=20, help="replicates per step (default 20)")
    args = p.parse_args(argv)
    started = time.perf_counter()
    rows = []
    for step in STEPS:
        s = scenario(step)
        c = womlab.compare(s, args.replicates, bootstrap=200, fit_bootstrap=200)
        ratio = c.fits.set_index("parameter").loc["Q_ratio"]
        closed = womlab.fit_bass(c.batch.shares().mean(axis=0)).Q / womlab.mapped_parameters(s).Q
        rows.append(
            {
                "time_step": step,
                "Q_ratio": ratio["estimate"],
                "low": ratio["low"],
                "high": ratio["high"],
                "closed_form_Q_ratio": closed,
                "Q_mapped": womlab.mapped_parameters(s).Q,
            }
        )
        print(
            f"step {step}: Q_eff / Q_mapped {ratio['estimate']:.4f} [{ratio['low']:.4f}, {ratio['high']:.4f}]; "
            f"closed form {closed:.4f}",
            flush=True,
        )
    table = pd.DataFrame(rows)
    ok = bool(((table["low"] <= 1) & (table["high"] >= 1)).all())
    fig = Figure(figsize=(5.5, 3.6), layout="constrained")
    ax = fig.subplots()
    ax.errorbar(
        table["time_step"],
        table["Q_ratio"],
        yerr=[table["Q_ratio"] - table["low"], table["high"] - table["Q_ratio"]],
        marker="o",
        label="difference form in the run's step (now)",
    )
    ax.plot(table["time_step"], table["closed_form_Q_ratio"], marker="s", ls="--", label="closed form (before)")
    ax.axhline(1, color="black", lw=0.8)
    ax.set_xscale("log")
    ax.set_xlabel("time step")
    ax.set_ylabel("Q_eff / Q_mapped")
    ax.legend(fontsize=8, frameon=False)
    ax.grid(alpha=0.3)
    verdict = {
        "result": "on the complete network Q_eff / Q_mapped = 1",
        "source": "Bass (1969); Kurtz (1970)",
        "setup": f"complete network N = 4000, p = 0.01, q = 0.5, s = 0.8, steps {STEPS}, {args.replicates} runs",
        "womlab": "; ".join(
            f"step {r.time_step:g}: {r.Q_ratio:.3f} [{r.low:.3f}, {r.high:.3f}] "
            f"(closed form {r.closed_form_Q_ratio:.3f})"
            for r in table.itertuples()
        ),
        "verdict": "reproduced" if ok else "not reproduced",
    }
    write(args.out, table, fig, verdict, started)
    return table


if __name__ == "__main__":
    main(sys.argv[1:])
