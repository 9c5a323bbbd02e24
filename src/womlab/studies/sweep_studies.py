"""What a sweep point runs: an open registry of studies (``[sweep] study = "..."``).

A sweep study is a name and four things (:class:`SweepStudy`):

* ``outcomes(scenario)``: the columns each replicate's row holds in the results store
  (name, whole number or not, a label for tables and figures);
* ``run(scenario, key, network, curves)``: one replicate of one point — its runs through
  :func:`womlab.studies.runner.run_paired`, the one paired mechanism, on spawn key
  ``key = (point, replicate)`` — reduced to one row of those outcomes (and, for a study
  that keeps them, a per-period curve);
* ``statistics(scenario, table, point)``: what a point's replicates say — by default the
  mean of every outcome with its 95 % Student-t interval; a study adds or replaces
  statistics (a ratio of totals, a lift against a baseline);
* ``shown(scenario)``: the statistics the report draws.

Three are built in:

``run``
    One run per replicate: customers and satisfied customers at the horizon, final share,
    t10, t50, t90, peak period and peak new-customer share
    (:func:`womlab.studies.metrics.curve_metrics`).
``programme``
    The ``[referral]`` programme against the same scenario without it, paired (as
    :func:`womlab.evaluate_programme`): every column of
    :func:`womlab.studies.programme.programme_economics` per replicate, acceleration and
    expansion measured on the pair continued past the horizon with the programme off
    (:func:`womlab.studies.continuation.continue_paired`); per point ROI, whole-life ROI,
    cost per incremental customer and acceleration share as ratios of totals
    (:func:`womlab.studies.programme.programme_ratios`).
``seeding``
    Every strategy of ``study.strategies`` (``random`` first), paired (as
    :func:`womlab.compare_strategies`): the outcomes of
    :func:`womlab.studies.seeding_study.run_outcomes` per strategy, in columns
    ``outcome[strategy]``; per point the lift of each strategy against random on
    ``study.outcome`` (:func:`womlab.studies.seeding_study.lift_statistics`: ratio of means
    and mean difference with studentised paired-bootstrap intervals, Wilcoxon p-value, paired
    and unpaired half-widths).

A new study registers itself with :func:`register_sweep_study` when its module is imported
(``import womlab`` imports every study); its name is then valid in ``sweep.study``.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import partial
from typing import Any

import numpy as np
import pandas as pd

from womlab.dynamics import ENROLMENT_STREAM
from womlab.errors import ScenarioError
from womlab.networks import ReferralNetwork
from womlab.scenario import Scenario
from womlab.scenario.registry import register_sweep_study_name
from womlab.studies.continuation import continue_paired
from womlab.studies.intervals import FewReplicatesWarning
from womlab.studies.metrics import curve_metrics, mean_interval
from womlab.studies.programme import (
    check_programme,
    programme_economics,
    programme_ratios,
    with_lifetime_value_from_churn,
)
from womlab.studies.runner import run_paired
from womlab.studies.seeding_study import BOOTSTRAP_KEY, lift_statistics, run_outcomes
from womlab.studies.seeding_study import OUTCOMES as SEEDING_OUTCOMES

__all__ = ["Outcome", "SweepStudy", "register_sweep_study", "sweep_study", "sweep_studies", "mean_statistics"]


@dataclass(frozen=True)
class Outcome:
    """One column of a sweep's runs table: ``name``, ``kind`` (``"int"`` or ``"float"``) and a plain ``label``."""

    name: str
    kind: str
    label: str


Row = dict[str, Any]
Curve = dict[str, np.ndarray]


