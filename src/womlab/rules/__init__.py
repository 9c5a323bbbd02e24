"""The rules layer: the adoption and satisfaction formulas, written once.

Every engine (:mod:`womlab.dynamics`) and every aggregate model (:mod:`womlab.aggregate`)
calls these functions, so a formula lives in one place: a scalar compiled function
(:func:`rate`, :func:`hazard`, ...) that the array engine's compiled step and the Mesa
model call per organisation, and the vector form built on it (:func:`adoption_rate`,
:func:`step_hazard`, ...). Knows only the scenario. See :mod:`womlab.rules.adoption` for
the rules and their sources, :mod:`womlab.rules.compiled` for the compiler check.
"""

from __future__ import annotations

from womlab.rules.adoption import (
    FORM_CODES,
    RULE_CODES,
    adoption_rate,
    churn_rate,
    churn_steps,
    crossing_fraction,
    draw_satisfied,
    draw_talkers,
    draw_thresholds,
    external_part,
    external_share,
    form_code,
    hazard,
    neighbour_talkers,
    probability,
    rate,
    rejection_rate,
    rejection_rates,
    rejects_first,
    rule_code,
    step_adoption_hazard,
    step_adoption_probability,
    step_external_part,
    step_hazard,
    step_probability,
    step_rejection_hazard,
    talk_weight,
    talk_weights,
    upgrade_rate,
    warn_weight,
    warns,
    wom_part,
    word_of_mouth_part,
)
from womlab.rules.compiled import NUMBA_SUPPORTED, check_numba, compiled

__all__ = [
    "RULE_CODES",
    "FORM_CODES",
    "rule_code",
    "form_code",
    "rate",
    "wom_part",
    "external_part",
    "probability",
    "hazard",
    "talk_weight",
    "adoption_rate",
    "external_share",
    "step_probability",
    "step_hazard",
    "draw_talkers",
    "draw_satisfied",
    "draw_thresholds",
    "talk_weights",
    "neighbour_talkers",
    "upgrade_rate",
    "word_of_mouth_part",
    "step_adoption_hazard",
    "step_external_part",
    "step_adoption_probability",
    "churn_rate",
    "churn_steps",
    "warns",
    "warn_weight",
    "rejection_rate",
    "step_rejection_hazard",
    "rejects_first",
    "crossing_fraction",
    "rejection_rates",
    "compiled",
    "check_numba",
    "NUMBA_SUPPORTED",
]
