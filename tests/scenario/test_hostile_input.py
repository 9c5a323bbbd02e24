"""Malformed scenario files, --set, and fields that have no effect: one clear line each.

Sources: TOML v1.0.0 ("A TOML file must be a valid UTF-8 encoded Unicode document");
RFC 3629 (UTF-8: 0xFF never appears); The Unicode Standard, §23.8 (the byte-order mark
EF BB BF of UTF-8, FF FE / FE FF of UTF-16). That one line names the field and the value
is common practice, and womlab's own rule (README).
"""

from __future__ import annotations

import warnings

import pytest

from womlab import Scenario, ScenarioError, load_scenario
from womlab.errors import ScenarioWarning
from womlab.scenario import NO_EFFECT, parse_assignment

BASE = (
    'name = "invented probe"\nseed = 1\n[market]\norganisations = 300\ninitial_customers = 3\n'
    '[network]\nkind = "random"\nmean_degree = 6\n[run]\nperiods = 10\nreplicates = 3\n'
)


def _write(tmp_path, data: bytes):  # noqa: ANN202
    p = tmp_path / "s.toml"
    p.write_bytes(data)
    return p


def _one_line(exc: pytest.ExceptionInfo) -> str:
    text = str(exc.value)
    assert "\n" not in text
    return text


@pytest.mark.parametrize(
    "data, words",
    [
        (bytes(range(256)) * 4, "binary data"),  # a binary file
        (BASE.encode("utf-16"), "UTF-16"),  # UTF-16 with its BOM (Unicode §23.8)
        (BASE.encode().replace(b"probe", b"pr\xffobe"), "byte 0xff at line 1"),  # RFC 3629: 0xFF is never UTF-8
        (("x = " + "[" * 100000 + "]" * 100000 + "\n").encode(), "nested too deeply"),
        (("x = " + "{a=" * 5000 + "1" + "}" * 5000 + "\n").encode(), "nested too deeply"),
        (b"", "holds no scenario"),
        (b"# only a comment\n\n# and another\n", "holds no scenario"),
    ],
)
def test_a_malformed_scenario_file_gets_one_line(tmp_path, data, words):
    path = _write(tmp_path, data)
    with pytest.raises(ScenarioError) as exc:
        load_scenario(path)
    text = _one_line(exc)
    assert words in text and str(path) in text


def test_a_utf8_byte_order_mark_is_read_as_utf8(tmp_path):
    # Unicode §23.8: EF BB BF marks UTF-8; editors on some systems write it. The scenario is the same.
    plain = load_scenario(_write(tmp_path, BASE.encode()))
    (tmp_path / "b.toml").write_bytes(b"\xef\xbb\xbf" + BASE.encode())
    assert load_scenario(tmp_path / "b.toml") == plain


def test_the_scenario_file_is_remembered_with_its_hash(tmp_path):
    import hashlib

    path = _write(tmp_path, BASE.encode())
    s = load_scenario(path)
    assert s.source == {"path": str(path), "sha256": hashlib.sha256(BASE.encode()).hexdigest()}


# ----------------------------------------------------------------------------- --set
@pytest.mark.parametrize(
    "text, expected",
    [
        ("adoption.word_of_mouth=0.2", ("adoption.word_of_mouth", 0.2)),
        ("run.periods = 12", ("run.periods", 12)),
        ("network.kind=ring", ("network.kind", "ring")),
        ('name="a = b"', ("name", "a = b")),
        ("study.strategies=['random', 'hubs']", ("study.strategies", ["random", "hubs"])),
    ],
)
def test_set_reads_a_toml_value_or_text(text, expected):
    assert parse_assignment(text) == expected


def test_set_without_equals_is_one_line():
    with pytest.raises(ScenarioError, match="--set must be field=value"):
        parse_assignment("adoption.word_of_mouth")


def test_set_is_validated_as_the_file_is(tmp_path):
    path = _write(tmp_path, BASE.encode())
    s = load_scenario(path, {"adoption.word_of_mouth": 0.2, "run.periods": 12})
    assert s.adoption.word_of_mouth == 0.2 and s.run.periods == 12
    with pytest.raises(ScenarioError, match=r"unknown field 'adoption\.wom'"):
        load_scenario(path, {"adoption.wom": 0.2})
    with pytest.raises(ScenarioError, match=r"adoption\.satisfied_share must be in \[0, 1\], got 1\.4"):
        load_scenario(path, {"adoption.satisfied_share": 1.4})
    with pytest.raises(ScenarioError, match=r"run\.replicates must be a whole number >= 1, got 0"):
        load_scenario(path, {"run.replicates": 0})


