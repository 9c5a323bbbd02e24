"""``womlab run``: run replicates of a scenario and write its results folder."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from womlab.cli.common import batch_command, load, print_table

__all__ = ["add"]


def cmd_run(args: argparse.Namespace) -> int:
    from womlab.results import save_batch
    from womlab.studies import run_replicates

    scenario = load(args)
    out = Path(args.out) if args.out else Path("out") / Path(args.config).stem
    batch = run_replicates(scenario, progress=not args.quiet)
    written = save_batch(batch, out, organisations=args.organisations)
    metrics = batch.metrics()[["metric", "network_median", "network_q05", "network_q95", "aggregate"]]
    print(f"{scenario.name}: {batch.replicates} runs of {scenario.market.organisations} organisations "
          f"on a {scenario.network.kind} network, {batch.wall_time:.1f} s")
    print_table(metrics)
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    cmd = batch_command(sub, "run", cmd_run, "run replicates of a scenario and write its results folder",
                        "scenario TOML file, or a shipped demo's name", "number of replicate runs (overrides run.replicates)",
                        "out/<config name>", engine=True)
    cmd.add_argument("--organisations", choices=["parquet", "csv"],
                     help="also write organisations.parquet (or .csv): one row per replicate and organisation")
