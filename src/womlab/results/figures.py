"""Figures a researcher would put in a paper. Every function returns a matplotlib Figure.

Figures are drawn on the non-interactive Agg canvas (``matplotlib.figure.Figure``), so
womlab never opens a window or touches pyplot's global state.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from womlab.aggregate import AGGREGATE_LABELS, bass_share, mapped_parameters
from womlab.studies.referrals import referrals_per_customer, reproduction_by_period, word_of_mouth_by_period

__all__ = [
    "adoption_figure",
    "comparison_figure",
    "network_snapshot_figure",
    "programme_figure",
    "referral_tree_figure",
    "seeding_figure",
]

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


PROGRAMME_COLOUR = "#d35400"


def programme_figure(study, *, title: str | None = None) -> Figure:  # noqa: ANN001 - ProgrammeStudy
    """A referral programme against its baseline: customer share with bands, and cumulative
    discounted cost against cumulative incremental discounted value, break-even period marked.

    Parameters
    ----------
    study : womlab.studies.programme.ProgrammeStudy
    title : str, optional
        Defaults to the scenario's name.
    """
    s = study.scenario
    ref = s.referral
    curves = study.curves()
    cum = study.cumulative()
    t = curves["period"].to_numpy()
    fig = Figure(figsize=(7.5, 7.0), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True)
    for name, colour in (("baseline", NETWORK_COLOUR), ("programme", PROGRAMME_COLOUR)):
        top.fill_between(t, curves[f"{name}_q05"], curves[f"{name}_q95"], color=colour, alpha=0.18, lw=0)
        top.plot(t, curves[f"{name}_mean"], color=colour, lw=2, label=f"{name}, mean and 5–95 % band")
    end = ref.last_period(s.run.periods)
    for ax in (top, bottom):
        ax.axvspan(ref.start - 1, end, color="#999999", alpha=0.08, lw=0)
        ax.grid(alpha=0.3)
    top.set_ylabel("customers, share of market")
    top.set_ylim(0, 1.02)
    top.legend(loc="lower right", fontsize=8, frameon=False, title=f"{study.replicates} paired replicates",
               title_fontsize=8)
    top.set_title(title or s.name, fontsize=11)

    bottom.plot(t, cum["cumulative_cost"], color=AGGREGATE_COLOUR, lw=2, label="cumulative cost (discounted)")
    bottom.plot(t, cum["cumulative_incremental_value"], color=PROGRAMME_COLOUR, lw=2,
                label="cumulative incremental value (discounted)")
    be = study.break_even_period()
    if np.isfinite(be):
        bottom.axvline(be, color=BASS_COLOUR, ls="--", lw=1.2)
        bottom.annotate(f"break-even, period {be:g}", (be, 0), xytext=(4, 6), textcoords="offset points",
                        fontsize=8, color=BASS_COLOUR)
    else:
        bottom.text(0.02, 0.92, "no break-even by the horizon", transform=bottom.transAxes, fontsize=8,
                    color=BASS_COLOUR)
    bottom.set_xlabel("period (shaded: programme window)")
    bottom.set_ylabel("value, mean over replicates")
    bottom.legend(loc="upper left", fontsize=8, frameon=False)
    bottom.set_xlim(0, t[-1])
    return fig


def referral_tree_figure(study, *, title: str | None = None) -> Figure:  # noqa: ANN001 - ProgrammeStudy
    """Referral-tree statistics, baseline beside programme: word-of-mouth share of adoptions by
    period, referrals per customer (distribution), and the reproduction number by adoption period.

    Parameters
    ----------
    study : womlab.studies.programme.ProgrammeStudy
    title : str, optional
        Defaults to the scenario's name.
    """
    fig = Figure(figsize=(11.0, 3.8), layout="constrained")
    a, b, c = fig.subplots(1, 3)
    for name, runs, colour in (("baseline", study.baseline, NETWORK_COLOUR),
                               ("programme", study.programme, PROGRAMME_COLOUR)):
        wom = word_of_mouth_by_period(runs).groupby("period")[["adoptions", "word_of_mouth"]].sum()
        a.plot(wom.index, wom["word_of_mouth"] / wom["adoptions"].where(wom["adoptions"] > 0), color=colour,
               lw=2, label=name)
        per = referrals_per_customer(runs)
        b.plot(per["referrals"], per["share"], "o-", ms=3, color=colour, lw=1.5, label=name)
        rep = reproduction_by_period(runs)
        b_ok = rep["customers"] > 0
        c.plot(rep.loc[b_ok, "period"], rep.loc[b_ok, "reproduction"], color=colour, lw=2, label=name)
        c.fill_between(rep.loc[b_ok, "period"], rep.loc[b_ok, "reproduction"] - 2 * rep.loc[b_ok, "se"],
                       rep.loc[b_ok, "reproduction"] + 2 * rep.loc[b_ok, "se"], color=colour, alpha=0.15, lw=0)
    a.set(xlabel="period", ylabel="share of adoptions by word of mouth", ylim=(0, 1.02))
    b.set(xlabel="referrals made by a customer", ylabel="share of customers", yscale="log")
    c.set(xlabel="adoption period", ylabel="mean referrals made (±2 SE)")
    c.axhline(1.0, color=BASS_COLOUR, lw=0.8, ls=":")
    for ax in (a, b, c):
        ax.grid(alpha=0.3)
        ax.legend(fontsize=8, frameon=False)
    fig.suptitle(title or f"{study.scenario.name}: referral trees", fontsize=11)
    return fig


# colour and line style of each aggregate curve in comparison figures
CURVE_STYLES = {
    "bass_mapped": dict(color=BASS_COLOUR, ls=":", lw=1.4),
    "bass_difference": dict(color=AGGREGATE_COLOUR, ls="--", lw=1.6),
    "stock_and_flow": dict(color="#e67e22", ls=(0, (1, 2)), lw=2.2),
    "degree_mean_field": dict(color="#27ae60", ls="-.", lw=1.6),
    "bass_fitted": dict(color="#8e44ad", ls="-", lw=1.2),
    "bass_churn_mapped": dict(color=BASS_COLOUR, ls=":", lw=1.4),
    "bass_churn_difference": dict(color=AGGREGATE_COLOUR, ls="--", lw=1.6),
}


def comparison_figure(comparison, *, title: str | None = None) -> Figure:  # noqa: ANN001 - Comparison
    """The network band with every aggregate curve, new customers per period, and the gap over time.

    Parameters
    ----------
    comparison : womlab.studies.compare.Comparison
    title : str, optional
        Defaults to the scenario's name.
    """
    batch = comparison.batch
    summary = comparison.curve_table()
    shares = comparison.shares()  # with churn: ever customers
    churns = batch.scenario.adoption.churns
    t = summary["time"].to_numpy()
    mean = shares.mean(axis=0)
    h = comparison.headline()

    fig = Figure(figsize=(8, 9), layout="constrained")
    top, mid, bottom = fig.subplots(3, 1, sharex=True, height_ratios=[3, 2, 2])
    top.fill_between(t, summary["q05"], summary["q95"], color=NETWORK_COLOUR, alpha=0.2, lw=0,
                     label=f"network, 5–95 % of {batch.replicates} runs")
    top.plot(t, mean, color=NETWORK_COLOUR, lw=2.2, label="network, ever customers (mean)" if churns else "network, mean")
    for name, curve in comparison.curves.items():
        top.plot(t, curve, label=AGGREGATE_LABELS.get(name, name), **CURVE_STYLES.get(name, {}))
    if churns:  # the installed base below the ever-customer curves, network and models alike
        top.plot(t, summary["installed_base_mean"], color=NETWORK_COLOUR, lw=1.4, alpha=0.7,
                 label="network, installed base (mean)")
        for column in summary.columns:
            if column.startswith("installed_base_bass"):
                name = column.removeprefix("installed_base_")
                top.plot(t, summary[column], **{**CURVE_STYLES.get(name, {}), "alpha": 0.7})
    top.set_ylabel("ever customers (upper) and installed base,\nshare of market" if churns
                   else "customers, share of market")
    top.set_ylim(0, 1.02)
    top.grid(alpha=0.3)
    top.legend(loc="lower right", fontsize=7.5, frameon=False)
    top.set_title(title or batch.scenario.name, fontsize=11)
    top.text(0.02, 0.97, f"Q_eff / Q_mapped = {h['Q_ratio']:.2f} ({h['Q_ratio_low']:.2f}–{h['Q_ratio_high']:.2f})\n"
             f"t50 delay vs {AGGREGATE_LABELS[comparison.reference]}: {h['t50_delay']:+.2f} periods",
             transform=top.transAxes, va="top", fontsize=8)

    new = np.diff(shares, axis=1)
    tn = t[1:]
    mid.fill_between(tn, np.quantile(new, 0.05, axis=0), np.quantile(new, 0.95, axis=0),
                     color=NETWORK_COLOUR, alpha=0.2, lw=0)
    mid.plot(tn, new.mean(axis=0), color=NETWORK_COLOUR, lw=2.2, label="network, mean")
    for name, curve in comparison.curves.items():
        mid.plot(tn, np.diff(curve), **CURVE_STYLES.get(name, {}))
    mid.set_ylabel("new customers per period,\nshare of market")
    mid.grid(alpha=0.3)

    ref_name = comparison.reference
    ref = comparison.curves[ref_name]
    per_run = shares - ref
    band = bottom.fill_between(t, np.quantile(per_run, 0.05, axis=0), np.quantile(per_run, 0.95, axis=0),
                               color=AGGREGATE_COLOUR, alpha=0.12, lw=0, label=f"5–95 % of runs, vs {AGGREGATE_LABELS[ref_name]}")
    bottom.axhline(0, color="black", lw=0.8)
    for name, curve in comparison.curves.items():
        bottom.plot(t, mean - curve, **CURVE_STYLES.get(name, {}))
    bottom.set_ylabel("gap: network mean\n− aggregate curve")
    bottom.set_xlabel("period")
    bottom.grid(alpha=0.3)
    bottom.legend(handles=[band], loc="lower right", fontsize=7, frameon=False)
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
    study : womlab.studies.seeding_study.SeedingStudy
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
