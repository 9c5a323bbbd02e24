"""Speed of a fit: three free fields, a 20-period series, 2,000 organisations, default settings.

Run: ``python benchmarks/calibration.py`` (or ``make bench``). Writes
benchmarks/results/calibration.md.

The series is invented: one run of the scenario below (a regional network of 2,000
organisations, p = 0.004, q = 0.55, 20 periods, new customers per period). The fit frees
``adoption.external``, ``adoption.word_of_mouth`` and ``market.organisations`` with the
``[fit]`` defaults (200 particles, at most 11 generations and 6,000 simulations, the
market size's default prior from the data).

What is measured, side by side in one process:

1. the fit with ``jobs = 1``: wall and CPU time of this process (CPU time is barely
   disturbed by other processes on a shared machine), split into time inside the
   simulations and the SMC's own work;
2. the fit with ``jobs = 2`` (loky): wall time, the requirement's figure; the two fits
   must give the same posterior bit for bit;
3. the cost of one simulation at the prior's and at the posterior's market sizes.

The 2-core estimate is the jobs = 1 CPU time of the fit, split into simulations and the SMC's
own work in the proportion of their wall times, with the simulations' part halved: what two
free cores would take. CPU time is little disturbed by other processes; on a machine shared
with other work the measured jobs = 2 wall time is longer, and the load average is written
beside it.
"""

from __future__ import annotations

import argparse
import os
import platform
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "src"))

from womlab.scenario import Scenario  # noqa: E402
from womlab.store import versions  # noqa: E402
from womlab.studies import fit_observed, run_one, simulated_series  # noqa: E402

SCENARIO = Scenario.from_dict(
    {
        "name": "calibration benchmark (invented)",
        "seed": 31,
        "market": {"organisations": 2000, "initial_customers": 8, "regions": 5},
        "network": {"kind": "regional", "mean_degree": 8, "within_region_share": 0.8},
        "adoption": {"rule": "share", "external": 0.004, "word_of_mouth": 0.55, "satisfied_share": 0.75},
        "run": {"periods": 20},
        "fit": {
            "free": ["adoption.external", "adoption.word_of_mouth", "market.organisations"],
            "priors": {
                "adoption.external": {"distribution": "log_uniform", "low": 0.0002, "high": 0.05},
                "adoption.word_of_mouth": {"distribution": "log_uniform", "low": 0.05, "high": 2.0},
            },
        },
    }
)
OUT = Path(__file__).resolve().parent / "results" / "calibration.md"


def per_simulation(organisations: int, runs: int = 30) -> float:
    """CPU seconds of one simulation (run_one, this process) at a market size."""
    s = SCENARIO.replace("market.organisations", int(organisations))
    run_one(s, (0,))
    cpu = time.process_time()
    for r in range(runs):
        run_one(s, (r + 1,))
    return (time.process_time() - cpu) / runs


def timed_fit(series, jobs: int):  # noqa: ANN001, ANN201
    wall, cpu = time.perf_counter(), time.process_time()
    fit = fit_observed(SCENARIO, series, jobs=jobs)
    return fit, time.perf_counter() - wall, time.process_time() - cpu


