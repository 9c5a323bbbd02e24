"""A study's results folder: its tables as CSV, its figures, and ``manifest.json``.

One function per study. Each checks the folder first (:func:`check_output_folder`, which a
command calls before it runs anything), writes every file through
:class:`womlab.store.FolderWriter` (all files staged, then moved in, the manifest last, so a
folder is never a mix of two results) and returns the paths written. Every folder has the
same manifest name, ``manifest.json``, recording the command, its command line, the
scenario as run (only the sections the command uses), the hashes of the scenario file and
every input file, versions, git commit, OS and CPU.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from types import SimpleNamespace
from typing import Any

from womlab.errors import ScenarioError, StoreError
from womlab.results.figures import (
    FIGURE_FORMATS,
    adoption_figure,
    comparison_figure,
    network_snapshot_figure,
    programme_figure,
    referral_tree_figure,
    save_figure,
    seeding_figure,
)
from womlab.results.fit import fit_figure
from womlab.results.groups import group_figure, product_figure
from womlab.scenario import Scenario
from womlab.store import FolderWriter, check_results_folder, manifest
from womlab.store.folders import file_sha256
from womlab.studies.calibration import DRAW_KEY, Fit
from womlab.studies.compare import Comparison
from womlab.studies.programme import ProgrammeStudy
from womlab.studies.runner import Batch
from womlab.studies.seeding_study import BOOTSTRAP_KEY, SeedingStudy
from womlab.studies.smc import FIT_KEY

__all__ = [
    "save_batch",
    "save_programme",
    "save_seeding_study",
    "save_comparison",
    "save_fit",
    "check_output_folder",
    "OUTPUTS",
    "sections_in_use",
    "ORGANISATION_FORMATS",
]

#: The files each command writes (``{fmt}``: the figure format), so that a folder can be
#: checked before anything runs.
OUTPUTS: dict[str, tuple[str, ...]] = {
    "run": ("curves.csv", "summary.csv", "metrics.csv", "adoption.{fmt}"),
    "compare": (
        "compare_curves.csv",
        "compare_metrics.csv",
        "compare_gaps.csv",
        "compare_fits.csv",
        "compare_replicates.csv",
        "comparison.{fmt}",
    ),
    "seeding": ("strategies.csv", "runs.csv", "seeding.{fmt}", "network.{fmt}"),
    "fit": (
        "posterior.csv",
        "fit_summary.csv",
        "forecast.csv",
        "stage.csv",
        "generations.csv",
        "network_kinds.csv",
        "holdout.csv",
        "fit.{fmt}",
    ),
    "referral": (
        "programme_summary.csv",
        "programme_runs.csv",
        "programme_curves.csv",
        "programme_cumulative.csv",
        "referral_tree.csv",
        "programme.{fmt}",
        "referral_tree.{fmt}",
    ),
    "levers": (
        "levers.csv",
        "levers_best.csv",
        "levers_crossover.csv",
        "levers_stage.csv",
        "levers_runs.csv",
        "levers_curve.csv",
        "levers.{fmt}",
    ),
}
_NOT_RESULTS = (("run", "jobs"), ("run", "replicates"), ("study", "replicates"))
#: Forms of the optional per-organisation file of a results folder.
ORGANISATION_FORMATS = ("parquet", "csv")


def sections_in_use(scenario: Scenario, command: str) -> tuple[str, ...]:
    """The scenario sections ``command`` reads: what its manifest records.

    Examples
    --------
    >>> sections_in_use(Scenario(), "seeding")
    ('market', 'network', 'adoption', 'run', 'seeding', 'study')
    """
    used = ["market", "network", "adoption", "run", "seeding"]
    if command == "seeding":
        used.append("study")
    if command == "referral" or scenario.referral.active:
        used.append("referral")
    if command == "fit":
        used.append("fit")
    if command == "levers":
        used += [name for name in ("referral", "levers") if name not in used]
    return tuple(used)


def _identity(scenario: Scenario, command: str) -> dict[str, Any]:
    """What must match for a folder's results to be replaced without ``force``: the scenario as it
    bears on results (not jobs or replicate counts) and the content of its input files."""
    data = json.loads(json.dumps(scenario.to_dict(given_paths=True, sections=sections_in_use(scenario, command))))
    for section, leaf in _NOT_RESULTS:
        data.get(section, {}).pop(leaf, None)
    inputs = {}
    for item in scenario.inputs():
        try:
            inputs[item["field"]] = file_sha256(item["resolved"])
        except OSError:
            inputs[item["field"]] = None
    return {"scenario": data, "inputs": inputs}


def _names(command: str, figure_format: str, organisations: str | None = None) -> list[str]:
    names = [n.format(fmt=figure_format) for n in OUTPUTS[command]]
    return names + ([f"organisations.{organisations}"] if organisations else [])


def _format(figure_format: str, organisations: str | None = None) -> str:
    if figure_format not in FIGURE_FORMATS:
        raise StoreError(f"figure format must be one of {', '.join(FIGURE_FORMATS)}, got {figure_format!r}")
    if organisations is not None and organisations not in ORGANISATION_FORMATS:
        raise StoreError(f"organisations must be one of {', '.join(ORGANISATION_FORMATS)}, got {organisations!r}")
    return figure_format


def check_output_folder(
    out: str | Path,
    command: str,
    scenario: Scenario,
    *,
    force: bool = False,
    figure_format: str = "png",
    organisations: str | None = None,
) -> Path:
    """Check, before anything runs, that ``command`` may write its results for ``scenario`` into ``out``.

    Refused with one line: a file, a folder that cannot be created or written, a sweep's
    folder, another command's or another scenario's results (unless ``force``), and any
    file of the command's own names that womlab did not write (always).

    Raises
    ------
    StoreError
    """
    fmt = _format(figure_format, organisations)
    return check_results_folder(
        out, command, _identity(scenario, command), _names(command, fmt, organisations), force=force
    )


def _table_writer(table: Any, float_format: str | None = "%.6g") -> Callable[[Path], Any]:
    return lambda p: table.to_csv(p, index=False, float_format=float_format)


def _figure_writer(fig: Any, fmt: str) -> Callable[[Path], Any]:
    return lambda p: save_figure(fig, p, fmt)


def _save(
    command: str,
    study: Any,
    out: str | Path,
    tables: dict[str, Any],
    figures: dict[str, Callable[[], Any]],
    extra: dict[str, Any],
    *,
    force: bool,
    figure_format: str,
    command_line: list[str] | None,
    wall_time: float | None = None,
    float_formats: dict[str, str | None] | None = None,
    organisations: str | None = None,
    organisation_table: Callable[[], Any] | None = None,
) -> list[Path]:
    fmt = _format(figure_format, organisations)
    scenario = study.scenario
    float_formats = float_formats or {}
    names = _names(command, fmt, organisations)
    with FolderWriter(out, command, _identity(scenario, command), names, force=force) as folder:
        for name, table in tables.items():
            folder.write(name, _table_writer(table, float_formats.get(name, "%.6g")))
        if organisations is not None and organisation_table is not None:
            table = organisation_table()
            if organisations == "csv":
                folder.write("organisations.csv", _table_writer(table, None))
            else:
                folder.write("organisations.parquet", lambda p: table.to_parquet(p, index=False))
        for stem, draw in figures.items():
            folder.write(f"{stem}.{fmt}", _figure_writer(draw(), fmt))
        info = manifest(
            study,
            extra,
            wall_time=wall_time,
            command=command,
            command_line=command_line,
            sections=sections_in_use(scenario, command),
        )
        return folder.commit(info)


def save_batch(
    batch: Batch,
    out: str | Path,
    *,
    figure: bool = True,
    organisations: str | None = None,
    force: bool = False,
    figure_format: str = "png",
    figure_size: tuple[float, float] | None = None,
    command_line: list[str] | None = None,
    observed: Any = None,
    by: str | None = None,
) -> list[Path]:
    """Write ``curves.csv``, ``summary.csv``, ``metrics.csv``, ``adoption.png`` and ``manifest.json`` into ``out``.

    With product generations (``[[product]]``) also ``products.csv`` (per replicate, period and
    product), ``products_summary.csv`` and ``products.png`` (:func:`womlab.results.groups.product_figure`).
    With ``by = "segment"`` or ``"region"`` also ``curves_by_<by>.csv``, ``summary_by_<by>.csv``,
    ``metrics_by_<by>.csv`` and ``adoption_by_<by>.png`` (one line per group,
    :func:`womlab.results.groups.group_figure`).

    With ``organisations = "parquet"`` (or ``"csv"``) also ``organisations.parquet``
    (``.csv``): one row per replicate and organisation, :meth:`womlab.Batch.organisations`
    (ids as given, region and node attributes, adoption period and time, referrer,
    satisfied).

    Parameters
    ----------
    batch : Batch
    out : str or Path
        The results folder (created if needed).
    figure : bool
        Draw the figure.
    organisations : {"parquet", "csv"}, optional
        Also write the per-organisation file (checked before anything is written).
    force : bool
        Replace another command's or another scenario's results in ``out``.
    figure_format : str
        ``png``, ``pdf`` or ``svg``.
    figure_size : (width, height), optional
        In inches.
    command_line : list of str, optional
        Recorded in the manifest.
    observed : ObservedSeries, optional
        Observed points overlaid on the figure (:func:`womlab.read_observed`).
    by : {"segment", "region"}, optional
        Also write the tables and figure split by group.

    Returns the paths written.

    Raises
    ------
    StoreError
        If ``out`` is refused (:func:`check_output_folder`) or cannot be written.
    ScenarioError
        If ``by = "segment"`` and the runs have no segments (before anything is written).
    """
    tables = {"curves.csv": batch.curves(), "summary.csv": batch.summary(), "metrics.csv": batch.metrics()}
    figures = {"adoption": lambda: adoption_figure(batch, size=figure_size, observed=observed)} if figure else {}
    if batch.runs and "product_start" in batch.runs[0].extra:  # product generations
        tables.update({"products.csv": batch.product_curves(), "products_summary.csv": batch.product_summary()})
        if figure:
            figures["products"] = lambda: product_figure(batch, size=figure_size)
    if by is not None:
        try:
            batch.runs[0].groups(by)
        except ValueError as exc:
            raise ScenarioError(f"--by {by}: {exc}") from None
        tables.update(
            {
                f"curves_by_{by}.csv": batch.curves(by=by),
                f"summary_by_{by}.csv": batch.summary(by=by),
                f"metrics_by_{by}.csv": batch.metrics(by=by),
            }
        )
        if figure:
            figures[f"adoption_by_{by}"] = lambda: group_figure(batch, by, size=figure_size)
    return _save(
        "run",
        batch,
        out,
        tables,
        figures,
        {},
        force=force,
        figure_format=figure_format,
        command_line=command_line,
        float_formats={"curves.csv": None},
        organisations=organisations,
        organisation_table=batch.organisations,
    )


def save_programme(
    study: ProgrammeStudy,
    out: str | Path,
    *,
    figure: bool = True,
    wall_time: float = 0.0,
    force: bool = False,
    figure_format: str = "png",
    figure_size: tuple[float, float] | None = None,
    command_line: list[str] | None = None,
) -> list[Path]:
    """Write a referral programme study's results folder.

    Files: ``programme_summary.csv`` (outcome, estimate, 95 % interval),
    ``programme_runs.csv`` (one row per replicate), ``programme_curves.csv`` (baseline and
    programme share per period), ``programme_cumulative.csv`` (cumulative cost and
    incremental value per period), ``referral_tree.csv`` (tree statistics, baseline beside
    programme), ``programme.png``, ``referral_tree.png`` and ``manifest.json``. Options as
    :func:`save_batch`.

    Raises
    ------
    StoreError
        If ``out`` is refused (:func:`check_output_folder`) or cannot be written.
    """
    tables = {
        "programme_summary.csv": study.summary(),
        "programme_runs.csv": study.per_replicate(),
        "programme_curves.csv": study.curves(),
        "programme_cumulative.csv": study.cumulative(),
        "referral_tree.csv": study.tree(),
    }
    figures = (
        {
            "programme": lambda: programme_figure(study, size=figure_size),
            "referral_tree": lambda: referral_tree_figure(study, size=figure_size),
        }
        if figure
        else {}
    )
    extra = {"spawn_keys": "SeedSequence(root_seed, spawn_key=(replicate,)); baseline and programme paired"}
    return _save(
        "referral",
        study,
        out,
        tables,
        figures,
        extra,
        force=force,
        figure_format=figure_format,
        command_line=command_line,
        wall_time=wall_time,
    )


def save_seeding_study(
    study: SeedingStudy,
    out: str | Path,
    *,
    figures: bool = True,
    force: bool = False,
    figure_format: str = "png",
    figure_size: tuple[float, float] | None = None,
    command_line: list[str] | None = None,
) -> list[Path]:
    """Write ``strategies.csv``, ``runs.csv``, ``seeding.png``, ``network.png`` (when the study
    kept a network snapshot) and ``manifest.json`` into ``out``; returns the paths written.
    Options as :func:`save_batch`.

    Raises
    ------
    StoreError
        If ``out`` is refused (:func:`check_output_folder`) or cannot be written.
    """
    tables = {"strategies.csv": study.strategies_table(), "runs.csv": study.runs}
    drawn: dict[str, Callable[[], Any]] = {}
    if figures:
        drawn["seeding"] = lambda: seeding_figure(study, size=figure_size)
        if study.snapshot is not None:
            network, results = study.snapshot
            drawn["network"] = lambda: network_snapshot_figure(
                network, results, seed=study.scenario.seed, size=figure_size
            )
    extra = {
        "study": "seeding strategies, paired replicates (common random numbers)",
        "strategies": list(study.strategies),
        "bootstrap_stream": f"SeedSequence(root_seed, spawn_key={BOOTSTRAP_KEY})",
    }
    return _save(
        "seeding", study, out, tables, drawn, extra, force=force, figure_format=figure_format, command_line=command_line
    )


def save_comparison(
    comparison: Comparison,
    out: str | Path,
    *,
    figure: bool = True,
    force: bool = False,
    figure_format: str = "png",
    figure_size: tuple[float, float] | None = None,
    command_line: list[str] | None = None,
    observed: Any = None,
) -> list[Path]:
    """Write a comparison's tables, figure and manifest into the results folder ``out``
    (``observed``, a :class:`womlab.ObservedSeries`, overlaid on the figure).

    Files: ``compare_curves.csv``, ``compare_metrics.csv``, ``compare_gaps.csv``,
    ``compare_fits.csv``, ``compare_replicates.csv`` (per-replicate metrics, fits and
    gaps to the reference model), ``comparison.png``, ``manifest.json``; with product
    generations also ``compare_products.csv`` (each generation beside the mean-field recursion
    and Norton & Bass) and ``products.png``. Options as :func:`save_batch`.

    Raises
    ------
    StoreError
        If ``out`` is refused (:func:`check_output_folder`) or cannot be written.
    """
    tables = {
        "compare_curves.csv": comparison.curve_table(),
        "compare_metrics.csv": comparison.metrics,
        "compare_gaps.csv": comparison.gaps,
        "compare_fits.csv": comparison.fits,
        "compare_replicates.csv": comparison.replicate_table(),
    }
    figures = (
        {"comparison": lambda: comparison_figure(comparison, size=figure_size, observed=observed)} if figure else {}
    )
    batch = comparison.batch
    if batch.runs and "product_start" in batch.runs[0].extra:  # product generations beside Norton-Bass
        tables["compare_products.csv"] = batch.product_summary()
        if figure:
            figures["products"] = lambda: product_figure(batch, size=figure_size)
    sf = comparison.stock_flow_fit
    extra = {
        "comparison": comparison.settings,
        "headline": comparison.headline(),
        "capped_bass_difference_fit": {"slope": sf.slope, "cap": sf.cap, "success": sf.success, "rmse": sf.rmse},
    }
    return _save(
        "compare",
        comparison.batch,
        out,
        tables,
        figures,
        extra,
        force=force,
        figure_format=figure_format,
        command_line=command_line,
    )


def save_fit(
    fit: Fit,
    out: str | Path,
    *,
    periods: int = 12,
    figure: bool = True,
    force: bool = False,
    figure_format: str = "png",
    command_line: list[str] | None = None,
) -> list[Path]:
    """Write a fit's results folder (staged, manifest last, as every command's); returns the paths written.

    Files: ``posterior.csv`` (final particles: network kind, free fields, weight,
    distance), ``fit_summary.csv`` (per free field and mapped Bass p, Q: median, 50 % and
    90 % intervals, effective sample size), ``forecast.csv`` (:meth:`Fit.forecast`,
    ``periods`` ahead), ``stage.csv`` (:meth:`Fit.stage`), ``generations.csv`` (tolerance,
    acceptance and effective sample size per generation), ``network_kinds.csv``
    (probabilities, when kinds were compared), ``holdout.csv`` (network against Bass, when
    points were held out), ``fit.png`` (:func:`womlab.results.fit.fit_figure`) and ``manifest.json``.

    Raises
    ------
    StoreError
        If ``out`` cannot hold the fit's results (see :func:`check_output_folder`).
    """
    tables = {
        "posterior.csv": fit.posterior,
        "fit_summary.csv": fit.summary(),
        "forecast.csv": fit.forecast(periods),
        "stage.csv": fit.stage(),
        "generations.csv": fit.generations(),
    }
    if len(fit.kinds) > 1:
        tables["network_kinds.csv"] = fit.network_kinds()
    holdout = None
    if fit.held_out is not None:
        holdout = fit.holdout_scores()
        tables["holdout.csv"] = holdout
    figures = {"fit": lambda: fit_figure(fit, periods=periods)} if figure else {}
    made = SimpleNamespace(scenario=fit.base, replicates=fit.replicates, wall_time=fit.wall_time)
    extra = {
        "study": "fit to an observed series: ABC-SMC (womlab.studies.smc) through womlab.studies.run_paired",
        "data": {
            "file": fit.observed.source,
            "kind": fit.observed.kind,
            "points": len(fit.observed),
            "fitted_points": len(fit.fitted),
            "held_out_points": 0 if fit.held_out is None else len(fit.held_out),
            "market": fit.observed.market,
        },
        "free": list(fit.names),
        "priors": {p.name: p.to_table() for p in fit.priors},
        "network_kinds": list(fit.kinds),
        "settings": {
            "particles": fit.settings.particles,
            "generations": fit.settings.generations,
            "simulations": fit.settings.simulations,
            "quantile": fit.settings.quantile,
            "min_acceptance": fit.settings.min_acceptance,
        },
        "simulations": fit.smc.simulations,
        "stopped": fit.smc.stopped,
        "notes": fit.notes,
        "spawn_keys": f"proposal j of generation g: SeedSequence(root_seed, spawn_key=({FIT_KEY}, g, j)); "
        f"proposals drawn from SeedSequence(root_seed, spawn_key=({FIT_KEY}, g)); forecasts rerun the "
        f"accepted keys to a longer horizon; decision draws SeedSequence(root_seed, spawn_key={DRAW_KEY} + (r,))",
        "summary_statistic": "cumulative curve at the observed periods (customers, or new customers summed over them)",
        "distance": "root mean square difference of the cumulative curves over the observed total",
        "holdout": None if holdout is None else holdout.to_dict(orient="records"),
    }
    return _save(
        "fit", made, out, tables, figures, extra, force=force, figure_format=figure_format, command_line=command_line
    )
