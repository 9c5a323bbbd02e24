"""Figures a researcher would put in a paper. Every function returns a matplotlib Figure.

Figures are drawn on the non-interactive Agg canvas (``matplotlib.figure.Figure``), so
womlab never opens a window or touches pyplot's global state. What every figure keeps:

* text from the scenario (its name) is text, never markup: ``$`` is escaped
  (:func:`plain_text`), and long titles wrap instead of running off the canvas
  (:func:`title_text`); the constrained layout keeps every label inside the figure;
* legends sit outside the axes, beside or below them, never over the data;
* a strategy has one colour in every figure (:func:`strategy_colour`);
* curves that coincide are drawn once, with one legend entry naming all of them;
* the network's curve is the **mean** over replicates, with the 5–95 % band, in the run
  and the comparison figures alike (the aggregate models predict a mean);
* every function takes ``size=(width, height)`` in inches; :func:`save_figure` writes
  ``png``, ``pdf`` or ``svg`` with no timestamp inside, so the same figure is the same
  bytes.
"""

from __future__ import annotations

import textwrap
import zlib
from pathlib import Path

import numpy as np
from matplotlib.figure import Figure

from womlab.aggregate import AGGREGATE_LABELS, bass_share, churn_curves, mapped_parameters
from womlab.networks.given import as_network, mapped_with
from womlab.results.fit import overlay_observed
from womlab.studies.referrals import referrals_by_adoption_period, referrals_per_customer, word_of_mouth_by_period

__all__ = [
    "adoption_figure",
    "comparison_figure",
    "network_snapshot_figure",
    "programme_figure",
    "referral_tree_figure",
    "seeding_figure",
    "save_figure",
    "plain_text",
    "title_text",
    "strategy_colour",
    "STRATEGY_COLOURS",
    "FIGURE_FORMATS",
]

NETWORK_COLOUR = "#1f5f8b"
AGGREGATE_COLOUR = "#c0392b"
BASS_COLOUR = "#555555"
#: The formats :func:`save_figure` writes.
FIGURE_FORMATS = ("png", "pdf", "svg")
_METADATA = {"png": {"Software": None}, "pdf": {"CreationDate": None, "Producer": None}, "svg": {"Date": None}}
#: One colour per seeding strategy, the same in every figure (random: grey, the baseline).
STRATEGY_COLOURS = {
    "random": "#555555",
    "hubs": "#1f5f8b",
    "bridges": "#c0392b",
    "pagerank": "#2e8b57",
    "coreness": "#8e44ad",
    "fringe": "#d68910",
    "by_region": "#17a589",
    "spread": "#a04000",
    "greedy": "#5d6d7e",
}
_MORE_COLOURS = ("#b03a2e", "#1abc9c", "#7d3c98", "#2874a6", "#b7950b", "#6e2c00")


def strategy_colour(name: str) -> str:
    """The colour of seeding strategy ``name`` in every figure (a new strategy gets a fixed one too).

    Examples
    --------
    >>> strategy_colour("hubs")
    '#1f5f8b'
    """
    return STRATEGY_COLOURS.get(name) or _MORE_COLOURS[zlib.crc32(name.encode()) % len(_MORE_COLOURS)]


def plain_text(text: str) -> str:
    """``text`` as matplotlib draws it literally: every ``$`` escaped, so nothing is read as mathtext.

    Examples
    --------
    >>> print(plain_text("costs $5 and $10"))
    costs \\$5 and \\$10
    """
    return str(text).replace("$", "\\$")


def title_text(text: str, width: int = 70) -> str:
    """A title from user text: escaped (:func:`plain_text`) and wrapped at ``width`` characters."""
    lines = textwrap.wrap(str(text), width=width, break_long_words=True) or [""]
    return "\n".join(plain_text(line) for line in lines)


def save_figure(fig: Figure, path: str | Path, fmt: str = "png", *, dpi: int = 130) -> None:
    """Write ``fig`` to ``path`` as ``png``, ``pdf`` or ``svg``, without a timestamp (same figure, same bytes)."""
    from matplotlib import rc_context

    if fmt not in FIGURE_FORMATS:
        raise ValueError(f"figure format must be one of {', '.join(FIGURE_FORMATS)}, got {fmt!r}")
    with rc_context({"svg.hashsalt": "womlab"}):  # SVG element ids from a fixed salt, not at random
        fig.savefig(path, dpi=dpi, format=fmt, metadata=_METADATA[fmt])


