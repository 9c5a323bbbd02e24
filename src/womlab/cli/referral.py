"""``womlab referral``: evaluate a scenario's referral programme against no programme."""

from __future__ import annotations

import argparse
from typing import Any

from womlab.cli.common import batch_command, figure_options, prepare, print_table

__all__ = ["add"]


def budget_line(study: Any) -> str | None:
    """A line saying whether the programme's budget cap bound, and when (None without a cap)."""
    import numpy as np

    budget = study.scenario.referral.budget
    if budget is None:
        return None
    periods = np.array([r.extra.get("budget_exhausted_period", -1) for r in study.programme])
    spent = periods >= 0
    if not spent.any():
        return f"budget cap {budget:g}: never reached in {len(periods)} replicates"
    return (
        f"budget cap {budget:g} bound: spent in {int(spent.sum())} of {len(periods)} replicates (median period "
        f"{float(np.median(periods[spent])):g}); from then on nothing was paid and the boost stopped"
    )


def cmd_referral(args: argparse.Namespace) -> int:
    import time

    from womlab.results import save_programme
    from womlab.studies import evaluate_programme, programme_summary

    scenario, out = prepare(args, "referral")
    start = time.perf_counter()
    study = evaluate_programme(scenario, progress=not args.quiet)
    wall = time.perf_counter() - start
    written = save_programme(study, out, wall_time=wall, **figure_options(args))
    ref = scenario.referral
    print(
        f"{scenario.name}: referral programme vs none, {study.replicates} paired replicates of "
        f"{scenario.market.organisations:,} organisations on a {scenario.network.kind} network, {wall:.1f} s"
    )
    print(f"programme: {programme_summary(scenario)}; discount rate {ref.discount_rate:g} per period")
    line = budget_line(study)
    if line:
        print(line)
    print_table(study.summary()[["outcome", "estimate", "low", "high"]])
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    batch_command(
        sub,
        "referral",
        cmd_referral,
        "evaluate the scenario's referral programme against no programme",
        "scenario TOML file with a [referral] section",
        "paired replicates (overrides run.replicates)",
    )
