"""A study's results folder: its tables as CSV, its figures, and a manifest.

One function per study, each writing through :func:`womlab.store.atomic_write` into a
folder checked by :func:`womlab.store.results_folder`; each returns the paths written.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from womlab.errors import StoreError
from womlab.results.figures import (
    adoption_figure,
    comparison_figure,
    network_snapshot_figure,
    programme_figure,
    referral_tree_figure,
    seeding_figure,
)
from womlab.store import atomic_write, manifest, results_folder
from womlab.studies.compare import Comparison
from womlab.studies.programme import ProgrammeStudy
from womlab.studies.runner import Batch
from womlab.studies.seeding_study import BOOTSTRAP_KEY, SeedingStudy

__all__ = ["save_batch", "save_programme", "save_seeding_study", "save_comparison", "ORGANISATION_FORMATS"]


def _write_json(path: Path, info: dict[str, Any]) -> Path:
    text = json.dumps(info, indent=2, default=float)
    return atomic_write(path, lambda p: p.write_text(text + "\n", encoding="utf-8"))


def _write_figure(path: Path, fig: Any) -> Path:
    return atomic_write(path, lambda p: fig.savefig(p, dpi=130, format="png"))


def _write_table(path: Path, table: Any, float_format: str | None = "%.6g") -> Path:
    return atomic_write(path, lambda p: table.to_csv(p, index=False, float_format=float_format))


#: Forms of the optional per-organisation file of a results folder.
ORGANISATION_FORMATS = ("parquet", "csv")


def save_batch(batch: Batch, out: str | Path, *, figure: bool = True, organisations: str | None = None) -> list[Path]:
    """Write ``curves.csv``, ``summary.csv``, ``metrics.csv``, ``adoption.png`` and ``manifest.json`` into ``out``.

    With ``organisations = "parquet"`` (or ``"csv"``) also ``organisations.parquet``
    (``.csv``): one row per replicate and organisation, :meth:`womlab.Batch.organisations`
    (ids as given, region and node attributes, adoption period and time, referrer,
    satisfied). Returns the paths written.

    Raises
    ------
    StoreError
        If ``out`` exists and is not a folder, cannot be written, or ``organisations``
        is not one of parquet, csv (checked before anything is written).
    """
    if organisations is not None and organisations not in ORGANISATION_FORMATS:
        raise StoreError(f"organisations must be one of {', '.join(ORGANISATION_FORMATS)}, got {organisations!r}")
    out = results_folder(out)
    written = [
        _write_table(out / "curves.csv", batch.curves(), float_format=None),
        _write_table(out / "summary.csv", batch.summary()),
        _write_table(out / "metrics.csv", batch.metrics()),
    ]
    if figure:
        written.append(_write_figure(out / "adoption.png", adoption_figure(batch)))
    if organisations is not None:
        written.append(_write_organisations(out, batch.organisations(), organisations))
    written.append(_write_json(out / "manifest.json", manifest(batch)))
    return written


def _write_organisations(out: Path, table: Any, form: str) -> Path:
    if form == "csv":
        return _write_table(out / "organisations.csv", table, float_format=None)
    return atomic_write(out / "organisations.parquet", lambda p: table.to_parquet(p, index=False))


def save_programme(study: ProgrammeStudy, out: str | Path, *, figure: bool = True,
                   wall_time: float = 0.0) -> list[Path]:
    """Write a referral programme study's results folder.

    Files: ``programme_summary.csv`` (outcome, estimate, 95 % interval),
    ``programme_runs.csv`` (one row per replicate), ``programme_curves.csv`` (baseline and
    programme share per period), ``programme_cumulative.csv`` (cumulative cost and
    incremental value per period), ``referral_tree.csv`` (tree statistics, baseline beside
    programme), ``programme.png``, ``referral_tree.png`` and ``manifest.json``.

    Raises
    ------
    StoreError
        If ``out`` exists and is not a folder, or cannot be created.
    """
    out = results_folder(out)
    tables = {
        "programme_summary.csv": study.summary(),
        "programme_runs.csv": study.per_replicate(),
        "programme_curves.csv": study.curves(),
        "programme_cumulative.csv": study.cumulative(),
        "referral_tree.csv": study.tree(),
    }
    written = [_write_table(out / name, table) for name, table in tables.items()]
    if figure:
        written.append(_write_figure(out / "programme.png", programme_figure(study)))
        written.append(_write_figure(out / "referral_tree.png", referral_tree_figure(study)))
    info = manifest(study, {"spawn_keys": "SeedSequence(root_seed, spawn_key=(replicate,)); baseline and programme paired"},
                    wall_time=wall_time)
    written.append(_write_json(out / "manifest.json", info))
    return written


def save_seeding_study(study: SeedingStudy, out: str | Path, *, figures: bool = True) -> list[Path]:
    """Write ``strategies.csv``, ``runs.csv``, ``seeding.png``, ``network.png`` (small networks)
    and ``manifest.json`` into ``out``; returns the paths written.

    Raises
    ------
    StoreError
        If ``out`` exists and is not a folder, or cannot be created.
    """
    out = results_folder(out)
    written = [
        _write_table(out / "strategies.csv", study.strategies_table()),
        _write_table(out / "runs.csv", study.runs),
    ]
    if figures:
        written.append(_write_figure(out / "seeding.png", seeding_figure(study)))
        if study.snapshot is not None:
            network, results = study.snapshot
            written.append(_write_figure(out / "network.png",
                                         network_snapshot_figure(network, results, seed=study.scenario.seed)))
    info = manifest(study, {"study": "seeding strategies, paired replicates (common random numbers)",
                            "strategies": list(study.strategies),
                            "bootstrap_stream": f"SeedSequence(root_seed, spawn_key={BOOTSTRAP_KEY})"})
    written.append(_write_json(out / "manifest.json", info))
    return written


def save_comparison(comparison: Comparison, out: str | Path, *, figure: bool = True) -> list[Path]:
    """Write a comparison's tables, figure and manifest into the results folder ``out``.

    Files: ``compare_curves.csv``, ``compare_metrics.csv``, ``compare_gaps.csv``,
    ``compare_fits.csv``, ``compare_replicates.csv`` (per-replicate metrics, fits and
    gaps to the reference model), ``comparison.png``, ``compare_manifest.json``.

    Raises
    ------
    StoreError
        If ``out`` exists and is not a folder, or cannot be created.
    """
    out = results_folder(out)
    tables = {
        "compare_curves.csv": comparison.curve_table(),
        "compare_metrics.csv": comparison.metrics,
        "compare_gaps.csv": comparison.gaps,
        "compare_fits.csv": comparison.fits,
        "compare_replicates.csv": comparison.replicate_table(),
    }
    written = [_write_table(out / name, table) for name, table in tables.items()]
    if figure:
        written.append(_write_figure(out / "comparison.png", comparison_figure(comparison)))
    sf = comparison.stock_flow_fit
    extra = {
        "comparison": comparison.settings,
        "headline": comparison.headline(),
        "stock_and_flow_fit": {"slope": sf.slope, "cap": sf.cap, "success": sf.success, "rmse": sf.rmse},
    }
    written.append(_write_json(out / "compare_manifest.json", manifest(comparison.batch, extra)))
    return written