def _figure(size: tuple[float, float] | None, default: tuple[float, float]) -> Figure:
    return Figure(figsize=size or default, layout="constrained")


def _legend_beside(ax, **kw) -> None:  # noqa: ANN001 - a matplotlib Axes
    """A legend to the right of the axes, off the data."""
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0, fontsize=8, frameon=False, **kw)


def _coinciding(curves: dict[str, np.ndarray], tol: float = 1e-9) -> list[list[str]]:
    """Groups of curve names whose curves are equal within ``tol`` everywhere, in order."""
    groups: list[list[str]] = []
    for name, curve in curves.items():
        c = np.asarray(curve, dtype=float)
        for group in groups:
            other = np.asarray(curves[group[0]], dtype=float)
            if other.shape == c.shape and np.allclose(other, c, rtol=0.0, atol=tol, equal_nan=True):
                group.append(name)
                break
        else:
            groups.append([name])
    return groups


def adoption_figure(
    batch, *, title: str | None = None, size: tuple[float, float] | None = None, observed=None
) -> Figure:  # noqa: ANN001 - Batch
    """Customer share over time (mean, 5–95 % band, aggregate and Bass curves) and new customers per period.

    The network curve is the mean over replicates, as in :func:`comparison_figure`; the
    aggregate models predict a mean. Where the aggregate curve is the Bass curve itself
    (the continuous clock), it is drawn once and its legend entry says so.

    Parameters
    ----------
    batch : womlab.studies.Batch
    title : str, optional
        Defaults to the scenario's name (drawn as text, wrapped when long).
    size : (width, height), optional
        In inches.
    observed : womlab.ObservedSeries, optional
        Observed points to overlay (:func:`womlab.results.fit.overlay_observed`).
    """
    s = batch.scenario
    summary = batch.summary()
    shares = batch.shares()
    t = summary["time"].to_numpy()
    par = mapped_parameters(s)
    fine = np.linspace(0, t[-1], 400)

    fig = _figure(size, (9.0, 6.5))
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[3, 2])
    top.fill_between(
        t,
        summary["q05"],
        summary["q95"],
        color=NETWORK_COLOUR,
        alpha=0.2,
        lw=0,
        label=f"network, 5–95 % of {batch.replicates} runs",
    )
    top.plot(t, summary["mean"], color=NETWORK_COLOUR, lw=2, label=f"network, mean of {batch.replicates} runs")
    aggregate = summary["aggregate"].to_numpy()
    continuous = s.run.clock == "continuous"
    if s.adoption.rule == "capped":
        agg_name = "Bass difference model with a rate ceiling"
        agg_label = f"{agg_name} (step {s.run.time_step:g})"
    elif continuous:
        agg_name = "Bass model"
        agg_label = f"Bass model, p = {par.p:.3g}, Q = {par.Q:.3g} (aggregate and Bass ODE coincide)"
    else:
        agg_name = "Bass difference model"
        agg_label = f"{agg_name} (step {s.run.time_step:g})"
    a = s.adoption
    mechanisms = a.churns or a.warns
    if mechanisms:  # Bass with churn and/or warnings: installed base (and ever customers with churn)
        agg_name = "Bass with " + " and ".join(w for w, on in (("churn", a.churns), ("warnings", a.warns)) if on)
        agg_label = f"{agg_name}, difference model (step {s.run.time_step:g}), customers"
    top.plot(t, aggregate, color=AGGREGATE_COLOUR, lw=1.6, ls="--", label=agg_label)
    new_network, new_aggregate = np.diff(shares, axis=1), np.diff(aggregate)
    if mechanisms and s.adoption.rule in ("share", "count"):
        models = churn_curves(mapped_with(s, None if batch.network is None else as_network(batch.network)))
        if a.churns:
            ever = batch.ever_shares()
            top.plot(
                t, ever.mean(axis=0), color=NETWORK_COLOUR, lw=1.2, alpha=0.7, label="network, ever customers (mean)"
            )
            top.plot(
                t,
                models["ever_customers"],
                color=AGGREGATE_COLOUR,
                lw=1.2,
                ls="--",
                alpha=0.7,
                label=f"{agg_name}, ever customers",
            )
            new_network, new_aggregate = np.diff(ever, axis=1), np.diff(models["ever_customers"].to_numpy())
        if a.warns:
            rejecters = np.vstack([r.rejecters for r in batch.runs]) / s.market.organisations
            top.plot(t, rejecters.mean(axis=0), color="#7f8c8d", lw=1.4, label="network, rejecters (mean)")
            top.plot(t, models["rejecters"], color="#7f8c8d", lw=1.2, ls="--", label=f"{agg_name}, rejecters")
    if s.adoption.rule not in ("capped", "threshold", "cascade") and not continuous and not mechanisms:
        top.plot(
            fine,
            bass_share(fine, par.p, par.Q, par.initial_share),
            color=BASS_COLOUR,
            lw=1.2,
            ls=":",
            label=f"Bass ODE, p = {par.p:.3g}, Q = {par.Q:.3g}",
        )
    top.set_ylabel("customers, share of market")
    top.set_ylim(0, 1.02)
    top.grid(alpha=0.3)
    _legend_beside(top)
    top.set_title(title_text(title or s.name), fontsize=11)

    new = new_network  # with churn: adoptions (new ever customers), not the change in the installed base
    tn = t[1:]
    bottom.fill_between(
        tn,
        np.quantile(new, 0.05, axis=0),
        np.quantile(new, 0.95, axis=0),
        color=NETWORK_COLOUR,
        alpha=0.2,
        lw=0,
        label="network, 5–95 %",
    )
    bottom.plot(tn, new.mean(axis=0), color=NETWORK_COLOUR, lw=2, label="network, mean")
    bottom.plot(tn, new_aggregate, color=AGGREGATE_COLOUR, lw=1.6, ls="--", label=agg_name)
    bottom.set_xlabel("period")
    bottom.set_ylabel("new customers per period,\nshare of market")
    bottom.grid(alpha=0.3)
    _legend_beside(bottom)
    bottom.set_xlim(0, t[-1])
    if observed is not None:
        overlay_observed(top, bottom, observed, s.market.organisations)
    return fig


