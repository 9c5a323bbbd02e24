"""womlab: word-of-mouth growth on referral networks, set against the aggregate model.

Organisations sit on a referral network; satisfied customers talk to their neighbours.
womlab simulates each organisation (a fast numpy array engine, and a Mesa model as the
per-agent reference), runs seeded replicates in parallel, and sets the emergent adoption
curves against the aggregate Bass models (closed form, ODE, difference form, and the Bass
difference model with a ceiling on the adoption rate).

Quick start::

    import womlab
    s = womlab.load_scenario("demo")  # a shipped demo by name, or any scenario file
    batch = womlab.run_replicates(s, 20, jobs=2)
    batch.metrics()                    # t10/t50/t90, peak, final share: network vs aggregate
    womlab.adoption_figure(batch).savefig("adoption.png")
    fit = womlab.fit_observed(s, "observed.csv")   # your own market: ABC-SMC fit, forecast, stage
"""

from __future__ import annotations

from importlib import metadata as _metadata

from womlab.aggregate import (
    AggregateParameters,
    BassFit,
    StockFlowFit,
    aggregate_curve,
    bass_density,
    bass_difference,
    bass_ode,
    bass_peak_time,
    bass_share,
    capped_bass_difference,
    degree_classes,
    degree_mean_field,
    degree_mean_field_curve,
    fit_bass,
    fit_bass_sales,
    fit_capped_bass_difference,
    fit_replicates,
    fit_stock_and_flow,
    mapped_parameters,
    regular_tree_share,
    ring_share,
    stock_and_flow,
    two_organisation_share,
)
from womlab.dynamics import RunResult, engine_for, run_events, streams, to_networkx
from womlab.errors import (
    ClusterError,
    CompilerError,
    NetworkError,
    ObservedDataError,
    ScenarioError,
    ScenarioWarning,
    StoreError,
    WomlabError,
)
from womlab.networks import ReferralNetwork, build_network, from_edge_table, read_edgelist, read_graph_file
from womlab.networks.given import as_network
from womlab.results import (
    check_output_folder,
    save_comparison,
    save_figure,
    strategy_colour,
    adoption_figure,
    comparison_figure,
    fit_figure,
    network_snapshot_figure,
    programme_figure,
    referral_tree_figure,
    save_batch,
    save_fit,
    save_programme,
    save_seeding_study,
    seeding_figure,
    sensitivity_table,
    sweep_figures,
    sweep_summary,
    write_report,
)
from womlab.scenario import (
    Scenario,
    check_resources,
    demo_names,
    estimate_resources,
    field_label,
    load_scenario,
    write_demo,
)
from womlab.seeding import STRATEGIES, choose_seeds
from womlab.store import ResultsStore
from womlab.studies import (
    Batch,
    Comparison,
    Fit,
    ObservedSeries,
    ProgrammeStudy,
    SeedingStudy,
    SweepStudy,
    SweepSummary,
    aggregate_curves,
    bass_fit_table,
    bootstrap_interval,
    compare,
    compare_strategies,
    continue_paired,
    curve_gap,
    curve_metrics,
    design_points,
    evaluate_programme,
    fit_observed,
    generations,
    lift_statistics,
    mean_interval,
    median_interval,
    morris_design,
    morris_effects,
    point_scenarios,
    pooled_gaps,
    parallel_choice,
    pooled_metrics,
    programme_economics,
    plan,
    programme_ratios,
    read_observed,
    referral_tree_summary,
    referrals_by_adoption_period,
    register_sweep_study,
    referrals_per_customer,
    register_sweep_study,
    replicate_gaps,
    replicate_metrics,
    reproduction_by_period,
    run_one,
    run_paired,
    run_replicates,
    run_sweep,
    saltelli_design,
    simulated_series,
    simulation_based_calibration,
    sobol_indices,
    sweep_studies,
    time_to_share,
    top_degree_referral_share,
    word_of_mouth_by_period,
)

try:  # the one source of the version is pyproject.toml, read from the installed metadata
    __version__ = _metadata.version("womlab")
except _metadata.PackageNotFoundError:  # pragma: no cover - imported from a source tree that was never installed
    __version__ = "0+unknown"

__all__ = [
    "AggregateParameters",
    "BassFit",
    "Batch",
    "ClusterError",
    "Comparison",
    "CompilerError",
    "NetworkError",
    "ProgrammeStudy",
    "ReferralNetwork",
    "RunResult",
    "STRATEGIES",
    "Scenario",
    "ScenarioError",
    "ScenarioWarning",
    "SeedingStudy",
    "StockFlowFit",
    "StoreError",
    "WomlabError",
    "adoption_figure",
    "aggregate_curve",
    "aggregate_curves",
    "as_network",
    "bass_density",
    "bass_difference",
    "bass_fit_table",
    "bass_ode",
    "bootstrap_interval",
    "bass_peak_time",
    "bass_share",
    "build_network",
    "capped_bass_difference",
    "check_output_folder",
    "check_resources",
    "estimate_resources",
    "field_label",
    "fit_capped_bass_difference",
    "plan",
    "referrals_by_adoption_period",
    "save_comparison",
    "save_figure",
    "strategy_colour",
    "choose_seeds",
    "compare",
    "compare_strategies",
    "continue_paired",
    "comparison_figure",
    "curve_gap",
    "curve_metrics",
    "demo_names",
    "degree_classes",
    "degree_mean_field",
    "degree_mean_field_curve",
    "evaluate_programme",
    "fit_bass",
    "fit_bass_sales",
    "fit_replicates",
    "fit_stock_and_flow",
    "generations",
    "parallel_choice",
    "lift_statistics",
    "load_scenario",
    "mapped_parameters",
    "mean_interval",
    "median_interval",
    "network_snapshot_figure",
    "pooled_gaps",
    "pooled_metrics",
    "programme_economics",
    "programme_figure",
    "programme_ratios",
    "read_edgelist",
    "read_graph_file",
    "from_edge_table",
    "referral_tree_figure",
    "referral_tree_summary",
    "referrals_per_customer",
    "replicate_gaps",
    "replicate_metrics",
    "reproduction_by_period",
    "run_one",
    "run_paired",
    "run_replicates",
    "save_batch",
    "save_programme",
    "save_seeding_study",
    "seeding_figure",
    "stock_and_flow",
    "two_organisation_share",
    "ring_share",
    "regular_tree_share",
    "streams",
    "time_to_share",
    "to_networkx",
    "top_degree_referral_share",
    "word_of_mouth_by_period",
    "write_demo",
    # sweeps, results store, sensitivity, report
    "ResultsStore",
    "SweepStudy",
    "SweepSummary",
    "register_sweep_study",
    "sweep_studies",
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
    # the Mesa model, imported on first use so that `import womlab` does not import mesa
    "ReferralModel",
    "Organisation",
    "run_mesa",
    # fitting an observed series
    "Fit",
    "ObservedDataError",
    "ObservedSeries",
    "fit_figure",
    "fit_observed",
    "read_observed",
    "save_fit",
    "simulated_series",
    "simulation_based_calibration",
    # engines and their dispatch
    "engine_for",
    "run_events",
]

_LAZY = {"ReferralModel", "run_mesa", "Organisation"}


def __getattr__(name: str):  # PEP 562: the Mesa model loads only when asked for
    if name in _LAZY:
        from womlab.dynamics import mesa_model

        return getattr(mesa_model, name)
    raise AttributeError(f"module 'womlab' has no attribute {name!r}")
