"""Paired runs continued past the horizon with every lever off: what a lever changed in the end.

A study that switches something on for a while (a referral programme, a lever started at
one period or another) compares its arms at the horizon T. But an organisation one arm
won by T may be one the other arm wins a period later: at the horizon that looks like
expansion of the market, in the end it is only acceleration (Libai, Muller & Peres
2013). :func:`continue_paired` runs every arm on past T with the levers off after T, on
the same network and the same random draws (common random numbers), either for a set
``lifetime`` of further periods or until every arm's market is exhausted.

Exhausted. With external influence p > 0 every organisation adopts in the end, so an
arm's market is exhausted when every organisation is a customer. With p = 0 word of
mouth can stall short of the whole market; such an arm counts as exhausted when it
gained no customer over the second half of the continuation (at least T periods). Each
replicate's continuation doubles (T, 2T, 4T, … periods beyond the horizon) until every
arm of that replicate is exhausted or ``max_periods`` is reached, and its runs end there:
a replicate's result depends on its own key only, never on the other replicates run with
it (a sweep that runs one key at a time gets the same numbers). :attr:`Continuation.exhausted`
says which replicates were exhausted.

The first T periods of a continued run are those of the run to T bit for bit: the
engines draw per organisation up front, or per step in order, and the levers stop at
T. :func:`truncate` cuts a continued run back to an earlier horizon.

References
----------
Libai, B., Muller, E. & Peres, R. (2013). Decomposing the value of word-of-mouth seeding
programs: acceleration versus expansion. *Journal of Marketing Research* 50(2), 161–176.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from womlab.dynamics import RunResult
from womlab.errors import ScenarioError
from womlab.networks.given import GivenNetwork, as_network
from womlab.scenario import Scenario
from womlab.studies.runner import run_paired

__all__ = ["Continuation", "continue_paired", "levers_off_after", "truncate"]


def levers_off_after(scenario: Scenario, period: int) -> Scenario:
    """``scenario`` with every lever stopped after ``period``: the referral programme's last
    period becomes ``min(referral.end, period)`` (a scenario without a programme is returned
    as it is). A new lever adds its own line here. Campaigns and reference customers
    (``[[campaign]]``, ``[[reference]]``) end by the horizon already (their periods are at
    most ``run.periods``); a part of the market that has opened stays open."""
    ref = scenario.referral
    if ref.active:
        last = min(ref.last_period(scenario.run.periods), period)
        scenario = scenario.replace("referral.end", last)
    return scenario


def _continued(scenario: Scenario, periods: int) -> Scenario:
    horizon = scenario.run.periods
    # the end first (valid on the old horizon), then the longer horizon
    return levers_off_after(scenario, horizon).replace("run.periods", periods)


def truncate(run: RunResult, periods: int) -> RunResult:
    """``run`` as it stood at the earlier horizon ``periods``: later adopters are
    non-adopters, per-period records are cut to periods + 1 entries.

    Examples
    --------
    >>> from womlab import Scenario, run_one
    >>> s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 2},
    ...                         "run": {"periods": 20}})
    >>> long, short = run_one(s.replace("run.periods", 30)), run_one(s)
    >>> bool((truncate(long, 20).adoption_period == short.adoption_period).all())
    True
    """
    if periods > run.periods:
        raise ValueError(f"cannot truncate a run of {run.periods} periods to {periods}")
    late = run.adoption_period > periods
    ap = np.where(late, -1, run.adoption_period).astype(run.adoption_period.dtype)
    extra = {}
    for key, value in run.extra.items():
        if isinstance(value, np.ndarray) and value.ndim == 1 and value.size == run.periods + 1:
            value = value[: periods + 1].copy()
        elif key == "rewarded":
            value = value & ~late
        elif key == "budget_exhausted_period" and value > periods:
            value = -1
        extra[key] = value
    time = None if run.adoption_time is None else np.where(late, np.nan, run.adoption_time)
    mechanisms: dict[str, Any] = {}
    if run.leave_period is not None:  # churn: a departure after the new horizon has not happened
        gone_late = run.leave_period > periods
        mechanisms["leave_period"] = np.where(gone_late, -1, run.leave_period).astype(run.leave_period.dtype)
        if run.leave_time is not None:
            mechanisms["leave_time"] = np.where(gone_late, np.nan, run.leave_time)
    if run.rejection_period is not None:  # warnings: nor a rejection
        rejected_late = run.rejection_period > periods
        mechanisms["rejection_period"] = np.where(rejected_late, -1, run.rejection_period).astype(np.int32)
        if run.warned_by is not None:
            mechanisms["warned_by"] = np.where(rejected_late, -1, run.warned_by).astype(np.int32)
        if run.rejection_time is not None:
            mechanisms["rejection_time"] = np.where(rejected_late, np.nan, run.rejection_time)
    return replace(
        run,
        periods=periods,
        adoption_period=ap,
        referrer=np.where(late, -1, run.referrer).astype(run.referrer.dtype),
        satisfied=run.satisfied & ~late,
        extra=extra,
        adoption_time=time,
        **mechanisms,
    )


def _exhausted(run: RunResult, since: int, external: float) -> bool:
    if external > 0:  # everyone in the market adopted (or, with warnings, was warned off for good)
        done = run.adoption_period >= 0
        if run.rejection_period is not None:
            done |= run.rejection_period >= 0
        if run.opens_at is not None:  # a part never opened is not in the market
            done |= run.opens_at > run.periods
        return bool(done.all())
    return not bool((run.adoption_period > since).any())


@dataclass(eq=False)
class Continuation:
    """Arms run past the horizon with the levers off.

    Attributes
    ----------
    horizon : int
        T, the horizon of the study.
    periods : int
        The longest continuation's end (≥ T); each replicate's runs end at their own
        ``RunResult.periods``.
    runs : dict
        Arm name → its continued runs, in replicate order.
    exhausted : numpy.ndarray
        bool per replicate: every arm's market was exhausted by ``periods`` (always True
        with a set ``lifetime``).
    keys : list of tuple
        The spawn keys, in the order of the runs.
    """

    horizon: int
    periods: int
    runs: dict[str, list[RunResult]]
    exhausted: np.ndarray
    keys: list[tuple[int, ...]] | None = None

    @property
    def lifetime(self) -> int:
        """Periods beyond the horizon."""
        return self.periods - self.horizon

    def at_horizon(self) -> dict[str, list[RunResult]]:
        """Every arm's runs cut back to the horizon (identical to runs made to T)."""
        return {name: [truncate(r, self.horizon) for r in runs] for name, runs in self.runs.items()}


