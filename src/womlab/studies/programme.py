"""What a referral programme returns: its economics against a paired baseline.

:func:`evaluate_programme` runs the scenario with its programme and without it
(``referral.enrol = "none"``) on the same replicates through
:func:`womlab.studies.runner.run_paired` (one network per replicate, the same seeding and
dynamics streams for both), and compares each pair with :func:`programme_economics`:
incremental customers at the horizon, incremental discounted value, discounted cost,
return on investment (ΔValue − Cost) / Cost, cost per incremental customer, and the
split of ΔValue into acceleration and expansion (Libai, Muller & Peres 2013). How a
programme runs inside an engine (enrolment, boost, payments, budget) is
:mod:`womlab.dynamics.programme`.

References
----------
Libai, B., Muller, E. & Peres, R. (2013). Decomposing the value of word-of-mouth seeding
programs: acceleration versus expansion. *Journal of Marketing Research* 50(2), 161–176.

Schmitt, P., Skiera, B. & Van den Bulte, C. (2011). Referral programs and customer value.
*Journal of Marketing* 75(1), 46–59.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from womlab.dynamics import ENROLMENT_STREAM, PROGRAMME_ENGINES, RunResult, streams
from womlab.errors import ScenarioError
from womlab.networks import build_network
from womlab.networks.given import GivenNetwork, as_network
from womlab.scenario import Referral, Scenario
from womlab.studies.metrics import discount_factors, mean_interval
from womlab.studies.referrals import referral_tree_summary
from womlab.studies.runner import run_paired

__all__ = [
    "customer_values",
    "value_flow",
    "roi",
    "programme_economics",
    "programme_ratios",
    "check_programme",
    "ProgrammeStudy",
    "evaluate_programme",
]


def _value_per_period(referral: Referral) -> float:
    return 1.0 if referral.value_per_period is None else referral.value_per_period


def customer_values(adoption_period: np.ndarray, referral: Referral, periods: int) -> np.ndarray:
    """Discounted value of each organisation as a customer, to the horizon (0 if it never adopts).

    With ``value_per_period`` v a customer that adopts in period a is worth
    v · Σₜ₌ₐᵀ (1 + r)^−t (it counts in every period in which it is a customer, the
    discounted customer-periods of the seeding study times v); with ``lifetime_value`` L
    it is worth L · (1 + r)^−a.
    """
    ap = np.asarray(adoption_period)
    d = discount_factors(referral.discount_rate, periods)
    if referral.lifetime_value is not None:
        per_period = referral.lifetime_value * d
    else:
        per_period = _value_per_period(referral) * np.cumsum(d[::-1])[::-1]  # Σ_{t=a}^{T} d_t
    return np.where(ap >= 0, per_period[np.maximum(ap, 0)], 0.0)


def value_flow(run: RunResult, referral: Referral) -> np.ndarray:
    """Discounted value realised in each period 0..T (its sum is the sum of :func:`customer_values`)."""
    d = discount_factors(referral.discount_rate, run.periods)
    if referral.lifetime_value is not None:
        return referral.lifetime_value * run.new_customers * d
    return _value_per_period(referral) * run.customers * d


def roi(incremental_value: float, cost: float) -> float:
    """Return on investment (ΔValue − Cost) / Cost; NaN when the cost is 0.

    Examples
    --------
    A referred customer worth 40 more, for a reward of 25 (the arithmetic of the bank case
    in Schmitt, Skiera & Van den Bulte 2011):

    >>> roi(40.0, 25.0)
    0.6
    """
    return (incremental_value - cost) / cost if cost > 0 else float("nan")


def _cost_flow(run: RunResult, referral: Referral) -> np.ndarray:
    cost = run.extra.get("programme_cost")
    if cost is None:
        return np.zeros(run.periods + 1)
    return np.asarray(cost, dtype=float) * discount_factors(referral.discount_rate, run.periods)


def programme_economics(baseline: RunResult, programme: RunResult, referral: Referral) -> dict:
    """The economics of one programme run against its paired baseline run.

    Parameters
    ----------
    baseline, programme : RunResult
        The same replicate without and with the programme (same network and draws).
    referral : Referral
        Supplies the value (per period or lifetime) and the discount rate.

    Returns
    -------
    dict
        ``customers_baseline``, ``customers_programme``, ``incremental_customers`` (at the
        horizon); ``value_baseline``, ``value_programme``, ``incremental_value``
        (discounted); ``cost`` (discounted payments), ``cost_undiscounted``,
        ``paid_referrals``; ``roi``; ``cost_per_incremental_customer`` (NaN unless the
        programme added customers); ``acceleration`` — the value change of organisations
        that adopt by the horizon in both runs (``accelerated`` of them earlier with the
        programme, ``delayed`` later) — and ``expansion`` — the value of those that adopt
        only with the programme (``expanded``) less that of those that adopt only without
        it (``lost``); acceleration + expansion = incremental value exactly (Libai,
        Muller & Peres 2013); ``break_even_period``: first period at which cumulative
        incremental value reaches cumulative cost (NaN if never, or no cost).
    """
    if baseline.n != programme.n or baseline.periods != programme.periods:
        raise ValueError("baseline and programme runs must have the same organisations and horizon")
    T = baseline.periods
    a0, a1 = baseline.adoption_period, programme.adoption_period
    v0 = customer_values(a0, referral, T)
    v1 = customer_values(a1, referral, T)
    both = (a0 >= 0) & (a1 >= 0)
    only1 = (a1 >= 0) & (a0 < 0)
    only0 = (a0 >= 0) & (a1 < 0)
    delta = v1 - v0
    cost_flow = _cost_flow(programme, referral)
    cost = float(cost_flow.sum())
    inc_customers = int(programme.customers[-1] - baseline.customers[-1])
    inc_value = float(delta.sum())
    net = np.cumsum(value_flow(programme, referral) - value_flow(baseline, referral)) - np.cumsum(cost_flow)
    even = np.flatnonzero((net >= 0) & (np.cumsum(cost_flow) > 0))
    undiscounted = programme.extra.get("programme_cost")
    paid = programme.extra.get("programme_paid_referrals")
    return {
        "customers_baseline": int(baseline.customers[-1]),
        "customers_programme": int(programme.customers[-1]),
        "incremental_customers": inc_customers,
        "value_baseline": float(v0.sum()),
        "value_programme": float(v1.sum()),
        "incremental_value": inc_value,
        "cost": cost,
        "cost_undiscounted": float(np.sum(undiscounted)) if undiscounted is not None else 0.0,
        "paid_referrals": int(np.sum(paid)) if paid is not None else 0,
        "roi": roi(inc_value, cost),
        "cost_per_incremental_customer": cost / inc_customers if inc_customers > 0 else float("nan"),
        "acceleration": float(delta[both].sum()),
        "expansion": float(v1[only1].sum() - v0[only0].sum()),
        "accelerated": int(np.sum(both & (a1 < a0))),
        "delayed": int(np.sum(both & (a1 > a0))),
        "expanded": int(only1.sum()),
        "lost": int(only0.sum()),
        "break_even_period": float(even[0]) if even.size else float("nan"),
    }


RATIO_NAMES = ("roi", "cost_per_incremental_customer", "acceleration_share")


def programme_ratios(table: pd.DataFrame, *, bootstrap: int, rng: np.random.Generator) -> list[dict]:
    """ROI, cost per incremental customer and acceleration share of a programme, as ratios of
    totals over replicates, each with a percentile bootstrap interval over replicates.

    ``roi`` = Σ(ΔValue − Cost) / ΣCost, ``cost_per_incremental_customer`` = ΣCost / ΣΔcustomers
    (NaN unless Σ ΔCustomers > 0), ``acceleration_share`` = Σ acceleration / Σ ΔValue (the
    part of the incremental value that is customers adopting earlier, Libai, Muller &
    Peres 2013). ``table`` has one row per replicate with the :func:`programme_economics`
    columns. With one replicate there is no interval (NaN bounds).

    Returns
    -------
    list of dict
        One per ratio: ``outcome``, ``estimate``, ``low``, ``high``, ``interval``.
    """
    dv, c, dc, acc = (table[k].to_numpy(dtype=float)
                      for k in ("incremental_value", "cost", "incremental_customers", "acceleration"))

    def ratios(idx: np.ndarray) -> tuple[float, float, float]:
        cs, vs, ns, accs = c[idx].sum(), dv[idx].sum(), dc[idx].sum(), acc[idx].sum()
        return roi(vs, cs), (cs / ns if ns > 0 else float("nan")), (accs / vs if vs != 0 else float("nan"))

    n = len(table)
    est = ratios(np.arange(n))
    boot = np.array([ratios(rng.integers(0, n, n)) for _ in range(bootstrap)]) if n > 1 else np.zeros((0, 3))
    rows = []
    for j, name in enumerate(RATIO_NAMES):
        b = boot[:, j]
        b = b[np.isfinite(b)]
        lo, hi = (np.quantile(b, [0.025, 0.975]) if b.size else (np.nan, np.nan))
        rows.append({"outcome": name, "estimate": est[j], "low": float(lo), "high": float(hi),
                     "interval": f"ratio of totals; percentile bootstrap, {bootstrap} resamples of replicates"})
    return rows


def check_programme(scenario: Scenario) -> None:
    """Raise ScenarioError unless the scenario has a programme that its engine can run."""
    if not scenario.referral.active:
        raise ScenarioError(
            'referral.enrol must be one of all, share, strategy to evaluate a programme, got "none"'
        )
    if scenario.run.engine not in PROGRAMME_ENGINES:
        raise ScenarioError(
            f"run.engine must be one of {', '.join(PROGRAMME_ENGINES)} for a referral programme "
            f"(the programme is not yet applied by the others), got {scenario.run.engine!r}"
        )


@dataclass(eq=False)
class ProgrammeStudy:
    """A referral programme evaluated against its baseline on paired replicates.

    Attributes
    ----------
    scenario : Scenario
        The scenario with its programme.
    baseline, programme : list of RunResult
        Paired runs, in replicate order (same network and draws per replicate).
    degrees : list of numpy.ndarray
        Degree of each organisation on each replicate's network (for tree statistics).
    """

    scenario: Scenario
    baseline: list[RunResult]
    programme: list[RunResult]
    degrees: list[np.ndarray] = field(default_factory=list)
    bootstrap: int = 2000
    parameters: str = "fixed (the scenario's own)"

    @property
    def replicates(self) -> int:
        return len(self.programme)

    def per_replicate(self) -> pd.DataFrame:
        """One row per replicate: the columns of :func:`programme_economics`."""
        rows = [programme_economics(b, p, self.scenario.referral) for b, p in zip(self.baseline, self.programme)]
        out = pd.DataFrame(rows)
        out.insert(0, "replicate", np.arange(len(rows)))
        return out

    def summary(self) -> pd.DataFrame:
        """Per outcome: the estimate and its 95 % interval over replicates.

        Totals and counts are means over replicates with a t interval; ``roi``,
        ``cost_per_incremental_customer`` and ``acceleration_share`` are ratios of totals
        (:func:`programme_ratios`; resamples seeded from the scenario's seed).
        """
        table = self.per_replicate()
        rows = []
        for col in ("incremental_customers", "incremental_value", "cost", "cost_undiscounted", "paid_referrals",
                    "acceleration", "expansion", "accelerated", "expanded", "lost",
                    "customers_baseline", "customers_programme"):
            m, lo, hi = mean_interval(table[col].to_numpy())
            rows.append({"outcome": col, "estimate": m, "low": lo, "high": hi, "interval": "t, mean over replicates"})
        rng = np.random.default_rng(np.random.SeedSequence(self.scenario.seed, spawn_key=(ENROLMENT_STREAM, 1)))
        rows += programme_ratios(table, bootstrap=self.bootstrap, rng=rng)
        be = self.break_even_period()
        rows.append({"outcome": "break_even_period", "estimate": be, "low": np.nan, "high": np.nan,
                     "interval": "of the mean cumulative curves"})
        table = pd.DataFrame(rows)
        table["parameters"] = self.parameters  # fixed, or drawn from a fit's posterior (intervals include it)
        return table

    def curves(self) -> pd.DataFrame:
        """Per period: mean and 5–95 % band of the customer share, baseline and programme."""
        t = np.arange(self.scenario.run.periods + 1)
        out = {"period": t}
        for name, runs in (("baseline", self.baseline), ("programme", self.programme)):
            shares = np.vstack([r.share for r in runs])
            out[f"{name}_mean"] = shares.mean(axis=0)
            out[f"{name}_q05"] = np.quantile(shares, 0.05, axis=0)
            out[f"{name}_q95"] = np.quantile(shares, 0.95, axis=0)
        return pd.DataFrame(out)

    def cumulative(self) -> pd.DataFrame:
        """Per period, means over replicates: cumulative discounted cost, cumulative
        incremental discounted value, and their difference (``net``), with the 5–95 % band of ``net``."""
        ref = self.scenario.referral
        inc = np.vstack([np.cumsum(value_flow(p, ref) - value_flow(b, ref)) for b, p in zip(self.baseline, self.programme)])
        cost = np.vstack([np.cumsum(_cost_flow(p, ref)) for p in self.programme])
        net = inc - cost
        return pd.DataFrame(
            {
                "period": np.arange(inc.shape[1]),
                "cumulative_cost": cost.mean(axis=0),
                "cumulative_incremental_value": inc.mean(axis=0),
                "net": net.mean(axis=0),
                "net_q05": np.quantile(net, 0.05, axis=0),
                "net_q95": np.quantile(net, 0.95, axis=0),
            }
        )

    def break_even_period(self) -> float:
        """First period at which mean cumulative incremental value reaches mean cumulative cost (NaN if never)."""
        c = self.cumulative()
        ok = np.flatnonzero((c["net"].to_numpy() >= 0) & (c["cumulative_cost"].to_numpy() > 0))
        return float(c["period"].iloc[ok[0]]) if ok.size else float("nan")

    def tree(self) -> pd.DataFrame:
        """Referral-tree statistics (:func:`womlab.referral_tree_summary`), baseline beside programme."""
        degrees = self.degrees or None
        b = referral_tree_summary(self.baseline, degrees).rename(columns={"value": "baseline"})
        p = referral_tree_summary(self.programme, degrees).rename(columns={"value": "programme"})
        return b.merge(p, on="statistic", sort=False)


def evaluate_programme(
    scenario: Scenario | Any,
    replicates: int | None = None,
    *,
    jobs: int | None = None,
    progress: bool = False,
    degrees: bool = True,
    network: GivenNetwork | None = None,
) -> ProgrammeStudy:
    """Evaluate the scenario's referral programme against no programme, on paired replicates.

    The baseline is the same scenario with ``referral.enrol = "none"``; both run through
    :func:`womlab.studies.run_paired` (common random numbers).

    Parameters
    ----------
    scenario : Scenario or Fit
        Must have a programme (``referral.enrol`` other than ``none``). A fit
        (:func:`womlab.fit_observed`; ``fit.replace({...})`` adds a programme) stands for its
        scenario at the posterior, and each replicate draws its parameters from the
        posterior, the same draw for the baseline and the programme.
    replicates : int, optional
        Defaults to ``scenario.run.replicates``.
    jobs : int, optional
        Worker processes; defaults to ``scenario.run.jobs``.
    progress : bool
        Show a progress bar.
    degrees : bool
        Rebuild each replicate's network (from its network stream) to record degrees for
        the top-decile statistic.
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        Your own network, for every replicate and both arms (see
        :func:`womlab.run_replicates`); it must have ``market.organisations`` organisations.

    Raises
    ------
    ScenarioError
        If the scenario has no programme.

    Examples
    --------
    >>> from womlab import Scenario, evaluate_programme
    >>> s = Scenario.from_dict({"market": {"organisations": 300, "initial_customers": 3},
    ...     "network": {"kind": "random", "mean_degree": 6}, "run": {"periods": 20},
    ...     "referral": {"enrol": "all", "talk_multiplier": 2.0, "reward": 5.0, "lifetime_value": 40.0}})
    >>> study = evaluate_programme(s, 4)
    >>> list(study.per_replicate().columns[:3])
    ['replicate', 'customers_baseline', 'customers_programme']
    """
    draws = None
    if not isinstance(scenario, Scenario):  # a fit: parameters drawn from its posterior per replicate
        draws, scenario = scenario.posterior_draws(), scenario.scenario()
    check_programme(scenario)
    replicates = scenario.run.replicates if replicates is None else replicates
    jobs = scenario.run.jobs if jobs is None else jobs
    if replicates < 1:
        raise ScenarioError(f"replicates must be a whole number >= 1, got {replicates}")
    given = None if network is None else as_network(network, scenario.market.organisations)
    baseline = scenario.replace("referral.enrol", "none")
    runs = run_paired({"baseline": baseline, "programme": scenario}, replicates, jobs=jobs, progress=progress,
                      network=given, vary=draws)
    degs = []
    if degrees:
        for r in range(replicates):
            at = scenario if draws is None else scenario.replace(draws((r,)))
            net = given if given is not None else build_network(
                at, np.random.default_rng(streams(scenario.seed, (r,)).network))
            degs.append(net.degree())
    return ProgrammeStudy(scenario=scenario, baseline=runs["baseline"], programme=runs["programme"], degrees=degs,
                          parameters="fixed (the scenario's own)" if draws is None else
                          "drawn from the fit's posterior per replicate, the same for baseline and programme")
