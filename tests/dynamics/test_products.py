"""Successive product generations on the network (``[[product]]``).

1. The compiled kernel against a plain loop written here (exposures recomputed from scratch each
   step, one organisation at a time, the scalar formulas of womlab.rules): identical results on the
   same draws (integer talkers keep every sum exact in both).
2. On the complete network the runs follow the mean-field recursion (Kurtz 1970, "Solutions of
   ordinary differential equations as limits of pure jump Markov processes", J. Applied
   Probability): 4 standard errors of the mean of R runs + 2/N, seeds and tolerance fixed before
   looking.
3. That recursion approaches Norton & Bass (1987, "A diffusion theory model of adoption and
   substitution for successive generations of high-technology products", Management Science) as
   the step shrinks, at the rate O(dt) of a first-order scheme (derived in
   womlab.aggregate.generations: the continuous mean field is their model with the whole market
   in the first generation's potential).
"""

from __future__ import annotations

import numpy as np
import pytest

from womlab import Scenario, ScenarioError, build_network, rules, run_one
from womlab.aggregate import generations_difference, mapped_generations, norton_bass
from womlab.dynamics.array_engine import run_array
from womlab.dynamics.products import product_rng

THREE = [
    {"launch": 8, "external": 0.02, "word_of_mouth": 0.5, "satisfied_share": 0.7},
    {"launch": 15, "external": 0.03, "word_of_mouth": 0.6, "value_per_period": 3.0},
]


def _scenario(kind: str, n: int, **extra) -> Scenario:
    data = {
        "seed": 6,
        "market": {"organisations": n, "initial_customers": 5},
        "network": {"kind": kind, "mean_degree": 6},
        "adoption": {"external": 0.01, "word_of_mouth": 0.4, "satisfied_share": 0.8, "talkers_per_customer": 2},
        "run": {"periods": 25},
        "product": THREE,
    }
    data.update(extra)
    return Scenario.from_dict(data)


def plain_run(scenario, network, initial, rng):
    a, run = scenario.adoption, scenario.run
    n, spp, dt = network.n, run.steps_per_period, run.time_step
    gens = scenario.product.generations(a)
    G = len(gens)
    tau = rules.draw_talkers(a.talkers_per_customer, n, rng).astype(np.float64)
    own = product_rng(rng)
    sat = np.vstack([rules.draw_satisfied(g.satisfied_share, n, own) for g in gens])
    resist_entry = own.standard_exponential(n)
    resist_up = own.standard_exponential((n, max(G - 1, 1)))
    u = own.random((n, G))
    share, form = rules.rule_code("share"), rules.form_code(run.step_probability)

    def around(x):
        return x.sum() - x if network.complete else network.matrix(np.float64) @ x

    total = around(tau)
    owned = np.zeros(n, dtype=int)
    owned[initial] = 1
    start = np.full((n, G), -1)
    start[initial, 0] = 0
    entry, up = np.zeros(n), np.zeros(n)
    for step in range(1, run.periods * spp + 1):
        period = (step + spp - 1) // spp
        newest = sum(g.launch <= period for g in gens)
        heard = np.vstack([around(np.where((owned == g + 1) & sat[g], tau, 0.0)) for g in range(G)])
        moves = []
        for i in range(n):
            g = owned[i]
            if g == newest:
                continue
            h = heard[:, i]
            if g == 0:
                entry[i] += rules.hazard(
                    rules.rate(share, h.sum(), total[i], 0.0, gens[0].external, gens[0].word_of_mouth, 0.0), dt, form
                )
                if entry[i] < resist_entry[i]:
                    continue
                chosen = newest
                if h.sum() > 0:
                    cum = np.cumsum(h[:newest])
                    chosen = int(np.argmax(cum > u[i, 0] * h.sum())) + 1
            else:
                newer = h[g:].sum()
                up[i] += rules.hazard(
                    rules.upgrade_rate(gens[g].external, gens[g].word_of_mouth, newer, newer + h[g - 1]), dt, form
                )
                if up[i] < resist_up[i, g - 1]:
                    continue
                chosen = g + 1
                if newer > 0:
                    cum = np.cumsum(h[g:newest])
                    chosen = g + 1 + int(np.argmax(cum > u[i, g] * newer))
            moves.append((i, chosen))
        for i, chosen in moves:
            owned[i] = chosen
            start[i, chosen - 1] = step
            up[i] = 0.0
    return owned, start


@pytest.mark.parametrize("kind", ["random", "small_world", "complete"])
def test_kernel_is_the_plain_loop(kind):
    s = _scenario(kind, 300)
    for seed in range(2):
        net = build_network(s, np.random.default_rng([seed, 1]))
        initial = np.sort(np.random.default_rng([seed, 2]).choice(300, 5, replace=False))
        fast = run_array(s, net, initial, np.random.default_rng(np.random.SeedSequence([seed, 3])))
        owned, start = plain_run(s, net, initial, np.random.default_rng(np.random.SeedSequence([seed, 3])))
        assert np.array_equal(fast.extra["product_start"], start)
        table = fast.product_curves()
        last = table[table["period"] == 25].set_index("product")["customers"]
        assert [last[f"generation {g}"] for g in (1, 2, 3)] == [int(np.sum(owned == g)) for g in (1, 2, 3)]
        assert last["generation 3"] > 0 and last["generation 2"] + last["generation 3"] > 50


