"""The event engine (continuous clock) against the Bass ODE and against the discrete array engine.

Seeds and tolerances were fixed before the tests were first run; each states its basis.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
from scipy import stats
from scipy.integrate import solve_ivp

from womlab import Scenario, ScenarioError, bass_ode, build_network, run_replicates
from womlab.dynamics.event_engine import run_events


def _bass_with_variance(t: np.ndarray, p: float, Q: float, f0: float) -> tuple[np.ndarray, np.ndarray]:
    """Bass share F(t) and the linear-noise variance V(t) of √N·(F_N − F).

    Kurtz (1970), Solutions of ordinary differential equations as limits of pure jump
    Markov processes, and Kurtz (1971): a density-dependent jump process with drift
    f(F) = (1 − F)(p + QF) and unit jumps of size 1/N converges to the ODE F' = f(F), with
    Gaussian fluctuations of variance V/N, V' = 2 f'(F) V + f(F), V(0) = 0 (fixed initial customers).
    """

    def rhs(_, y):
        f, v = y
        drift = (1 - f) * (p + Q * f)
        slope = -(p + Q * f) + (1 - f) * Q
        return [drift, 2 * slope * v + drift]

    sol = solve_ivp(rhs, (0, float(t[-1])), [f0, 0.0], t_eval=t, rtol=1e-10, atol=1e-12)
    assert sol.success
    return sol.y[0], sol.y[1]


def _complete(n: int, periods: int, **run) -> Scenario:
    return Scenario.from_dict(
        {
            "seed": 2024,
            "market": {"organisations": n, "initial_share": 0.01},
            "network": {"kind": "complete"},
            "adoption": {"rule": "share", "external": 0.03, "word_of_mouth": 0.38, "satisfied_share": 1.0},
            "run": {"periods": periods, **run},
        }
    )


def test_events_on_complete_network_match_bass_ode():
    # Bass (1969) with p = 0.03, Q = 0.38; on the complete network with every customer
    # satisfied and one talker each, λ = p + q·C/(N − 1), i.e. Q = q·N/(N − 1) exactly.
    # Tolerance from N (Kurtz 1970): each run within 4·sqrt(V(t)/N) of the ODE at every period,
    # the mean of R runs within 4·sqrt(V(t)/(N·R)), V the linear-noise variance above.
    n, periods, reps = 20_000, 20, 6
    s = _complete(n, periods, clock="continuous")
    t = np.arange(periods + 1, dtype=float)
    f, v = _bass_with_variance(t, 0.03, 0.38 * n / (n - 1), 0.01)
    assert np.allclose(f, bass_ode(t, 0.03, 0.38 * n / (n - 1), 0.01), atol=1e-8)
    shares = run_replicates(s, reps).shares()
    sd = np.sqrt(v / n)
    assert np.all(np.abs(shares - f) <= 4 * sd + 1e-12)
    assert np.all(np.abs(shares.mean(axis=0) - f) <= 4 * sd / np.sqrt(reps) + 1e-12)


def test_discrete_engine_converges_to_bass_ode_as_the_step_shrinks():
    # The array engine with step dt is a first-order scheme for the same jump process
    # (rates frozen over a step): its error against the Bass ODE must fall as dt falls, and
    # by at least a factor 5 from dt = 1 to dt = 0.1 (first order would give 10). The runs
    # share their random numbers (same seed), so the comparison is not swamped by noise.
    n, periods, reps = 20_000, 20, 4
    t = np.arange(periods + 1, dtype=float)
    f = bass_ode(t, 0.03, 0.38 * n / (n - 1), 0.01)
    errors = []
    for dt in (1.0, 0.5, 0.25, 0.1):
        shares = run_replicates(_complete(n, periods, time_step=dt), reps).shares()
        errors.append(float(np.max(np.abs(shares.mean(axis=0) - f))))
    assert all(a > b for a, b in zip(errors, errors[1:])), errors
    assert errors[-1] < errors[0] / 5, errors


def _karate_edgelist(tmp_path) -> str:
    # a real network: Zachary (1977), An information flow model for conflict and fission in small groups
    g = nx.karate_club_graph()
    path = tmp_path / "karate.csv"
    path.write_text("source,target\n" + "".join(f"{u},{v}\n" for u, v in g.edges()))
    return str(path)


KINDS = ["complete", "ring", "regular", "random", "small_world", "regional", "scale_free", "edgelist"]


@pytest.mark.parametrize("kind", KINDS)
def test_events_agree_with_discrete_engine_at_small_step(kind, tmp_path):
    # Two engines for the same continuous-time process: the discrete one at dt = 0.05 differs
    # only by O(dt). Mean share curves within 4 SE of the difference at every period (SE from
    # the replicates' spread, 120 each); two-sample KS on final and mid-curve customer counts
    # with p > 0.001. Poisson talkers and the count rule on some kinds exercise both rate forms.
    network = {"kind": kind, "mean_degree": 6}
    market = {"organisations": 500, "initial_customers": 5, "regions": 2}
    if kind == "edgelist":
        network = {"kind": "edgelist", "path": _karate_edgelist(tmp_path)}
        market = {"initial_customers": 2}
    rule = "count" if kind in ("ring", "regional", "edgelist") else "share"
    q = 0.12 if rule == "count" else 0.5
    talkers = {"distribution": "poisson", "mean": 1.5} if kind in ("complete", "random", "scale_free") else 1
    if kind == "complete" and rule == "count":
        q = 0.001
    s = Scenario.from_dict(
        {
            "seed": 77,
            "market": market,
            "network": network,
            "adoption": {
                "rule": rule,
                "external": 0.01,
                "word_of_mouth": q,
                "satisfied_share": 0.8,
                "talkers_per_customer": talkers,
            },
            "run": {"periods": 12, "time_step": 0.05, "clock": "discrete"},
        }
    )
    reps = 120
    discrete = run_replicates(s, reps).shares()
    events = run_replicates(s.replace("run.clock", "continuous"), reps).shares()
    se = np.sqrt(discrete.var(axis=0, ddof=1) / reps + events.var(axis=0, ddof=1) / reps)
    gap = np.abs(discrete.mean(axis=0) - events.mean(axis=0))
    assert np.all(gap <= 4 * se + 1e-12), (gap / np.maximum(se, 1e-12)).max()
    mid = int(np.argmin(np.abs(events.mean(axis=0) - 0.5 * events.mean(axis=0)[-1])))
    for col in (mid, -1):
        assert stats.ks_2samp(discrete[:, col], events[:, col]).pvalue > 0.001


def test_referrers_are_earlier_satisfied_neighbours():
    # definition of the first-passage predecessor (Dijkstra 1959): a word-of-mouth adopter's
    # referrer is a neighbour, a satisfied customer, and adopted strictly earlier
    s = Scenario.from_dict(
        {
            "market": {"organisations": 2000, "initial_customers": 20},
            "network": {"kind": "small_world", "mean_degree": 8},
            "adoption": {"satisfied_share": 0.6, "external": 0.005, "word_of_mouth": 0.5},
            "run": {"periods": 30, "clock": "continuous"},
        }
    )
    net = build_network(s, np.random.default_rng(3))
    r = run_events(s, net, np.arange(20, dtype=np.int32), np.random.default_rng(4))
    wom = np.flatnonzero(r.referrer >= 0)
    assert wom.size > 500
    j = r.referrer[wom]
    assert np.all(r.satisfied[j]) and np.all(r.adoption_time[j] < r.adoption_time[wom])
    g = net.to_networkx()
    assert all(g.has_edge(int(a), int(b)) for a, b in zip(wom, j))
    assert np.all(np.isnan(r.adoption_time) == (r.adoption_period < 0))
    assert np.array_equal(r.adoption_period[r.adoption_period > 0], np.ceil(r.adoption_time[r.adoption_period > 0]))


def test_finer_report_grid_agrees_with_period_grid():
    # common practice: a finer grid refines the coarse one; the per-period rows stay T + 1
    s = Scenario.from_dict(
        {
            "market": {"organisations": 1000, "initial_customers": 10},
            "network": {"kind": "random", "mean_degree": 6},
            "run": {"periods": 12, "clock": "continuous", "report_every": 0.25},
        }
    )
    batch = run_replicates(s, 2)
    run = batch.runs[0]
    coarse, fine = run.curve(1.0), run.curve()
    assert len(coarse) == 13 and len(fine) == 12 * 4 + 1
    on_grid = fine[fine["time"] == fine["time"].round()]
    assert np.array_equal(on_grid["customers"].to_numpy(), coarse["customers"].to_numpy())
    assert np.array_equal(on_grid["satisfied_customers"].to_numpy(), coarse["satisfied_customers"].to_numpy())
    assert len(batch.curves()) == 2 * 49 and batch.summary().shape[0] == 13


def test_rules_that_cannot_run_on_the_continuous_clock():
    from womlab.scenario import CONTINUOUS_RULES, RULES

    # every rule that is not a constant rate per satisfied neighbour (capped, threshold, cascade, ...)
    for rule in sorted(set(RULES) - set(CONTINUOUS_RULES)):
        with pytest.raises(ScenarioError, match=rf'adoption.rule = "{rule}" cannot run on run.clock = "continuous"'):
            Scenario.from_dict({"adoption": {"rule": rule}, "run": {"clock": "continuous"}})
    assert "capped" not in CONTINUOUS_RULES
    with pytest.raises(ScenarioError, match=r'run.engine = "mesa" runs on run.clock = "discrete" only'):
        Scenario.from_dict({"run": {"clock": "continuous", "engine": "mesa"}})
    with pytest.raises(ScenarioError, match=r"run.clock must be one of discrete, continuous; got 'continous'"):
        Scenario.from_dict({"run": {"clock": "continous"}})
    with pytest.raises(
        ScenarioError, match=r'referral.enrol = "all": a referral programme runs on run.clock = "discrete"'
    ):
        Scenario.from_dict({"run": {"clock": "continuous"}, "referral": {"enrol": "all"}})
    with pytest.raises(ScenarioError, match=r'run.report_every must be a whole period \(1\) with run.engine = "mesa"'):
        Scenario.from_dict({"run": {"engine": "mesa", "report_every": 0.5}})
    with pytest.raises(ScenarioError, match=r"run.report_every must be 1/n of a period"):
        Scenario.from_dict({"run": {"report_every": 0.3}})


@pytest.mark.parametrize("kind", ["random", "small_world"])
def test_attribution_agrees_with_discrete_engine_at_small_step(kind):
    # Attribution on both clocks follows the competing rates (external p against each satisfied
    # neighbour's part of the word-of-mouth rate; on the continuous clock the first-passage
    # predecessor). At dt = 0.05 the two engines must agree on the cumulative count of
    # word-of-mouth adoptions and on the count of adoptions referred by the initial customers:
    # means within 4 SE of the difference at every period (120 replicates each; seed fixed
    # before looking).
    s = Scenario.from_dict(
        {
            "seed": 78,
            "market": {"organisations": 500, "initial_customers": 5},
            "network": {"kind": kind, "mean_degree": 6},
            "adoption": {"rule": "share", "external": 0.02, "word_of_mouth": 0.5, "satisfied_share": 0.8},
            "run": {"periods": 12, "time_step": 0.05},
        }
    )
    reps = 120

    def counts(batch):
        periods = np.arange(s.run.periods + 1)
        wom = np.array(
            [
                [np.sum((r.referrer >= 0) & (r.adoption_period >= 0) & (r.adoption_period <= t)) for t in periods]
                for r in batch.runs
            ],
            dtype=float,
        )
        by_initial = np.array([np.isin(r.referrer, r.initial).sum() for r in batch.runs], dtype=float)
        return wom, by_initial

    discrete = counts(run_replicates(s, reps))
    events = counts(run_replicates(s.replace("run.clock", "continuous"), reps))
    for a, b in zip(discrete, events):
        se = np.sqrt(a.var(axis=0, ddof=1) / reps + b.var(axis=0, ddof=1) / reps)
        assert np.all(np.abs(a.mean(axis=0) - b.mean(axis=0)) <= 4 * se + 1e-12)


@pytest.mark.parametrize(
    "kind,rule,p",
    [
        ("small_world", "share", 0.01),
        ("scale_free", "count", 0.02),
        ("ring", "share", 0.0),
        ("regional", "count", 0.005),
    ],
)
def test_compiled_first_passage_is_scipy_dijkstra(kind, rule, p):
    # The engine's compiled Dijkstra against scipy.sparse.csgraph.dijkstra (Dijkstra 1959, as
    # implemented in scipy) on the graph it stands for: the network's live arcs with lengths
    # Dⱼᵢ = Exp(1)/wⱼᵢ and a virtual source tied to every organisation by Eᵢ/p (0 to the initial
    # customers), stopped at the horizon. Same draws, same sums: times and predecessors must be
    # identical (continuous draws leave no ties).
    import scipy.sparse as sp
    from scipy.sparse.csgraph import dijkstra

    from womlab.dynamics.event_engine import _first_passage, tie_rates

    s = Scenario.from_dict(
        {
            "market": {"organisations": 3000, "initial_customers": 6, "regions": 3},
            "network": {"kind": kind, "mean_degree": 6},
            "adoption": {
                "rule": rule,
                "external": p,
                "word_of_mouth": 0.4 if rule == "share" else 0.1,
                "satisfied_share": 0.7,
                "talkers_per_customer": {"distribution": "poisson", "mean": 2},
            },
            "run": {"periods": 12, "clock": "continuous"},
        }
    )
    net = build_network(s, np.random.default_rng(5))
    rng = np.random.default_rng(9)
    tau = rng.poisson(2, net.n).astype(np.float32)
    talking = np.where(rng.random(net.n) < 0.7, tau, np.float32(0))
    initial = np.arange(0, net.n, net.n // 6, dtype=np.int32)[:6]
    dist, pred = _first_passage(s, net, tau, talking, initial, np.random.default_rng(3))

    draws = np.random.default_rng(3)  # the same draws, in the engine's order
    external, delay = draws.standard_exponential(net.n), draws.standard_exponential(net.indices.size)
    w = tie_rates(rule, net, tau, talking, s.adoption.word_of_mouth)
    live = w > 0
    length = np.divide(delay, w, out=delay.copy(), where=live)[live]
    start = np.zeros(net.n, dtype=bool)
    start[initial] = True
    src_cols = np.arange(net.n) if p > 0 else initial
    src_len = np.where(start, 0.0, external / p)[src_cols] if p > 0 else np.zeros(initial.size)
    rows = np.repeat(np.arange(net.n), np.diff(net.indptr))[live]
    graph = sp.csr_array(
        (
            np.concatenate([length, src_len]),
            (np.concatenate([rows, np.full(src_cols.size, net.n)]), np.concatenate([net.indices[live], src_cols])),
        ),
        shape=(net.n + 1, net.n + 1),
    )
    ref_dist, ref_pred = dijkstra(graph, directed=True, indices=net.n, return_predecessors=True, limit=12.0)
    ref_dist, ref_pred = ref_dist[: net.n], ref_pred[: net.n]
    reached = np.isfinite(ref_dist)
    assert initial.size < reached.sum() < net.n  # some spread, and the horizon cut the run somewhere inside
    assert np.array_equal(np.isfinite(dist), reached)
    assert np.array_equal(dist[reached], ref_dist[reached])
    assert np.array_equal(np.where(pred[reached] >= 0, pred[reached], net.n), ref_pred[reached])
