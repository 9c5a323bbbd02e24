"""Replicate batches: determinism, common random numbers, outputs and the command line."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from womlab import Scenario, ScenarioError, run_one, run_paired, run_replicates, save_batch, streams
from womlab.cli import main
from womlab.studies import runner
from womlab.studies.runner import parallel_choice

ROOT = Path(__file__).resolve().parents[2]

SMALL = {
    "seed": 99,
    "market": {"organisations": 400, "initial_customers": 4, "regions": 2},
    "network": {"kind": "small_world", "mean_degree": 6, "rewiring": 0.1},
    "adoption": {
        "external": 0.01,
        "word_of_mouth": 0.4,
        "satisfied_share": 0.7,
        "talkers_per_customer": {"distribution": "poisson", "mean": 2},
    },
    "run": {"periods": 30},
}


def test_same_seed_same_curves_for_any_jobs():
    s = Scenario.from_dict(SMALL)
    one = run_replicates(s, 6, jobs=1)
    with parallel_choice("pool"):  # two worker processes, whatever the work
        two = run_replicates(s, 6, jobs=2)
    pd.testing.assert_frame_equal(one.curves(), two.curves())
    for a, b in zip(one.runs, two.runs):
        assert np.array_equal(a.adoption_period, b.adoption_period)
        assert np.array_equal(a.referrer, b.referrer)
    other = run_replicates(s.replace("seed", 100), 6)
    assert not one.curves().equals(other.curves())


def test_replicate_is_replayable_from_its_key():
    s = Scenario.from_dict(SMALL)
    batch = run_replicates(s, 4)
    again = run_one(s, (3,))
    assert again.spawn_key == (3,) and again.seed == 99
    assert np.array_equal(batch.runs[3].adoption_period, again.adoption_period)


def test_streams_are_split_by_purpose():
    a, b = streams(5, (0,)), streams(5, (1,))
    draws = {name: np.random.default_rng(ss).random(3).tolist() for name, ss in zip(a._fields, a)}
    assert len({tuple(v) for v in draws.values()}) == 3
    assert np.random.default_rng(a.dynamics).random() != np.random.default_rng(b.dynamics).random()


def test_result_tables_have_the_fixed_schema():
    s = Scenario.from_dict(SMALL)
    run = run_one(s)
    curve = run.curve()
    assert list(curve.columns) == ["period", "time", "customers", "new_customers", "satisfied_customers"]
    assert len(curve) == 31  # periods = T gives T + 1 rows
    assert curve["customers"].iloc[0] == 4
    assert np.array_equal(np.cumsum(curve["new_customers"]), curve["customers"])
    assert np.all(curve["satisfied_customers"] <= curve["customers"])
    assert run.customers_by_region().sum(axis=1).tolist() == curve["customers"].tolist()
    assert run.adoption_period.dtype == np.int32 and run.referrer.dtype == np.int32


def test_referrers_are_earlier_satisfied_neighbours():
    s = Scenario.from_dict(SMALL)
    run = run_one(s, (1,))
    from womlab import build_network

    net = build_network(s, np.random.default_rng(streams(s.seed, (1,)).network))
    by_wom = np.flatnonzero(run.referrer >= 0)
    assert by_wom.size > 0
    for i in by_wom:
        j = run.referrer[i]
        assert j in net.indices[net.indptr[i] : net.indptr[i + 1]]
        assert run.satisfied[j] and 0 <= run.adoption_period[j] < run.adoption_period[i]


def test_paired_variants_share_network_and_draws():
    s = Scenario.from_dict(SMALL)
    runs = run_paired({"a": s, "b": s}, 3)
    for a, b in zip(runs["a"], runs["b"]):
        assert np.array_equal(a.adoption_period, b.adoption_period)  # identical variants: zero difference
    stronger = run_paired({"base": s, "more": s.replace("adoption.word_of_mouth", 0.8)}, 3)
    for a, b in zip(stronger["base"], stronger["more"]):
        assert np.array_equal(a.initial, b.initial)  # same seeding stream
        assert b.customers[-1] >= a.customers[-1] - 5


def test_zero_initial_customers_start_from_external_influence():
    s = Scenario.from_dict({**SMALL, "market": {"organisations": 400, "initial_customers": 0}})
    run = run_one(s)
    assert run.customers[0] == 0 and run.customers[-1] > 0


def test_save_batch_writes_every_output(tmp_path):
    s = Scenario.from_dict(SMALL)
    batch = run_replicates(s, 3)
    written = save_batch(batch, tmp_path / "out")
    names = sorted(p.name for p in written)
    assert names == ["adoption.png", "curves.csv", "manifest.json", "metrics.csv", "summary.csv"]
    summary = pd.read_csv(tmp_path / "out" / "summary.csv")
    assert list(summary.columns) == ["period", "time", "mean", "sd", "q05", "q50", "q95", "aggregate"]
    metrics = pd.read_csv(tmp_path / "out" / "metrics.csv")
    assert metrics["metric"].tolist() == ["t10", "t50", "t90", "peak_period", "peak_new_share", "final_share"]
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert manifest["root_seed"] == 99 and manifest["scenario"]["network"]["kind"] == "small_world"
    assert "numpy" in manifest["versions"]
    assert not list((tmp_path / "out").glob(".*"))  # no temporary files left behind


def test_cli_run_and_check(tmp_path, capsys):
    cfg = tmp_path / "s.toml"
    cfg.write_text(
        "seed = 4\n[market]\norganisations = 300\ninitial_customers = 3\n"
        '[network]\nkind = "random"\nmean_degree = 6\n[run]\nperiods = 15\nreplicates = 2\n'
    )
    assert main(["run", str(cfg), "--replicates", "3", "--jobs", "1", "--out", str(tmp_path / "o"), "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "t50" in out and "aggregate" in out
    assert pd.read_csv(tmp_path / "o" / "curves.csv")["replicate"].nunique() == 3
    assert main(["check", str(cfg)]) == 0
    assert "mapped Bass Q" in capsys.readouterr().out


def test_cli_user_error_is_one_line_and_exit_2(tmp_path):
    cfg = tmp_path / "bad.toml"
    cfg.write_text("[adoption]\nsatisfied_share = 1.4\n")
    proc = subprocess.run([sys.executable, "-m", "womlab", "check", str(cfg)], capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stderr.strip() == "womlab: error: adoption.satisfied_share must be in [0, 1], got 1.4"
    assert "Traceback" not in proc.stderr


def test_out_that_is_a_file_is_refused_and_kept(tmp_path):
    s = Scenario.from_dict(SMALL)
    target = tmp_path / "taken"
    target.write_text("precious")
    from womlab import StoreError

    with pytest.raises(StoreError, match="exists and is not a folder"):
        save_batch(run_replicates(s, 1), target)
    assert target.read_text() == "precious"


def test_small_work_stays_in_process_and_large_work_starts_a_pool_with_the_same_results(capfd, monkeypatch):
    # The crossover rule (studies.runner.crossover_seconds): with a pool start-up of 3 s, six runs
    # of 400 organisations (milliseconds each) stay in-process, silently; with a start-up of 0 the
    # same batch is handed to workers after two timed runs, a line on standard error says so, and
    # every run is identical bit for bit to the in-process one (each run is seeded by its key).
    s = Scenario.from_dict(SMALL)
    with parallel_choice("in-process"):
        here = run_replicates(s, 8, jobs=2)
    capfd.readouterr()
    auto = run_replicates(s, 8, jobs=2)
    assert "worker processes" not in capfd.readouterr().err
    monkeypatch.setattr(runner, "POOL_START_SECONDS", 0.0)
    monkeypatch.setattr(runner, "POOL_WARM_SECONDS", 0.0)
    monkeypatch.setitem(runner._pool, "workers", 0.0)  # as if no pool had run in this process
    pooled = run_replicates(s, 8, jobs=2)
    assert "womlab: starting 2 worker processes" in capfd.readouterr().err
    for a, b, c in zip(here.runs, auto.runs, pooled.runs):
        for field in ("adoption_period", "referrer", "satisfied", "adoption_time"):
            assert np.array_equal(getattr(a, field), getattr(b, field), equal_nan=True)
            assert np.array_equal(getattr(a, field), getattr(c, field), equal_nan=True)


def test_crossover_rule():
    # In-process W seconds against S + W / w on w workers: the pool pays above S·w/(w − 1).
    assert runner.crossover_seconds(1) == np.inf
    assert runner.crossover_seconds(2) == pytest.approx(2 * runner.POOL_START_SECONDS)
    assert runner.crossover_seconds(4, warm=True) == pytest.approx(runner.POOL_WARM_SECONDS * 4 / 3)
    with pytest.raises(ScenarioError, match="parallel choice must be one of auto, pool, in-process, got 'fast'"):
        with parallel_choice("fast"):
            pass


def test_greedy_scores_seeds_with_the_scenarios_own_engine(monkeypatch):
    # common practice: a strategy that simulates must simulate the model being studied; on the
    # continuous clock that is the event engine, so greedy's Monte Carlo runs must be event runs
    from womlab.dynamics import engines

    calls = {"events": 0, "array": 0}
    for name in calls:
        real = engines.ENGINES[name]

        def counted(*args, _real=real, _name=name, **kwargs):
            calls[_name] += 1
            return _real(*args, **kwargs)

        monkeypatch.setitem(engines.ENGINES, name, counted)
    monkeypatch.setattr("womlab.seeding.registry._SIMULATOR", [engines.ENGINES["array"]])
    s = Scenario.from_dict(
        {
            "seed": 4,
            "market": {"organisations": 120, "initial_customers": 2},
            "network": {"kind": "random", "mean_degree": 4},
            "run": {"periods": 8, "clock": "continuous"},
            "seeding": {"strategy": "greedy", "greedy_runs": 2, "greedy_candidates": 5},
        }
    )
    run_one(s, (0,))
    assert calls["array"] == 0
    assert calls["events"] > 1  # the run itself, and greedy's Monte Carlo runs