def test_product_curves_add_up():
    r = run_one(_scenario("random", 1000, run={"periods": 30}))
    t = r.product_curves()
    by = t[t["product"] != "all"].groupby("period")[["customers", "new_customers", "upgrades", "value"]].sum()
    portfolio = t[t["product"] == "all"].set_index("period")
    assert np.array_equal(by["customers"].to_numpy(), r.customers)
    assert np.array_equal(by["new_customers"].to_numpy(), r.new_customers)
    assert np.allclose(by["value"], portfolio["value"])
    g3 = t[t["product"] == "generation 3"]
    assert np.allclose(g3["value"], 3.0 * g3["customers"]) and g3["customers"].iloc[:15].sum() == 0


def test_complete_network_follows_the_mean_field_recursion():
    n, reps = 20_000, 16
    s = _scenario(
        "complete",
        n,
        seed=21,
        market={"organisations": n, "initial_customers": 0},
        run={"periods": 30, "step_probability": "linear"},
    )
    runs = [run_one(s, (r,)) for r in range(reps)]
    shares = []
    for r in runs:
        t = r.product_curves()
        shares.append(
            np.column_stack([t[t["product"] == f"generation {g}"]["customers"].to_numpy() / n for g in (1, 2, 3)])
        )
    shares = np.array(shares)
    m = mapped_generations(s)
    expected = generations_difference(30, m["launch"], m["p"], m["q"], m["satisfied"], 0.0, form="linear")
    se = shares.std(axis=0, ddof=1) / np.sqrt(reps)
    assert np.all(np.abs(shares.mean(axis=0) - expected) <= 4 * se + 2 / n)
    assert expected[-1, 2] > 0.3  # the third generation took a good part of the market


def test_recursion_approaches_norton_bass():
    launch, p, q, s = (
        np.array([0.0, 12.0, 20.0]),
        np.array([0.01, 0.02, 0.03]),
        np.array([0.4, 0.5, 0.6]),
        np.full(3, 0.8),
    )
    # generation g launched in period k is on sale from the start of that period: time k - 1
    closed = norton_bass(
        np.arange(41.0), np.array([0.0, 11.0, 19.0]), p, np.array([0.4 * 0.8, 0.5, 0.6]), np.array([1.0, 0.0, 0.0])
    )
    errors = [
        np.abs(generations_difference(40, launch, p, q, s, 0.0, time_step=dt, form="exponential") - closed).max()
        for dt in (0.1, 0.01)
    ]
    assert errors[1] < 0.005 and errors[0] / errors[1] == pytest.approx(10, rel=0.25)


@pytest.mark.parametrize(
    "changes,message",
    [
        (
            {"product": [{"launch": 30}]},
            r"product\[0\]\.launch must be a period after the previous generation's launch "
            r"\(0\) and at most run\.periods = 25, got 30",
        ),
        (
            {"product": [{"launch": 9}, {"launch": 9}]},
            r"product\[1\]\.launch must be a period after the previous "
            r"generation's launch \(9\)",
        ),
        (
            {"product": [{"launch": 9, "word_of_mouth": -0.1}]},
            r"product\[0\]\.word_of_mouth must be a finite number >= 0",
        ),
        ({"adoption": {"rule": "count"}}, r"adoption\.rule must be share with \[\[product\]\]"),
        (
            {"run": {"periods": 25, "clock": "continuous"}},
            r"\[\[product\]\] \(successive product generations\) runs on "
            r'run\.clock = "discrete" only',
        ),
        ({"segments": {"a": {"share": 1.0}}}, r"\[\[product\]\] cannot be combined with \[segments\] yet"),
    ],
)
def test_bad_product_input_is_one_line(changes, message):
    with pytest.raises(ScenarioError, match=message):
        _scenario("random", 300, **changes)


# ---------------------------------------------------------------- the Mesa model agrees (statistical)


def _per_generation(runs: list) -> np.ndarray:
    """Customers on each generation at each period, one row per run (periods x generations flattened)."""
    out = []
    for r in runs:
        t = r.product_curves()
        out.append(np.concatenate([t[t["product"] == f"generation {g}"]["customers"].to_numpy() for g in (1, 2, 3)]))
    return np.array(out, dtype=float)


@pytest.mark.slow
@pytest.mark.parametrize("kind,seed", [("random", 9101), ("complete", 9201)])
def test_array_engine_and_mesa_model_agree_with_three_generations(kind, seed):
    # Method and tolerance basis of tests/dynamics/test_engines_agree.py: means within 4 standard
    # errors at every period and generation (|z| > 4: probability 6.3e-5 each; 2 x 78 comparisons,
    # of which those that are constant on both sides must be equal), seeds fixed before looking.
    from scipy import stats

    from womlab import run_replicates

    samples = {}
    for engine, s in (("array", seed), ("mesa", seed + 1)):
        sc = _scenario(kind, 300, seed=s).replace("run.engine", engine)
        runs = run_replicates(sc, 150, jobs=2).runs
        assert {r.engine for r in runs} == {engine}
        samples[engine] = _per_generation(runs)
    a, m = samples["array"], samples["mesa"]
    se = np.sqrt(a.var(axis=0, ddof=1) / len(a) + m.var(axis=0, ddof=1) / len(m))
    bad = np.flatnonzero(np.abs(a.mean(axis=0) - m.mean(axis=0)) > 4 * se + 1e-9)
    assert bad.size == 0, f"means differ by more than 4 SE at {bad.tolist()}"
    assert stats.ks_2samp(a[:, -1], m[:, -1]).pvalue > 1e-3  # generation 3 at the horizon
