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
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from womlab import StoreError, dynamics
from womlab.cli import main
from womlab.scenario import Scenario, load_scenario
from womlab.store import ResultsStore, file_sha256
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
    return Scenario.from_dict(
        {
            "seed": 5,
            "market": {"organisations": 250, "initial_customers": 3},
            "network": {"kind": "random", "mean_degree": 6},
            "run": {"periods": 20},
            "sweep": {"replicates": 4, "axes": {"adoption.word_of_mouth": [0.1, 0.3, 0.5]}, **sweep},
        }
    )


def test_interrupted_sweep_resumes_to_exactly_the_uninterrupted_runs(tmp_path):
    cfg = tmp_path / "sweep.toml"
    cfg.write_text(CONFIG)
    out = tmp_path / "interrupted"
    env = {**os.environ, "PYTHONPATH": str(SRC)}
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "womlab",
            "sweep",
            str(cfg),
            "--out",
            str(out),
            "--jobs",
            "1",
            "--chunk-size",
            "2",
            "--quiet",
            "--no-report",
        ],
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
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
    with pytest.raises(
        StoreError,
        match=r"holds 4 replicates per point, this sweep asks for 3; a sweep can be "
        r"extended with more replicates, not cut",
    ):
        run_sweep(small(replicates=3), tmp_path / "d", 1, progress=False, report=False)
    with pytest.raises(StoreError, match=r"different sweep.*sweep\.design: \"grid\" there, \"latin\" now"):
        run_sweep(
            small(design="latin", samples=3, axes={"adoption.word_of_mouth": {"from": 0.1, "to": 0.5}}),
            tmp_path / "d",
            1,
            progress=False,
            report=False,
        )
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
    assert [f.name for f in (tmp_path / "d").iterdir()] == ["notes.txt"]  # not even a lock file left there


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


# ----------------------------------------------------------------------------- damage, company, inputs
# Oracle, as above: an undamaged sweep of the same spec. A damaged file must cost only its own runs,
# which are run again on their own spawn keys, so the repaired folder equals the undamaged one.


def reference(tmp_path, s: Scenario) -> pd.DataFrame:
    run_sweep(s, tmp_path / "reference", 1, progress=False, report=False)
    return ResultsStore(tmp_path / "reference").runs().drop(columns="wall_time")


def interrupted(tmp_path, s: Scenario, monkeypatch, keep_parts: int = 3) -> Path:
    """A sweep stopped after ``keep_parts`` parts, before consolidation (as a killed process leaves it)."""
    from womlab.studies import sweep as sweep_module

    real = sweep_module._collect

    def stop_after(results, store, session, bar):  # noqa: ANN001
        for number, (runs, curves) in enumerate(results):
            store.write_part(session, number, runs, curves)
            if number + 1 == keep_parts:
                raise KeyboardInterrupt
        return 0, 0

    monkeypatch.setattr(sweep_module, "_collect", stop_after)
    with pytest.raises(KeyboardInterrupt):
        run_sweep(s, tmp_path / "d", 1, chunk_size=2, progress=False, report=False)
    monkeypatch.setattr(sweep_module, "_collect", real)
    return tmp_path / "d"


