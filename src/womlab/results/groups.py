"""Figures split by group: one line per segment or region, the aggregate model's line beside each."""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from womlab.results.figures import title_text

__all__ = ["group_figure", "product_figure"]

# a qualitative palette that stays apart in print and for the common colour-vision deficiencies
GROUP_COLOURS = ("#1f5f8b", "#d35400", "#27ae60", "#8e44ad", "#c0392b", "#7f8c8d", "#b7950b", "#2c3e50")


def group_figure(
    batch,
    by: str = "segment",
    *,
    title: str | None = None,  # noqa: ANN001 - Batch
    size: tuple[float, float] | None = None,
) -> Figure:
    """Customer share of each group over time (median, 5–95 % band; the aggregate model dashed) and
    new customers per period as a share of each group.

    Parameters
    ----------
    batch : womlab.studies.Batch
    by : str
        ``"segment"`` or ``"region"``.
    title : str, optional
        Defaults to the scenario's name and the split.
    size : (width, height), optional
        In inches.

    Examples
    --------
    >>> from womlab import Scenario, run_replicates
    >>> s = Scenario.from_dict({"market": {"organisations": 300, "initial_customers": 3},
    ...     "run": {"periods": 10}, "segments": {"few": {"share": 0.2, "word_of_mouth": 3}, "many": {"share": 0.8}}})
    >>> fig = group_figure(run_replicates(s, 3), "segment")
    >>> len(fig.axes[0].lines)
    4
    """
    shares, names = batch.group_shares(by)
    aggregate = batch.group_aggregate(by)
    t = np.arange(shares.shape[1])
    fig = Figure(figsize=size or (7.5, 6.5), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[3, 2])
    new = np.diff(shares, axis=1)
    for g, name in enumerate(names):
        colour = GROUP_COLOURS[g % len(GROUP_COLOURS)]
        top.fill_between(
            t,
            np.quantile(shares[:, :, g], 0.05, axis=0),
            np.quantile(shares[:, :, g], 0.95, axis=0),
            color=colour,
            alpha=0.15,
            lw=0,
        )
        top.plot(t, np.median(shares[:, :, g], axis=0), color=colour, lw=2, label=f"{by} {name}, network median")
        top.plot(t, aggregate[:, g], color=colour, lw=1.3, ls="--", label=f"{by} {name}, aggregate model")
        bottom.plot(t[1:], np.median(new[:, :, g], axis=0), color=colour, lw=2)
        bottom.plot(t[1:], np.diff(aggregate[:, g]), color=colour, lw=1.3, ls="--")
    top.set_ylabel(f"customers, share of the {by}")
    top.set_ylim(0, 1.02)
    top.grid(alpha=0.3)
    top.legend(loc="lower right", fontsize=8, frameon=False)
    top.set_title(
        title_text(title or f"{batch.scenario.name}: by {by} ({batch.replicates} runs, 5–95 % bands)"), fontsize=11
    )
    bottom.set_xlabel("period")
    bottom.set_ylabel(f"new customers per period,\nshare of the {by}")
    bottom.grid(alpha=0.3)
    bottom.set_xlim(0, t[-1])
    return fig


def product_figure(batch, *, title: str | None = None, size: tuple[float, float] | None = None) -> Figure:  # noqa: ANN001 - Batch
    """Product generations (``[[product]]``): each generation's customers as a share of the market (mean,
    5–95 % band) beside the mean-field recursion (dashed) and Norton & Bass's closed form (dotted),
    and the portfolio's mean value per period below.

    Examples
    --------
    >>> from womlab import Scenario, run_replicates
    >>> s = Scenario.from_dict({"market": {"organisations": 300, "initial_customers": 3}, "run": {"periods": 20},
    ...                         "product": [{"launch": 8}]})
    >>> fig = product_figure(run_replicates(s, 2))
    >>> len(fig.axes[0].lines)
    6
    """
    summary = batch.product_summary()
    fig = Figure(figsize=size or (7.5, 6.5), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[3, 2])
    products = [p for p in summary["product"].unique() if p != "all"]
    for k, name in enumerate(products):
        colour = GROUP_COLOURS[k % len(GROUP_COLOURS)]
        rows = summary[summary["product"] == name]
        t = rows["period"].to_numpy()
        top.fill_between(t, rows["q05"], rows["q95"], color=colour, alpha=0.15, lw=0)
        top.plot(t, rows["mean"], color=colour, lw=2, label=f"{name}, network mean")
        top.plot(t, rows["aggregate"], color=colour, lw=1.3, ls="--", label=f"{name}, mean-field recursion")
        top.plot(t, rows["norton_bass"], color=colour, lw=1.0, ls=":", label=f"{name}, Norton & Bass")
    top.set_ylabel("customers on the generation,\nshare of the market")
    top.set_ylim(0, 1.02)
    top.grid(alpha=0.3)
    top.legend(loc="center right", fontsize=7, frameon=False)
    top.set_title(
        title_text(title or f"{batch.scenario.name}: product generations ({batch.replicates} runs)"), fontsize=11
    )
    portfolio = summary[summary["product"] == "all"]
    bottom.plot(portfolio["period"], portfolio["value"], color="#2c3e50", lw=2)
    bottom.set_xlabel("period")
    bottom.set_ylabel("portfolio value per period\n(mean over runs)")
    bottom.grid(alpha=0.3)
    bottom.set_xlim(0, portfolio["period"].max())
    return fig
