"""Fast checks of the Mesa model (womlab.dynamics.mesa_model), at small N.

Where the expected value comes from: Mesa's own DataCollector and batch runner (the
reference library) against womlab's RunResult; networkx's graph (``has_edge``,
``graphs_equal``) for who may refer whom and for the caller's graph being left alone;
the rest is common practice for a seeded simulation (same seed, same run).
"""

from __future__ import annotations

import copy
import gc
import subprocess
import sys

import mesa
import networkx as nx
import numpy as np
import pytest

from womlab import NetworkError, Scenario, ScenarioError, build_network, run_one
from womlab.dynamics.mesa_model import FLAT_PARAMETERS, MESA_VERSION, Organisation, ReferralModel, run_mesa

FLAT = {
    "organisations": 200,
    "initial_customers": 4,
    "kind": "random",
    "mean_degree": 6,
    "periods": 12,
    "word_of_mouth": 0.4,
    "satisfied_share": 0.7,
}


def _run(**kwargs) -> ReferralModel:
    model = ReferralModel(**kwargs)
    model.run_model()
    return model


def test_datacollector_counts_equal_run_result_counts() -> None:
    model = _run(**FLAT)
    table = model.datacollector.get_model_vars_dataframe()
    result = model.result()
    assert len(table) == FLAT["periods"] + 1  # row 0 is the seeded state
    np.testing.assert_array_equal(table["period"], np.arange(FLAT["periods"] + 1))
    np.testing.assert_array_equal(table["customers"], result.customers)
    np.testing.assert_array_equal(table["new_customers"], result.new_customers)
    np.testing.assert_array_equal(table["satisfied_customers"], result.satisfied_customers)
    assert 0 < result.satisfied_customers[-1] < result.customers[-1]  # satisfied_share 0.7 shows


def test_datacollector_with_half_period_steps_sums_to_the_periods() -> None:
    model = _run(**FLAT, time_step=0.5)
    table = model.datacollector.get_model_vars_dataframe()
    result = model.result()
    assert len(table) == 2 * FLAT["periods"] + 1
    np.testing.assert_allclose(table["time"], np.arange(len(table)) * 0.5)
    ends = table[table["step"] % 2 == 0]  # the last step of each period
    np.testing.assert_array_equal(ends["customers"], result.customers)
    per_period = table.groupby("period")["new_customers"].sum().to_numpy()
    np.testing.assert_array_equal(per_period, result.new_customers)


def test_mesa_batch_run_with_flat_keyword_parameters() -> None:
    rows = mesa.batch_run(
        ReferralModel,
        parameters={**FLAT, "word_of_mouth": [0.2, 0.5], "replicate": range(2)},
        number_processes=1,
        display_progress=False,
    )
    assert len(rows) == 4
    for row in rows:
        again = _run(**{**FLAT, "word_of_mouth": row["word_of_mouth"], "replicate": row["replicate"]})
        # the batch runner reports the state at the horizon, not one step before it
        assert row["Step"] == FLAT["periods"]
        assert row["period"] == FLAT["periods"]
        assert row["customers"] == again.result().customers[-1]
    finals = {(r["word_of_mouth"], r["replicate"]): r["customers"] for r in rows}
    assert len(set(finals.values())) > 1  # the replicates and the parameter change are real


def test_batch_run_every_step_gives_every_row() -> None:
    rows = mesa.batch_run(ReferralModel, parameters=FLAT, data_collection_period=1, display_progress=False)
    assert [r["Step"] for r in rows] == list(range(FLAT["periods"] + 1))
    model = _run(**FLAT)
    assert [r["customers"] for r in rows] == model.result().customers.tolist()


def test_flat_parameters_map_onto_the_scenario() -> None:
    model = ReferralModel(**FLAT, seed=11, rule="count", talkers_per_customer={"distribution": "poisson", "mean": 2})
    nested = Scenario.from_dict(
        {
            "seed": 11,
            "market": {"organisations": 200, "initial_customers": 4},
            "network": {"kind": "random", "mean_degree": 6},
            "adoption": {
                "word_of_mouth": 0.4,
                "satisfied_share": 0.7,
                "rule": "count",
                "talkers_per_customer": {"distribution": "poisson", "mean": 2},
            },
            "run": {"periods": 12},
        }
    )
    assert model.womlab_scenario == nested
    assert FLAT_PARAMETERS["word_of_mouth"] == FLAT_PARAMETERS["adoption_word_of_mouth"] == "adoption.word_of_mouth"
    assert "replicates" not in FLAT_PARAMETERS and "engine" not in FLAT_PARAMETERS
    assert FLAT_PARAMETERS["referral_budget"] == "referral.budget" and "budget" not in FLAT_PARAMETERS
    nested_threshold = ReferralModel(**FLAT, rule="threshold", threshold={"distribution": "fixed", "mean": 0.3})
    assert nested_threshold.womlab_scenario.adoption.threshold.mean == 0.3
    based = ReferralModel(nested, periods=5, external=0.02)  # with a scenario: Scenario.replace
    assert based.womlab_scenario == nested.replace({"run.periods": 5, "adoption.external": 0.02})


