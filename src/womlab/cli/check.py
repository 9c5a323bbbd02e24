"""``womlab check``: validate a scenario, print its derived quantities, and what each command will run."""

from __future__ import annotations

import argparse
import math
from typing import Any

from womlab.cli.common import add_scenario_options, load

__all__ = ["add"]


def _peak(par: Any) -> str:
    """The Bass peak time, or why there is none, in words."""
    from womlab.aggregate import bass_peak_time

    if par.Q != par.Q:
        return "n/a (no Bass counterpart for this rule)"
    t = bass_peak_time(par.p, par.Q, par.initial_share)
    if math.isinf(t):
        return "never (no external influence, p = 0, and no initial customers: nothing starts)"
    if t == 0:
        if par.Q <= par.p:
            return "at the start (Q <= p: new customers per period only fall)"
        return "at the start (the initial share is already past the peak share (Q - p)/(2Q))"
    return f"{t:.3f}"


def cmd_check(args: argparse.Namespace) -> int:
    from numpy.random import default_rng

    from womlab.aggregate import mapped_parameters
    from womlab.dynamics.streams import streams
    from womlab.errors import ScenarioError
    from womlab.networks import network_clustering_line
    from womlab.scenario.markets import market_lines
    from womlab.scenario.registry import network_file_kinds
    from womlab.scenario.resources import check_resources, cores, describe_bytes, machine_memory, usable_jobs
    from womlab.studies import plan, slow_steps

    scenario = load(args)
    check_resources(scenario, "run", skip=args.skip_resource_check)
    par = mapped_parameters(scenario)
    a, m, run = scenario.adoption, scenario.market, scenario.run
    from_file = scenario.network.kind in network_file_kinds()
    jobs = usable_jobs(run.jobs)
    jobs_text = f"{run.jobs}" if jobs == run.jobs else f"{run.jobs} (capped at the {cores()} cores here: {jobs})"
    peak_formula = "ln((1-F0)Q/(p+Q F0))/(p+Q)" if par.initial_share > 0 else "ln(Q/p)/(p+Q)"
    rows = [
        ("scenario", scenario.name),
        ("organisations", f"{m.organisations:,}" + (" (from the file)" if from_file else "")),
        ("initial customers", f"{scenario.n_initial:,}"),
        ("seeding strategy", scenario.seeding.strategy),
        ("regions", f"{m.regions}" + (" (from the node file)" if from_file and scenario.network.nodes_path else "")),
        ("network", scenario.network.kind),
        ("mean degree", f"{par.mean_degree:.4g}" + (" (measured from the file)" if from_file else "")),
        (
            "clustering coefficient",
            network_clustering_line(scenario, default_rng(streams(scenario.seed, (0,)).network)),
        ),
        ("rule", a.rule),
        ("mean talkers per customer", f"{par.mean_talkers:.4g}"),
        ("mapped Bass p", f"{par.p:.4g}"),
        ("mapped Bass Q", f"{par.Q:.4g}"),
        (f"Bass peak time {peak_formula}", _peak(par)),
        ("slope per talker (capped Bass difference)", f"{par.slope:.4g}"),
        ("periods x steps per period", f"{run.periods} x {run.steps_per_period}"),
        ("replicates (run), engine, jobs", f"{run.replicates:,}, {run.engine}, {jobs_text}"),
        (
            "clock",
            "continuous (event engine: exact adoption times)"
            if run.clock == "continuous"
            else f"discrete, steps of {run.time_step:g} period",
        ),
    ]
    if par.cap is not None:
        rows.insert(-3, ("ceiling on the adoption rate (cap)", f"{par.cap:.4g}"))
    if a.churns:  # customers who leave: the rates and the mean stay they give (womlab.expected_stay)
        from womlab.aggregate import expected_stay

        stays = [expected_stay(d, run.time_step, run.step_probability) for d in (a.churn, a.dissatisfied_churn)]
        rows.insert(-3, ("churn per period (satisfied, dissatisfied)", f"{a.churn:.4g}, {a.dissatisfied_churn:.4g}"))
        rows.insert(-3, ("mean stay in periods (satisfied, dissatisfied)", ", ".join(f"{v:.4g}" for v in stays)))
    if a.warns:
        who = ", ".join(
            [
                "dissatisfied customers",
                *(["former customers"] if a.former_warn else []),
                *(["rejecters"] if a.rejecters_warn else []),
            ]
        )
        rows.insert(-3, ("warning strength; who warns", f"{a.warning:.4g}; {who}"))
    rows[-3:-3] = market_lines(scenario)  # segments, campaigns, openings, product generations
    width = max(len(k) for k, _ in rows)
    print(f"{args.config}: valid")
    for key, value in rows:
        print(f"  {key:<{width}}  {value}")
    table = plan(scenario)
    print(
        f"what each command will run (rough times for this machine: {cores()} cores, "
        f"{describe_bytes(machine_memory())} of memory):"
    )
    for _, row in table.iterrows():
        print(f"  {row['command']:<9} {row['what']}")
        if row["runs"]:
            print(f"  {'':<9} {row['estimate']}")
            try:
                check_resources(
                    scenario,
                    row["command"],
                    points=max(1, row["runs"] // max(1, scenario.sweep.replicates)) if row["command"] == "sweep" else 1,
                    skip=args.skip_resource_check,
                )
            except ScenarioError as exc:
                print(f"  {'':<9} refused: {exc}")
    for command in ("seeding", "run"):
        for line in slow_steps(scenario, command):
            print(f"  slow ({command}): {line}")
    return 0


def add(sub: Any) -> None:
    check = sub.add_parser(
        "check",
        help="validate a scenario; print its derived quantities and what each command will run, with a rough time",
        description="validate a scenario; print its derived quantities and what each command "
        "will run, with a rough time",
    )
    check.add_argument("config", help="scenario TOML file")
    add_scenario_options(check)
    check.add_argument(
        "--skip-resource-check",
        action="store_true",
        help="validate even when the estimate says it will not fit this machine",
    )
    check.set_defaults(func=cmd_check)