PROGRAMME_COLOUR = "#d35400"


def programme_figure(study, *, title: str | None = None, size: tuple[float, float] | None = None) -> Figure:  # noqa: ANN001
    """A referral programme against its baseline: customer share with bands, and cumulative
    discounted cost against cumulative incremental discounted value, break-even period marked.

    Parameters
    ----------
    study : womlab.studies.programme.ProgrammeStudy
    title : str, optional
        Defaults to the scenario's name (drawn as text, wrapped when long).
    size : (width, height), optional
        In inches.
    """
    s = study.scenario
    ref = s.referral
    curves = study.curves()
    cum = study.cumulative()
    t = curves["period"].to_numpy()
    fig = _figure(size, (9.5, 7.0))
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
    _legend_beside(top, title=f"{study.replicates} paired replicates\n(shaded: programme window)", title_fontsize=8)
    top.set_title(title_text(title or s.name), fontsize=11)

    bottom.plot(t, cum["cumulative_cost"], color=AGGREGATE_COLOUR, lw=2, label="cumulative cost (discounted)")
    bottom.plot(
        t,
        cum["cumulative_incremental_value"],
        color=PROGRAMME_COLOUR,
        lw=2,
        label="cumulative incremental value (discounted)",
    )
    be = study.break_even_period()
    if np.isfinite(be):
        bottom.axvline(be, color=BASS_COLOUR, ls="--", lw=1.2)
        bottom.annotate(
            f"break-even, period {be:g}",
            (be, 0),
            xytext=(4, 6),
            textcoords="offset points",
            fontsize=8,
            color=BASS_COLOUR,
        )
    else:
        bottom.text(
            0.02, 0.92, "no break-even by the horizon", transform=bottom.transAxes, fontsize=8, color=BASS_COLOUR
        )
    bottom.set_xlabel("period (shaded: programme window)")
    bottom.set_ylabel("value, mean over replicates")
    _legend_beside(bottom)
    bottom.set_xlim(0, t[-1])
    return fig


