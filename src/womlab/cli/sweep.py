"""``womlab sweep``: run a scenario's sweep into a resumable results folder, and rewrite its report."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from womlab.cli.common import positive

__all__ = ["add"]


def cmd_sweep(args: argparse.Namespace) -> int:
    from womlab.scenario import load_scenario
    from womlab.studies import run_sweep

    scenario = load_scenario(args.config)
    out = Path(args.out) if args.out else Path("out") / f"{Path(args.config).stem}-sweep"
    summary = run_sweep(
        scenario,
        out,
        args.jobs,
        scheduler=args.scheduler,
        cluster=args.cluster,
        curves=args.curves,
        chunk_size=args.chunk_size,
        progress=not args.quiet,
        report=not args.no_report,
        wait=args.wait,
        notify=lambda message: print(f"womlab: {message}", file=sys.stderr),
    )
    grown = []
    if summary.added_points:
        grown.append(f"{summary.added_points} points added")
    if summary.added_replicates:
        grown.append(f"{summary.added_replicates} replicates per point added")
    print(
        f"{scenario.name}: sweep ({summary.study} at every point) of {summary.points} points x "
        f"{scenario.sweep.replicates} replicates = {summary.runs} runs ({summary.backend}); "
        + (f"{', '.join(grown)}; " if grown else "")
        + f"{summary.skipped} already done, {summary.ran} run now, {summary.failures} failed; "
        f"{summary.wall_time:.1f} s"
    )
    if summary.failures:
        first = summary.failed.iloc[0]
        print(f"first failure: point {first['point']}, replicate {first['replicate']}: {first['error']}")
    print(f"results in {out}/" + (f" (report: {summary.report})" if summary.report else ""))
    return 0


def cmd_report(args: argparse.Namespace) -> int:
    from womlab.results import write_report

    path = write_report(args.folder)
    print(f"wrote {path}")
    return 0


def _seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number of seconds, got {text!r}") from None
    if not value >= 0:
        raise argparse.ArgumentTypeError(f"must be >= 0 seconds, got {text!r}")
    return value


def add(sub: Any) -> None:
    sweep = sub.add_parser("sweep", help="run the scenario's [sweep] into a resumable results folder")
    sweep.add_argument("config", help="scenario TOML file with a [sweep] section")
    sweep.add_argument("--out", help="results folder (default out/<config name>-sweep); rerun to resume")
    sweep.add_argument(
        "--jobs", type=positive, help="worker processes on this machine, -1 for every core (default run.jobs)"
    )
    where = sweep.add_mutually_exclusive_group()
    where.add_argument(
        "--scheduler",
        metavar="tls://HOST:PORT",
        help="run on a running Dask cluster's scheduler "
        "(TLS credentials from Dask's configuration; tcp:// is unencrypted and unauthenticated)",
    )
    where.add_argument(
        "--cluster",
        metavar="local:N",
        help="start a Dask LocalCluster of N workers here (TLS with temporary credentials, no dashboard)",
    )
    sweep.add_argument("--curves", action="store_true", help="also keep each run's per-period curve")
    sweep.add_argument("--chunk-size", type=positive, help="runs per task (default: automatic)")
    sweep.add_argument("--no-report", action="store_true", help="do not write report.html at the end")
    sweep.add_argument(
        "--wait",
        type=_seconds,
        default=0.0,
        metavar="SECONDS",
        help="wait up to SECONDS for another process writing the folder (default: refuse at once)",
    )
    sweep.add_argument("--quiet", action="store_true", help="no progress bar")
    sweep.set_defaults(func=cmd_sweep)

    report = sub.add_parser("report", help="write report.html and summary.csv of a sweep's results folder")
    report.add_argument("folder", help="a sweep's results folder")
    report.set_defaults(func=cmd_report)
