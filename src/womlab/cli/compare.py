"""``womlab compare``: set the network runs beside every aggregate model."""

from __future__ import annotations

import argparse
from typing import Any

from womlab.cli.common import at_least_one, batch_command, figure_options, prepare, print_table
from womlab.cli.fit import add_data, observed_points

__all__ = ["add"]


def cmd_compare(args: argparse.Namespace) -> int:
    from womlab.results import save_comparison
    from womlab.studies import compare

    scenario, out = prepare(args, "compare")
    observed = observed_points(args, scenario)
    comparison = compare(scenario, bootstrap=args.bootstrap, progress=not args.quiet)
    written = save_comparison(comparison, out, observed=observed, **figure_options(args))
    print(comparison.summary_text())
    print()
    print_table(comparison.metrics)
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    comp = batch_command(
        sub,
        "compare",
        cmd_compare,
        "run replicates and set the network beside every aggregate model: gaps, fitted parameters, figure",
        "scenario TOML file",
        "number of replicate runs (overrides run.replicates)",
        engine=True,
    )
    add_data(comp)
    comp.add_argument(
        "--bootstrap", type=at_least_one, default=1000, help="bootstrap resamples for the intervals (default 1000)"
    )