def test_bad_flat_parameters_name_the_field() -> None:
    with pytest.raises(ScenarioError, match="did you mean 'word_of_mouth'"):
        ReferralModel(**FLAT, word_of_mouht=0.3)
    with pytest.raises(ScenarioError, match=r"adoption\.satisfied_share must be in \[0, 1\], got 1\.4"):
        ReferralModel(**{**FLAT, "satisfied_share": 1.4})
    with pytest.raises(ScenarioError, match="give one of seeding_strategy, referral_strategy"):
        ReferralModel(**FLAT, strategy="hubs")
    with pytest.raises(ScenarioError, match="initial customers must be distinct"):
        ReferralModel(**FLAT, initial=[0, 0, 5])


def test_seeded_model_is_deterministic_and_matches_run_one() -> None:
    a, b = _run(**FLAT, replicate=3).result(), _run(**FLAT, replicate=3).result()
    for field in ("adoption_period", "referrer", "satisfied"):
        np.testing.assert_array_equal(getattr(a, field), getattr(b, field))
    # replicate r of the model is replicate r of a womlab batch on the mesa engine
    scenario = ReferralModel(**FLAT).womlab_scenario.replace("run.engine", "mesa")
    via_batch = run_one(scenario, (3,))
    np.testing.assert_array_equal(via_batch.adoption_period, a.adoption_period)
    np.testing.assert_array_equal(via_batch.referrer, a.referrer)
    other = _run(**FLAT, replicate=4).result()
    assert not np.array_equal(other.adoption_period, a.adoption_period)


def test_callers_graph_and_network_are_not_changed() -> None:
    # Zachary (1977) karate club, as shipped by networkx, with its node and edge attributes
    graph = nx.karate_club_graph()
    before = copy.deepcopy(graph)
    scenario = Scenario.from_dict(
        {
            "market": {"organisations": 34, "initial_customers": 2},
            "network": {"kind": "random", "mean_degree": 4},
            "run": {"periods": 8},
        }
    )
    model = ReferralModel(scenario, network=graph, rng=1)
    model.run_model()
    assert model.space.G is not graph
    assert nx.utils.graphs_equal(graph, before)
    assert dict(graph.nodes(data=True)) == dict(before.nodes(data=True))
    assert list(graph.edges(data=True)) == list(before.edges(data=True))
    assert model.result().customers[-1] > 2

    larger = scenario.replace("market.organisations", 200)
    network = build_network(larger, np.random.default_rng(5))
    indptr, indices, region = network.indptr.copy(), network.indices.copy(), network.region.copy()
    run_mesa(larger, network, np.array([1, 2, 3]), np.random.default_rng(6))
    np.testing.assert_array_equal(network.indptr, indptr)
    np.testing.assert_array_equal(network.indices, indices)
    np.testing.assert_array_equal(network.region, region)


@pytest.mark.parametrize("time_step", [1.0, 0.5])
def test_referrers_are_earlier_satisfied_neighbours(time_step: float) -> None:
    rng = np.random.default_rng(42)
    graph = nx.watts_strogatz_graph(300, 6, 0.1, seed=rng)
    scenario = Scenario.from_dict(
        {
            "market": {"organisations": 300, "initial_customers": 5},
            "adoption": {
                "word_of_mouth": 0.5,
                "satisfied_share": 0.6,
                "talkers_per_customer": {"distribution": "poisson", "mean": 2},
            },
            "run": {"periods": 15, "time_step": time_step},
        }
    )
    result = ReferralModel(scenario, network=graph, rng=7)
    result.run_model()
    result = result.result()
    adopted = np.flatnonzero(result.referrer >= 0)
    assert adopted.size > 50  # word of mouth did happen
    for i in adopted.tolist():
        r = int(result.referrer[i])
        assert graph.has_edge(i, r)
        assert result.satisfied[r]
        if time_step == 1.0:
            assert result.adoption_period[r] < result.adoption_period[i]
        else:  # an earlier step, possibly in the same period
            assert 0 <= result.adoption_period[r] <= result.adoption_period[i]
    never = result.adoption_period < 0
    assert (result.referrer[never] == -1).all()
    assert (result.referrer[result.initial] == -1).all()


