"""Confidence intervals over replicates (womlab.studies.intervals): the one helper every study uses.

Coverage checks run on synthetic data with known truth at the replicate counts the README's
experiments use (20 and 24). Each draws 500 data sets per count (1,000 in all) from fixed seeds;
the estimated coverage of a 95 % interval has a binomial standard error of
√(0.95 · 0.05 / 1000) = 0.0069, and the tolerance, fixed before looking, is three of them:
0.929 ≤ coverage ≤ 0.971. The percentile bootstrap these intervals replace covered 89–93 % on
such data, below the band (experiments/literature/interval_coverage.py measures both).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import stats

from womlab.aggregate import bass_share
from womlab.studies.intervals import (
    FewReplicatesWarning,
    bootstrap_interval,
    mean_interval,
    median_interval,
    ratio_standard_error,
    small_sample_level,
    t_interval,
)
from womlab.studies.metrics import mean_curve_interval, pooled_metrics, time_to_share
from womlab.studies.seeding_study import lift_statistics

LOW, HIGH = 0.95 - 3 * np.sqrt(0.95 * 0.05 / 1000), 0.95 + 3 * np.sqrt(0.95 * 0.05 / 1000)


# ----------------------------------------------------------------------------- against scipy and by hand
def test_t_interval_is_scipys_student_t_interval():
    # reference library: scipy.stats.t.interval
    x = np.array([3.1, 4.7, 2.2, 5.9, 4.4, 3.8])
    ci = t_interval(x)
    lo, hi = stats.t.interval(0.95, x.size - 1, loc=x.mean(), scale=x.std(ddof=1) / np.sqrt(x.size))
    assert (ci.low, ci.high) == pytest.approx((lo, hi)) and ci.method == "t" and ci.note == ""


def test_an_interval_past_the_feasible_range_is_clipped_and_says_so():
    # a share interval from -0.48 to 0.86 (the t interval of three shares) is cut at 0
    x = np.array([0.02, 0.05, 0.5])
    raw = t_interval(x)
    assert raw.low < 0
    ci = t_interval(x, bounds=(0.0, 1.0))
    assert ci.low == 0.0 and ci.high == pytest.approx(raw.high) and ci.note == "clipped to [0, 1]"
    assert t_interval(x + 0.3, bounds=(0.0, 1.0)).high == 1.0


@pytest.mark.parametrize("n", [1, 4])
def test_too_few_replicates_give_no_interval_and_a_warning(n):
    # one replicate used to give a zero-width bootstrap interval; below five there is none
    x = np.arange(1.0, n + 1.0)
    with pytest.warns(FewReplicatesWarning, match=f"{n} replicate"):
        ci = bootstrap_interval(lambda i: x[i].mean(axis=-1), n, rng=np.random.default_rng(0))
    assert np.isnan(ci.low) and np.isnan(ci.high) and ci.missing
    if n == 1:
        with pytest.warns(FewReplicatesWarning):
            assert np.isnan(mean_interval(x)[1])
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FewReplicatesWarning)
            table = pooled_metrics(np.array([[0.0, 0.3, 0.6, 0.9]]), bootstrap=50)
        assert table["network_low"].isna().all() and table["network_high"].isna().all()


def test_small_sample_level_widens_a_normal_interval_to_a_t_interval():
    # Hesterberg (2015): z at the expanded level equals t(n - 1) * sqrt(n / (n - 1))
    for n in (5, 20, 24):
        z = stats.norm.ppf(0.5 + small_sample_level(0.95, n) / 2)
        assert z == pytest.approx(stats.t.ppf(0.975, n - 1) * np.sqrt(n / (n - 1)))


def test_ratio_standard_error_is_the_delta_method_one():
    # Cochran (1977), Sampling Techniques, §6.3: Var(x̄ / b̄) ≈ Var(x - R b) / (n b̄²), by hand
    x, b = np.array([4.0, 6.0, 5.0, 9.0]), np.array([2.0, 3.0, 3.0, 4.0])
    r = x.mean() / b.mean()
    assert ratio_standard_error(x, b) == pytest.approx(np.std(x - r * b, ddof=1) / (2 * b.mean()))


def test_median_interval_uses_the_binomial_order_statistics():
    # Conover (1999), §3.2: for n = 20 the 95 % interval of the median is [x(6), x(15)], with
    # coverage 1 - 2 P(Bin(20, 1/2) <= 5) = 0.9586
    x = np.arange(1.0, 21.0)
    median, ci = median_interval(x)
    assert (median, ci.low, ci.high) == (10.5, 6.0, 15.0)
    assert 1 - 2 * stats.binom.cdf(5, 20, 0.5) == pytest.approx(0.9586, abs=1e-4)
    # runs that never reach the level sort after every observed time: 15 of 20 observed
    censored = np.r_[np.arange(1.0, 16.0), [np.nan] * 5]
    median, ci = median_interval(censored, censored_above=30)
    assert median == 10.5 and ci.low == 6.0 and ci.high == 15.0
    # 14 observed: the upper bound is a run that never reached the level, beyond the horizon
    median, ci = median_interval(censored[1:], censored_above=30)
    assert np.isnan(ci.high) and ci.note == "censored at 30"
    # more than half censored: the median is beyond the horizon (NaN), never a small number
    median, ci = median_interval(np.r_[np.arange(1.0, 9.0), [np.nan] * 12], censored_above=30)
    assert np.isnan(median) and np.isnan(ci.high) and ci.low == 6.0


def test_studentised_interval_of_a_mean_matches_the_t_interval_on_normal_data():
    # Efron & Tibshirani (1993), ch. 12: for normal data the bootstrap-t interval approaches the
    # t interval; at n = 200 within 10 % of its half-width (tolerance fixed before looking)
    x = np.random.default_rng(3).normal(10.0, 2.0, 200)
    ci = bootstrap_interval(
        lambda i: x[i].mean(axis=-1),
        x.size,
        rng=np.random.default_rng(4),
        standard_error=lambda i: x[i].std(axis=-1, ddof=1) / np.sqrt(x.size),
    )
    ref = t_interval(x)
    half = (ref.high - ref.low) / 2
    assert ci.low == pytest.approx(ref.low, abs=0.1 * half) and ci.high == pytest.approx(ref.high, abs=0.1 * half)


# ----------------------------------------------------------------------------- coverage, known truth
def _paired_counts(rng: np.random.Generator, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Seeding-like outcomes: baseline customers b = Poisson(Gamma(1.5, 40)) + 3 (skewed, E b = 63),
    the strategy x = Poisson(2 b). Truth: E x / E b = 2 and E(x - b) = E b = 63."""
    b = rng.poisson(rng.gamma(1.5, 40.0, n)) + 3.0
    return rng.poisson(2.0 * b).astype(float), b


