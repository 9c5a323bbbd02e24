"""Statistics of adoption curves: time to 10/50/90 % of the market, peak, final share,
and the gap between a network curve and an aggregate one.

Every function takes a cumulative share on the period grid (index = period) and works
the same for a network run and an aggregate curve, so the two are always measured alike.

Pooled statistics (:func:`pooled_metrics`, :func:`pooled_gaps`) are those of the mean
network curve over replicates, with a percentile bootstrap interval: replicates are
resampled with replacement, the mean curve recomputed and the statistic measured again
(Efron & Tibshirani 1993, *An Introduction to the Bootstrap*, ch. 13). The bootstrap is
seeded, so a table is reproducible.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping

import numpy as np
import pandas as pd

__all__ = [
    "discount_factors",
    "mean_interval",
    "time_to_share",
    "curve_metrics",
    "curve_gap",
    "metrics_table",
    "replicate_metrics",
    "replicate_gaps",
    "pooled_metrics",
    "pooled_gaps",
    "bootstrap_mean_curve",
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
    above = np.flatnonzero(share >= level)
    if above.size == 0:
        return float("nan")
    i = int(above[0])
    if i == 0:
        return float(times[0])
    f0, f1 = share[i - 1], share[i]
    return float(times[i - 1] + (level - f0) / (f1 - f0) * (times[i] - times[i - 1]))


def curve_metrics(share: np.ndarray) -> dict[str, float]:
    """Metrics of one cumulative share curve on periods 0..T.

    ``peak_period`` is the period with most new customers (period 0, the seeded state,
    excluded), ``peak_new_share`` that period's new customers as a share of the market,
    ``final_share`` the share at the horizon.
    """
    share = np.asarray(share, dtype=float)
    if not np.isfinite(share).all():  # no curve (a rule without an aggregate counterpart)
        return dict.fromkeys(METRIC_NAMES, float("nan"))
    new = np.diff(share)
    peak = int(np.argmax(new)) + 1 if new.size else 0
    return {
        "t10": time_to_share(share, 0.10),
        "t50": time_to_share(share, 0.50),
        "t90": time_to_share(share, 0.90),
        "peak_period": float(peak),
        "peak_new_share": float(new[peak - 1]) if new.size else 0.0,
        "final_share": float(share[-1]),
    }


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
    times = np.arange(share.size, dtype=float) if times is None else np.asarray(times, dtype=float)
    gap = share - reference
    body = gap[1:] if gap.size > 1 else gap
    i = int(np.argmax(np.abs(gap)))
    return {
        "rmse": float(np.sqrt(np.mean(body**2))),
        "max_abs_gap": float(abs(gap[i])),
        "gap_at_max": float(gap[i]),
        "time_of_max_gap": float(times[i]),
    }


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


def bootstrap_mean_curve(
    shares: np.ndarray,
    statistic: Callable[[np.ndarray], Mapping[str, float]],
    *,
    bootstrap: int = 1000,
    seed: int = 0,
) -> pd.DataFrame:
    """``statistic`` of the mean curve of ``bootstrap`` resamples of the replicates.

    Returns one row per resample, one column per key of ``statistic``'s dict. With a
    single replicate every resample is that replicate.
    """
    shares = np.atleast_2d(np.asarray(shares, dtype=float))
    if bootstrap < 1:
        raise ValueError(f"bootstrap must be >= 1, got {bootstrap}")
    rng = np.random.default_rng(seed)
    r = shares.shape[0]
    rows = [statistic(shares[rng.integers(0, r, size=r)].mean(axis=0)) for _ in range(bootstrap)]
    return pd.DataFrame(rows)


def _interval(values: pd.Series, level: float) -> tuple[float, float]:
    v = values.to_numpy(dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return float("nan"), float("nan")
    a = (1 - level) / 2
    return float(np.quantile(v, a)), float(np.quantile(v, 1 - a))


def pooled_metrics(
    shares: np.ndarray,
    references: Mapping[str, np.ndarray] | None = None,
    *,
    bootstrap: int = 1000,
    seed: int = 0,
    level: float = 0.95,
) -> pd.DataFrame:
    """Curve metrics of the mean network curve with a bootstrap interval, beside each reference curve.

    One row per metric of :data:`METRIC_NAMES`; columns ``network`` (metric of the mean
    curve), ``network_low`` and ``network_high`` (percentile bootstrap interval at
    ``level``), ``replicate_mean`` (mean of the per-replicate values, NaN where a run
    never reaches the level), then one column per reference curve.

    Examples
    --------
    >>> shares = np.array([[0.0, 0.3, 0.7, 0.9], [0.0, 0.1, 0.5, 0.8]])
    >>> table = pooled_metrics(shares, {"model": np.array([0.0, 0.2, 0.6, 0.9])}, bootstrap=50)
    >>> float(table.loc[1, "network"]), float(table.loc[1, "model"])   # t50 of the mean curve, of the model
    (1.75, 1.75)
    """
    shares = np.atleast_2d(np.asarray(shares, dtype=float))
    references = dict(references or {})
    boot = bootstrap_mean_curve(shares, curve_metrics, bootstrap=bootstrap, seed=seed)
    point = curve_metrics(shares.mean(axis=0))
    per_run = replicate_metrics(shares)
    ref_metrics = {name: curve_metrics(ref) for name, ref in references.items()}
    rows = []
    for name in METRIC_NAMES:
        lo, hi = _interval(boot[name], level)
        row = {"metric": name, "network": point[name], "network_low": lo, "network_high": hi,
               "replicate_mean": float(per_run[name].mean())}
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
    """Gap between the mean network curve and each reference curve, with bootstrap intervals.

    One row per reference; for each of :data:`GAP_NAMES` a value and its ``_low`` and
    ``_high`` percentile bootstrap bounds, then ``replicate_rmse`` (the mean over
    replicates of each run's own RMSE, which includes run-to-run noise).
    """
    shares = np.atleast_2d(np.asarray(shares, dtype=float))
    refs = dict(references)

    def statistic(curve: np.ndarray) -> dict[str, float]:
        out = {}
        for name, ref in refs.items():
            for key, value in curve_gap(curve, ref).items():
                out[f"{name}\t{key}"] = value
        return out

    boot = bootstrap_mean_curve(shares, statistic, bootstrap=bootstrap, seed=seed)
    mean = shares.mean(axis=0)
    per_run = replicate_gaps(shares, refs)
    rows = []
    for name, ref in refs.items():
        point = curve_gap(mean, ref)
        row: dict[str, object] = {"aggregate": name}
        for key in GAP_NAMES:
            lo, hi = _interval(boot[f"{name}\t{key}"], level)
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


def mean_interval(x: np.ndarray, level: float = 0.95) -> tuple[float, float, float]:
    """Mean of the finite values of ``x`` and its Student-t interval (NaN where undefined).

    Examples
    --------
    >>> [round(v, 4) for v in mean_interval(np.array([1.0, 2.0, 3.0, np.nan]))]
    [2.0, -0.4841, 4.4841]
    """
    from scipy import stats

    x = np.asarray(x, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return (float("nan"),) * 3
    mean = float(x.mean())
    if x.size < 2:
        return mean, float("nan"), float("nan")
    half = float(stats.t.ppf(0.5 + level / 2, x.size - 1) * x.std(ddof=1) / np.sqrt(x.size))
    return mean, mean - half, mean + half
