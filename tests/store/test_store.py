"""The resumable results store (womlab.store) under interruption, resume, spec changes and failures.

Oracle: an uninterrupted sweep of the same spec (every run is fixed by its spawn key
(point, replicate), SeedSequence as in numpy's documentation), so an interrupted and
resumed sweep must hold exactly its runs, none twice. "Write to a temporary name, then
rename" is the POSIX atomic-replace guarantee of rename(2) (common practice).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pyarrow.parquet as pq
import pytest

from womlab import StoreError, dynamics
from womlab.scenario import Scenario, load_scenario
from womlab.store import ResultsStore
from womlab.studies.sweep import run_sweep

SRC = Path(__file__).resolve().parents[2] / "src"

CONFIG = """\
seed = 11
[market]
organisations = 2000
initial_customers = 20
[network]
kind = "random"
mean_degree = 6
[run]
periods = 40
[sweep]
replicates = 6
[sweep.axes]
"adoption.word_of_mouth" = { from = 0.1, to = 0.6, steps = 10 }
"adoption.external" = [0.005, 0.02]
"""


def small(**sweep) -> Scenario:
    return Scenario.from_dict({
        "seed": 5,
        "market": {"organisations": 250, "initial_customers": 3},
        "network": {"kind": "random", "mean_degree": 6},
        "run": {"periods": 20},
        "sweep": {"replicates": 4, "axes": {"adoption.word_of_mouth": [0.1, 0.3, 0.5]}, **sweep},
    })


def test_interrupted_sweep_resumes_to_exactly_the_uninterrupted_runs(tmp_path):
    cfg = tmp_path / "sweep.toml"
    cfg.write_text(CONFIG)
    out = tmp_path / "interrupted"
    env = {**os.environ, "PYTHONPATH": str(SRC)}
    proc = subprocess.Popen(
        [sys.executable, "-m", "womlab", "sweep", str(cfg), "--out", str(out), "--jobs", "1",
         "--chunk-size", "2", "--quiet", "--no-report"],
        env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )
    deadline = time.monotonic() + 120
    try:
        while len(list((out / "parts").glob("runs-*.parquet"))) < 5:
            assert proc.poll() is None, "the sweep ended before it could be interrupted"
            assert time.monotonic() < deadline, "no part files appeared"
            time.sleep(0.02)
        proc.send_signal(signal.SIGKILL)
    finally:
        proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    assert not (out / "runs.parquet").exists(), "killed before consolidation"
    parts = sorted((out / "parts").glob("runs-*.parquet"))
    partial = pd.concat([pq.read_table(p).to_pandas() for p in parts])  # every part whole and readable
    assert 10 <= len(partial) < 120 and len(partial) % 2 == 0

    scenario = load_scenario(cfg)
    resumed = run_sweep(scenario, out, 1, progress=False, report=False)
    assert resumed.skipped == len(partial) and resumed.ran == 120 - len(partial)
    reference = tmp_path / "reference"
    run_sweep(scenario, reference, 1, progress=False, report=False)
    a = ResultsStore(out).runs().drop(columns="wall_time")
    b = ResultsStore(reference).runs().drop(columns="wall_time")
    assert len(a) == 120 and not a.duplicated(["point", "replicate"]).any()
    pd.testing.assert_frame_equal(a, b)
    assert not list((out / "parts").iterdir()), "parts consolidated and removed"
    sessions = ResultsStore(out).manifest()["sessions"]
    assert len(sessions) == 2 and "finished" not in sessions[0] and sessions[1]["ran"] == 120 - len(partial)


def test_resume_after_consolidation_skips_everything(tmp_path):
    s = small()
    first = run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    again = run_sweep(s.replace("run.jobs", 2), tmp_path / "d", progress=False, report=False)  # jobs may differ
    assert (first.ran, again.skipped, again.ran) == (12, 12, 0)
    assert len(ResultsStore(tmp_path / "d").runs()) == 12


def test_duplicated_parts_left_by_a_killed_consolidation_are_read_once(tmp_path):
    s = small()
    run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    store = ResultsStore(tmp_path / "d")
    table = pq.read_table(tmp_path / "d" / "runs.parquet")
    pq.write_table(table.slice(0, 5), store.parts / "runs-20000101T000000000000Z-1-000000.parquet")
    runs = store.runs()
    assert len(runs) == 12 and not runs.duplicated(["point", "replicate"]).any()


def test_a_different_spec_is_refused_with_what_differs(tmp_path):
    run_sweep(small(), tmp_path / "d", 1, progress=False, report=False)
    with pytest.raises(StoreError, match=r"different sweep.*sweep\.replicates: 4 there, 5 now"):
        run_sweep(small(replicates=5), tmp_path / "d", 1, progress=False, report=False)
    changed = small().replace("adoption.external", 0.02)
    with pytest.raises(StoreError, match=r"adoption\.external: 0\.01 there, 0\.02 now"):
        run_sweep(changed, tmp_path / "d", 1, progress=False, report=False)
    with pytest.raises(StoreError, match=r"curves: false there, true now"):
        run_sweep(small(), tmp_path / "d", 1, curves=True, progress=False, report=False)


def test_a_folder_with_other_files_is_refused(tmp_path):
    (tmp_path / "d").mkdir()
    (tmp_path / "d" / "notes.txt").write_text("mine")
    with pytest.raises(StoreError, match="not empty and holds no sweep manifest"):
        run_sweep(small(), tmp_path / "d", 1, progress=False, report=False)
    assert (tmp_path / "d" / "notes.txt").read_text() == "mine"


def test_a_failing_run_is_recorded_and_the_rest_completes_then_retried_on_resume(tmp_path, monkeypatch):
    real = dynamics.ENGINES["array"]

    def flaky(scenario, network, initial, rng):  # noqa: ANN001
        if scenario.adoption.word_of_mouth == 0.3:
            raise RuntimeError("engine failed on purpose")
        return real(scenario, network, initial, rng)

    monkeypatch.setitem(dynamics.ENGINES, "array", flaky)
    s = small()
    summary = run_sweep(s, tmp_path / "d", 1, progress=False, report=True)
    assert summary.failures == 4 and summary.ran == 12
    runs = ResultsStore(tmp_path / "d").runs()
    bad = runs[runs["status"] == "failed"]
    assert bad["point"].tolist() == [1, 1, 1, 1]
    assert (bad["error"] == "RuntimeError: engine failed on purpose").all()
    assert bad["final_share"].isna().all() and (runs.loc[runs["status"] == "ok", "final_share"] > 0).all()
    assert "engine failed on purpose" in (tmp_path / "d" / "report.html").read_text()

    monkeypatch.setitem(dynamics.ENGINES, "array", real)
    again = run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    assert (again.skipped, again.ran, again.failures) == (8, 4, 0)
    runs = ResultsStore(tmp_path / "d").runs()
    assert len(runs) == 12 and (runs["status"] == "ok").all()


def test_curves_are_compact_and_agree_with_the_run_rows(tmp_path):
    run_sweep(small(), tmp_path / "d", 1, curves=True, progress=False, report=False)
    store = ResultsStore(tmp_path / "d")
    curves, runs = store.curves(), store.runs()
    assert len(curves) == 12 * 21
    assert {str(t) for t in curves.dtypes} == {"int32"}
    last = curves[curves["period"] == 20].reset_index(drop=True)
    assert (last["customers"].to_numpy() == runs["customers"].to_numpy()).all()
    new_total = curves.groupby(["point", "replicate"])["new_customers"].sum().to_numpy()
    assert (new_total == runs["customers"].to_numpy()).all()
