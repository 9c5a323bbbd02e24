"""``womlab seeding``: compare seeding strategies on paired replicates."""

from __future__ import annotations

import argparse
from typing import Any

from womlab.cli.common import batch_command, figure_options, prepare, print_table

__all__ = ["add"]


def cmd_seeding(args: argparse.Namespace) -> int:
    from womlab.results import save_seeding_study
    from womlab.studies import compare_strategies, slow_steps

    scenario, out = prepare(args, "seeding")
    if not args.quiet:
        import sys

        for line in slow_steps(scenario, "seeding"):
            print(f"womlab: slow step: {line}", file=sys.stderr)
    study = compare_strategies(scenario, progress=not args.quiet, snapshot=True if args.network_figure else None)
    written = save_seeding_study(study, out, **figure_options(args))
    table = study.strategies_table()
    outcome = scenario.study.outcome
    cols = [
        "strategy",
        f"{outcome}_mean",
        f"{outcome}_low",
        f"{outcome}_high",
        "lift_ratio",
        "lift_ratio_low",
        "lift_ratio_high",
        "wilcoxon_p",
        "variance_reduction",
    ]
    print(
        f"{scenario.name}: {len(study.strategies)} seeding strategies x {study.replicates} paired replicates, "
        f"budget {study.scenario.n_initial} of {scenario.market.organisations:,} organisations "
        f"on a {scenario.network.kind} network, {study.wall_time:.1f} s"
    )
    print_table(table[cols])
    for line in (
        f"{outcome}_mean, _low, _high: mean and 95 % interval over the replicates",
        f"lift_ratio, _low, _high: mean {outcome} against random's, 95 % paired-bootstrap interval",
        "wilcoxon_p: signed-rank test of the paired differences against random",
        "variance_reduction: 1 - Var(strategy - random) / (Var strategy + Var random), the share of the "
        "variance pairing removed;",
        "  negative when the two move against each other across replicates (pairing then widened the interval)",
    ):
        print(line)
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    cmd = batch_command(
        sub,
        "seeding",
        cmd_seeding,
        "compare seeding strategies on paired replicates ([study] section)",
        "scenario TOML file",
        "paired replicates (overrides study.replicates)",
    )
    cmd.add_argument(
        "--network-figure",
        action="store_true",
        help="draw network.png at any size (by default only up to 600 organisations)",
    )