@dataclass(frozen=True, eq=False)
class SweepStudy:
    """A study a sweep point can run (see the module notes).

    Parameters
    ----------
    name : str
        The value of ``sweep.study``.
    outcomes : callable
        ``outcomes(scenario) -> tuple of Outcome``: the columns of a replicate's row. They
        may depend on the scenario (the seeding study has one set per strategy) but not on
        a swept field.
    run : callable
        ``run(scenario, key, network, curves) -> (row, curve or None)``: replicate
        ``key[1]`` of point ``key[0]``. A module-level function (it is sent to workers).
    statistics : callable, optional
        ``statistics(scenario, table, point) -> list of dict`` with keys ``outcome``,
        ``estimate``, ``low``, ``high``, ``interval`` (and optionally ``sd``, ``reached``);
        added to (or replacing, by name) the means of :func:`mean_statistics`.
    shown : callable
        ``shown(scenario) -> tuple of str``: the statistics the report draws.
    labels : callable, optional
        ``labels(scenario) -> dict``: plain labels of the statistics that are not outcomes.
    check : callable, optional
        ``check(scenario_at_point)`` raises ScenarioError when a point cannot run the study.
    fixed_fields : dict
        Dotted fields the study sets itself (a sweep axis may not vary them) → why.
    curves : bool
        Whether the study can keep per-period curves (``curves=True`` of a sweep).
    """

    name: str
    outcomes: Callable[[Scenario], tuple[Outcome, ...]]
    run: Callable[[Scenario, tuple[int, int], ReferralNetwork | None, bool], tuple[Row, Curve | None]]
    shown: Callable[[Scenario], tuple[str, ...]]
    statistics: Callable[[Scenario, pd.DataFrame, int], list[dict]] | None = None
    labels: Callable[[Scenario], dict[str, str]] | None = None
    check: Callable[[Scenario], None] | None = None
    fixed_fields: dict[str, str] = field(default_factory=dict)
    curves: bool = False

    def all_labels(self, scenario: Scenario) -> dict[str, str]:
        """Plain labels of every outcome and statistic."""
        out = {o.name: o.label for o in self.outcomes(scenario)}
        out.update(self.labels(scenario) if self.labels is not None else {})
        return out

    def point_statistics(self, scenario: Scenario, table: pd.DataFrame, point: int) -> list[dict]:
        """The statistics of one point from its finished replicates' rows (``table``)."""
        rows = {r["outcome"]: r for r in mean_statistics(table, [o.name for o in self.outcomes(scenario)])}
        if self.statistics is not None:
            for r in self.statistics(scenario, table, point):
                rows[r["outcome"]] = {"sd": np.nan, "reached": len(table), **r}
        return list(rows.values())


_STUDIES: dict[str, SweepStudy] = {}


def register_sweep_study(study: SweepStudy) -> SweepStudy:
    """Make ``study`` runnable at sweep points as ``[sweep] study = "<name>"``; returns it.

    Examples
    --------
    >>> sorted(sweep_studies())[:3]
    ['programme', 'run', 'seeding']
    """
    _STUDIES[study.name] = study
    register_sweep_study_name(study.name, study.fixed_fields)
    return study


def sweep_study(name: str) -> SweepStudy:
    """The registered study ``name``; ScenarioError naming the known ones otherwise."""
    try:
        return _STUDIES[name]
    except KeyError:
        raise ScenarioError(f"sweep.study must be one of {', '.join(_STUDIES)}; got {name!r}") from None


def sweep_studies() -> dict[str, SweepStudy]:
    """Name → study, every registered sweep study."""
    return dict(_STUDIES)


def mean_statistics(table: pd.DataFrame, columns: list[str]) -> list[dict]:
    """Per column: the mean of its finite values and the 95 % Student-t interval of that mean
    (:func:`womlab.studies.metrics.mean_interval`), their sd and how many there were."""
    rows = []
    for name in columns:
        x = table[name].astype("float64").to_numpy(na_value=np.nan)
        x = x[np.isfinite(x)]
        known = (0.0, 1.0) if name.endswith("share") else None  # a share's interval is cut at [0, 1]
        with warnings.catch_warnings():  # a point with one run has no interval; `reached` says why
            warnings.simplefilter("ignore", FewReplicatesWarning)
            mean, low, high = mean_interval(x, bounds=known)
        rows.append(
            {
                "outcome": name,
                "reached": int(x.size),
                "estimate": mean,
                "sd": float(x.std(ddof=1)) if x.size > 1 else np.nan,
                "low": low,
                "high": high,
                "interval": "t, mean over replicates",
            }
        )
    return rows


# ----------------------------------------------------------------------------- run
RUN_OUTCOMES = (
    Outcome("customers", "int", "customers at horizon"),
    Outcome("satisfied_customers", "int", "satisfied customers at horizon"),
    Outcome("final_share", "float", "share of market at horizon"),
    Outcome("t10", "float", "period reaching 10 % of market"),
    Outcome("t50", "float", "period reaching 50 % of market"),
    Outcome("t90", "float", "period reaching 90 % of market"),
    Outcome("peak_period", "int", "peak period (most new customers)"),
    Outcome("peak_new_share", "float", "new customers in peak period, share"),
)


def run_point_run(
    scenario: Scenario, key: tuple[int, int], network: ReferralNetwork | None, curves: bool
) -> tuple[Row, Curve | None]:
    """The ``run`` study at one key: one run, its adoption outcomes and (if asked) its curve."""
    result = run_paired({"run": scenario}, 1, keys=[key], network=network)["run"][0]
    # with churn the installed base can fall: times and the peak are those of adoptions (ever customers)
    m = curve_metrics(result.ever_share if result.churns else result.share)
    customers, new, satisfied = result.customers, result.new_customers, result.satisfied_customers
    row = {
        "customers": int(customers[-1]),
        "satisfied_customers": int(satisfied[-1]),
        "final_share": float(result.share[-1]),
        "t10": m["t10"],
        "t50": m["t50"],
        "t90": m["t90"],
        "peak_period": int(m["peak_period"]),
        "peak_new_share": m["peak_new_share"],
    }
    curve = None
    if curves:
        curve = {
            "period": np.arange(customers.size, dtype=np.int32),
            "customers": customers.astype(np.int32),
            "new_customers": new.astype(np.int32),
            "satisfied_customers": satisfied.astype(np.int32),
        }
    return row, curve


