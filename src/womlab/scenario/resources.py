"""What a scenario will cost before anything runs: memory, work, a rough time, and the machine.

:func:`estimate_resources` reads only the scenario (and, for a sweep, its number of points), never
builds a network or allocates an array, and returns an :class:`Estimate`: the peak memory
of the command, the number of engine runs, a rough wall time, and the parts they are
made of, each naming the scenario fields it grows with. :func:`check_resources` refuses,
with one line naming the field and the estimate, what cannot fit this machine (more
memory than it has, or more than :data:`MAX_SECONDS` of work), and what can never work
(more organisations than 32-bit ids can number). :func:`usable_jobs` caps a number of
worker processes at the cores this process may use.

The unit costs (:data:`COSTS`) are rounded from ``python benchmarks/resources.py``
(``benchmarks/results/resources.md``) and, for the centralities, ``benchmarks/results/seeding.md``,
on a shared two-core machine; they are orders of
magnitude, meant to tell "a minute" from "a day", and a scenario near a limit can be run
anyway (``womlab ... --skip-resource-check``, or ``check_resources(..., skip=True)``).
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from typing import Any

from womlab.errors import ScenarioError

__all__ = [
    "COSTS",
    "MAX_SECONDS",
    "MAX_ORGANISATIONS",
    "Part",
    "Estimate",
    "estimate_resources",
    "check_resources",
    "usable_jobs",
    "cores",
    "machine_memory",
    "describe_bytes",
    "describe_seconds",
    "strategy_seconds",
    "COMMANDS",
]

#: The commands whose work :func:`estimate_resources` knows.
COMMANDS = ("run", "compare", "seeding", "referral", "sweep", "fit", "levers")

#: Organisation ids are 32-bit (the CSR arrays every engine reads).
MAX_ORGANISATIONS = 2**31 - 1
#: Work beyond this many seconds (30 days) is refused as a mistake unless the check is skipped.
MAX_SECONDS = 30 * 24 * 3600.0

#: Unit costs, rounded up (about twice what was measured, for a busier machine) from
#: ``benchmarks/results/resources.md`` and ``benchmarks/results/seeding.md`` (bytes and seconds).
COSTS: dict[str, float] = {
    "bytes_per_organisation": 80.0,  # network arrays while building (55 measured)
    "bytes_per_tie": 24.0,  # the builder's pair arrays and the CSR, per undirected tie (14 measured)
    "bytes_per_tie_scale_free": 24.0,  # preferential attachment, built the same way (14 measured)
    "bytes_per_region_pair": 16.0,  # the regional builder's block probabilities
    "bytes_per_curve_row": 48.0,  # one row of a run's curve (six numbers)
    "bytes_per_kept_organisation": 17.0,  # a kept run: adoption period, referrer, satisfied, time
    "bytes_per_centrality_organisation": 64.0,  # compiled centralities on the CSR: a few arrays per organisation
    "bytes_per_mesa_agent": 3000.0,  # one Mesa agent and its cell
    "seconds_per_run": 0.005,  # fixed cost of one engine run
    "seconds_per_org_step_array": 3e-8,  # 1.3e-8 measured
    "seconds_per_org_step_event": 6e-8,  # 3.0e-8 measured
    "seconds_per_org_step_mesa": 7e-6,  # 3.3e-6 measured
    "seconds_per_tie_build": 5e-7,  # 0.3e-6 measured (random, 4 million ties)
    "seconds_per_tie_build_scale_free": 1e-6,
    "seconds_per_region_pair": 2e-5,  # the regional builder's loop over region pairs
    "seconds_per_centrality_tie": 1e-6,  # PageRank or k-cores compiled on the CSR (benchmarks/results/seeding.md)
    "seconds_per_betweenness_visit": 1.2e-7,  # compiled Brandes, per source per (N + 2 ties): 0.3-1.1e-7 measured
    "seconds_pool_start": 3.0,  # a worker process importing the stack
    "bytes_per_process": 200 * 2**20,  # Python, numpy, scipy, pandas, networkx loaded
}

_NETWORKX_STRATEGIES = ("bridges", "pagerank", "coreness")


@dataclass(frozen=True)
class Part:
    """One part of an estimate: what it is, the fields it grows with, its bytes and seconds.

    ``per_worker`` says whether its memory is held by every worker at once (a run's network
    and state) or once (results kept in the main process).
    """

    what: str
    fields: tuple[str, ...]
    bytes: float = 0.0
    seconds: float = 0.0
    per_worker: bool = True


@dataclass(frozen=True)
class Estimate:
    """What a command will cost: peak memory, engine runs, rough seconds, and the parts.

    Attributes
    ----------
    command : str
    runs : int
        Engine runs (replicates × variants, or points × replicates for a sweep).
    workers : int
        Worker processes that run at once (``run.jobs`` capped at the cores and the runs).
    memory : float
        Peak bytes: what every worker holds at once plus what the main process keeps.
    seconds : float
        Rough wall time.
    parts : tuple of Part
    values : dict
        The value of every field a part names, for messages.
    """

    command: str
    runs: int
    workers: int
    memory: float
    seconds: float
    parts: tuple[Part, ...]
    values: dict[str, Any] = field(default_factory=dict)
    growth: dict[str, float] = field(default_factory=dict)

    def largest(self, by: str = "bytes") -> Part:
        """The part that costs most memory (``by="bytes"``) or time (``by="seconds"``)."""

        def cost(p: Part) -> float:
            return (p.bytes * (self.workers if p.per_worker else 1)) if by == "bytes" else p.seconds

        return max(self.parts, key=cost)

    def naming(self, part: Part) -> str:
        """The fields of ``part`` with their values, the one furthest above its default first,
        e.g. ``run.replicates = 1,000,000,000,000 with market.organisations = 1,000``."""
        fields = sorted(part.fields, key=lambda f: -self.growth.get(f, 1.0))
        named = [f"{f} = {_show(self.values.get(f))}" for f in fields]
        return named[0] + (" with " + " and ".join(named[1:]) if len(named) > 1 else "")

    def describe(self) -> str:
        """One line: runs, workers, peak memory and rough time."""
        return (
            f"{self.runs:,} engine run{'s' if self.runs != 1 else ''} on {self.workers} worker"
            f"{'s' if self.workers != 1 else ''}, peak memory about {describe_bytes(self.memory)}, "
            f"about {describe_seconds(self.seconds)} (rough)"
        )


def _show(value: Any) -> str:
    if isinstance(value, bool) or value is None:
        return repr(value)
    if isinstance(value, int):
        return f"{value:,}"
    if isinstance(value, float):
        return f"{value:,g}"
    return repr(value)


def describe_bytes(n: float) -> str:
    """Bytes in plain units (``3.6 TiB``).

    Examples
    --------
    >>> describe_bytes(3.6 * 2**40)
    '3.6 TiB'
    """
    for unit, size in (("PiB", 2**50), ("TiB", 2**40), ("GiB", 2**30), ("MiB", 2**20), ("KiB", 2**10)):
        if n >= size:
            return f"{n / size:.2g} {unit}" if n / size < 10 else f"{n / size:,.0f} {unit}"
    return f"{n:.0f} bytes"


def describe_seconds(s: float) -> str:
    """Seconds in plain units (``a few seconds``, ``12 minutes``, ``3 days``).

    Examples
    --------
    >>> describe_seconds(4000)
    '1.1 hours'
    """
    if not math.isfinite(s):
        return "forever"
    if s < 5:
        return "a few seconds"
    for unit, size in (("years", 365 * 86400), ("days", 86400), ("hours", 3600), ("minutes", 60)):
        if s >= size:
            v = s / size
            return f"{v:.2g} {unit}" if v < 10 else f"{v:,.0f} {unit}"
    return f"{s:.0f} seconds"


def cores() -> int:
    """The CPU cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # pragma: no cover - not Linux
        return max(1, os.cpu_count() or 1)


