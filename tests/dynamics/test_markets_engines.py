"""Segments and a campaign calendar inside the engines.

1. The array engine's kernel against a plain loop written here (one organisation at a time, the
   scalar formulas of womlab.rules with each organisation's own p and q): identical results on the
   same draws.
2. Neutral segments (one segment, multipliers 1) and a neutral campaign (multiplier 1) leave every
   run unchanged, bit for bit: their draws come from a stream of their own.
3. The array engine and the Mesa model agree statistically with two segments and a calendar
   (the method and tolerance basis of tests/dynamics/test_engines_agree.py: means within 4 standard
   errors at every period, KS p > 0.001 on final counts; seeds fixed before looking).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from womlab import Scenario, build_network, rules, run_one, run_replicates
from womlab.dynamics.array_engine import pick_referrers, run_array
from womlab.dynamics.markets import market_inputs, segment_counts

SEGMENTS = {
    "influentials": {
        "share": 0.15,
        "external": 3.0,
        "word_of_mouth": 2.0,
        "talkers": 3,
        "satisfied_share": 0.9,
        "value_per_period": 4.0,
    },
    "imitators": {"share": 0.85, "external": 0.5, "satisfied_share": 0.6},
}


def _scenario(kind: str, n: int = 600, **extra) -> Scenario:
    data = {
        "seed": 3,
        "market": {"organisations": n, "initial_customers": 5, "regions": 3},
        "network": {"kind": kind, "mean_degree": 6},
        "adoption": {
            "rule": "share",
            "external": 0.01,
            "word_of_mouth": 0.5,
            "satisfied_share": 0.7,
            "talkers_per_customer": 2,
        },
        "run": {"periods": 20},
        "segments": SEGMENTS,
        "campaign": [
            {"from": 4, "to": 7, "external": 0.05, "segment": "imitators"},
            {"from": 12, "to": 13, "multiplier": 4.0},
        ],
    }
    data.update(extra)
    return Scenario.from_dict(data)


def plain_run(scenario, network, initial, rng):
    """One organisation at a time: rate, hazard and cause from womlab.rules' scalar formulas."""
    a, run = scenario.adoption, scenario.run
    n, spp, dt = network.n, run.steps_per_period, run.time_step
    m = market_inputs(scenario, network, rng)
    tau = rules.draw_talkers(a.talkers_per_customer, n, rng, m.talkers).astype(np.float64)
    sat = rules.draw_satisfied(a.satisfied_share if m.satisfied_share is None else m.satisfied_share, n, rng)
    resistance = rng.standard_exponential(n)
    u_cause = rng.random(n)
    code, form = rules.rule_code(a.rule), rules.form_code(run.step_probability)
    adopted = np.full(n, -1, dtype=np.int32)
    opens_at = np.zeros(n, dtype=np.int32) if m.opens_at is None else m.opens_at
    initial = initial[opens_at[initial] == 0]
    adopted[initial] = 0
    referrer = np.full(n, -1, dtype=np.int32)
    hazard = np.zeros(n)

    def around(x):  # what each organisation's neighbours hold (integer talkers: sums exact in any order)
        return x.sum() - x if network.complete else network.matrix(np.float64) @ x

    total = around(tau)
    for step in range(1, run.periods * spp + 1):
        period = (step + spp - 1) // spp
        talk = np.where((adopted >= 0) & sat, tau, 0.0)
        talking = around(talk)
        new = []
        for i in np.flatnonzero((adopted < 0) & (opens_at <= period)):
            p = m.external_rate(period, i, a.external)
            q = a.word_of_mouth * (1.0 if m.word_of_mouth_weight is None else m.word_of_mouth_weight[i])
            hazard[i] += rules.hazard(rules.rate(code, talking[i], total[i], 0.0, p, q, a.cap), dt, form)
            if hazard[i] >= resistance[i]:
                new.append((i, rules.external_part(code, talking[i], total[i], 0.0, p, q)))
        for i, ext in new:
            if u_cause[i] >= ext:
                u = (u_cause[i] - ext) / (1 - ext)
                referrer[i] = pick_referrers(network, np.array([i]), talk.astype(np.float32), np.array([u]))[0]
            adopted[i] = period
    return adopted, referrer, m


