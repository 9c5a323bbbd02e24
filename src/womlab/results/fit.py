"""A fit to an observed series, drawn and written; observed points on other adoption figures.

:func:`fit_figure` draws the observed points, the Bass fit to the same points, the network
posterior band and the holdout line, beside each free field's posterior
(:func:`womlab.results.save.save_fit` writes the fit's results folder). :func:`overlay_observed` puts an observed series on the
two panels of an adoption figure (``womlab run --data``, ``womlab compare --data``).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import NullFormatter

from womlab.studies.calibration import Fit
from womlab.studies.observed import ObservedSeries
from womlab.studies.smc import weighted_quantile

__all__ = ["fit_figure", "overlay_observed"]

NETWORK_COLOUR = "#1f5f8b"
BASS_COLOUR = "#c0392b"
OBSERVED_COLOUR = "#111111"


def overlay_observed(top: Any, bottom: Any, observed: ObservedSeries, organisations: int) -> None:
    """Observed points on an adoption figure's share panel (``customers`` data) or its
    new-customers panel (``new_customers`` data), as shares of ``organisations`` (the
    data's market size when they give one)."""
    size = observed.market or organisations
    axis = top if observed.kind == "customers" else bottom
    axis.scatter(
        observed.periods,
        observed.counts / size,
        s=16,
        color=OBSERVED_COLOUR,
        zorder=5,
        label=f"observed ({observed.source})",
    )
    # beside the axes, off the data, as every womlab figure's legends
    axis.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0.0, fontsize=8, frameon=False)


