"""Statistics of adoption curves: time to 10/50/90 % of the market, peak, final share,
and the gap between a network curve and an aggregate one.

Every function takes a cumulative share on the period grid (index = period) and works
the same for a network run and an aggregate curve, so the two are always measured alike.
The formulas are written once, vectorised over any leading axes
(:func:`curve_metrics_array`, :func:`curve_gap_array`); :func:`curve_metrics` and
:func:`curve_gap` are their one-curve forms.

Pooled statistics (:func:`pooled_metrics`, :func:`pooled_gaps`) are those of the mean
network curve over replicates, with an interval from
:func:`womlab.studies.intervals.bootstrap_interval` (replicates resampled whole; the
resamples seeded, so a table is reproducible). A smooth statistic of the mean curve is
studentised with its delta-method standard error: replicate i's influence on the time
the mean curve M reaches a level L is −(Sᵢ(t*) − L) / M′(t*) (Sᵢ interpolated at the
crossing t*, M′ the slope of M there), on the peak share its new customers in M's peak
period less M's, on the RMSE to a reference c the mean over periods of (M − c)(Sᵢ − M)
divided by the RMSE (Davison & Hinkley 1997, §2.7, the nonparametric delta method).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from womlab.studies.intervals import Interval, bootstrap_interval, mean_interval, t_interval

__all__ = [
    "discount_factors",
    "mean_interval",
    "time_to_share",
    "curve_metrics",
    "curve_metrics_array",
    "curve_gap",
    "curve_gap_array",
    "metrics_table",
    "replicate_metrics",
    "replicate_gaps",
    "pooled_metrics",
    "pooled_gaps",
    "mean_curve_interval",
    "METRIC_NAMES",
    "GAP_NAMES",
]

METRIC_NAMES = ("t10", "t50", "t90", "peak_period", "peak_new_share", "final_share")
GAP_NAMES = ("rmse", "max_abs_gap", "gap_at_max", "time_of_max_gap")


def time_to_share(share: np.ndarray, level: float, times: np.ndarray | None = None) -> float:
    """First time the cumulative share reaches ``level``, interpolated linearly; NaN if never.

    Examples
    --------
    >>> time_to_share(np.array([0.0, 0.4, 0.8]), 0.5)
    1.25
    """
    share = np.asarray(share, dtype=float)
    times = np.arange(share.size, dtype=float) if times is None else np.asarray(times, dtype=float)
    return float(_crossing(share, level, times)[0])


def curve_metrics(share: np.ndarray) -> dict[str, float]:
    """Metrics of one cumulative share curve on periods 0..T.

    ``peak_period`` is the period with most new customers (period 0, the seeded state,
    excluded), ``peak_new_share`` that period's new customers as a share of the market,
    ``final_share`` the share at the horizon. A curve with a NaN (a rule without an
    aggregate counterpart) has every metric NaN.
    """
    return {name: float(v) for name, v in curve_metrics_array(np.asarray(share, dtype=float)).items()}


def metrics_table(shares: np.ndarray, aggregate: np.ndarray) -> pd.DataFrame:
    """Network median and 90 % interval beside the aggregate value, one row per metric.

    ``shares`` is an array (replicates, T + 1) of cumulative shares.
    """
    per_run = pd.DataFrame([curve_metrics(s) for s in np.atleast_2d(shares)])
    agg = curve_metrics(aggregate)
    rows = []
    for name in METRIC_NAMES:
        col = per_run[name]
        rows.append(
            {
                "metric": name,
                "network_median": col.median(),
                "network_q05": col.quantile(0.05),
                "network_q95": col.quantile(0.95),
                "runs_reaching": int(col.notna().sum()),
                "aggregate": agg[name],
            }
        )
    return pd.DataFrame(rows)


def curve_gap(share: np.ndarray, reference: np.ndarray, times: np.ndarray | None = None) -> dict[str, float]:
    """Gap between a network curve and a reference (aggregate) curve on the same grid.

    Returns ``rmse`` (root mean square of share − reference over periods 1..T; period
    0 is the shared seeded state), ``max_abs_gap`` (largest |share − reference|),
    ``gap_at_max`` (the signed gap there: negative when the network is behind) and
    ``time_of_max_gap``.

    Examples
    --------
    >>> g = curve_gap(np.array([0.0, 0.2, 0.6, 1.0]), np.array([0.0, 0.4, 0.7, 1.0]))
    >>> round(g["max_abs_gap"], 6), g["time_of_max_gap"]
    (0.2, 1.0)
    """
    share = np.asarray(share, dtype=float)
    reference = np.asarray(reference, dtype=float)
    if share.shape != reference.shape:
        raise ValueError(f"curve_gap needs curves on one grid, got shapes {share.shape} and {reference.shape}")
    return {name: float(v) for name, v in curve_gap_array(share, reference, times).items()}


def replicate_metrics(shares: np.ndarray) -> pd.DataFrame:
    """One row per replicate: ``replicate`` and the :func:`curve_metrics` columns.

    ``shares`` is an array (replicates, T + 1) of cumulative shares.
    """
    table = pd.DataFrame([curve_metrics(s) for s in np.atleast_2d(shares)], columns=list(METRIC_NAMES))
    table.insert(0, "replicate", np.arange(len(table)))
    return table


def replicate_gaps(shares: np.ndarray, references: Mapping[str, np.ndarray]) -> pd.DataFrame:
    """One row per replicate and reference curve: ``replicate``, ``aggregate`` and :data:`GAP_NAMES`."""
    rows = []
    for r, share in enumerate(np.atleast_2d(shares)):
        for name, ref in references.items():
            rows.append({"replicate": r, "aggregate": name, **curve_gap(share, ref)})
    return pd.DataFrame(rows, columns=["replicate", "aggregate", *GAP_NAMES])


def _take(values: np.ndarray, index: np.ndarray) -> np.ndarray:
    """values[..., index[...]] along the last axis, ``index`` broadcast over the leading axes."""
    index = np.broadcast_to(index, values.shape[:-1])
    return np.take_along_axis(values, index[..., None], axis=-1)[..., 0]


def _crossing(curves: np.ndarray, level: float, times: np.ndarray) -> tuple[np.ndarray, ...]:
    """First (interpolated) time each curve reaches ``level``, vectorised over leading axes.

    Returns (time, k, frac): the crossing lies in the segment [k − 1, k] at fraction frac
    (k = 0: reached at the first time; time NaN: never reached)."""
    above = curves >= level
    reached = above.any(axis=-1)
    k = np.argmax(above, axis=-1)
    km1 = np.maximum(k - 1, 0)
    f0, f1 = _take(curves, km1), _take(curves, k)
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(k > 0, (level - f0) / (f1 - f0), 0.0)
    t = np.where(k > 0, times[km1] + frac * (times[k] - times[km1]), times[0])
    return np.where(reached, t, np.nan), k, frac


def curve_metrics_array(curves: np.ndarray, times: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """:func:`curve_metrics` of many curves at once: ``curves`` (..., T + 1) → one array (...) per metric.

    Examples
    --------
    >>> curve_metrics_array(np.array([[0.0, 0.4, 0.8], [0.0, 0.6, 0.7]]))["t50"].tolist()
    [1.25, 0.8333333333333334]
    """
    curves = np.asarray(curves, dtype=float)
    times = np.arange(curves.shape[-1], dtype=float) if times is None else np.asarray(times, dtype=float)
    finite = np.isfinite(curves).all(axis=-1)
    out = {f"t{round(level * 100)}": _crossing(curves, level, times)[0] for level in (0.10, 0.50, 0.90)}
    new = np.diff(curves, axis=-1)
    if new.shape[-1]:
        peak = np.argmax(new, axis=-1)
        out["peak_period"] = (peak + 1).astype(float)
        out["peak_new_share"] = _take(new, peak)
    else:
        out["peak_period"] = np.zeros(curves.shape[:-1])
        out["peak_new_share"] = np.zeros(curves.shape[:-1])
    out["final_share"] = curves[..., -1].copy()
    return {name: np.where(finite, out[name], np.nan) for name in METRIC_NAMES}


def curve_gap_array(
    curves: np.ndarray, reference: np.ndarray, times: np.ndarray | None = None
) -> dict[str, np.ndarray]:
    """:func:`curve_gap` of many curves (..., T + 1) against one reference: one array (...) per gap."""
    curves = np.asarray(curves, dtype=float)
    reference = np.asarray(reference, dtype=float)
    if curves.shape[-1] != reference.shape[-1]:
        raise ValueError(
            f"curve_gap needs curves on one grid, got lengths {curves.shape[-1]} and {reference.shape[-1]}"
        )
    times = np.arange(curves.shape[-1], dtype=float) if times is None else np.asarray(times, dtype=float)
    gap = curves - reference
    body = gap[..., 1:] if gap.shape[-1] > 1 else gap
    i = np.argmax(np.abs(gap), axis=-1)
    at = _take(gap, i)
    return {
        "rmse": np.sqrt(np.mean(body**2, axis=-1)),
        "max_abs_gap": np.abs(at),
        "gap_at_max": at,
        "time_of_max_gap": times[i],
    }


_SMOOTH = ("t10", "t50", "t90", "peak_new_share", "final_share", "rmse", "max_abs_gap", "gap_at_max")


def _influence(
    name: str, curves: np.ndarray, mean: np.ndarray, reference: np.ndarray | None, times: np.ndarray
) -> np.ndarray:
    """Influence of each replicate curve on a smooth statistic of a mean curve (the delta method).

    ``curves`` is (R, T + 1), the replicates; ``mean`` (B, T + 1), the mean curves of B
    resamples of them. Returns (B, R): the influence of replicate r on resample b's
    statistic, so that its standard error is the resample's standard deviation of these
    values over √R. Only the statistics of ``_SMOOTH`` have one."""
    rows = np.arange(mean.shape[0])
    if name in ("t10", "t50", "t90"):
        _, k, frac = _crossing(mean, int(name[1:]) / 100, times)
        km1 = np.maximum(k - 1, 0)
        at = curves.T[km1] + frac[:, None] * (curves.T[k] - curves.T[km1])  # each replicate at the crossing
        level = mean[rows, km1] + frac * (mean[rows, k] - mean[rows, km1])
        with np.errstate(divide="ignore", invalid="ignore"):
            slope = (mean[rows, k] - mean[rows, km1]) / (times[k] - times[km1])
            return np.where((k > 0)[:, None], -(at - level[:, None]) / slope[:, None], 0.0)
    if name == "peak_new_share":
        mean_new = np.diff(mean, axis=-1)
        peak = np.argmax(mean_new, axis=-1)
        return np.diff(curves, axis=-1).T[peak] - mean_new[rows, peak][:, None]
    if name == "final_share":
        return curves[None, :, -1] - mean[:, -1:]
    gap = mean - reference
    if name == "rmse":
        g = gap[:, 1:]
        rmse = np.sqrt(np.mean(g**2, axis=-1))
        with np.errstate(divide="ignore", invalid="ignore"):
            return ((g @ curves[:, 1:].T) - np.sum(g * mean[:, 1:], axis=-1)[:, None]) / g.shape[-1] / rmse[:, None]
    i = np.argmax(np.abs(gap), axis=-1)  # max_abs_gap, gap_at_max
    dev = curves.T[i] - mean[rows, i][:, None]
    return dev * np.sign(gap[rows, i])[:, None] if name == "max_abs_gap" else dev


def mean_curve_interval(
    shares: np.ndarray,
    metric: str,
    *,
    reference: np.ndarray | None = None,
    bootstrap: int = 1000,
    rng: np.random.Generator | int = 0,
    level: float = 0.95,
) -> Interval:
    """Interval of one metric of the mean curve over replicates (replicates resampled whole).

    ``metric`` is one of :data:`METRIC_NAMES`, or of :data:`GAP_NAMES` with ``reference``
    (the gap of the mean curve to that curve). Smooth metrics (times to a share, peak
    share, final share, RMSE, largest gap) get the studentised bootstrap with their
    delta-method standard error, the whole-period ones (peak period, time of the largest
    gap) BCa; every interval is cut at the metric's feasible range ([0, T], [1, T] for the
    peak period, [0, 1] for shares, [−1, 1] for a signed gap). See
    :func:`womlab.studies.intervals.bootstrap_interval`.

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> shares = np.cumsum(rng.uniform(0, 0.05, (12, 31)), axis=1).clip(0, 1)
    >>> ci = mean_curve_interval(shares, "t50", bootstrap=200)
    >>> bool(ci.low < curve_metrics(shares.mean(axis=0))["t50"] < ci.high), ci.method
    (True, 'studentised bootstrap')
    """
    shares = np.atleast_2d(np.asarray(shares, dtype=float))
    r, t1 = shares.shape
    periods = t1 - 1
    times = np.arange(t1, dtype=float)
    if metric in METRIC_NAMES:

        def value(c: np.ndarray) -> np.ndarray:
            return curve_metrics_array(c)[metric]

        reference = None
    elif metric in GAP_NAMES and reference is not None:
        reference = np.asarray(reference, dtype=float)

        def value(c: np.ndarray) -> np.ndarray:
            return curve_gap_array(c, reference)[metric]
    else:
        raise ValueError(
            f"metric must be one of {', '.join(METRIC_NAMES)}, or of {', '.join(GAP_NAMES)} with a "
            f"reference curve; got {metric!r}"
        )

    def resampled(i: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """How often each replicate is in each resample (B, R), and the resamples' mean curves (B, T + 1)."""
        if cache[0] is not i:
            flat = i.reshape(-1, i.shape[-1])
            c = np.zeros((flat.shape[0], r))
            np.add.at(c, (np.repeat(np.arange(flat.shape[0]), flat.shape[1]), flat.ravel()), 1.0)
            cache[:] = [i, c, (c @ shares) / flat.shape[1]]
        return cache[1], cache[2]

    cache: list = [None, None, None]  # the last resample (statistic and standard error share it)

    def statistic(i: np.ndarray) -> np.ndarray:
        return value(resampled(i)[1]).reshape(i.shape[:-1])

    standard_error = None
    if metric in _SMOOTH:

        def standard_error(i: np.ndarray) -> np.ndarray:
            c, mean = resampled(i)
            m = i.shape[-1]
            infl = _influence(metric, shares, mean, reference, times)
            centre = (c * infl).sum(axis=-1, keepdims=True) / m
            sd = np.sqrt((c * (infl - centre) ** 2).sum(axis=-1) / (m - 1))
            return (sd / np.sqrt(m)).reshape(i.shape[:-1])

    bounds = {
        "peak_new_share": (0.0, 1.0),
        "final_share": (0.0, 1.0),
        "peak_period": (1.0, float(periods)),
        "rmse": (0.0, 1.0),
        "max_abs_gap": (0.0, 1.0),
        "gap_at_max": (-1.0, 1.0),
    }.get(metric, (0.0, float(periods)))
    batch = max(1, int(4_000_000 // max(r * max(r, t1), 1)))
    return bootstrap_interval(
        statistic,
        r,
        rng=np.random.default_rng(rng),
        standard_error=standard_error,
        level=level,
        resamples=bootstrap,
        bounds=bounds,
        batch=batch,
    )


def pooled_metrics(
    shares: np.ndarray,
    references: Mapping[str, np.ndarray] | None = None,
    *,
    bootstrap: int = 1000,
    seed: int = 0,
    level: float = 0.95,
) -> pd.DataFrame:
    """Curve metrics of the mean network curve with an interval, beside each reference curve.

    One row per metric of :data:`METRIC_NAMES`; columns ``network`` (metric of the mean
    curve), ``network_low`` and ``network_high`` (interval at ``level`` from
    :func:`womlab.studies.intervals.bootstrap_interval`, replicates resampled whole:
    studentised with the delta-method standard error for the times to a share and the
    peak share, BCa for the peak period; the t interval for the final share, a mean;
    every interval cut at the metric's feasible range, [0, T] or [0, 1]), ``interval``
    (the method, and any clipping or why it is missing), ``replicate_mean`` (mean of
    the per-replicate values, NaN where a run never reaches the level), ``runs_reaching``,
    then one column per reference curve.

    Examples
    --------
    >>> shares = np.array([[0.0, 0.3, 0.7, 0.9], [0.0, 0.1, 0.5, 0.8]])
    >>> table = pooled_metrics(shares, {"model": np.array([0.0, 0.2, 0.6, 0.9])}, bootstrap=50)
    >>> float(table.loc[1, "network"]), float(table.loc[1, "model"])   # t50 of the mean curve, of the model
    (1.75, 1.75)
    """
    shares = np.atleast_2d(np.asarray(shares, dtype=float))
    references = dict(references or {})
    rng = np.random.default_rng(seed)
    point = curve_metrics(shares.mean(axis=0))
    per_run = replicate_metrics(shares)
    ref_metrics = {name: curve_metrics(ref) for name, ref in references.items()}
    rows = []
    for name in METRIC_NAMES:
        if name == "final_share":  # the final share of the mean curve is a mean
            ci = t_interval(shares[:, -1], level, bounds=(0.0, 1.0))
        else:
            ci = mean_curve_interval(shares, name, bootstrap=bootstrap, rng=rng, level=level)
        row = {
            "metric": name,
            "network": point[name],
            "network_low": ci.low,
            "network_high": ci.high,
            "interval": ci.describe(),
            "replicate_mean": float(per_run[name].mean()),
            "runs_reaching": int(per_run[name].notna().sum()),
        }
        row.update({ref: m[name] for ref, m in ref_metrics.items()})
        rows.append(row)
    return pd.DataFrame(rows)


def pooled_gaps(
    shares: np.ndarray,
    references: Mapping[str, np.ndarray],
    *,
    bootstrap: int = 1000,
    seed: int = 0,
    level: float = 0.95,
) -> pd.DataFrame:
    """Gap between the mean network curve and each reference curve, with intervals.

    One row per reference; for each of :data:`GAP_NAMES` a value and its ``_low`` and
    ``_high`` bounds (replicates resampled whole, :func:`womlab.studies.intervals.bootstrap_interval`:
    studentised with the delta-method standard error for the RMSE and the largest gap, BCa
    for the time of the largest gap; cut at the feasible range), then ``replicate_rmse``
    (the mean over replicates of each run's own RMSE, which includes run-to-run noise).
    """
    shares = np.atleast_2d(np.asarray(shares, dtype=float))
    refs = dict(references)
    rng = np.random.default_rng(seed)
    mean = shares.mean(axis=0)
    per_run = replicate_gaps(shares, refs)
    rows = []
    for name, ref in refs.items():
        ref = np.asarray(ref, dtype=float)
        point = curve_gap(mean, ref)
        row: dict[str, object] = {"aggregate": name}
        for key in GAP_NAMES:
            if np.isfinite(ref).all():
                lo, hi = mean_curve_interval(shares, key, reference=ref, bootstrap=bootstrap, rng=rng, level=level)
            else:
                lo = hi = float("nan")
            row.update({key: point[key], f"{key}_low": lo, f"{key}_high": hi})
        row["replicate_rmse"] = float(per_run.loc[per_run["aggregate"] == name, "rmse"].mean())
        rows.append(row)
    return pd.DataFrame(rows)


def discount_factors(rate: float, periods: int) -> np.ndarray:
    """(1 + r)^−t for t = 0..T.

    Examples
    --------
    >>> discount_factors(0.1, 2).round(4).tolist()
    [1.0, 0.9091, 0.8264]
    """
    return (1.0 + rate) ** -np.arange(periods + 1, dtype=float)
