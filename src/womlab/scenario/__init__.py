"""The scenario layer: every parameter of a study, as frozen, validated dataclasses.

The lowest layer of womlab: it imports nothing of womlab but :mod:`womlab.errors`.
``sections`` holds the sections (and the fields-without-effect rules, ``NO_EFFECT``),
``sweep_spec`` the ``[sweep]`` section, ``tree`` the :class:`Scenario` itself (loading,
``replace``, ``--set``), ``checks`` the shared validation wording, ``registry`` what the
layers above hand down (strategy names, the edge-list reader), ``resources`` the estimate
of memory and work before anything runs, ``progress`` how long work reports itself,
``labels`` the plain label of every field, and ``shipped`` the demo scenarios that ship in
the package (``demos/*.toml``).
See :mod:`womlab.scenario.tree` for the file format.
"""

from __future__ import annotations

from womlab.scenario.fit_spec import PRIOR_DISTRIBUTIONS, FitSpec, Prior
from womlab.scenario.labels import field_label
from womlab.scenario.levers import Levers, LeverSettings, Reference, References
from womlab.scenario.markets import Campaign, Campaigns, Product, Products, Segment, Segments
from womlab.scenario.resources import Estimate, check_resources, estimate_resources
from womlab.scenario.sections import (
    CLOCKS,
    CONTINUOUS_RULES,
    ENGINES,
    ENROLMENTS,
    NETWORK_KINDS,
    NO_EFFECT,
    REWARD_SCHEMES,
    RULES,
    STEP_FORMS,
    STUDY_OUTCOMES,
    TALKER_DISTRIBUTIONS,
    THRESHOLD_DISTRIBUTIONS,
    Adoption,
    Market,
    NetworkSpec,
    Referral,
    RunSpec,
    Seeding,
    Study,
    Talkers,
    Thresholds,
    no_effect,
)
from womlab.scenario.shipped import demo_names, demo_path, write_demo
from womlab.scenario.sweep_spec import SWEEP_DESIGNS, Axis, SweepSpec
from womlab.scenario.tree import SECTIONS, Scenario, field_type, load_scenario, parse_assignment

__all__ = [
    "field_label",
    "Estimate",
    "estimate_resources",
    "check_resources",
    "NO_EFFECT",
    "no_effect",
    "parse_assignment",
    "Market",
    "NetworkSpec",
    "Talkers",
    "Thresholds",
    "Adoption",
    "RunSpec",
    "Seeding",
    "Study",
    "Axis",
    "SweepSpec",
    "Referral",
    "FitSpec",
    "Prior",
    "Segment",
    "Segments",
    "Campaign",
    "Campaigns",
    "Product",
    "Products",
    "Levers",
    "LeverSettings",
    "Reference",
    "References",
    "Scenario",
    "SECTIONS",
    "field_type",
    "load_scenario",
    "demo_names",
    "demo_path",
    "write_demo",
    "NETWORK_KINDS",
    "RULES",
    "STEP_FORMS",
    "ENGINES",
    "CLOCKS",
    "CONTINUOUS_RULES",
    "STUDY_OUTCOMES",
    "TALKER_DISTRIBUTIONS",
    "THRESHOLD_DISTRIBUTIONS",
    "ENROLMENTS",
    "REWARD_SCHEMES",
    "SWEEP_DESIGNS",
    "PRIOR_DISTRIBUTIONS",
]
