"""Which growth lever, when: each lever's value against the stage of the S-curve at which it is pulled.

A common piece of practice advice (common practice, no single source) says that early in a
product's S-curve word of mouth is the lever to invest in (reference customers, referral
programmes), and late, when the available market runs out, expanding the market (new regions,
new segments). :func:`lever_timing` measures it for one market: every lever of ``[levers]`` is
pulled at the end of each period t of ``pulled_at`` (acting from t + 1 on), each (lever, t)
arm paired with one baseline on every replicate's one network and random streams (common random
numbers, :func:`womlab.studies.run_paired`), so that differences are the lever's and its
timing's. Outcomes per arm and replicate: incremental customers at the horizon, incremental
discounted value (the referral programme's economics, :func:`womlab.programme_economics`),
cost, ROI, and the split into acceleration and expansion on a continuation past the horizon
with every lever off (:func:`womlab.studies.continuation.continue_paired`; Libai, Muller &
Peres 2013), so that late adopters the baseline would also win are not called expansion.

The levers are a registry (:data:`LEVERS`, :func:`register_lever`): a name, a function that
says how the scenario changes when the lever is pulled at t, a cost, and a check of its
settings. Built in:

* ``referral``: the scenario's ``[referral]`` programme, started at t + 1 (for as long as it
  ran from its own start; the baseline has none). Cost: its payments, plus ``cost`` (a
  one-off) at t + 1.
* ``reference_customers``: ``count`` more customers won in period t + 1, the first that the
  seeding strategy ``strategy`` (default ``hubs``) ranks among the organisations not customers
  by then (``[[reference]]``). Cost: ``cost_each`` per organisation at t + 1.
* ``campaign``: external influence ``external`` (p itself) or ``multiplier`` × p for
  ``periods`` periods from t + 1 (cut at the horizon), on the whole market or on ``region``
  or ``segment`` (``[[campaign]]``). Cost: ``cost_per_period`` in each of its periods.
* ``open_region``: the ``region`` or ``segment`` listed in ``market.opens`` opened at t + 1
  instead of its own period (or ``"never"``); pulled at or after its own opening it changes
  nothing and costs nothing. Cost: ``cost`` at t + 1.

Every cost is discounted as the programme's payments are: a cost in period s counts
(1 + r)^−s, r = ``referral.discount_rate``; values are ``referral.value_per_period`` or
``referral.lifetime_value``. ROI = (ΔValue − Cost) / Cost at the horizon.

References
----------
Libai, B., Muller, E. & Peres, R. (2013). Decomposing the value of word-of-mouth seeding
programs: acceleration versus expansion. *Journal of Marketing Research* 50(2), 161–176.

Bass, F. M. (1969). A new product growth for model consumer durables. *Management Science*
15(5), 215–227.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from womlab.aggregate import aggregate_curve
from womlab.dynamics import ENROLMENT_STREAM, RunResult
from womlab.errors import ScenarioError
from womlab.networks.given import GivenNetwork, as_network
from womlab.scenario import Scenario
from womlab.scenario.checks import coerce, fail, non_negative, unknown_field
from womlab.scenario.levers import NOT_YET
from womlab.scenario.markets import openings
from womlab.scenario.registry import register_lever_name, strategy_names
from womlab.studies.continuation import continue_paired
from womlab.studies.intervals import bootstrap_interval, t_interval
from womlab.studies.metrics import discount_factors
from womlab.studies.presenting import present
from womlab.studies.programme import check_programme, programme_economics, roi

__all__ = ["Lever", "LEVERS", "register_lever", "lever_arm", "lever_timing", "LeverStudy"]


@dataclass(frozen=True)
class Lever:
    """One lever of the registry.

    Attributes
    ----------
    name : str
    changes : callable
        ``(scenario, t, settings) -> dict`` of dotted field changes to the baseline when the
        lever is pulled at the end of period t (acting from t + 1); {} when it changes nothing.
    cost : callable
        ``(scenario, t, settings) -> numpy.ndarray``: its undiscounted cost in each period
        0..T, besides any programme payments the run records.
    settings : dict
        Setting name → (type, default); a setting not listed is refused.
    check : callable, optional
        ``(scenario, settings, dotted)``: raises ScenarioError naming the field when the lever
        cannot be pulled in this scenario.
    """

    name: str
    changes: Callable[[Scenario, int, Mapping[str, Any]], dict[str, Any]]
    cost: Callable[[Scenario, int, Mapping[str, Any]], np.ndarray]
    settings: Mapping[str, tuple[type, Any]] = field(default_factory=dict)
    check: Callable[[Scenario, Mapping[str, Any], str], None] | None = None

    def resolved(self, given: Mapping[str, Any], dotted: str) -> dict[str, Any]:
        """``given`` checked against :attr:`settings`, defaults filled in."""
        out = {}
        for key, value in given.items():
            if key not in self.settings:
                unknown_field(f"{dotted}.{key}", list(self.settings))
            kind = self.settings[key][0]
            out[key] = value if kind is object else coerce(value, kind, f"{dotted}.{key}")
        for key, (_, default) in self.settings.items():
            out.setdefault(key, default)
        return out


#: The levers by name (:func:`register_lever` adds one).
LEVERS: dict[str, Lever] = {}


def register_lever(
    name: str,
    changes: Callable[[Scenario, int, Mapping[str, Any]], dict[str, Any]],
    *,
    cost: Callable[[Scenario, int, Mapping[str, Any]], np.ndarray],
    settings: Mapping[str, tuple[type, Any]] | None = None,
    check: Callable[[Scenario, Mapping[str, Any], str], None] | None = None,
) -> Lever:
    """Add a lever to :data:`LEVERS` (and its name to those ``[levers]`` accepts).

    Examples
    --------
    A lever that raises word of mouth by half from the period on would need a calendar for q;
    a lever that gives away nothing shows the form:

    >>> import numpy as np
    >>> lever = register_lever("nothing", lambda s, t, o: {}, cost=lambda s, t, o: np.zeros(s.run.periods + 1))
    >>> "nothing" in LEVERS
    True
    >>> _ = LEVERS.pop("nothing")
    """
    lever = Lever(name, changes, cost, dict(settings or {}), check)
    LEVERS[name] = lever

    def scenario_check(scenario: Scenario, given: Mapping[str, Any], dotted: str) -> None:
        resolved = lever.resolved(given, dotted)
        if lever.check is not None:
            lever.check(scenario, resolved, dotted)

    register_lever_name(name, scenario_check)
    return lever


def _one_off(scenario: Scenario, period: int, amount: float) -> np.ndarray:
    out = np.zeros(scenario.run.periods + 1)
    if amount and 0 <= period <= scenario.run.periods:
        out[period] = amount
    return out


# ----------------------------------------------------------------------------- referral
def _referral_changes(s: Scenario, t: int, o: Mapping[str, Any]) -> dict[str, Any]:
    ref, T = s.referral, s.run.periods
    length = ref.last_period(T) - ref.start
    return {"referral.enrol": ref.enrol, "referral.start": t + 1, "referral.end": min(T, t + 1 + length)}


def _referral_check(s: Scenario, o: Mapping[str, Any], dotted: str) -> None:
    if not s.referral.active:
        fail(
            "referral.enrol",
            s.referral.enrol,
            f"one of all, share, strategy for {dotted} (the programme the lever starts; the baseline runs without it)",
        )
    check_programme(s)  # an engine that runs programmes
    non_negative(f"{dotted}.cost", float(o["cost"]))


register_lever(
    "referral",
    _referral_changes,
    cost=lambda s, t, o: _one_off(s, t + 1, float(o["cost"])),
    settings={"cost": (float, 0.0)},
    check=_referral_check,
)


# ----------------------------------------------------------------------------- reference customers
def _reference_changes(s: Scenario, t: int, o: Mapping[str, Any]) -> dict[str, Any]:
    if int(o["count"]) == 0:
        return {}
    entry = {"period": t + 1, "count": int(o["count"]), "strategy": str(o["strategy"])}
    return {"reference": [*s.reference.to_table(), entry]}


def _reference_check(s: Scenario, o: Mapping[str, Any], dotted: str) -> None:
    if not 0 <= int(o["count"]) <= s.market.organisations:
        fail(
            f"{dotted}.count",
            o["count"],
            f"a whole number between 0 and market.organisations = {s.market.organisations}",
        )
    if strategy_names() and o["strategy"] not in strategy_names():
        fail(f"{dotted}.strategy", o["strategy"], f"one of {', '.join(strategy_names())}")
    non_negative(f"{dotted}.cost_each", float(o["cost_each"]))
    if int(o["count"]) and s.adoption.rule == "capped":
        fail(
            "adoption.rule",
            "capped",
            f"share, count, threshold or cascade for {dotted} (the capped rule's ceiling "
            "would hold back the customers a vendor wins)",
        )


register_lever(
    "reference_customers",
    _reference_changes,
    cost=lambda s, t, o: _one_off(s, t + 1, float(o["cost_each"]) * int(o["count"])),
    settings={"count": (int, 5), "strategy": (str, "hubs"), "cost_each": (float, 0.0)},
    check=_reference_check,
)


# ----------------------------------------------------------------------------- campaign
def _campaign_window(s: Scenario, t: int, o: Mapping[str, Any]) -> tuple[int, int]:
    return t + 1, min(s.run.periods, t + int(o["periods"]))


def _campaign_changes(s: Scenario, t: int, o: Mapping[str, Any]) -> dict[str, Any]:
    first, last = _campaign_window(s, t, o)
    entry: dict[str, Any] = {"from": first, "to": last}
    for key in ("external", "multiplier", "region", "segment"):
        if o.get(key) is not None:
            entry[key] = o[key]
    return {"campaign": [*s.campaign.to_table(), entry]}


def _campaign_cost(s: Scenario, t: int, o: Mapping[str, Any]) -> np.ndarray:
    out = np.zeros(s.run.periods + 1)
    first, last = _campaign_window(s, t, o)
    out[first : last + 1] = float(o["cost_per_period"])
    return out


def _campaign_check(s: Scenario, o: Mapping[str, Any], dotted: str) -> None:
    if int(o["periods"]) < 1:
        fail(f"{dotted}.periods", o["periods"], "a whole number of periods >= 1")
    if (o.get("external") is None) == (o.get("multiplier") is None):
        raise ScenarioError(
            f"{dotted} needs exactly one of external (p while it runs) and multiplier (times "
            f"adoption.external), got external = {o.get('external')!r} and "
            f"multiplier = {o.get('multiplier')!r}"
        )
    for key in ("external", "multiplier", "cost_per_period"):
        if o.get(key) is not None:
            non_negative(f"{dotted}.{key}", float(o[key]))
    if o.get("segment") is not None:
        s.segments.code(str(o["segment"]), f"{dotted}.segment")


register_lever(
    "campaign",
    _campaign_changes,
    cost=_campaign_cost,
    settings={
        "periods": (int, 3),
        "external": (float | None, None),
        "multiplier": (float | None, None),
        "region": (object, None),
        "segment": (str | None, None),
        "cost_per_period": (float, 0.0),
    },
    check=_campaign_check,
)


# ----------------------------------------------------------------------------- open a region or segment
def _opening_index(s: Scenario, o: Mapping[str, Any], dotted: str) -> int:
    entries = openings(s.market)
    for i, entry in enumerate(entries):
        if o.get("region") is not None and entry.region is not None and str(entry.region) == str(o["region"]):
            return i
        if o.get("segment") is not None and entry.segment == o["segment"]:
            return i
    key = "region" if o.get("region") is not None else "segment"
    listed = (
        ", ".join(
            f"{'region' if e.region is not None else 'segment'} {e.region if e.region is not None else e.segment!r}"
            for e in entries
        )
        or "none listed"
    )
    fail(
        f"{dotted}.{key}",
        o.get(key),
        f'a region or segment that market.opens lists with its own period or "never" ({listed})',
    )


def _open_changes(s: Scenario, t: int, o: Mapping[str, Any]) -> dict[str, Any]:
    entries = list(s.market.opens if isinstance(s.market.opens, (list, tuple)) else [s.market.opens])
    i = _opening_index(s, o, "levers.open_region")
    own = openings(s.market)[i].period
    if own is not None and own <= t + 1:
        return {}  # open by then anyway
    entries[i] = {**dict(entries[i]), "period": t + 1}
    return {"market.opens": entries}


def _open_cost(s: Scenario, t: int, o: Mapping[str, Any]) -> np.ndarray:
    return _one_off(s, t + 1, float(o["cost"]) if _open_changes(s, t, o) else 0.0)


def _open_check(s: Scenario, o: Mapping[str, Any], dotted: str) -> None:
    if (o.get("region") is None) == (o.get("segment") is None):
        raise ScenarioError(
            f"{dotted} needs exactly one of region and segment (the part of market.opens it opens), "
            f"got region = {o.get('region')!r} and segment = {o.get('segment')!r}"
        )
    _opening_index(s, o, dotted)
    non_negative(f"{dotted}.cost", float(o["cost"]))


register_lever(
    "open_region",
    _open_changes,
    cost=_open_cost,
    settings={"region": (object, None), "segment": (str | None, None), "cost": (float, 0.0)},
    check=_open_check,
)


# ----------------------------------------------------------------------------- the study
def _baseline(scenario: Scenario) -> Scenario:
    """The scenario without a programme and without ``[levers]`` (which describes the study, not a run)."""
    changes: dict[str, Any] = {"levers": {}}
    if scenario.referral.active:
        changes["referral.enrol"] = "none"
    return scenario.replace(changes) if scenario.levers.active or scenario.referral.active else scenario


def lever_arm(scenario: Scenario, lever: str, period: int, settings: Mapping[str, Any] | None = None) -> Scenario:
    """The baseline (no programme) with ``lever`` pulled at the end of ``period``.

    ``settings`` default to the lever's table in ``[levers]`` (and its defaults).

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"run": {"periods": 10}})
    >>> arm = lever_arm(s, "campaign", 4, {"periods": 3, "multiplier": 5.0})
    >>> arm.campaign.entries[0].first, arm.campaign.entries[0].last
    (5, 7)
    """
    spec = _lever(lever)
    dotted = f"levers.{lever}"
    given = scenario.levers.settings(lever) if settings is None else dict(settings)
    resolved = spec.resolved(given, dotted)
    if spec.check is not None:
        spec.check(scenario, resolved, dotted)
    T = scenario.run.periods
    if not 0 <= int(period) < T:
        fail("levers.pulled_at", period, f"a period between 0 and run.periods - 1 = {T - 1}")
    base = _baseline(scenario)
    changes = spec.changes(scenario, int(period), resolved)
    if not changes:
        return base
    try:
        return base.replace(changes)
    except ScenarioError as err:  # e.g. the lever's campaign overlaps one of the scenario's own
        raise ScenarioError(f"{dotted} pulled at the end of period {period}: {err}") from None


def _lever(name: str) -> Lever:
    if name in LEVERS:
        return LEVERS[name]
    why = f" ({name}: {NOT_YET[name]})" if name in NOT_YET else ""
    fail("levers", name, f"one of {', '.join(LEVERS)}{why}")


def _discounted(flow: np.ndarray, rate: float, periods: int) -> float:
    return float(np.sum(flow[: periods + 1] * discount_factors(rate, periods)))


@dataclass(eq=False)
class LeverStudy:
    """Each lever's value against the period it is pulled, on paired replicates.

    Attributes
    ----------
    scenario : Scenario
        The scenario as given (the baseline is it without a programme).
    levers : tuple of str
    pulled_at : tuple of int
    rows : pandas.DataFrame
        One row per lever, period pulled and replicate (see :meth:`per_replicate`).
    baseline : list of RunResult
        The baseline's runs to the horizon, in replicate order.
    exhausted : numpy.ndarray
        bool per replicate: the continuation reached the end of every arm's market.
    continued_to : int
        The continuation's longest horizon.
    """

    scenario: Scenario
    levers: tuple[str, ...]
    pulled_at: tuple[int, ...]
    rows: pd.DataFrame
    baseline: list[RunResult]
    exhausted: np.ndarray
    continued_to: int
    bootstrap: int = 2000
    parameters: str = "fixed (the scenario's own)"

    @property
    def replicates(self) -> int:
        return len(self.baseline)

    def per_replicate(self) -> pd.DataFrame:
        """One row per lever, period pulled and replicate: ``incremental_customers``,
        ``incremental_value`` (discounted, to the horizon), ``cost`` (discounted: payments plus
        the lever's own cost), ``roi``, ``acceleration``, ``expansion`` and
        ``incremental_value_lifetime`` (on the continuation), and the columns of
        :func:`womlab.programme_economics`."""
        return self.rows.copy()

    def table(self) -> pd.DataFrame:
        """Per lever and period pulled: means over replicates with 95 % t intervals of
        incremental customers, incremental value, cost, acceleration, expansion and whole-life
        incremental value; ROI as a ratio of totals Σ(ΔValue − Cost) / ΣCost (NaN without cost);
        the baseline's stage at the period (:meth:`stage`)."""
        out = []
        stage = self.stage().set_index("pulled_at")
        for (lever, t), g in self.rows.groupby(["lever", "pulled_at"], sort=False):
            row: dict[str, Any] = {"lever": lever, "pulled_at": int(t)}
            for col in (
                "incremental_customers",
                "incremental_value",
                "cost",
                "acceleration",
                "expansion",
                "incremental_value_lifetime",
            ):
                x = g[col].to_numpy(dtype=float)
                ci = t_interval(x)
                row[col] = float(np.mean(x))
                row[f"{col}_low"], row[f"{col}_high"] = ci.low, ci.high
            cost = float(g["cost"].sum())
            row["roi"] = roi(float(g["incremental_value"].sum()), cost)
            row["share_reached"] = float(stage.loc[int(t), "share_reached"])
            row["stage"] = stage.loc[int(t), "stage"]
            out.append(row)
        return pd.DataFrame(out)

    def _matrix(self, by: str) -> np.ndarray:
        """(periods pulled, levers, replicates) of ``by`` per replicate (ROI per replicate for ``roi``)."""
        r = self.rows
        values = r[by].to_numpy(dtype=float) if by != "roi" else r["roi"].to_numpy(dtype=float)
        out = np.full((len(self.pulled_at), len(self.levers), self.replicates), np.nan)
        ti = {t: i for i, t in enumerate(self.pulled_at)}
        li = {name: i for i, name in enumerate(self.levers)}
        for t, lever, rep, v in zip(r["pulled_at"], r["lever"], r["replicate"], values):
            out[ti[t], li[lever], rep] = v
        return out

    def best(self, by: str = "incremental_value") -> pd.DataFrame:
        """Per period pulled: the lever of highest mean ``by`` (``incremental_value``,
        ``incremental_value_lifetime`` or ``roi``) and the probability it is best, the share
        of replicates in which it has the highest value (ties shared).

        The crossover is the first period pulled whose best lever differs from the first
        period's; :meth:`crossover` gives it with a bootstrap interval."""
        if by not in ("incremental_value", "incremental_value_lifetime", "roi"):
            fail("by", by, "one of incremental_value, incremental_value_lifetime, roi")
        m = self._matrix(by)
        rows = []
        for i, t in enumerate(self.pulled_at):
            with warnings.catch_warnings():  # a lever with no cost has no ROI: its mean is NaN, not best
                warnings.simplefilter("ignore", RuntimeWarning)
                means = np.nanmean(m[i], axis=1)
            k = int(np.nanargmax(means)) if np.isfinite(means).any() else -1
            top = np.nanmax(np.where(np.isfinite(m[i]), m[i], -np.inf), axis=0)
            wins = (m[i] == top) & np.isfinite(m[i])
            share = wins / np.maximum(wins.sum(axis=0), 1)
            rows.append(
                {
                    "pulled_at": t,
                    "best": self.levers[k] if k >= 0 else "",
                    by: float(means[k]) if k >= 0 else float("nan"),
                    "probability_best": float(share[k].mean()) if k >= 0 else float("nan"),
                }
            )
        return pd.DataFrame(rows)

    def crossover(self, by: str = "incremental_value") -> dict[str, Any]:
        """The first period pulled at which the best lever (highest mean ``by``) is no longer the
        one best at the first period pulled: ``period`` (NaN if it never changes), ``from``,
        ``to``, and a BCa bootstrap interval over replicates (:func:`womlab.studies.intervals.bootstrap_interval`,
        replicates resampled whole; resamples in which it never changes count as the last period
        pulled + 1, and the ``note`` says how often that was)."""
        m = self._matrix(by)
        periods = np.asarray(self.pulled_at, dtype=float)
        never = periods[-1] + 1

        def statistic(i: np.ndarray) -> np.ndarray:
            i = np.asarray(i)
            sub = m[:, :, i]  # (P, L, ..., R)
            with warnings.catch_warnings():  # a lever with no cost has no ROI: its mean is NaN, not best
                warnings.simplefilter("ignore", RuntimeWarning)
                means = np.nanmean(sub, axis=-1)  # (P, L, ...)
            best = np.argmax(np.where(np.isfinite(means), means, -np.inf), axis=1)  # (P, ...)
            changed = best != best[0]
            first = np.where(changed.any(axis=0), np.argmax(changed, axis=0), -1)
            return np.where(first >= 0, periods[np.maximum(first, 0)], never)

        point = float(statistic(np.arange(self.replicates)))
        best = self.best(by)
        out: dict[str, Any] = {
            "by": by,
            "from": best["best"].iloc[0],
            "period": point if point != never else float("nan"),
        }
        out["to"] = best.loc[best["pulled_at"] == point, "best"].iloc[0] if point != never else ""
        rng = np.random.default_rng(np.random.SeedSequence(self.scenario.seed, spawn_key=(ENROLMENT_STREAM, 18)))
        if point == never:
            out.update(low=np.nan, high=np.nan, interval="none: the best lever never changes")
            return out
        ci = bootstrap_interval(
            statistic, self.replicates, rng=rng, resamples=self.bootstrap, bounds=(float(periods[0]), float(never))
        )
        out.update(low=ci.low, high=ci.high, interval=f"{ci.describe()}, {self.bootstrap} resamples of replicates")
        return out

    def stage(self) -> pd.DataFrame:
        """The baseline's stage at each period pulled: ``share_reached`` (mean customer share at
        the end of the period), ``share_of_open_market`` (of the organisations in the market then,
        which differs when parts of it open later or never), ``new_customers`` (mean that period), ``stage`` (``before peak``,
        ``at peak`` or ``after peak`` of the mean new customers per period, ``peak_period``),
        and the aggregate model's inflection period (``aggregate_peak_period``: the period of
        most new customers in :func:`womlab.aggregate_curve`, NaN where the rule has none)."""
        shares = np.vstack([r.share for r in self.baseline])
        mean = shares.mean(axis=0)
        open_share = np.vstack([r.share_of_current_market for r in self.baseline]).mean(axis=0)
        new = np.diff(mean, prepend=mean[0])
        peak = int(np.argmax(new[1:]) + 1)
        agg = aggregate_curve(_baseline(self.scenario))
        agg_new = np.diff(agg)
        agg_peak = float(np.argmax(agg_new) + 1) if np.isfinite(agg_new).all() else float("nan")
        rows = []
        for t in self.pulled_at:
            where = "before peak" if t < peak else ("at peak" if t == peak else "after peak")
            rows.append(
                {
                    "pulled_at": t,
                    "share_reached": float(mean[t]),
                    "share_of_open_market": float(open_share[t]),
                    "new_customers": float(new[t]),
                    "stage": where,
                    "peak_period": peak,
                    "aggregate_peak_period": agg_peak,
                }
            )
        return pd.DataFrame(rows)

    def curve(self) -> pd.DataFrame:
        """The baseline's mean customer share per period, with its 5–95 % band."""
        shares = np.vstack([r.share for r in self.baseline])
        return pd.DataFrame(
            {
                "period": np.arange(shares.shape[1]),
                "share": shares.mean(axis=0),
                "share_q05": np.quantile(shares, 0.05, axis=0),
                "share_q95": np.quantile(shares, 0.95, axis=0),
            }
        )

    def figure(self, by: str = "incremental_value", **kwargs: Any) -> Any:
        """Each lever's ``by`` against the period pulled, the baseline S-curve beneath with its
        stage and the crossover marked (a matplotlib Figure; drawn by :mod:`womlab.results`)."""
        return present(self, "figure", by=by, **kwargs)

    def save(self, out: Any, **kwargs: Any) -> Any:
        """Write the study's results folder (:func:`womlab.results.save_levers`)."""
        return present(self, "save", out, **kwargs)


def lever_timing(
    scenario: Scenario | Any,
    levers: Iterable[str] | None = None,
    pulled_at: Iterable[int] | None = None,
    replicates: int | None = None,
    *,
    jobs: int | None = None,
    lifetime: int | None = None,
    progress: bool = False,
    network: GivenNetwork | None = None,
    bootstrap: int = 2000,
) -> LeverStudy:
    """Value of each growth lever against the period it is pulled, on paired replicates.

    Parameters
    ----------
    scenario : Scenario or Fit
        Its ``[levers]`` section gives each lever's settings (and defaults for ``levers``,
        ``pulled_at``, ``lifetime``); ``[referral]`` gives the economics (value per customer,
        discount rate) and the programme the ``referral`` lever starts. A fit
        (:func:`womlab.fit_observed`) stands for its scenario at the posterior, each replicate
        drawing its parameters from the posterior, the same draw for every arm.
    levers : iterable of str, optional
        Names from :data:`LEVERS`; default those ``[levers]`` sets.
    pulled_at : iterable of int, optional
        Periods 0..T − 1 at whose end each lever is pulled; default ``levers.pulled_at``, else
        every period.
    replicates : int, optional
        Default ``run.replicates``.
    jobs : int, optional
        Worker processes (default ``run.jobs``); results do not depend on it.
    lifetime : int, optional
        Periods past the horizon for the split; default ``levers.lifetime``, else until every
        arm's market is exhausted.
    progress : bool
        Show a progress bar.
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        Your own network for every replicate and arm.
    bootstrap : int
        Resamples for the crossover's interval.

    Returns
    -------
    LeverStudy

    Raises
    ------
    ScenarioError
        An unknown lever, a period outside 0..T − 1, a lever whose section the scenario lacks
        (``open_region`` with nothing in ``market.opens``, ``referral`` without a programme).

    References
    ----------
    Libai, B., Muller, E. & Peres, R. (2013). Decomposing the value of word-of-mouth seeding
    programs: acceleration versus expansion. *Journal of Marketing Research* 50(2), 161–176.

    Examples
    --------
    >>> from womlab import Scenario, lever_timing
    >>> s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 2},
    ...     "network": {"kind": "random", "mean_degree": 6}, "run": {"periods": 12},
    ...     "levers": {"campaign": {"periods": 2, "multiplier": 5.0, "cost_per_period": 1.0}}})
    >>> study = lever_timing(s, pulled_at=[0, 6], replicates=3, lifetime=12)
    >>> study.table()[["lever", "pulled_at"]].values.tolist()
    [['campaign', 0], ['campaign', 6]]
    """
    draws = None
    if not isinstance(scenario, Scenario):  # a fit: parameters drawn from its posterior per replicate
        draws, scenario = scenario.posterior_draws(), scenario.scenario()
    spec = scenario.levers
    names = tuple(dict.fromkeys((levers,) if isinstance(levers, str) else (spec.names if levers is None else levers)))
    if not names:
        raise ScenarioError(
            f"levers must name at least one lever (a table in [levers] or levers=[...]); allowed: {', '.join(LEVERS)}"
        )
    for name in names:
        _lever(name)
    T = scenario.run.periods
    periods = tuple(int(t) for t in (spec.pulled_at or range(T) if pulled_at is None else pulled_at))
    if not periods:
        fail("levers.pulled_at", [], f"a non-empty list of periods between 0 and run.periods - 1 = {T - 1}")
    replicates = scenario.run.replicates if replicates is None else int(replicates)
    if replicates < 1:
        raise ScenarioError(f"replicates must be a whole number >= 1, got {replicates}")
    jobs = scenario.run.jobs if jobs is None else jobs
    lifetime = spec.lifetime if lifetime is None else lifetime
    base = _baseline(scenario)
    arms: dict[str, Scenario] = {"baseline": base}
    costs: dict[str, np.ndarray] = {}
    for name in names:
        resolved = LEVERS[name].resolved(spec.settings(name), f"levers.{name}")
        for t in periods:
            key = f"{name}@{t}"
            arms[key] = lever_arm(scenario, name, t, spec.settings(name))
            costs[key] = LEVERS[name].cost(scenario, t, resolved)
    given = None if network is None else as_network(network, scenario.market.organisations)
    cont = continue_paired(arms, replicates, lifetime=lifetime, jobs=jobs, progress=progress, network=given, vary=draws)
    at_t = cont.at_horizon()
    ref = scenario.referral
    rows = []
    for name in names:
        for t in periods:
            key = f"{name}@{t}"
            own = _discounted(costs[key], ref.discount_rate, T)
            for r in range(replicates):
                e = programme_economics(
                    at_t["baseline"][r], at_t[key][r], ref, continued=(cont.runs["baseline"][r], cont.runs[key][r])
                )
                e["payments"] = e["cost"]
                e["lever_cost"] = own
                e["cost"] = e["payments"] + own
                e["roi"] = roi(e["incremental_value"], e["cost"])
                e["roi_lifetime"] = roi(e["incremental_value_lifetime"], e["cost"])
                rows.append({"lever": name, "pulled_at": t, "replicate": r, **e})
    return LeverStudy(
        scenario=scenario,
        levers=names,
        pulled_at=periods,
        rows=pd.DataFrame(rows),
        baseline=at_t["baseline"],
        exhausted=cont.exhausted,
        continued_to=cont.periods,
        bootstrap=bootstrap,
        parameters="fixed (the scenario's own)"
        if draws is None
        else "drawn from the fit's posterior per replicate, the same for every arm",
    )
