"""``womlab run``: run replicates of a scenario and write its results folder."""

from __future__ import annotations

import argparse
from typing import Any

from womlab.cli.common import batch_command, figure_options, prepare, print_table
from womlab.cli.fit import add_data, observed_points

__all__ = ["add"]


def cmd_run(args: argparse.Namespace) -> int:
    from womlab.results import save_batch
    from womlab.studies import run_replicates

    scenario, out = prepare(args, "run", organisations=args.organisations)
    observed = observed_points(args, scenario)
    batch = run_replicates(scenario, progress=not args.quiet)
    written = save_batch(
        batch, out, organisations=args.organisations, observed=observed, by=args.by, **figure_options(args)
    )
    metrics = batch.metrics()[["metric", "network_median", "network_q05", "network_q95", "aggregate"]]
    print(
        f"{scenario.name}: {batch.replicates} runs of {scenario.market.organisations:,} organisations "
        f"on a {scenario.network.kind} network, {batch.wall_time:.1f} s"
    )
    print_table(metrics)
    print(
        "network_median, _q05, _q95: the median and 5-95 % range of each metric over the runs; "
        "aggregate: the same metric of the aggregate model's curve"
    )
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    cmd = batch_command(
        sub,
        "run",
        cmd_run,
        "run replicates of a scenario and write its results folder",
        "scenario TOML file, or a shipped demo's name",
        "number of replicate runs (overrides run.replicates)",
        engine=True,
    )
    cmd.add_argument(
        "--organisations",
        choices=["parquet", "csv"],
        help="also write organisations.parquet (or .csv): one row per replicate and organisation",
    )
    cmd.add_argument(
        "--by",
        choices=["segment", "region"],
        help="also write curves, summary, metrics and a figure split by segment or region",
    )
    add_data(cmd)