register_sweep_study(
    SweepStudy(
        name="run",
        outcomes=lambda scenario: RUN_OUTCOMES,
        run=run_point_run,
        shown=lambda scenario: ("final_share", "t50", "peak_period", "peak_new_share"),
        curves=True,
    )
)


# ----------------------------------------------------------------------------- programme
PROGRAMME_OUTCOMES = (
    Outcome("customers_baseline", "int", "customers at horizon without the programme"),
    Outcome("customers_programme", "int", "customers at horizon with the programme"),
    Outcome("incremental_customers", "int", "incremental customers at horizon"),
    Outcome("value_baseline", "float", "discounted value without the programme"),
    Outcome("value_programme", "float", "discounted value with the programme"),
    Outcome("incremental_value", "float", "incremental discounted value"),
    Outcome("cost", "float", "discounted programme cost"),
    Outcome("cost_undiscounted", "float", "programme cost, undiscounted"),
    Outcome("paid_referrals", "int", "paid referrals"),
    Outcome("roi", "float", "return on investment (ΔValue − Cost) / Cost"),
    Outcome("cost_per_incremental_customer", "float", "cost per incremental customer"),
    Outcome("acceleration", "float", "value from customers adopting earlier (whole life)"),
    Outcome("expansion", "float", "value from customers adopting only with the programme (whole life)"),
    Outcome("incremental_value_lifetime", "float", "incremental discounted value, whole life"),
    Outcome("acceleration_at_horizon", "float", "value from earlier adoption, as it looks at the horizon"),
    Outcome("expansion_at_horizon", "float", "value from adoption only with the programme, as at the horizon"),
    Outcome("accelerated", "int", "customers adopting earlier"),
    Outcome("delayed", "int", "customers adopting later"),
    Outcome("expanded", "int", "customers adopting only with the programme"),
    Outcome("lost", "int", "customers adopting only without the programme"),
    Outcome("break_even_period", "float", "break-even period (replicates that break even)"),
)
PROGRAMME_BOOTSTRAP = 2000


def run_point_programme(
    scenario: Scenario, key: tuple[int, int], network: ReferralNetwork | None, curves: bool
) -> tuple[Row, Curve | None]:
    """The ``programme`` study at one key: the programme and its baseline, paired, and their economics."""
    if scenario.referral.lifetime_value_from_churn:
        scenario = with_lifetime_value_from_churn(scenario)
    baseline = scenario.replace("referral.enrol", "none")
    cont = continue_paired(
        {"baseline": baseline, "programme": scenario},
        1,
        keys=[key],
        network=network,
        lifetime=scenario.referral.lifetime,
    )
    runs = cont.at_horizon()
    economics = programme_economics(
        runs["baseline"][0],
        runs["programme"][0],
        scenario.referral,
        continued=(cont.runs["baseline"][0], cont.runs["programme"][0]),
    )
    return {o.name: economics[o.name] for o in PROGRAMME_OUTCOMES}, None


def programme_statistics(scenario: Scenario, table: pd.DataFrame, point: int) -> list[dict]:
    """ROI, cost per incremental customer and acceleration share of a point as ratios of totals
    (:func:`womlab.studies.programme.programme_ratios`), resampled from the point's own stream."""
    rng = np.random.default_rng(np.random.SeedSequence(scenario.seed, spawn_key=(ENROLMENT_STREAM, 1, point)))
    return programme_ratios(table, bootstrap=PROGRAMME_BOOTSTRAP, rng=rng)


register_sweep_study(
    SweepStudy(
        name="programme",
        outcomes=lambda scenario: PROGRAMME_OUTCOMES,
        run=run_point_programme,
        statistics=programme_statistics,
        shown=lambda scenario: ("roi", "incremental_customers", "cost_per_incremental_customer", "acceleration_share"),
        labels=lambda scenario: {
            "roi": "return on investment, Σ(ΔValue − Cost) / ΣCost",
            "cost_per_incremental_customer": "cost per incremental customer, ΣCost / ΣΔcustomers",
            "acceleration_share": "share of incremental value from acceleration",
        },
        check=check_programme,
    )
)


