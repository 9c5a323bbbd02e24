"""Your own market: fit the network model to an observed adoption series, forecast it, and
say where on the S-curve it stands.

:func:`fit_observed` learns the free scenario fields (``[fit]``, :class:`womlab.scenario.FitSpec`)
from an observed series (:mod:`womlab.studies.observed`) by ABC-SMC (:mod:`womlab.studies.smc`).
Every simulation runs through :func:`womlab.studies.run_paired` — the seeded runner every
study uses — with a ``vary`` function that hands each spawn key its proposed parameters,
so the fit is the same bit for bit for any number of workers and on any joblib backend.

Summary statistic and distance
    The statistic is the cumulative curve at the observed periods
    (:meth:`ObservedSeries.cumulative`: customers, or new customers summed over the
    observed periods). The distance of a simulated series x to the observed y is the root
    mean square of their difference scaled by the observed total,
    d = √( mean_k ((x_k − y_k) / y_K)² ): a share of what has been observed, the same
    whatever the market's size.

What the fit simulates
    The scenario with its ``run.periods`` set to the last fitted period; with the market
    size the data give (``market`` column), and with the customers the data show at
    period 0 as the initial customers. Its ``[fit]`` section is left out of the runs.

Forecasts continue the accepted simulations
    A run's draws are made per organisation up front, so the same spawn key with a longer
    horizon repeats the same first periods exactly. :meth:`Fit.forecast` reruns the final
    generation's accepted simulations (their own keys) to the longer horizon: every path
    starts from a simulated history within the final tolerance of the observed one, and
    the bands are weighted quantiles over the particles.

Network kind as a free choice
    ``fit.network_kinds`` lists kinds to choose among; the kind is a model index in the
    SMC (Toni et al. 2009) and :meth:`Fit.network_kinds` gives their posterior
    probabilities.

References
----------
Beaumont, M. A., Cornuet, J.-M., Marin, J.-M. & Robert, C. P. (2009). Adaptive approximate
Bayesian computation. Biometrika 96(4), 983–990.
Toni, T., Welch, D., Strelkowa, N., Ipsen, A. & Stumpf, M. P. H. (2009). Approximate
Bayesian computation scheme for parameter inference and model selection in dynamical
systems. Journal of the Royal Society Interface 6(31), 187–202.
Talts, S., Betancourt, M., Simpson, D., Vehtari, A. & Gelman, A. (2018). Validating
Bayesian inference algorithms with simulation-based calibration. arXiv:1804.06788.
Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap, §9.5 (bootstrapping
residuals). Chapman & Hall.
"""

from __future__ import annotations

import dataclasses
import math
import sys
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from womlab.aggregate import BassFit, bass_share, fit_bass, fit_bass_sales, mapped_parameters
from womlab.dynamics import RunResult
from womlab.errors import ObservedDataError, ScenarioError
from womlab.scenario import FitSpec, Prior, Scenario, field_type
from womlab.scenario.fit_spec import DEFAULT_FREE, DEFAULT_PRIORS
from womlab.studies.metrics import time_to_share
from womlab.studies.observed import ObservedSeries, cumulative_at, observed_series, read_observed
from womlab.studies.presenting import present
from womlab.studies.runner import run_one, run_paired
from womlab.studies.smc import (
    FIT_KEY,
    SMCResult,
    SMCSettings,
    WorkingPrior,
    abc_smc,
    effective_sample_size,
    weighted_quantile,
)

__all__ = [
    "Fit",
    "fit_observed",
    "as_observed",
    "check_observed",
    "simulated_series",
    "simulation_based_calibration",
    "PosteriorDraws",
    "DRAW_KEY",
]

#: Spawn keys of the posterior draws a decision study makes per replicate r:
#: ``SeedSequence(seed, spawn_key=(*DRAW_KEY, r))``.
DRAW_KEY = (FIT_KEY, 2**31 - 1)
_BOOTSTRAP_KEY = (FIT_KEY, 2**31 - 2)
_CALIBRATION_KEY = (FIT_KEY, 2**31 - 3)
_MARKET = "market.organisations"
_BAND = (0.05, 0.25, 0.5, 0.75, 0.95)


# ----------------------------------------------------------------------------- data and scenario
def as_observed(observed: ObservedSeries | pd.DataFrame | str | Path) -> ObservedSeries:
    """An :class:`ObservedSeries` from a series, a table or a CSV path (validated)."""
    if isinstance(observed, ObservedSeries):
        return observed
    if isinstance(observed, pd.DataFrame):
        return observed_series(observed.astype(str))
    return read_observed(observed)


def _row_of(series: ObservedSeries, index: int) -> str:
    return f"row {index + 2} (period {series.periods[index]})"


def check_observed(series: ObservedSeries, scenario: Scenario, *, market_free: bool = False) -> None:
    """Refuse a series the scenario cannot produce: more customers than the fixed market holds.

    Raises
    ------
    ObservedDataError
        Naming the file, column and row, the value and the market size.
    """
    if market_free or series.market is not None:
        return
    n = scenario.market.organisations
    running = series.counts if series.kind == "customers" else np.cumsum(series.counts)
    over = np.flatnonzero(running > n)
    if over.size:
        i = int(over[0])
        what = "customers" if series.kind == "customers" else "new customers so far"
        raise ObservedDataError(
            f"{series.source}: column {series.kind!r}, {_row_of(series, i)}: {running[i]} {what} is more than "
            f"market.organisations = {n}; the market size is fixed, so give a larger one or free it in [fit]"
        )


def _facts(scenario: Scenario, series: ObservedSeries) -> Scenario:
    """The scenario with what the data say: the market size, the initial customers."""
    changes: dict[str, Any] = {}
    if series.market is not None:
        changes[_MARKET] = series.market
    c0 = series.initial_customers()
    if c0 is not None:
        changes["market.initial_customers"] = c0
        changes["market.initial_share"] = None
        if scenario.seeding.budget is not None:
            changes["seeding.budget"] = c0
    if not changes:
        return scenario
    try:
        return scenario.replace(changes)
    except ScenarioError as exc:
        raise ObservedDataError(f"{series.source}: the data do not fit the scenario: {exc}") from None


