"""Figures a researcher would put in a paper. Every function returns a matplotlib Figure.

Figures are drawn on the non-interactive Agg canvas (``matplotlib.figure.Figure``), so
womlab never opens a window or touches pyplot's global state.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from .aggregate import bass_share, mapped_parameters

__all__ = ["adoption_figure"]

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
