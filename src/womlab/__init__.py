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
from .outputs import save_batch, save_programme
from .plots import adoption_figure, programme_figure, referral_tree_figure
from .programme import ProgrammeStudy, evaluate_programme, programme_economics
from .referrals import (
    generations,
    referral_tree_summary,
    referrals_per_customer,
    reproduction_by_period,
    top_degree_referral_share,
    word_of_mouth_by_period,
)
from .results import RunResult
from .scenario import Scenario, load_scenario
from .seeding import STRATEGIES, choose_seeds
from .studies import Batch, run_one, run_paired, run_replicates, streams

__version__ = "0.1.0"

__all__ = [
    "AggregateParameters",
    "Batch",
    "NetworkError",
    "ProgrammeStudy",
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
    "evaluate_programme",
    "generations",
    "load_scenario",
    "mapped_parameters",
    "programme_economics",
    "programme_figure",
    "read_edgelist",
    "referral_tree_figure",
    "referral_tree_summary",
    "referrals_per_customer",
    "reproduction_by_period",
    "run_one",
    "run_paired",
    "run_replicates",
    "save_batch",
    "save_programme",
    "stock_and_flow",
    "streams",
    "time_to_share",
    "top_degree_referral_share",
    "word_of_mouth_by_period",
]
