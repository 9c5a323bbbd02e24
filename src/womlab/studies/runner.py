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

import time
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from womlab.aggregate import aggregate_curve
from womlab.dynamics import CURVE_COLUMNS, RunResult, engine_for, streams
from womlab.errors import ScenarioError
from womlab.networks import ReferralNetwork, build_network
from womlab.networks.given import GivenNetwork, as_network, mapped_with, node_attributes
from womlab.scenario import Scenario
from womlab.seeding import initial_customers
from womlab.studies.metrics import metrics_table

__all__ = [
    "run_one",
    "run_replicates",
    "run_paired",
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
        engine = engine_for(scenario)  # a strategy that simulates (greedy) scores seeds with the run's own engine
        initial = initial_customers(scenario, network, np.random.default_rng(st.seeding), simulate=engine)
        result = engine(scenario, network, initial, np.random.default_rng(st.dynamics))
        result.seed, result.spawn_key = scenario.seed, tuple(key)
        out[name] = result
    return out


def _chunk(
    variants: Mapping[str, Scenario], keys: Sequence[tuple[int, ...]], reduce: Callable[[RunResult], Any] | None = None,
    network: ReferralNetwork | None = None,
) -> list[tuple[tuple, dict[str, Any]]]:
    out = []
    for key in keys:
        runs = _run_variants(variants, key, network)
        out.append((key, runs if reduce is None else {name: reduce(r) for name, r in runs.items()}))
    return out


def _check_pairable(variants: Mapping[str, Scenario]) -> None:
    if not variants:
        raise ScenarioError("a paired study needs at least one variant, got none")
    first = next(iter(variants.values()))
    for name, s in variants.items():
        for part in ("seed", "network", "market"):
            if getattr(s, part) != getattr(first, part):
                raise ScenarioError(
                    f"variant {name!r} differs from the first in {part!r}; paired variants share seed, market and network"
                )
        if s.run.periods != first.run.periods:
            raise ScenarioError(f"variant {name!r} has run.periods = {s.run.periods}, the first {first.run.periods}")


def _execute(
    variants: Mapping[str, Scenario],
    keys: list[tuple[int, ...]],
    jobs: int,
    progress: bool,
    reduce: Callable[[RunResult], Any] | None = None,
    network: ReferralNetwork | None = None,
) -> dict[tuple, dict[str, Any]]:
    """Run every key, chunked across ``jobs`` workers; results keyed by spawn key.

    ``reduce``, if given, is applied to each run inside the worker (a picklable function),
    so that only its small return value travels back. ``network``, if given, is the one
    network every run is on (else each key builds its own)."""
    from joblib import Parallel, delayed, effective_n_jobs

    workers = effective_n_jobs(jobs)
    if workers == 1 or len(keys) == 1:
        chunks = [[k] for k in keys]
        results = (_chunk(variants, c, reduce, network) for c in chunks)
    else:
        size = max(1, min(32, len(keys) // (workers * 4)))
        chunks = [keys[i : i + size] for i in range(0, len(keys), size)]
        results = Parallel(n_jobs=workers, return_as="generator_unordered")(delayed(_chunk)(variants, c, reduce, network) for c in chunks)
    done: dict[tuple, dict[str, RunResult]] = {}
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=len(keys), unit="run", desc="runs", leave=False)
    for chunk in results:
        for key, result in chunk:
            done[key] = result
        if bar is not None:
            bar.update(len(chunk))
    if bar is not None:
        bar.close()
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

    def curves(self) -> pd.DataFrame:
        """One row per replicate and report time (``run.report_every``; by default per period):
        replicate, period, time, customers, new_customers, satisfied_customers."""
        frames = []
        for i, run in enumerate(self.runs):
            c = run.curve(self.scenario.run.report_every)
            c.insert(0, "replicate", i)
            frames.append(c)
        return pd.concat(frames, ignore_index=True)[["replicate", *CURVE_COLUMNS]]

    def summary(self) -> pd.DataFrame:
        """Per period: mean, sd, q05, q50, q95 of the customer share, and the aggregate prediction."""
        shares = self.shares()
        t = np.arange(shares.shape[1])
        return pd.DataFrame(
            {
                "period": t,
                "time": t.astype(float),
                "mean": shares.mean(axis=0),
                "sd": shares.std(axis=0, ddof=1) if len(self.runs) > 1 else np.zeros(t.size),
                "q05": np.quantile(shares, 0.05, axis=0),
                "q50": np.quantile(shares, 0.50, axis=0),
                "q95": np.quantile(shares, 0.95, axis=0),
                "aggregate": self.aggregate(),
            }
        )

    def metrics(self) -> pd.DataFrame:
        """t10, t50, t90, peak period, peak new-customer share, final share: network median,
        90 % interval, aggregate value."""
        return metrics_table(self.shares(), self.aggregate())

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

    Returns
    -------
    dict
        Variant name → its runs (or reduced runs), in replicate order.
    """
    _check_pairable(variants)
    first = next(iter(variants.values()))
    given = None if network is None else as_network(network, first.market.organisations)
    keys = [(r,) for r in range(replicates)] if keys is None else [tuple(k) for k in keys]
    done = _execute(dict(variants), keys, jobs, progress, reduce, network=given)
    return {name: [done[k][name] for k in keys] for name in variants}
