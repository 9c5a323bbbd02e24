"""What every ``womlab`` command shares: option types, loading the scenario with its overrides, tables."""

from __future__ import annotations

import argparse
from typing import Any

__all__ = ["positive", "load", "print_table", "batch_command"]


def positive(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a whole number, got {text!r}") from None
    if value < 1 and value != -1:
        raise argparse.ArgumentTypeError(f"must be >= 1 (or -1 for every core), got {value}")
    return value


def load(args: argparse.Namespace) -> Any:
    from womlab.scenario import load_scenario

    scenario = load_scenario(args.config)
    changes = {}
    if getattr(args, "replicates", None) is not None:
        changes["run.replicates"] = args.replicates
    if getattr(args, "jobs", None) is not None:
        changes["run.jobs"] = args.jobs
    if getattr(args, "engine", None) is not None:
        changes["run.engine"] = args.engine
    return scenario.replace(changes) if changes else scenario


def print_table(frame: Any) -> None:
    print(frame.to_string(index=False, float_format=lambda v: f"{v:.4g}"))




def batch_command(sub: Any, name: str, func: Any, help: str, config: str, replicates: str, out: str,
                  engine: bool = False) -> argparse.ArgumentParser:
    """A subcommand with the options every batch command shares."""
    cmd = sub.add_parser(name, help=help)
    cmd.add_argument("config", help=config)
    cmd.add_argument("--replicates", type=positive, help=replicates)
    cmd.add_argument("--jobs", type=positive, help="worker processes, -1 for every core (overrides run.jobs)")
    if engine:
        cmd.add_argument("--engine", choices=["array", "mesa"], help="overrides run.engine")
    cmd.add_argument("--out", help=f"results folder (default {out})")
    cmd.add_argument("--quiet", action="store_true", help="no progress bar")
    cmd.set_defaults(func=func)
    return cmd