def referral_tree_figure(study, *, title: str | None = None, size: tuple[float, float] | None = None) -> Figure:  # noqa: ANN001
    """Referral-tree statistics, baseline beside programme: word-of-mouth share of adoptions by
    period, referrals per customer (distribution), and referrals per new customer by
    adoption period (:func:`womlab.studies.referrals.referrals_by_adoption_period`).

    Parameters
    ----------
    study : womlab.studies.programme.ProgrammeStudy
    title : str, optional
        Defaults to the scenario's name (drawn as text, wrapped when long).
    size : (width, height), optional
        In inches.
    """
    fig = _figure(size, (11.0, 4.4))
    a, b, c = fig.subplots(1, 3)
    for name, runs, colour in (
        ("baseline", study.baseline, NETWORK_COLOUR),
        ("programme", study.programme, PROGRAMME_COLOUR),
    ):
        wom = word_of_mouth_by_period(runs).groupby("period")[["adoptions", "word_of_mouth"]].sum()
        a.plot(
            wom.index,
            wom["word_of_mouth"] / wom["adoptions"].where(wom["adoptions"] > 0),
            color=colour,
            lw=2,
            label=name,
        )
        per = referrals_per_customer(runs)
        b.plot(per["referrals"], per["share"], "o-", ms=3, color=colour, lw=1.5, label=name)
        rep = referrals_by_adoption_period(runs)
        b_ok = rep["customers"] > 0
        per = rep.loc[b_ok, "referrals_per_customer"]
        c.plot(rep.loc[b_ok, "period"], per, color=colour, lw=2, label=name)
        c.fill_between(
            rep.loc[b_ok, "period"],
            per - 2 * rep.loc[b_ok, "se"],
            per + 2 * rep.loc[b_ok, "se"],
            color=colour,
            alpha=0.15,
            lw=0,
        )
    a.set(xlabel="period", ylabel="share of adoptions by word of mouth", ylim=(0, 1.02))
    b.set(xlabel="referrals made by a customer", ylabel="share of customers", yscale="log")
    c.set(xlabel="adoption period", ylabel="referrals per new customer (±2 SE)")
    c.axhline(1.0, color=BASS_COLOUR, lw=0.8, ls=":")
    a.set_title("word of mouth's share", fontsize=9)
    b.set_title("referrals per customer", fontsize=9)
    c.set_title("referrals per new customer, by adoption period", fontsize=9)
    for ax in (a, b, c):
        ax.grid(alpha=0.3)
    handles, labels = a.get_legend_handles_labels()
    fig.legend(handles, labels, loc="outside lower center", ncols=2, fontsize=8, frameon=False)
    fig.suptitle(title_text(title or f"{study.scenario.name}: referral trees", width=110), fontsize=11)
    return fig


# colour and line style of each aggregate curve in comparison figures
CURVE_STYLES = {
    "bass_mapped": dict(color=BASS_COLOUR, ls=":", lw=1.4),
    "bass_difference": dict(color=AGGREGATE_COLOUR, ls="--", lw=1.6),
    "capped_bass_difference": dict(color="#e67e22", ls=(0, (1, 2)), lw=2.2),
    "degree_mean_field": dict(color="#27ae60", ls="-.", lw=1.6),
    "bass_fitted": dict(color="#8e44ad", ls="-", lw=1.2),
    "bass_churn_mapped": dict(color=BASS_COLOUR, ls=":", lw=1.4),
    "bass_churn_difference": dict(color=AGGREGATE_COLOUR, ls="--", lw=1.6),
}


