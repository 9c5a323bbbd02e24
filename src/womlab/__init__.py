"""womlab: word-of-mouth growth on referral networks, set against the aggregate model.

Organisations sit on a referral network; satisfied customers talk to their neighbours.
womlab simulates each organisation (a fast numpy array engine, and a Mesa model as the
per-agent reference), runs seeded replicates in parallel, and sets the emergent adoption
curves against the aggregate Bass and stock-and-flow models.

Quick start::

    import womlab
    s = womlab.load_scenario("configs/demo.toml")
    batch = womlab.run_replicates(s, 20, jobs=2)
    batch.metrics()                    # t10/t50/t90, peak, final share: network vs aggregate
    womlab.adoption_figure(batch).savefig("adoption.png")
"""

from __future__ import annotations

from .aggregate import (
    AggregateParameters,
    aggregate_curve,
    bass_difference,
    bass_ode,
    bass_peak_time,
    bass_share,
    mapped_parameters,
    stock_and_flow,
)
from .errors import NetworkError, ScenarioError, StoreError, WomlabError
from .metrics import curve_metrics, time_to_share
from .networks import ReferralNetwork, build_network, read_edgelist
from .outputs import save_batch
from .plots import adoption_figure
from .results import RunResult
from .scenario import Scenario, load_scenario
from .seeding import STRATEGIES, choose_seeds
from .studies import Batch, run_one, run_paired, run_replicates, streams
from .report import sensitivity_table, sweep_figures, sweep_summary, write_report
from .sensitivity import morris_design, morris_effects, saltelli_design, sobol_indices
from .store import ResultsStore
from .sweep import SweepSummary, design_points, point_scenarios, run_sweep

__version__ = "0.1.0"

__all__ = [
    "AggregateParameters",
    "Batch",
    "NetworkError",
    "ReferralNetwork",
    "RunResult",
    "STRATEGIES",
    "Scenario",
    "ScenarioError",
    "StoreError",
    "WomlabError",
    "adoption_figure",
    "aggregate_curve",
    "bass_difference",
    "bass_ode",
    "bass_peak_time",
    "bass_share",
    "build_network",
    "choose_seeds",
    "curve_metrics",
    "load_scenario",
    "mapped_parameters",
    "read_edgelist",
    "run_one",
    "run_paired",
    "run_replicates",
    "save_batch",
    "stock_and_flow",
    "streams",
    "time_to_share",
    # sweeps, results store, sensitivity, report
    "ResultsStore",
    "SweepSummary",
    "design_points",
    "morris_design",
    "morris_effects",
    "point_scenarios",
    "run_sweep",
    "saltelli_design",
    "sensitivity_table",
    "sobol_indices",
    "sweep_figures",
    "sweep_summary",
    "write_report",
]
