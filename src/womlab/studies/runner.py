"""Replicate batches and paired comparisons, run in parallel with joblib.

Randomness. Replicate r of a batch uses ``SeedSequence(seed, spawn_key=(r,))`` (a sweep
point i uses ``spawn_key=(i, r)``), split by :func:`womlab.dynamics.streams` into three
child streams: network, seeding and dynamics. A run's result therefore depends only on
the scenario, the root seed and its key — not on the number of workers, the backend or
the order in which runs finish.

Pairing. :func:`run_paired` runs several variants of a scenario on each replicate's one
network, each variant starting its seeding and dynamics streams afresh from the same
SeedSequences: common random numbers, so differences between variants are differences
the variants make, not noise. A plain batch (:func:`run_replicates`) is the one-variant
case of the same mechanism.
"""

from __future__ import annotations

import math
import sys
import time
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from functools import partial
from typing import Any

import numpy as np
import pandas as pd

from womlab.aggregate import (
    aggregate_curve,
    churn_curves,
    expected_stay,
    generations_difference,
    group_curves,
    mapped_generations,
    norton_bass,
)
from womlab.dynamics import CHURN_COLUMNS, CURVE_COLUMNS, WARNING_COLUMNS, RunResult, engine_for, streams
from womlab.errors import ScenarioError
from womlab.networks import ReferralNetwork, build_network
from womlab.networks.given import GivenNetwork, as_network, mapped_with, node_attributes
from womlab.scenario import Scenario
from womlab.scenario.progress import bar, doing
from womlab.scenario.resources import usable_jobs
from womlab.seeding import initial_customers
from womlab.studies.metrics import metrics_table

__all__ = [
    "run_one",
    "run_replicates",
    "run_paired",
    "run_chunks",
    "parallel_choice",
    "crossover_seconds",
    "Batch",
]


def run_one(scenario: Scenario, key: tuple[int, ...] = (0,), *, network: GivenNetwork | None = None) -> RunResult:
    """One seeded run of ``scenario`` with spawn key ``key``.

    Parameters
    ----------
    scenario : Scenario
    key : tuple of int
        SeedSequence spawn key: ``(replicate,)`` in a batch, ``(point, replicate)`` in a sweep.
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        The network to run on (an edge table has columns ``source``, ``target``; see
        :func:`womlab.networks.given.as_network`), of ``market.organisations``
        organisations; by default it is built from the run's network stream.

    Examples
    --------
    >>> from womlab import Scenario, run_one
    >>> s = Scenario.from_dict({"market": {"organisations": 300, "initial_customers": 3},
    ...                         "network": {"kind": "ring", "mean_degree": 4}, "run": {"periods": 10}})
    >>> len(run_one(s, (0,)).curve())
    11
    """
    given = None if network is None else as_network(network, scenario.market.organisations)
    return _run_variants({"": scenario}, key, given)[""]


def _run_variants(
    variants: Mapping[str, Scenario], key: tuple[int, ...], network: ReferralNetwork | None = None
) -> dict[str, RunResult]:
    first = next(iter(variants.values()))
    st = streams(first.seed, key)
    if network is None:
        network = build_network(first, np.random.default_rng(st.network))
    out = {}
    for name, scenario in variants.items():
        if name:
            doing(name)
        engine = engine_for(scenario)  # a strategy that simulates (greedy) scores seeds with the run's own engine
        initial = initial_customers(scenario, network, np.random.default_rng(st.seeding), simulate=engine)
        result = engine(scenario, network, initial, np.random.default_rng(st.dynamics))
        result.seed, result.spawn_key = scenario.seed, tuple(key)
        out[name] = result
    return out


@dataclass(frozen=True)
class _Varied:
    """The variants of one key with that key's changes applied: ``vary(key)`` (a picklable
    callable) gives dotted field changes that every variant of the key receives alike."""

    variants: Mapping[str, Scenario]
    vary: Callable[[tuple[int, ...]], Mapping[str, Any]]

    def __call__(self, key: tuple[int, ...]) -> dict[str, Scenario]:
        changes = self.vary(tuple(key))
        return {name: s.replace(changes) if changes else s for name, s in self.variants.items()}


