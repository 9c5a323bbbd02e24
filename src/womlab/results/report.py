"""Summaries, figures and the report page of a sweep's results folder.

:func:`sweep_summary` gives, per point, the statistics of the sweep's study
(:mod:`womlab.studies.sweep_studies`): for every outcome the mean over replicates and a 95 %
confidence interval of that mean (Student t, mean ± t₀.₉₇₅,ₙ₋₁ · sd/√n over the runs
that reached the outcome), and what the study adds — a programme's ROI, cost per
incremental customer and acceleration share as ratios of totals, a seeding strategy's
lift against random — each with its interval and how it was made. With one replicate per
point there is no interval: the bounds are missing and the report says so.
:func:`sweep_figures` draws the study's chosen statistics as suits the design:

* ``grid`` with one numeric axis: the mean with its interval as a band, against the axis;
* ``grid`` with two numeric axes: a heatmap of the mean;
* ``grid`` with a categorical axis (a list of text values): grouped lines, one per
  category (other numeric axes, if any, averaged over);
* other designs, or more axes: each outcome's point means against each axis;
* ``sobol``: first-order and total Sobol indices; ``morris``: μ* against σ.

:func:`write_report` writes ``report.html`` — self-contained (figures embedded as
base64 PNG, no scripts, no links to fetch), readable offline — and ``summary.csv``
(and ``sensitivity.csv`` for ``sobol``/``morris``) into the folder.
"""

from __future__ import annotations

import base64
import html
import io
import json
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from womlab.errors import StoreError
from womlab.scenario import Scenario
from womlab.store import ResultsStore, atomic_write
from womlab.studies.sensitivity import morris_effects, sobol_indices
from womlab.studies.sweep import unit_coordinates
from womlab.studies.sweep_studies import SweepStudy, sweep_study

__all__ = ["sweep_summary", "sensitivity_table", "sweep_figures", "write_report", "shown_outcomes"]

COLOUR = "#1f5f8b"
SUMMARY_COLUMNS = ["point", "outcome", "runs", "reached", "estimate", "sd", "low", "high", "interval"]


def _store(folder: str | Path | ResultsStore) -> ResultsStore:
    return folder if isinstance(folder, ResultsStore) else ResultsStore(folder)


def _scenario(store: ResultsStore) -> Scenario:
    return Scenario.from_dict(store.manifest()["scenario"])


def _study(store: ResultsStore) -> SweepStudy:
    name = store.manifest().get("study", "run")  # store format 1 ran the run study only
    try:
        return sweep_study(name)
    except Exception:  # noqa: BLE001 - a study this womlab does not know
        raise StoreError(
            f"{str(store.path)!r} was made by the sweep study {name!r}, which this womlab does not know"
        ) from None


def shown_outcomes(folder: str | Path | ResultsStore) -> tuple[str, ...]:
    """The statistics the figures draw (every statistic is in the tables)."""
    store = _store(folder)
    return _study(store).shown(_scenario(store))


def _labels(store: ResultsStore) -> dict[str, str]:
    return _study(store).all_labels(_scenario(store))


def sweep_summary(folder: str | Path | ResultsStore) -> pd.DataFrame:
    """Per point and statistic of the sweep's study: runs, reached, estimate, sd, low, high, interval.

    Parameters
    ----------
    folder : str, Path or ResultsStore
        A sweep's results folder.

    Returns
    -------
    pandas.DataFrame
        Tidy: one row per (point, outcome), with the point's axis values. ``outcome`` names
        an outcome column (``estimate`` its mean over the point's finished runs, ``low`` and
        ``high`` the 95 % Student-t interval of that mean) or a statistic the study adds (a
        ratio of totals, a lift; ``interval`` says how its bounds were made). ``runs``
        counts the point's finished runs, ``reached`` those where the outcome exists (a run
        that never reaches 90 % of the market has no t90). With a single run at a point the
        bounds are missing (NaN).

    Examples
    --------
    >>> sweep_summary("out/sweep-demo").query("outcome == 't50'")[["point", "estimate", "low", "high"]]  # doctest: +SKIP
    """
    store = _store(folder)
    points = store.points()
    runs = store.runs()
    study, scenario = _study(store), _scenario(store)
    ok = runs[runs["status"] == "ok"]
    rows = []
    for point, group in ok.groupby("point", sort=True):
        group = group.reset_index(drop=True)
        for stat in study.point_statistics(scenario, group, int(point)):
            rows.append({"point": int(point), "runs": len(group), **stat})
    table = pd.DataFrame(rows, columns=SUMMARY_COLUMNS)
    return points.merge(table, on="point", how="right")


