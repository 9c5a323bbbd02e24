"""Sweep designs and parallel execution (womlab.studies.sweep).

Oracles: the seeding rule of the design (SeedSequence(seed, spawn_key=(point, replicate)),
numpy's documented SeedSequence spawning) — a sweep row must equal the run that
studies.run_one makes for that key, reduced by metrics.curve_metrics — so results cannot
depend on jobs, backend or completion order; numpy.geomspace for log axes; the Latin
hypercube's definition (McKay, Beckman & Conover 1979: one point per stratum of every
axis); Saltelli (2002) for the structure of the sobol design.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd
import pytest

from womlab import NetworkError, ScenarioError, StoreError, run_one
from womlab.cli import main
from womlab.scenario import Scenario
from womlab.store import ResultsStore
from womlab.studies.metrics import curve_metrics
from womlab.studies.runner import parallel_choice
from womlab.studies.sweep import design_points, point_scenarios, run_sweep

BASE = {
    "seed": 7,
    "market": {"organisations": 300, "initial_customers": 3},
    "network": {"kind": "random", "mean_degree": 6},
    "run": {"periods": 25},
}


def scenario(sweep: dict) -> Scenario:
    return Scenario.from_dict({**BASE, "sweep": sweep})


GRID = {
    "replicates": 4,
    "axes": {"network.kind": ["random", "ring"], "adoption.word_of_mouth": {"from": 0.1, "to": 0.5, "steps": 3}},
}


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
    dask = run_sweep(
        s, tmp_path / "dask", cluster="local:2", cluster_processes=False, chunk_size=5, progress=False, report=False
    )
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
    s = scenario(
        {
            "axes": {
                "adoption.word_of_mouth": {"from": 0.01, "to": 1.0, "steps": 3, "log": True},
                "network.kind": ["random", "ring"],
            }
        }
    )
    points = design_points(s)
    assert points["point"].tolist() == list(range(6))
    np.testing.assert_allclose(points["adoption.word_of_mouth"].unique(), np.geomspace(0.01, 1.0, 3))
    assert points["network.kind"].tolist() == ["random", "ring"] * 3


def test_latin_hypercube_puts_one_point_in_every_stratum_and_rounds_whole_number_fields():
    # McKay, Beckman & Conover (1979): each of n equal strata of every axis holds one point.
    n = 12
    s = scenario(
        {
            "design": "latin",
            "samples": n,
            "axes": {
                "adoption.external": {"from": 0.0, "to": 0.06},
                "market.initial_customers": {"from": 1, "to": 30},
                "network.kind": ["random", "ring", "small_world"],
            },
        }
    )
    points = design_points(s)
    strata = np.floor(points["adoption.external"].to_numpy() / 0.06 * n).astype(int)
    assert sorted(strata) == list(range(n))
    ic = points["market.initial_customers"]
    assert ic.dtype == np.int64 and ic.between(1, 30).all()
    # a list axis of k values takes value floor(u k): with n a multiple of k, n / k points each
    assert points["network.kind"].value_counts().to_dict() == {"random": 4, "ring": 4, "small_world": 4}


def test_sobol_design_has_saltelli_blocks():
    # Saltelli (2002): A, B, then AB_i = A with column i from B.
    s = scenario(
        {
            "design": "sobol",
            "samples": 8,
            "axes": {
                "adoption.external": {"from": 0.0, "to": 0.05},
                "adoption.word_of_mouth": {"from": 0.1, "to": 0.6},
            },
        }
    )
    p = design_points(s)
    assert len(p) == 8 * 4
    assert (
        p["block"].tolist() == ["A"] * 8 + ["B"] * 8 + ["AB:adoption.external"] * 8 + ["AB:adoption.word_of_mouth"] * 8
    )
    a, b = p.iloc[:8].reset_index(drop=True), p.iloc[8:16].reset_index(drop=True)
    ab1 = p.iloc[16:24].reset_index(drop=True)
    assert (ab1["adoption.external"] == b["adoption.external"]).all()
    assert (ab1["adoption.word_of_mouth"] == a["adoption.word_of_mouth"]).all()


def test_an_invalid_point_is_reported_with_its_axis_values_before_anything_runs(tmp_path):
    s = scenario({"axes": {"network.kind": ["random", "ring"], "network.mean_degree": [4, 5]}})
    with pytest.raises(
        ScenarioError,
        match=r"1 of 4 sweep points are invalid: point 3 \(network.kind = 'ring', "
        r"network.mean_degree = 5\): network.mean_degree must be an even",
    ):
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
        "seed = 3\n[market]\norganisations = 200\ninitial_customers = 2\n[run]\nperiods = 15\n"
        '[sweep]\nreplicates = 2\n[sweep.axes]\n"adoption.word_of_mouth" = [0.2, 0.4]\n'
    )
    out = tmp_path / "out"
    assert main(["sweep", str(cfg), "--out", str(out), "--jobs", "1", "--quiet", "--curves"]) == 0
    text = capsys.readouterr().out
    assert "2 points x 2 replicates = 4 runs" in text and "0 failed" in text
    assert {"manifest.json", "points.parquet", "runs.parquet", "curves.parquet", "report.html"} <= {
        p.name for p in out.iterdir()
    }
    assert main(["report", str(out)]) == 0
    bad = tmp_path / "bad.toml"
    bad.write_text('[sweep.axes]\n"adoption.word_of_mouth" = { from = 0.1, to = 0.5 }\n')
    assert main(["sweep", str(bad), "--out", str(tmp_path / "o2")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "steps is required" in err


# ----------------------------------------------------------------------------- sweeps of studies
# Oracles: the paired runs themselves, made independently with studies.run_paired on the same spawn
# keys (point, replicate); ROI = (ΣΔValue − ΣCost) / ΣCost (Schmitt, Skiera & Van den Bulte 2011,
# "Referral programs and customer value", the return the programme earns on its cost, here as a ratio
# of totals over replicates); lift = mean outcome of a strategy / mean outcome of random seeding on the
# same replicates (Hinz, Skiera, Barrot & Becker 2011, "Seeding strategies for viral marketing").

from womlab.results.report import sweep_summary  # noqa: E402
from womlab.studies.continuation import continue_paired  # noqa: E402
from womlab.studies.programme import programme_economics  # noqa: E402
from womlab.studies.runner import run_paired  # noqa: E402
from womlab.studies.seeding_study import run_outcomes  # noqa: E402

PROGRAMME = {
    "seed": 13,
    "market": {"organisations": 300, "initial_customers": 3},
    "network": {"kind": "random", "mean_degree": 6},
    "run": {"periods": 20},
    "referral": {
        "enrol": "all",
        "start": 1,
        "end": 10,
        "talk_multiplier": 1.5,
        "reward": 4.0,
        "value_per_period": 1.0,
        "discount_rate": 0.01,
    },
}


def programme_sweep(**sweep) -> Scenario:
    axes = {
        "referral.reward": [2.0, 8.0],
        "referral.talk_multiplier": {"follows": "referral.reward", "values": [1.2, 1.8]},
    }
    return Scenario.from_dict({**PROGRAMME, "sweep": {"study": "programme", "replicates": 3, "axes": axes, **sweep}})


def test_a_programme_sweep_stores_the_paired_economics_and_gives_roi_per_point(tmp_path):
    s = programme_sweep()
    one = run_sweep(s, tmp_path / "j1", 1, progress=False, report=False)
    two = run_sweep(s, tmp_path / "j2", 2, chunk_size=1, progress=False, report=False)
    assert (one.runs, two.runs, one.study) == (6, 6, "programme")
    runs = outcomes(tmp_path / "j1")
    pd.testing.assert_frame_equal(runs, outcomes(tmp_path / "j2"))  # bit for bit whatever the workers
    points = design_points(s)
    assert points["referral.talk_multiplier"].tolist() == [1.2, 1.8]  # the follower moves with its axis
    summary = sweep_summary(tmp_path / "j1").set_index(["point", "outcome"])
    for point, at in enumerate(point_scenarios(s)):
        keys = [(point, r) for r in range(3)]
        # the split is whole-life: each pair continued past the horizon (studies.continuation)
        cont = continue_paired({"baseline": at.replace("referral.enrol", "none"), "programme": at}, 3, keys=keys)
        paired = cont.at_horizon()
        rows = [
            programme_economics(b, p, at.referral, continued=(cb, cp))
            for b, p, cb, cp in zip(
                paired["baseline"], paired["programme"], cont.runs["baseline"], cont.runs["programme"]
            )
        ]
        mine = runs[runs["point"] == point].reset_index(drop=True)
        for name in ("incremental_customers", "incremental_value", "cost", "acceleration", "expansion", "roi"):
            np.testing.assert_array_equal(mine[name].to_numpy(dtype=float), [r[name] for r in rows])
        value, cost = sum(r["incremental_value"] for r in rows), sum(r["cost"] for r in rows)
        roi = summary.loc[(point, "roi")]
        assert roi["estimate"] == pytest.approx((value - cost) / cost, rel=1e-12)
        assert np.isnan(roi["low"]) and np.isnan(roi["high"])  # three replicates: no bootstrap interval
        acc = summary.loc[(point, "acceleration_share")]["estimate"]
        lifetime = sum(r["incremental_value_lifetime"] for r in rows)
        assert acc == pytest.approx(sum(r["acceleration"] for r in rows) / lifetime, rel=1e-12)
    # a larger reward with the invented response costs more per customer here
    assert summary.loc[(1, "cost")]["estimate"] > summary.loc[(0, "cost")]["estimate"]


def test_a_seeding_sweep_stores_each_strategy_and_gives_the_lift_against_random(tmp_path):
    s = Scenario.from_dict(
        {
            **BASE,
            "study": {
                "strategies": ["hubs", "fringe"],
                "outcome": "customer_periods",
                "discount_rate": 0.02,
                "bootstrap": 500,
            },
            "sweep": {
                "study": "seeding",
                "replicates": 5,  # 5: the fewest with an interval
                "axes": {"adoption.word_of_mouth": [0.2, 0.5]},
            },
        }
    )
    run_sweep(s, tmp_path / "d", 1, progress=False, report=True)
    runs = outcomes(tmp_path / "d")
    assert {"customers[random]", "customer_periods[hubs]", "t50[fringe]"} <= set(runs.columns)
    summary = sweep_summary(tmp_path / "d").set_index(["point", "outcome"])
    for point, at in enumerate(point_scenarios(s)):
        variants = {name: at.replace("seeding.strategy", name) for name in ("random", "hubs", "fringe")}
        out = run_paired(variants, 5, keys=[(point, r) for r in range(5)], reduce=lambda run: run_outcomes(run, 0.02))
        mine = runs[runs["point"] == point]
        for name in variants:
            np.testing.assert_array_equal(
                mine[f"customer_periods[{name}]"].to_numpy(dtype=float), [o["customer_periods"] for o in out[name]]
            )
        base = np.mean([o["customer_periods"] for o in out["random"]])
        hubs = np.mean([o["customer_periods"] for o in out["hubs"]])
        lift = summary.loc[(point, "lift_ratio[hubs]")]
        assert lift["estimate"] == pytest.approx(hubs / base, rel=1e-12) and lift["low"] <= lift["high"]
    assert "lift_ratio[hubs] 95% CI" in (tmp_path / "d" / "report.html").read_text()


def test_more_replicates_and_more_grid_values_run_only_what_is_new(tmp_path):
    small = scenario({"replicates": 2, "axes": {"adoption.word_of_mouth": [0.2, 0.4]}})
    first = run_sweep(small, tmp_path / "d", 1, progress=False, report=False)
    more = run_sweep(
        scenario({"replicates": 4, "axes": {"adoption.word_of_mouth": [0.2, 0.4]}}),
        tmp_path / "d",
        1,
        progress=False,
        report=False,
    )
    assert (first.ran, more.skipped, more.ran, more.added_replicates) == (4, 4, 4, 2)
    # the same as a sweep made with 4 replicates at once: the new replicates are the keys (i, 2), (i, 3)
    run_sweep(
        scenario({"replicates": 4, "axes": {"adoption.word_of_mouth": [0.2, 0.4]}}),
        tmp_path / "fresh",
        1,
        progress=False,
        report=False,
    )
    pd.testing.assert_frame_equal(outcomes(tmp_path / "d"), outcomes(tmp_path / "fresh"))
    wider = scenario({"replicates": 4, "axes": {"adoption.word_of_mouth": [0.1, 0.2, 0.4]}})
    grown = run_sweep(wider, tmp_path / "d", 1, progress=False, report=True)
    assert (grown.skipped, grown.ran, grown.added_points, grown.points) == (8, 4, 1, 3)
    store = ResultsStore(tmp_path / "d")
    assert store.points()["adoption.word_of_mouth"].tolist() == [0.2, 0.4, 0.1]  # a new point joins at the end
    row = store.runs().set_index(["point", "replicate"]).loc[(2, 3)]
    result = run_one(wider.replace("adoption.word_of_mouth", 0.1), key=(2, 3))
    assert row["customers"] == result.customers[-1]
    assert store.manifest()["replicates"] == 4 and len(store.manifest()["history"]) == 3
    # cutting replicates, dropping a grid value or changing anything else is refused, naming it
    with pytest.raises(StoreError, match="extended with more replicates, not cut"):
        run_sweep(
            scenario({"replicates": 3, "axes": {"adoption.word_of_mouth": [0.1, 0.2, 0.4]}}),
            tmp_path / "d",
            1,
            progress=False,
            report=False,
        )
    with pytest.raises(StoreError, match=r"1 of its points are not in this sweep's grid.*adoption.word_of_mouth = 0.4"):
        run_sweep(
            scenario({"replicates": 4, "axes": {"adoption.word_of_mouth": [0.1, 0.2]}}),
            tmp_path / "d",
            1,
            progress=False,
            report=False,
        )
    with pytest.raises(StoreError, match=r"sweep\.study: \"run\" there, \"seeding\" now"):
        run_sweep(wider.replace("sweep.study", "seeding"), tmp_path / "d", 1, progress=False, report=False)


def test_a_sampled_design_may_gain_replicates_but_not_samples(tmp_path):
    s = scenario(
        {"design": "latin", "samples": 3, "replicates": 1, "axes": {"adoption.word_of_mouth": {"from": 0.1, "to": 0.5}}}
    )
    run_sweep(s, tmp_path / "d", 1, progress=False, report=False)
    again = run_sweep(s.replace("sweep.replicates", 2), tmp_path / "d", 1, progress=False, report=False)
    assert (again.skipped, again.ran) == (3, 3)
    with pytest.raises(StoreError, match=r"sweep\.samples: 3 there, 4 now"):
        run_sweep(s.replace("sweep.samples", 4), tmp_path / "d", 1, progress=False, report=False)


def test_one_replicate_per_point_reports_estimates_without_intervals(tmp_path, capsys):
    s = scenario({"replicates": 1, "axes": {"adoption.word_of_mouth": [0.2, 0.4], "network.kind": ["random", "ring"]}})
    run_sweep(s, tmp_path / "d", 1, progress=False, report=True)  # wrote the report: no KeyError on ci_low
    summary = sweep_summary(tmp_path / "d")
    assert summary["low"].isna().all() and summary["estimate"].notna().any()
    assert main(["report", str(tmp_path / "d")]) == 0
    text = (tmp_path / "d" / "report.html").read_text()
    assert "no intervals" in text
    p = run_sweep(programme_sweep(replicates=1), tmp_path / "p", 1, progress=False, report=True)
    roi = sweep_summary(p.out).query("outcome == 'roi'")
    assert roi["estimate"].notna().all() and roi["low"].isna().all()


def test_a_given_network_runs_every_point_and_must_fit_the_market(tmp_path):
    import networkx as nx

    from womlab.networks import ReferralNetwork

    graph = nx.watts_strogatz_graph(300, 4, 0.1, seed=1)
    s = scenario({"replicates": 2, "axes": {"adoption.word_of_mouth": [0.2, 0.4]}})
    edges = pd.DataFrame(list(graph.edges()), columns=["source", "target"])
    run_sweep(s, tmp_path / "g", 1, network=graph, progress=False, report=False)
    run_sweep(s, tmp_path / "e", 1, network=edges, progress=False, report=False)
    pd.testing.assert_frame_equal(outcomes(tmp_path / "g"), outcomes(tmp_path / "e"))
    net = ReferralNetwork.from_networkx(graph)
    row = outcomes(tmp_path / "g").set_index(["point", "replicate"]).loc[(1, 1)]
    assert row["customers"] == run_one(point_scenarios(s)[1], key=(1, 1), network=net).customers[-1]
    with pytest.raises(NetworkError, match="the network has 250 organisations but market.organisations is 300"):
        run_sweep(s, tmp_path / "x", 1, network=nx.path_graph(250), progress=False)
    with pytest.raises(ScenarioError, match=r"the network is given \(network=\), so network.kind cannot vary"):
        run_sweep(
            scenario({"axes": {"network.kind": ["random", "ring"]}}), tmp_path / "x", 1, network=graph, progress=False
        )
    with pytest.raises(StoreError, match=r"network\.sha256"):  # another network into the same folder
        run_sweep(s, tmp_path / "g", 1, network=nx.watts_strogatz_graph(300, 4, 0.1, seed=2), progress=False)
    assert not (tmp_path / "x").exists()


@pytest.mark.parametrize(
    "axes, study, message",
    [
        (
            {"run.jobs": [1, 2]},
            "run",
            "run.jobs may not vary in a sweep: the number of worker processes changes no result",
        ),
        ({"run.replicates": [5, 10]}, "run", "run.replicates may not vary in a sweep"),
        ({"name": ["a", "b"]}, "run", "name may not vary in a sweep"),
        (
            {"seeding.strategy": ["hubs", "fringe"]},
            "seeding",
            "seeding.strategy may not vary in a sweep: the seeding study",
        ),
        (
            {"referral.talk_multiplier": {"follows": "referral.reward", "values": [1.5]}},
            "run",
            "follows must be another axis of this sweep",
        ),
    ],
)
def test_an_axis_that_may_not_vary_is_refused_in_one_line(axes, study, message):
    with pytest.raises(ScenarioError, match=message.replace("(", r"\(")) as info:
        scenario({"study": study, "axes": axes})
    assert "\n" not in str(info.value)


def test_a_follower_must_have_as_many_values_as_the_axis_it_follows():
    with pytest.raises(ScenarioError, match=r"'referral.talk_multiplier'.values must be 2 values"):
        scenario(
            {
                "axes": {
                    "referral.reward": [1.0, 2.0],
                    "referral.talk_multiplier": {"follows": "referral.reward", "values": [1.5]},
                }
            }
        )


def test_a_programme_point_without_a_programme_is_refused_before_anything_runs(tmp_path):
    s = programme_sweep().replace("sweep.axes", {"referral.enrol": ["all", "none"]})
    with pytest.raises(ScenarioError, match=r"1 of 2 sweep points are invalid: point 1 \(referral.enrol = 'none'\)"):
        run_sweep(s, tmp_path / "never", 1, progress=False)
    assert not (tmp_path / "never").exists()


def test_path_axis_values_resolve_against_the_scenario_file(tmp_path, monkeypatch):
    folder = tmp_path / "study"
    (folder / "ties").mkdir(parents=True)
    for name, ties in (("a.csv", [(0, 1), (1, 2), (2, 3)]), ("b.csv", [(0, 2), (1, 3), (0, 3)])):
        (folder / "ties" / name).write_text("source,target\n" + "".join(f"{u},{v}\n" for u, v in ties))
    cfg = folder / "s.toml"
    cfg.write_text(
        '[market]\ninitial_customers = 1\n[network]\nkind = "edgelist"\npath = "ties/a.csv"\n'
        '[run]\nperiods = 3\n[sweep]\nreplicates = 1\n[sweep.axes]\n"network.path" = ["ties/a.csv", "ties/b.csv"]\n'
    )
    monkeypatch.chdir(tmp_path)  # not the scenario's folder
    from womlab.scenario import load_scenario

    s = load_scenario(cfg)
    assert s.sweep.axis("network.path").values == (str(folder / "ties" / "a.csv"), str(folder / "ties" / "b.csv"))
    summary = run_sweep(s, tmp_path / "out", 1, progress=False, report=False)
    assert summary.failures == 0
    inputs = ResultsStore(tmp_path / "out").manifest()["inputs"]
    assert set(inputs) == {str(folder / "ties" / "a.csv"), str(folder / "ties" / "b.csv")}


# ----------------------------------------------------------------------------- the cluster is the user's
# Oracle: Dask's own client. A client without this sweep's credentials (none, or a certificate from
# another authority) must fail the TLS handshake; the HTTP servers Dask starts must serve no page.


def test_a_local_cluster_speaks_tls_to_this_process_only_and_serves_no_pages(monkeypatch):
    import urllib.request

    from distributed import Client
    from distributed.security import Security

    from womlab.studies.sweep import _connect

    client, local, backend, workers = _connect(None, "local:1", False, None, 10.0)
    try:
        address = local.scheduler_address
        assert address.startswith("tls://127.0.0.1:") and "TLS" in backend and workers == 1
        assert client.submit(sum, [1, 2]).result() == 3
        for security in (None, Security.temporary()):  # no credentials; credentials of another authority
            with pytest.raises(Exception):  # noqa: B017 - Dask raises OSError or TypeError here, by version
                Client(address, security=security, timeout=3)
        scheduler = local.scheduler
        port = scheduler.http_server.port
        for path in ("/", "/status", "/info/main/workers.html", "/health", "/metrics", "/json/counts.json"):
            with pytest.raises(urllib.error.HTTPError) as info:
                urllib.request.urlopen(f"http://127.0.0.1:{port}{path}", timeout=3)
            assert info.value.code == 404
    finally:
        client.close()
        local.close()


@pytest.mark.parametrize("address", ["tcp://127.0.0.1:9", "no-such-scheme://x", "tcp://"])
def test_an_unreachable_or_malformed_scheduler_is_one_line_and_creates_no_folder(tmp_path, capsys, address):
    cfg = tmp_path / "s.toml"
    cfg.write_text(
        '[market]\norganisations = 100\n[sweep]\nreplicates = 1\n[sweep.axes]\n"adoption.external" = [0.01]\n'
    )
    start = time.monotonic()
    code = main(["sweep", str(cfg), "--out", str(tmp_path / "never"), "--scheduler", address, "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1
    assert err.startswith(f"womlab: error: cannot reach the scheduler at {address} within 10 s")
    assert time.monotonic() - start < 40 and not (tmp_path / "never").exists()


def test_morris_screening_works_on_a_study_statistic(tmp_path):
    # Morris (1991): with one input, every elementary effect is the change of the point estimate per unit
    # of the axis's range; μ* of ROI over the reward is the mean |ΔROI| / Δ of the trajectories' steps.
    from womlab.results.report import sensitivity_table
    from womlab.studies.sweep import unit_coordinates

    s = Scenario.from_dict(
        {
            **PROGRAMME,
            "sweep": {
                "study": "programme",
                "design": "morris",
                "samples": 2,
                "replicates": 2,
                "axes": {"referral.reward": {"from": 1.0, "to": 9.0}},
            },
        }
    )
    run_sweep(s, tmp_path / "m", 1, progress=False, report=True)
    table = sensitivity_table(tmp_path / "m").set_index("outcome")
    summary = sweep_summary(tmp_path / "m")
    roi = summary[summary["outcome"] == "roi"].sort_values("point")["estimate"].to_numpy()
    u = unit_coordinates(s, ResultsStore(tmp_path / "m").points())[:, 0]
    effects = [abs(roi[j + 1] - roi[j]) / abs(u[j + 1] - u[j]) for j in (0, 2)]
    assert table.loc["roi", "mu_star"] == pytest.approx(np.mean(effects), rel=1e-9)
    assert "Morris screening" in (tmp_path / "m" / "report.html").read_text()


def test_a_folder_written_before_studies_is_still_reported(tmp_path):
    import json

    s = scenario({"replicates": 2, "axes": {"adoption.word_of_mouth": [0.2, 0.4]}})
    run_sweep(s, tmp_path / "old", 1, progress=False, report=False)
    manifest_path = tmp_path / "old" / "manifest.json"
    data = json.loads(manifest_path.read_text())
    for key in ("study", "columns", "inputs", "history"):
        data.pop(key)
    data["format"] = data["identity"]["format"] = 1
    data["scenario"]["sweep"].pop("study")
    manifest_path.write_text(json.dumps(data))
    assert main(["report", str(tmp_path / "old")]) == 0
    assert set(sweep_summary(tmp_path / "old")["outcome"]) >= {"final_share", "t50"}
    with pytest.raises(StoreError, match="store format 1, this womlab writes format 3"):
        run_sweep(s, tmp_path / "old", 1, progress=False, report=False)
