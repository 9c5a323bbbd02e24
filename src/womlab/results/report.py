"""Summaries, figures and the report page of a sweep's results folder.

:func:`sweep_summary` gives, per point and outcome, the mean over replicates and a 95 %
confidence interval of that mean (Student t, mean ± t₀.₉₇₅,ₙ₋₁ · sd/√n over the runs
that reached the outcome). :func:`sweep_figures` draws what suits the design:

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
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from womlab.scenario import Scenario
from womlab.store import ResultsStore, atomic_write
from womlab.studies.intervals import FewReplicatesWarning
from womlab.studies.metrics import mean_interval
from womlab.studies.sensitivity import morris_effects, sobol_indices
from womlab.studies.sweep import OUTCOMES, unit_coordinates

__all__ = ["sweep_summary", "sensitivity_table", "sweep_figures", "write_report", "SHOWN_OUTCOMES"]

SHOWN_OUTCOMES = ("final_share", "t50", "peak_period", "peak_new_share")
"""Outcomes drawn in the figures (every outcome is in the tables)."""

_LABELS = {
    "customers": "customers at horizon",
    "satisfied_customers": "satisfied customers at horizon",
    "final_share": "share of market at horizon",
    "t10": "period reaching 10 % of market",
    "t50": "period reaching 50 % of market",
    "t90": "period reaching 90 % of market",
    "peak_period": "peak period (most new customers)",
    "peak_new_share": "new customers in peak period, share",
}
COLOUR = "#1f5f8b"


def _store(folder: str | Path | ResultsStore) -> ResultsStore:
    return folder if isinstance(folder, ResultsStore) else ResultsStore(folder)


def _scenario(store: ResultsStore) -> Scenario:
    return Scenario.from_dict(store.manifest()["scenario"])


def sweep_summary(folder: str | Path | ResultsStore) -> pd.DataFrame:
    """Per point and outcome: runs, reached, mean, sd, ci_low, ci_high (95 % t interval of the mean).

    Parameters
    ----------
    folder : str, Path or ResultsStore
        A sweep's results folder.

    Returns
    -------
    pandas.DataFrame
        Tidy: one row per (point, outcome), with the point's axis values. ``runs`` counts
        the point's finished runs, ``reached`` those where the outcome exists (a run that
        never reaches 90 % of the market has no t90).
    """
    store = _store(folder)
    points = store.points()
    runs = store.runs()
    ok = runs[runs["status"] == "ok"]
    rows = []
    for point, group in ok.groupby("point", sort=True):
        for outcome in OUTCOMES:
            x = group[outcome].astype("float64").to_numpy(na_value=np.nan)
            x = x[np.isfinite(x)]
            # cut at the outcome's known range (shares in [0, 1], counts and times >= 0; studies.intervals)
            known = (0.0, 1.0) if outcome.endswith("share") else (1.0 if outcome == "peak_period" else 0.0, np.inf)
            with warnings.catch_warnings():  # a point with one run has no interval; `reached` says why
                warnings.simplefilter("ignore", FewReplicatesWarning)
                mean, low, high = mean_interval(x, bounds=known)
            sd = float(x.std(ddof=1)) if x.size > 1 else np.nan
            rows.append({"point": int(point), "outcome": outcome, "runs": len(group), "reached": x.size,
                         "mean": mean, "sd": sd, "ci_low": low, "ci_high": high})
    table = pd.DataFrame(rows, columns=["point", "outcome", "runs", "reached", "mean", "sd", "ci_low", "ci_high"])
    return points.merge(table, on="point", how="right")


def _point_means(summary: pd.DataFrame, outcome: str, n_points: int) -> np.ndarray:
    sel = summary[summary["outcome"] == outcome].set_index("point")["mean"]
    return sel.reindex(range(n_points)).to_numpy(dtype=float)


def sensitivity_table(folder: str | Path | ResultsStore) -> pd.DataFrame | None:
    """Sobol indices (``sobol`` design) or Morris μ*, σ (``morris``) of every outcome; None otherwise.

    The model output at a point is the mean of the outcome over the point's replicates.
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
    names = [a.name for a in spec.axes]
    frames = []
    for outcome in OUTCOMES:
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
    axes = [a.name for a in spec.axes]
    numeric = [a for a in axes if _numeric(points[a])]
    categorical = [a for a in axes if a not in numeric]
    figures: dict[str, Figure] = {}
    if summary.empty:
        return figures
    if spec.design == "grid" and len(axes) == 1 and numeric:
        figures[f"outcomes against {axes[0]}"] = _lines(summary, numeric[0], [], [])
    elif spec.design == "grid" and len(axes) == 2 and len(numeric) == 2:
        figures[f"outcomes over {numeric[0]} and {numeric[1]}"] = _heatmaps(summary, numeric[0], numeric[1])
    elif spec.design == "grid" and categorical:
        x = numeric[0] if numeric else categorical[0]
        groups = [c for c in categorical if c != x]
        averaged = [a for a in numeric if a != x]
        figures[f"outcomes against {x}, by {', '.join(groups) or 'point'}"] = _lines(summary, x, groups, averaged)
    else:
        figures["point means against each axis"] = _scatter(summary, axes, numeric)
    sens = sensitivity_table(store)
    if sens is not None:
        figures["Sobol indices" if spec.design == "sobol" else "Morris screening"] = _sensitivity_figure(sens, spec.design)
    return figures


