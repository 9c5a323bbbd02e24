"""Where the network departs from the aggregate model.

:func:`compare` runs a scenario's replicates and sets the network curve beside every
aggregate curve womlab computes from the same scenario, on the same grid:

``bass_mapped``
    The Bass ODE (closed form :func:`womlab.aggregate.bass_share`) with the mapped p and
    Q of :func:`womlab.aggregate.mapped_parameters`: the continuous-time model.
``bass_difference``
    The Bass difference equation in the run's own step and step form (discrete clock only).
``capped_bass_difference``
    The Bass difference model in customer counts with the mapped slope and, under the
    ``capped`` rule, the ceiling on the adoption rate (:func:`womlab.aggregate.capped_bass_difference`;
    without a ceiling it coincides with ``bass_difference``; discrete clock only).
``degree_mean_field``
    The degree-based mean-field model (:func:`womlab.aggregate.degree_mean_field`) on the
    degree sequence of replicate 0's network, in the run's step form (the ODE on the
    continuous clock): how much of the gap degree heterogeneity explains; what is left is
    clustering and local saturation.
``bass_fitted``
    The Bass model fitted to the mean network curve (:func:`womlab.aggregate.fitting.fit_bass`):
    the difference form in the run's own step on the discrete clock, so Q_eff carries no
    bias of the step; the closed form on the continuous clock.

It measures the gaps (:mod:`womlab.studies.metrics`), fits effective parameters
(:mod:`womlab.aggregate.fitting`) and returns a :class:`Comparison` that holds the tables, draws
the figure and writes a results folder.

With churn (``adoption.churn`` above 0) the customer curve can fall, so the comparison is
made on ``ever_customers`` (every organisation that was a customer by then) against Bass with
churn (:mod:`womlab.aggregate.churn`; with warnings, ``adoption.warning`` above 0, Bass with
churn and warnings): ``bass_churn_mapped`` (its ODE) and ``bass_churn_difference`` (its
difference form in the run's step, the reference), plus the fitted Bass curve; the installed
base of runs and models is in :meth:`Comparison.curve_table` and the figure. The degree
mean-field and capped Bass difference models have neither, and are left out. The fitted Bass
curve is fitted to the ever customers, so Q_eff / Q_mapped counts the word of mouth lost when
customers leave (former customers no longer talk) as well as the network's.

The discrete engines are compared with the step-form aggregate curves (and the Bass
ODE); runs on the continuous clock (exact event times) only with the continuous forms —
the Bass ODE and the degree mean-field ODE — since a difference model in a step the run
never took is no prediction of it.

:func:`bass_fit_table` gives the fitted parameters of the mean curve with BCa intervals
(:func:`womlab.studies.intervals.bootstrap_interval`: replicates resampled whole, each
resample's mean curve refitted).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from womlab.aggregate import (
    AGGREGATE_LABELS,
    BassFit,
    StockFlowFit,
    bass_difference,
    bass_share,
    capped_bass_difference,
    churn_curves,
    degree_mean_field_curve,
    fit_bass,
    fit_capped_bass_difference,
    fit_replicates,
    group_curves,
    mapped_parameters,
)
from womlab.dynamics import streams
from womlab.networks import build_network
from womlab.networks.given import GivenNetwork, as_network, mapped_with
from womlab.scenario import Scenario
from womlab.scenario.markets import openings
from womlab.studies.intervals import bootstrap_interval
from womlab.studies.metrics import pooled_gaps, pooled_metrics, replicate_gaps, replicate_metrics
from womlab.studies.presenting import present
from womlab.studies.runner import Batch, run_replicates

__all__ = ["Comparison", "compare", "aggregate_curves", "bass_fit_table", "installed_base_curves"]


def aggregate_curves(scenario: Scenario, network: object | None = None) -> dict[str, np.ndarray]:
    """Every mapped aggregate curve of ``scenario`` on periods 0..T (not the fitted one).

    ``network`` (a :class:`~womlab.networks.ReferralNetwork` or a degree sequence) feeds
    the degree mean-field model; by default replicate 0's network is built from its
    network stream, exactly as the batch builds it. On the continuous clock only the
    continuous forms: ``bass_mapped`` and ``degree_mean_field`` (its ODE).
    """
    run, market, a = scenario.run, scenario.market, scenario.adoption
    if a.churns or a.warns:  # ever customers of Bass with churn and warnings (installed base: installed_base_curves)
        return {name: curve["ever_customers"].to_numpy() for name, curve in _churn_models(scenario).items()}
    par = mapped_parameters(scenario)
    t = np.arange(run.periods + 1, dtype=float)
    if network is None:
        network = build_network(scenario, np.random.default_rng(streams(scenario.seed, (0,)).network))
    n = market.organisations
    if run.clock == "continuous":
        return {
            "bass_mapped": bass_share(t, par.p, par.Q, par.initial_share),
            "degree_mean_field": degree_mean_field_curve(scenario, network, form="ode"),
        }
    curves = {
        "bass_mapped": bass_share(t, par.p, par.Q, par.initial_share),
        "bass_difference": bass_difference(
            run.periods, par.p, par.Q, par.initial_share, time_step=run.time_step, form=run.step_probability
        ),
        "capped_bass_difference": capped_bass_difference(
            run.periods,
            n,
            scenario.n_initial,
            slope=par.slope,
            satisfied_share=a.satisfied_share,
            talkers_per_customer=par.mean_talkers,
            external=par.p,
            cap=par.cap,
            time_step=run.time_step,
            form=run.step_probability,
        )
        / n,
        "degree_mean_field": degree_mean_field_curve(scenario, network),
    }
    if _changing_market(scenario):  # segments, a calendar, openings: the segment model on the same step
        curves["segment_model"] = group_curves(scenario)[0][:, 0]
    return curves


def _changing_market(scenario: Scenario) -> bool:
    return scenario.adoption.rule in ("share", "count") and (
        scenario.segments.active or scenario.campaign.active or bool(openings(scenario.market))
    )


def _churn_models(scenario: Scenario) -> dict[str, pd.DataFrame]:
    return {
        "bass_churn_mapped": churn_curves(scenario, continuous=True),
        "bass_churn_difference": churn_curves(scenario),
    }


def installed_base_curves(scenario: Scenario) -> dict[str, np.ndarray]:
    """With churn: the installed base (customers who have not left) of each Bass-with-churn
    curve of :func:`aggregate_curves`, as a share on periods 0..T; empty without churn."""
    if not (scenario.adoption.churns or scenario.adoption.warns):
        return {}
    return {name: curve["customers"].to_numpy() for name, curve in _churn_models(scenario).items()}


@dataclass(eq=False)
class Comparison:
    """A network batch beside its aggregate models: tables, fits and the figure.

    Attributes
    ----------
    batch : womlab.studies.Batch
        The replicate runs.
    curves : dict
        Aggregate curve name → share on periods 0..T (including ``bass_fitted``).
    metrics : pandas.DataFrame
        Curve metrics side by side (:func:`womlab.studies.metrics.pooled_metrics`).
    gaps : pandas.DataFrame
        Gap of the mean network curve to each aggregate curve (:func:`womlab.studies.metrics.pooled_gaps`).
    fits : pandas.DataFrame
        Fitted Bass parameters with intervals (:func:`bass_fit_table`).
    replicate_metrics, replicate_gaps, replicate_fits : pandas.DataFrame
        The same, per replicate.
    bass_fit : womlab.aggregate.fitting.BassFit
        The Bass fit of the mean network curve.
    stock_flow_fit : womlab.aggregate.fitting.StockFlowFit
        The capped Bass difference fit (slope and cap) of the mean network curve.
    """

    batch: Batch
    curves: dict[str, np.ndarray]
    metrics: pd.DataFrame
    gaps: pd.DataFrame
    fits: pd.DataFrame
    replicate_metrics: pd.DataFrame
    replicate_gaps: pd.DataFrame
    replicate_fits: pd.DataFrame
    bass_fit: BassFit
    stock_flow_fit: StockFlowFit
    settings: dict = field(default_factory=dict)

    @property
    def scenario(self) -> Scenario:
        return self.batch.scenario

    def shares(self) -> np.ndarray:
        """The network curves compared, per replicate and period: the customer share, or with
        churn the ever-customer share (:meth:`womlab.studies.Batch.ever_shares`)."""
        return self.batch.ever_shares() if self.scenario.adoption.churns else self.batch.shares()

    @property
    def reference(self) -> str:
        """The mapped aggregate curve the headline is measured against: ``bass_difference``
        (same grid and step form as the runs), ``bass_mapped`` (the Bass ODE) on the
        continuous clock, ``capped_bass_difference`` for the ``capped`` rule, whose ceiling the
        Bass curves do not have, ``segment_model`` with segments, a campaign calendar or
        parts of the market opening later (:mod:`womlab.aggregate.markets`), or
        ``bass_churn_difference`` with churn or warnings."""
        if self.scenario.adoption.churns or self.scenario.adoption.warns:
            return "bass_churn_difference"
        if self.scenario.adoption.rule == "capped":
            return "capped_bass_difference"
        if _changing_market(self.scenario):
            return "segment_model"
        return "bass_mapped" if self.scenario.run.clock == "continuous" else "bass_difference"

    def curve_table(self) -> pd.DataFrame:
        """Per period: the network's mean, sd, q05, q50, q95 and every aggregate curve."""
        summary = self.batch.summary().drop(columns=["aggregate"])
        if self.scenario.adoption.churns:  # the statistics of the curves compared; the installed base beside
            shares = self.shares()
            installed = self.batch.shares()
            summary["mean"], summary["sd"] = shares.mean(axis=0), shares.std(axis=0, ddof=1) if len(shares) > 1 else 0.0
            for q in ("q05", "q50", "q95"):
                summary[q] = np.quantile(shares, int(q[1:]) / 100, axis=0)
            summary["installed_base_mean"] = installed.mean(axis=0)
            for name, curve in installed_base_curves(mapped_with(self.scenario, self._given())).items():
                summary[f"installed_base_{name}"] = curve
        for name, curve in self.curves.items():
            summary[name] = curve
        return summary

    def _given(self):  # noqa: ANN202
        return None if self.batch.network is None else as_network(self.batch.network)

    def headline(self) -> dict[str, float]:
        """The numbers a summary leads with.

        ``Q_ratio`` (Q_eff / Q_mapped) and its interval, the t50 delay of the network
        behind the :attr:`reference` model (the same grid and step), the ratio of peak
        new-customer shares, and the largest gap to that model and when it occurs.
        """
        m = self.metrics.set_index("metric")
        g = self.gaps.set_index("aggregate")
        f = self.fits.set_index("parameter")
        ref = self.reference
        out = {
            "Q_mapped": float(f.loc["Q", "mapped"]),
            "Q_eff": float(f.loc["Q", "estimate"]),
            "Q_ratio": float(f.loc["Q_ratio", "estimate"]) if "Q_ratio" in f.index else float("nan"),
            "Q_ratio_low": float(f.loc["Q_ratio", "low"]) if "Q_ratio" in f.index else float("nan"),
            "Q_ratio_high": float(f.loc["Q_ratio", "high"]) if "Q_ratio" in f.index else float("nan"),
            "p_eff": float(f.loc["p", "estimate"]),
            "m_eff": float(f.loc["m", "estimate"]),
            "t50_network": float(m.loc["t50", "network"]),
            "t50_delay": float(m.loc["t50", "network"] - m.loc["t50", ref]),
            "t50_delay_low": float(m.loc["t50", "network_low"] - m.loc["t50", ref]),
            "t50_delay_high": float(m.loc["t50", "network_high"] - m.loc["t50", ref]),
            "t50_degree_mean_field": float(m.loc["t50", "degree_mean_field"])
            if "degree_mean_field" in m.columns
            else float("nan"),
            "peak_ratio": float(m.loc["peak_new_share", "network"] / m.loc["peak_new_share", ref]),
            "peak_ratio_low": float(m.loc["peak_new_share", "network_low"] / m.loc["peak_new_share", ref]),
            "peak_ratio_high": float(m.loc["peak_new_share", "network_high"] / m.loc["peak_new_share", ref]),
            "max_gap": float(g.loc[ref, "gap_at_max"]),
            "time_of_max_gap": float(g.loc[ref, "time_of_max_gap"]),
            "rmse_reference": float(g.loc[ref, "rmse"]),
            "rmse_degree_mean_field": float(g.loc["degree_mean_field", "rmse"])
            if "degree_mean_field" in g.index
            else float("nan"),
        }
        return out

    def figure(self, *, title: str | None = None):  # noqa: ANN201 - matplotlib Figure
        """The comparison figure (:func:`womlab.results.comparison_figure`)."""
        return present(self, "figure", title=title)

    def save(self, out: str | Path, *, figure: bool = True) -> list[Path]:
        """Write the comparison's tables, figure and manifest into the results folder ``out``.

        Files: ``compare_curves.csv``, ``compare_metrics.csv``, ``compare_gaps.csv``,
        ``compare_fits.csv``, ``compare_replicates.csv`` (per-replicate metrics, fits and
        gaps to the :attr:`reference` model), ``comparison.png``, ``manifest.json``
        (:func:`womlab.results.save_comparison`).

        Raises
        ------
        StoreError
            If ``out`` exists and is not a folder, or cannot be created.
        """
        return present(self, "save", out, figure=figure)

    def replicate_table(self) -> pd.DataFrame:
        """One row per replicate: its curve metrics, its Bass fit (``fit_*``) and its gaps to the :attr:`reference` model."""
        fits = self.replicate_fits.rename(
            columns={c: f"fit_{c}" for c in self.replicate_fits.columns if c != "replicate"}
        )
        ref = self.reference
        gaps = self.replicate_gaps[self.replicate_gaps["aggregate"] == ref].drop(columns=["aggregate"])
        gaps = gaps.rename(columns={c: f"{c}_{ref}" for c in gaps.columns if c != "replicate"})
        return self.replicate_metrics.merge(fits, on="replicate").merge(gaps, on="replicate")

    def summary_text(self) -> str:
        """A few lines with the headline numbers, for the terminal."""
        h = self.headline()
        s = self.scenario
        sf = self.stock_flow_fit
        lines = [
            f"{s.name}: {self.batch.replicates} runs of {s.market.organisations} organisations on a "
            f"{s.network.kind} network ({s.adoption.rule} rule), {self.batch.wall_time:.1f} s",
            f"  word of mouth kept   Q_eff / Q_mapped = {h['Q_ratio']:.3f}  (95 % {h['Q_ratio_low']:.3f} to "
            f"{h['Q_ratio_high']:.3f}; Q_eff = {h['Q_eff']:.4g}, Q_mapped = {h['Q_mapped']:.4g}, "
            f"p_eff = {h['p_eff']:.3g}, m_eff = {h['m_eff']:.3g}"
            + (
                ": the fitted curve reaches the whole market)"
                if h["m_eff"] == 1
                else ": the share of the market the fitted curve reaches)"
            ),
            f"  time to 50 %         network {h['t50_network']:.2f}, {h['t50_delay']:+.2f} periods vs the "
            f"{AGGREGATE_LABELS[self.reference]} (95 % {h['t50_delay_low']:+.2f} to {h['t50_delay_high']:+.2f}); degree mean-field "
            f"{h['t50_degree_mean_field']:.2f}",
            f"  peak new customers   network / model = {h['peak_ratio']:.3f}  (95 % {h['peak_ratio_low']:.3f} to "
            f"{h['peak_ratio_high']:.3f})",
            f"  largest gap          {h['max_gap']:+.3f} of the market at period {h['time_of_max_gap']:g}; RMSE "
            f"{h['rmse_reference']:.3f} to that model, {h['rmse_degree_mean_field']:.3f} to the degree mean-field",
            f"  capped Bass fit      slope {sf.slope:.4g}, cap {sf.cap:.3g} "
            f"({'converged' if sf.success else 'did not converge'})",
        ]
        return "\n".join(lines)


