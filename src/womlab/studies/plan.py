"""What each command will run on a scenario, and roughly how long it will take, before it runs.

:func:`plan` returns one row per command (``run``, ``compare``, ``seeding``, ``referral``,
``sweep``, ``fit``): what it runs in words (the replicate count that command really uses, the
strategies, the programme, the sweep's points), its engine runs, workers, peak memory and
a rough time from :func:`womlab.scenario.resources.estimate_resources`. :func:`slow_steps` names the
seeding steps that will be slow at this size (sampled betweenness, greedy) with their
rough time per replicate. ``womlab check`` prints both.
"""

from __future__ import annotations

import pandas as pd

from womlab.errors import ScenarioError
from womlab.scenario import Scenario
from womlab.scenario.resources import (
    describe_bytes,
    describe_seconds,
    estimate_resources,
    strategy_seconds,
    usable_jobs,
)

__all__ = ["plan", "slow_steps", "programme_summary", "SLOW_SECONDS"]

#: A seeding step that takes longer than this over the whole study (or per replicate) is reported as slow.
SLOW_SECONDS = 60.0


def programme_summary(scenario: Scenario) -> str:
    """The referral programme in one line (or why there is none).

    Examples
    --------
    >>> s = Scenario.from_dict({"referral": {"enrol": "all", "end": 12, "talk_multiplier": 1.5, "reward": 20.0}})
    >>> programme_summary(s)
    'enrol all, periods 1-12, word of mouth x1.5, reward 20 per successful referral, no budget cap, value 1 per customer per period'
    """
    r = scenario.referral
    if not r.active:
        return 'no programme (referral.enrol = "none")'
    who = {
        "all": "all",
        "share": f"a share {r.enrol_share:g} of organisations",
        "strategy": f"{r.enrol_count:,} chosen by {r.strategy}",
    }[r.enrol]
    parts = [f"enrol {who}", f"periods {r.start}-{r.last_period(scenario.run.periods)}"]
    if r.talk_multiplier != 1:
        parts.append(f"word of mouth x{r.talk_multiplier:g}")
    if r.extra_talkers:
        parts.append(f"{r.extra_talkers:g} extra talkers")
    if r.scheme in ("linear", "both") and r.reward:
        parts.append(f"reward {r.reward:g} per successful referral")
    if r.scheme in ("bonus", "both") and r.bonus:
        parts.append(f"bonus {r.bonus:g} at {r.bonus_threshold} referrals")
    if r.referred_reward:
        parts.append(f"{r.referred_reward:g} to each referred customer")
    parts.append(f"budget {r.budget:g}" if r.budget is not None else "no budget cap")
    v = 1.0 if r.value_per_period is None else r.value_per_period
    if r.lifetime_value_from_churn:
        parts.append(
            f"lifetime value from churn ({v:g} per period, churn {scenario.adoption.churn:g}, "
            f"discount {r.discount_rate:g})"
        )
    else:
        parts.append(
            f"lifetime value {r.lifetime_value:g}"
            if r.lifetime_value is not None
            else f"value {v:g} per customer per period"
        )
    return ", ".join(parts)


def _sweep_points(scenario: Scenario) -> int | None:
    if not scenario.sweep.axes:
        return None
    from womlab.studies.sweep import design_points

    return len(design_points(scenario))