def test_lift_intervals_cover_at_the_usual_replicate_counts():
    hits_ratio = hits_diff = 0
    for n, seed in ((20, 101), (24, 102)):
        rng = np.random.default_rng(seed)
        for _ in range(500):
            x, b = _paired_counts(rng, n)
            out = lift_statistics(x, b, rng=rng, resamples=1000)
            hits_ratio += out["lift_ratio_low"] <= 2.0 <= out["lift_ratio_high"]
            hits_diff += out["lift_diff_low"] <= 63.0 <= out["lift_diff_high"]
    assert LOW <= hits_ratio / 1000 <= HIGH, hits_ratio
    assert LOW <= hits_diff / 1000 <= HIGH, hits_diff


def _bass_curves(zq: np.ndarray, zp: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Bass curves (Bass 1969) with log-normal p = 0.01 e^{0.5 z_p} and Q = 0.4 e^{0.35 z_q}, F(0) = 0.01."""
    return np.array([bass_share(t, 0.01 * np.exp(0.5 * b), 0.4 * np.exp(0.35 * a), 0.01) for a, b in zip(zq, zp)])


def test_t50_of_the_mean_curve_interval_covers_at_the_usual_replicate_counts():
    # truth: t50 of the population mean curve on the same grid, the mean by 60 x 60-point
    # Gauss-Hermite quadrature over the two normal scores (exact to far below the intervals' width)
    t = np.arange(31.0)
    nodes, weights = np.polynomial.hermite_e.hermegauss(60)
    weights = weights / weights.sum()
    a, b = np.meshgrid(nodes, nodes)
    mean = (_bass_curves(a.ravel(), b.ravel(), t) * np.outer(weights, weights).ravel()[:, None]).sum(axis=0)
    truth = time_to_share(mean, 0.5)
    hits = 0
    for n, seed in ((20, 202620), (24, 202624)):
        rng = np.random.default_rng(seed)
        for _ in range(500):
            shares = _bass_curves(rng.normal(size=n), rng.normal(size=n), t)
            ci = mean_curve_interval(shares, "t50", bootstrap=499, rng=rng)
            hits += ci.low <= truth <= ci.high
    assert LOW <= hits / 1000 <= HIGH, hits


def test_the_command_says_in_one_line_that_there_is_no_interval(tmp_path, capsys):
    # common practice for this command line: a warning is one line on standard error, as an error is
    from womlab.cli import main

    config = tmp_path / "study.toml"
    config.write_text(
        'name = "invented: too few replicates"\nseed = 3\n[market]\norganisations = 150\n'
        '[network]\nkind = "random"\nmean_degree = 5\n[run]\nperiods = 10\n'
        '[seeding]\nbudget = 3\n[study]\nstrategies = ["hubs"]\nbootstrap = 200\n',
        encoding="utf-8",
    )
    capsys.readouterr()
    assert main(["seeding", str(config), "--out", str(tmp_path / "out"), "--quiet", "--replicates", "3"]) == 0
    err = [line for line in capsys.readouterr().err.splitlines() if line.strip()]
    assert err and all(line.startswith("womlab: warning: 3 replicate(s): no ") for line in err), err
