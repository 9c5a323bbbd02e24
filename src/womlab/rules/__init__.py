"""The rules layer: the adoption and satisfaction formulas, written once.

Every engine (:mod:`womlab.dynamics`) and every aggregate model (:mod:`womlab.aggregate`)
calls these functions, so a formula lives in one place. Knows only the scenario. See
:mod:`womlab.rules.adoption` for the rules and their sources.
"""

from __future__ import annotations

from womlab.rules.adoption import (
    adoption_rate,
    draw_satisfied,
    draw_talkers,
    draw_thresholds,
    external_share,
    step_hazard,
    step_probability,
    talk_weights,
    word_of_mouth_part,
)

__all__ = [
    "adoption_rate",
    "external_share",
    "step_probability",
    "step_hazard",
    "draw_talkers",
    "draw_satisfied",
    "draw_thresholds",
    "talk_weights",
    "word_of_mouth_part",
]