def _statistic(result: RunResult, periods: np.ndarray, kind: str) -> np.ndarray:
    return cumulative_at(result.customers, periods, kind)


def _path(result: RunResult) -> tuple[np.ndarray, int]:
    return result.customers.astype(np.int64), int(result.n)


@dataclass(frozen=True)
class _Changes:
    """The ``vary`` of a batch: spawn key → the dotted field changes of its proposal."""

    names: tuple[str, ...]
    whole: tuple[bool, ...]
    values: np.ndarray
    kinds: tuple[str, ...]
    models: np.ndarray
    rows: dict

    def __call__(self, key: tuple[int, ...]) -> dict[str, Any]:
        i = self.rows[tuple(key)]
        out: dict[str, Any] = {n: int(v) if w else float(v) for n, w, v in zip(self.names, self.whole, self.values[i])}
        if len(self.kinds) > 1:
            out["network.kind"] = self.kinds[int(self.models[i])]
        return out


@dataclass(frozen=True)
class PosteriorDraws:
    """Replicate r → one particle of a fit's final generation, drawn by weight from its own
    stream ``SeedSequence(seed, spawn_key=(*DRAW_KEY, r))``: the ``vary`` that makes a
    paired study (:func:`womlab.compare_strategies`, :func:`womlab.evaluate_programme`) draw
    its parameters from the posterior, the same draw for every arm of a replicate."""

    names: tuple[str, ...]
    whole: tuple[bool, ...]
    values: np.ndarray
    kinds: tuple[str, ...]
    models: np.ndarray
    weights: np.ndarray
    seed: int

    def index(self, key: tuple[int, ...]) -> int:
        rng = np.random.default_rng(np.random.SeedSequence(self.seed, spawn_key=(*DRAW_KEY, *map(int, key))))
        return int(rng.choice(self.weights.size, p=self.weights))

    def __call__(self, key: tuple[int, ...]) -> dict[str, Any]:
        i = self.index(key)
        out: dict[str, Any] = {n: int(v) if w else float(v) for n, w, v in zip(self.names, self.whole, self.values[i])}
        if len(self.kinds) > 1:
            out["network.kind"] = self.kinds[int(self.models[i])]
        return out

    def table(self, replicates: int) -> pd.DataFrame:
        """The draw of each replicate 0..R − 1 (one row each)."""
        rows = []
        for r in range(replicates):
            rows.append({"replicate": r, "particle": self.index((r,)), **self((r,))})
        return pd.DataFrame(rows)


# ----------------------------------------------------------------------------- progress
class _Progress:
    """Generations, acceptance and tolerance as the fit goes: a bar on a terminal, plain lines otherwise."""

    def __init__(self, stream: Any = None) -> None:
        self.stream = stream or sys.stderr
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.bar = None

    def __call__(self, info: dict) -> None:
        g, tol = info["generation"], info["tolerance"]
        tol_text = "none (prior)" if not math.isfinite(tol) else f"{tol:.4g}"
        if info["event"] == "batch":
            if self.tty:
                if self.bar is None:
                    from tqdm.auto import tqdm

                    self.bar = tqdm(
                        total=info["particles"],
                        desc=f"generation {g}, tolerance {tol_text}",
                        unit="accepted",
                        leave=False,
                        file=self.stream,
                    )
                self.bar.n = info["accepted"]
                self.bar.set_postfix(acceptance=f"{info['acceptance_rate']:.1%}", simulations=info["simulations"])
            return
        if self.bar is not None:
            self.bar.close()
            self.bar = None
        line = (
            f"generation {g}: tolerance {tol_text}, accepted {info['accepted']} of {info['proposals']} "
            f"({info['acceptance_rate']:.1%}), ESS {info['ess']:.0f}, {info['simulations']} simulations, "
            f"{info['seconds']:.1f} s"
        )
        print(line, file=self.stream, flush=True)