def continue_paired(
    variants: Mapping[str, Scenario],
    replicates: int,
    *,
    lifetime: int | None = None,
    max_periods: int | None = None,
    jobs: int = 1,
    progress: bool = False,
    keys: Iterable[tuple[int, ...]] | None = None,
    network: GivenNetwork | None = None,
    vary: Callable[[tuple[int, ...]], Mapping[str, Any]] | None = None,
) -> Continuation:
    """Run paired arms past their horizon with every lever off, for ``lifetime`` periods or
    until every arm's market is exhausted.

    Parameters
    ----------
    variants : mapping
        Arm name → scenario (paired as in :func:`womlab.studies.run_paired`: same seed,
        market, network and horizon T).
    replicates : int
        Replicates (spawn keys ``(0,) .. (replicates − 1,)``) unless ``keys`` is given.
    lifetime : int, optional
        Periods to run beyond T. Default: until every arm's market is exhausted (see the
        module notes), doubling the continuation as needed.
    max_periods : int, optional
        Longest horizon the doubling may reach; default max(64 T, T + 1000).
    jobs : int
        Worker processes. Results do not depend on it.
    progress : bool
        Show a progress bar.
    keys : iterable of tuple, optional
        The spawn keys to run instead (a sweep point's ``(point, replicate)``).
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        Your own network for every replicate and arm (as in :func:`womlab.studies.run_paired`).
    vary : callable, optional
        Per-key changes to every arm (as in :func:`womlab.studies.run_paired`; e.g. parameters
        drawn from a fit's posterior): the continuation of a key keeps its key's changes.

    Returns
    -------
    Continuation

    Raises
    ------
    ScenarioError
        ``lifetime`` not a whole number ≥ 0.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"market": {"organisations": 200, "initial_customers": 2},
    ...     "network": {"kind": "complete"}, "adoption": {"external": 0.05}, "run": {"periods": 5}})
    >>> c = continue_paired({"only": s}, 2)
    >>> bool(c.exhausted.all()), c.periods > 5
    (True, True)
    """
    variants = dict(variants)
    first = next(iter(variants.values()))
    horizon = first.run.periods
    keys = [(r,) for r in range(replicates)] if keys is None else [tuple(k) for k in keys]
    given = None if network is None else as_network(network, first.market.organisations)
    if lifetime is not None:
        if isinstance(lifetime, bool) or not isinstance(lifetime, (int, np.integer)) or lifetime < 0:
            raise ScenarioError(f"lifetime must be a whole number of periods >= 0, got {lifetime!r}")
        runs = run_paired(
            {k: _continued(v, horizon + int(lifetime)) for k, v in variants.items()},
            len(keys),
            jobs=jobs,
            progress=progress,
            keys=keys,
            network=given,
            vary=vary,
        )
        return Continuation(horizon, horizon + int(lifetime), runs, np.ones(len(keys), dtype=bool), keys)
    limit = max(64 * horizon, horizon + 1000) if max_periods is None else int(max_periods)
    external = {k: v.adoption.external for k, v in variants.items()}
    done: dict[int, dict[str, RunResult]] = {}
    pending = list(range(len(keys)))
    extra = horizon
    periods = horizon + extra
    while True:
        periods = min(horizon + extra, limit)
        arms = {k: _continued(v, periods) for k, v in variants.items()}
        runs = run_paired(
            arms,
            len(pending),
            jobs=jobs,
            progress=progress,
            keys=[keys[j] for j in pending],
            network=given,
            vary=vary,
        )
        since = periods - max(horizon, extra // 2)
        still = []
        for i, j in enumerate(pending):
            result = {k: runs[k][i] for k in variants}
            done[j] = result
            if not all(_exhausted(result[k], since, external[k]) for k in variants):
                still.append(j)
        pending = still
        if not pending or periods >= limit:
            break
        extra *= 2
    unfinished = set(pending)
    out = {k: [done[j][k] for j in range(len(keys))] for k in variants}
    exhausted = np.array([j not in unfinished for j in range(len(keys))], dtype=bool)
    return Continuation(horizon, periods, out, exhausted, keys)
