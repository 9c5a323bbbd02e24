"""``womlab seeding``: compare seeding strategies on paired replicates."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from womlab.cli.common import batch_command, print_table

__all__ = ["add"]


def cmd_seeding(args: argparse.Namespace) -> int:
    from womlab.scenario import load_scenario
    from womlab.results import save_seeding_study
    from womlab.studies import compare_strategies

    scenario = load_scenario(args.config)
    out = Path(args.out) if args.out else Path("out") / f"{Path(args.config).stem}-seeding"
    study = compare_strategies(scenario, replicates=args.replicates, jobs=args.jobs, progress=not args.quiet)
    written = save_seeding_study(study, out)
    table = study.strategies_table()
    outcome = scenario.study.outcome
    cols = ["strategy", f"{outcome}_mean", f"{outcome}_low", f"{outcome}_high", "lift_ratio", "lift_ratio_low",
            "lift_ratio_high", "wilcoxon_p", "variance_reduction"]
    print(f"{scenario.name}: {len(study.strategies)} seeding strategies x {study.replicates} paired replicates, "
          f"budget {study.scenario.n_initial} of {scenario.market.organisations} organisations "
          f"on a {scenario.network.kind} network, {study.wall_time:.1f} s")
    print_table(table[cols])
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    batch_command(sub, "seeding", cmd_seeding, "compare seeding strategies on paired replicates ([study] section)",
                  "scenario TOML file", "paired replicates (overrides study.replicates)",
                  "out/<config name>-seeding")
