"""Scenario loading and validation: one test per class of error, each naming field, value and range."""

from __future__ import annotations

from pathlib import Path

import pytest

from womlab import Scenario, ScenarioError, load_scenario

ROOT = Path(__file__).resolve().parents[2]


def _s(**sections):
    return Scenario.from_dict(sections)


def test_demo_config_loads():
    s = load_scenario("demo")  # the demo that ships in the package, by name
    assert s.market.organisations == 12_000 and s.market.n_initial == 120
    assert s.network.kind == "regional" and s.market.regions == 6
    assert s.adoption.talkers_per_customer.distribution == "poisson"


def test_unknown_key_suggests_the_nearest():
    with pytest.raises(
        ScenarioError, match=r"unknown field 'adoption.word_of_mouht'; did you mean adoption.'word_of_mouth'"
    ):
        _s(adoption={"word_of_mouht": 0.2})
    with pytest.raises(ScenarioError, match=r"unknown field 'netwrok'"):
        Scenario.from_dict({"netwrok": {}})


def test_wrong_type():
    with pytest.raises(ScenarioError, match=r"market.organisations must be a whole number, got 'many'"):
        _s(market={"organisations": "many"})
    with pytest.raises(ScenarioError, match=r"adoption.external must be a number, got True"):
        _s(adoption={"external": True})


@pytest.mark.parametrize(
    "section,field,value",
    [
        ("adoption", "satisfied_share", 1.4),
        ("adoption", "cap", -0.1),
        ("network", "rewiring", 2.0),
        ("network", "within_region_share", -0.5),
        ("market", "initial_share", 1.5),
    ],
)
def test_probabilities_and_shares_in_unit_interval(section, field, value):
    with pytest.raises(ScenarioError, match=rf"{section}.{field} must be in \[0, 1\], got {value}"):
        _s(**{section: {field: value}})


def test_initial_customers_at_most_organisations():
    with pytest.raises(
        ScenarioError, match=r"market.initial_customers must be between 0 and market.organisations = 50, got 51"
    ):
        _s(market={"organisations": 50, "initial_customers": 51})
    assert _s(market={"organisations": 50, "initial_customers": 0}).market.n_initial == 0  # valid: Bass start


def test_initial_customers_and_share_are_alternatives():
    with pytest.raises(ScenarioError, match="alternatives"):
        _s(market={"initial_customers": 5, "initial_share": 0.1})


def test_mean_degree_below_organisations_and_even_where_needed():
    with pytest.raises(
        ScenarioError, match=r"network.mean_degree must be > 0 and < market.organisations = 10, got 10.0"
    ):
        _s(market={"organisations": 10}, network={"kind": "random", "mean_degree": 10})
    with pytest.raises(
        ScenarioError, match=r'network.mean_degree must be an even whole number for kind = "ring", got 5.0'
    ):
        _s(network={"kind": "ring", "mean_degree": 5})


def test_unknown_kind_lists_the_known():
    with pytest.raises(
        ScenarioError,
        match=r"network.kind must be one of complete, ring, .*; got 'smallworld' \(did you mean 'small_world'\?\)",
    ):
        _s(network={"kind": "smallworld"})


def test_missing_edgelist_file():
    with pytest.raises(ScenarioError, match=r"network.path must be an existing CSV file, got 'nowhere.csv'"):
        _s(network={"kind": "edgelist", "path": "nowhere.csv"})


def test_time_step_must_divide_a_period():
    with pytest.raises(ScenarioError, match=r"run.time_step must be 1/n of a period"):
        _s(run={"time_step": 0.3})
    assert _s(run={"time_step": 0.25}).run.steps_per_period == 4


def test_replace_returns_a_new_validated_scenario():
    s = _s(adoption={"word_of_mouth": 0.3})
    t = s.replace("adoption.word_of_mouth", 0.2)
    assert t.adoption.word_of_mouth == 0.2 and s.adoption.word_of_mouth == 0.3
    u = s.replace({"network.kind": "ring", "network.mean_degree": 4, "adoption.talkers_per_customer.mean": 3})
    assert u.network.kind == "ring" and u.adoption.talkers_per_customer.mean == 3
    with pytest.raises(ScenarioError, match="satisfied_share must be in"):
        s.replace("adoption.satisfied_share", 2)
    with pytest.raises(ScenarioError, match="unknown field 'adoption.wom'"):
        s.replace("adoption.wom", 0.1)


def test_round_trip_through_dict():
    s = load_scenario("demo")  # the demo that ships in the package, by name
    assert Scenario.from_dict(s.to_dict()) == s


def test_bad_toml_is_a_scenario_error(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text("[market\norganisations = 3\n")
    with pytest.raises(ScenarioError, match="not valid TOML"):
        load_scenario(p)
    with pytest.raises(ScenarioError, match="does not exist"):
        load_scenario(tmp_path / "none.toml")


def test_edgelist_path_relative_to_the_scenario_file(tmp_path):
    (tmp_path / "ties.csv").write_text("source,target\na,b\nb,c\n")
    (tmp_path / "s.toml").write_text('[network]\nkind = "edgelist"\npath = "ties.csv"\n')
    s = load_scenario(tmp_path / "s.toml")
    assert s.market.organisations == 3
    (tmp_path / "t.toml").write_text('[market]\norganisations = 5\n[network]\nkind = "edgelist"\npath = "ties.csv"\n')
    with pytest.raises(ScenarioError, match=r"market.organisations must match the edge list \(3 organisations"):
        load_scenario(tmp_path / "t.toml")


@pytest.mark.parametrize(
    "path",
    sorted((ROOT / "src" / "womlab" / "scenario" / "demos").glob("*.toml"))
    + sorted((ROOT / "experiments").glob("*/*.toml")),
    ids=lambda p: p.name,
)
def test_every_shipped_scenario_is_valid_and_says_it_is_invented(path):
    # House rule: demo data and examples are an invented scenario of our own, and say so.
    s = load_scenario(path)
    assert "invented" in path.read_text(encoding="utf-8").lower()
    assert s.market.organisations >= 1