def fit_figure(fit: Fit, *, periods: int = 12, title: str | None = None) -> Figure:
    """The fit: observed points, Bass fit, network posterior band, holdout line; posteriors.

    Left, top: the cumulative curve the fit compares (customers, or new customers summed
    over the observed periods) — the observed points (held-out ones hollow), the network
    posterior's median with 50 % and 90 % bands continued ``periods`` past the last fitted
    period, the Bass fit to the same points, and a line at the last fitted period. Left,
    bottom: new customers per period, the same way. Right: each free field's weighted
    posterior histogram with its prior's range, and the network kinds' probabilities when
    several were compared.

    Parameters
    ----------
    fit : womlab.Fit
    periods : int
        Periods to forecast past the last fitted period.
    title : str, optional
        Defaults to the scenario's name.
    """
    table = fit.forecast(periods)
    t = table["period"].to_numpy()
    obs = fit.observed
    paths, _ = fit.paths(int(t[-1]))
    w = fit.weights
    first = 1 if obs.kind == "new_customers" else int(obs.periods[0])
    grid = np.arange(first, t[-1] + 1)
    if obs.kind == "customers":
        stat = paths[:, grid]
        observed_stat = obs.counts
        label = "customers"
    else:
        # new customers summed over the observed periods, and over every period after the data
        mask = np.isin(grid, obs.periods) | (grid > obs.last_period)
        new = np.diff(paths, axis=1)[:, grid - 1] * mask
        stat = np.cumsum(new, axis=1)
        observed_stat = obs.cumulative()
        label = "new customers, summed over the observed periods"
    band = weighted_quantile(stat, w, (0.05, 0.25, 0.5, 0.75, 0.95))

    fig = Figure(figsize=(11.5, 6.8), layout="constrained")
    left, right = fig.subfigures(1, 2, width_ratios=[2.1, 1])
    top, bottom = left.subplots(2, 1, sharex=True, height_ratios=[3, 2])
    top.fill_between(
        grid, band[0], band[4], color=NETWORK_COLOUR, alpha=0.15, lw=0, label="network model, 90 % posterior predictive"
    )
    top.fill_between(grid, band[1], band[3], color=NETWORK_COLOUR, alpha=0.25, lw=0, label="50 %")
    top.plot(grid, band[2], color=NETWORK_COLOUR, lw=2, label="network model, median")
    bass = fit.bass_curve(grid.astype(float))
    if obs.kind == "new_customers":
        bass = np.cumsum(np.where(np.isin(grid, obs.periods) | (grid > obs.last_period), bass, 0.0))
    top.plot(
        grid,
        bass,
        color=BASS_COLOUR,
        lw=1.5,
        ls="--",
        label=f"Bass fit to the same points (p = {fit.bass.p:.3g}, Q = {fit.bass.Q:.3g})",
    )
    held = np.isin(obs.periods, fit.held_out.periods) if fit.held_out is not None else np.zeros(len(obs), bool)
    top.scatter(
        obs.periods[~held],
        observed_stat[~held],
        s=18,
        color=OBSERVED_COLOUR,
        zorder=5,
        label=f"observed ({obs.source})",
    )
    if held.any():
        top.scatter(
            obs.periods[held],
            observed_stat[held],
            s=22,
            facecolors="none",
            edgecolors=OBSERVED_COLOUR,
            zorder=5,
            label="observed, held out",
        )
    last = fit.fitted.last_period
    for ax in (top, bottom):
        ax.axvline(last, color="#777777", ls=":", lw=1.2)
        ax.grid(alpha=0.3)
    top.text(
        last,
        0.02,
        " last fitted period" + (" (holdout after)" if held.any() else ""),
        transform=top.get_xaxis_transform(),
        fontsize=8,
        color="#555555",
    )
    top.set_ylabel(label)
    top.legend(loc="upper left", fontsize=7.5, frameon=False)
    top.set_title(title or fit.base.name, fontsize=11)

    q = [table[f"new_customers_q{k:02d}"].to_numpy() for k in (5, 25, 50, 75, 95)]
    bottom.fill_between(t[1:], q[0][1:], q[4][1:], color=NETWORK_COLOUR, alpha=0.15, lw=0)
    bottom.fill_between(t[1:], q[1][1:], q[3][1:], color=NETWORK_COLOUR, alpha=0.25, lw=0)
    bottom.plot(t[1:], q[2][1:], color=NETWORK_COLOUR, lw=2)
    if obs.kind == "new_customers":
        bottom.scatter(obs.periods[~held], obs.counts[~held], s=14, color=OBSERVED_COLOUR, zorder=5)
        if held.any():
            bottom.scatter(obs.periods[held], obs.counts[held], s=18, facecolors="none", edgecolors=OBSERVED_COLOUR)
        bottom.plot(t[1:], fit.bass_curve(t[1:].astype(float)), color=BASS_COLOUR, lw=1.5, ls="--")
    else:
        consecutive = np.flatnonzero(np.diff(obs.periods) == 1) + 1
        bottom.scatter(obs.periods[consecutive], np.diff(obs.counts)[consecutive - 1], s=14, color=OBSERVED_COLOUR)
    bottom.set_xlabel("period")
    bottom.set_ylabel("new customers per period")
    bottom.set_xlim(0, t[-1])

    n_kinds = len(fit.kinds)
    axes = right.subplots(len(fit.names) + (1 if n_kinds > 1 else 0), 1, squeeze=False)[:, 0]
    values = fit.values()
    for j, (name, ax) in enumerate(zip(fit.names, axes)):
        prior = fit.working[j]
        col = values[:, j]
        log = prior.distribution == "log_uniform"
        lo, hi = prior.low, prior.high
        if not np.isfinite(lo) or not np.isfinite(hi):
            lo, hi = float(col.min()), float(col.max())
        bins = np.geomspace(lo, hi, 31) if log else np.linspace(lo, hi, 31)
        ax.hist(col, bins=bins, weights=w, color=NETWORK_COLOUR, alpha=0.75)
        if log:
            ax.set_xscale("log")
            ax.xaxis.set_minor_formatter(NullFormatter())
        med = float(weighted_quantile(col, w, 0.5))
        ax.axvline(med, color=OBSERVED_COLOUR, lw=1)
        ax.set_title(f"{name}: median {med:.3g}", fontsize=8.5)
        ax.set_yticks([])
        ax.tick_params(labelsize=7.5)
    if n_kinds > 1:
        ax = axes[-1]
        probs = fit.network_kinds()
        ax.barh(probs["network_kind"], probs["probability"], color=NETWORK_COLOUR, alpha=0.75)
        ax.set_xlim(0, 1)
        ax.set_title("network kind, posterior probability", fontsize=8.5)
        ax.tick_params(labelsize=7.5)
    right.suptitle(f"posterior, {w.size} particles (x axis: prior range)", fontsize=9)
    return fig
