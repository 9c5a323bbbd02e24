"""Your own network in any study, and per-organisation results out.

Real networks, as networkx ships them: Zachary (1977), "An information flow model for
conflict and fission in small groups" (the karate club, 34 members, 78 ties, the ``club``
each joined); Padgett & Ansell (1993), "Robust action and the rise of the Medici"
(Florentine families, 15 families linked by marriage, 20 ties). Where a value is expected
it comes from the graph itself (networkx's ``has_edge``, ``is_forest``, degrees), from
pyarrow reading the Parquet file back, or from the GEXF 1.2 format (GEXF Working Group,
"GEXF 1.2draft Primer", 2009: a graph whose nodes carry a ``start`` is written in
``mode="dynamic"``); the rest is common practice for seeded simulations (the same
network and streams give the same run: common random numbers).
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import networkx as nx
import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest

from womlab import (
    NetworkError,
    Scenario,
    StoreError,
    build_network,
    compare,
    compare_strategies,
    evaluate_programme,
    run_replicates,
    save_batch,
    streams,
    to_networkx,
)
from womlab.aggregate import degree_mean_field_curve
from womlab.networks.given import as_network, mapped_with

KARATE = nx.karate_club_graph()
FLORENTINE = nx.florentine_families_graph()


def _scenario(n: int, **adoption) -> Scenario:
    return Scenario.from_dict(
        {
            "name": "own-network test (invented market)",
            "seed": 11,
            "market": {"organisations": n, "initial_customers": 2},
            "network": {"kind": "random", "mean_degree": 4},
            "adoption": {"word_of_mouth": 0.6, "satisfied_share": 0.8, **adoption},
            "run": {"periods": 12},
        }
    )


def test_every_referral_runs_along_a_tie_of_the_graph_given() -> None:
    batch = run_replicates(_scenario(34), 6, network=KARATE)
    table = batch.organisations()
    assert len(table) == 6 * 34
    referred = table[table["referrer"].notna()]
    assert len(referred) > 20  # word of mouth did happen
    assert all(KARATE.has_edge(int(a), int(b)) for a, b in zip(referred["id"], referred["referrer"]))
    # the graph's own node attribute travels with each organisation
    assert set(table["club"]) == {"Mr. Hi", "Officer"}
    assert (table.groupby("id")["club"].first() == pd.Series(nx.get_node_attributes(KARATE, "club"))).all()


def test_a_network_given_is_the_network_built_gives_the_same_runs() -> None:
    # common random numbers: replicate r's seeding and dynamics streams do not depend on where its network came from
    s = _scenario(200)
    built = run_replicates(s, 3)
    net = build_network(s, np.random.default_rng(streams(s.seed, (1,)).network))
    given = run_replicates(s, 3, network=net)
    np.testing.assert_array_equal(given.runs[1].adoption_period, built.runs[1].adoption_period)
    np.testing.assert_array_equal(given.runs[1].referrer, built.runs[1].referrer)
    assert not np.array_equal(given.runs[0].adoption_period, built.runs[0].adoption_period)


def test_an_edge_table_keeps_the_ids_it_names() -> None:
    table = nx.to_pandas_edgelist(FLORENTINE)
    batch = run_replicates(_scenario(15), 2, network=table)
    orgs = batch.organisations([0])
    assert sorted(orgs["id"]) == sorted(FLORENTINE.nodes)
    referred = orgs[orgs["referrer"].notna()]
    assert all(FLORENTINE.has_edge(a, b) for a, b in zip(referred["id"], referred["referrer"]))
    assert orgs.loc[orgs["initial"], "adoption_period"].eq(0).all()
    assert orgs.loc[~orgs["customer"], "adoption_period"].isna().all()


@pytest.mark.parametrize("study", ["run_replicates", "compare", "compare_strategies", "evaluate_programme"])
def test_a_network_of_another_size_is_refused_in_one_line(study: str) -> None:
    s = _scenario(200).replace({"referral.enrol": "all", "referral.reward": 1.0, "referral.lifetime_value": 10.0})
    call = {
        "run_replicates": lambda: run_replicates(s, 2, network=KARATE),
        "compare": lambda: compare(s, 2, network=KARATE),
        "compare_strategies": lambda: compare_strategies(s, ["hubs"], 2, network=KARATE),
        "evaluate_programme": lambda: evaluate_programme(s, 2, network=KARATE),
    }[study]
    with pytest.raises(NetworkError) as caught:
        call()
    message = str(caught.value)
    assert "\n" not in message
    assert message == (
        "the network has 34 organisations but market.organisations is 200; they must agree "
        "(set market.organisations = 34, or give a network of 200)"
    )


def test_anything_else_is_refused_naming_what_is_allowed() -> None:
    with pytest.raises(NetworkError, match="a womlab ReferralNetwork, a networkx graph or a pandas edge table"):
        run_replicates(_scenario(34), 1, network=[(0, 1)])
    with pytest.raises(NetworkError, match="needs columns source and target; missing target"):
        run_replicates(_scenario(34), 1, network=pd.DataFrame({"source": [0, 1], "to": [1, 2]}))


def test_compare_maps_the_aggregate_models_from_the_network_given() -> None:
    s = _scenario(34, rule="count", word_of_mouth=0.05)
    c = compare(s, 3, bootstrap=20, fit_bootstrap=5, network=KARATE)
    net = as_network(KARATE, 34)
    assert c.settings["degree_mean_field_network"] == "the network given"
    # the degree mean-field model on the karate club's own degrees (not on a random network's)
    np.testing.assert_allclose(c.curves["degree_mean_field"], degree_mean_field_curve(mapped_with(s, net), net))
    # the count rule's mapped Q uses the measured mean degree 2 * 78 / 34 (not the scenario's 4)
    assert mapped_with(s, net).network.mean_degree == pytest.approx(2 * 78 / 34)
    assert "club" in c.batch.organisations().columns


def test_seeding_study_and_programme_run_on_the_network_given() -> None:
    s = _scenario(34)
    study = compare_strategies(s, ["hubs"], 4, network=KARATE, snapshot=True)
    network, _ = study.snapshot
    assert network.ties == 78
    # hubs seeds the two best-connected members, Zachary's instructor (0) and administrator (33)
    hubs = study.snapshot[1]["hubs"]
    assert set(np.flatnonzero(hubs.adoption_period == 0).tolist()) == {0, 33}
    programme = evaluate_programme(
        s.replace({"referral.enrol": "all", "referral.talk_multiplier": 2.0, "referral.lifetime_value": 10.0}),
        3,
        network=KARATE,
    )
    assert all(np.array_equal(d, np.array([KARATE.degree(i) for i in range(34)])) for d in programme.degrees)


def test_referral_forest_as_networkx_and_a_replayable_gexf(tmp_path) -> None:
    batch = run_replicates(_scenario(15, word_of_mouth=0.9), 1, network=FLORENTINE)
    net = as_network(FLORENTINE, 15)
    result = batch.runs[0]
    forest = to_networkx(result, net)
    assert set(forest.nodes) == set(FLORENTINE.nodes)
    assert nx.is_forest(forest)
    assert forest.number_of_edges() == int((result.referrer >= 0).sum()) > 0
    for a, b in forest.edges:
        assert FLORENTINE.has_edge(a, b)
        assert forest.nodes[a]["adoption_period"] <= forest.nodes[b]["adoption_period"]
    initial = {n for n, d in forest.nodes(data=True) if d["initial"]}
    assert all(forest.in_degree(n) == 0 for n in initial)
    path = tmp_path / "spread.gexf"
    nx.write_gexf(forest, path)
    graph_tag = next(e for e in ET.parse(path).getroot().iter() if e.tag.endswith("graph"))
    assert graph_tag.get("mode") == "dynamic"
    back = nx.read_gexf(path)
    times = {n: float(d["start"]) for n, d in back.nodes(data=True) if "start" in d}
    frame = result.to_frame(net).set_index("id")
    expected = frame.loc[frame["customer"], "adoption_time"]
    assert times == pytest.approx(expected.to_dict())


def test_organisations_file_in_a_results_folder(tmp_path) -> None:
    batch = run_replicates(_scenario(34), 3, network=KARATE)
    save_batch(batch, tmp_path / "p", figure=False, organisations="parquet")
    table = pq.read_table(tmp_path / "p" / "organisations.parquet").to_pandas()
    assert len(table) == 3 * 34
    assert list(table.columns[:4]) == ["replicate", "id", "region", "club"]
    pd.testing.assert_frame_equal(table, batch.organisations(), check_dtype=False)
    save_batch(batch, tmp_path / "c", figure=False, organisations="csv")
    text = (tmp_path / "c" / "organisations.csv").read_text().splitlines()
    assert len(text) == 1 + 3 * 34 and text[0].startswith("replicate,id,region,club,customer")
    with pytest.raises(StoreError, match=re.escape("organisations must be one of parquet, csv, got 'xlsx'")):
        save_batch(batch, tmp_path / "x", organisations="xlsx")
    assert not (tmp_path / "x").exists()  # refused before anything was written
