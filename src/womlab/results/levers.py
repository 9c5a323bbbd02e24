"""A lever-timing study drawn and written: :func:`lever_figure` and :func:`save_levers`."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
from matplotlib.figure import Figure

from womlab.results.figures import BASS_COLOUR, NETWORK_COLOUR, _figure, _legend_beside, title_text
from womlab.results.save import _save
from womlab.studies.levers import LeverStudy

__all__ = ["lever_figure", "save_levers", "LEVER_COLOURS"]

#: One colour per lever, the same in every figure.
LEVER_COLOURS = {
    "referral": "#2e8b57",
    "reference_customers": "#1f5f8b",
    "campaign": "#d68910",
    "open_region": "#c0392b",
}
_MORE = ("#8e44ad", "#17a589", "#a04000", "#5d6d7e")

_LABELS = {
    "incremental_value": "incremental discounted value to the horizon",
    "incremental_value_lifetime": "incremental discounted value, whole life",
    "roi": "return on investment (ΔValue − Cost) / Cost",
}


def _colour(name: str, i: int) -> str:
    return LEVER_COLOURS.get(name) or _MORE[i % len(_MORE)]


def lever_figure(
    study: LeverStudy,
    *,
    by: str = "incremental_value",
    title: str | None = None,
    size: tuple[float, float] | None = None,
) -> Figure:
    """Each lever's value against the period it is pulled (mean and 95 % interval over replicates),
    the crossover where the best lever changes with its bootstrap interval, and the baseline's
    S-curve beneath with its peak and the aggregate model's inflection marked.

    Parameters
    ----------
    study : LeverStudy
    by : str
        ``incremental_value``, ``incremental_value_lifetime`` or ``roi``.
    title : str, optional
        Defaults to the scenario's name.
    size : (width, height), optional
        In inches.
    """
    table = study.table()
    fig = _figure(size, (9.5, 7.5))
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 2))
    for i, name in enumerate(study.levers):
        rows = table[table["lever"] == name]
        t = rows["pulled_at"].to_numpy()
        colour = _colour(name, i)
        if by == "roi":
            top.plot(t, rows["roi"], "o-", color=colour, lw=2, ms=4, label=name)
        else:
            top.fill_between(t, rows[f"{by}_low"], rows[f"{by}_high"], color=colour, alpha=0.15, lw=0)
            top.plot(t, rows[by], "o-", color=colour, lw=2, ms=4, label=f"{name}, mean and 95 % interval")
    top.axhline(0, color=BASS_COLOUR, lw=0.8)
    cross = study.crossover(by)
    for ax in (top, bottom):
        ax.grid(alpha=0.3)
        if np.isfinite(cross["period"]):
            if np.isfinite(cross["low"]) and np.isfinite(cross["high"]):
                ax.axvspan(cross["low"], cross["high"], color="#999999", alpha=0.15, lw=0)
            ax.axvline(cross["period"], color=BASS_COLOUR, ls="--", lw=1.2)
    if np.isfinite(cross["period"]):
        top.annotate(
            f"best lever changes: {cross['from']} → {cross['to']} at period {cross['period']:g}",
            (cross["period"], 1.0),
            xycoords=("data", "axes fraction"),
            xytext=(4, -12),
            textcoords="offset points",
            fontsize=8,
            color=BASS_COLOUR,
        )
    else:
        top.text(
            0.02,
            0.95,
            f"best lever throughout: {cross['from']}",
            transform=top.transAxes,
            fontsize=8,
            color=BASS_COLOUR,
            va="top",
        )
    top.set_ylabel(_LABELS.get(by, by))
    _legend_beside(top, title=f"{study.replicates} paired replicates\n(shaded: crossover interval)", title_fontsize=8)
    top.set_title(title_text(title or study.scenario.name), fontsize=11)

    curve = study.curve()
    stage = study.stage()
    t = curve["period"].to_numpy()
    bottom.fill_between(t, curve["share_q05"], curve["share_q95"], color=NETWORK_COLOUR, alpha=0.18, lw=0)
    bottom.plot(t, curve["share"], color=NETWORK_COLOUR, lw=2, label="baseline, mean and 5–95 % band")
    peak = int(stage["peak_period"].iloc[0])
    bottom.axvline(peak, color=NETWORK_COLOUR, ls=":", lw=1.2, label=f"most new customers (period {peak})")
    agg = float(stage["aggregate_peak_period"].iloc[0])
    if np.isfinite(agg):
        bottom.axvline(agg, color="#c0392b", ls=":", lw=1.2, label=f"aggregate model's inflection (period {agg:g})")
    bottom.plot(stage["pulled_at"], stage["share_reached"], "k|", ms=10, label="periods pulled")
    bottom.set_ylim(0, 1.02)
    bottom.set_ylabel("customers, share of market")
    bottom.set_xlabel("period at whose end the lever is pulled (it acts from the next)")
    _legend_beside(bottom)
    bottom.set_xlim(0, t[-1])
    return fig


def save_levers(
    study: LeverStudy,
    out: str | Path,
    *,
    by: str = "incremental_value",
    figure: bool = True,
    wall_time: float = 0.0,
    force: bool = False,
    figure_format: str = "png",
    figure_size: tuple[float, float] | None = None,
    command_line: list[str] | None = None,
) -> list[Path]:
    """Write a lever-timing study's results folder.

    Files: ``levers.csv`` (:meth:`LeverStudy.table`), ``levers_best.csv`` (:meth:`LeverStudy.best`),
    ``levers_crossover.csv`` (:meth:`LeverStudy.crossover` by incremental value, whole-life value
    and ROI), ``levers_stage.csv`` (:meth:`LeverStudy.stage`), ``levers_runs.csv`` (one row per
    lever, period and replicate), ``levers_curve.csv`` (the baseline's S-curve), ``levers.png``
    and ``manifest.json``.

    Raises
    ------
    StoreError
        If ``out`` is refused or cannot be written.
    """
    import pandas as pd

    crossings = pd.DataFrame([study.crossover(b) for b in ("incremental_value", "incremental_value_lifetime", "roi")])
    tables: dict[str, Any] = {
        "levers.csv": study.table(),
        "levers_best.csv": study.best(by),
        "levers_crossover.csv": crossings,
        "levers_stage.csv": study.stage(),
        "levers_runs.csv": study.per_replicate(),
        "levers_curve.csv": study.curve(),
    }
    figures = {"levers": lambda: lever_figure(study, by=by, size=figure_size)} if figure else {}
    extra = {
        "spawn_keys": "SeedSequence(root_seed, spawn_key=(replicate,)); every (lever, period) arm paired with "
        "the baseline",
        "continued_to": int(study.continued_to),
        "exhausted_replicates": int(np.sum(study.exhausted)),
        "parameters": study.parameters,
    }
    return _save(
        "levers",
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
