"""What every ``womlab`` command shares: options, loading the scenario with its overrides,
checking resources and the results folder before any work, and printing tables.

A batch command (``run``, ``compare``, ``seeding``, ``referral``) goes through
:func:`prepare`: the scenario is read with every override (``--set``, ``--seed``,
``--replicates``, ``--jobs``, ``--engine``) validated as if the file said it, its resources
are checked (:func:`womlab.scenario.resources.check_resources`), and its results folder
(``--out``, default ``out/<config name>-<command>``) is checked, all before anything runs.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

__all__ = [
    "positive",
    "replicate_count",
    "worker_count",
    "figure_size",
    "load",
    "prepare",
    "print_table",
    "batch_command",
    "default_out",
    "figure_options",
]


def _whole(text: str, what: str) -> int:
    try:
        return int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{what} must be a whole number, got {text!r}") from None


def positive(text: str) -> int:
    """A whole number >= 1, or -1 (for every core, where the option is a number of workers)."""
    value = _whole(text, "the value")
    if value < 1 and value != -1:
        raise argparse.ArgumentTypeError(f"must be >= 1 (or -1 for every core), got {value}")
    return value


def at_least_one(text: str) -> int:
    """A whole number >= 1."""
    value = _whole(text, "the value")
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be a whole number >= 1, got {value}")
    return value


def replicate_count(text: str) -> int:
    """A number of replicates: a whole number >= 1."""
    value = _whole(text, "the number of replicates")
    if value < 1:
        raise argparse.ArgumentTypeError(f"the number of replicates must be at least 1, got {value}")
    return value


def worker_count(text: str) -> int:
    """A number of worker processes: >= 1, or -1 for every core."""
    value = _whole(text, "the number of worker processes")
    if value < 1 and value != -1:
        raise argparse.ArgumentTypeError(
            f"the number of worker processes must be >= 1 (or -1 for every core), got {value}"
        )
    return value


def seed_value(text: str) -> int:
    """A root seed: a whole number >= 0."""
    value = _whole(text, "the seed")
    if value < 0:
        raise argparse.ArgumentTypeError(f"the seed must be a whole number >= 0, got {value}")
    return value


def figure_size(text: str) -> tuple[float, float]:
    """``WIDTHxHEIGHT`` in inches, e.g. ``8x6``."""
    width, sep, height = text.lower().partition("x")
    try:
        size = (float(width), float(height))
    except ValueError:
        size = None
    if not sep or size is None or not all(0.5 <= v <= 100 for v in size):
        raise argparse.ArgumentTypeError(
            f"the figure size must be WIDTHxHEIGHT in inches, each between 0.5 and 100 (e.g. 8x6), got {text!r}"
        )
    return size


def default_out(config: str, command: str) -> Path:
    """The results folder of ``command`` on the scenario file ``config``: ``out/<config name>-<command>``."""
    return Path("out") / f"{Path(config).stem}-{command}"


def load(args: argparse.Namespace, command: str | None = None) -> Any:
    """The scenario of ``args.config`` with every override of the command line, validated as the file is."""
    from womlab.scenario import load_scenario, parse_assignment

    changes: dict[str, Any] = {}
    for text in getattr(args, "set", None) or []:
        name, value = parse_assignment(text)
        changes[name] = value
    if getattr(args, "seed", None) is not None:
        changes["seed"] = args.seed
    if getattr(args, "replicates", None) is not None:
        changes["study.replicates" if command == "seeding" else "run.replicates"] = args.replicates
    if getattr(args, "jobs", None) is not None:
        changes["run.jobs"] = args.jobs
    if getattr(args, "engine", None) is not None:
        changes["run.engine"] = args.engine
    return load_scenario(args.config, changes)


def figure_options(args: argparse.Namespace) -> dict[str, Any]:
    """The keyword options of the save functions that come from the command line."""
    return {
        "force": args.force,
        "figure_format": args.figure_format,
        "figure_size": args.figure_size,
        "command_line": getattr(args, "command_line", None),
    }


def prepare(args: argparse.Namespace, command: str, *, organisations: str | None = None) -> tuple[Any, Path]:
    """Load the scenario, check its resources and the results folder; nothing has run yet.

    Progress reporting is switched on here unless ``--quiet`` (and travels to worker processes).
    """
    from womlab.results import check_output_folder
    from womlab.scenario import progress
    from womlab.scenario.resources import check_resources

    scenario = load(args, command)
    est = check_resources(scenario, command, skip=args.skip_resource_check)
    out = Path(args.out) if args.out else default_out(args.config, command)
    out = check_output_folder(
        out, command, scenario, force=args.force, figure_format=args.figure_format, organisations=organisations
    )
    progress.enable(not args.quiet)
    if not args.quiet:
        print(f"womlab {command}: {est.describe()}", file=sys.stderr)
    return scenario, out


def print_table(frame: Any) -> None:
    print(frame.to_string(index=False, float_format=lambda v: f"{v:.4g}"))


def add_scenario_options(cmd: argparse.ArgumentParser) -> None:
    """``--set`` and ``--seed``: change the scenario from the command line, validated as the file is."""
    cmd.add_argument(
        "--set",
        action="append",
        metavar="FIELD=VALUE",
        help="change one scenario field, e.g. --set adoption.word_of_mouth=0.2 (repeatable; "
        "validated as if the file said it)",
    )
    cmd.add_argument("--seed", type=seed_value, help="root seed (overrides the scenario's seed)")


def batch_command(
    sub: Any, name: str, func: Any, help: str, config: str, replicates: str, engine: bool = False
) -> argparse.ArgumentParser:
    """A subcommand with the options every batch command shares."""
    cmd = sub.add_parser(name, help=help, description=help)
    cmd.add_argument("config", help=config)
    cmd.add_argument("--replicates", type=replicate_count, help=replicates)
    cmd.add_argument(
        "--jobs",
        type=worker_count,
        help="worker processes, -1 for every core (overrides run.jobs; never more than the cores)",
    )
    if engine:
        cmd.add_argument("--engine", choices=["array", "mesa"], help="overrides run.engine")
    add_scenario_options(cmd)
    cmd.add_argument("--out", help=f"results folder (default out/<config name>-{name})")
    cmd.add_argument(
        "--force",
        "--overwrite",
        action="store_true",
        help="replace another command's or another scenario's results in --out (files womlab did "
        "not write are never replaced)",
    )
    cmd.add_argument(
        "--figure-format", choices=["png", "pdf", "svg"], default="png", help="figure format (default png)"
    )
    cmd.add_argument("--figure-size", type=figure_size, metavar="WxH", help="figure size in inches, e.g. 8x6")
    cmd.add_argument(
        "--skip-resource-check",
        action="store_true",
        help="run even when the estimate says it will not fit this machine",
    )
    cmd.add_argument("--quiet", action="store_true", help="no progress")
    cmd.set_defaults(func=func)
    return cmd
