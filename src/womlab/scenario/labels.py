"""Plain labels for scenario fields, for axes, legends and tables a reader sees.

A dotted field name (``adoption.word_of_mouth``) is what a scenario file says; a figure
says what it means (``word-of-mouth strength q, per period``). :func:`field_label` gives
that label for any field, so every figure and report names a field the same way.
"""

from __future__ import annotations

__all__ = ["FIELD_LABELS", "field_label"]

#: Label of each scenario field a reader is likely to see on an axis.
FIELD_LABELS: dict[str, str] = {
    "seed": "root seed",
    "market.organisations": "organisations in the market",
    "market.initial_customers": "initial customers",
    "market.initial_share": "initial share of the market",
    "market.regions": "regions",
    "network.kind": "network kind",
    "network.mean_degree": "mean ties per organisation",
    "network.rewiring": "rewiring probability (small world)",
    "network.within_region_share": "share of ties inside the region",
    "adoption.rule": "adoption rule",
    "adoption.external": "external influence p, per period",
    "adoption.word_of_mouth": "word-of-mouth strength q, per period",
    "adoption.satisfied_share": "share of new customers satisfied",
    "adoption.talkers_per_customer": "talkers per customer",
    "adoption.talkers_per_customer.mean": "talkers per customer",
    "adoption.cap": "ceiling on the adoption rate, per period",
    "adoption.threshold.low": "lowest threshold",
    "adoption.threshold.high": "highest threshold",
    "adoption.threshold.mean": "mean threshold",
    "adoption.threshold.sd": "spread of thresholds (sd)",
    "run.periods": "periods",
    "run.time_step": "time step, periods",
    "run.replicates": "replicates",
    "seeding.strategy": "seeding strategy",
    "seeding.budget": "seeds (initial customers chosen)",
    "seeding.betweenness_sample": "organisations sampled for betweenness",
    "seeding.greedy_runs": "simulations per greedy evaluation",
    "seeding.greedy_candidates": "greedy candidates",
    "study.discount_rate": "discount rate, per period",
    "referral.enrol": "who is enrolled",
    "referral.enrol_share": "share of organisations enrolled",
    "referral.enrol_count": "organisations enrolled",
    "referral.start": "first programme period",
    "referral.end": "last programme period",
    "referral.talk_multiplier": "word-of-mouth multiplier of enrolled customers",
    "referral.extra_talkers": "extra talkers per enrolled customer",
    "referral.reward": "reward per successful referral",
    "referral.bonus": "bonus",
    "referral.bonus_threshold": "referrals that earn the bonus",
    "referral.referred_reward": "reward to the referred customer",
    "referral.budget": "programme budget",
    "referral.value_per_period": "value of a customer per period",
    "referral.lifetime_value": "lifetime value of a customer",
    "referral.discount_rate": "discount rate, per period",
}


def field_label(dotted: str, *, log: bool = False) -> str:
    """The plain label of the scenario field ``dotted``; ``log`` adds "(log scale)".

    A field without an entry in :data:`FIELD_LABELS` is labelled by its own words
    (``referral.new_field`` → "new field (referral)").

    Examples
    --------
    >>> field_label("adoption.word_of_mouth")
    'word-of-mouth strength q, per period'
    >>> field_label("referral.reward", log=True)
    'reward per successful referral (log scale)'
    """
    label = FIELD_LABELS.get(dotted)
    if label is None:
        section, _, leaf = dotted.rpartition(".")
        label = leaf.replace("_", " ") + (f" ({section})" if section else "")
    return f"{label} (log scale)" if log else label