def _point_means(summary: pd.DataFrame, outcome: str, n_points: int) -> np.ndarray:
    sel = summary[summary["outcome"] == outcome].set_index("point")["estimate"]
    return sel.reindex(range(n_points)).to_numpy(dtype=float)


def sensitivity_table(folder: str | Path | ResultsStore) -> pd.DataFrame | None:
    """Sobol indices (``sobol`` design) or Morris μ*, σ (``morris``) of every outcome; None otherwise.

    The model output at a point is the point's estimate of the statistic (the mean of an
    outcome over the point's replicates; a ratio of totals; a lift).
    Replicate noise left in that mean adds variance that no axis explains: it lowers
    first-order indices and, through the total-index estimator, shows up as a small
    total index even for an inert axis; more replicates shrink it.
    """
    store = _store(folder)
    scenario = _scenario(store)
    spec = scenario.sweep
    if spec.design not in ("sobol", "morris"):
        return None
    points = store.points()
    summary = sweep_summary(store)
    names = [a.name for a in spec.leaders]
    frames = []
    for outcome in summary["outcome"].unique():
        y = _point_means(summary, outcome, len(points))
        if spec.design == "sobol":
            t = sobol_indices(y, len(names), names=names)
        else:
            t = morris_effects(unit_coordinates(scenario, points), y, spec.samples, names=names)
        t.insert(0, "outcome", outcome)
        frames.append(t.rename(columns={"input": "axis"}))
    return pd.concat(frames, ignore_index=True)


def _numeric(values: pd.Series) -> bool:
    return pd.api.types.is_numeric_dtype(values) and not pd.api.types.is_bool_dtype(values)


