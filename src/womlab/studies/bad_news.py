"""What warnings cost: the value of bad news, on paired runs with and without them.

:func:`value_of_bad_news` runs a scenario whose dissatisfied customers warn
(``adoption.warning`` above 0) beside the same scenario with nobody warning, on the same
replicates through :func:`womlab.studies.runner.run_paired` (one network per replicate,
common random numbers), and values both arms' customers with the scenario's
``[referral]`` value (``value_per_period``, default 1, or ``lifetime_value``, discounted at
``discount_rate``; :func:`womlab.studies.programme.customer_values`, which counts a customer
only while it is one when customers churn). The difference is the value lost to bad news,
the quantity of Goldenberg, Libai, Moldovan & Muller (2007), who found it larger than the
dissatisfied share would suggest, since every warned-off organisation is also one that
will never pass positive word of mouth on.

References
----------
Goldenberg, J., Libai, B., Moldovan, S. & Muller, E. (2007). The NPV of bad news.
International Journal of Research in Marketing 24, 186–200.
"""

from __future__ import annotations

import pandas as pd

from womlab.dynamics import RunResult
from womlab.errors import ScenarioError
from womlab.networks.given import GivenNetwork
from womlab.scenario import Scenario
from womlab.studies.programme import customer_values, with_lifetime_value_from_churn
from womlab.studies.runner import run_paired

__all__ = ["value_of_bad_news", "silent"]


def silent(scenario: Scenario) -> Scenario:
    """``scenario`` with nobody warning (``adoption.warning = 0`` and the warners' switches off)."""
    return scenario.replace({"adoption.warning": 0.0, "adoption.former_warn": False, "adoption.rejecters_warn": False})


def _value(run: RunResult, scenario: Scenario) -> float:
    return float(customer_values(run.adoption_period, scenario.referral, run.periods, run.leave_period).sum())


def value_of_bad_news(
    scenario: Scenario, replicates: int, *, jobs: int = 1, network: GivenNetwork | None = None
) -> pd.DataFrame:
    """Per replicate: the value of the market with warnings and without, and what they cost.

    Parameters
    ----------
    scenario : Scenario
        With ``adoption.warning`` above 0.
    replicates : int
        Paired replicates (spawn keys ``(0,) .. (replicates − 1,)``).
    jobs : int
        Worker processes; results do not depend on it.
    network : ReferralNetwork, networkx.Graph or pandas.DataFrame, optional
        Your own network for every replicate.

    Returns
    -------
    pandas.DataFrame
        ``replicate``, ``value_silent`` and ``value_warned`` (discounted, to the horizon),
        ``value_lost`` (their difference), ``value_lost_share`` (over ``value_silent``),
        ``customers_silent``, ``customers_warned`` (at the horizon), ``rejecters``.

    Raises
    ------
    ScenarioError
        If ``adoption.warning`` is 0.

    Examples
    --------
    >>> from womlab import Scenario
    >>> s = Scenario.from_dict({"market": {"organisations": 300, "initial_customers": 5},
    ...     "network": {"kind": "random", "mean_degree": 6},
    ...     "adoption": {"satisfied_share": 0.6, "warning": 0.5}, "run": {"periods": 15}})
    >>> table = value_of_bad_news(s, 3)
    >>> bool((table["value_lost"] >= 0).all()), list(table.columns)[:3]
    (True, ['replicate', 'value_silent', 'value_warned'])
    """
    if not scenario.adoption.warns:
        raise ScenarioError("adoption.warning must be > 0 for value_of_bad_news, got 0.0")
    if scenario.referral.lifetime_value_from_churn:
        scenario = with_lifetime_value_from_churn(scenario)
    quiet = silent(scenario)
    runs = run_paired({"warned": scenario, "silent": quiet}, replicates, jobs=jobs, network=network)
    rows = []
    for r, (warned, calm) in enumerate(zip(runs["warned"], runs["silent"])):
        v1, v0 = _value(warned, scenario), _value(calm, quiet)
        rows.append(
            {
                "replicate": r,
                "value_silent": v0,
                "value_warned": v1,
                "value_lost": v0 - v1,
                "value_lost_share": (v0 - v1) / v0 if v0 > 0 else float("nan"),
                "customers_silent": int(calm.customers[-1]),
                "customers_warned": int(warned.customers[-1]),
                "rejecters": int(warned.rejecters[-1]),
            }
        )
    return pd.DataFrame(rows)
