"""The [fit] section: free fields, priors keyed by dotted field, bounds checked against the field."""

from __future__ import annotations

import pytest

from womlab import Scenario, ScenarioError, load_scenario


def test_fit_section_loads_from_toml_and_round_trips(tmp_path):
    # common practice: a section written by to_dict() reads back to the same section.
    path = tmp_path / "s.toml"
    path.write_text(
        'name = "invented"\n[market]\norganisations = 500\n[fit]\nfree = ["adoption.external", '
        '"market.organisations"]\nparticles = 50\nnetwork_kinds = ["random", "ring"]\n[fit.priors]\n'
        '"adoption.external" = { distribution = "log_uniform", low = 0.001, high = 0.1 }\n'
        '"market.organisations" = { distribution = "normal", mean = 600, sd = 100, low = 300 }\n',
        encoding="utf-8",
    )
    s = load_scenario(path)
    assert s.fit.free == ("adoption.external", "market.organisations") and s.fit.particles == 50
    assert s.fit.prior("market.organisations").describe() == "normal (mean 600, sd 100) on [300, unbounded]"
    again = Scenario.from_dict(s.to_dict())
    assert again.fit == s.fit
    assert s.replace("fit.particles", 80).fit.particles == 80


@pytest.mark.parametrize(
    "fit, fragments",
    [
        ({"free": ["adoption.extrenal"]}, ["fit.free[0]", "did you mean"]),
        ({"free": ["run.periods"]}, ["cannot be fitted"]),
        ({"free": ["adoption.rule"]}, ["adoption.rule is str, not a number"]),
        (
            {"free": ["adoption.external"], "priors": {"adoption.word_of_mouth": {"low": 0.1, "high": 1}}},
            ["adoption.word_of_mouth is not a free field"],
        ),
        (
            {"free": ["adoption.satisfied_share"], "priors": {"adoption.satisfied_share": {"low": -0.5, "high": 1}}},
            ["fit.priors.'adoption.satisfied_share'.low = -0.5 is outside", "must be in [0, 1]"],
        ),
        (
            {
                "free": ["adoption.external"],
                "priors": {"adoption.external": {"distribution": "gamma", "low": 0, "high": 1}},
            },
            ["distribution must be one of uniform, log_uniform, normal"],
        ),
        (
            {"free": ["adoption.external"], "priors": {"adoption.external": {"distribution": "normal", "mean": 0.1}}},
            ["sd is required"],
        ),
        (
            {"free": ["adoption.external"], "priors": {"adoption.external": {"low": 0.2, "high": 0.1}}},
            ["high must be > fit.priors.'adoption.external'.low"],
        ),
        ({"network_kinds": ["random", "ring"]}, []),
        ({"network_kinds": ["regional"]}, ["fit.network_kinds[0] = 'regional' does not suit", "market.regions"]),
        ({"particles": 5}, ["fit.particles must be a whole number >= 10"]),
        ({"simulations": 100}, ["fit.simulations must be at least 2 x fit.particles"]),
        ({"quantile": 1.0}, ["fit.quantile must be strictly between 0 and 1"]),
        ({"priorz": {}}, ["unknown field 'fit.priorz'"]),
    ],
)
def test_bad_fit_section_is_one_line_naming_the_field(fit, fragments):
    data = {"market": {"organisations": 500}, "network": {"kind": "random", "mean_degree": 6}, "fit": fit}
    if not fragments:
        assert Scenario.from_dict(data).fit.network_kinds == ("random", "ring")
        return
    with pytest.raises(ScenarioError) as err:
        Scenario.from_dict(data)
    for fragment in fragments:
        assert fragment in str(err.value), (fragment, str(err.value))