def _panels(n: int) -> tuple[Figure, list]:
    cols = min(n, 2)
    rows = -(-n // cols)
    fig = Figure(figsize=(5.2 * cols, 3.6 * rows), layout="constrained")
    axs = np.atleast_1d(fig.subplots(rows, cols)).ravel().tolist()
    for ax in axs[n:]:
        ax.set_visible(False)
    return fig, axs[:n]


def sweep_figures(folder: str | Path | ResultsStore) -> dict[str, Figure]:
    """The figures of a sweep (see the module notes for which design gets which).

    Returns
    -------
    dict
        Title → matplotlib Figure, in the order the report shows them.
    """
    store = _store(folder)
    scenario = _scenario(store)
    spec = scenario.sweep
    summary = sweep_summary(store)
    points = store.points()
    shown = [s for s in shown_outcomes(store) if s in set(summary["outcome"])]
    labels = _labels(store)
    axes = [a.name for a in spec.leaders]
    log = {a.name for a in spec.leaders if a.log}
    numeric = [a for a in axes if _numeric(points[a])]
    categorical = [a for a in axes if a not in numeric]
    figures: dict[str, Figure] = {}
    if summary.empty or not shown:
        return figures
    if spec.design == "grid" and len(axes) == 1 and numeric:
        figures[f"outcomes against {axes[0]}"] = _lines(summary, shown, labels, numeric[0], [], [], log)
    elif spec.design == "grid" and len(axes) == 2 and len(numeric) == 2:
        figures[f"outcomes over {numeric[0]} and {numeric[1]}"] = _heatmaps(
            summary, shown, labels, numeric[0], numeric[1]
        )
    elif spec.design == "grid" and categorical:
        x = numeric[0] if numeric else categorical[0]
        groups = [c for c in categorical if c != x]
        averaged = [a for a in numeric if a != x]
        figures[f"outcomes against {x}, by {', '.join(groups) or 'point'}"] = _lines(
            summary, shown, labels, x, groups, averaged, log
        )
    else:
        figures["point estimates against each axis"] = _scatter(summary, shown, labels, axes, numeric, log)
    sens = sensitivity_table(store)
    if sens is not None:
        figures["Sobol indices" if spec.design == "sobol" else "Morris screening"] = _sensitivity_figure(
            sens, shown, labels, spec.design
        )
    return figures


def _lines(
    summary: pd.DataFrame,
    shown: list[str],
    labels: dict[str, str],
    x: str,
    groups: list[str],
    averaged: list[str],
    log: set[str],
) -> Figure:
    fig, axs = _panels(len(shown))
    bands = False
    for ax, outcome in zip(axs, shown):
        s = summary[summary["outcome"] == outcome]
        grouped = s.groupby(groups, sort=False) if groups else [((), s)]
        for key, g in grouped:
            key = key if isinstance(key, tuple) else (key,)
            label = ", ".join(f"{v}" for v in key) if groups else None
            agg = g.groupby(x, sort=True).agg(estimate=("estimate", "mean"), lo=("low", "mean"), hi=("high", "mean"))
            xs = agg.index.to_numpy() if _numeric(agg.index.to_series()) else np.arange(len(agg))
            line = ax.plot(xs, agg["estimate"], marker="o", ms=3, lw=1.8, label=label, color=None if groups else COLOUR)
            if not averaged and np.isfinite(agg[["lo", "hi"]].to_numpy(dtype=float)).any():
                bands = True
                ax.fill_between(
                    xs, agg["lo"].astype(float), agg["hi"].astype(float), alpha=0.2, lw=0, color=line[0].get_color()
                )
            if not _numeric(agg.index.to_series()):
                ax.set_xticks(xs, [str(v) for v in agg.index], rotation=20, fontsize=8)
        if x in log:
            ax.set_xscale("log")
        ax.set_xlabel(x)
        ax.set_ylabel(labels.get(outcome, outcome), fontsize=9)
        ax.grid(alpha=0.3)
        if groups:
            ax.legend(fontsize=7, frameon=False, title=", ".join(groups), title_fontsize=7)
    if averaged:
        note = f"point estimate, averaged over {', '.join(averaged)}"
    else:
        note = "point estimate, band: 95 % interval" if bands else "point estimate (one run per point: no interval)"
    fig.suptitle(note, fontsize=9)
    return fig


def _heatmaps(summary: pd.DataFrame, shown: list[str], labels: dict[str, str], x: str, y: str) -> Figure:
    fig, axs = _panels(len(shown))
    for ax, outcome in zip(axs, shown):
        s = summary[summary["outcome"] == outcome]
        grid = s.pivot_table(index=y, columns=x, values="estimate", aggfunc="mean", dropna=False)
        im = ax.imshow(grid.to_numpy(dtype=float), origin="lower", aspect="auto", cmap="viridis")
        ax.set_xticks(range(grid.shape[1]), [f"{v:.3g}" for v in grid.columns], fontsize=7, rotation=45)
        ax.set_yticks(range(grid.shape[0]), [f"{v:.3g}" for v in grid.index], fontsize=7)
        ax.set_xlabel(x)
        ax.set_ylabel(y)
        ax.set_title(labels.get(outcome, outcome), fontsize=9)
        fig.colorbar(im, ax=ax, shrink=0.85)
    fig.suptitle("point estimate", fontsize=9)
    return fig


def _scatter(
    summary: pd.DataFrame, shown: list[str], labels: dict[str, str], axes: list[str], numeric: list[str], log: set[str]
) -> Figure:
    fig = Figure(figsize=(3.2 * len(axes) + 0.5, 2.6 * len(shown)), layout="constrained")
    grid = np.atleast_2d(fig.subplots(len(shown), len(axes), squeeze=False))
    for r, outcome in enumerate(shown):
        s = summary[summary["outcome"] == outcome]
        for c, axis in enumerate(axes):
            ax = grid[r, c]
            if axis in numeric:
                ax.scatter(s[axis], s["estimate"], s=8, alpha=0.6, color=COLOUR, lw=0)
                if axis in log:
                    ax.set_xscale("log")
            else:
                cats = list(dict.fromkeys(s[axis]))
                pos = s[axis].map({v: i for i, v in enumerate(cats)}).to_numpy(dtype=float)
                jitter = np.random.default_rng(0).uniform(-0.15, 0.15, pos.size)
                ax.scatter(pos + jitter, s["estimate"], s=8, alpha=0.6, color=COLOUR, lw=0)
                ax.set_xticks(range(len(cats)), [str(v) for v in cats], fontsize=7, rotation=20)
            ax.grid(alpha=0.3)
            if r == len(shown) - 1:
                ax.set_xlabel(axis, fontsize=8)
            if c == 0:
                ax.set_ylabel(labels.get(outcome, outcome), fontsize=8)
    fig.suptitle("point estimate at each point", fontsize=9)
    return fig


def _sensitivity_figure(table: pd.DataFrame, shown: list[str], labels: dict[str, str], design: str) -> Figure:
    fig, axs = _panels(len(shown))
    for ax, outcome in zip(axs, shown):
        t = table[table["outcome"] == outcome]
        if design == "sobol":
            pos = np.arange(len(t))
            ax.bar(pos - 0.2, t["S1"], 0.4, yerr=1.96 * t["S1_se"], label="first order S₁", color=COLOUR)
            ax.bar(pos + 0.2, t["ST"], 0.4, yerr=1.96 * t["ST_se"], label="total S_T", color="#c0392b")
            ax.set_xticks(pos, t["axis"], fontsize=7, rotation=20)
            finite = np.concatenate([t["S1"].to_numpy(float), t["ST"].to_numpy(float)])
            finite = finite[np.isfinite(finite)]
            if finite.size:
                ax.set_ylim(min(0.0, finite.min() - 0.05), max(1.05, finite.max() + 0.05))
            ax.legend(fontsize=7, frameon=False)
        else:
            ax.scatter(t["mu_star"], t["sigma"], color=COLOUR)
            for _, row in t.iterrows():
                ax.annotate(row["axis"], (row["mu_star"], row["sigma"]), fontsize=7)
            ax.set_xlabel("μ* (mean |elementary effect|)")
            ax.set_ylabel("σ")
        ax.set_title(labels.get(outcome, outcome), fontsize=9)
        ax.grid(alpha=0.3)
    return fig


def _png(fig: Figure) -> str:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110)
    return base64.b64encode(buf.getvalue()).decode("ascii")


