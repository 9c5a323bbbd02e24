"""Figures a researcher would put in a paper. Every function returns a matplotlib Figure.

Figures are drawn on the non-interactive Agg canvas (``matplotlib.figure.Figure``), so
womlab never opens a window or touches pyplot's global state.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from .aggregate import bass_share, mapped_parameters

__all__ = ["adoption_figure", "seeding_figure", "network_snapshot_figure"]

NETWORK_COLOUR = "#1f5f8b"
AGGREGATE_COLOUR = "#c0392b"
BASS_COLOUR = "#555555"


def adoption_figure(batch, *, title: str | None = None) -> Figure:  # noqa: ANN001 - Batch (avoid import cycle)
    """Customer share over time (median, 5–95 % band, aggregate and Bass curves) and new customers per period.

    Parameters
    ----------
    batch : womlab.studies.Batch
    title : str, optional
        Defaults to the scenario's name.
    """
    s = batch.scenario
    summary = batch.summary()
    shares = batch.shares()
    t = summary["time"].to_numpy()
    par = mapped_parameters(s)
    fine = np.linspace(0, t[-1], 400)

    fig = Figure(figsize=(7.5, 6.5), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[3, 2])
    top.fill_between(t, summary["q05"], summary["q95"], color=NETWORK_COLOUR, alpha=0.2, lw=0,
                     label=f"network, 5–95 % of {batch.replicates} runs")
    top.plot(t, summary["q50"], color=NETWORK_COLOUR, lw=2, label="network, median")
    agg_label = "stock-and-flow model" if s.adoption.rule == "capped" else "aggregate difference model"
    top.plot(t, summary["aggregate"], color=AGGREGATE_COLOUR, lw=1.6, ls="--",
             label=f"{agg_label} (step {s.run.time_step:g})")
    if s.adoption.rule != "capped":
        top.plot(fine, bass_share(fine, par.p, par.Q, par.initial_share), color=BASS_COLOUR, lw=1.2, ls=":",
                 label=f"Bass ODE, p = {par.p:.3g}, Q = {par.Q:.3g}")
    top.set_ylabel("customers, share of market")
    top.set_ylim(0, 1.02)
    top.grid(alpha=0.3)
    top.legend(loc="lower right", fontsize=8, frameon=False)
    top.set_title(title or s.name, fontsize=11)

    new = np.diff(shares, axis=1)
    tn = t[1:]
    bottom.fill_between(tn, np.quantile(new, 0.05, axis=0), np.quantile(new, 0.95, axis=0),
                        color=NETWORK_COLOUR, alpha=0.2, lw=0)
    bottom.plot(tn, np.median(new, axis=0), color=NETWORK_COLOUR, lw=2, label="network, median")
    bottom.plot(tn, np.diff(summary["aggregate"].to_numpy()), color=AGGREGATE_COLOUR, lw=1.6, ls="--",
                label=agg_label)
    bottom.set_xlabel("period")
    bottom.set_ylabel("new customers per period,\nshare of market")
    bottom.grid(alpha=0.3)
    bottom.legend(loc="upper right", fontsize=8, frameon=False)
    bottom.set_xlim(0, t[-1])
    return fig


def _strategy_colours(names) -> dict[str, str]:  # noqa: ANN001
    palette = ["#555555", "#1f5f8b", "#c0392b", "#2e8b57", "#8e44ad", "#d68910", "#17a589", "#a04000",
               "#5d6d7e", "#b03a2e", "#1abc9c", "#7d3c98"]
    return {name: palette[i % len(palette)] for i, name in enumerate(names)}


def seeding_figure(study, *, title: str | None = None) -> Figure:  # noqa: ANN001 - SeedingStudy (avoid import cycle)
    """Seeding strategies side by side: customer share over time (median and 5–95 % band
    per strategy) and lift against ``random`` (ratio of means, 95 % paired-bootstrap
    interval) as a dot-and-whisker chart.

    Parameters
    ----------
    study : womlab.seeding_study.SeedingStudy
    title : str, optional
        Defaults to the scenario's name.
    """
    s = study.scenario
    table = study.strategies_table()
    colours = _strategy_colours(study.strategies)
    fig = Figure(figsize=(11, 4.8), layout="constrained")
    left, right = fig.subplots(1, 2, width_ratios=[3, 2])
    for name in study.strategies:
        sh = study.shares[name]
        t = np.arange(sh.shape[1])
        left.fill_between(t, np.quantile(sh, 0.05, axis=0), np.quantile(sh, 0.95, axis=0),
                          color=colours[name], alpha=0.12, lw=0)
        left.plot(t, np.median(sh, axis=0), color=colours[name], lw=2 if name != "random" else 1.6,
                  ls="-" if name != "random" else "--", label=name)
    left.set_xlabel("period")
    left.set_ylabel("customers, share of market")
    left.set_ylim(0, 1.02)
    left.set_xlim(0, s.run.periods)
    left.grid(alpha=0.3)
    left.legend(loc="lower right", fontsize=8, frameon=False, title="median, 5–95 % band", title_fontsize=8)
    left.set_title(title or f"{s.name}: {study.replicates} paired replicates, budget {s.n_initial}", fontsize=11)

    rows = table[table["strategy"] != "random"].sort_values("lift_ratio")
    y = np.arange(len(rows))
    for yi, (_, row) in zip(y, rows.iterrows()):
        c = colours[row["strategy"]]
        right.plot([row["lift_ratio_low"], row["lift_ratio_high"]], [yi, yi], color=c, lw=2.2)
        right.plot(row["lift_ratio"], yi, "o", color=c, ms=7)
    right.axvline(1.0, color="#555555", lw=1, ls="--")
    right.set_yticks(y, rows["strategy"].tolist())
    label = {"customers": "customers at the horizon", "customer_periods": "discounted customer-periods"}[s.study.outcome]
    right.set_xlabel(f"lift vs random: ratio of mean {label}\n(95 % paired-bootstrap interval)")
    right.grid(alpha=0.3, axis="x")
    right.set_title("lift against random seeding", fontsize=11)
    return fig


def network_snapshot_figure(network, results, *, seed: int = 0, max_panels: int = 9) -> Figure:  # noqa: ANN001
    """The referral network of one replicate, one panel per strategy: organisations coloured
    by adoption period (grey: never by the horizon), seeds drawn as black-ringed stars.

    The layout (networkx ``spring_layout``, seeded with ``seed``) is computed once and
    shared by every panel, so panels differ only in who adopted when.

    Parameters
    ----------
    network : womlab.ReferralNetwork
        A small network (a few hundred organisations).
    results : dict
        Strategy → RunResult on ``network``.
    seed : int
        Seed of the layout.
    max_panels : int
        At most this many strategies are drawn.
    """
    import networkx as nx
    from matplotlib import colormaps
    from matplotlib.cm import ScalarMappable
    from matplotlib.collections import LineCollection
    from matplotlib.colors import Normalize

    g = network.to_networkx()
    pos = nx.spring_layout(g, seed=int(seed) % 2**32, iterations=100)
    xy = np.array([pos[i] for i in range(network.n)])
    rows_idx = np.repeat(np.arange(network.n), np.diff(network.indptr))
    upper = rows_idx < network.indices
    segments = np.stack([xy[rows_idx[upper]], xy[network.indices[upper]]], axis=1)

    names = list(results)[:max_panels]
    cols = min(3, len(names))
    nrows = int(np.ceil(len(names) / cols))
    fig = Figure(figsize=(3.6 * cols + 0.8, 3.5 * nrows), layout="constrained")
    axes = np.atleast_1d(fig.subplots(nrows, cols)).ravel()
    periods = max(r.periods for r in results.values())
    norm = Normalize(0, periods)
    cmap = colormaps["viridis"]

    for ax, name in zip(axes, names):
        r = results[name]
        ax.add_collection(LineCollection(segments, colors="#bbbbbb", linewidths=0.4, zorder=1))
        never = r.adoption_period < 0
        ax.scatter(xy[never, 0], xy[never, 1], s=9, color="#dddddd", edgecolors="#999999", linewidths=0.3, zorder=2)
        ax.scatter(xy[~never, 0], xy[~never, 1], s=12, c=r.adoption_period[~never], cmap=cmap, norm=norm, zorder=3)
        seeds = np.asarray(r.initial)
        ax.scatter(xy[seeds, 0], xy[seeds, 1], s=90, marker="*", color="#ffcc00", edgecolors="black",
                   linewidths=0.8, zorder=4)
        reached = int((~never).sum())
        ax.set_title(f"{name}: {reached} of {network.n} customers", fontsize=9)
        ax.set_xticks([])
        ax.set_yticks([])
        ax.set_aspect("equal")
    for ax in axes[len(names):]:
        ax.set_axis_off()
    sm = ScalarMappable(norm=norm, cmap=cmap)
    fig.colorbar(sm, ax=axes.tolist(), shrink=0.8, label="adoption period (stars: seeds, grey: never)")
    return fig