def usable_jobs(jobs: int) -> int:
    """Worker processes for ``jobs`` (−1: every core), never more than the cores available.

    Examples
    --------
    >>> usable_jobs(100000) == cores()
    True
    """
    return cores() if jobs < 0 else max(1, min(int(jobs), cores()))


def machine_memory() -> int:
    """Physical memory of this machine in bytes (a large number if it cannot be read)."""
    try:
        return int(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES"))
    except (AttributeError, ValueError, OSError):  # pragma: no cover - not POSIX
        return 2**60


def _network_parts(s: Any) -> list[Part]:
    """Building one network: its arrays (and the regional builder's block matrix)."""
    c = COSTS
    n = s.market.organisations
    kind = s.network.kind
    parts = []
    if kind == "complete":
        return [
            Part(
                "network (complete: from totals)", ("market.organisations",), n * c["bytes_per_organisation"], n * 1e-7
            )
        ]
    ties = n * float(s.network.mean_degree) / 2
    scale_free = kind == "scale_free"
    per_tie = c["bytes_per_tie_scale_free"] if scale_free else c["bytes_per_tie"]
    seconds_tie = c["seconds_per_tie_build_scale_free"] if scale_free else c["seconds_per_tie_build"]
    fields = ("network.path",) if kind == "edgelist" else ("market.organisations", "network.mean_degree")
    parts.append(Part("network ties", fields, n * c["bytes_per_organisation"] + ties * per_tie, ties * seconds_tie))
    if kind == "regional_blocks":  # the block model loops over every pair of regions
        r = s.market.regions
        parts.append(
            Part(
                "region pairs of the regional network",
                ("market.regions",),
                r * r * c["bytes_per_region_pair"],
                r * r / 2 * c["seconds_per_region_pair"],
            )
        )
    return parts


def _strategy_cost(name: str, s: Any) -> tuple[float, float, tuple[str, ...]]:
    """Seconds and bytes of choosing seeds once with strategy ``name``, and the fields they grow with."""
    c = COSTS
    n = s.market.organisations
    ties = 0.0 if s.network.kind == "complete" else n * float(s.network.mean_degree) / 2
    if s.network.kind == "complete":
        ties = n * (n - 1) / 2
    centrality_bytes = n * c["bytes_per_centrality_organisation"]
    if name == "bridges":
        sources = n if n <= s.seeding.betweenness_exact_up_to else min(n, s.seeding.betweenness_sample)
        field_ = (
            "seeding.betweenness_exact_up_to"
            if n <= s.seeding.betweenness_exact_up_to
            else "seeding.betweenness_sample"
        )
        return (
            sources * (n + 2 * ties) * c["seconds_per_betweenness_visit"],
            centrality_bytes,
            ("market.organisations", field_),
        )
    if name in ("pagerank", "coreness"):
        return ties * c["seconds_per_centrality_tie"], centrality_bytes, ("market.organisations",)
    if name == "greedy":
        pool = n if s.seeding.greedy_candidates <= 0 else min(s.seeding.greedy_candidates, n)
        budget = s.n_initial
        evaluations = pool + 3 * budget + 1
        run = _run_seconds(s)
        return (evaluations * s.seeding.greedy_runs * run, 0.0, ("seeding.greedy_candidates", "seeding.greedy_runs"))
    return n * 1e-7, n * 16.0, ("market.organisations",)


def strategy_seconds(name: str, scenario: Any) -> float:
    """Rough seconds of choosing seeds once with strategy ``name`` on ``scenario``'s network."""
    return _strategy_cost(name, scenario)[0]


def _run_seconds(s: Any) -> float:
    c = COSTS
    n, run = s.market.organisations, s.run
    if run.clock == "continuous":
        return c["seconds_per_run"] + n * run.periods * c["seconds_per_org_step_event"]
    per = c["seconds_per_org_step_mesa"] if run.engine == "mesa" else c["seconds_per_org_step_array"]
    return c["seconds_per_run"] + n * run.periods * run.steps_per_period * per


def _replicates(s: Any, command: str, replicates: int | None) -> int:
    if replicates is not None:
        return int(replicates)
    if command == "seeding" and s.study.replicates is not None:
        return int(s.study.replicates)
    if command == "sweep":
        return int(s.sweep.replicates)
    if command == "fit":  # one run per simulation of the ABC-SMC, at most its budget
        return int(s.fit.simulations)
    return int(s.run.replicates)


def estimate_resources(
    scenario: Any, command: str = "run", *, replicates: int | None = None, jobs: int | None = None, points: int = 1
) -> Estimate:
    """Estimate what ``command`` will cost on ``scenario``, from the scenario alone.

    Parameters
    ----------
    scenario : Scenario
    command : str
        ``run``, ``compare``, ``seeding``, ``referral``, ``sweep`` or ``fit``.
    replicates : int, optional
        Defaults to what the command uses: ``study.replicates`` (else ``run.replicates``)
        for ``seeding``, ``sweep.replicates`` for ``sweep``, the simulation budget
        ``fit.simulations`` for ``fit``, else ``run.replicates``.
    jobs : int, optional
        Defaults to ``run.jobs``; capped by :func:`usable_jobs`.
    points : int
        Sweep points (``sweep`` only).

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"market": {"organisations": 10_000}, "run": {"replicates": 20, "jobs": 1}})
    >>> e = estimate_resources(s)
    >>> e.runs, e.workers, e.memory < 2**30
    (20, 1, True)
    """
    if command not in COMMANDS:
        raise ScenarioError(f"command must be one of {', '.join(COMMANDS)}, got {command!r}")
    c = COSTS
    s = scenario
    n, run = s.market.organisations, s.run
    reps = _replicates(s, command, replicates)
    # levers: the baseline and one arm per lever and period pulled, each continued past the horizon
    # (levers.lifetime more periods, or at least as many again until the market is exhausted); an arm
    # that wins reference customers first runs without them, to see who is a customer by then
    pulled = len(s.levers.pulled_at or range(run.periods))
    arms = 1 + len(s.levers.names) * pulled + (pulled if "reference_customers" in s.levers.names else 0)
    variants = {"seeding": len(s.study.compared), "referral": 2, "levers": arms}.get(command, 1)
    runs = reps * variants * (points if command == "sweep" else 1)
    longer = (
        1.0 + (s.levers.lifetime if s.levers.lifetime is not None else run.periods) / run.periods
        if command == "levers"
        else 1.0
    )
    keys = reps * (points if command == "sweep" else 1)
    workers = max(1, min(usable_jobs(run.jobs if jobs is None else jobs), keys))

    parts = [
        Part(p.what, p.fields, p.bytes, p.seconds * keys, p.per_worker)  # one network per replicate
        for p in _network_parts(s)
    ]
    state = n * (c["bytes_per_mesa_agent"] if run.engine == "mesa" else 60.0)
    parts.append(Part("one run's state", ("market.organisations",), state))
    rep_field = {"seeding": "study.replicates", "sweep": "sweep.replicates", "fit": "fit.simulations"}.get(
        command, "run.replicates"
    )
    step_fields = ("run.time_step",) if run.clock == "discrete" and run.steps_per_period > 1 else ()
    parts.append(
        Part(
            "engine runs",
            (rep_field, "run.periods", *step_fields, "market.organisations"),
            0.0,
            runs * _run_seconds(s) * longer,
        )
    )
    grid = run.periods * run.reports_per_period + 1
    curve_fields = ("run.report_every", "run.periods") if run.reports_per_period > 1 else ("run.periods",)
    parts.append(Part("one run's curve", curve_fields, grid * c["bytes_per_curve_row"]))

    kept_runs = {"run": reps, "compare": reps, "referral": 2 * reps, "levers": 2 * reps * variants}.get(command, 0)
    rows_kept = {
        "run": reps,
        "compare": reps,
        "referral": 2 * reps,
        "seeding": reps * variants,
        "sweep": 0,
        "fit": 0,
        "levers": 2 * reps * variants,
    }[command]
    parts.append(
        Part(
            "runs kept",
            ("market.organisations", rep_field),
            kept_runs * n * c["bytes_per_kept_organisation"],
            per_worker=False,
        )
    )
    parts.append(
        Part(
            "curves kept", (*curve_fields, rep_field), rows_kept * grid * c["bytes_per_curve_row"] * 2, per_worker=False
        )
    )

    chosen = s.study.compared if command == "seeding" else (s.seeding.strategy,)
    for name in chosen:
        if name == "random":
            continue
        secs, mem, fields = _strategy_cost(name, s)
        parts.append(
            Part(f"seeding strategy {name}", fields, mem, secs * keys * (1 if command == "seeding" else variants))
        )
    if command == "referral" and s.referral.enrol == "strategy" and s.referral.strategy != "random":
        secs, mem, fields = _strategy_cost(s.referral.strategy, s)
        parts.append(
            Part(f"enrolment strategy {s.referral.strategy}", ("referral.strategy", *fields), mem, secs * keys * 2)
        )

    parts.append(Part("Python and its libraries", (), c["bytes_per_process"]))
    per_worker = sum(p.bytes for p in parts if p.per_worker)
    memory = workers * per_worker + sum(p.bytes for p in parts if not p.per_worker)
    if workers > 1:
        memory += c["bytes_per_process"]  # the main process beside its workers
    work = sum(p.seconds for p in parts)
    seconds = work / workers + (c["seconds_pool_start"] if workers > 1 else 0.0)
    values: dict[str, Any] = {}
    growth: dict[str, float] = {}
    for p in parts:
        for f in p.fields:
            values[f] = _field_value(s, f)
            growth[f] = _growth(s, f)
    return Estimate(
        command=command,
        runs=runs,
        workers=workers,
        memory=memory,
        seconds=seconds,
        parts=tuple(parts),
        values=values,
        growth=growth,
    )


def _growth(s: Any, dotted: str) -> float:
    """How many times a field's value asks for more than its default does (1 when not a number)."""
    section, _, leaf = dotted.partition(".")
    value = _field_value(s, dotted)
    try:
        default = getattr(type(getattr(s, section))(), leaf)
    except (TypeError, AttributeError):
        return 1.0
    if default is None and isinstance(value, (int, float)):
        default = 100  # a count left to another field's default (study.replicates: run.replicates)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not isinstance(default, (int, float)):
        return 1.0
    if value <= 0 or default <= 0:
        return 1.0
    return float(default / value if leaf in ("report_every", "time_step") else value / default)


def _field_value(s: Any, dotted: str) -> Any:
    node = s
    for part in dotted.split("."):
        node = getattr(node, part, None)
    return node


def check_resources(
    scenario: Any,
    command: str = "run",
    *,
    replicates: int | None = None,
    jobs: int | None = None,
    points: int = 1,
    skip: bool = False,
    memory: int | None = None,
) -> Estimate:
    """Refuse, before any allocation, what cannot fit this machine; return the estimate.

    Organisations beyond :data:`MAX_ORGANISATIONS` are refused always. Unless ``skip``, so
    is a command whose peak memory exceeds the machine's (``memory``, default
    :func:`machine_memory`) or whose work exceeds :data:`MAX_SECONDS`; the message names
    the field that costs most, its value and the estimate.

    Raises
    ------
    ScenarioError
        One line, e.g. ``network.mean_degree = 100,000 with market.organisations =
        1,000,000 needs about 3.6 TiB of memory (network ties); this machine has 23 GiB``.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"market": {"organisations": 1_000_000}, "network": {"mean_degree": 100_000}})
    >>> check_resources(s)
    Traceback (most recent call last):
    ...
    womlab.errors.ScenarioError: network.mean_degree = 100,000 with market.organisations = 1,000,000 needs about ...
    """
    n = scenario.market.organisations
    if n > MAX_ORGANISATIONS:
        raise ScenarioError(
            f"market.organisations must be at most {MAX_ORGANISATIONS:,} (organisation ids are 32-bit), got {n:,}"
        )
    est = estimate_resources(scenario, command, replicates=replicates, jobs=jobs, points=points)
    if skip:
        return est
    limit = machine_memory() if memory is None else memory
    hint = " (--skip-resource-check runs it anyway)"
    if est.memory > limit:
        part = est.largest("bytes")
        held = part.bytes * (est.workers if part.per_worker else 1)
        workers = f" x {est.workers} workers" if part.per_worker and est.workers > 1 else ""
        raise ScenarioError(
            f"{est.naming(part)} needs about {describe_bytes(held)} of memory ({part.what}{workers}); "
            f"this machine has {describe_bytes(limit)}{hint}"
        )
    if est.seconds > MAX_SECONDS:
        part = est.largest("seconds")
        raise ScenarioError(
            f"{est.naming(part)} needs about {describe_seconds(est.seconds)} of work ({part.what}, "
            f"{est.runs:,} runs); more than {describe_seconds(MAX_SECONDS)} is refused as a likely mistake{hint}"
        )
    return est
