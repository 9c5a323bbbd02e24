"""``womlab fit``: fit the network model to an observed series, forecast it, say where it stands."""

from __future__ import annotations

import argparse
from typing import Any

from womlab.cli.common import add_scenario_options, positive, prepare, print_table

__all__ = ["add", "add_data", "observed_points"]


def _whole(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a whole number, got {text!r}") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"must be >= 0, got {value}")
    return value


def add_data(cmd: argparse.ArgumentParser) -> None:
    """The ``--data`` option of ``run`` and ``compare``: observed points on the figure."""
    cmd.add_argument("--data", help="CSV with period and new_customers or customers: observed points on the figure")


def observed_points(args: argparse.Namespace, scenario: Any) -> Any:
    """The series ``--data`` names, read and checked against the scenario (None without it)."""
    if getattr(args, "data", None) is None:
        return None
    from womlab.studies import check_observed, read_observed

    observed = read_observed(args.data)
    check_observed(observed, scenario)
    return observed


def cmd_fit(args: argparse.Namespace) -> int:
    from womlab.results import save_fit
    from womlab.studies import fit_observed, read_observed

    scenario, out = prepare(args, "fit")
    observed = read_observed(args.data) if args.data is not None else None  # else the file fit.data_path names
    fit = fit_observed(
        scenario,
        observed,
        holdout=args.holdout,
        particles=args.particles,
        simulations=args.simulations,
        jobs=args.jobs,
        progress=not args.quiet,
    )
    written = save_fit(
        fit,
        out,
        periods=args.forecast,
        force=args.force,
        figure_format=args.figure_format,
        command_line=getattr(args, "command_line", None),
    )
    print(
        f"{scenario.name}: {len(fit.names)} free field(s) fitted to {len(fit.fitted)} points of {fit.observed.source}, "
        f"{fit.smc.simulations} simulations, {fit.wall_time:.1f} s ({fit.smc.stopped})"
    )
    for note in fit.notes:
        print(f"  {note}")
    print()
    print_table(fit.summary()[["parameter", "median", "low_50", "high_50", "low_90", "high_90", "ess"]])
    if len(fit.kinds) > 1:
        print()
        print_table(fit.network_kinds())
    print()
    print_table(fit.stage()[["quantity", "estimate", "low_90", "high_90", "position"]])
    if fit.held_out is not None:
        print()
        print_table(fit.holdout_scores()[["method", "mae_customers", "mae_share", "coverage_90", "better"]])
    print(f"wrote {len(written)} files to {out}/")
    return 0


def add(sub: Any) -> None:
    cmd = sub.add_parser(
        "fit",
        help="fit the network model to an observed adoption series ([fit] section), "
        "forecast it and say where on the S-curve it stands",
    )
    cmd.add_argument("config", help="scenario TOML file (its [fit] section names the free fields and priors)")
    cmd.add_argument(
        "--data",
        help="CSV with period and new_customers or customers (cumulative), optionally market "
        "(default: the file fit.data_path names)",
    )
    cmd.add_argument(
        "--holdout",
        type=_whole,
        default=0,
        help="fit all but the last N periods and score their forecast against the Bass fit",
    )
    cmd.add_argument("--forecast", type=_whole, default=12, help="periods to forecast past the data (default 12)")
    cmd.add_argument("--particles", type=positive, help="overrides fit.particles")
    cmd.add_argument("--simulations", type=positive, help="overrides fit.simulations (the budget)")
    cmd.add_argument("--jobs", type=positive, help="worker processes, -1 for every core (overrides run.jobs)")
    add_scenario_options(cmd)
    cmd.add_argument("--out", help="results folder (default out/<config name>-fit)")
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
    cmd.add_argument(
        "--skip-resource-check",
        action="store_true",
        help="run even when the estimate says it will not fit this machine",
    )
    cmd.add_argument("--quiet", action="store_true", help="no progress lines")
    cmd.set_defaults(func=cmd_fit)