def _chunk(
    variants: Mapping[str, Scenario] | _Varied,
    keys: Sequence[tuple[int, ...]],
    reduce: Callable[[RunResult], Any] | None = None,
    network: ReferralNetwork | None = None,
) -> list[tuple[tuple, dict[str, Any]]]:
    out = []
    for key in keys:
        runs = _run_variants(variants(key) if isinstance(variants, _Varied) else variants, key, network)
        out.append((key, runs if reduce is None else {name: reduce(r) for name, r in runs.items()}))
    return out


def _check_pairable(variants: Mapping[str, Scenario]) -> None:
    if not variants:
        raise ScenarioError("a paired study needs at least one variant, got none")
    first = next(iter(variants.values()))
    for name, s in variants.items():
        for part in ("seed", "network", "market"):
            mine, theirs = getattr(s, part), getattr(first, part)
            if part == "market":  # when parts of it open may differ (a lever that opens a region)
                mine, theirs = replace(mine, opens=None), replace(theirs, opens=None)
            if mine != theirs:
                raise ScenarioError(
                    f"variant {name!r} differs from the first in {part!r}; paired variants share seed, market and network"
                )
        if s.run.periods != first.run.periods:
            raise ScenarioError(f"variant {name!r} has run.periods = {s.run.periods}, the first {first.run.periods}")


#: Seconds a fresh pool of worker processes takes before its first result: each worker starts
#: Python, imports womlab and loads the compiled engine. Measured by ``benchmarks/sweeps.py``
#: (median on the shared 2-core machine, 3.43 and 3.49 s, in CPU seconds of one worker, which
#: a busy machine swells less than wall time); see :func:`crossover_seconds`.
POOL_START_SECONDS = 3.5
#: The same for a pool that is already running in this process (handing a chunk over and back).
POOL_WARM_SECONDS = 0.05
#: joblib keeps an idle pool this long (seconds) before its workers exit.
POOL_IDLE_SECONDS = 300.0
#: Chunks handed to a worker take about this long at most (seconds), so progress keeps moving.
CHUNK_SECONDS = 1.0

_MODES = ("auto", "pool", "in-process")
_choice = {"mode": "auto"}
_pool: dict[str, float] = {"workers": 0.0, "last_used": -np.inf}


@contextmanager
def parallel_choice(mode: str) -> Iterator[None]:
    """Within the block, run batches ``"auto"`` (the default: in-process below the crossover),
    always on the ``"pool"`` when ``jobs`` > 1, or always ``"in-process"``.

    Results are the same whichever runs them (every run is seeded by its own key); this
    only changes where they run, e.g. to time both or to test that they agree.

    Examples
    --------
    >>> with parallel_choice("in-process"):
    ...     pass
    """
    if mode not in _MODES:
        raise ScenarioError(f"parallel choice must be one of {', '.join(_MODES)}, got {mode!r}")
    before = _choice["mode"]
    _choice["mode"] = mode
    try:
        yield
    finally:
        _choice["mode"] = before


def crossover_seconds(workers: int, warm: bool = False) -> float:
    """Estimated in-process seconds above which ``workers`` worker processes finish sooner.

    In-process, W seconds of runs take W; on a pool they take S + W / workers, S the pool's
    start-up (:data:`POOL_START_SECONDS`, or :data:`POOL_WARM_SECONDS` for a pool already
    running in this process). The pool pays when W > S · workers / (workers − 1).

    Examples
    --------
    >>> crossover_seconds(2) == 2 * POOL_START_SECONDS
    True
    """
    if workers <= 1:
        return np.inf
    start = POOL_WARM_SECONDS if warm else POOL_START_SECONDS
    return start * workers / (workers - 1)


def _sized(func: Callable[[list[Any]], Any], chunk: list[Any]) -> tuple[int, Any]:
    return len(chunk), func(chunk)


def _pool_warm(workers: int) -> bool:
    return _pool["workers"] == workers and time.monotonic() - _pool["last_used"] < POOL_IDLE_SECONDS * 0.9