def _lines(summary: pd.DataFrame, x: str, groups: list[str], averaged: list[str]) -> Figure:
    fig, axs = _panels(len(SHOWN_OUTCOMES))
    for ax, outcome in zip(axs, SHOWN_OUTCOMES):
        s = summary[summary["outcome"] == outcome]
        grouped = s.groupby(groups, sort=False) if groups else [((), s)]
        for key, g in grouped:
            key = key if isinstance(key, tuple) else (key,)
            label = ", ".join(f"{v}" for v in key) if groups else None
            agg = g.groupby(x, sort=True).agg(mean=("mean", "mean"), lo=("ci_low", "mean"), hi=("ci_high", "mean"))
            xs = agg.index.to_numpy() if _numeric(agg.index.to_series()) else np.arange(len(agg))
            line = ax.plot(xs, agg["mean"], marker="o", ms=3, lw=1.8, label=label, color=None if groups else COLOUR)
            if not averaged:
                ax.fill_between(xs, agg["lo"], agg["hi"], alpha=0.2, lw=0, color=line[0].get_color())
            if not _numeric(agg.index.to_series()):
                ax.set_xticks(xs, [str(v) for v in agg.index], rotation=20, fontsize=8)
        ax.set_xlabel(x)
        ax.set_ylabel(_LABELS[outcome], fontsize=9)
        ax.grid(alpha=0.3)
        if groups:
            ax.legend(fontsize=7, frameon=False, title=", ".join(groups), title_fontsize=7)
    note = "mean, band: 95 % interval of the mean" if not averaged else f"mean, averaged over {', '.join(averaged)}"
    fig.suptitle(note, fontsize=9)
    return fig


def _heatmaps(summary: pd.DataFrame, x: str, y: str) -> Figure:
    fig, axs = _panels(len(SHOWN_OUTCOMES))
    for ax, outcome in zip(axs, SHOWN_OUTCOMES):
        s = summary[summary["outcome"] == outcome]
        grid = s.pivot_table(index=y, columns=x, values="mean", aggfunc="mean")
        im = ax.imshow(grid.to_numpy(dtype=float), origin="lower", aspect="auto", cmap="viridis")
        ax.set_xticks(range(grid.shape[1]), [f"{v:.3g}" for v in grid.columns], fontsize=7, rotation=45)
        ax.set_yticks(range(grid.shape[0]), [f"{v:.3g}" for v in grid.index], fontsize=7)
        ax.set_xlabel(x)
        ax.set_ylabel(y)
        ax.set_title(_LABELS[outcome], fontsize=9)
        fig.colorbar(im, ax=ax, shrink=0.85)
    fig.suptitle("mean over replicates", fontsize=9)
    return fig


def _scatter(summary: pd.DataFrame, axes: list[str], numeric: list[str]) -> Figure:
    outcomes = SHOWN_OUTCOMES
    fig = Figure(figsize=(3.2 * len(axes) + 0.5, 2.6 * len(outcomes)), layout="constrained")
    grid = np.atleast_2d(fig.subplots(len(outcomes), len(axes), squeeze=False))
    for r, outcome in enumerate(outcomes):
        s = summary[summary["outcome"] == outcome]
        for c, axis in enumerate(axes):
            ax = grid[r, c]
            if axis in numeric:
                ax.scatter(s[axis], s["mean"], s=8, alpha=0.6, color=COLOUR, lw=0)
            else:
                cats = list(dict.fromkeys(s[axis]))
                pos = s[axis].map({v: i for i, v in enumerate(cats)}).to_numpy(dtype=float)
                jitter = np.random.default_rng(0).uniform(-0.15, 0.15, pos.size)
                ax.scatter(pos + jitter, s["mean"], s=8, alpha=0.6, color=COLOUR, lw=0)
                ax.set_xticks(range(len(cats)), [str(v) for v in cats], fontsize=7, rotation=20)
            ax.grid(alpha=0.3)
            if r == len(outcomes) - 1:
                ax.set_xlabel(axis, fontsize=8)
            if c == 0:
                ax.set_ylabel(_LABELS[outcome], fontsize=8)
    fig.suptitle("mean over replicates at each point", fontsize=9)
    return fig


def _sensitivity_figure(table: pd.DataFrame, design: str) -> Figure:
    fig, axs = _panels(len(SHOWN_OUTCOMES))
    for ax, outcome in zip(axs, SHOWN_OUTCOMES):
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
        ax.set_title(_LABELS[outcome], fontsize=9)
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


