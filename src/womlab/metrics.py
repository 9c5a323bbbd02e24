"""Statistics of adoption curves: time to 10/50/90 % of the market, peak, final share.

Every function takes a cumulative share on the period grid (index = period) and works
the same for a network run and an aggregate curve, so the two are always measured alike.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["time_to_share", "curve_metrics", "METRIC_NAMES"]

METRIC_NAMES = ("t10", "t50", "t90", "peak_period", "peak_new_share", "final_share")


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