# ----------------------------------------------------------------------------- the fit
@dataclass(eq=False)
class Fit:
    """A fit of the network model to an observed series (:func:`fit_observed`).

    Attributes
    ----------
    base : Scenario
        The scenario as given, with what the data say (market size, initial customers).
    observed : ObservedSeries
        The whole series given.
    fitted : ObservedSeries
        The points fitted (all of them, or all but the held-out ones).
    held_out : ObservedSeries or None
        The points held out (``holdout``), scored by :meth:`holdout_scores`.
    names : tuple of str
        The free fields.
    priors : tuple of Prior
        Their priors, as used (defaults filled in).
    kinds : tuple of str
        The network kinds chosen among (one: the scenario's own).
    smc : SMCResult
        Every generation of the sequential Monte Carlo.
    bass : BassFit
        The Bass fit to the same fitted points (:func:`womlab.fit_bass` on cumulative
        customers, :func:`womlab.fit_bass_sales` in the difference form on new customers).
    bass_scale : float
        Customers per unit of the Bass fit's share (``customers`` data), else 1.
    settings : SMCSettings
    jobs : int
    notes : list of str
        What the fit decided on the way (defaults used, facts taken from the data).
    wall_time : float
    """

    base: Scenario
    observed: ObservedSeries
    fitted: ObservedSeries
    held_out: ObservedSeries | None
    names: tuple[str, ...]
    priors: tuple[Prior, ...]
    working: tuple[WorkingPrior, ...]
    kinds: tuple[str, ...]
    smc: SMCResult
    bass: BassFit
    bass_scale: float
    settings: SMCSettings
    jobs: int = 1
    notes: list[str] = field(default_factory=list)
    wall_time: float = 0.0
    _paths: dict = field(default_factory=dict, repr=False)

    # ------------------------------------------------------------------ the posterior
    @property
    def scenario_name(self) -> str:
        return self.base.name

    @property
    def replicates(self) -> int:
        """Particles in the final generation (for manifests)."""
        return int(self.smc.final.weights.size)

    @property
    def weights(self) -> np.ndarray:
        return self.smc.final.weights

    def values(self) -> np.ndarray:
        """Field values of the final particles, one row each (whole-number fields rounded)."""
        pop = self.smc.final
        return np.column_stack([p.value(pop.theta[:, j]) for j, p in enumerate(self.working)])

    def kind_of(self) -> np.ndarray:
        """The network kind of each final particle."""
        return np.array([self.kinds[m] for m in self.smc.final.model])

    @property
    def posterior(self) -> pd.DataFrame:
        """The final generation's particles: network kind, each free field, weight, distance."""
        pop = self.smc.final
        frame = pd.DataFrame(self.values(), columns=list(self.names))
        for name in self.names:
            if field_type(name) is int:
                frame[name] = frame[name].astype(np.int64)
        frame.insert(0, "network_kind", self.kind_of())
        frame.insert(0, "particle", np.arange(len(frame)))
        frame["weight"] = pop.weights
        frame["distance"] = pop.distances
        frame["generation"] = [k[1] for k in pop.keys]
        frame["proposal"] = [k[2] for k in pop.keys]
        return frame

    def _mapped(self) -> pd.DataFrame:
        """Mapped Bass p and Q (:func:`womlab.mapped_parameters`) of each final particle."""
        draws = self.posterior_draws()
        rows = []
        base = self._sim_base()
        for i in range(self.weights.size):
            changes = {n: int(v) if w else float(v) for n, w, v in zip(draws.names, draws.whole, draws.values[i])}
            if len(self.kinds) > 1:
                changes["network.kind"] = self.kinds[int(draws.models[i])]
            par = mapped_parameters(base.replace(changes))
            rows.append({"bass_p": par.p, "bass_Q": par.Q})
        return pd.DataFrame(rows)

    def summary(self) -> pd.DataFrame:
        """Per free field (and the mapped Bass p and Q): the prior, the weighted median,
        50 % and 90 % intervals, mean and sd, and the effective sample size of the weights."""
        w = self.weights
        values = self.values()
        columns = [(name, values[:, j], self.priors[j].describe(), "free") for j, name in enumerate(self.names)]
        mapped = self._mapped()
        for name in ("bass_p", "bass_Q"):
            col = mapped[name].to_numpy(dtype=float)
            if np.isfinite(col).all():
                columns.append((name, col, "mapped from the fields (womlab.mapped_parameters)", "derived"))
        ess = effective_sample_size(w)
        rows = []
        for name, col, prior, role in columns:
            q = weighted_quantile(col, w, [0.05, 0.25, 0.5, 0.75, 0.95])
            mean = float(np.average(col, weights=w))
            rows.append(
                {
                    "parameter": name,
                    "role": role,
                    "prior": prior,
                    "median": q[2],
                    "low_50": q[1],
                    "high_50": q[3],
                    "low_90": q[0],
                    "high_90": q[4],
                    "mean": mean,
                    "sd": float(np.sqrt(np.average((col - mean) ** 2, weights=w))),
                    "ess": ess,
                    "particles": int(w.size),
                }
            )
        return pd.DataFrame(rows)

    def generations(self) -> pd.DataFrame:
        """Method diagnostics, one row per generation: tolerance, proposals, accepted,
        acceptance rate, effective sample size, simulations so far, seconds (and the
        network kinds' probabilities when several are compared)."""
        table = pd.DataFrame(self.smc.generations)
        rename = {f"model_{k}": f"p_{kind}" for k, kind in enumerate(self.kinds)}
        table = table.rename(columns=rename)
        if len(self.kinds) == 1:
            table = table.drop(columns=list(rename.values()))
        return table

    def network_kinds(self) -> pd.DataFrame:
        """Posterior probability of each network kind (the weights of its particles) and
        its particles; with one kind, that kind with probability 1."""
        pop = self.smc.final
        probs = pop.model_probabilities(len(self.kinds))
        counts = np.bincount(pop.model, minlength=len(self.kinds))
        return pd.DataFrame(
            {
                "network_kind": list(self.kinds),
                "probability": probs,
                "particles": counts,
                "prior": 1.0 / len(self.kinds),
            }
        )

    def posterior_draws(self) -> PosteriorDraws:
        """The per-replicate draws a decision study uses (see :class:`PosteriorDraws`)."""
        return PosteriorDraws(
            names=self.names,
            whole=tuple(field_type(n) is int for n in self.names),
            values=self.values(),
            kinds=self.kinds,
            models=self.smc.final.model.copy(),
            weights=self.weights / self.weights.sum(),
            seed=self.base.seed,
        )

    def scenario(self) -> Scenario:
        """The scenario at the posterior: the most probable network kind, and each free field
        at its weighted median among that kind's particles. Its ``run.periods`` is the
        scenario's own (the horizon you plan for); its ``[fit]`` section is dropped."""
        pop = self.smc.final
        best = int(np.argmax(pop.model_probabilities(len(self.kinds))))
        keep = pop.model == best
        values = self.values()[keep]
        w = pop.weights[keep]
        changes: dict[str, Any] = {}
        for j, name in enumerate(self.names):
            med = float(weighted_quantile(values[:, j], w, 0.5))
            changes[name] = int(round(med)) if field_type(name) is int else med
        if len(self.kinds) > 1:
            changes["network.kind"] = self.kinds[best]
        return dataclasses.replace(self.base, fit=FitSpec()).replace(changes)

    def replace(self, changes: Mapping[str, Any]) -> Fit:
        """The same posterior on a changed scenario (e.g. with a ``[referral]`` programme to
        evaluate): ``fit.replace({"referral.enrol": "all", "referral.reward": 20.0})``."""
        return dataclasses.replace(self, base=self.base.replace(dict(changes)), _paths={})

    # ------------------------------------------------------------------ paths
    def _sim_base(self, horizon: int | None = None) -> Scenario:
        base = dataclasses.replace(self.base, fit=FitSpec())
        return base.replace("run.periods", int(horizon if horizon is not None else self.fitted.last_period))

    def paths(self, horizon: int) -> tuple[np.ndarray, np.ndarray]:
        """Customers per period 0..``horizon`` of every final particle's accepted simulation,
        continued to ``horizon`` (same spawn keys); and each particle's market size."""
        horizon = max(int(horizon), self.fitted.last_period)
        if horizon not in self._paths:
            pop = self.smc.final
            values = self.values()
            changes = _Changes(
                names=self.names,
                whole=tuple(field_type(n) is int for n in self.names),
                values=values,
                kinds=self.kinds,
                models=pop.model,
                rows={tuple(k): i for i, k in enumerate(pop.keys)},
            )
            runs = run_paired(
                {"": self._sim_base(horizon)}, 0, jobs=self.jobs, keys=pop.keys, reduce=_path, vary=changes
            )[""]
            self._paths[horizon] = (np.vstack([r[0] for r in runs]), np.array([r[1] for r in runs], dtype=float))
        return self._paths[horizon]

    def prefix_check(self) -> float:
        """Share of final particles whose continued path repeats its accepted simulation's
        statistic exactly (1.0 when the engine's draws do not depend on the horizon)."""
        paths, _ = self.paths(self.fitted.last_period)
        stats = cumulative_at(paths, self.fitted.periods, self.fitted.kind)
        again = _distances(stats, self.fitted.cumulative())
        return float(np.mean(again == self.smc.final.distances))

    # ------------------------------------------------------------------ Bass
    def bass_curve(self, periods: np.ndarray) -> np.ndarray:
        """The Bass fit's cumulative customers (``customers`` data) or new customers
        (``new_customers`` data) at ``periods``."""
        return _bass_values(self.bass, self.fitted, np.asarray(periods, dtype=float), self.bass_scale)

    def _bass_statistic(self, series: ObservedSeries) -> np.ndarray:
        """The Bass fit's cumulative statistic at the periods of ``series`` (the whole series)."""
        v = self.bass_curve(series.periods)
        return v if series.kind == "customers" else np.cumsum(v)

    # ------------------------------------------------------------------ forecast and stage
    def forecast(self, periods: int = 12) -> pd.DataFrame:
        """Posterior predictive bands, period 0 to ``periods`` after the last fitted period.

        Columns: ``period``; ``observed_customers`` or ``observed_new_customers`` (NaN
        where not observed), ``held_out`` (the point was held out of the fit);
        ``customers_q05`` … ``customers_q95`` and ``customers_mean``;
        ``new_customers_q05`` … ``new_customers_q95``; ``share_q05``, ``share_q50``,
        ``share_q95`` (customers over each particle's market size); ``bass`` (the Bass
        fit's customers or new customers, as the data). Quantiles are weighted over the
        final particles.
        """
        if periods < 0:
            raise ScenarioError(f"forecast periods must be a whole number >= 0, got {periods}")
        horizon = self.fitted.last_period + int(periods)
        horizon = max(horizon, self.observed.last_period)
        paths, sizes = self.paths(horizon)
        w = self.weights
        t = np.arange(horizon + 1)
        out: dict[str, Any] = {"period": t}
        obs = np.full(t.size, np.nan)
        obs[self.observed.periods[self.observed.periods <= horizon]] = self.observed.counts[
            self.observed.periods <= horizon
        ]
        out[f"observed_{self.observed.kind}"] = obs
        held = np.zeros(t.size, dtype=bool)
        if self.held_out is not None:
            held[self.held_out.periods[self.held_out.periods <= horizon]] = True
        out["held_out"] = held
        new = np.diff(paths, axis=1, prepend=paths[:, :1])
        for name, data in (("customers", paths), ("new_customers", new)):
            q = weighted_quantile(data, w, _BAND)
            for level, row in zip(_BAND, q):
                out[f"{name}_q{int(round(level * 100)):02d}"] = row
            if name == "customers":
                out["customers_mean"] = w @ data / w.sum()
        share = paths / sizes[:, None]
        q = weighted_quantile(share, w, (0.05, 0.5, 0.95))
        out["share_q05"], out["share_q50"], out["share_q95"] = q
        bass = np.full(t.size, np.nan)
        start = int(self.fitted.periods[0]) if self.fitted.kind == "customers" else 1
        bass[start:] = self.bass_curve(t[start:])
        out["bass"] = bass
        table = pd.DataFrame(out)
        table.loc[0, [c for c in table.columns if c.startswith("new_customers_q")]] = 0.0
        return table

    def stage(self, horizon: int | None = None) -> pd.DataFrame:
        """Where on the S-curve the market stands, from the posterior (weighted over particles).

        Rows: ``share_reached`` (customers at the last fitted period over the market size:
        observed customers where the data give them, else the accepted simulation's);
        ``peak_period`` (the period of most new customers, past or predicted);
        ``peak_passed`` (posterior probability the peak is at or before the last fitted
        period; the ``position`` column says before or after); ``t50``, ``t90`` (period at
        which half and 90 % of the market are customers) and ``periods_to_50``,
        ``periods_to_90`` (from the last fitted period; negative when passed). Columns:
        ``estimate`` (weighted median, or the probability), ``low_90``, ``high_90``,
        ``defined`` (weighted share of particles for which the quantity is reached within
        the horizon).

        Parameters
        ----------
        horizon : int, optional
            Last period simulated; default four times the last fitted period, at least 40.
        """
        last = self.fitted.last_period
        horizon = max(4 * last, 40) if horizon is None else int(horizon)
        paths, sizes = self.paths(horizon)
        w = self.weights
        if self.fitted.kind == "customers":
            reached = self.fitted.counts[-1] / sizes
        else:
            reached = paths[:, last] / sizes
        share = paths / sizes[:, None]
        new = np.diff(paths, axis=1)
        peak = (np.argmax(new, axis=1) + 1).astype(float)
        peak[peak >= horizon] = np.nan  # still rising at the horizon: not found
        t50 = np.array([time_to_share(s, 0.5) for s in share])
        t90 = np.array([time_to_share(s, 0.9) for s in share])
        passed = float(np.sum(w * (np.nan_to_num(peak, nan=np.inf) <= last)) / w.sum())
        rows = [
            _stage_row("share_reached", reached, w, "share of the market that are customers at the last fitted period"),
            _stage_row("peak_period", peak, w, "period of most new customers"),
            {
                "quantity": "peak_passed",
                "estimate": passed,
                "low_90": np.nan,
                "high_90": np.nan,
                "defined": 1.0,
                "position": "after the peak" if passed >= 0.5 else "before the peak",
                "meaning": f"probability the peak of new customers is at or before period {last}",
            },
            _stage_row("t50", t50, w, "period at which half the market are customers"),
            _stage_row("periods_to_50", t50 - last, w, f"periods from period {last} to half the market"),
            _stage_row("t90", t90, w, "period at which 90 % of the market are customers"),
            _stage_row("periods_to_90", t90 - last, w, f"periods from period {last} to 90 % of the market"),
        ]
        table = pd.DataFrame(rows)
        table["position"] = table["position"].fillna("")
        table["horizon"] = horizon
        return table

    # ------------------------------------------------------------------ holdout
    def holdout_scores(self, bootstrap: int = 200) -> pd.DataFrame:
        """The held-out points' forecast scored for the network posterior and the Bass fit.

        For each method: ``mae_customers`` (mean absolute error of the cumulative curve at
        the held-out periods, in customers), ``mae_share`` (the same over the market size
        in ``share_of``: the known or fixed market, else the network posterior's median),
        ``coverage_90`` (share of held-out points inside the 90 % predictive interval),
        ``interval_width`` (its mean width, customers), ``better`` (the lower MAE). The
        network's interval is the weighted 5–95 % of its continued simulations; the Bass
        fit's comes from a residual bootstrap (``bootstrap`` refits to the fitted points
        plus resampled residuals, each forecast plus resampled residuals; Efron &
        Tibshirani 1993, §9.5), seeded from the scenario's seed.

        Raises
        ------
        ScenarioError
            If the fit held nothing out.
        """
        if self.held_out is None:
            raise ScenarioError("holdout_scores needs a fit with holdout >= 1 (fit_observed(..., holdout=6))")
        whole = self.fitted.head(self.held_out.last_period)
        whole = dataclasses.replace(
            whole,
            periods=np.concatenate([self.fitted.periods, self.held_out.periods]),
            counts=np.concatenate([self.fitted.counts, self.held_out.counts]),
        )
        n_fit = len(self.fitted)
        truth = whole.cumulative()[n_fit:]
        paths, sizes = self.paths(self.held_out.last_period)
        sim = cumulative_at(paths, whole.periods, whole.kind)[:, n_fit:]
        w = self.weights
        q = weighted_quantile(sim, w, (0.05, 0.5, 0.95))
        reference, share_of = self._reference_market(sizes)
        bass_point = self._bass_statistic(whole)[n_fit:]
        b_low, b_high = self._bass_interval(whole, bootstrap)
        rows = []
        for method, point, low, high in (
            ("network model (ABC posterior)", q[1], q[0], q[2]),
            ("Bass (least squares)", bass_point, b_low, b_high),
        ):
            err = np.abs(point - truth)
            rows.append(
                {
                    "method": method,
                    "points": int(truth.size),
                    "mae_customers": float(err.mean()),
                    "mae_share": float(err.mean() / reference),
                    "share_of": share_of,
                    "coverage_90": float(np.mean((truth >= low) & (truth <= high))),
                    "interval_width": float(np.mean(high - low)),
                }
            )
        table = pd.DataFrame(rows)
        best = int(np.argmin(table["mae_customers"].to_numpy()))
        table["better"] = [i == best for i in range(len(table))]
        return table

    def _reference_market(self, sizes: np.ndarray) -> tuple[float, str]:
        if self.observed.market is not None:
            return float(self.observed.market), f"known market size {self.observed.market}"
        if _MARKET not in self.names:
            n = self.base.market.organisations
            return float(n), f"market.organisations = {n}"
        med = float(weighted_quantile(sizes, self.weights, 0.5))
        return med, f"posterior median market size {med:.0f}"

    def _bass_interval(self, whole: ObservedSeries, bootstrap: int) -> tuple[np.ndarray, np.ndarray]:
        fitted = self.fitted
        n_fit = len(fitted)
        y = fitted.counts.astype(float)
        times = fitted.periods.astype(float)
        yhat = self.bass_curve(times)
        resid = y - yhat
        rng = np.random.default_rng(np.random.SeedSequence(self.base.seed, spawn_key=_BOOTSTRAP_KEY))
        sims = []
        start = (self.bass.p, self.bass.Q, self.bass.m)
        for _ in range(bootstrap):
            ystar = yhat + rng.choice(resid, size=resid.size, replace=True)
            if fitted.kind == "customers":
                ystar = np.maximum.accumulate(np.maximum(ystar, 0.0))
            else:
                ystar = np.maximum(ystar, 0.0)
            try:
                fit = _fit_bass_to(fitted, ystar, self.bass_scale, start=start)
            except Exception:  # noqa: BLE001 - a resample the fit cannot take is left out
                continue
            future = _bass_values(fit, fitted, whole.periods.astype(float), self.bass_scale)
            future = future + rng.choice(resid, size=future.size, replace=True)
            sims.append(future if whole.kind == "customers" else np.cumsum(future))
        sims = np.array(sims)[:, n_fit:]
        return np.quantile(sims, 0.05, axis=0), np.quantile(sims, 0.95, axis=0)

    # ------------------------------------------------------------------ presenting
    def figure(self, periods: int = 12) -> Any:
        """The fit's figure (:func:`womlab.fit_figure`)."""
        return present(self, "figure", periods=periods)

    def save(self, out: str | Path, **kwargs: Any) -> list[Path]:
        """Write the fit's results folder (:func:`womlab.save_fit`); returns the paths written."""
        return present(self, "save", out, **kwargs)


