"""``womlab referral``: evaluate a scenario's referral programme against no programme."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from womlab.cli.common import batch_command, load, print_table

__all__ = ["add"]


def cmd_referral(args: argparse.Namespace) -> int:
    import time

    from womlab.results import save_programme
    from womlab.studies import evaluate_programme

    scenario = load(args)
    out = Path(args.out) if args.out else Path("out") / f"{Path(args.config).stem}-referral"
    start = time.perf_counter()
    study = evaluate_programme(scenario, progress=not args.quiet)
    wall = time.perf_counter() - start
    written = save_programme(study, out, wall_time=wall)
    ref = scenario.referral
    value = f"lifetime value {ref.lifetime_value:g}" if ref.lifetime_value is not None else (
        f"value {1.0 if ref.value_per_period is None else ref.value_per_period:g} per customer per period")
    print(f"{scenario.name}: referral programme (enrol {ref.enrol}, periods {ref.start}-{ref.last_period(scenario.run.periods)}) "
          f"vs none, {study.replicates} paired replicates of {scenario.market.organisations} organisations "
          f"on a {scenario.network.kind} network, {wall:.1f} s")
    print(f"{value}, discount rate {ref.discount_rate:g} per period")
    print_table(study.summary()[["outcome", "estimate", "low", "high"]])
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    batch_command(sub, "referral", cmd_referral, "evaluate the scenario's referral programme against no programme",
                  "scenario TOML file with a [referral] section", "paired replicates (overrides run.replicates)",
                  "out/<config name>-referral")