@pytest.mark.parametrize(
    "kind,opens",
    [
        ("random", None),
        ("regional", None),
        ("regional", [{"region": 2, "period": 6}, {"segment": "influentials", "period": 3}]),
        ("complete", [{"region": 0, "period": 9}]),
    ],
)
def test_kernel_with_segments_and_calendar_is_the_plain_loop(kind, opens):
    s = _scenario(
        kind,
        campaign=[
            {"from": 4, "to": 7, "external": 0.05, "segment": "imitators"},
            {"from": 12, "to": 13, "multiplier": 4.0, "region": 1},
        ],
    )
    if opens is not None:
        s = s.replace("market.opens", opens)
    grew = []
    for seed in range(3):
        net = build_network(s, np.random.default_rng([seed, 1]))
        initial = np.sort(np.random.default_rng([seed, 2]).choice(net.n, 5, replace=False)).astype(np.int32)
        fast = run_array(s, net, initial, np.random.default_rng(np.random.SeedSequence([seed, 3])))
        period, referrer, m = plain_run(s, net, initial, np.random.default_rng(np.random.SeedSequence([seed, 3])))
        assert np.array_equal(fast.adoption_period, period)
        assert np.array_equal(fast.referrer, referrer)
        assert np.array_equal(fast.segment, m.segment)
        grew.append(fast.customers[-1] > 100)
        if opens is not None:  # nobody in a closed part adopts before it opens
            assert np.all(fast.adoption_period[fast.adoption_period >= 0] >= m.opens_at[fast.adoption_period >= 0])
    assert all(grew)


def test_segment_inputs_are_as_the_table_says():
    s = _scenario("random", n=1000)
    net = build_network(s, np.random.default_rng(1))
    m = market_inputs(s, net, np.random.default_rng(np.random.SeedSequence(9)))
    assert np.bincount(m.segment).tolist() == segment_counts([0.15, 0.85], 1000).tolist() == [150, 850]
    few = m.segment == 0
    assert np.all(m.external_weight[few] == 3.0) and np.all(m.external_weight[~few] == 0.5)
    assert np.all(m.word_of_mouth_weight[few] == 2.0) and np.all(m.word_of_mouth_weight[~few] == 1.0)
    assert np.all(m.satisfied_share[few] == 0.9) and np.all(m.satisfied_share[~few] == 0.6)
    assert np.all(m.talkers[few] == 3) and np.all(m.talkers[~few] == 2)
    assert np.all(m.value[few] == 4.0) and np.all(m.value[~few] == 1.0)
    # calendar: imitators get 0.05 in periods 4-7, everyone 4 x 0.01 in 12-13, else 0.01
    assert m.external[5, 1] == 0.05 and m.external[5, 0] == 0.01 and np.all(m.external[12] == 0.04)
    assert m.external_rate(5, int(np.flatnonzero(~few)[0]), 0.01) == pytest.approx(0.025)


def test_neutral_segments_and_campaign_change_nothing():
    # their draws come from a stream of their own: switched on with no effect, every draw is the same
    base = Scenario.from_dict(
        {
            "seed": 4,
            "market": {"organisations": 400, "initial_customers": 4},
            "network": {"kind": "small_world", "mean_degree": 6},
            "adoption": {"talkers_per_customer": {"distribution": "poisson", "mean": 2}},
            "run": {"periods": 15},
        }
    )
    neutral = base.replace({"segments": {"all": {"share": 1.0}}, "campaign": [{"from": 3, "to": 9, "multiplier": 1.0}]})
    for key in ((0,), (1,)):
        a, b = run_one(base, key), run_one(neutral, key)
        assert np.array_equal(a.adoption_period, b.adoption_period)
        assert np.array_equal(a.referrer, b.referrer)