def _stage_row(name: str, values: np.ndarray, w: np.ndarray, meaning: str) -> dict:
    ok = np.isfinite(values)
    defined = float(w[ok].sum() / w.sum())
    if ok.any():
        q = weighted_quantile(values[ok], w[ok], (0.05, 0.5, 0.95))
    else:
        q = np.full(3, np.nan)
    return {
        "quantity": name,
        "estimate": float(q[1]),
        "low_90": float(q[0]),
        "high_90": float(q[2]),
        "defined": defined,
        "position": None,
        "meaning": meaning,
    }


def _distances(stats: np.ndarray, target: np.ndarray) -> np.ndarray:
    """The distance of each row of ``stats`` to ``target`` (module docstring). Computed one row
    at a time, so that a distance never depends on the batch it was computed in."""
    scale = max(float(target[-1]), 1.0)
    rows = np.atleast_2d(np.asarray(stats, dtype=float))
    return np.array([math.sqrt(float(np.mean(((row - target) / scale) ** 2))) for row in rows])


# ----------------------------------------------------------------------------- Bass on the same data
def _bass_values(fit: BassFit, series: ObservedSeries, periods: np.ndarray, scale: float) -> np.ndarray:
    if series.kind == "customers":
        return scale * fit.share(periods - float(series.periods[0]))
    return fit.m * (bass_share(periods, fit.p, fit.Q) - bass_share(periods - 1.0, fit.p, fit.Q))


