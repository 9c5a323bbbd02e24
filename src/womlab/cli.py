"""The ``womlab`` command. It only parses, calls the public functions and writes files.

A user mistake (a :class:`~womlab.errors.WomlabError`) is printed as one line on
standard error with exit status 2, never as a traceback.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from .errors import WomlabError

__all__ = ["main"]


def _positive(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a whole number, got {text!r}") from None
    if value < 1 and value != -1:
        raise argparse.ArgumentTypeError(f"must be >= 1 (or -1 for every core), got {value}")
    return value


def _load(args: argparse.Namespace):  # noqa: ANN202
    from .scenario import load_scenario

    scenario = load_scenario(args.config)
    changes = {}
    if getattr(args, "replicates", None) is not None:
        changes["run.replicates"] = args.replicates
    if getattr(args, "jobs", None) is not None:
        changes["run.jobs"] = args.jobs
    if getattr(args, "engine", None) is not None:
        changes["run.engine"] = args.engine
    return scenario.replace(changes) if changes else scenario


def _print_table(frame) -> None:  # noqa: ANN001
    print(frame.to_string(index=False, float_format=lambda v: f"{v:.4g}"))


def cmd_run(args: argparse.Namespace) -> int:
    from .outputs import save_batch
    from .studies import run_replicates

    scenario = _load(args)
    out = Path(args.out) if args.out else Path("out") / Path(args.config).stem
    batch = run_replicates(scenario, progress=not args.quiet)
    written = save_batch(batch, out)
    metrics = batch.metrics()[["metric", "network_median", "network_q05", "network_q95", "aggregate"]]
    print(f"{scenario.name}: {batch.replicates} runs of {scenario.market.organisations} organisations "
          f"on a {scenario.network.kind} network, {batch.wall_time:.1f} s")
    _print_table(metrics)
    print(f"wrote {len(written)} files to {out}/")
    return 0


def cmd_seeding(args: argparse.Namespace) -> int:
    from .scenario import load_scenario
    from .seeding_study import compare_strategies, save_seeding_study

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
    _print_table(table[cols])
    print(f"wrote {len(written)} files to {out}/")
    return 0


def cmd_referral(args: argparse.Namespace) -> int:
    import time

    from .outputs import save_programme
    from .programme import evaluate_programme

    scenario = _load(args)
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
    _print_table(study.summary()[["outcome", "estimate", "low", "high"]])
    print(f"wrote {len(written)} files to {out}/")
    return 0


def cmd_compare(args: argparse.Namespace) -> int:
    from .gaps import compare

    scenario = _load(args)
    out = Path(args.out) if args.out else Path("out") / f"{Path(args.config).stem}-compare"
    comparison = compare(scenario, bootstrap=args.bootstrap, progress=not args.quiet)
    written = comparison.save(out)
    print(comparison.summary_text())
    print()
    _print_table(comparison.metrics)
    print(f"wrote {len(written)} files to {out}/")
    return 0


def cmd_check(args: argparse.Namespace) -> int:
    from .aggregate import bass_peak_time, mapped_parameters
    from .scenario import load_scenario

    scenario = load_scenario(args.config)
    par = mapped_parameters(scenario)
    a = scenario.adoption
    rows = [
        ("scenario", scenario.name),
        ("organisations", scenario.market.organisations),
        ("initial customers", scenario.n_initial),
        ("seeding strategy", scenario.seeding.strategy),
        ("regions", scenario.market.regions),
        ("network", scenario.network.kind),
        ("mean degree", f"{par.mean_degree:.4g}"),
        ("rule", a.rule),
        ("mean talkers per customer", f"{par.mean_talkers:.4g}"),
        ("mapped Bass p", f"{par.p:.4g}"),
        ("mapped Bass Q", f"{par.Q:.4g}"),
        ("Bass peak time ln(Q/p)/(p+Q)", f"{bass_peak_time(par.p, par.Q):.3f}" if par.Q > par.p > 0
         else "n/a (no Bass counterpart for this rule)" if par.Q != par.Q else "n/a (Q <= p)"),
        ("stock-and-flow slope", f"{par.slope:.4g}"),
        ("periods x steps per period", f"{scenario.run.periods} x {scenario.run.steps_per_period}"),
        ("replicates, engine, jobs", f"{scenario.run.replicates}, {scenario.run.engine}, {scenario.run.jobs}"),
        ("clock", "continuous (event engine: exact adoption times)" if scenario.run.clock == "continuous"
         else f"discrete, steps of {scenario.run.time_step:g} period"),
    ]
    if par.cap is not None:
        rows.insert(-3, ("cap", f"{par.cap:.4g}"))
    width = max(len(k) for k, _ in rows)
    print(f"{args.config}: valid")
    for key, value in rows:
        print(f"  {key:<{width}}  {value}")
    return 0


def cmd_sweep(args: argparse.Namespace) -> int:
    from .scenario import load_scenario
    from .sweep import run_sweep

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
    )
    print(f"{scenario.name}: sweep of {summary.points} points x {scenario.sweep.replicates} replicates = "
          f"{summary.runs} runs ({summary.backend}); {summary.skipped} already done, {summary.ran} run now, "
          f"{summary.failures} failed; {summary.wall_time:.1f} s")
    if summary.failures:
        first = summary.failed.iloc[0]
        print(f"first failure: point {first['point']}, replicate {first['replicate']}: {first['error']}")
    print(f"results in {out}/" + (f" (report: {summary.report})" if summary.report else ""))
    return 0


def cmd_report(args: argparse.Namespace) -> int:
    from .report import write_report

    path = write_report(args.folder)
    print(f"wrote {path}")
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="womlab",
        description="Word-of-mouth growth on referral networks, set against the aggregate model.",
    )
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def batch_command(name: str, func, help: str, config: str, replicates: str, out: str, engine: bool = False):  # noqa: ANN001, ANN202
        """A subcommand with the options every batch command shares."""
        cmd = sub.add_parser(name, help=help)
        cmd.add_argument("config", help=config)
        cmd.add_argument("--replicates", type=_positive, help=replicates)
        cmd.add_argument("--jobs", type=_positive, help="worker processes, -1 for every core (overrides run.jobs)")
        if engine:
            cmd.add_argument("--engine", choices=["array", "mesa"], help="overrides run.engine")
        cmd.add_argument("--out", help=f"results folder (default {out})")
        cmd.add_argument("--quiet", action="store_true", help="no progress bar")
        cmd.set_defaults(func=func)
        return cmd

    batch_command("run", cmd_run, "run replicates of a scenario and write its results folder",
                  "scenario TOML file", "number of replicate runs (overrides run.replicates)",
                  "out/<config name>", engine=True)
    batch_command("seeding", cmd_seeding, "compare seeding strategies on paired replicates ([study] section)",
                  "scenario TOML file", "paired replicates (overrides study.replicates)",
                  "out/<config name>-seeding")
    batch_command("referral", cmd_referral, "evaluate the scenario's referral programme against no programme",
                  "scenario TOML file with a [referral] section", "paired replicates (overrides run.replicates)",
                  "out/<config name>-referral")

    comp = batch_command("compare", cmd_compare,
                         "run replicates and set the network beside every aggregate model: gaps, fitted parameters, figure",
                         "scenario TOML file", "number of replicate runs (overrides run.replicates)",
                         "out/<config name>-compare", engine=True)
    comp.add_argument("--bootstrap", type=_positive, default=1000, help="bootstrap resamples for the intervals (default 1000)")

    check = sub.add_parser("check", help="validate a scenario and print its derived quantities")
    check.add_argument("config", help="scenario TOML file")
    check.set_defaults(func=cmd_check)

    sweep = sub.add_parser("sweep", help="run the scenario's [sweep] into a resumable results folder")
    sweep.add_argument("config", help="scenario TOML file with a [sweep] section")
    sweep.add_argument("--out", help="results folder (default out/<config name>-sweep); rerun to resume")
    sweep.add_argument("--jobs", type=_positive, help="worker processes on this machine, -1 for every core "
                       "(default run.jobs)")
    where = sweep.add_mutually_exclusive_group()
    where.add_argument("--scheduler", metavar="tcp://HOST:PORT", help="run on a Dask cluster's scheduler")
    where.add_argument("--cluster", metavar="local:N", help="start a Dask LocalCluster of N workers here")
    sweep.add_argument("--curves", action="store_true", help="also keep each run's per-period curve")
    sweep.add_argument("--chunk-size", type=_positive, help="runs per task (default: automatic)")
    sweep.add_argument("--no-report", action="store_true", help="do not write report.html at the end")
    sweep.add_argument("--quiet", action="store_true", help="no progress bar")
    sweep.set_defaults(func=cmd_sweep)

    report = sub.add_parser("report", help="write report.html and summary.csv of a sweep's results folder")
    report.add_argument("folder", help="a sweep's results folder")
    report.set_defaults(func=cmd_report)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except WomlabError as exc:
        print(f"womlab: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("womlab: interrupted; files already written are intact", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