# ----------------------------------------------------------------------------- fields without effect
@pytest.mark.parametrize(
    "data, field",
    [
        ({"adoption": {"rule": "share", "cap": 0.2}}, "adoption.cap"),
        ({"network": {"kind": "random", "rewiring": 0.3}}, "network.rewiring"),
        ({"network": {"kind": "complete", "mean_degree": 6}}, "network.mean_degree"),
        ({"referral": {"reward": 20.0}}, "referral.reward"),
        ({"referral": {"enrol": "share", "enrol_share": 0.0, "reward": 20.0}}, "referral.reward"),
        ({"adoption": {"rule": "share", "threshold": {"low": 0.2}}}, "adoption.threshold.low"),
        ({"run": {"clock": "continuous", "time_step": 0.5}}, "run.time_step"),
        ({"seeding": {"greedy_runs": 5}, "study": {"strategies": ["random", "hubs"]}}, "seeding.greedy_runs"),
    ],
)
def test_a_field_without_effect_gets_one_warning_naming_it(data, field):
    lines = Scenario.from_dict(data).fields_without_effect()
    assert len(lines) == 1 and lines[0].startswith(f"{field} = ") and "has no effect" in lines[0]


def test_edge_list_fields_without_effect(tmp_path):
    (tmp_path / "e.csv").write_text("source,target\n1,2\n2,3\n3,4\n4,1\n")
    cfg = tmp_path / "s.toml"
    cfg.write_text('[market]\nregions = 3\n[network]\nkind = "edgelist"\npath = "e.csv"\nmean_degree = 4\n')
    with pytest.warns(ScenarioWarning) as record:
        s = load_scenario(cfg)
    messages = [str(w.message) for w in record]
    assert any(m.startswith("network.mean_degree = ") for m in messages)
    assert any(m.startswith("market.regions = 3 has no effect") for m in messages)
    assert s.network.mean_degree == 2.0  # the file's own, 2 x 4 ties / 4 organisations


def test_defaults_never_warn_and_a_used_field_does_not():
    assert Scenario.from_dict({"adoption": {"rule": "capped", "cap": 0.2}}).fields_without_effect() == []
    assert (
        Scenario.from_dict(
            {"network": {"kind": "small_world", "rewiring": 0.3, "mean_degree": 6}}
        ).fields_without_effect()
        == []
    )
    assert Scenario().fields_without_effect() == []


def test_replace_remembers_what_was_set():
    s = Scenario.from_dict({"market": {"organisations": 500}})
    t = s.replace("adoption.cap", 0.1)
    assert t.given == ("market.organisations", "adoption.cap")
    assert t.fields_without_effect()[0].startswith("adoption.cap = 0.1")


def test_a_sweep_that_makes_a_field_matter_silences_its_warning():
    # the shipped sweep demo's base network is random, and network.kind is swept over regional
    s = Scenario.from_dict(
        {
            "market": {"regions": 5},
            "network": {"kind": "random", "within_region_share": 0.8},
            "sweep": {"axes": {"network.kind": ["random", "regional"]}},
        }
    )
    assert s.fields_without_effect() == []


def test_the_mechanism_takes_new_rules():
    from womlab.scenario.sections import NoEffect

    NO_EFFECT.append(
        NoEffect(
            "adoption.word_of_mouth",
            lambda s: s.adoption.word_of_mouth == 0.123,
            lambda s: "a rule added by a later issue",
        )
    )
    try:
        lines = Scenario.from_dict({"adoption": {"word_of_mouth": 0.123}}).fields_without_effect()
    finally:
        NO_EFFECT.pop()
    assert lines == ["adoption.word_of_mouth = 0.123 has no effect: a rule added by a later issue"]


def test_load_scenario_issues_each_as_a_warning(tmp_path):
    path = _write(tmp_path, (BASE + "[adoption]\ncap = 0.2\n").encode())
    with warnings.catch_warnings(record=True) as record:
        warnings.simplefilter("always")
        load_scenario(path)
    assert [str(w.message).split(" = ")[0] for w in record if w.category is ScenarioWarning] == ["adoption.cap"]


def test_a_listed_seeds_file_never_echoes_another_file(tmp_path):
    # seeding.ids_path pointed at a secrets file must not print its first line (issue 19 part 6)
    (tmp_path / "secret.env").write_text("API_KEY=sk-live-123456\nOTHER=1\n")
    (tmp_path / "s.toml").write_text(
        '[market]\norganisations = 50\n[seeding]\nstrategy = "listed"\nids_path = "secret.env"\n'
    )
    with pytest.raises(ScenarioError) as exc:
        load_scenario(tmp_path / "s.toml")
    text = str(exc.value)
    assert text.startswith("seeding.ids_path: 'secret.env' must have a column 'id'")
    assert "sk-live" not in text and "API_KEY" not in text
