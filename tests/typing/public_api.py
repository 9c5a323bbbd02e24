"""The public API used the way the README and the docstrings use it, for mypy (make typecheck).

Not a test module: nothing here runs under pytest. mypy checks that these calls type-check
against womlab's annotations, as a user's editor and type checker would see them.
"""

from __future__ import annotations

from pathlib import Path

import matplotlib.figure
import networkx as nx
import pandas as pd

import womlab


def tour(out: Path) -> list[Path]:
    s: womlab.Scenario = womlab.load_scenario("demo")
    s2: womlab.Scenario = s.replace("network.within_region_share", 0.5)
    batch: womlab.Batch = womlab.run_replicates(s2, 20, jobs=2)
    metrics: pd.DataFrame = batch.metrics()
    fig: matplotlib.figure.Figure = womlab.adoption_figure(batch)
    fig.savefig(out / "adoption.png")
    assert not metrics.empty
    return womlab.save_batch(batch, out, organisations="parquet")


def own_network(graph: nx.Graph, edges: pd.DataFrame) -> pd.DataFrame:
    s = womlab.Scenario.from_dict({"market": {"organisations": graph.number_of_nodes()}})
    batch = womlab.run_replicates(s, 4, network=graph)
    womlab.compare(s, 4, network=edges)
    womlab.compare_strategies(s, ["hubs"], 4, network=graph)
    result: womlab.RunResult = batch.runs[0]
    forest: nx.DiGraph = womlab.to_networkx(result)
    assert forest.number_of_nodes() == result.n
    return result.to_frame()


def demos(folder: Path) -> Path:
    names: list[str] = womlab.demo_names()
    return womlab.write_demo(names[0], folder, overwrite=True)


def levers(out: Path) -> pd.DataFrame:
    s: womlab.Scenario = womlab.load_scenario("levers-demo")
    study: womlab.LeverStudy = womlab.lever_timing(s, ["campaign", "open_region"], range(0, 30, 6), 4, jobs=1)
    fig: matplotlib.figure.Figure = study.figure(by="roi")
    fig.savefig(out / "levers.png")
    best: pd.DataFrame = study.best()
    assert not best.empty
    return study.table()