def _fit_bass_to(
    series: ObservedSeries, values: np.ndarray, scale: float, start: tuple[float, float, float] | None = None
) -> BassFit:
    if series.kind == "customers":
        market = 1.0 if series.market is not None else None
        return fit_bass(values / scale, series.periods.astype(float), market=market, start=start)
    return fit_bass_sales(values, series.periods.astype(float), form="difference", start=start)


# ----------------------------------------------------------------------------- fit_observed
def _settle(
    scenario: Scenario, series: ObservedSeries, spec: FitSpec, notes: list[str]
) -> tuple[tuple[str, ...], list[Prior]]:
    names = spec.free_fields()
    if spec.free is None and not names:
        names = tuple(n for n in DEFAULT_FREE if not (n == _MARKET and series.market is not None))
        notes.append(f"free fields by default: {', '.join(names)}")
    if series.market is not None and _MARKET in names and spec.free is not None:
        raise ObservedDataError(
            f"{series.source}: column 'market' gives the market size ({series.market}), so "
            f"market.organisations cannot be free as well; drop it from fit.free"
        )
    if _MARKET in names and scenario.network.kind == "edgelist":
        raise ScenarioError(
            'fit.free: market.organisations is read from the edge list (network.kind = "edgelist"); it cannot be free'
        )
    floor = series.largest_count() + (scenario.n_initial if series.kind == "new_customers" else 0)
    priors = []
    for name in names:
        prior = spec.prior(name)
        if prior is None:
            if name == _MARKET:
                low = max(floor, scenario.n_initial, 1)
                prior = Prior(name=name, distribution="log_uniform", low=float(low), high=float(10 * low))
                notes.append(
                    f"default prior for {name}: {prior.describe()} (the most customers the data show, to 10 times that)"
                )
            elif name in DEFAULT_PRIORS:
                prior = dataclasses.replace(DEFAULT_PRIORS[name])
                if name == "adoption.word_of_mouth" and scenario.adoption.rule == "cascade":
                    prior = Prior(name=name, distribution="uniform", low=0.0, high=1.0)
                notes.append(f"default prior for {name}: {prior.describe()}")
            else:
                raise ScenarioError(
                    f"fit.priors: {name} has no default prior; give one, e.g. "
                    f'[fit.priors] "{name}" = {{ distribution = "uniform", low = ..., high = ... }}'
                )
        if name == _MARKET:
            low, high = prior.bounds()
            if high < floor:
                raise ObservedDataError(
                    f"fit.priors.'{_MARKET}'.high = {high:g} is below the {floor} customers {series.source} shows "
                    f"(a market holds at least every customer seen); raise it above {floor}"
                )
            if low < floor:
                notes.append(
                    f"{_MARKET} below {floor} cannot hold the customers the data show: the posterior has no mass there"
                )
        priors.append(prior)
    return names, priors