def write_report(folder: str | Path | ResultsStore) -> Path:
    """Write ``report.html`` (self-contained) and ``summary.csv`` into a sweep's results folder.

    Returns
    -------
    Path
        The report page.

    Raises
    ------
    StoreError
        If ``folder`` is not a sweep's results folder.
    """
    store = _store(folder)
    manifest = store.manifest()
    scenario = _scenario(store)
    spec = scenario.sweep
    points = store.points()
    runs = store.runs()
    summary = sweep_summary(store)
    sens = sensitivity_table(store)
    figures = sweep_figures(store)
    failed = runs[runs["status"] != "ok"].merge(points, on="point", how="left")

    wide = summary.pivot_table(index="point", columns="outcome", values=["mean", "ci_low", "ci_high"], aggfunc="first")
    atomic_write(store.path / "summary.csv", lambda p: summary.to_csv(p, index=False, float_format="%.6g"))
    if sens is not None:
        atomic_write(store.path / "sensitivity.csv", lambda p: sens.to_csv(p, index=False, float_format="%.6g"))
    by_point = points.copy()
    for outcome in SHOWN_OUTCOMES:
        if ("mean", outcome) in wide.columns:
            by_point[f"{outcome} mean"] = by_point["point"].map(wide[("mean", outcome)])
            lo, hi = wide[("ci_low", outcome)], wide[("ci_high", outcome)]
            ci = pd.Series([f"{a:.4g} – {b:.4g}" if np.isfinite(a) and np.isfinite(b) else "–" for a, b in zip(lo, hi)],
                           index=wide.index)
            by_point[f"{outcome} 95% CI"] = by_point["point"].map(ci)

    esc = html.escape
    n_ok = int((runs["status"] == "ok").sum())
    parts = [
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>",
        f"<title>womlab sweep: {esc(scenario.name)}</title><style>{_CSS}</style></head><body>",
        f"<h1>Sweep: {esc(scenario.name)}</h1>",
        f"<p>Design <b>{esc(spec.design)}</b> over {len(spec.axes)} axes ({esc(', '.join(a.name for a in spec.axes))}); "
        f"{len(points)} points × {spec.replicates} replicates = {manifest.get('runs', len(points) * spec.replicates)} runs. "
        f"Finished: {n_ok}; failed: {len(failed)}; root seed {scenario.seed}; started {esc(str(manifest.get('started')))}.</p>",
    ]
    missing = int(manifest.get("runs", 0)) - len(runs)
    if missing > 0:
        parts.append(f"<p class='note'>{missing} runs have not been run yet (an interrupted sweep: rerun the same "
                     "command to resume).</p>")
    parts.append("<h2>Figures</h2>")
    for title, fig in figures.items():
        parts.append(f"<h3>{esc(title)}</h3><img class='figure' alt='{esc(title)}' src='data:image/png;base64,{_png(fig)}'>")
    parts.append("<h2>Outcomes by point</h2><p class='note'>Mean over a point's finished runs and the 95 % confidence "
                 "interval of that mean (Student t; none where fewer than two runs count). Times to a share average the runs that reached it.</p>")
    parts.append(_table(by_point))
    if sens is not None:
        title = "Sobol indices" if spec.design == "sobol" else "Morris screening"
        note = ("First-order (Saltelli et al. 2010) and total (Jansen 1999) indices of each outcome's point mean; "
                "_se: standard errors from the spread over independent scrambles of the design; an index "
                "outside [0, 1] is the sampling error of a small base sample (see note)." if spec.design == "sobol" else
                "Elementary effects per unit of each axis's range (Morris 1991); μ* as in Campolongo et al. 2007.")
        parts.append(f"<h2>{title}</h2><p class='note'>{note}</p>")
        parts.append(_table(sens))
    parts.append(f"<h2>Failures ({len(failed)})</h2>")
    parts.append(_table(failed[["point", "replicate", *[a.name for a in spec.axes], "error"]]) if len(failed)
                 else "<p>None.</p>")
    parts.append("<h2>Sweep spec</h2><pre>" + esc(json.dumps(spec.to_table(), indent=2)) + "</pre>")
    parts.append("<h2>Scenario</h2><pre>" + esc(json.dumps(manifest["scenario"], indent=2)) + "</pre>")
    parts.append("<h2>Versions</h2>" + _table(pd.DataFrame(sorted(manifest.get("versions", {}).items()),
                                                         columns=["library", "version"])))
    sessions = pd.DataFrame(manifest.get("sessions", []))
    if not sessions.empty:
        parts.append("<h2>Sessions</h2>" + _table(sessions))
    parts.append("<p class='note'>Written by womlab. Randomness: "
                 f"{esc(str(manifest.get('spawn_keys', '')))}.</p></body></html>")
    text = "\n".join(parts)
    return atomic_write(store.path / "report.html", lambda p: p.write_text(text, encoding="utf-8"))