def main() -> None:
    argparse.ArgumentParser(
        description=__doc__.splitlines()[0], epilog="Writes benchmarks/results/calibration.md."
    ).parse_args()
    series = simulated_series(SCENARIO, periods=20, key=(2026,), source="invented 20-period series")
    load_before = os.getloadavg()
    one, wall1, cpu1 = timed_fit(series, 1)
    two, wall2, _ = timed_fit(series, 2)
    load_after = os.getloadavg()
    same = one.posterior.equals(two.posterior)
    gens = one.generations()
    sim_wall = float(gens["simulating_seconds"].sum())
    smc_work = wall1 - sim_wall  # the SMC's own work, in this process, at jobs = 1
    share = sim_wall / wall1
    estimate = cpu1 * ((1 - share) + share / 2)  # CPU time, split as the wall time was: load-proof
    median_n = float(one.summary().set_index("parameter").loc["market.organisations", "median"])
    prior_high = one.priors[one.names.index("market.organisations")].high
    costs = {n: per_simulation(n) for n in (2000, int(median_n), int(prior_high))}
    lines = [
        "# Calibration benchmark",
        "",
        f"Command: `python benchmarks/calibration.py` (also run by `make bench`). Written "
        f"{time.strftime('%Y-%m-%d %H:%M', time.gmtime())} UTC.",
        "",
        f"A fit of three free fields (adoption.external, adoption.word_of_mouth, market.organisations) to an "
        f"invented 20-period series of new customers (one run of a regional network of 2,000 organisations, "
        f"p = 0.004, q = 0.55), with the `[fit]` defaults: {one.settings.particles} particles, at most "
        f"{one.settings.generations + 1} generations and {one.settings.simulations} simulations; the market size's "
        f"prior is the default, {one.priors[one.names.index('market.organisations')].describe()}.",
        "",
        "## Result",
        "",
        "| | value |",
        "| --- | ---: |",
        f"| simulations | {one.smc.simulations} |",
        f"| generations | {len(gens)} |",
        f"| final tolerance | {gens['tolerance'].iloc[-1]:.4g} |",
        f"| why it stopped | {one.smc.stopped} |",
        f"| jobs = 1: wall (s) | {wall1:.1f} |",
        f"| jobs = 1: CPU of this process (s) | {cpu1:.1f} |",
        f"| jobs = 1: inside the simulations (s) | {sim_wall:.1f} |",
        f"| jobs = 1: the SMC's own work and the Bass fit (s) | {smc_work:.1f} |",
        f"| estimate for 2 free cores: CPU x (SMC share + simulation share / 2) (s) | {estimate:.1f} |",
        f"| jobs = 2 (loky): wall, measured (s) | {wall2:.1f} |",
        f"| load average (1 min) before / after | {load_before[0]:.1f} / {load_after[0]:.1f} |",
        f"| posterior identical for jobs = 1 and 2 | {same} |",
        "",
        "## What limits it",
        "",
        "CPU seconds of one simulation (`run_one`, 20 periods, array engine), at the true market size, the posterior "
        "median and the top of the market-size prior:",
        "",
        "| organisations | CPU per simulation (ms) |",
        "| ---: | ---: |",
        *[f"| {n:,} | {1000 * c:.1f} |" for n, c in costs.items()],
        "",
        f"Simulations take {100 * sim_wall / wall1:.0f} % of the jobs = 1 fit; the rest is the SMC's own work "
        "(proposals, kernel densities, weights) and the Bass fit to the same points. So the fit's time is "
        "the number of simulations times the engine's cost per simulation, which grows with the market size drawn: "
        "the first generation, drawn from the prior, is the most expensive per simulation.",
        "",
        "## Per generation (jobs = 1)",
        "",
        _markdown(
            gens[
                [
                    "generation",
                    "tolerance",
                    "proposals",
                    "accepted",
                    "acceptance_rate",
                    "ess",
                    "simulations",
                    "seconds",
                    "simulating_seconds",
                ]
            ]
        ),
        "",
        "## Machine and versions",
        "",
        f"- {platform.platform()}, {os.cpu_count()} cores, Python {platform.python_version()}",
        *[f"- {k}: {v}" for k, v in versions().items()],
        "",
    ]
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text("\n".join(lines), encoding="utf-8")
    print("\n".join(lines))


def _markdown(frame) -> str:  # noqa: ANN001
    head = "| " + " | ".join(frame.columns) + " |"
    rule = "| " + " | ".join("---:" for _ in frame.columns) + " |"
    rows = [
        "| " + " | ".join(f"{v:.4g}" if isinstance(v, float) else str(v) for v in row) + " |"
        for row in frame.itertuples(index=False)
    ]
    return "\n".join([head, rule, *rows])


if __name__ == "__main__":
    np.seterr(all="ignore")
    main()
