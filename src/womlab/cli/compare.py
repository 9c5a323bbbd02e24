"""``womlab compare``: set the network runs beside every aggregate model."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from womlab.cli.common import batch_command, load, positive, print_table
from womlab.cli.fit import add_data, observed_points

__all__ = ["add"]


def cmd_compare(args: argparse.Namespace) -> int:
    from womlab.results import save_comparison
    from womlab.studies import compare

    scenario = load(args)
    observed = observed_points(args, scenario)
    out = Path(args.out) if args.out else Path("out") / f"{Path(args.config).stem}-compare"
    comparison = compare(scenario, bootstrap=args.bootstrap, progress=not args.quiet)
    written = save_comparison(comparison, out, observed=observed)
    print(comparison.summary_text())
    print()
    print_table(comparison.metrics)
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    comp = batch_command(sub, "compare", cmd_compare,
                         "run replicates and set the network beside every aggregate model: gaps, fitted parameters, figure",
                         "scenario TOML file", "number of replicate runs (overrides run.replicates)",
                         "out/<config name>-compare", engine=True)
    add_data(comp)
    comp.add_argument("--bootstrap", type=positive, default=1000, help="bootstrap resamples for the intervals (default 1000)")
