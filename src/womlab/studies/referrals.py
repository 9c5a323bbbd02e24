"""Referral-tree analytics: who persuaded whom, read from runs' attributions.

Every engine records, per organisation, the period it became a customer and its
referrer: the satisfied customer whose word of mouth caused the adoption, or −1 for an
adoption by external influence, an initial customer, or an organisation that never
adopted (:class:`~womlab.dynamics.RunResult`). The referrers form a forest: its roots
are the initial customers and the external adopters, and each word-of-mouth adopter
hangs below its referrer. These functions are pure: they take one run or a sequence of
runs and return pandas tables.

Every function accepts a single :class:`RunResult` or a sequence of them (replicates);
counts are pooled over the runs unless the table has a ``replicate`` column.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from womlab.dynamics import RunResult

__all__ = [
    "referral_counts",
    "generation",
    "word_of_mouth_by_period",
    "referrals_per_customer",
    "generations",
    "top_degree_referral_share",
    "referrals_by_adoption_period",
    "reproduction_by_period",
    "referral_tree_summary",
]

Runs = RunResult | Sequence[RunResult]


def _as_list(runs: Runs) -> list[RunResult]:
    if isinstance(runs, RunResult):
        return [runs]
    runs = list(runs)
    if not runs:
        raise ValueError("need at least one run, got none")
    return runs


def referral_counts(run: RunResult) -> np.ndarray:
    """Number of organisations each organisation referred (int64, one entry per organisation)."""
    ref = run.referrer
    return np.bincount(ref[ref >= 0], minlength=run.n).astype(np.int64)


def generation(run: RunResult) -> np.ndarray:
    """Depth of each customer in the referral forest (int32; −1 for non-adopters).

    Initial customers and external adopters are generation 0; a word-of-mouth adopter is
    one generation below its referrer.

    Raises
    ------
    ValueError
        If the referrers contain a cycle or point at an organisation that never adopted
        (a run whose attribution is inconsistent).

    Examples
    --------
    >>> import numpy as np
    >>> from womlab.dynamics import RunResult
    >>> r = RunResult(periods=3, adoption_period=np.array([0, 1, 2, -1], dtype=np.int32),
    ...               referrer=np.array([-1, 0, 1, -1], dtype=np.int32), satisfied=np.ones(4, bool),
    ...               region=np.zeros(4, np.int32), initial=np.array([0], np.int32), engine="demo")
    >>> generation(r).tolist()
    [0, 1, 2, -1]
    """
    adopted = run.adoption_period >= 0
    ref = run.referrer
    if np.any(ref[ref >= 0] >= run.n) or np.any(~adopted[ref[ref >= 0]]):
        raise ValueError("a referrer is not an organisation that adopted; the run's attribution is inconsistent")
    gen = np.full(run.n, -1, dtype=np.int32)
    gen[adopted & (ref < 0)] = 0
    pending = np.flatnonzero(adopted & (ref >= 0))
    while pending.size:
        parent = gen[ref[pending]]
        ready = parent >= 0
        if not ready.any():
            raise ValueError("the referrers contain a cycle; the run's attribution is inconsistent")
        gen[pending[ready]] = parent[ready] + 1
        pending = pending[~ready]
    return gen


def word_of_mouth_by_period(runs: Runs) -> pd.DataFrame:
    """Adoptions by word of mouth and by external influence in each period 1..T.

    Returns
    -------
    pandas.DataFrame
        One row per replicate and period: ``replicate``, ``period``, ``adoptions``,
        ``word_of_mouth``, ``external``, ``word_of_mouth_share`` (NaN in a period without
        adoptions). Initial customers (period 0) are not adoptions and are left out.
    """
    frames = []
    for i, run in enumerate(_as_list(runs)):
        ap, ref, T = run.adoption_period, run.referrer, run.periods
        late = ap >= 1
        adoptions = np.bincount(ap[late], minlength=T + 1)[1 : T + 1]
        wom = np.bincount(ap[late & (ref >= 0)], minlength=T + 1)[1 : T + 1]
        with np.errstate(invalid="ignore", divide="ignore"):
            share = np.where(adoptions > 0, wom / np.maximum(adoptions, 1), np.nan)
        frames.append(
            pd.DataFrame(
                {
                    "replicate": i,
                    "period": np.arange(1, T + 1),
                    "adoptions": adoptions,
                    "word_of_mouth": wom,
                    "external": adoptions - wom,
                    "word_of_mouth_share": share,
                }
            )
        )
    return pd.concat(frames, ignore_index=True)


def referrals_per_customer(runs: Runs) -> pd.DataFrame:
    """Distribution of the number of referrals a customer made, pooled over runs.

    Returns
    -------
    pandas.DataFrame
        ``referrals`` (0, 1, 2, ... up to the largest seen), ``customers`` (how many
        customers made that many), ``share`` of all customers.
    """
    counts = np.concatenate([referral_counts(r)[r.adoption_period >= 0] for r in _as_list(runs)])
    dist = np.bincount(counts) if counts.size else np.zeros(1, dtype=np.int64)
    total = max(int(dist.sum()), 1)
    return pd.DataFrame({"referrals": np.arange(dist.size), "customers": dist, "share": dist / total})


def generations(runs: Runs) -> pd.DataFrame:
    """Customers by generation in the referral forest, pooled over runs.

    Returns
    -------
    pandas.DataFrame
        ``generation`` (0 = initial customers and external adopters), ``customers``,
        ``share`` of all customers.
    """
    gens = np.concatenate([g[g >= 0] for g in map(generation, _as_list(runs))])
    dist = np.bincount(gens) if gens.size else np.zeros(1, dtype=np.int64)
    total = max(int(dist.sum()), 1)
    return pd.DataFrame({"generation": np.arange(dist.size), "customers": dist, "share": dist / total})


def _top_weights(degree: np.ndarray, share: float) -> np.ndarray:
    """Membership weight of each organisation in the top ``share`` by degree.

    The top group holds exactly ``share · n`` organisations. Organisations tied at the
    boundary degree share the remaining places equally (each counts fractionally), so the
    result is the expectation under random tie-breaking and does not depend on ids.
    """
    n = degree.size
    places = share * n
    order = np.sort(degree)[::-1]
    if places <= 0:
        return np.zeros(n)
    boundary = order[min(int(np.ceil(places)) - 1, n - 1)]
    above = degree > boundary
    at = degree == boundary
    weights = above.astype(float)
    remaining = places - above.sum()
    weights[at] = remaining / at.sum()
    return weights


def top_degree_referral_share(
    runs: Runs, degrees: np.ndarray | Sequence[np.ndarray], *, share: float = 0.1
) -> pd.DataFrame:
    """Share of all referrals made by the organisations in the top decile of degree.

    Parameters
    ----------
    runs : RunResult or sequence of RunResult
    degrees : numpy.ndarray or sequence of numpy.ndarray
        Degree of each organisation on the network each run was made on (one array for
        every run, or one per run), e.g. ``network.degree()``.
    share : float
        Size of the top group as a share of all organisations (0.1: the top decile).
        Ties at the boundary degree share the remaining places (random tie-breaking in
        expectation), so on a regular network the top group's share of referrals is
        exactly its expected share of referrers.

    Returns
    -------
    pandas.DataFrame
        One row per replicate: ``replicate``, ``referrals``, ``top_referrals`` (weighted
        count), ``top_share`` (NaN without referrals), ``group_share`` (= ``share``: the
        top share if referrals were spread evenly over organisations).
    """
    if not 0 < share <= 1:
        raise ValueError(f"share must be in (0, 1], got {share!r}")
    runs = _as_list(runs)
    if isinstance(degrees, np.ndarray) and degrees.ndim == 1:
        degrees = [degrees] * len(runs)
    degrees = list(degrees)
    if len(degrees) != len(runs):
        raise ValueError(f"need one degree array per run: {len(runs)} runs, {len(degrees)} arrays")
    rows = []
    for i, (run, deg) in enumerate(zip(runs, degrees)):
        deg = np.asarray(deg)
        if deg.size != run.n:
            raise ValueError(f"run {i}: degree array has {deg.size} entries for {run.n} organisations")
        made = referral_counts(run)
        total = int(made.sum())
        top = float(made @ _top_weights(deg, share))
        rows.append(
            {
                "replicate": i,
                "referrals": total,
                "top_referrals": top,
                "top_share": top / total if total else np.nan,
                "group_share": share,
            }
        )
    return pd.DataFrame(rows)


def referrals_by_adoption_period(runs: Runs) -> pd.DataFrame:
    """Referrals per new customer, by adoption period, pooled over runs.

    For each period c: the mean number of referrals made (by the horizon) by the customers
    who adopted in period c; period 0 holds the initial customers. Customers who adopt
    near the horizon have had little time to refer, so the last periods' values are
    right-censored and fall towards 0 for that reason alone. (Epidemiology calls this
    mean a cohort reproduction number; womlab names it by what it counts.)

    Returns
    -------
    pandas.DataFrame
        ``period``, ``customers`` (who adopted in it), ``referrals`` (made by them),
        ``referrals_per_customer`` (their mean; NaN without customers), ``se`` (standard
        error of that mean across customers).
    """
    runs = _as_list(runs)
    T = runs[0].periods
    n_c = np.zeros(T + 1)
    s1 = np.zeros(T + 1)
    s2 = np.zeros(T + 1)
    for run in runs:
        if run.periods != T:
            raise ValueError(f"runs have different horizons: {T} and {run.periods}")
        ap = run.adoption_period
        adopted = ap >= 0
        made = referral_counts(run)[adopted].astype(float)
        n_c += np.bincount(ap[adopted], minlength=T + 1)[: T + 1]
        s1 += np.bincount(ap[adopted], weights=made, minlength=T + 1)[: T + 1]
        s2 += np.bincount(ap[adopted], weights=made**2, minlength=T + 1)[: T + 1]
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(n_c > 0, s1 / np.maximum(n_c, 1), np.nan)
        var = np.where(n_c > 1, (s2 - n_c * mean**2) / np.maximum(n_c - 1, 1), np.nan)
        se = np.sqrt(np.maximum(var, 0) / np.maximum(n_c, 1))
    return pd.DataFrame(
        {
            "period": np.arange(T + 1),
            "customers": n_c.astype(np.int64),
            "referrals": s1.astype(np.int64),
            "referrals_per_customer": mean,
            "se": se,
        }
    )


#: Former name of :func:`referrals_by_adoption_period`, kept so that code written for it keeps working.
reproduction_by_period = referrals_by_adoption_period


def referral_tree_summary(runs: Runs, degrees: np.ndarray | Sequence[np.ndarray] | None = None) -> pd.DataFrame:
    """Headline referral-tree statistics, one row per statistic (pooled over runs).

    Rows: adoptions, word-of-mouth share of adoptions, mean referrals per customer, share
    of customers who referred at least one, largest number of referrals by one customer,
    mean and largest generation, and (when ``degrees`` is given) the share of referrals
    made by the top-decile-degree organisations.

    Returns
    -------
    pandas.DataFrame
        ``statistic``, ``value``.
    """
    runs = _as_list(runs)
    wom = word_of_mouth_by_period(runs)
    per = referrals_per_customer(runs)
    gen = generations(runs)
    customers = max(int(per["customers"].sum()), 1)
    rows = [
        ("adoptions (after period 0)", float(wom["adoptions"].sum())),
        ("word-of-mouth share of adoptions", float(wom["word_of_mouth"].sum() / max(wom["adoptions"].sum(), 1))),
        ("mean referrals per customer", float((per["referrals"] * per["customers"]).sum() / customers)),
        ("share of customers who referred", float(per.loc[per["referrals"] > 0, "customers"].sum() / customers)),
        ("most referrals by one customer", float(per["referrals"].max())),
        ("mean generation", float((gen["generation"] * gen["customers"]).sum() / max(int(gen["customers"].sum()), 1))),
        ("deepest generation", float(gen["generation"].max())),
    ]
    if degrees is not None:
        top = top_degree_referral_share(runs, degrees)
        rows.append(
            ("top-decile-degree share of referrals", float(top["top_referrals"].sum() / max(top["referrals"].sum(), 1)))
        )
    return pd.DataFrame(rows, columns=["statistic", "value"])