def compare(
    scenario: Scenario,
    replicates: int | None = None,
    *,
    jobs: int | None = None,
    bootstrap: int = 1000,
    fit_bootstrap: int = 200,
    seed: int | None = None,
    level: float = 0.95,
    progress: bool = False,
    batch: Batch | None = None,
    network: GivenNetwork | None = None,
) -> Comparison:
    """Run a scenario's replicates and compare the network with every aggregate model.

    Parameters
    ----------
    scenario : Scenario
    replicates : int, optional
        Defaults to ``scenario.run.replicates``.
    jobs : int, optional
        Worker processes; defaults to ``scenario.run.jobs``.
    bootstrap : int
        Resamples for the metric and gap intervals.
    fit_bootstrap : int
        Resamples for the fitted-parameter intervals (each one a least-squares fit).
    seed : int, optional
        Seed of the bootstrap; defaults to the scenario's seed.
    level : float
        Interval level (0.95 for 95 % intervals).
    progress : bool
        Progress bar while running.
    batch : Batch, optional
        Runs already made of this scenario (then nothing is run).
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        Your own network, for every replicate and for the degree mean-field model (see
        :func:`womlab.run_replicates`); it must have ``market.organisations`` organisations.

    Returns
    -------
    Comparison

    Examples
    --------
    >>> from womlab import Scenario, compare
    >>> s = Scenario.from_dict({"market": {"organisations": 400, "initial_customers": 4},
    ...                         "network": {"kind": "ring", "mean_degree": 4}, "run": {"periods": 30}})
    >>> c = compare(s, 4, bootstrap=50, fit_bootstrap=10)
    >>> sorted(c.curves)
    ['bass_difference', 'bass_fitted', 'bass_mapped', 'capped_bass_difference', 'degree_mean_field']
    """
    network = batch.network if network is None and batch is not None else network
    given = None if network is None else as_network(network, scenario.market.organisations)
    if batch is None:
        batch = run_replicates(scenario, replicates, jobs=jobs, progress=progress, network=given)
        batch.network = network  # as given (a graph keeps its node attributes)
    seed = scenario.seed if seed is None else seed
    shares = batch.ever_shares() if scenario.adoption.churns else batch.shares()
    par = mapped_parameters(mapped_with(scenario, given))
    curves = aggregate_curves(mapped_with(scenario, given), given)
    a, run = scenario.adoption, scenario.run
    step = {} if run.clock == "continuous" else {"time_step": run.time_step, "form": run.step_probability}
    fit = fit_bass(shares.mean(axis=0), **step)
    curves["bass_fitted"] = fit.share(np.arange(shares.shape[1], dtype=float))
    per_rep_fits = fit_replicates(
        shares, market=None if fit.market_fitted else 1.0, start=(fit.p, fit.Q, fit.m), **step
    )
    fits = bass_fit_table(
        shares,
        Q_mapped=par.Q,
        p_mapped=par.p,
        bootstrap=fit_bootstrap,
        seed=seed,
        level=level,
        per_replicate=per_rep_fits,
        **step,
    )
    sf = fit_capped_bass_difference(
        shares.mean(axis=0),
        organisations=scenario.market.organisations,
        satisfied_share=a.satisfied_share,
        talkers_per_customer=par.mean_talkers,
        external=par.p,
        time_step=run.time_step,
        form=run.step_probability,
    )
    return Comparison(
        batch=batch,
        curves=curves,
        metrics=pooled_metrics(shares, curves, bootstrap=bootstrap, seed=seed, level=level),
        gaps=pooled_gaps(shares, curves, bootstrap=bootstrap, seed=seed, level=level),
        fits=fits,
        replicate_metrics=replicate_metrics(shares),
        replicate_gaps=replicate_gaps(shares, curves),
        replicate_fits=per_rep_fits,
        bass_fit=fit,
        stock_flow_fit=sf,
        settings={
            "bootstrap": bootstrap,
            "fit_bootstrap": fit_bootstrap,
            "bootstrap_seed": seed,
            "level": level,
            "degree_mean_field_network": "replicate 0" if given is None else "the network given",
        },
    )


