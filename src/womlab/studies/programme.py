"""What a referral programme returns: its economics against a paired baseline.

:func:`evaluate_programme` runs the scenario with its programme and without it
(``referral.enrol = "none"``) on the same replicates through
:func:`womlab.studies.runner.run_paired` (one network per replicate, the same seeding and
dynamics streams for both), and compares each pair with :func:`programme_economics`:
incremental customers at the horizon, incremental discounted value, discounted cost,
return on investment (ΔValue − Cost) / Cost, cost per incremental customer, and the
split of the programme's value into acceleration and expansion (Libai, Muller & Peres
2013). How a programme runs inside an engine (enrolment, boost, payments, budget) is
:mod:`womlab.dynamics.programme`.

The split is made on a continuation. At the horizon an organisation won with the
programme and not without it looks like expansion even when the baseline wins it one
period later; on a complete network with p > 0 and a fixed market, a 10-period horizon
labelled 56 % of a programme's value expansion where the whole-life answer is 0 %. So both
arms are run on past the horizon with the programme off
(:func:`womlab.studies.continuation.continue_paired`: for ``referral.lifetime`` periods,
or until the baseline's market is exhausted), and ``acceleration``, ``expansion`` and
``incremental_value_lifetime`` are measured there; the split at the horizon is kept only
as ``acceleration_at_horizon`` and ``expansion_at_horizon``. Incremental value, cost, ROI
and break-even stay at the horizon, where the programme is judged; ``roi_lifetime`` is
the return with the whole-life incremental value.

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

from womlab.aggregate import geometric_lifetime_value
from womlab.dynamics import ENROLMENT_STREAM, PROGRAMME_ENGINES, RunResult, streams
from womlab.errors import ScenarioError
from womlab.networks import build_network
from womlab.networks.given import GivenNetwork, as_network
from womlab.scenario import Referral, Scenario
from womlab.studies.continuation import continue_paired
from womlab.studies.intervals import bootstrap_interval, ratio_standard_error, t_interval
from womlab.studies.metrics import discount_factors
from womlab.studies.referrals import referral_tree_summary

__all__ = [
    "customer_values",
    "losses",
    "with_lifetime_value_from_churn",
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


def customer_values(
    adoption_period: np.ndarray, referral: Referral, periods: int, leave_period: np.ndarray | None = None
) -> np.ndarray:
    """Discounted value of each organisation as a customer, to the horizon (0 if it never adopts).

    With ``value_per_period`` v a customer that adopts in period a is worth
    v · Σₜ₌ₐᵀ (1 + r)^−t (it counts in every period in which it is a customer, the
    discounted customer-periods of the seeding study times v); with ``lifetime_value`` L
    it is worth L · (1 + r)^−a. With churn (``leave_period``, −1 = stayed) value accrues only
    while a customer: one that leaves in period ℓ counts in periods a..ℓ − 1, v · Σₜ₌ₐ^{ℓ−1}
    (1 + r)^−t (a given ``lifetime_value`` is a whole life, and is not cut).
    """
    ap = np.asarray(adoption_period)
    d = discount_factors(referral.discount_rate, periods)
    if referral.lifetime_value is not None:
        per_period = referral.lifetime_value * d
    else:
        per_period = _value_per_period(referral) * np.cumsum(d[::-1])[::-1]  # Σ_{t=a}^{T} d_t
    value = np.where(ap >= 0, per_period[np.maximum(ap, 0)], 0.0)
    if leave_period is not None and referral.lifetime_value is None:
        lp = np.asarray(leave_period)
        value = value - np.where(lp >= 0, per_period[np.maximum(lp, 0)], 0.0)  # Σ_{t=ℓ}^{T} d_t no longer earned
    return value


def value_flow(run: RunResult, referral: Referral) -> np.ndarray:
    """Discounted value realised in each period 0..T (its sum is the sum of :func:`customer_values`)."""
    d = discount_factors(referral.discount_rate, run.periods)
    if referral.lifetime_value is not None:
        return referral.lifetime_value * run.new_customers * d
    return _value_per_period(referral) * run.customers * d


def with_lifetime_value_from_churn(scenario: Scenario) -> Scenario:
    """``scenario`` with ``referral.lifetime_value`` derived from churn and the discount rate
    instead of given: the geometric annuity v·(1 + r)/(1 + r − e^{−δ})
    (:func:`womlab.aggregate.geometric_lifetime_value`; Gupta & Lehmann 2003), v the
    ``value_per_period`` (default 1), r the ``discount_rate``, δ ``adoption.churn`` and the
    run's own step.

    One number for every customer, at the satisfied customers' churn rate: where dissatisfied
    or referred customers churn at other rates, ``value_per_period`` with churn values each
    customer only while it stays (:func:`customer_values`), which this leaves aside for a
    whole-life figure. ``referral.lifetime_value_from_churn = true`` asks for it in a scenario
    file: :func:`evaluate_programme`, the sweep's ``programme`` study and
    :func:`womlab.studies.bad_news.value_of_bad_news` apply it first (with parameters drawn
    from a fit's posterior, at the scenario's own churn rate).

    Examples
    --------
    >>> s = Scenario.from_dict({"adoption": {"churn": 0.1},
    ...                         "referral": {"value_per_period": 1.0, "discount_rate": 0.05}})
    >>> t = with_lifetime_value_from_churn(s)
    >>> round(t.referral.lifetime_value, 4), t.referral.value_per_period
    (7.2333, None)
    """
    a, ref, run = scenario.adoption, scenario.referral, scenario.run
    if not a.churns or a.churn == 0:
        raise ScenarioError(f"adoption.churn must be > 0 to derive referral.lifetime_value from it, got {a.churn!r}")
    value = geometric_lifetime_value(
        _value_per_period(ref), a.churn, ref.discount_rate, time_step=run.time_step, form=run.step_probability
    )
    return scenario.replace(
        {
            "referral.value_per_period": None,
            "referral.lifetime_value": value,
            "referral.lifetime_value_from_churn": False,
        }
    )


def _valued(scenario: Scenario) -> Scenario:
    """``scenario`` with its lifetime value derived where ``referral.lifetime_value_from_churn`` asks."""
    return with_lifetime_value_from_churn(scenario) if scenario.referral.lifetime_value_from_churn else scenario


def losses(run: RunResult, referral: Referral, arm: str) -> dict[str, float]:
    """Customers lost to churn and to warnings in one run, and the value churn cost.

    ``former_<arm>``: customers who had left by the horizon; ``value_lost_to_churn_<arm>``:
    what they would have earned, at ``value_per_period``, from leaving to the horizon
    (discounted; 0 with a ``lifetime_value``, which is a whole life); ``rejecters_<arm>``:
    organisations warned off for good. The value warnings cost needs a run without them:
    :func:`womlab.studies.bad_news.value_of_bad_news`. Zeros where the mechanism is off.

    Examples
    --------
    >>> from womlab import Scenario, run_one
    >>> s = Scenario.from_dict({"market": {"organisations": 300, "initial_customers": 30},
    ...                         "adoption": {"churn": 0.2}, "run": {"periods": 10}})
    >>> out = losses(run_one(s), s.referral, "baseline")
    >>> out["former_baseline"] > 0, out["value_lost_to_churn_baseline"] > 0, out["rejecters_baseline"]
    (True, True, 0)
    """
    lost = 0.0
    former = int(run.former_customers[-1])
    if run.leave_period is not None and referral.lifetime_value is None:
        d = discount_factors(referral.discount_rate, run.periods)
        rest = _value_per_period(referral) * np.cumsum(d[::-1])[::-1]
        lp = run.leave_period
        lost = float(rest[lp[lp >= 0]].sum())
    return {f"former_{arm}": former, f"value_lost_to_churn_{arm}": lost, f"rejecters_{arm}": int(run.rejecters[-1])}


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


def _split(a0: np.ndarray, a1: np.ndarray, v0: np.ndarray, v1: np.ndarray) -> dict[str, float]:
    """Acceleration and expansion of the value change v1 − v0 (Libai, Muller & Peres 2013)."""
    both = (a0 >= 0) & (a1 >= 0)
    only1 = (a1 >= 0) & (a0 < 0)
    only0 = (a0 >= 0) & (a1 < 0)
    return {
        "acceleration": float((v1 - v0)[both].sum()),
        "expansion": float(v1[only1].sum() - v0[only0].sum()),
        "accelerated": int(np.sum(both & (a1 < a0))),
        "delayed": int(np.sum(both & (a1 > a0))),
        "expanded": int(only1.sum()),
        "lost": int(only0.sum()),
    }


def programme_economics(
    baseline: RunResult,
    programme: RunResult,
    referral: Referral,
    *,
    continued: tuple[RunResult, RunResult] | None = None,
) -> dict:
    """The economics of one programme run against its paired baseline run.

    Parameters
    ----------
    baseline, programme : RunResult
        The same replicate without and with the programme (same network and draws), to
        the horizon T.
    referral : Referral
        Supplies the value (per period or lifetime) and the discount rate.
    continued : (RunResult, RunResult), optional
        The same pair continued past the horizon with the programme off, to a horizon
        H ≥ T (:func:`womlab.studies.continuation.continue_paired`); the split into
        acceleration and expansion is made there. Without it those fields are NaN.

    Returns
    -------
    dict
        At the horizon: ``customers_baseline``, ``customers_programme``,
        ``incremental_customers``; ``value_baseline``, ``value_programme``,
        ``incremental_value`` (discounted, to T); ``cost`` (discounted payments),
        ``cost_undiscounted``, ``paid_referrals``; ``roi``;
        ``cost_per_incremental_customer`` (NaN unless the programme added customers);
        ``break_even_period`` (first period at which cumulative incremental value reaches
        cumulative cost; NaN if never, or no cost); and the split as it looks at the
        horizon, ``acceleration_at_horizon`` + ``expansion_at_horizon`` =
        ``incremental_value`` (with ``accelerated_at_horizon``, ``delayed_at_horizon``,
        ``expanded_at_horizon``, ``lost_at_horizon``).

        On the continuation (each customer valued to its end H; Libai, Muller & Peres
        2013): ``acceleration`` — the value change of organisations that adopt in both
        arms (``accelerated`` of them earlier with the programme, ``delayed`` later) — and
        ``expansion`` — the value of those that adopt only with the programme
        (``expanded``) less that of those that adopt only without it (``lost``);
        ``incremental_value_lifetime`` = acceleration + expansion; ``roi_lifetime`` with
        it; ``continued_to`` = H. With ``value_per_period`` an expansion that lasts is
        worth more the longer the continuation; accelerations are not.
    """
    if baseline.n != programme.n or baseline.periods != programme.periods:
        raise ValueError("baseline and programme runs must have the same organisations and horizon")
    T = baseline.periods
    a0, a1 = baseline.adoption_period, programme.adoption_period
    v0 = customer_values(a0, referral, T, baseline.leave_period)
    v1 = customer_values(a1, referral, T, programme.leave_period)
    cost_flow = _cost_flow(programme, referral)
    cost = float(cost_flow.sum())
    inc_customers = int(programme.customers[-1] - baseline.customers[-1])
    inc_value = float((v1 - v0).sum())
    net = np.cumsum(value_flow(programme, referral) - value_flow(baseline, referral)) - np.cumsum(cost_flow)
    even = np.flatnonzero((net >= 0) & (np.cumsum(cost_flow) > 0))
    undiscounted = programme.extra.get("programme_cost")
    paid = programme.extra.get("programme_paid_referrals")
    out = {
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
        "break_even_period": float(even[0]) if even.size else float("nan"),
    }
    out.update({f"{k}_at_horizon": v for k, v in _split(a0, a1, v0, v1).items()})
    out.update(losses(baseline, referral, "baseline"))
    out.update(losses(programme, referral, "programme"))
    if continued is None:
        out.update(
            dict.fromkeys(
                (
                    "acceleration",
                    "expansion",
                    "accelerated",
                    "delayed",
                    "expanded",
                    "lost",
                    "incremental_value_lifetime",
                    "roi_lifetime",
                    "continued_to",
                ),
                float("nan"),
            )
        )
        return out
    c0, c1 = continued
    if c0.n != baseline.n or c1.n != baseline.n or c0.periods != c1.periods or c0.periods < T:
        raise ValueError("the continued runs must have the same organisations and one horizon at or after T")
    H = c0.periods
    split = _split(
        c0.adoption_period,
        c1.adoption_period,
        customer_values(c0.adoption_period, referral, H, c0.leave_period),
        customer_values(c1.adoption_period, referral, H, c1.leave_period),
    )
    lifetime_value = split["acceleration"] + split["expansion"]
    out.update(split)
    out.update(
        {"incremental_value_lifetime": lifetime_value, "roi_lifetime": roi(lifetime_value, cost), "continued_to": H}
    )
    return out


RATIO_NAMES = ("roi", "roi_lifetime", "cost_per_incremental_customer", "acceleration_share")

# name: (numerator, denominator, offset, bounds); the ratio is Σ numerator / Σ denominator + offset
_RATIOS = {
    "roi": ("incremental_value", "cost", -1.0, None),
    "roi_lifetime": ("incremental_value_lifetime", "cost", -1.0, None),
    "cost_per_incremental_customer": ("cost", "incremental_customers", 0.0, (0.0, np.inf)),
    "acceleration_share": ("acceleration", "incremental_value_lifetime", 0.0, None),
}


def programme_ratios(table: pd.DataFrame, *, bootstrap: int, rng: np.random.Generator) -> list[dict]:
    """ROI, whole-life ROI, cost per incremental customer and acceleration share of a
    programme, as ratios of totals over replicates, each with a studentised bootstrap interval.

    ``roi`` = Σ(ΔValue − Cost) / ΣCost at the horizon, ``roi_lifetime`` the same with the
    whole-life incremental value, ``cost_per_incremental_customer`` = ΣCost / ΣΔcustomers
    (NaN unless ΣΔcustomers > 0), ``acceleration_share`` = Σ acceleration / Σ whole-life
    incremental value (the part of the programme's value that is customers adopting
    earlier, measured on the continuation; Libai, Muller & Peres 2013; NaN without a
    continuation). ``table`` has one row per replicate with the :func:`programme_economics`
    columns. Intervals: :func:`womlab.studies.intervals.bootstrap_interval` with the
    delta-method standard error of a ratio (replicates resampled whole, all four on the
    same resamples); none below five replicates.

    Returns
    -------
    list of dict
        One per ratio: ``outcome``, ``estimate``, ``low``, ``high``, ``interval``.
    """
    seed = int(rng.integers(2**63))
    n = len(table)
    rows = []
    for name, (num, den, offset, bounds) in _RATIOS.items():
        if num not in table or den not in table:  # a table from before the column existed
            rows.append(
                {
                    "outcome": name,
                    "estimate": np.nan,
                    "low": np.nan,
                    "high": np.nan,
                    "interval": f"none: no {num if num not in table else den} column",
                }
            )
            continue
        x, b = (table[k].to_numpy(dtype=float) for k in (num, den))
        finite = bool(np.isfinite(x).all() and np.isfinite(b).all())
        est = float(x.sum() / b.sum() + offset) if finite and b.sum() > 0 else float("nan")
        if not np.isfinite(est):
            how = "none: undefined (no cost, no incremental customers or no continuation)"
            rows.append({"outcome": name, "estimate": est, "low": np.nan, "high": np.nan, "interval": how})
            continue

        def statistic(i: np.ndarray, x: np.ndarray = x, b: np.ndarray = b, offset: float = offset) -> np.ndarray:
            total = b[i].sum(axis=-1)
            with np.errstate(divide="ignore", invalid="ignore"):
                return np.where(total > 0, x[i].sum(axis=-1) / total + offset, np.nan)

        ci = bootstrap_interval(
            statistic,
            n,
            rng=np.random.default_rng(seed),
            bounds=bounds,
            resamples=bootstrap,
            standard_error=lambda i, x=x, b=b: ratio_standard_error(x[i], b[i]),
        )
        rows.append(
            {
                "outcome": name,
                "estimate": est,
                "low": ci.low,
                "high": ci.high,
                "interval": f"ratio of totals; {ci.describe()}, {bootstrap} resamples of replicates",
            }
        )
    return rows


def check_programme(scenario: Scenario) -> None:
    """Raise ScenarioError unless the scenario has a programme that its engine can run."""
    if not scenario.referral.active:
        raise ScenarioError('referral.enrol must be one of all, share, strategy to evaluate a programme, got "none"')
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
    continued_baseline, continued_programme : list of RunResult
        The same pairs continued past the horizon with the programme off
        (:func:`womlab.studies.continuation.continue_paired`), where acceleration and
        expansion are measured; empty when not continued.
    exhausted : numpy.ndarray, optional
        bool per replicate: the continuation reached the end of both arms' markets.
    """

    scenario: Scenario
    baseline: list[RunResult]
    programme: list[RunResult]
    degrees: list[np.ndarray] = field(default_factory=list)
    bootstrap: int = 2000
    parameters: str = "fixed (the scenario's own)"
    continued_baseline: list[RunResult] = field(default_factory=list)
    continued_programme: list[RunResult] = field(default_factory=list)
    exhausted: np.ndarray | None = None

    @property
    def replicates(self) -> int:
        return len(self.programme)

    def per_replicate(self) -> pd.DataFrame:
        """One row per replicate: the columns of :func:`programme_economics`."""
        ref = self.scenario.referral
        continued = (
            list(zip(self.continued_baseline, self.continued_programme))
            if self.continued_baseline
            else [None] * len(self.programme)
        )
        rows = [
            programme_economics(b, p, ref, continued=c) for b, p, c in zip(self.baseline, self.programme, continued)
        ]
        out = pd.DataFrame(rows)
        out.insert(0, "replicate", np.arange(len(rows)))
        return out

    def summary(self) -> pd.DataFrame:
        """Per outcome: the estimate and its 95 % interval over replicates.

        Totals and counts are means over replicates with a t interval, cut at their
        feasible range where it is known (counts and costs ≥ 0, customers in [0, N]).
        ``roi``, ``roi_lifetime``, ``cost_per_incremental_customer`` and
        ``acceleration_share`` are ratios of totals over all replicates with studentised
        bootstrap intervals (:func:`programme_ratios`; resamples seeded from the scenario's
        seed). The ``interval`` column says how each interval was made, and when it was
        clipped or is missing (fewer than five replicates for a bootstrap, two for a t
        interval).
        """
        table = self.per_replicate()
        n = float(self.scenario.market.organisations)
        bounds = {
            "incremental_customers": (-n, n),
            "customers_baseline": (0.0, n),
            "customers_programme": (0.0, n),
            "cost": (0.0, np.inf),
            "cost_undiscounted": (0.0, np.inf),
            "paid_referrals": (0.0, np.inf),
        }
        for name in ("accelerated", "expanded", "lost"):
            bounds[name] = bounds[f"{name}_at_horizon"] = (0.0, n)
        for name in self._loss_columns():
            bounds[name] = (0.0, n) if not name.startswith("value") else (0.0, np.inf)
        rows = []
        for col in (
            "incremental_customers",
            "incremental_value",
            "cost",
            "cost_undiscounted",
            "paid_referrals",
            "acceleration",
            "expansion",
            "incremental_value_lifetime",
            "accelerated",
            "expanded",
            "lost",
            "acceleration_at_horizon",
            "expansion_at_horizon",
            "accelerated_at_horizon",
            "expanded_at_horizon",
            "lost_at_horizon",
            "customers_baseline",
            "customers_programme",
            *self._loss_columns(),
        ):
            x = table[col].to_numpy(dtype=float)
            ci = t_interval(x, bounds=bounds.get(col))
            rows.append(
                {
                    "outcome": col,
                    "estimate": float(np.nanmean(x)) if np.isfinite(x).any() else float("nan"),
                    "low": ci.low,
                    "high": ci.high,
                    "interval": f"{ci.describe()}, mean over replicates",
                }
            )
        rng = np.random.default_rng(np.random.SeedSequence(self.scenario.seed, spawn_key=(ENROLMENT_STREAM, 1)))
        rows += programme_ratios(table, bootstrap=self.bootstrap, rng=rng)
        be = self.break_even_period()
        rows.append(
            {
                "outcome": "break_even_period",
                "estimate": be,
                "low": np.nan,
                "high": np.nan,
                "interval": "of the mean cumulative curves",
            }
        )
        table = pd.DataFrame(rows)
        table["parameters"] = self.parameters  # fixed, or drawn from a fit's posterior (intervals include it)
        return table

    def _loss_columns(self) -> tuple[str, ...]:
        """Churn and warnings: customers lost to each and the value churn cost, per arm (only where on)."""
        a = self.scenario.adoption
        names = (("former", "value_lost_to_churn") if a.churns else ()) + (("rejecters",) if a.warns else ())
        return tuple(f"{name}_{arm}" for name in names for arm in ("baseline", "programme"))

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
        inc = np.vstack(
            [np.cumsum(value_flow(p, ref) - value_flow(b, ref)) for b, p in zip(self.baseline, self.programme)]
        )
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
    lifetime: int | None = None,
    network: GivenNetwork | None = None,
) -> ProgrammeStudy:
    """Evaluate the scenario's referral programme against no programme, on paired replicates.

    The baseline is the same scenario with ``referral.enrol = "none"``; both run through
    :func:`womlab.studies.continuation.continue_paired` (common random numbers): past the
    horizon with the programme off, for the split into acceleration and expansion, and
    cut back to the horizon for everything else (the same runs as to the horizon alone).

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
    lifetime : int, optional
        Periods the continuation runs past the horizon; defaults to ``referral.lifetime``,
        and without it until the baseline's market is exhausted.

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
    scenario = _valued(scenario)
    replicates = scenario.run.replicates if replicates is None else replicates
    jobs = scenario.run.jobs if jobs is None else jobs
    if replicates < 1:
        raise ScenarioError(f"replicates must be a whole number >= 1, got {replicates}")
    given = None if network is None else as_network(network, scenario.market.organisations)
    baseline = scenario.replace("referral.enrol", "none")
    lifetime = scenario.referral.lifetime if lifetime is None else lifetime
    cont = continue_paired(
        {"baseline": baseline, "programme": scenario},
        replicates,
        lifetime=lifetime,
        jobs=jobs,
        progress=progress,
        network=given,
        vary=draws,
    )
    runs = cont.at_horizon()
    degs = []
    if degrees:
        for r in range(replicates):
            at = scenario if draws is None else scenario.replace(draws((r,)))
            net = (
                given
                if given is not None
                else build_network(at, np.random.default_rng(streams(scenario.seed, (r,)).network))
            )
            degs.append(net.degree())
    return ProgrammeStudy(
        scenario=scenario,
        baseline=runs["baseline"],
        programme=runs["programme"],
        degrees=degs,
        continued_baseline=cont.runs["baseline"],
        continued_programme=cont.runs["programme"],
        exhausted=cont.exhausted,
        parameters="fixed (the scenario's own)"
        if draws is None
        else "drawn from the fit's posterior per replicate, the same for baseline and programme",
    )