def comparison_figure(
    comparison, *, title: str | None = None, size: tuple[float, float] | None = None, observed=None
) -> Figure:  # noqa: ANN001
    """The network band with every aggregate curve, new customers per period, and the gap over time.

    The network curve is the mean over replicates (as in :func:`adoption_figure`). Aggregate
    curves that coincide (the capped Bass difference model without a ceiling is the Bass
    difference model) are drawn once, with one legend entry naming each of them.

    Parameters
    ----------
    comparison : womlab.studies.compare.Comparison
    title : str, optional
        Defaults to the scenario's name (drawn as text, wrapped when long).
    size : (width, height), optional
        In inches.
    observed : womlab.ObservedSeries, optional
        Observed points to overlay (:func:`womlab.results.fit.overlay_observed`).
    """
    batch = comparison.batch
    summary = comparison.curve_table()
    shares = comparison.shares()  # with churn: ever customers
    churns = batch.scenario.adoption.churns
    t = summary["time"].to_numpy()
    mean = shares.mean(axis=0)
    h = comparison.headline()
    groups = _coinciding(comparison.curves)

    fig = _figure(size, (10.5, 9.0))
    top, mid, bottom = fig.subplots(3, 1, sharex=True, height_ratios=[3, 2, 2])
    top.fill_between(
        t,
        summary["q05"],
        summary["q95"],
        color=NETWORK_COLOUR,
        alpha=0.2,
        lw=0,
        label=f"network, 5–95 % of {batch.replicates} runs",
    )
    mean_label = "network, ever customers, mean" if churns else "network, mean"
    top.plot(t, mean, color=NETWORK_COLOUR, lw=2.2, label=f"{mean_label} of {batch.replicates} runs")
    for group in groups:
        name = group[0]
        labels = [AGGREGATE_LABELS.get(g, g) for g in group]
        label = labels[0] if len(group) == 1 else " = ".join(labels) + " (these coincide)"
        top.plot(
            t,
            comparison.curves[name],
            label="\n".join(textwrap.wrap(label, 48, break_on_hyphens=False)),
            **CURVE_STYLES.get(name, {}),
        )
    if churns:  # the installed base below the ever-customer curves, network and models alike
        top.plot(
            t,
            summary["installed_base_mean"],
            color=NETWORK_COLOUR,
            lw=1.4,
            alpha=0.7,
            label="network, installed base (mean)",
        )
        for column in summary.columns:
            if column.startswith("installed_base_bass"):
                name = column.removeprefix("installed_base_")
                top.plot(t, summary[column], **{**CURVE_STYLES.get(name, {}), "alpha": 0.7})
    top.set_ylabel(
        "ever customers (upper) and installed base,\nshare of market" if churns else "customers, share of market"
    )
    top.set_ylim(0, 1.02)
    top.grid(alpha=0.3)
    _legend_beside(top)
    top.set_title(title_text(title or batch.scenario.name), fontsize=11)
    top.text(
        0.02,
        0.97,
        f"Q_eff / Q_mapped = {h['Q_ratio']:.2f} ({h['Q_ratio_low']:.2f}–{h['Q_ratio_high']:.2f})\n"
        f"t50 delay vs {AGGREGATE_LABELS[comparison.reference]}: {h['t50_delay']:+.2f} periods",
        transform=top.transAxes,
        va="top",
        fontsize=8,
        bbox=dict(facecolor="white", edgecolor="none", alpha=0.8, pad=2),
    )

    new = np.diff(shares, axis=1)
    tn = t[1:]
    mid.fill_between(
        tn, np.quantile(new, 0.05, axis=0), np.quantile(new, 0.95, axis=0), color=NETWORK_COLOUR, alpha=0.2, lw=0
    )
    mid.plot(tn, new.mean(axis=0), color=NETWORK_COLOUR, lw=2.2, label="network, mean")
    for group in groups:
        mid.plot(tn, np.diff(comparison.curves[group[0]]), **CURVE_STYLES.get(group[0], {}))
    mid.set_ylabel("new customers per period,\nshare of market")
    mid.grid(alpha=0.3)

    ref_name = comparison.reference
    ref = comparison.curves[ref_name]
    per_run = shares - ref
    band = bottom.fill_between(
        t,
        np.quantile(per_run, 0.05, axis=0),
        np.quantile(per_run, 0.95, axis=0),
        color=AGGREGATE_COLOUR,
        alpha=0.12,
        lw=0,
        label="\n".join(textwrap.wrap(f"5–95 % of runs, vs {AGGREGATE_LABELS[ref_name]}", 48)),
    )
    bottom.axhline(0, color="black", lw=0.8)
    for group in groups:
        bottom.plot(t, mean - comparison.curves[group[0]], **CURVE_STYLES.get(group[0], {}))
    bottom.set_ylabel("gap: network mean\n− aggregate curve")
    bottom.set_xlabel("period")
    bottom.grid(alpha=0.3)
    _legend_beside(bottom, handles=[band])
    bottom.set_xlim(0, t[-1])
    if observed is not None:
        overlay_observed(top, mid, observed, batch.scenario.market.organisations)
    return fig


