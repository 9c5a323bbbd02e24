"""Your own network: networkx graphs, pandas tables, GraphML and GEXF files, ids and text regions kept.

Real inputs shipped with networkx: Zachary's karate club (Zachary 1977, "An information flow
model for conflict and fission in small groups") and the Florentine families (Padgett &
Ansell 1993, "Robust action and the rise of the Medici").
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pandas as pd
import pytest

from womlab import NetworkError, Scenario, ScenarioError, build_network
from womlab.cli import main
from womlab.networks import ReferralNetwork, from_edge_table, read_graph_file


def _karate_with_clubs() -> nx.Graph:
    g = nx.Graph(nx.karate_club_graph().edges())  # unweighted ties
    for v, d in nx.karate_club_graph().nodes(data=True):
        g.nodes[v]["region"] = d["club"]  # text: 'Mr. Hi' or 'Officer'
    return g


def test_from_networkx_keeps_text_ids_and_text_regions():
    # Padgett & Ansell (1993): 15 families, 20 marriage ties; the Medici have 6
    g = nx.florentine_families_graph()
    nx.set_node_attributes(g, {v: ("north" if v < "M" else "south") for v in g}, "region")
    net = ReferralNetwork.from_networkx(g)
    assert net.n == 15 and net.ties == 20
    assert net.labels.tolist() == list(g.nodes)  # the graph's own order, ids as given
    assert net.degree()[net.labels.tolist().index("Medici")] == 6
    assert net.region_names.tolist() == ["north", "south"]
    assert net.region_values().tolist() == [g.nodes[v]["region"] for v in g]
    back = net.to_networkx()  # and out again: ids as labels, regions as given
    assert nx.is_isomorphic(back, g)
    assert {d["label"]: d["region"] for _, d in back.nodes(data=True)} == dict(g.nodes(data="region"))


def test_from_networkx_on_integer_nodes_keeps_positions_and_codes_regions():
    g = _karate_with_clubs()
    net = ReferralNetwork.from_networkx(g)
    assert net.labels is None and net.n == 34 and net.ties == 78
    assert np.bincount(net.region).tolist() == [17, 17]  # Zachary (1977): 17 members each side
    assert net.region_names.tolist() == ["Mr. Hi", "Officer"]


def test_from_networkx_drops_loops_and_repeats_with_a_warning_and_refuses_partial_regions():
    g = nx.MultiGraph([(0, 1), (1, 0), (1, 2), (2, 2)])
    with pytest.warns(UserWarning, match=r"dropped 1 self-loop\(s\) and 1 duplicate tie\(s\)"):
        net = ReferralNetwork.from_networkx(g)
    assert net.ties == 2
    h = nx.path_graph(3)
    h.nodes[0]["region"] = "north"
    with pytest.raises(
        NetworkError, match=r"node attribute 'region' is missing on 2 of 3 nodes .*allowed: on every node or on none"
    ):
        ReferralNetwork.from_networkx(h)


def test_from_edge_table_with_and_without_a_node_table():
    # Zachary (1977)'s 78 ties as a pandas table, members' clubs as a node table (text regions)
    g = _karate_with_clubs()
    ties = pd.DataFrame(list(g.edges()), columns=["source", "target"])
    net = from_edge_table(ties)
    assert net.n == 34 and net.ties == 78 and net.labels.tolist() == list(range(34))
    nodes = pd.DataFrame({"id": list(g), "region": [g.nodes[v]["region"] for v in g]})
    net = from_edge_table(ties, nodes)
    assert net.region_values().tolist() == nodes["region"].tolist()
    assert sorted(net.degree().tolist()) == sorted(d for _, d in g.degree())
    with pytest.raises(NetworkError, match=r"edge table: ties name ids missing from node table, e.g. 33"):
        from_edge_table(ties, nodes[nodes["id"] != 33])
    with pytest.raises(NetworkError, match=r"edge table must have a column 'source'"):
        from_edge_table(ties.rename(columns={"source": "from"}))


@pytest.mark.parametrize("kind", ["graphml", "gexf"])
def test_graph_files_through_a_scenario(tmp_path, kind):
    # the Florentine families written by networkx and read back through network.kind
    g = nx.florentine_families_graph()
    nx.set_node_attributes(g, {v: ("north" if v < "M" else "south") for v in g}, "zone")
    path = tmp_path / f"families.{kind}"
    getattr(nx, f"write_{kind}")(g, path)
    s = Scenario.from_dict(
        {"network": {"kind": kind, "path": str(path), "region_attribute": "zone"}, "market": {"regions": 2}}
    )
    assert s.market.organisations == 15  # from the file, as for an edge list
    assert s.network.mean_degree == pytest.approx(40 / 15)
    net = build_network(s, np.random.default_rng(0))
    medici = net.labels.tolist().index("Medici")
    assert net.degree()[medici] == 6 and net.region_values()[medici] == "south"
    with pytest.raises(
        ScenarioError,
        match=rf"market.organisations must match the {'GraphML' if kind == 'graphml' else 'GEXF'} file \(15 organisations",
    ):
        Scenario.from_dict({"network": {"kind": kind, "path": str(path)}, "market": {"organisations": 20}})


def test_unreadable_graph_file_is_one_line(tmp_path, capsys):
    bad = tmp_path / "broken.graphml"
    bad.write_text("<graphml><graph><node id='a'/>", encoding="utf-8")
    with pytest.raises(
        NetworkError, match=r"network.path: cannot read '.*broken.graphml' as GraphML: .*allowed: a GraphML file"
    ):
        read_graph_file(bad, "graphml")
    config = tmp_path / "s.toml"
    config.write_text(f'[network]\nkind = "graphml"\npath = "{bad.name}"\n', encoding="utf-8")
    assert main(["check", str(config)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert (
        len(err) == 1 and err[0].startswith("womlab: error: network.path: cannot read") and "broken.graphml" in err[0]
    )


def test_check_prints_the_clustering_coefficient(tmp_path, capsys):
    # Watts & Strogatz (1998): the ring lattice with k = 6 has clustering 3(k − 2)/(4(k − 1)) = 0.6
    config = tmp_path / "ring.toml"
    config.write_text('[market]\norganisations = 500\n[network]\nkind = "ring"\nmean_degree = 6\n', encoding="utf-8")
    assert main(["check", str(config)]) == 0
    line = next(x for x in capsys.readouterr().out.splitlines() if "clustering coefficient" in x)
    assert "0.6 (one network built from the seed; expected 0.6 for ring)" in line
