"""The aggregate layer: growth when everyone talks to everyone, and fitting it to curves.

Knows the rules and the scenario (below); nothing of networks, seeding, engines or agents.
``models`` holds the Bass model (closed form, ODE, difference form), the capped Bass
difference model (formerly "stock-and-flow") and the micro-to-macro mapping; ``mean_field`` the degree-based
mean-field model (fed a degree sequence, never a network object it must import);
``churn`` Bass with churn and warnings (ODE and difference form);
``fitting`` the least-squares fits of these curves to network runs or sales data; ``exact``
the exact expected adoption on the two-organisation network, the ring and k-regular trees
(continuous and in the array engine's own step).
"""

from __future__ import annotations

from womlab.aggregate.churn import (
    CHURN_CURVE_COLUMNS,
    bass_churn_difference,
    bass_churn_ode,
    expected_stay,
    geometric_lifetime_value,
)
from womlab.aggregate.exact import regular_tree_share, ring_share, two_organisation_share
from womlab.aggregate.fitting import (
    BassFit,
    StockFlowFit,
    fit_bass,
    fit_bass_sales,
    fit_capped_bass_difference,
    fit_replicates,
    fit_stock_and_flow,
)
from womlab.aggregate.generations import generations_difference, mapped_generations, norton_bass, norton_bass_ode
from womlab.aggregate.markets import (
    SegmentParameters,
    bass_calendar_share,
    external_by_period,
    group_curves,
    mapped_segments,
    segment_curves,
    segment_difference,
    segment_ode,
    van_den_bulte_joshi,
)
from womlab.aggregate.mean_field import degree_classes, degree_mean_field, degree_mean_field_curve
from womlab.aggregate.models import (
    AGGREGATE_LABELS,
    AggregateParameters,
    aggregate_curve,
    bass_density,
    bass_difference,
    bass_ode,
    bass_peak_time,
    bass_share,
    capped_bass_difference,
    churn_curves,
    mapped_parameters,
    stock_and_flow,
)

__all__ = [
    "AGGREGATE_LABELS",
    "AggregateParameters",
    "mapped_parameters",
    "bass_share",
    "bass_density",
    "bass_ode",
    "bass_difference",
    "capped_bass_difference",
    "stock_and_flow",
    "aggregate_curve",
    "bass_peak_time",
    "CHURN_CURVE_COLUMNS",
    "bass_churn_ode",
    "bass_churn_difference",
    "churn_curves",
    "expected_stay",
    "geometric_lifetime_value",
    "two_organisation_share",
    "ring_share",
    "regular_tree_share",
    "degree_classes",
    "degree_mean_field",
    "degree_mean_field_curve",
    "BassFit",
    "StockFlowFit",
    "fit_bass",
    "fit_bass_sales",
    "fit_replicates",
    "fit_capped_bass_difference",
    "fit_stock_and_flow",
    "SegmentParameters",
    "mapped_segments",
    "segment_ode",
    "segment_difference",
    "van_den_bulte_joshi",
    "bass_calendar_share",
    "external_by_period",
    "group_curves",
    "segment_curves",
    "norton_bass",
    "norton_bass_ode",
    "generations_difference",
    "mapped_generations",
]