# ----------------------------------------------------------------------------- seeding
_SEEDING_KINDS = {"customers": "int", "t50": "float", "peak_period": "int", "customer_periods": "float"}
_SEEDING_LABELS = {
    "customers": "customers at horizon",
    "t50": "period reaching 50 % of market",
    "peak_period": "peak period",
    "customer_periods": "discounted customer-periods",
}


def _seeding_outcomes(scenario: Scenario) -> tuple[Outcome, ...]:
    return tuple(
        Outcome(f"{k}[{s}]", _SEEDING_KINDS[k], f"{_SEEDING_LABELS[k]}, {s}")
        for s in scenario.study.compared
        for k in SEEDING_OUTCOMES
    )


def run_point_seeding(
    scenario: Scenario, key: tuple[int, int], network: ReferralNetwork | None, curves: bool
) -> tuple[Row, Curve | None]:
    """The ``seeding`` study at one key: every strategy on one network with the same draws."""
    study = scenario.study
    variants = {name: scenario.replace("seeding.strategy", name) for name in study.compared}
    out = run_paired(
        variants, 1, keys=[key], network=network, reduce=partial(run_outcomes, discount_rate=study.discount_rate)
    )
    return {f"{k}[{s}]": out[s][0][k] for s in study.compared for k in SEEDING_OUTCOMES}, None


def seeding_statistics(scenario: Scenario, table: pd.DataFrame, point: int) -> list[dict]:
    """Per strategy but random: its lift against random on ``study.outcome``
    (:func:`womlab.studies.seeding_study.lift_statistics`), bootstrap resamples shared by the
    strategies of a point and drawn from the point's own stream."""
    study = scenario.study
    outcome = study.outcome
    base = table[f"{outcome}[random]"].to_numpy(dtype=float)
    r = base.size
    rows = []
    # one seed per point: every strategy gets the same resamples of the replicates
    seed = np.random.SeedSequence(scenario.seed, spawn_key=(*BOOTSTRAP_KEY, point))
    boot = f"studentised paired bootstrap, {study.bootstrap} resamples of replicates"
    for s in study.compared[1:]:
        x = table[f"{outcome}[{s}]"].to_numpy(dtype=float)
        if r < 2:  # one replicate: the estimates, no interval
            lift = {
                "lift_ratio": float(x.mean() / base.mean()) if base.mean() > 0 else np.nan,
                "lift_diff": float((x - base).mean()),
            }
        else:
            with warnings.catch_warnings():  # below five replicates no interval; the table says so
                warnings.simplefilter("ignore", FewReplicatesWarning)
                lift = lift_statistics(x, base, rng=np.random.default_rng(seed), resamples=study.bootstrap)
        rows.append(
            {
                "outcome": f"lift_ratio[{s}]",
                "estimate": lift["lift_ratio"],
                "low": lift.get("lift_ratio_low", np.nan),
                "high": lift.get("lift_ratio_high", np.nan),
                "interval": f"ratio of means; {boot}",
            }
        )
        rows.append(
            {
                "outcome": f"lift_diff[{s}]",
                "estimate": lift["lift_diff"],
                "low": lift.get("lift_diff_low", np.nan),
                "high": lift.get("lift_diff_high", np.nan),
                "interval": f"mean paired difference; {boot}",
            }
        )
        for name, text in (
            ("wilcoxon_p", "Wilcoxon signed-rank test of the paired differences"),
            ("paired_halfwidth", "95 % t half-width of the mean paired difference"),
            ("unpaired_halfwidth", "95 % t half-width an unpaired design would give"),
        ):
            rows.append(
                {
                    "outcome": f"{name}[{s}]",
                    "estimate": lift.get(name, np.nan),
                    "low": np.nan,
                    "high": np.nan,
                    "interval": text,
                }
            )
    return rows


def _seeding_labels(scenario: Scenario) -> dict[str, str]:
    what = _SEEDING_LABELS[scenario.study.outcome]
    out = {}
    for s in scenario.study.compared[1:]:
        out[f"lift_ratio[{s}]"] = f"lift of {s} against random ({what}, ratio)"
        out[f"lift_diff[{s}]"] = f"lift of {s} against random ({what}, difference)"
        out[f"wilcoxon_p[{s}]"] = f"Wilcoxon p, {s} against random"
        out[f"paired_halfwidth[{s}]"] = f"paired half-width, {s}"
        out[f"unpaired_halfwidth[{s}]"] = f"unpaired half-width, {s}"
    return out


register_sweep_study(
    SweepStudy(
        name="seeding",
        outcomes=_seeding_outcomes,
        run=run_point_seeding,
        statistics=seeding_statistics,
        shown=lambda scenario: tuple(f"lift_ratio[{s}]" for s in scenario.study.compared[1:]),
        labels=_seeding_labels,
        fixed_fields={"seeding.strategy": "the seeding study runs every strategy of study.strategies at every point"},
    )
)