def plan(scenario: Scenario, *, jobs: int | None = None) -> pd.DataFrame:
    """One row per command: what it will run on ``scenario``, its engine runs, workers,
    peak memory (bytes), rough seconds, and the same as text.

    Parameters
    ----------
    scenario : Scenario
    jobs : int, optional
        Worker processes; defaults to ``run.jobs`` (capped at the cores available).

    Examples
    --------
    >>> s = Scenario.from_dict({"market": {"organisations": 500}, "run": {"replicates": 100},
    ...                         "study": {"strategies": ["random", "hubs"], "replicates": 40}})
    >>> p = plan(s).set_index("command")
    >>> int(p.loc["run", "runs"]), int(p.loc["seeding", "runs"])
    (100, 80)
    """
    s = scenario
    n, run = s.market.organisations, s.run
    engine = "event engine" if run.clock == "continuous" else f"{run.engine} engine"
    size = f"{n:,} organisations x {run.periods} periods, {engine}"
    rows = []

    def add(command: str, what: str, points: int = 1) -> None:
        e = estimate_resources(s, command, jobs=jobs, points=points)
        rows.append(
            {
                "command": command,
                "what": what,
                "runs": e.runs,
                "workers": e.workers,
                "memory": e.memory,
                "seconds": e.seconds,
                "estimate": f"{e.runs:,} runs on {e.workers} worker"
                f"{'s' if e.workers != 1 else ''}, about {describe_seconds(e.seconds)}, peak memory about "
                f"{describe_bytes(e.memory)}",
            }
        )

    add("run", f"{run.replicates:,} replicates of {size}")
    add("compare", f"the same {run.replicates:,} replicates, then every aggregate curve, the Bass fits and the gaps")
    reps = s.study.replicates if s.study.replicates is not None else run.replicates
    names = s.study.compared
    where = "study.replicates" if s.study.replicates is not None else "run.replicates, as study.replicates is not set"
    add(
        "seeding",
        f"{len(names)} strategies ({', '.join(names)}) x {reps:,} paired replicates ({where}), "
        f"budget {s.n_initial:,} seeds",
    )
    if s.referral.active:
        add("referral", f"programme against none on {run.replicates:,} paired replicates: {programme_summary(s)}")
    else:
        rows.append(
            {
                "command": "referral",
                "what": programme_summary(s),
                "runs": 0,
                "workers": 0,
                "memory": 0.0,
                "seconds": 0.0,
                "estimate": "nothing to run",
            }
        )
    if s.levers.levers:
        pulled = s.levers.pulled_at or tuple(range(run.periods))
        add(
            "levers",
            f"{len(s.levers.names)} levers ({', '.join(s.levers.names)}) x {len(pulled)} periods pulled, "
            f"each arm paired with the baseline on {run.replicates:,} replicates and continued past the horizon",
        )
    else:
        rows.append(
            {
                "command": "levers",
                "what": "no [levers] section",
                "runs": 0,
                "workers": 0,
                "memory": 0.0,
                "seconds": 0.0,
                "estimate": "nothing to run",
            }
        )
    try:
        points = _sweep_points(s)
    except ScenarioError as exc:  # pragma: no cover - a sweep section is validated on load
        points, note = None, str(exc)
    else:
        note = "no [sweep.axes]"
    if points:
        sw = s.sweep
        add("sweep", f"{sw.design} design: {points:,} points x {sw.replicates:,} replicates", points=points)
    else:
        rows.append(
            {
                "command": "sweep",
                "what": note,
                "runs": 0,
                "workers": 0,
                "memory": 0.0,
                "seconds": 0.0,
                "estimate": "nothing to run",
            }
        )
    fit = s.fit
    if fit.free is None and fit.data_path is None:
        rows.append(
            {
                "command": "fit",
                "what": "no [fit] section",
                "runs": 0,
                "workers": 0,
                "memory": 0.0,
                "seconds": 0.0,
                "estimate": "nothing to run",
            }
        )
    else:
        free = ", ".join(fit.free) if fit.free else "the default free fields"
        kinds = f", choosing among {', '.join(fit.network_kinds)}" if fit.network_kinds else ""
        add(
            "fit",
            f"ABC-SMC over {free}{kinds}: {fit.particles:,} particles, at most {fit.generations} generations "
            f"and {fit.simulations:,} simulations (fit.simulations) of {size}",
        )
    return pd.DataFrame(rows)


def slow_steps(scenario: Scenario, command: str = "seeding", *, limit: float = SLOW_SECONDS) -> list[str]:
    """The seeding steps that will take longer than ``limit`` seconds over the command's replicates
    (or in a single replicate), one line each.

    For ``seeding`` every strategy of ``[study]``; otherwise ``seeding.strategy`` (and the
    enrolment strategy of a programme).

    Examples
    --------
    >>> s = Scenario.from_dict({"market": {"organisations": 12000},
    ...                         "study": {"strategies": ["random", "bridges"]}})
    >>> slow_steps(s)[0].startswith("bridges: sampled betweenness from 500 of 12,000 organisations")
    True
    """
    s = scenario
    if command == "seeding":
        names = list(s.study.compared)
        reps = s.study.replicates if s.study.replicates is not None else s.run.replicates
    else:
        names = [s.seeding.strategy] + ([s.referral.strategy] if s.referral.enrol == "strategy" else [])
        reps = s.run.replicates
    workers = usable_jobs(s.run.jobs)
    out = []
    for name in dict.fromkeys(names):
        secs = strategy_seconds(name, s)
        if secs * reps / workers <= limit and secs <= limit:
            continue
        n = s.market.organisations
        if name == "bridges":
            exact = n <= s.seeding.betweenness_exact_up_to
            what = (
                f"exact betweenness over all {n:,} organisations"
                if exact
                else f"sampled betweenness from {min(n, s.seeding.betweenness_sample):,} of {n:,} organisations "
                "(seeding.betweenness_sample)"
            )
        elif name == "greedy":
            what = (
                f"greedy search, {s.seeding.greedy_runs} simulations per evaluation of up to "
                f"{s.seeding.greedy_candidates or n:,} candidates (seeding.greedy_runs, greedy_candidates)"
            )
        else:
            what = f"{name} centrality on {n:,} organisations"
        out.append(
            f"{name}: {what} takes about {describe_seconds(secs)} per replicate, about "
            f"{describe_seconds(secs * reps / workers)} for {reps:,} replicates on {workers} worker"
            f"{'s' if workers != 1 else ''} (rough)"
        )
    return out