def _truncate(p: Path) -> None:
    p.write_bytes(p.read_bytes()[: p.stat().st_size // 2])


def _empty(p: Path) -> None:
    p.write_bytes(b"")


def _random(p: Path) -> None:
    p.write_bytes(os.urandom(p.stat().st_size))


def _foreign(p: Path) -> None:
    pq.write_table(pa.table({"point": [0], "something": ["else"]}), p)


@pytest.mark.parametrize(
    "damage", [_truncate, _empty, _random, _foreign], ids=["truncated", "emptied", "random", "foreign-schema"]
)
def test_a_damaged_part_is_set_aside_in_one_line_and_its_runs_redone(tmp_path, monkeypatch, damage):
    s = small()
    out = interrupted(tmp_path, s, monkeypatch)
    part = sorted((out / "parts").glob("runs-*.parquet"))[1]
    damage(part)
    notices = []
    resumed = run_sweep(s, out, 1, progress=False, report=False, notify=notices.append)
    assert len(notices) == 1 and "\n" not in notices[0]
    assert f"set aside damaged parts/{part.name}" in notices[0] and "its runs will be run again" in notices[0]
    assert (out / "damaged" / part.name).exists() and resumed.notices == notices
    assert resumed.skipped == 4 and resumed.ran == 8  # two whole parts kept, the damaged one's two runs redone
    pd.testing.assert_frame_equal(ResultsStore(out).runs().drop(columns="wall_time"), reference(tmp_path, s))


def test_a_damaged_curves_part_takes_its_runs_part_aside_with_it(tmp_path, monkeypatch):
    from womlab.studies import sweep as sweep_module

    s = small()
    real = sweep_module._collect

    def stop_after(results, store, session, bar):  # noqa: ANN001
        for number, (runs, curves) in enumerate(results):
            store.write_part(session, number, runs, curves)
            if number == 2:
                raise KeyboardInterrupt
        return 0, 0

    monkeypatch.setattr(sweep_module, "_collect", stop_after)
    with pytest.raises(KeyboardInterrupt):
        run_sweep(s, tmp_path / "d", 1, chunk_size=2, curves=True, progress=False, report=False)
    monkeypatch.setattr(sweep_module, "_collect", real)
    curves = sorted((tmp_path / "d" / "parts").glob("curves-*.parquet"))[0]
    _truncate(curves)
    resumed = run_sweep(s, tmp_path / "d", 1, curves=True, progress=False, report=False)
    assert resumed.ran == 8 and "runs-" in resumed.notices[0]
    store = ResultsStore(tmp_path / "d")
    assert len(store.curves()) == 12 * 21 and len(store.runs()) == 12


def test_a_truncated_runs_table_and_a_missing_points_table_are_recovered(tmp_path):
    s = small()
    run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    _truncate(tmp_path / "d" / "runs.parquet")
    (tmp_path / "d" / "points.parquet").unlink()
    resumed = run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    assert resumed.ran == 12 and len(resumed.notices) == 1 and "runs.parquet" in resumed.notices[0]
    pd.testing.assert_frame_equal(ResultsStore(tmp_path / "d").runs().drop(columns="wall_time"), reference(tmp_path, s))
    assert ResultsStore(tmp_path / "d").points()["adoption.word_of_mouth"].tolist() == [0.1, 0.3, 0.5]
    _random(tmp_path / "d" / "points.parquet")  # damaged rather than missing: set aside, rebuilt
    again = run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    assert again.ran == 0 and "points.parquet" in again.notices[0]


def test_a_second_writer_is_refused_in_one_line_while_the_first_holds_the_folder(tmp_path, capsys):
    s = small()
    run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    holder = ResultsStore(tmp_path / "d")
    with holder.locked():
        with pytest.raises(StoreError, match="is being written by another womlab process"):
            run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
        with pytest.raises(StoreError, match=r"another womlab process within 0.2 s"):
            run_sweep(s, tmp_path / "d", 1, progress=False, report=False, wait=0.2)
        assert main(["report", str(tmp_path / "d")]) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and err.startswith("womlab: error: results folder")
    assert run_sweep(s, tmp_path / "d", 1, progress=False, report=False).skipped == 12  # free again


def test_two_processes_started_together_on_one_folder_one_refuses_and_the_other_finishes_whole(tmp_path):
    cfg = tmp_path / "sweep.toml"
    cfg.write_text(CONFIG.replace("organisations = 2000", "organisations = 500").replace("steps = 10", "steps = 4"))
    out = tmp_path / "shared"
    env = {**os.environ, "PYTHONPATH": str(SRC)}
    command = [
        sys.executable,
        "-m",
        "womlab",
        "sweep",
        str(cfg),
        "--out",
        str(out),
        "--jobs",
        "1",
        "--chunk-size",
        "2",
        "--quiet",
        "--no-report",
    ]
    procs = [
        subprocess.Popen(command, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        for _ in range(2)
    ]
    results = [(p.wait(timeout=300), p.stderr.read()) for p in procs]
    codes = sorted(code for code, _ in results)
    assert codes == [0, 2], results
    refused = next(err for code, err in results if code == 2)
    assert refused.count("\n") == 1 and "is being written by another womlab process" in refused
    runs = ResultsStore(out).runs()
    assert len(runs) == 48 and (runs["status"] == "ok").all() and not list((out / "parts").iterdir())


def test_consolidation_removes_only_the_parts_it_read(tmp_path, monkeypatch):
    s = small()
    run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    store = ResultsStore(tmp_path / "d")
    extra = pq.read_table(tmp_path / "d" / "runs.parquet").slice(0, 2)
    late = store.parts / "runs-29990101T000000000000Z-1-000000.parquet"
    real = ResultsStore._runs_table

    def part_lands_meanwhile(self, files=None):  # noqa: ANN001
        table = real(self, files)
        pq.write_table(extra, late)  # another writer's part, finished after the listing
        return table

    monkeypatch.setattr(ResultsStore, "_runs_table", part_lands_meanwhile)
    store.consolidate()
    assert late.exists(), "a part that landed after the listing is kept for the next consolidation"


def test_an_edited_input_file_refuses_the_resume_naming_the_file(tmp_path):
    ties = tmp_path / "ties.csv"
    ties.write_text("source,target\n" + "".join(f"{i},{(i + 1) % 40}\n{i},{(i + 7) % 40}\n" for i in range(40)))
    s = Scenario.from_dict(
        {
            "seed": 2,
            "market": {"initial_customers": 2},
            "network": {"kind": "edgelist", "path": str(ties)},
            "run": {"periods": 10},
            "sweep": {"replicates": 2, "axes": {"adoption.word_of_mouth": [0.2, 0.4]}},
        }
    )
    run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    assert ResultsStore(tmp_path / "d").manifest()["inputs"] == {str(ties): file_sha256(ties)}
    ties.write_text(ties.read_text().replace("0,7\n", "0,9\n"))
    with pytest.raises(StoreError, match=rf"input file '{ties}' has changed since this sweep started"):
        run_sweep(s, tmp_path / "d", 1, progress=False, report=False)


def test_parts_and_tables_are_flushed_to_disk_before_they_are_renamed_into_place(tmp_path, monkeypatch):
    # POSIX: rename(2) makes a name point at the data only as durable as the data itself; fsync before
    # the rename, and of the folder after it (common practice for crash-safe files).
    from womlab.store import folders

    events = []
    real_fsync, real_replace = os.fsync, os.replace
    monkeypatch.setattr(
        folders.os,
        "fsync",
        lambda fd: (events.append(("fsync", os.readlink(f"/proc/self/fd/{fd}"))), real_fsync(fd))[1],
    )
    monkeypatch.setattr(folders.os, "replace", lambda a, b: (events.append(("replace", str(a))), real_replace(a, b))[1])
    run_sweep(small(), tmp_path / "d", 1, progress=False, report=False)
    renamed = [e[1] for e in events if e[0] == "replace"]
    assert any("runs-" in r for r in renamed) and any(r.endswith(".parquet") and "/.runs.parquet" in r for r in renamed)
    for i, (kind, name) in enumerate(events):
        if kind == "replace":
            assert events[i - 1] == ("fsync", name), f"{name} renamed before it was flushed"
            assert events[i + 1][0] == "fsync" and events[i + 1][1] == str(Path(name).parent)