def run_chunks(
    func: Callable[[list[Any]], Any],
    items: Sequence[Any],
    jobs: int,
    *,
    chunk_size: int | None = None,
    what: str = "runs",
    chosen: dict[str, str] | None = None,
) -> Iterator[tuple[int, Any]]:
    """Run ``func`` over chunks of ``items``, in-process or on a pool of worker processes.

    The one place womlab starts workers (batches, paired studies and sweeps all come here).
    With ``jobs`` > 1 and the default ``"auto"`` choice (:func:`parallel_choice`), the first
    items run in-process, one at a time, and their CPU time is taken; if the rest, at the last
    item's time each, would take longer than :func:`crossover_seconds`, a joblib loky pool takes the rest
    (a line on standard error says so when the pool has to start), otherwise they run
    in-process too. The pool is joblib's reusable one: started once per process and reused
    by later batches while it is busy enough not to idle out. Chunks hold about a quarter of
    each worker's share, at most about :data:`CHUNK_SECONDS` of work (or ``chunk_size`` items).

    ``chosen``, if given, receives ``chosen["backend"]``: ``"in-process"`` or ``"loky, N workers"``.

    Yields
    ------
    (count, result)
        How many items the chunk held and ``func(chunk)``, as chunks finish (in any order).
    """
    from joblib import Parallel, delayed

    items = list(items)
    workers = min(usable_jobs(jobs), len(items))  # never more processes than cores
    mode = _choice["mode"]
    done = 0
    each = np.inf
    if workers > 1 and mode == "auto":
        warm = _pool_warm(workers)
        need = crossover_seconds(workers, warm)
        while done < len(items):
            started = time.process_time()  # CPU seconds: the estimate does not swell when the machine is busy
            result = func([items[done]])
            each = time.process_time() - started
            done += 1
            yield 1, result
            ahead = each * (len(items) - done)
            if ahead < need:  # the rest is cheaper here; the first run's warm-up only overstates it
                workers = 1
                break
            if done >= 2 or each > 4 * need:  # a second, warm timing, unless one run alone is that long
                break
    if chosen is not None:
        chosen["backend"] = "in-process" if workers <= 1 or mode == "in-process" else f"loky, {workers} workers"
    if workers <= 1 or mode == "in-process":
        size = chunk_size or 1
        for i in range(done, len(items), size):
            chunk = items[i : i + size]
            yield len(chunk), func(chunk)
        return
    rest = items[done:]
    if not rest:
        return
    if chunk_size is None:
        longest = max(1, int(CHUNK_SECONDS / each)) if np.isfinite(each) and each > 0 else len(rest)
        chunk_size = max(1, min(math.ceil(len(rest) / (workers * 4)), longest))
    chunks = [rest[i : i + chunk_size] for i in range(0, len(rest), chunk_size)]
    if not _pool_warm(workers):
        guess = f" for about {each * len(rest):.0f} s of {what}" if np.isfinite(each) else ""
        print(f"womlab: starting {workers} worker processes{guess}", file=sys.stderr, flush=True)
    try:
        results = Parallel(n_jobs=workers, backend="loky", return_as="generator_unordered")(
            delayed(_sized)(func, chunk) for chunk in chunks
        )
        for count, chunk_result in results:
            yield count, chunk_result
            _pool.update(workers=float(workers), last_used=time.monotonic())
    finally:
        _pool.update(workers=float(workers), last_used=time.monotonic())


def _execute(
    variants: Mapping[str, Scenario],
    keys: list[tuple[int, ...]],
    jobs: int,
    progress: bool,
    reduce: Callable[[RunResult], Any] | None = None,
    network: ReferralNetwork | None = None,
) -> dict[tuple, dict[str, Any]]:
    """Run every key, in-process or across ``jobs`` workers (:func:`run_chunks`); results keyed by spawn key.

    ``reduce``, if given, is applied to each run inside the worker (a picklable function),
    so that only its small return value travels back. ``network``, if given, is the one
    network every run is on (else each key builds its own)."""
    done: dict[tuple, dict[str, RunResult]] = {}
    with bar(len(keys), "replicates", unit="replicate", show=progress) as count:
        for _, chunk in run_chunks(partial(_chunk, variants, reduce=reduce, network=network), keys, jobs):
            for key, result in chunk:
                done[key] = result
            count.update(len(chunk))
    return done


