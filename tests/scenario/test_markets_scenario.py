"""[segments] and [[campaign]]: read from TOML, written back, and bad input refused in one line naming the field.

The rules checked are womlab's own (common practice for validation: name the field, the value and
what is allowed).
"""

from __future__ import annotations

import tomllib

import pytest

from womlab import Scenario, ScenarioError, load_scenario

TOML = """
[market]
organisations = 1000
[run]
periods = 30
[segments.influentials]
share = 0.1
external = 2.0
word_of_mouth = 1.5
[segments.imitators]
share = 0.9
satisfied_share = 0.5
[[campaign]]
from = 3
to = 6
external = 0.05
segment = "imitators"
[[campaign]]
from = 10
to = 12
multiplier = 3
"""


def test_read_from_toml_and_written_back(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(TOML)
    s = load_scenario(path)
    assert s.segments.names == ("influentials", "imitators")
    assert s.segments.groups[1].satisfied_share == 0.5
    assert [(c.first, c.last, c.segment) for c in s.campaign.entries] == [(3, 6, "imitators"), (10, 12, None)]
    again = Scenario.from_dict(s.to_dict())
    assert again == s
    assert s.replace("segments.influentials.word_of_mouth", 3.0).segments.groups[0].word_of_mouth == 3.0
    assert tomllib.loads(TOML)["campaign"][1] == again.to_dict()["campaign"][1]


def _with(**changes):
    data = tomllib.loads(TOML)
    data.update(changes)
    return data


@pytest.mark.parametrize(
    "changes,message",
    [
        (
            {"segments": {"a": {"share": 0.3}, "b": {"share": 0.6}}},
            r"segments shares must sum to 1, got 0\.9 \(a = 0\.3, b = 0\.6\)",
        ),
        (
            {"segments": {"a": {"share": 1.0, "word_of_mouth": -1}}},
            r"segments\.a\.word_of_mouth must be a finite number >= 0, got -1",
        ),
        ({"segments": {"a": {"share": 1.0, "reach": 2}}}, r"unknown field 'segments\.a\.reach'"),
        ({"segments": {"a": {}}}, r"segments\.a\.share must be a share of the market"),
        (
            {"campaign": [{"from": 3, "to": 6, "external": 0.05}, {"from": 6, "to": 8, "multiplier": 2}]},
            r"campaign\[1\] \(periods 6-8\) overlaps campaign\[0\] \(periods 3-6\) on the whole market",
        ),
        (
            {
                "campaign": [
                    {"from": 3, "to": 6, "external": 0.05, "segment": "imitators"},
                    {"from": 5, "to": 8, "multiplier": 2, "segment": "imitators"},
                ]
            },
            r"overlaps campaign\[0\] \(periods 3-6\) on segment 'imitators'",
        ),
        (
            {"campaign": [{"from": 25, "to": 31, "external": 0.05}]},
            r"campaign\[0\]\.to must be a period between campaign\[0\]\.from = 25 and run\.periods = 30, got 31",
        ),
        (
            {"campaign": [{"from": 0, "to": 3, "external": 0.05}]},
            r"campaign\[0\]\.from must be a period between 1 and run\.periods = 30, got 0",
        ),
        ({"campaign": [{"from": 2, "to": 3}]}, r"campaign\[0\] needs exactly one of external"),
        (
            {"campaign": [{"from": 2, "to": 3, "multiplier": -2}]},
            r"campaign\[0\]\.multiplier must be a finite number >= 0, got -2",
        ),
        (
            {"campaign": [{"from": 2, "to": 3, "external": 0.1, "segment": "others"}]},
            r"campaign\[0\]\.segment must be one of the \[segments\] names \(influentials, imitators\), got 'others'",
        ),
        (
            {"campaign": [{"from": 2, "to": 3, "external": 0.1, "region": 4}]},
            r"campaign\[0\]\.region must be a region code between 0 and market\.regions - 1 = 0, got 4",
        ),
        (
            {"run": {"periods": 30, "clock": "continuous"}},
            r'\[segments\] \(organisations that differ by segment\) runs on run\.clock = "discrete" only',
        ),
    ],
)
def test_bad_input_is_one_line_naming_the_field(changes, message):
    with pytest.raises(ScenarioError, match=message) as caught:
        Scenario.from_dict(_with(**changes))
    assert "\n" not in str(caught.value)


def test_campaign_alone_on_the_continuous_clock_is_refused():
    with pytest.raises(
        ScenarioError,
        match=r"\[\[campaign\]\] \(external influence that changes by period\) runs on "
        r'run\.clock = "discrete" only',
    ):
        Scenario.from_dict({"run": {"clock": "continuous"}, "campaign": [{"from": 1, "to": 2, "multiplier": 2}]})


def test_a_segment_field_can_be_a_sweep_axis():
    from womlab.scenario import field_type

    assert field_type("segments.influentials.word_of_mouth") is float
    with pytest.raises(
        ScenarioError, match=r"segments\.influentials is not a field; name one as segments\.NAME\.FIELD"
    ):
        field_type("segments.influentials")
    data = _with(sweep={"replicates": 2, "axes": {"segments.influentials.external": [1.0, 3.0]}})
    assert Scenario.from_dict(data).sweep.axes[0].name == "segments.influentials.external"
    point = Scenario.from_dict(tomllib.loads(TOML)).replace("segments.influentials.external", 3.0)
    assert point.segments.groups[0].external == 3.0 and point.segments.groups[1].share == 0.9