def bass_fit_table(
    shares: np.ndarray,
    *,
    Q_mapped: float | None = None,
    p_mapped: float | None = None,
    bootstrap: int = 200,
    seed: int = 0,
    level: float = 0.95,
    saturation: float = 0.95,
    per_replicate: pd.DataFrame | None = None,
    time_step: float | None = None,
    form: str = "linear",
) -> pd.DataFrame:
    """Fitted Bass parameters of the mean network curve, with intervals.

    One row per parameter (``p``, ``Q``, ``m``, and ``Q_ratio`` = Q_eff / Q_mapped and
    ``p_ratio`` when the mapped values are given). Columns:

    * ``estimate``: the fit of the mean curve over replicates (:func:`womlab.aggregate.fit_bass`,
      the difference form in ``time_step`` and ``form`` when given, else the closed form);
    * ``low``, ``high``: BCa bootstrap interval at ``level``
      (:func:`womlab.studies.intervals.bootstrap_interval`: replicates resampled whole, the
      mean curve refitted from the estimate; ``bootstrap`` resamples, seeded; no interval
      below five replicates); ``interval`` says how it was made;
    * ``replicate_median``, ``replicate_low``, ``replicate_high``: the median and the
      central ``level`` range of the per-replicate fits (the spread of one run);
    * ``mapped``: the mapped value, where given;
    * ``converged``: how many of the per-replicate fits reported convergence, and
      ``estimate_converged`` whether the mean-curve fit did.

    Whether m is fitted is decided once, on the mean curve (``saturation``), and kept for
    every resample and replicate; a fitted m lies in (0, 1], and its interval is cut there.
    """
    shares = np.atleast_2d(np.asarray(shares, dtype=float))
    r = shares.shape[0]
    point = fit_bass(shares.mean(axis=0), saturation=saturation, time_step=time_step, form=form)
    market = None if point.market_fitted else 1.0
    x0 = (point.p, point.Q, point.m)
    reps = (
        per_replicate
        if per_replicate is not None
        else fit_replicates(shares, market=market, start=x0, time_step=time_step, form=form)
    )
    cache: dict[tuple[int, ...], tuple[float, float, float]] = {}

    def refit(index: np.ndarray) -> tuple[float, float, float]:
        key = tuple(sorted(int(i) for i in index))  # the mean curve depends on the multiset only
        if key not in cache:
            f = fit_bass(shares[list(key)].mean(axis=0), market=market, start=x0, time_step=time_step, form=form)
            cache[key] = (f.p, f.Q, f.m)
        return cache[key]

    def parameter(j: int, scale: float):  # noqa: ANN202
        def statistic(index: np.ndarray) -> np.ndarray:
            flat = index.reshape(-1, index.shape[-1])
            return np.array([refit(i)[j] / scale for i in flat]).reshape(index.shape[:-1])

        return statistic

    def interval(j: int, scale: float, bounds: tuple[float, float] | None):  # noqa: ANN202
        # the same seed for every parameter: the same resamples, so each curve is fitted once
        return bootstrap_interval(
            parameter(j, scale), r, rng=np.random.default_rng(seed), level=level, resamples=bootstrap, bounds=bounds
        )

    a = (1 - level) / 2
    mapped = {"p": p_mapped, "Q": Q_mapped, "m": 1.0}
    estimates = {"p": point.p, "Q": point.Q, "m": point.m}
    rows = []
    for j, name in enumerate(("p", "Q", "m")):
        ci = interval(j, 1.0, (0.0, 1.0) if name == "m" else None)
        rows.append(_fit_row(name, estimates[name], ci, reps[name].to_numpy(), mapped[name], a))
    for name, base, j in (("Q_ratio", Q_mapped, 1), ("p_ratio", p_mapped, 0)):
        if base:
            ci = interval(j, base, None)
            rows.append(_fit_row(name, estimates["pQ"[j]] / base, ci, reps["pQ"[j]].to_numpy() / base, 1.0, a))
    table = pd.DataFrame(rows)
    table["converged"] = int(reps["success"].sum())
    table["replicates"] = r
    table["estimate_converged"] = point.success
    table["market_fitted"] = point.market_fitted
    table["fitted_form"] = "closed form (ODE)" if time_step is None else f"difference form, step {time_step:g}, {form}"
    return table


def _fit_row(name: str, estimate: float, ci, reps: np.ndarray, mapped: float | None, a: float) -> dict:  # noqa: ANN001
    return {
        "parameter": name,
        "estimate": float(estimate),
        "low": ci.low,
        "high": ci.high,
        "interval": ci.describe(),
        "replicate_median": float(np.median(reps)),
        "replicate_low": float(np.quantile(reps, a)),
        "replicate_high": float(np.quantile(reps, 1 - a)),
        "mapped": float("nan") if mapped is None else float(mapped),
    }
