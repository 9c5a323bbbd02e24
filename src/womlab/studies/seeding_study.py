"""Seeding strategies compared on paired replicates (common random numbers).

:func:`compare_strategies` runs every strategy of ``[study]`` through
:func:`womlab.studies.run_paired`: replicate r builds one network, and every strategy
runs on it with the same seeding and dynamics streams (the same Exp(1) resistance per
organisation, the same satisfaction and talker draws). A difference between two
strategies on replicate r is therefore the difference the seeds make, not noise; the
study reports how much narrower the paired interval is than an unpaired one would be.

Outcomes per run
    ``customers`` at the horizon; ``t50``, the first (interpolated) time the customer
    share reaches one half (NaN if never); ``peak_period``, the period with most new
    customers; ``customer_periods``, the discounted customer-periods
    Σₜ₌₁..T Cₜ / (1 + r)ᵗ with r = ``study.discount_rate``.

Statistics per strategy
    Mean and 95 % t-interval of ``customers``, ``peak_period`` and ``customer_periods``,
    cut at their feasible ranges ([0, N], [1, T], [0, N·T]; the table's ``*_interval``
    note says when); for ``t50``, which a run that never reaches half the market does not
    have, the median over all runs — those runs counted as later than the horizon, the
    Kaplan–Meier median when every run is censored at the horizon — with its
    order-statistics interval and ``t50_reached``, the runs that reached it (a mean of the
    runs that did would make a slow strategy look fast). Lift against ``random`` on
    ``study.outcome``: the mean paired difference and the ratio of means, each with a
    studentised paired bootstrap interval (standard errors s_d/√R and the delta-method
    one of a ratio; replicates resampled whole, the same resamples for every strategy,
    from their own seeded stream; :mod:`womlab.studies.intervals`) — outcomes such as
    customers at the horizon are skewed, and there the paired t interval covered only
    92–93 % at 20–24 replicates where the studentised one covers 94–95 %; a Wilcoxon
    signed-rank p-value of the paired differences (1 when every difference is zero); and
    what pairing bought:
    the half-width of the paired difference's t-interval (R − 1 degrees of freedom)
    beside the half-width an unpaired design of the same size would give (pooled
    two-sample t-interval, √(s²ₓ/R + s²_b/R), 2R − 2 degrees of freedom), and the
    variance reduction 1 − Var(x − b) / (Var x + Var b).
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from functools import partial
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

from womlab.dynamics import RunResult, streams
from womlab.networks import ReferralNetwork, build_network
from womlab.networks.given import GivenNetwork, as_network
from womlab.scenario import Scenario
from womlab.studies.intervals import bootstrap_interval, median_interval, ratio_standard_error, t_interval
from womlab.studies.metrics import curve_metrics, discount_factors
from womlab.studies.runner import run_paired

__all__ = [
    "SeedingStudy",
    "compare_strategies",
    "run_outcomes",
    "lift_statistics",
    "OUTCOMES",
    "BOOTSTRAP_KEY",
]

OUTCOMES = ("customers", "t50", "peak_period", "customer_periods")
#: Outcomes a run adds where churn (the first two) or warnings (the last) are on.
LOSS_OUTCOMES = ("former_customers", "customer_periods_lost_to_churn", "rejecters")
SNAPSHOT_MAX_ORGANISATIONS = 600
BOOTSTRAP_KEY = (2**32 - 1, 0)  # spawn key of the bootstrap stream: no replicate uses it


def run_outcomes(result: RunResult, discount_rate: float = 0.0, keep_first: bool = False) -> dict[str, Any]:
    """The outcomes of one run, and its customer share per period (key ``share``).

    With ``keep_first``, the run of replicate 0 (spawn key ``(0,)``) is kept whole under
    key ``run`` (for the network snapshot), so it need not be run twice.

    Examples
    --------
    >>> from womlab import Scenario, run_one
    >>> s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 4}, "run": {"periods": 12}})
    >>> sorted(run_outcomes(run_one(s, (0,)), 0.01))
    ['customer_periods', 'customers', 'peak_period', 'share', 't50']
    """
    customers = result.customers
    share = result.share
    m = curve_metrics(result.ever_share if result.churns else share)  # with churn: t50 and peak of adoptions
    d = discount_factors(discount_rate, customers.size - 1)
    out = {
        "customers": int(customers[-1]),
        "t50": m["t50"],
        "peak_period": int(m["peak_period"]),
        "customer_periods": float(np.sum(customers[1:] * d[1:])),  # with churn: only while customers
        "share": share.astype(np.float32),
    }
    if result.churns:  # customers lost to churn, and the discounted customer-periods they no longer count
        rest = np.cumsum(d[::-1])[::-1]
        rest[0] -= d[0]  # customer-periods count from period 1
        lp = result.leave_period
        out["former_customers"] = int(result.former_customers[-1])
        out["customer_periods_lost_to_churn"] = float(rest[lp[lp >= 0]].sum())
    if result.warns:
        out["rejecters"] = int(result.rejecters[-1])
    if keep_first and tuple(result.spawn_key) == (0,):
        out["run"] = result
    return out


def lift_statistics(
    x: np.ndarray,
    baseline: np.ndarray,
    *,
    resamples: int = 2000,
    rng: np.random.Generator | int | None = None,
    level: float = 0.95,
) -> dict[str, float]:
    """Paired lift of outcome ``x`` over ``baseline`` (same replicates, same order).

    Parameters
    ----------
    x, baseline : array
        One non-negative value per replicate.
    resamples : int
        Paired bootstrap resamples for the ratio's interval.
    rng : numpy.random.Generator or int
        Draws the bootstrap resamples (required); a fresh generator from the same seed
        gives every strategy the same resamples.
    level : float
        Confidence level.

    Returns
    -------
    dict
        ``lift_ratio`` (mean x / mean baseline) with ``_low``/``_high`` bounds of its
        studentised paired bootstrap interval (the ratio's delta-method standard error,
        :func:`womlab.studies.intervals.ratio_standard_error`; cut at 0, since both outcomes
        are non-negative); ``lift_diff`` (mean of x − baseline) with its studentised paired
        bootstrap interval (standard error s_d/√R, the same resamples);
        ``wilcoxon_p``; ``paired_halfwidth``, ``unpaired_halfwidth`` (t-interval
        half-widths of the mean difference with and without pairing) and
        ``variance_reduction``. Bounds are NaN below the minimum replicates of
        :mod:`womlab.studies.intervals`.

    References
    ----------
    Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap, ch. 12. Chapman & Hall.
    Wilcoxon, F. (1945). Individual comparisons by ranking methods. Biometrics Bulletin 1, 80–83.
    Law, A. M. (2015). Simulation Modeling and Analysis, 5th ed., §11.2 (common random numbers).

    Examples
    --------
    >>> x = np.array([3.0, 5.0, 4.0, 6.0, 5.0])
    >>> lift_statistics(x, x, rng=0)["lift_diff_high"]
    0.0
    """
    x = np.asarray(x, dtype=float)
    b = np.asarray(baseline, dtype=float)
    if x.shape != b.shape or x.ndim != 1:
        raise ValueError(f"x and baseline must be 1-d and of equal length, got {x.shape} and {b.shape}")
    if rng is None:
        raise ValueError("lift_statistics needs rng (the bootstrap stream)")
    # one seed for both intervals: the same resamples of the replicates
    seed = np.random.default_rng(rng).integers(2**63) if isinstance(rng, np.random.Generator) else rng
    r = x.size
    d = x - b
    ratio = float(x.mean() / b.mean()) if b.mean() > 0 else float("nan")
    if np.isfinite(ratio):
        ci_ratio = bootstrap_interval(
            lambda i: x[i].mean(axis=-1) / b[i].mean(axis=-1),
            r,
            rng=np.random.default_rng(seed),
            standard_error=lambda i: ratio_standard_error(x[i], b[i]),
            level=level,
            resamples=resamples,
            bounds=(0.0, np.inf),
        )
    else:
        ci_ratio = None
    ci_diff = bootstrap_interval(
        lambda i: d[i].mean(axis=-1),
        r,
        rng=np.random.default_rng(seed),
        level=level,
        standard_error=lambda i: d[i].std(axis=-1, ddof=1) / np.sqrt(r),
        resamples=resamples,
    )
    if np.all(d == 0):
        p = 1.0
    else:
        p = float(stats.wilcoxon(x, b).pvalue)
    tq = float(stats.t.ppf(0.5 + level / 2, r - 1)) if r > 1 else float("nan")  # paired: R − 1 degrees of freedom
    tq2 = float(stats.t.ppf(0.5 + level / 2, 2 * r - 2)) if r > 1 else float("nan")  # two samples: 2R − 2
    var_x, var_b, var_d = (float(v.var(ddof=1)) if r > 1 else float("nan") for v in (x, b, d))
    return {
        "lift_ratio": ratio,
        "lift_ratio_low": ci_ratio.low if ci_ratio else float("nan"),
        "lift_ratio_high": ci_ratio.high if ci_ratio else float("nan"),
        "lift_diff": float(d.mean()),
        "lift_diff_low": ci_diff.low,
        "lift_diff_high": ci_diff.high,
        "wilcoxon_p": p,
        "paired_halfwidth": tq * np.sqrt(var_d / r),
        "unpaired_halfwidth": tq2 * np.sqrt((var_x + var_b) / r),
        "variance_reduction": 1.0 - var_d / (var_x + var_b) if var_x + var_b > 0 else float("nan"),
    }


@dataclass(eq=False)
class SeedingStudy:
    """The outcome of :func:`compare_strategies`.

    Attributes
    ----------
    scenario : Scenario
        The base scenario (its ``[seeding]`` strategy is replaced per variant).
    strategies : tuple of str
        Strategies in the order run, ``random`` first.
    runs : pandas.DataFrame
        One row per replicate × strategy: replicate, strategy and the outcomes.
    shares : dict
        Strategy → array (R, T + 1) of customer shares.
    wall_time : float
        Seconds the study took.
    snapshot : tuple, optional
        ``(network, {strategy: RunResult})`` of replicate 0, kept for small networks.
    parameters : str
        Whether the parameters were fixed or drawn from a fit's posterior per replicate
        (then every interval includes parameter uncertainty); a column of the table.
    """

    scenario: Scenario
    strategies: tuple[str, ...]
    runs: pd.DataFrame
    shares: dict[str, np.ndarray]
    wall_time: float = 0.0
    snapshot: tuple[ReferralNetwork, dict[str, RunResult]] | None = None
    parameters: str = "fixed (the scenario's own)"
    _table: pd.DataFrame | None = field(default=None, repr=False)

    @property
    def replicates(self) -> int:
        return int(self.runs["replicate"].nunique())

    def strategies_table(self) -> pd.DataFrame:
        """One row per strategy: outcome means with 95 % t intervals (``*_interval`` notes
        any clipping), the median t50 with its interval and the runs that reached it, lift
        against ``random`` with paired intervals, Wilcoxon p-value and what pairing bought."""
        if self._table is not None:
            return self._table
        study = self.scenario.study
        s = self.scenario
        n, periods = s.market.organisations, s.run.periods
        bounds = {
            "customers": (0.0, float(n)),
            "peak_period": (1.0, float(periods)),
            "customer_periods": (0.0, float(n * periods)),
            "former_customers": (0.0, float(n)),
            "customer_periods_lost_to_churn": (0.0, float(n * periods)),
            "rejecters": (0.0, float(n)),
        }
        wide = {name: g.sort_values("replicate") for name, g in self.runs.groupby("strategy", sort=False)}
        base = wide["random"][study.outcome].to_numpy(dtype=float)
        rows = []
        for name in self.strategies:
            g = wide[name]
            row: dict[str, Any] = {"strategy": name, "replicates": len(g)}
            losses = tuple(k for k in LOSS_OUTCOMES if k in g.columns)  # churn and warnings, where on
            for outcome in ("customers", "peak_period", "customer_periods", *losses):
                x = g[outcome].to_numpy(dtype=float)
                ci = t_interval(x, bounds=bounds[outcome])
                row[f"{outcome}_mean"] = float(x.mean())
                row[f"{outcome}_low"], row[f"{outcome}_high"] = ci.low, ci.high
                row[f"{outcome}_interval"] = ci.describe()
            median, ci = median_interval(g["t50"].to_numpy(dtype=float), censored_above=periods)
            row["t50_median"], row["t50_low"], row["t50_high"] = median, ci.low, ci.high
            row["t50_reached"] = int(np.isfinite(g["t50"].to_numpy(dtype=float)).sum())
            row["lift_outcome"] = study.outcome
            # the same seed for every strategy: the same bootstrap resamples of the replicates
            rng = np.random.default_rng(np.random.SeedSequence(s.seed, spawn_key=BOOTSTRAP_KEY))
            row.update(
                lift_statistics(g[study.outcome].to_numpy(dtype=float), base, rng=rng, resamples=study.bootstrap)
            )
            row["parameters"] = self.parameters
            rows.append(row)
        self._table = pd.DataFrame(rows)
        return self._table

    def curve_summary(self) -> pd.DataFrame:
        """Long table: strategy, period, q05, q50, q95 of the customer share."""
        frames = []
        for name in self.strategies:
            sh = self.shares[name]
            t = np.arange(sh.shape[1])
            frames.append(
                pd.DataFrame(
                    {
                        "strategy": name,
                        "period": t,
                        "q05": np.quantile(sh, 0.05, axis=0),
                        "q50": np.quantile(sh, 0.5, axis=0),
                        "q95": np.quantile(sh, 0.95, axis=0),
                    }
                )
            )
        return pd.concat(frames, ignore_index=True)


def compare_strategies(
    scenario: Scenario | Any,
    strategies: list[str] | tuple[str, ...] | None = None,
    replicates: int | None = None,
    jobs: int | None = None,
    *,
    progress: bool = False,
    snapshot: bool | None = None,
    network: GivenNetwork | None = None,
) -> SeedingStudy:
    """Run seeding strategies on paired replicates and compare them with ``random``.

    Parameters
    ----------
    scenario : Scenario or Fit
        The market, network, rule and run; ``[study]`` gives the defaults below and the
        discount rate, lift outcome and bootstrap resamples; ``[seeding]`` the budget and
        strategy options. A fit (:func:`womlab.fit_observed`) stands for its scenario at the
        posterior, and each replicate draws its parameters from the posterior
        (``Fit.posterior_draws``), the same draw for every strategy.
    strategies : list of str, optional
        Defaults to ``study.strategies``; ``random`` is added first when missing.
    replicates : int, optional
        Defaults to ``study.replicates``, else ``run.replicates``.
    jobs : int, optional
        Worker processes; defaults to ``run.jobs``. Results do not depend on it.
    progress : bool
        Show a progress bar.
    snapshot : bool, optional
        Keep replicate 0's network and runs for :func:`womlab.network_snapshot_figure`;
        by default only for networks of at most 600 organisations (not complete).
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        Your own network, for every replicate and strategy (see
        :func:`womlab.run_replicates`); it must have ``market.organisations`` organisations.

    Raises
    ------
    ScenarioError
        An unknown strategy (the message lists the known ones) or a bad count.

    Examples
    --------
    >>> from womlab import Scenario, compare_strategies
    >>> s = Scenario.from_dict({"market": {"organisations": 300, "initial_customers": 3},
    ...                         "network": {"kind": "scale_free", "mean_degree": 4}, "run": {"periods": 15}})
    >>> study = compare_strategies(s, ["hubs"], replicates=5)
    >>> study.strategies_table()["strategy"].tolist()
    ['random', 'hubs']
    """
    draws = None
    if not isinstance(scenario, Scenario):  # a fit: parameters drawn from its posterior per replicate
        draws, scenario = scenario.posterior_draws(), scenario.scenario()
    if strategies is not None:
        scenario = scenario.replace("study.strategies", list(strategies))
    if replicates is not None:
        scenario = scenario.replace("study.replicates", replicates)
    study = scenario.study
    replicates = study.replicates if study.replicates is not None else scenario.run.replicates
    jobs = scenario.run.jobs if jobs is None else jobs
    names = study.compared
    variants = {name: scenario.replace("seeding.strategy", name) for name in names}
    if snapshot is None:
        snapshot = scenario.market.organisations <= SNAPSHOT_MAX_ORGANISATIONS and scenario.network.kind != "complete"
    start = time.perf_counter()
    given = None if network is None else as_network(network, scenario.market.organisations)
    reduced = run_paired(
        variants,
        replicates,
        jobs=jobs,
        progress=progress,
        network=given,
        vary=draws,
        reduce=partial(run_outcomes, discount_rate=study.discount_rate, keep_first=snapshot),
    )
    rows = []
    shares = {}
    for name in names:
        shares[name] = np.vstack([o["share"] for o in reduced[name]])
        for r, o in enumerate(reduced[name]):
            rows.append(
                {
                    "replicate": r,
                    "strategy": name,
                    **{k: o[k] for k in OUTCOMES},
                    "final_share": float(o["share"][-1]),
                    **{k: o[k] for k in LOSS_OUTCOMES if k in o},
                }
            )
    kept = None
    if snapshot:
        # replicate 0's network, rebuilt from its own network stream: the one its runs were on
        first = scenario if draws is None else scenario.replace(draws((0,)))
        network = (
            given
            if given is not None
            else build_network(first, np.random.default_rng(streams(scenario.seed, (0,)).network))
        )
        kept = (network, {name: reduced[name][0]["run"] for name in names})
    return SeedingStudy(
        scenario=scenario,
        strategies=names,
        runs=pd.DataFrame(rows),
        shares=shares,
        wall_time=time.perf_counter() - start,
        snapshot=kept,
        parameters="fixed (the scenario's own)"
        if draws is None
        else "drawn from the fit's posterior per replicate, the same for every strategy",
    )