def _working(prior: Prior) -> WorkingPrior:
    low, high = prior.bounds()
    whole = field_type(prior.name) is int
    return WorkingPrior(
        name=prior.name,
        distribution=prior.distribution,
        low=low,
        high=high,
        mean=prior.mean if prior.mean is not None else 0.0,
        sd=prior.sd if prior.sd is not None else 1.0,
        whole=whole,
    )


def _check_values(base: Scenario, names: Sequence[str], priors: Sequence[Prior], kinds: Sequence[str]) -> None:
    """Build the scenario at each prior's bounds and under each kind before any run."""
    for prior in priors:
        low, high = prior.bounds()
        for key, value in (("low", low), ("high", high)):
            if not math.isfinite(value):
                continue
            v = int(round(value)) if field_type(prior.name) is int else value
            try:
                base.replace(prior.name, v)
            except ScenarioError as exc:
                raise ScenarioError(
                    f"fit.priors.{prior.name!r}.{key} = {value:g} is outside what {prior.name} allows: {exc}"
                ) from None
    for kind in kinds:
        try:
            base.replace("network.kind", kind)
        except ScenarioError as exc:
            raise ScenarioError(f"fit.network_kinds: {kind!r} does not suit this scenario: {exc}") from None


def fit_observed(
    scenario: Scenario,
    observed: ObservedSeries | pd.DataFrame | str | Path | None = None,
    fit: Sequence[str] | None = None,
    *,
    priors: Mapping[str, Mapping[str, Any]] | None = None,
    network_kinds: Sequence[str] | None = None,
    holdout: int = 0,
    particles: int | None = None,
    generations: int | None = None,
    simulations: int | None = None,
    jobs: int | None = None,
    progress: bool = False,
) -> Fit:
    """Fit the network model to an observed adoption series by ABC-SMC.

    Parameters
    ----------
    scenario : Scenario
        The market, network, rule and run; its ``[fit]`` section gives the defaults below.
    observed : ObservedSeries, DataFrame or path, optional
        The series (:func:`womlab.read_observed`); by default the file ``fit.data_path`` names.
    fit : sequence of str, optional
        The free fields (overrides ``fit.free``).
    priors : mapping, optional
        Dotted field → ``{distribution, low, high, mean, sd}`` (overrides ``[fit.priors]``).
    network_kinds : sequence of str, optional
        Network kinds to choose among (overrides ``fit.network_kinds``).
    holdout : int
        Fit on the points up to ``holdout`` periods before the last, hold the rest out and
        score their forecast (:meth:`Fit.holdout_scores`).
    particles, generations, simulations : int, optional
        Override ``fit.particles``, ``fit.generations``, ``fit.simulations``.
    jobs : int, optional
        Worker processes (default ``run.jobs``); the result does not depend on it.
    progress : bool
        Print generations, acceptance rate and tolerance on standard error as the fit goes
        (a progress bar on a terminal, plain lines otherwise).

    Returns
    -------
    Fit

    Raises
    ------
    ScenarioError
        A free field that is unknown or not a number, a prior outside what its field
        allows or without a default, a network kind that does not suit the scenario.
    ObservedDataError
        A series the scenario cannot produce (more customers than a fixed market holds,
        a market-size prior below the customers seen) or a holdout that leaves too little.

    Examples
    --------
    >>> from womlab import Scenario, simulated_series
    >>> s = Scenario.from_dict({"seed": 1, "market": {"organisations": 300, "initial_customers": 3},
    ...     "network": {"kind": "random", "mean_degree": 6}, "run": {"periods": 12},
    ...     "adoption": {"external": 0.01, "word_of_mouth": 0.5}})
    >>> seen = simulated_series(s, periods=12)
    >>> fit = fit_observed(s, seen, ["adoption.word_of_mouth"], particles=40, generations=2, simulations=400)
    >>> fit.summary()["parameter"].tolist()
    ['adoption.word_of_mouth', 'bass_p', 'bass_Q']

    References
    ----------
    Beaumont et al. (2009); Toni et al. (2009): see :mod:`womlab.studies.calibration`.
    """
    start = time.perf_counter()
    if observed is None:
        if scenario.fit.data_path is None:
            raise ObservedDataError(
                "no observed series: give one (observed=, womlab fit --data) or name its file in fit.data_path"
            )
        observed = scenario.fit.data_path
    series = as_observed(observed)
    changes: dict[str, Any] = {}
    if fit is not None:
        changes["fit.free"] = list(fit)
    if priors is not None:
        changes["fit.priors"] = {k: (v.to_table() if isinstance(v, Prior) else dict(v)) for k, v in priors.items()}
    if network_kinds is not None:
        changes["fit.network_kinds"] = list(network_kinds)
    for key, value in (("particles", particles), ("generations", generations), ("simulations", simulations)):
        if value is not None:
            changes[f"fit.{key}"] = value
    if changes:
        scenario = scenario.replace(changes)
    spec = scenario.fit
    notes: list[str] = []
    held_out = None
    fitted = series
    if holdout:
        if holdout < 0:
            raise ScenarioError(f"holdout must be a whole number >= 0, got {holdout}")
        cut = series.last_period - int(holdout)
        fitted, held_out = series.head(cut), series.tail(cut)
        if len(fitted) < 4 or len(held_out) < 1:
            raise ObservedDataError(
                f"{series.source}: holdout = {holdout} leaves {len(fitted)} points to fit and "
                f"{len(held_out)} to score; a fit needs at least 4 and the score at least 1"
            )
    base = _facts(scenario, series)
    names, prior_list = _settle(base, fitted, spec, notes)  # the fitted points only: nothing held out leaks in
    check_observed(series, base, market_free=_MARKET in names)
    if series.market is not None:
        notes.append(f"market.organisations = {series.market} from the data's market column")
    if series.initial_customers() is not None:
        notes.append(f"market.initial_customers = {series.initial_customers()} from the data's period 0")
    kinds = tuple(spec.network_kinds) if spec.network_kinds else (base.network.kind,)
    sim_base = dataclasses.replace(base, fit=FitSpec()).replace("run.periods", int(fitted.last_period))
    _check_values(sim_base, names, prior_list, kinds)
    working = tuple(_working(p) for p in prior_list)
    whole = tuple(w.whole for w in working)
    target = fitted.cumulative()
    reduce = partial(_statistic, periods=fitted.periods, kind=fitted.kind)
    jobs = scenario.run.jobs if jobs is None else jobs

    def simulate(models: np.ndarray, theta: np.ndarray, keys: list) -> np.ndarray:
        values = np.column_stack([p.value(theta[:, j]) for j, p in enumerate(working)]) if working else theta
        vary = _Changes(
            names=names,
            whole=whole,
            values=values,
            kinds=kinds,
            models=models,
            rows={tuple(k): i for i, k in enumerate(keys)},
        )
        stats = run_paired({"": sim_base}, 0, jobs=jobs, keys=keys, reduce=reduce, vary=vary)[""]
        return _distances(np.vstack(stats), target)

    settings = SMCSettings(
        particles=spec.particles,
        generations=spec.generations,
        simulations=spec.simulations,
        quantile=spec.quantile,
        min_acceptance=spec.min_acceptance,
    )
    report = _Progress() if progress else None
    if progress:
        print(
            f"fitting {', '.join(names)}{' and the network kind' if len(kinds) > 1 else ''} to {len(fitted)} points "
            f"of {series.source}: {settings.particles} particles, up to {settings.generations + 1} generations and "
            f"{settings.simulations} simulations, {jobs} worker(s)",
            file=sys.stderr,
            flush=True,
        )
    result = abc_smc(working, simulate, seed=base.seed, settings=settings, models=len(kinds), report=report)
    scale = 1.0
    if fitted.kind == "customers":
        if series.market is not None:
            scale = float(series.market)
        elif _MARKET in names:
            scale = float(prior_list[names.index(_MARKET)].bounds()[1])
        else:
            scale = float(base.market.organisations)
    bass = _fit_bass_to(fitted, fitted.counts.astype(float), scale)
    if progress:
        print(
            f"stopped: {result.stopped}; {result.simulations} simulations in {result.wall_time:.1f} s",
            file=sys.stderr,
            flush=True,
        )
    return Fit(
        base=base,
        observed=series,
        fitted=fitted,
        held_out=held_out,
        names=names,
        priors=tuple(prior_list),
        working=working,
        kinds=kinds,
        smc=result,
        bass=bass,
        bass_scale=scale,
        settings=settings,
        jobs=jobs,
        notes=notes,
        wall_time=time.perf_counter() - start,
    )