def seeding_figure(study, *, title: str | None = None, size: tuple[float, float] | None = None) -> Figure:  # noqa: ANN001
    """Seeding strategies side by side: customer share over time (median and 5–95 % band
    per strategy) and lift against ``random`` (ratio of means, 95 % paired-bootstrap
    interval) as a dot-and-whisker chart.

    Parameters
    ----------
    study : womlab.studies.seeding_study.SeedingStudy
    title : str, optional
        Defaults to the scenario's name (drawn as text, wrapped when long).
    size : (width, height), optional
        In inches.
    """
    s = study.scenario
    table = study.strategies_table()
    colours = {name: strategy_colour(name) for name in study.strategies}
    fig = _figure(size, (12.5, 5.2))
    left, right = fig.subplots(1, 2, width_ratios=[3, 2])
    for name in study.strategies:
        sh = study.shares[name]
        t = np.arange(sh.shape[1])
        left.fill_between(
            t, np.quantile(sh, 0.05, axis=0), np.quantile(sh, 0.95, axis=0), color=colours[name], alpha=0.12, lw=0
        )
        left.plot(
            t,
            np.median(sh, axis=0),
            color=colours[name],
            lw=2 if name != "random" else 1.6,
            ls="-" if name != "random" else "--",
            label=name,
        )
    left.set_xlabel("period")
    left.set_ylabel("customers, share of market")
    left.set_ylim(0, 1.02)
    left.set_xlim(0, s.run.periods)
    left.grid(alpha=0.3)
    _legend_beside(left, title="median, 5–95 % band", title_fontsize=8)
    left.set_title(
        title_text(title or f"{s.name}: {study.replicates} paired replicates, budget {s.n_initial}", width=60),
        fontsize=11,
    )

    rows = table[table["strategy"] != "random"].sort_values("lift_ratio")
    y = np.arange(len(rows))
    for yi, (_, row) in zip(y, rows.iterrows()):
        c = colours[row["strategy"]]
        right.plot([row["lift_ratio_low"], row["lift_ratio_high"]], [yi, yi], color=c, lw=2.2)
        right.plot(row["lift_ratio"], yi, "o", color=c, ms=7)
    right.axvline(1.0, color="#555555", lw=1, ls="--")
    right.set_yticks(y, rows["strategy"].tolist())
    label = {"customers": "customers at the horizon", "customer_periods": "discounted customer-periods"}[
        s.study.outcome
    ]
    right.set_xlabel(f"lift vs random: ratio of mean\n{label}\n(95 % paired-bootstrap interval)")
    right.grid(alpha=0.3, axis="x")
    right.set_title("lift against random seeding", fontsize=11)
    return fig


def network_snapshot_figure(
    network,
    results,
    *,
    seed: int = 0,
    max_panels: int = 9,  # noqa: ANN001
    size: tuple[float, float] | None = None,
) -> Figure:
    """The referral network of one replicate, one panel per strategy: organisations coloured
    by adoption period (grey: never by the horizon), seeds drawn as black-ringed stars.

    The layout (networkx ``spring_layout``, seeded with ``seed``) is computed once and
    shared by every panel, so panels differ only in who adopted when.

    Parameters
    ----------
    network : womlab.ReferralNetwork
        Best a few hundred organisations; above that the layout takes longer and the
        points crowd (``womlab seeding --network-figure`` draws it at any size).
    results : dict
        Strategy → RunResult on ``network``.
    seed : int
        Seed of the layout.
    max_panels : int
        At most this many strategies are drawn.
    size : (width, height), optional
        In inches.
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
    fig = _figure(size, (3.6 * cols + 0.8, 3.5 * nrows))
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
        ax.scatter(
            xy[seeds, 0], xy[seeds, 1], s=90, marker="*", color="#ffcc00", edgecolors="black", linewidths=0.8, zorder=4
        )
        reached = int((~never).sum())
        ax.set_title(f"{name}: {reached:,} of {network.n:,} customers", fontsize=9, color=strategy_colour(name))
        ax.set_xticks([])
        ax.set_yticks([])
        ax.set_aspect("equal")
    for ax in axes[len(names) :]:
        ax.set_axis_off()
    sm = ScalarMappable(norm=norm, cmap=cmap)
    fig.colorbar(sm, ax=axes.tolist(), shrink=0.8, label="adoption period (stars: seeds, grey: never)")
    return fig
