"""The ABC-SMC (womlab.studies.smc) on problems whose posterior is known."""

from __future__ import annotations

import numpy as np
import pytest

from womlab.studies.smc import SMCSettings, WorkingPrior, abc_smc, effective_sample_size, weighted_quantile

YBAR, N_OBS = 0.7, 10


def _normal_mean(models, theta, keys):  # noqa: ANN001, ANN202
    out = []
    for key, th in zip(keys, theta):
        rng = np.random.default_rng(np.random.SeedSequence(17, spawn_key=key))
        out.append(abs(rng.normal(th[0], 1.0, N_OBS).mean() - YBAR))
    return np.array(out)


def test_normal_mean_posterior_matches_the_conjugate_result():
    # Gelman et al. (2013), Bayesian Data Analysis, 3rd ed., §2.5: y_i ~ N(μ, 1), flat prior,
    # posterior N(ȳ, 1/n); ȳ is sufficient, so the ABC posterior tends to it as ε → 0 (at ε it
    # is that posterior convolved with a width-ε window, sd √(1/n + ε²/3)).
    # Tolerances fixed before looking: mean within 0.1 (a third of the posterior sd; the
    # Monte Carlo error with ESS ≈ 500 is ≈ 0.015, generations are correlated), sd within 20 %.
    res = abc_smc(
        [WorkingPrior("mu", "uniform", -5.0, 5.0)],
        _normal_mean,
        seed=8,
        settings=SMCSettings(particles=800, generations=6, simulations=40_000),
    )
    pop = res.final
    mean = np.average(pop.theta[:, 0], weights=pop.weights)
    sd = np.sqrt(np.average((pop.theta[:, 0] - mean) ** 2, weights=pop.weights))
    target_sd = np.sqrt(1 / N_OBS + pop.tolerance**2 / 3)
    assert abs(mean - YBAR) < 0.1
    assert sd == pytest.approx(target_sd, rel=0.2)
    assert pop.tolerance < 0.15
    assert [g["generation"] for g in res.generations] == list(range(len(res.populations)))


def test_log_uniform_prior_works_on_the_log_scale_and_whole_fields_round():
    p = WorkingPrior("n", "log_uniform", 10.0, 1000.0, whole=True)
    u = p.sample(np.random.default_rng(0), 5000)
    assert np.all((u >= np.log(10)) & (u <= np.log(1000)))
    v = p.value(u)
    assert np.array_equal(v, np.round(v))
    # log-uniform: half the mass below the geometric midpoint √(10·1000) = 100
    assert np.mean(v < 100) == pytest.approx(0.5, abs=0.03)
    assert np.isinf(p.log_density(np.array([np.log(5.0)]))[0])


def test_model_choice_puts_the_mass_on_the_model_that_made_the_data():
    # Toni et al. (2009) ABC-SMC model selection. Data: 40 draws of N(0.3, 1) with sample sd
    # 1.0; model 0 says sd 1, model 1 says sd 3, so the sample sd tells them apart.
    # Threshold fixed before looking: P(model 0) >= 0.8 (common practice: a statistic that
    # separates the models concentrates the posterior on the true one).
    def simulate(models, theta, keys):  # noqa: ANN001, ANN202
        out = []
        for key, m, th in zip(keys, models, theta):
            rng = np.random.default_rng(np.random.SeedSequence(23, spawn_key=key))
            y = rng.normal(th[0], 1.0 if m == 0 else 3.0, 40)
            out.append(np.hypot(y.mean() - 0.3, y.std(ddof=1) - 1.0))
        return np.array(out)

    res = abc_smc(
        [WorkingPrior("mu", "uniform", -3.0, 3.0)],
        simulate,
        seed=2,
        models=2,
        settings=SMCSettings(particles=300, generations=5, simulations=12_000),
    )
    probs = res.final.model_probabilities(2)
    assert probs[0] >= 0.8
    assert probs.sum() == pytest.approx(1.0)


def test_same_seed_same_result_and_budget_stops():
    settings = SMCSettings(particles=50, generations=8, simulations=400)
    prior = [WorkingPrior("mu", "uniform", -5.0, 5.0)]
    a = abc_smc(prior, _normal_mean, seed=1, settings=settings)
    b = abc_smc(prior, _normal_mean, seed=1, settings=settings)
    assert np.array_equal(a.final.theta, b.final.theta) and np.array_equal(a.final.weights, b.final.weights)
    assert a.simulations <= 400 and "budget" in a.stopped


def test_weighted_quantile_equal_weights_is_numpys_hazen_quantile():
    # Hyndman & Fan (1996), "Sample quantiles in statistical packages", definition 5
    # (numpy method "hazen"): with equal weights the weighted quantile reduces to it.
    x = np.random.default_rng(3).normal(size=101)
    for q in (0.05, 0.25, 0.5, 0.9):
        assert weighted_quantile(x, np.ones(101), q) == pytest.approx(np.quantile(x, q, method="hazen"))
    assert effective_sample_size(np.array([1.0, 1.0, 0.0, 0.0])) == 2.0