def test_complete_network_is_not_materialised_and_refers_from_all() -> None:
    model = _run(organisations=300, initial_customers=3, kind="complete", periods=10, satisfied_share=0.5)
    assert model.space.G.number_of_edges() == 0
    assert all(not cell.connections for cell in model.space.all_cells)
    result = model.result()
    adopted = np.flatnonzero(result.referrer >= 0)
    assert adopted.size > 20
    r = result.referrer[adopted]
    assert (r != adopted).all()
    assert result.satisfied[r].all()
    assert (result.adoption_period[r] < result.adoption_period[adopted]).all()


def test_importing_the_model_leaves_the_multiprocessing_start_method_alone() -> None:
    code = (
        "import multiprocessing as mp; before = mp.get_start_method(allow_none=True); "
        "import womlab.dynamics.mesa_model; after = mp.get_start_method(allow_none=True); "
        "assert after == before, (before, after); print(before)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=None)
    assert out.returncode == 0, out.stderr


def _with_programme(**referral) -> Scenario:
    base = ReferralModel(**FLAT).womlab_scenario
    return base.replace({f"referral.{k}": v for k, v in referral.items()})


def test_programme_without_boost_or_payments_reproduces_the_baseline() -> None:
    # womlab.dynamics.programme: enrolment has its own stream, so a programme that changes nothing
    # sees the baseline's dynamics draws and gives the baseline run, organisation by organisation
    base = _run(scenario=ReferralModel(**FLAT).womlab_scenario).result()
    same = _run(scenario=_with_programme(enrol="all")).result()
    np.testing.assert_array_equal(same.adoption_period, base.adoption_period)
    np.testing.assert_array_equal(same.referrer, base.referrer)
    assert same.extra["programme_cost"].sum() == 0
    # everyone enrolled, the window the whole horizon: every word-of-mouth adoption is a successful referral
    assert same.extra["programme_paid_referrals"].sum() == (same.referrer >= 0).sum() > 0


def test_programme_pays_enrolled_referrers_in_its_window_within_budget() -> None:
    scenario = _with_programme(
        enrol="share", enrol_share=0.5, start=3, end=8, talk_multiplier=3.0, reward=2.0, budget=40.0
    )
    result = _run(scenario=scenario).result()
    extra = result.extra
    rewarded = np.flatnonzero(extra["rewarded"])
    assert rewarded.size == extra["programme_paid_referrals"].sum() > 0
    assert extra["enrolled"][result.referrer[rewarded]].all()
    assert ((result.adoption_period[rewarded] >= 3) & (result.adoption_period[rewarded] <= 8)).all()
    assert extra["programme_cost"].sum() == 2.0 * rewarded.size <= 40.0
    boosted = _run(scenario=scenario.replace("referral.reward", 0.0)).result()
    plain = _run(scenario=ReferralModel(**FLAT).womlab_scenario).result()
    assert boosted.customers[8] > plain.customers[8]  # tripled word of mouth in periods 3-8 shows


def test_a_batch_run_does_not_keep_its_models_alive() -> None:
    # Mesa 3.3 holds models in class-level structures (mesa.Agent._ids, keyed by the model;
    # the cache behind Cell.get_neighborhood); a batch of replicates must not keep every
    # finished model, and all its agents, in memory
    def alive() -> int:
        gc.collect()
        return sum(isinstance(o, ReferralModel) for o in gc.get_objects())

    before = alive()
    scenario = ReferralModel(**FLAT).womlab_scenario.replace("run.engine", "mesa")
    for r in range(3):
        run_one(scenario, (r,))
    assert alive() <= before + 1  # at most the model built by hand above


def test_cascade_referrers_became_customers_in_the_period_before() -> None:
    # Kempe, Kleinberg & Tardos (2003), independent cascade: a newly satisfied customer has
    # its one chance per tie in the period after it became satisfied, and none later
    model = _run(**{**FLAT, "rule": "cascade", "word_of_mouth": 0.4, "periods": 15})
    result = model.result()
    referred = np.flatnonzero(result.referrer >= 0)
    assert referred.size > 20
    gap = result.adoption_period[referred] - result.adoption_period[result.referrer[referred]]
    assert (gap == 1).all()


def test_womlab_imports_mesa_only_when_the_model_is_asked_for():
    # Style rule of the project: Mesa sits behind one module and is loaded lazily (PEP 562).
    import subprocess
    import sys

    code = "import sys, womlab; assert 'mesa' not in sys.modules; womlab.ReferralModel; assert 'mesa' in sys.modules"
    assert subprocess.run([sys.executable, "-c", code]).returncode == 0


class Cautious(Organisation):
    """A user's own organisation: a budget attribute, and it never adopts in an odd step."""

    def __init__(self, model, cell, organisation):  # noqa: ANN001
        super().__init__(model, cell, organisation)
        self.budget = 100 + organisation

    def decide(self) -> None:
        super().decide()
        if self.model.step_count % 2 == 1:
            self.adopting = False


def test_own_agent_class_and_agent_reporters_reach_mesa_s_data_collector() -> None:
    # Mesa's DataCollector (the reference library) collects the user's agent reporters
    model = _run(**FLAT, agent_class=Cautious, agent_reporters={"budget": "budget", "customer": "customer"})
    assert all(isinstance(a, Cautious) for a in model.agents)
    result = model.result()
    assert (result.new_customers[1::2] == 0).all()  # the subclass's own decision is the one used
    assert result.customers[-1] > FLAT["initial_customers"]
    agents = model.datacollector.get_agent_vars_dataframe()
    assert len(agents) == FLAT["organisations"] * (FLAT["periods"] + 1)
    last = agents.xs(FLAT["periods"], level="Step")
    assert int(last["customer"].sum()) == result.customers[-1]
    assert sorted(last["budget"]) == list(range(100, 100 + FLAT["organisations"]))
    with pytest.raises(ScenarioError, match="agent_class must be womlab's Organisation or a subclass"):
        ReferralModel(**FLAT, agent_class=mesa.Agent)


def test_keyword_parameters_suit_mesa_s_browser_view() -> None:
    # Mesa's browser view checks the model's signature: every parameter without a default must be
    # given, and a catch-all is accepted only under the name `kwargs` (mesa.visualization.solara_viz)
    import inspect

    params = inspect.signature(ReferralModel.__init__).parameters
    required = [
        n
        for n, p in params.items()
        if p.default is inspect.Parameter.empty and p.kind not in (p.VAR_KEYWORD, p.VAR_POSITIONAL) and n != "self"
    ]
    assert required == []
    assert [n for n, p in params.items() if p.kind == p.VAR_KEYWORD] == ["kwargs"]
    assert not any(p.kind == p.VAR_POSITIONAL for p in params.values())


def test_the_model_keeps_womlab_s_scenario_apart_from_mesa_s() -> None:
    model = ReferralModel(**FLAT)
    assert isinstance(model.womlab_scenario, Scenario)
    assert model.womlab_scenario.market.organisations == FLAT["organisations"]
    if MESA_VERSION >= (3, 5):  # Mesa's own experiment parameters, which its view hands back on reset
        from mesa.experimental.scenarios import Scenario as MesaScenario

        assert isinstance(model.scenario, MesaScenario)
        again = ReferralModel(scenario=MesaScenario(periods=5), **FLAT_WITHOUT_PERIODS)
        assert again.womlab_scenario.run.periods == 5
        # Mesa 3.5's Network space takes layout=None: no spring layout, so a cell's physical
        # position falls back to its coordinate (mesa.discrete_space.Cell.position)
        assert all(float(cell.position) == cell.coordinate for cell in model.space.all_cells)


FLAT_WITHOUT_PERIODS = {k: v for k, v in FLAT.items() if k != "periods"}


def test_a_network_of_the_wrong_size_is_refused_in_one_line() -> None:
    # Zachary (1977) karate club, 34 organisations, against a market of 200
    with pytest.raises(NetworkError, match=r"^the network has 34 organisations but market.organisations is 200;"):
        ReferralModel(**FLAT, network=nx.karate_club_graph())


def test_an_edge_table_is_a_network_and_adoption_times_end_the_step() -> None:
    # Padgett & Ansell (1993) Florentine families, as networkx ships them, handed in as an edge table
    graph = nx.florentine_families_graph()
    table = nx.to_pandas_edgelist(graph)
    model = _run(organisations=15, initial_customers=2, periods=6, time_step=0.5, word_of_mouth=0.8, network=table)
    assert model.network.ties == graph.number_of_edges() == 20
    assert sorted(model.network.labels) == sorted(graph.nodes)
    result = model.result()
    seen = result.adoption_period >= 0
    # period k covers the times (k - 1, k]; a Mesa step ends at a multiple of the time step
    np.testing.assert_array_equal(np.ceil(result.adoption_time[seen]), result.adoption_period[seen])
    np.testing.assert_allclose(result.adoption_time[seen] * 2, np.round(result.adoption_time[seen] * 2))
    assert np.isnan(result.adoption_time[~seen]).all()