def _table(frame: pd.DataFrame, limit: int = 400) -> str:
    note = ""
    if len(frame) > limit:
        note = f"<p class='note'>First {limit} of {len(frame)} rows; the whole table is in the folder's files.</p>"
        frame = frame.head(limit)
    table = frame.to_html(index=False, classes="womlab-table", border=0, na_rep="–", float_format=lambda v: f"{v:.4g}")
    return f"<div class='wide'>{table}</div>{note}"


_CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;max-width:1100px;margin:2em auto;padding:0 1em;color:#222}
h1{font-size:1.5em}h2{font-size:1.2em;margin-top:2em;border-bottom:1px solid #ddd}
table.womlab-table{border-collapse:collapse;font-size:0.8em;margin:0.5em 0}
table.womlab-table th,table.womlab-table td{padding:2px 8px;white-space:nowrap;border-bottom:1px solid #eee;text-align:right}
table.womlab-table th{background:#f4f6f8}
pre{background:#f7f7f7;padding:0.8em;overflow:auto;font-size:0.8em}
img{max-width:100%}.wide{overflow-x:auto}.note{color:#666;font-size:0.85em}
"""


def _by_point(points: pd.DataFrame, summary: pd.DataFrame, shown: list[str]) -> pd.DataFrame:
    """One row per point: the shown statistics' estimates and their 95 % intervals ("–" where there is none)."""
    by_point = points.copy()
    index = summary.set_index(["point", "outcome"])
    for outcome in shown:
        sel = index.xs(outcome, level="outcome") if outcome in set(summary["outcome"]) else index.iloc[0:0]
        by_point[outcome] = by_point["point"].map(sel["estimate"]) if len(sel) else np.nan
        ci = pd.Series(
            [
                f"{a:.4g} – {b:.4g}" if np.isfinite(a) and np.isfinite(b) else "–"
                for a, b in zip(sel["low"].astype(float), sel["high"].astype(float))
            ],
            index=sel.index,
        )
        by_point[f"{outcome} 95% CI"] = by_point["point"].map(ci).fillna("–")
    return by_point


def write_report(folder: str | Path | ResultsStore, *, lock: bool = True) -> Path:
    """Write ``report.html`` (self-contained) and ``summary.csv`` into a sweep's results folder.

    Parameters
    ----------
    folder : str, Path or ResultsStore
        A sweep's results folder.
    lock : bool
        Take the folder's lock while writing (refused, in one line, while a sweep is
        writing the folder); a sweep writing its own report already holds it.

    Returns
    -------
    Path
        The report page.

    Raises
    ------
    StoreError
        If ``folder`` is not a sweep's results folder, or another process is writing it.
    """
    store = _store(folder)
    store.manifest()  # not a sweep's folder: one line, before any lock file is made
    if lock:
        with store.locked(0.0, create=False):
            return _write_report(store)
    return _write_report(store)


def _write_report(store: ResultsStore) -> Path:
    manifest = store.manifest()
    scenario = _scenario(store)
    spec = scenario.sweep
    points = store.points()
    runs = store.runs()
    summary = sweep_summary(store)
    sens = sensitivity_table(store)
    figures = sweep_figures(store)
    shown = list(shown_outcomes(store))
    failed = runs[runs["status"] != "ok"].merge(points, on="point", how="left")

    atomic_write(store.path / "summary.csv", lambda p: summary.to_csv(p, index=False, float_format="%.6g"))
    if sens is not None:
        atomic_write(store.path / "sensitivity.csv", lambda p: sens.to_csv(p, index=False, float_format="%.6g"))
    by_point = _by_point(points, summary, shown)

    esc = html.escape
    n_ok = int((runs["status"] == "ok").sum())
    replicates = int(manifest.get("replicates", spec.replicates))
    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>",
        f"<title>womlab sweep: {esc(scenario.name)}</title><style>{_CSS}</style></head><body>",
        f"<h1>Sweep: {esc(scenario.name)}</h1>",
        f"<p>Study <b>{esc(str(manifest.get('study', 'run')))}</b> at every point; design <b>{esc(spec.design)}</b> "
        f"over {len(spec.axes)} axes ({esc(', '.join(a.name for a in spec.axes))}); "
        f"{len(points)} points × {replicates} replicates = {manifest.get('runs', len(points) * replicates)} runs. "
        f"Finished: {n_ok}; failed: {len(failed)}; root seed {scenario.seed}; started {esc(str(manifest.get('started')))}.</p>",
    ]
    missing = int(manifest.get("runs", 0)) - len(runs)
    if missing > 0:
        parts.append(
            f"<p class='note'>{missing} runs have not been run yet (an interrupted sweep: rerun the same "
            "command to resume).</p>"
        )
    if store.notices:
        parts.append("<p class='note'>" + "<br>".join(esc(n) for n in store.notices) + "</p>")
    parts.append("<h2>Figures</h2>")
    for title, fig in figures.items():
        parts.append(
            f"<h3>{esc(title)}</h3><img class='figure' alt='{esc(title)}' src='data:image/png;base64,{_png(fig)}'>"
        )
    one = " With one run per point there are no intervals (–)." if replicates < 2 else ""
    parts.append(
        "<h2>Outcomes by point</h2><p class='note'>Each point's estimate and its 95 % confidence interval: "
        "the mean over the point's finished runs with a Student-t interval, or the study's own statistic "
        f"(summary.csv says how each was made). Times to a share average the runs that reached it.{one}</p>"
    )
    parts.append(_table(by_point))
    if sens is not None:
        title = "Sobol indices" if spec.design == "sobol" else "Morris screening"
        note = (
            "First-order (Saltelli et al. 2010) and total (Jansen 1999) indices of each statistic's point "
            "estimate; _se: standard errors from the spread over independent scrambles of the design; an index "
            "outside [0, 1] is the sampling error of a small base sample (see note)."
            if spec.design == "sobol"
            else "Elementary effects per unit of each axis's range (Morris 1991); μ* as in Campolongo et al. 2007."
        )
        parts.append(f"<h2>{title}</h2><p class='note'>{note}</p>")
        parts.append(_table(sens[sens["outcome"].isin(shown)] if shown else sens))
    parts.append(f"<h2>Failures ({len(failed)})</h2>")
    parts.append(
        _table(failed[["point", "replicate", *[a.name for a in spec.axes], "error"]]) if len(failed) else "<p>None.</p>"
    )
    parts.append("<h2>Sweep spec</h2><pre>" + esc(json.dumps(spec.to_table(), indent=2)) + "</pre>")
    parts.append("<h2>Scenario</h2><pre>" + esc(json.dumps(manifest["scenario"], indent=2)) + "</pre>")
    parts.append(
        "<h2>Versions</h2>"
        + _table(pd.DataFrame(sorted(manifest.get("versions", {}).items()), columns=["library", "version"]))
    )
    sessions = pd.DataFrame(manifest.get("sessions", []))
    if not sessions.empty:
        parts.append("<h2>Sessions</h2>" + _table(sessions))
    parts.append(
        f"<p class='note'>Written by womlab. Randomness: {esc(str(manifest.get('spawn_keys', '')))}.</p></body></html>"
    )
    text = "\n".join(parts)
    return atomic_write(store.path / "report.html", lambda p: p.write_text(text, encoding="utf-8"))