# ----------------------------------------------------------------------------- synthetic series and calibration
def simulated_series(
    scenario: Scenario,
    *,
    periods: int | None = None,
    kind: str = "new_customers",
    key: tuple[int, ...] = (0,),
    drop: Sequence[int] = (),
    market: bool = False,
    source: str = "simulated",
) -> ObservedSeries:
    """One simulated run of ``scenario`` as an observed series (for checks and demos).

    Parameters
    ----------
    periods : int, optional
        Last period (default ``run.periods``).
    kind : str
        ``new_customers`` (periods 1..T) or ``customers`` (periods 0..T).
    key : tuple of int
        The run's spawn key.
    drop : sequence of int
        Periods to leave out (gaps in the record).
    market : bool
        Give the market size in the series.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 2}, "run": {"periods": 6}})
    >>> simulated_series(s, drop=[3]).periods.tolist()
    [1, 2, 4, 5, 6]
    """
    horizon = scenario.run.periods if periods is None else int(periods)
    run = run_one(dataclasses.replace(scenario, fit=FitSpec()).replace("run.periods", horizon), key)
    c = run.customers.astype(np.int64)
    if kind == "customers":
        t = np.arange(horizon + 1)
        values = c
    elif kind == "new_customers":
        t = np.arange(1, horizon + 1)
        values = np.diff(c)
    else:
        raise ScenarioError(f"kind must be customers or new_customers, got {kind!r}")
    keep = ~np.isin(t, np.asarray(drop, dtype=int))
    return ObservedSeries(
        periods=t[keep],
        counts=values[keep],
        kind=kind,
        market=scenario.market.organisations if market else None,
        source=source,
    )


