"""The studies layer: many runs, and what they say.

Knows every layer below (dynamics, aggregate, store, seeding, networks, scenario);
nothing of files' contents, figures or the command line (above). ``runner`` holds
replicate batches and paired runs (common random numbers, joblib); ``compare`` the
network set beside the aggregate models; ``seeding_study`` the paired seeding study;
``continuation`` paired runs continued past the horizon with the levers off;
``programme`` a referral programme's economics; ``sweep`` designs and the resumable
sweep runner; ``sweep_studies`` the registry of what a sweep point runs; ``plan`` what
each command will run on a scenario; ``sensitivity`` Sobol and Morris; ``metrics`` curve
statistics; ``intervals`` every confidence interval over replicates; ``referrals`` referral-tree analytics;
``observed`` observed adoption series; ``smc`` the ABC-SMC; ``calibration`` fitting, forecasting and staging an
observed market; ``continuation`` runs carried past the horizon; ``presenting`` the registry through
which a study's result asks :mod:`womlab.results` to draw or write it.
"""

from __future__ import annotations

from womlab.studies.bad_news import value_of_bad_news
from womlab.studies.calibration import (
    Fit,
    PosteriorDraws,
    check_observed,
    fit_observed,
    simulated_series,
    simulation_based_calibration,
)
from womlab.studies.compare import Comparison, aggregate_curves, bass_fit_table, compare
from womlab.studies.continuation import Continuation, continue_paired, levers_off_after, truncate
from womlab.studies.intervals import (
    FewReplicatesWarning,
    Interval,
    bootstrap_interval,
    median_interval,
    ratio_standard_error,
    small_sample_level,
    t_interval,
)
from womlab.studies.levers import LEVERS, Lever, LeverStudy, lever_arm, lever_timing, register_lever
from womlab.studies.metrics import (
    GAP_NAMES,
    METRIC_NAMES,
    curve_gap,
    curve_gap_array,
    curve_metrics,
    curve_metrics_array,
    discount_factors,
    mean_interval,
    metrics_table,
    pooled_gaps,
    pooled_metrics,
    replicate_gaps,
    replicate_metrics,
    time_to_share,
)
from womlab.studies.observed import ObservedSeries, observed_series, read_observed
from womlab.studies.plan import plan, programme_summary, slow_steps
from womlab.studies.programme import (
    ProgrammeStudy,
    customer_values,
    evaluate_programme,
    programme_economics,
    programme_ratios,
    roi,
    value_flow,
    with_lifetime_value_from_churn,
)
from womlab.studies.referrals import (
    generation,
    generations,
    referral_counts,
    referral_tree_summary,
    referrals_by_adoption_period,
    referrals_per_customer,
    reproduction_by_period,
    top_degree_referral_share,
    word_of_mouth_by_period,
)
from womlab.studies.runner import Batch, crossover_seconds, parallel_choice, run_one, run_paired, run_replicates
from womlab.studies.seeding_study import SeedingStudy, compare_strategies, lift_statistics, run_outcomes
from womlab.studies.sensitivity import morris_design, morris_effects, saltelli_design, sobol_indices
from womlab.studies.smc import abc_smc, effective_sample_size, weighted_quantile
from womlab.studies.sweep import SweepSummary, design_points, point_scenarios, run_point, run_sweep
from womlab.studies.sweep_studies import Outcome, SweepStudy, register_sweep_study, sweep_studies, sweep_study

__all__ = [
    "value_of_bad_news",
    "with_lifetime_value_from_churn",
    "plan",
    "programme_summary",
    "slow_steps",
    "parallel_choice",
    "crossover_seconds",
    "Batch",
    "run_one",
    "run_replicates",
    "run_paired",
    "Continuation",
    "continue_paired",
    "levers_off_after",
    "truncate",
    "LEVERS",
    "Lever",
    "LeverStudy",
    "lever_arm",
    "lever_timing",
    "register_lever",
    "Comparison",
    "compare",
    "aggregate_curves",
    "bass_fit_table",
    "SeedingStudy",
    "compare_strategies",
    "lift_statistics",
    "run_outcomes",
    "ProgrammeStudy",
    "evaluate_programme",
    "programme_economics",
    "programme_ratios",
    "customer_values",
    "value_flow",
    "roi",
    "referral_counts",
    "generation",
    "word_of_mouth_by_period",
    "referrals_per_customer",
    "generations",
    "top_degree_referral_share",
    "referrals_by_adoption_period",
    "reproduction_by_period",
    "referral_tree_summary",
    "discount_factors",
    "mean_interval",
    "time_to_share",
    "curve_metrics",
    "curve_gap",
    "metrics_table",
    "replicate_metrics",
    "replicate_gaps",
    "pooled_metrics",
    "pooled_gaps",
    "curve_metrics_array",
    "curve_gap_array",
    "Interval",
    "FewReplicatesWarning",
    "t_interval",
    "bootstrap_interval",
    "median_interval",
    "ratio_standard_error",
    "small_sample_level",
    "METRIC_NAMES",
    "GAP_NAMES",
    "SweepSummary",
    "design_points",
    "point_scenarios",
    "run_point",
    "run_sweep",
    "Outcome",
    "SweepStudy",
    "register_sweep_study",
    "sweep_study",
    "sweep_studies",
    "saltelli_design",
    "sobol_indices",
    "morris_design",
    "morris_effects",
    "Fit",
    "PosteriorDraws",
    "fit_observed",
    "check_observed",
    "simulated_series",
    "simulation_based_calibration",
    "ObservedSeries",
    "observed_series",
    "read_observed",
    "abc_smc",
    "effective_sample_size",
    "weighted_quantile",
]
