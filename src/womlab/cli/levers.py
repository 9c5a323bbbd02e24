"""``womlab levers``: each growth lever's value against the period it is pulled."""

from __future__ import annotations

import argparse
from typing import Any

from womlab.cli.common import batch_command, figure_options, prepare, print_table

__all__ = ["add"]


def cmd_levers(args: argparse.Namespace) -> int:
    import time

    from womlab.results import save_levers
    from womlab.studies import lever_timing

    scenario, out = prepare(args, "levers")
    start = time.perf_counter()
    study = lever_timing(scenario, progress=not args.quiet)
    wall = time.perf_counter() - start
    written = save_levers(study, out, by=args.by, wall_time=wall, **figure_options(args))
    print(
        f"{scenario.name}: {len(study.levers)} levers x {len(study.pulled_at)} periods pulled, "
        f"{study.replicates} paired replicates of {scenario.market.organisations:,} organisations on a "
        f"{scenario.network.kind} network, continued to period {study.continued_to}, {wall:.1f} s"
    )
    table = study.table()
    print_table(
        table[
            [
                "lever",
                "pulled_at",
                "incremental_customers",
                "incremental_value",
                "cost",
                "roi",
                "acceleration",
                "expansion",
                "stage",
            ]
        ]
    )
    print_table(study.best(args.by))
    cross = study.crossover(args.by)
    if cross["period"] == cross["period"]:  # not NaN
        print(
            f"best lever by {args.by} changes from {cross['from']} to {cross['to']} at period {cross['period']:g} "
            f"(95 % interval {cross['low']:.3g} to {cross['high']:.3g}; {cross['interval']})"
        )
    else:
        print(f"best lever by {args.by}: {cross['from']} at every period pulled")
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    cmd = batch_command(
        sub,
        "levers",
        cmd_levers,
        "value of each growth lever against the period it is pulled",
        "scenario TOML file with a [levers] section",
        "paired replicates (overrides run.replicates)",
    )
    cmd.add_argument(
        "--by",
        choices=["incremental_value", "incremental_value_lifetime", "roi"],
        default="incremental_value",
        help="what makes a lever best (default incremental_value)",
    )