def simulation_based_calibration(
    scenario: Scenario,
    points: int,
    *,
    periods: int | None = None,
    kind: str = "new_customers",
    jobs: int | None = None,
    progress: bool = False,
) -> pd.DataFrame:
    """Coverage of the fit's intervals on series simulated from known parameters.

    ``points`` parameter sets are drawn from the ``[fit]`` priors (stream
    ``SeedSequence(seed, spawn_key=(FIT_KEY, 2**31 − 3, i))``), a series is simulated from
    each (the same key) and fitted with the scenario's ``[fit]`` settings; each row says
    whether the true value lies inside the posterior 50 % and 90 % intervals. Over many
    points a calibrated method covers about 50 % and 90 % (Talts et al. 2018; Cook, Gelman
    & Rubin 2006); ABC's tolerance widens the posterior, so coverage above nominal is
    expected, below it is a fault.

    Every free field needs an explicit prior here (the market size's data-dependent
    default would depend on the series).

    Returns
    -------
    pandas.DataFrame
        point, parameter, truth, median, low_50, high_50, low_90, high_90, in_50, in_90,
        simulations, network_kind (the true kind) and p_true_kind (its posterior
        probability) when kinds are compared.
    """
    spec = scenario.fit
    names = spec.free_fields()
    priors = [spec.prior(n) for n in names]
    if not names or any(p is None for p in priors):
        missing = [n for n, p in zip(names, priors) if p is None]
        raise ScenarioError(
            f"simulation_based_calibration needs [fit.priors] for every free field; missing: {missing or 'fit.free is empty'}"
        )
    working = [_working(p) for p in priors]
    kinds = tuple(spec.network_kinds) if spec.network_kinds else (scenario.network.kind,)
    horizon = scenario.run.periods if periods is None else int(periods)
    rows = []
    for i in range(points):
        rng = np.random.default_rng(np.random.SeedSequence(scenario.seed, spawn_key=(*_CALIBRATION_KEY, i)))
        true_kind = kinds[int(rng.integers(0, len(kinds)))] if len(kinds) > 1 else kinds[0]
        truth = {}
        for w in working:
            v = float(w.value(w.sample(rng, 1))[0])
            truth[w.name] = int(v) if w.whole else v
        changes = dict(truth)
        if len(kinds) > 1:
            changes["network.kind"] = true_kind
        series = simulated_series(
            scenario.replace(changes),
            periods=horizon,
            kind=kind,
            key=(*_CALIBRATION_KEY, i),
            source=f"calibration point {i}",
        )
        f = fit_observed(scenario, series, jobs=jobs, progress=progress)
        summary = f.summary().set_index("parameter")
        p_kind = float(f.network_kinds().set_index("network_kind").loc[true_kind, "probability"])
        for name in names:
            r = summary.loc[name]
            t = truth[name]
            rows.append(
                {
                    "point": i,
                    "parameter": name,
                    "truth": t,
                    "median": r["median"],
                    "low_50": r["low_50"],
                    "high_50": r["high_50"],
                    "low_90": r["low_90"],
                    "high_90": r["high_90"],
                    "in_50": bool(r["low_50"] <= t <= r["high_50"]),
                    "in_90": bool(r["low_90"] <= t <= r["high_90"]),
                    "simulations": f.smc.simulations,
                    "network_kind": true_kind,
                    "p_true_kind": p_kind,
                }
            )
    return pd.DataFrame(rows)