@dataclass(eq=False)
class Batch:
    """R replicate runs of one scenario, with the tables womlab writes.

    Attributes
    ----------
    scenario : Scenario
    runs : list of RunResult
        In replicate order.
    wall_time : float
        Seconds the batch took.
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        The network every run was on, as it was given (None: each replicate built its own).
    """

    scenario: Scenario
    runs: list[RunResult]
    wall_time: float = 0.0
    network: Any = field(default=None, repr=False)
    _aggregate: np.ndarray | None = field(default=None, repr=False)

    @property
    def replicates(self) -> int:
        return len(self.runs)

    def shares(self) -> np.ndarray:
        """Customer share per replicate and period: array (R, T + 1)."""
        return np.vstack([r.share for r in self.runs])

    def aggregate(self) -> np.ndarray:
        """The aggregate model's share on the same grid, step and step form (mapped with the
        mean degree of the network given, when there is one: :func:`womlab.networks.given.mapped_with`)."""
        if self._aggregate is None:
            given = None if self.network is None else as_network(self.network)
            self._aggregate = aggregate_curve(mapped_with(self.scenario, given))
        return self._aggregate

    def product_curves(self) -> pd.DataFrame:
        """Product generations (``[[product]]``): one row per replicate, period and product
        (:meth:`womlab.dynamics.RunResult.product_curves`, with ``all`` for the portfolio)."""
        frames = [run.product_curves() for run in self.runs]
        for i, frame in enumerate(frames):
            frame.insert(0, "replicate", i)
        return pd.concat(frames, ignore_index=True)

    def product_summary(self) -> pd.DataFrame:
        """Per period and product: mean, 5 % and 95 % of its customers' share of the market and the
        mean value, beside the mean-field recursion on the same step (``aggregate``) and the
        Norton & Bass (1987) closed form (``norton_bass``: the whole market in the first
        generation's potential, its word of mouth q₁·s₁, a generation launched in period k on sale
        from time k − 1); the portfolio as product ``all``."""
        s, n = self.scenario, self.scenario.market.organisations
        table = self.product_curves()
        table["share"] = table["customers"] / n
        grouped = table.groupby(["product", "period"], sort=False)
        out = grouped.agg(mean=("share", "mean"), value=("value", "mean")).reset_index()
        out["q05"] = grouped["share"].quantile(0.05).to_numpy()
        out["q95"] = grouped["share"].quantile(0.95).to_numpy()
        m = mapped_generations(s)
        run = s.run
        x = generations_difference(
            run.periods,
            m["launch"],
            m["p"],
            m["q"],
            m["satisfied"],
            s.n_initial / n,
            time_step=run.time_step,
            form=run.step_probability,
        )
        q = m["q"].copy()
        q[0] *= m["satisfied"][0]
        market = np.zeros(q.size)
        market[0] = 1.0
        closed = norton_bass(np.arange(run.periods + 1.0), np.maximum(m["launch"] - 1, 0), m["p"], q, market)
        names = list(s.product.generations(s.adoption))
        columns = {g.name: k for k, g in enumerate(names)}
        out["aggregate"] = [
            x[t, columns[p]] if p in columns else x[t].sum() for p, t in zip(out["product"], out["period"])
        ]
        out["norton_bass"] = [
            closed[t, columns[p]] if p in columns else closed[t].sum() for p, t in zip(out["product"], out["period"])
        ]
        return out[["period", "product", "mean", "q05", "q95", "aggregate", "norton_bass", "value"]]

    def group_shares(self, by: str) -> tuple[np.ndarray, tuple[str, ...]]:
        """Customer share of each group per replicate and period: array (R, T + 1, K), and the groups'
        names; ``by = "segment"`` or ``"region"`` (:meth:`womlab.dynamics.RunResult.curve_by`)."""
        tables = [run.curve_by(by) for run in self.runs]
        names = tuple(tables[0]["group"].iloc[: len(tables[0]) // (self.scenario.run.periods + 1)])
        shares = np.stack([t["share"].to_numpy().reshape(-1, len(names)) for t in tables])
        return shares, names

    def group_aggregate(self, by: str) -> np.ndarray:
        """The aggregate share per period and group (:func:`womlab.aggregate.group_curves`), shape (T + 1, K)."""
        given = None if self.network is None else as_network(self.network)
        scenario = mapped_with(self.scenario, given)
        k = len(self.runs[0].groups(by)[1])
        if scenario.adoption.rule not in ("share", "count"):
            return np.full((scenario.run.periods + 1, k), np.nan)
        curves, _ = group_curves(scenario, by)
        if curves.shape[1] != k:  # regions of a network file: alike under the mean field
            curves = np.repeat(group_curves(scenario)[0], k, axis=1)
        return curves

    def curves(self, by: str | None = None) -> pd.DataFrame:
        """One row per replicate and report time (``run.report_every``; by default per period):
        replicate, period, time, customers, new_customers, satisfied_customers.

        With ``by = "segment"`` or ``"region"``: one row per replicate, period and group, with
        the group's organisations, customers, new and satisfied customers, share and value
        (:meth:`womlab.dynamics.RunResult.curve_by`).
        """
        if by is not None:
            frames = [run.curve_by(by) for run in self.runs]
            for i, frame in enumerate(frames):
                frame.insert(0, "replicate", i)
            return pd.concat(frames, ignore_index=True)
        frames = []
        for i, run in enumerate(self.runs):
            c = run.curve(self.scenario.run.report_every)
            c.insert(0, "replicate", i)
            frames.append(c)
        table = pd.concat(frames, ignore_index=True)
        a = self.scenario.adoption
        columns = [*CURVE_COLUMNS, *(CHURN_COLUMNS if a.churns else ()), *(WARNING_COLUMNS if a.warns else ())]
        extra = [c for c in table.columns if c not in ("replicate", *columns)]  # market columns, if any
        return table[["replicate", *columns, *extra]]

    def summary(self, by: str | None = None) -> pd.DataFrame:
        """Per period: mean, sd, q05, q50, q95 of the customer share, and the aggregate prediction.

        With ``by = "segment"`` or ``"region"``: per period and group, of each group's share, beside
        the aggregate model's share of that group (:meth:`group_aggregate`).
        """
        if by is not None:
            shares, names = self.group_shares(by)
            aggregate = self.group_aggregate(by)
            frames = []
            for g, name in enumerate(names):
                frame = _summary_frame(shares[:, :, g], aggregate[:, g])
                frame.insert(1, "group", name)
                frames.append(frame)
            return pd.concat(frames, ignore_index=True).sort_values(
                ["period", "group"], kind="stable", ignore_index=True
            )
        return _summary_frame(self.shares(), self.aggregate())

    def ever_shares(self) -> np.ndarray:
        """Share of the market that was a customer at some time (``ever_customers``) per
        replicate and period: array (R, T + 1); :meth:`shares` without churn."""
        return np.vstack([r.ever_share for r in self.runs])

    def metrics(self, by: str | None = None) -> pd.DataFrame:
        """t10, t50, t90, peak period, peak new-customer share, final share: network median,
        90 % interval, aggregate value; with ``by``, one block of rows per group (column ``group``).

        With churn the customer curve can fall, so these are measured on ``ever_customers``
        (every organisation that was a customer by then; its new customers are the
        adoptions) against the aggregate model's ever-customers curve, ``final_share``
        included; two rows follow: ``installed_base``, the share that are customers at the
        horizon, and ``mean_lifetime``, the mean time a customer stays in periods
        (:meth:`womlab.RunResult.mean_lifetime`, censoring-aware), against
        :func:`womlab.aggregate.expected_stay` where both kinds of customer churn alike.
        """
        if by is not None:
            shares, names = self.group_shares(by)
            aggregate = self.group_aggregate(by)
            frames = []
            for g, name in enumerate(names):
                frame = metrics_table(shares[:, :, g], aggregate[:, g])
                frame.insert(0, "group", name)
                frames.append(frame)
            return pd.concat(frames, ignore_index=True)
        if not self.scenario.adoption.churns:
            return metrics_table(self.shares(), self.aggregate())
        scenario = self.scenario
        given = None if self.network is None else as_network(self.network)
        agg = churn_curves(mapped_with(scenario, given))
        a, run = scenario.adoption, scenario.run
        if np.isnan(self.aggregate()).all():  # segments, a calendar or openings: no aggregate model has churn too
            agg = agg * np.nan
        table = metrics_table(self.ever_shares(), agg["ever_customers"].to_numpy())
        same = a.churn == a.dissatisfied_churn and not np.isnan(agg["customers"].iloc[-1])
        extra = []
        for name, values, aggregate in (
            ("installed_base", self.shares()[:, -1], float(agg["customers"].iloc[-1])),
            (
                "mean_lifetime",
                np.array([r.mean_lifetime() for r in self.runs]),
                expected_stay(a.churn, run.time_step, run.step_probability) if same else float("nan"),
            ),
        ):
            col = pd.Series(values)
            extra.append(
                {
                    "metric": name,
                    "network_median": col.median(),
                    "network_q05": col.quantile(0.05),
                    "network_q95": col.quantile(0.95),
                    "runs_reaching": int(col.notna().sum()),
                    "aggregate": aggregate,
                }
            )
        return pd.concat([table, pd.DataFrame(extra)], ignore_index=True)

    def organisations(self, replicates: Sequence[int] | None = None) -> pd.DataFrame:
        """Per-organisation results: one row per replicate and organisation.

        ``replicate`` and then the columns of :meth:`womlab.dynamics.RunResult.to_frame`:
        ids as given (and a networkx graph's node attributes) when the batch ran on a
        network it was given, else 0..N−1 on each replicate's own network.

        Parameters
        ----------
        replicates : sequence of int, optional
            Which replicates; all by default.

        Examples
        --------
        >>> import networkx as nx
        >>> from womlab import Scenario, run_replicates
        >>> s = Scenario.from_dict({"market": {"organisations": 34, "initial_customers": 2}, "run": {"periods": 10}})
        >>> batch = run_replicates(s, 2, network=nx.karate_club_graph())
        >>> table = batch.organisations()
        >>> len(table), list(table.columns[:4])
        (68, ['replicate', 'id', 'region', 'club'])
        """
        network = attributes = None
        if self.network is not None:
            network = as_network(self.network)
            attributes = node_attributes(self.network, network)
        chosen = range(len(self.runs)) if replicates is None else replicates
        frames = []
        for r in chosen:
            table = self.runs[r].to_frame(network, attributes)
            table.insert(0, "replicate", r)
            frames.append(table)
        return pd.concat(frames, ignore_index=True)


def _summary_frame(shares: np.ndarray, aggregate: np.ndarray) -> pd.DataFrame:
    """Per period: mean, sd, q05, q50, q95 of ``shares`` (replicates, T + 1) and the aggregate beside them."""
    t = np.arange(shares.shape[1])
    return pd.DataFrame(
        {
            "period": t,
            "time": t.astype(float),
            "mean": shares.mean(axis=0),
            "sd": shares.std(axis=0, ddof=1) if shares.shape[0] > 1 else np.zeros(t.size),
            "q05": np.quantile(shares, 0.05, axis=0),
            "q50": np.quantile(shares, 0.50, axis=0),
            "q95": np.quantile(shares, 0.95, axis=0),
            "aggregate": aggregate,
        }
    )


def run_replicates(
    scenario: Scenario,
    replicates: int | None = None,
    *,
    jobs: int | None = None,
    progress: bool = False,
    network: GivenNetwork | None = None,
) -> Batch:
    """Run ``replicates`` seeded replicates of ``scenario`` in parallel.

    Replicate r is seeded from ``SeedSequence(scenario.seed, spawn_key=(r,))``, so the
    batch is identical for any ``jobs``.

    Parameters
    ----------
    scenario : Scenario
    replicates : int, optional
        Defaults to ``scenario.run.replicates``.
    jobs : int, optional
        Worker processes (joblib, loky backend); defaults to ``scenario.run.jobs``.
    progress : bool
        Show a progress bar on standard error.
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        Your own network, for every replicate (replicates then differ in seeding and
        dynamics only): arrays, a networkx graph, or an edge table with columns
        ``source`` and ``target`` (:func:`womlab.networks.given.as_network`). It must
        have ``market.organisations`` organisations. By default each replicate builds
        its own from ``[network]``.

    Raises
    ------
    ScenarioError
        For fewer than one replicate.
    NetworkError
        For a network whose size is not ``market.organisations``, or that cannot be read.

    Examples
    --------
    >>> from womlab import Scenario, run_replicates
    >>> s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 2},
    ...                         "network": {"kind": "random", "mean_degree": 6}, "run": {"periods": 20}})
    >>> run_replicates(s, 3).summary().shape
    (21, 8)
    """
    replicates = scenario.run.replicates if replicates is None else replicates
    jobs = scenario.run.jobs if jobs is None else jobs
    if replicates < 1:
        raise ScenarioError(f"replicates must be a whole number >= 1, got {replicates}")
    given = None if network is None else as_network(network, scenario.market.organisations)
    start = time.perf_counter()
    keys = [(r,) for r in range(replicates)]
    done = _execute({"": scenario}, keys, jobs, progress, network=given)
    runs = [done[k][""] for k in keys]
    return Batch(scenario=scenario, runs=runs, wall_time=time.perf_counter() - start, network=network)


def run_paired(
    variants: Mapping[str, Scenario],
    replicates: int,
    *,
    jobs: int = 1,
    progress: bool = False,
    keys: Iterable[tuple[int, ...]] | None = None,
    reduce: Callable[[RunResult], Any] | None = None,
    network: GivenNetwork | None = None,
    vary: Callable[[tuple[int, ...]], Mapping[str, Any]] | None = None,
) -> dict[str, list[Any]]:
    """Run every variant on the same replicates with common random numbers.

    Each replicate builds one network (from the first variant's network stream); every
    variant then runs on it with its seeding and dynamics streams started afresh from
    the same SeedSequences. Variants must share seed, market and network.

    Parameters
    ----------
    variants : mapping
        Variant name → scenario.
    replicates : int
        Number of replicates (spawn keys ``(0,) .. (replicates − 1,)``) unless ``keys`` is given.
    jobs : int
        Worker processes (joblib).
    progress : bool
        Show a progress bar.
    keys : iterable of tuple, optional
        The spawn keys to run instead (e.g. ``[(0,)]`` to replay replicate 0).
    reduce : callable, optional
        A picklable function applied to each RunResult inside the worker; its return
        value replaces the run (keeps large studies small in memory).
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        Your own network, for every replicate and variant (see :func:`run_replicates`);
        by default each replicate builds its own from the first variant's ``[network]``.
    vary : callable, optional
        A picklable function of the spawn key returning dotted field changes
        (``{"adoption.word_of_mouth": 0.31}``) that every variant of that key receives
        alike, inside the worker, before the key's network is built: parameters drawn per
        replicate (a fit's posterior, :func:`womlab.fit_observed`), still paired across
        variants.

    Returns
    -------
    dict
        Variant name → its runs (or reduced runs), in replicate order.
    """
    _check_pairable(variants)
    first = next(iter(variants.values()))
    given = None if network is None else as_network(network, first.market.organisations)
    keys = [(r,) for r in range(replicates)] if keys is None else [tuple(k) for k in keys]
    todo = dict(variants) if vary is None else _Varied(dict(variants), vary)
    done = _execute(todo, keys, jobs, progress, reduce, network=given)
    return {name: [done[k][name] for k in keys] for name in variants}
