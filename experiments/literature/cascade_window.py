"""Global cascades from one seed occur only in a window of mean degree (Watts 2002).

Result. With a fixed fractional threshold φ on random networks, a single seed sets off a
global cascade only when the mean degree z lies in a window: below z ≈ 1 the network has no
giant component, and above the upper edge most organisations have so many ties that one
adopting neighbour is too small a share to tip them. The edges solve Watts's cascade
condition Σₖ k(k − 1) ρₖ pₖ = z, with ρₖ = 1 for the *vulnerable* degrees 1 ≤ k ≤ ⌊1/φ⌋ and
pₖ the Poisson degree distribution; for Erdős–Rényi networks it reads
z e^{−z} Σⱼ₌₀^{K−2} zʲ / j! = 1, K = ⌊1/φ⌋ (Watts, D. J. 2002, "A simple model of global
cascades on random networks", PNAS 99, 5766–5771, eq. 6 and Fig. 1).

Set-up. ``threshold`` rule with a fixed threshold φ = 0.18 (K = 5), no external influence,
every customer satisfied and talking, one seed chosen at random, ``random`` (Erdős–Rényi)
networks of N = 10,000 organisations, mean degree z = 0.5, 1, …, 8, 100 runs per z, a long
horizon (100 periods) so that only the final size matters. A cascade is *global* when it
reaches at least 10 % of the market (the sizes are bimodal: small cascades stay below 1 %).

Check. Global cascades happen (frequency > 5 %) on a window of z whose edges are within one
grid step (0.5) of the cascade condition's roots, and never well outside it.

    python experiments/literature/cascade_window.py [--out DIR] [--runs 100] [--organisations 10000]
"""

from __future__ import annotations

import sys
import time

import numpy as np
import pandas as pd
from common import parser, write
from matplotlib.figure import Figure
from scipy import optimize, special

import womlab

PHI = 0.18
GLOBAL = 0.10
GRID = np.arange(0.5, 8.01, 0.5)


def cascade_condition(z: float, phi: float = PHI) -> float:
    """z e^{−z} Σ_{j=0}^{K−2} z^j / j! − 1 for Poisson degrees (Watts 2002, eq. 6): > 0 inside the window."""
    k = int(np.floor(1 / phi + 1e-12))
    return float(z * np.exp(-z) * sum(z**j / special.factorial(j) for j in range(k - 1)) - 1)


def window_edges(phi: float = PHI) -> tuple[float, float]:
    """The two roots of :func:`cascade_condition`."""
    zs = np.linspace(0.05, 30, 3000)
    vals = np.array([cascade_condition(z, phi) for z in zs])
    change = np.flatnonzero(np.sign(vals[:-1]) != np.sign(vals[1:]))
    roots = [optimize.brentq(cascade_condition, zs[i], zs[i + 1], args=(phi,)) for i in change]
    return float(roots[0]), float(roots[-1])


def scenario(z: float, organisations: int, seed: int = 2002) -> womlab.Scenario:
    return womlab.Scenario.from_dict(
        {
            "name": "cascade window",
            "seed": seed,
            "market": {"organisations": organisations, "initial_customers": 1},
            "network": {"kind": "random", "mean_degree": float(z)},
            "adoption": {
                "rule": "threshold",
                "external": 0.0,
                # the synchronous threshold model of the source: adopt in the step of crossing
                "word_of_mouth": float("inf"),
                "satisfied_share": 1.0,
                "talkers_per_customer": 1,
                "threshold": {"distribution": "fixed", "mean": PHI},
            },
            "run": {"periods": 100},
        }
    )


def global_frequency(z: float, runs: int, organisations: int) -> tuple[float, float]:
    """Share of single-seed runs that end with a global cascade, and the mean size of those."""
    final = womlab.run_replicates(scenario(z, organisations), runs).shares()[:, -1]
    hit = final >= GLOBAL
    return float(hit.mean()), float(final[hit].mean()) if hit.any() else float("nan")


def main(argv: list[str] | None = None) -> pd.DataFrame:
    p = parser("cascade_window", __doc__)
    p.add_argument("--runs", type=int, default=100, help="single-seed runs per mean degree (default 100)")
    p.add_argument("--organisations", type=int, default=10000, help="organisations (default 10000)")
    args = p.parse_args(argv)
    started = time.perf_counter()
    low, high = window_edges()
    rows = []
    for z in GRID:
        freq, size = global_frequency(z, args.runs, args.organisations)
        se = np.sqrt(max(freq * (1 - freq), 1 / args.runs) / args.runs)
        rows.append(
            {
                "mean_degree": z,
                "global_frequency": freq,
                "frequency_se": se,
                "mean_global_size": size,
                "inside_theory_window": low < z < high,
            }
        )
        print(f"z = {z:4.1f}: global cascades {freq:5.2f} (mean size {size:.3f})", flush=True)
    table = pd.DataFrame(rows)
    seen = table.loc[table["global_frequency"] > 0.05, "mean_degree"]
    obs_low, obs_high = float(seen.min()), float(seen.max())
    ok = abs(obs_low - low) <= 0.5 + 1e-9 and abs(obs_high - high) <= 0.5 + 1e-9
    fig = Figure(figsize=(6.5, 4), layout="constrained")
    ax = fig.subplots()
    ax.axvspan(low, high, color="#eeeeee", label=f"cascade condition: {low:.2f} < z < {high:.2f}")
    ax.errorbar(
        table["mean_degree"],
        table["global_frequency"],
        yerr=1.96 * table["frequency_se"],
        marker="o",
        color="#1f5f8b",
        label=f"womlab: share of {args.runs} single-seed runs reaching ≥ 10 %",
    )
    ax.plot(
        table["mean_degree"],
        table["mean_global_size"],
        marker="s",
        ls="--",
        color="#c0392b",
        label="mean size of the global cascades",
    )
    ax.set_xlabel("mean degree z")
    ax.set_ylabel("frequency, size")
    ax.set_title(f"threshold φ = {PHI}, N = {args.organisations}", fontsize=9)
    ax.legend(fontsize=7, frameon=False)
    ax.grid(alpha=0.3)
    verdict = {
        "result": "global cascades only in a window of mean degree",
        "source": "Watts (2002), A simple model of global cascades on random networks, PNAS 99",
        "setup": f"threshold rule, fixed φ = {PHI}, one seed, Erdős–Rényi, N = {args.organisations}, "
        f"{args.runs} runs per z in {GRID[0]:g}..{GRID[-1]:g}",
        "womlab": f"global cascades (> 5 % of runs) for z = {obs_low:g}..{obs_high:g}; theory {low:.2f} < z < {high:.2f}; "
        f"largest frequency {table['global_frequency'].max():.2f} at z = "
        f"{table.loc[table['global_frequency'].idxmax(), 'mean_degree']:g}",
        "verdict": "reproduced" if ok else "not reproduced",
    }
    write(args.out, table, fig, verdict, started)
    return table


if __name__ == "__main__":
    main(sys.argv[1:])
