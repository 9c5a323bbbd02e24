"""``womlab check``: validate a scenario and print its derived quantities."""

from __future__ import annotations

import argparse
from typing import Any


__all__ = ["add"]


def cmd_check(args: argparse.Namespace) -> int:
    from womlab.aggregate import bass_peak_time, mapped_parameters
    from numpy.random import default_rng

    from womlab.dynamics.streams import streams
    from womlab.networks import network_clustering_line
    from womlab.scenario import load_scenario

    scenario = load_scenario(args.config)
    par = mapped_parameters(scenario)
    a = scenario.adoption
    rows = [
        ("scenario", scenario.name),
        ("organisations", scenario.market.organisations),
        ("initial customers", scenario.n_initial),
        ("seeding strategy", scenario.seeding.strategy),
        ("regions", scenario.market.regions),
        ("network", scenario.network.kind),
        ("mean degree", f"{par.mean_degree:.4g}"),
        ("clustering coefficient", network_clustering_line(scenario, default_rng(streams(scenario.seed, (0,)).network))),
        ("rule", a.rule),
        ("mean talkers per customer", f"{par.mean_talkers:.4g}"),
        ("mapped Bass p", f"{par.p:.4g}"),
        ("mapped Bass Q", f"{par.Q:.4g}"),
        ("Bass peak time ln(Q/p)/(p+Q)", f"{bass_peak_time(par.p, par.Q):.3f}" if par.Q > par.p > 0
         else "n/a (no Bass counterpart for this rule)" if par.Q != par.Q else "n/a (Q <= p)"),
        ("stock-and-flow slope", f"{par.slope:.4g}"),
        ("periods x steps per period", f"{scenario.run.periods} x {scenario.run.steps_per_period}"),
        ("replicates, engine, jobs", f"{scenario.run.replicates}, {scenario.run.engine}, {scenario.run.jobs}"),
        ("clock", "continuous (event engine: exact adoption times)" if scenario.run.clock == "continuous"
         else f"discrete, steps of {scenario.run.time_step:g} period"),
    ]
    if par.cap is not None:
        rows.insert(-3, ("cap", f"{par.cap:.4g}"))
    width = max(len(k) for k, _ in rows)
    print(f"{args.config}: valid")
    for key, value in rows:
        print(f"  {key:<{width}}  {value}")
    return 0


def add(sub: Any) -> None:
    check = sub.add_parser("check", help="validate a scenario and print its derived quantities")
    check.add_argument("config", help="scenario TOML file")
    check.set_defaults(func=cmd_check)
