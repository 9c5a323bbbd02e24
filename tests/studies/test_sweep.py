"""Sweep designs and parallel execution (womlab.studies.sweep).

Oracles: the seeding rule of the design (SeedSequence(seed, spawn_key=(point, replicate)),
numpy's documented SeedSequence spawning) — a sweep row must equal the run that
studies.run_one makes for that key, reduced by metrics.curve_metrics — so results cannot
depend on jobs, backend or completion order; numpy.geomspace for log axes; the Latin
hypercube's definition (McKay, Beckman & Conover 1979: one point per stratum of every
axis); Saltelli (2002) for the structure of the sobol design.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from womlab import ScenarioError, run_one
from womlab.cli import main
from womlab.studies.metrics import curve_metrics
from womlab.scenario import Scenario
from womlab.store import ResultsStore
from womlab.studies.sweep import design_points, point_scenarios, run_sweep
from womlab.studies.runner import parallel_choice

BASE = {
    "seed": 7,
    "market": {"organisations": 300, "initial_customers": 3},
    "network": {"kind": "random", "mean_degree": 6},
    "run": {"periods": 25},
}


def scenario(sweep: dict) -> Scenario:
    return Scenario.from_dict({**BASE, "sweep": sweep})


GRID = {"replicates": 4, "axes": {"network.kind": ["random", "ring"],
                                  "adoption.word_of_mouth": {"from": 0.1, "to": 0.5, "steps": 3}}}


def outcomes(folder) -> pd.DataFrame:
    return ResultsStore(folder).runs().drop(columns="wall_time")


def test_grid_2x3_with_4_replicates_is_identical_for_jobs_1_jobs_2_and_dask(tmp_path):
    # SeedSequence(seed, spawn_key=(point, replicate)) per run: the backend cannot matter.
    s = scenario(GRID)
    one = run_sweep(s, tmp_path / "j1", 1, progress=False, report=False)
    with parallel_choice("pool"):  # two worker processes, although the work is small
        two = run_sweep(s, tmp_path / "j2", 2, chunk_size=3, progress=False, report=False)
    # Dask LocalCluster with 2 thread workers (processes=False keeps the test fast; the
    # process-worker path is the same joblib Dask backend and is timed in benchmarks/sweeps.py).
    dask = run_sweep(s, tmp_path / "dask", cluster="local:2", cluster_processes=False, chunk_size=5,
                     progress=False, report=False)
    assert (one.runs, two.runs, dask.runs) == (24, 24, 24)
    a, b, c = outcomes(tmp_path / "j1"), outcomes(tmp_path / "j2"), outcomes(tmp_path / "dask")
    assert len(a) == 24 and (a["status"] == "ok").all()
    assert sorted(zip(a["point"], a["replicate"])) == [(p, r) for p in range(6) for r in range(4)]
    pd.testing.assert_frame_equal(a, b)
    pd.testing.assert_frame_equal(a, c)


def test_a_sweep_row_is_run_one_at_the_point_with_key_point_replicate(tmp_path):
    s = scenario(GRID)
    run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    runs = outcomes(tmp_path / "d").set_index(["point", "replicate"])
    at = point_scenarios(s)
    for point, rep in [(0, 0), (4, 3), (5, 1)]:
        result = run_one(at[point], key=(point, rep))
        m = curve_metrics(result.share)
        row = runs.loc[(point, rep)]
        assert row["customers"] == result.customers[-1]
        assert row["final_share"] == m["final_share"] and row["peak_period"] == m["peak_period"]
        np.testing.assert_equal([row["t10"], row["t50"], row["t90"]], [m["t10"], m["t50"], m["t90"]])


def test_grid_points_are_the_product_of_axes_first_axis_slowest_and_log_axes_geometric():
    s = scenario({"axes": {"adoption.word_of_mouth": {"from": 0.01, "to": 1.0, "steps": 3, "log": True},
                           "network.kind": ["random", "ring"]}})
    points = design_points(s)
    assert points["point"].tolist() == list(range(6))
    np.testing.assert_allclose(points["adoption.word_of_mouth"].unique(), np.geomspace(0.01, 1.0, 3))
    assert points["network.kind"].tolist() == ["random", "ring"] * 3


def test_latin_hypercube_puts_one_point_in_every_stratum_and_rounds_whole_number_fields():
    # McKay, Beckman & Conover (1979): each of n equal strata of every axis holds one point.
    n = 12
    s = scenario({"design": "latin", "samples": n, "axes": {
        "adoption.external": {"from": 0.0, "to": 0.06},
        "market.initial_customers": {"from": 1, "to": 30},
        "network.kind": ["random", "ring", "small_world"]}})
    points = design_points(s)
    strata = np.floor(points["adoption.external"].to_numpy() / 0.06 * n).astype(int)
    assert sorted(strata) == list(range(n))
    ic = points["market.initial_customers"]
    assert ic.dtype == np.int64 and ic.between(1, 30).all()
    # a list axis of k values takes value floor(u k): with n a multiple of k, n / k points each
    assert points["network.kind"].value_counts().to_dict() == {"random": 4, "ring": 4, "small_world": 4}


def test_sobol_design_has_saltelli_blocks():
    # Saltelli (2002): A, B, then AB_i = A with column i from B.
    s = scenario({"design": "sobol", "samples": 8, "axes": {"adoption.external": {"from": 0.0, "to": 0.05},
                                                            "adoption.word_of_mouth": {"from": 0.1, "to": 0.6}}})
    p = design_points(s)
    assert len(p) == 8 * 4
    assert p["block"].tolist() == ["A"] * 8 + ["B"] * 8 + ["AB:adoption.external"] * 8 + ["AB:adoption.word_of_mouth"] * 8
    a, b = p.iloc[:8].reset_index(drop=True), p.iloc[8:16].reset_index(drop=True)
    ab1 = p.iloc[16:24].reset_index(drop=True)
    assert (ab1["adoption.external"] == b["adoption.external"]).all()
    assert (ab1["adoption.word_of_mouth"] == a["adoption.word_of_mouth"]).all()


def test_an_invalid_point_is_reported_with_its_axis_values_before_anything_runs(tmp_path):
    s = scenario({"axes": {"network.kind": ["random", "ring"], "network.mean_degree": [4, 5]}})
    with pytest.raises(ScenarioError, match=r"1 of 4 sweep points are invalid: point 3 \(network.kind = 'ring', "
                                            r"network.mean_degree = 5\): network.mean_degree must be an even"):
        run_sweep(s, tmp_path / "never", 1, progress=False)
    assert not (tmp_path / "never").exists()


@pytest.mark.parametrize(
    "axes, message",
    [
        ({"adoption.word_of_mout": [0.1]}, "did you mean adoption.'word_of_mouth'"),
        ({"network.kind": {"from": 1, "to": 2, "steps": 2}}, "must be a list of values"),
        ({"adoption.external": {"from": 0.01, "to": 0.02}}, "steps is required"),
        ({"adoption.external": {"from": 0, "to": 0.1, "steps": 3, "log": True}}, "positive numbers when log"),
        ({"adoption.external": {"from": 0, "to": 0.1, "stpes": 3}}, "did you mean"),
        ({"sweep.replicates": [1, 2]}, "unknown field 'sweep'"),
    ],
)
def test_bad_axes_name_the_axis(axes, message):
    with pytest.raises(ScenarioError, match=message.replace("(", r"\(").replace(")", r"\)")):
        scenario({"axes": axes})


def test_whole_number_grid_that_would_repeat_values_is_refused():
    s = scenario({"axes": {"market.initial_customers": {"from": 1, "to": 3, "steps": 5}}})
    with pytest.raises(ScenarioError, match="repeat whole numbers"):
        design_points(s)


def test_sobol_needs_a_power_of_two():
    with pytest.raises(ScenarioError, match=r"sweep.samples must be a power of 2"):
        scenario({"design": "sobol", "samples": 100, "axes": {"adoption.external": {"from": 0, "to": 0.1}}})


def test_cli_sweep_and_report(tmp_path, capsys):
    cfg = tmp_path / "s.toml"
    cfg.write_text(
        'seed = 3\n[market]\norganisations = 200\ninitial_customers = 2\n[run]\nperiods = 15\n'
        '[sweep]\nreplicates = 2\n[sweep.axes]\n"adoption.word_of_mouth" = [0.2, 0.4]\n'
    )
    out = tmp_path / "out"
    assert main(["sweep", str(cfg), "--out", str(out), "--jobs", "1", "--quiet", "--curves"]) == 0
    text = capsys.readouterr().out
    assert "2 points x 2 replicates = 4 runs" in text and "0 failed" in text
    assert {"manifest.json", "points.parquet", "runs.parquet", "curves.parquet", "report.html"} <= {
        p.name for p in out.iterdir()}
    assert main(["report", str(out)]) == 0
    bad = tmp_path / "bad.toml"
    bad.write_text('[sweep.axes]\n"adoption.word_of_mouth" = { from = 0.1, to = 0.5 }\n')
    assert main(["sweep", str(bad), "--out", str(tmp_path / "o2")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "steps is required" in err