def test_node_file_columns_set_each_organisation(tmp_path):
    ties = tmp_path / "ties.csv"
    ties.write_text("source,target\na,b\nb,c\nc,d\nd,a\n")
    nodes = tmp_path / "nodes.csv"
    nodes.write_text(
        "id,region,segment,size,external,word_of_mouth\na,n,big,3,2,1\nb,n,small,1,1,0.5\n"
        "c,s,small,1,1,0.5\nd,s,big,2,0,1\n"
    )
    s = Scenario.from_dict(
        {
            "market": {"initial_customers": 1},
            "run": {"periods": 5},
            "network": {"kind": "edgelist", "path": str(ties), "nodes_path": str(nodes)},
            "segments": {"big": {"word_of_mouth": 2.0}, "small": {"external": 3.0}},
        }
    )
    net = build_network(s, np.random.default_rng(0))
    m = market_inputs(s, net, np.random.default_rng(np.random.SeedSequence(1)))
    assert m.segment.tolist() == [0, 1, 1, 0]
    assert m.external_weight.tolist() == [2.0, 3.0, 3.0, 0.0]  # segment's multiplier x the node's own
    assert m.word_of_mouth_weight.tolist() == [2.0, 0.5, 0.5, 2.0]
    assert m.value.tolist() == [3.0, 1.0, 1.0, 2.0]
    nodes.write_text("id,region,segment,size\na,n,big,3\nb,n,small,\nc,s,small,1\nd,s,big,2\n")
    with pytest.raises(Exception, match=r"column 'size' has 1 empty cell\(s\) \(row 3\)"):
        market_inputs(s, net, np.random.default_rng(np.random.SeedSequence(1)))


# ---------------------------------------------------------------- engines agree (statistical)

N, R_ARRAY, R_MESA = 300, 150, 150
Z_MAX, KS_P_MIN = 4.0, 1e-3


def _outcomes(runs: list) -> tuple[np.ndarray, np.ndarray]:
    """Customers per replicate and period; final customers and word-of-mouth adoptions per segment."""
    curves = np.vstack([r.customers for r in runs]).astype(float)
    ends = np.array(
        [
            [np.sum((r.adoption_period >= 0) & (r.segment == k)) for k in range(2)]
            + [np.sum((r.referrer >= 0) & (r.segment == k)) for k in range(2)]
            for r in runs
        ],
        dtype=float,
    )
    return curves, ends


def _within(a: np.ndarray, m: np.ndarray, what: str) -> None:
    se = np.sqrt(a.var(axis=0, ddof=1) / len(a) + m.var(axis=0, ddof=1) / len(m))
    bad = np.flatnonzero(np.abs(a.mean(axis=0) - m.mean(axis=0)) > Z_MAX * se + 1e-9)
    assert bad.size == 0, f"mean {what} differ by more than {Z_MAX} SE at {bad.tolist()}"


@pytest.mark.slow
@pytest.mark.parametrize(
    "kind,seed,opens",
    [("complete", 8101, None), ("regional", 8201, None), ("regional", 8301, [{"region": 1, "period": 8}])],
)
def test_engines_agree_with_two_segments_and_a_calendar(kind, seed, opens):
    # Tolerance basis as in test_engines_agree.py: |z| > 4 has probability 6.3e-5 per comparison;
    # 3 cases x (21 periods + 4 end counts) = 75 comparisons, false-alarm chance below 0.5 %.
    runs = {}
    for engine, s in (("array", seed), ("mesa", seed + 1)):
        sc = _scenario(kind, n=N, seed=s).replace("run.engine", engine)
        if opens is not None:  # a market that grows: region 1 opens in period 8
            sc = sc.replace("market.opens", opens)
        runs[engine] = run_replicates(sc, R_ARRAY if engine == "array" else R_MESA, jobs=2).runs
        assert {r.engine for r in runs[engine]} == {engine}
    a, a_ends = _outcomes(runs["array"])
    m, m_ends = _outcomes(runs["mesa"])
    _within(a, m, "customers by period")
    _within(a_ends, m_ends, "customers and word-of-mouth adoptions by segment")
    assert stats.ks_2samp(a[:, -1], m[:, -1]).pvalue > KS_P_MIN
