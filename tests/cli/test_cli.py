"""The ``womlab`` command line: what a new user tripped over, each turned into a check.

That a mistake is one line naming the option or field (exit status 2), that nothing runs
before the output folder is known to be usable, and that a closed pipe ends the output
quietly are common practice for command-line tools (exit status 2 for usage errors is
the convention of argparse and of POSIX utilities).
"""

from __future__ import annotations

import io
import json
import sys

import pytest

from womlab.cli import build_parser, main

BASE = (
    'name = "invented cli test"\nseed = 1\n[market]\norganisations = 200\ninitial_customers = 2\n'
    '[network]\nkind = "random"\nmean_degree = 6\n[run]\nperiods = 8\nreplicates = 3\n'
)


@pytest.fixture
def config(tmp_path, monkeypatch):  # noqa: ANN201
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(BASE)
    return tmp_path / "s.toml"


def _err_lines(capsys) -> list[str]:  # noqa: ANN001
    return [line for line in capsys.readouterr().err.strip().splitlines() if line]


def test_check_is_listed_first():
    import argparse

    parser = build_parser()
    (sub,) = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    listed = [a.dest for a in sub._choices_actions]  # the order --help lists them in
    assert listed[0] == "check" and {"check", "run", "seeding", "referral", "compare", "sweep", "report"} <= set(listed)
    help_text = parser.format_help()
    assert help_text.index("  check") < help_text.index("  run")


def test_replicates_zero_speaks_of_replicates(config, capsys):
    with pytest.raises(SystemExit) as exit_:
        main(["run", "s.toml", "--replicates", "0"])
    assert exit_.value.code == 2
    (line,) = _err_lines(capsys)
    assert line.startswith("womlab: error: argument --replicates: the number of replicates must be at least 1, got 0")
    assert "core" not in line


@pytest.mark.parametrize(
    "args, start",
    [
        (["--seed", "-3"], "womlab: error: argument --seed: the seed must be a whole number >= 0, got -3"),
        (["--jobs", "0"], "womlab: error: argument --jobs: the number of worker processes must be >= 1"),
        (["--figure-size", "big"], "womlab: error: argument --figure-size: the figure size must be WIDTHxHEIGHT"),
    ],
)
def test_a_bad_option_is_one_line_naming_it(config, capsys, args, start):
    with pytest.raises(SystemExit) as exit_:
        main(["run", "s.toml", *args])
    assert exit_.value.code == 2
    (line,) = _err_lines(capsys)
    assert line.startswith(start)


def test_out_is_checked_before_any_run(config, capsys, monkeypatch):
    import womlab.studies

    def must_not_run(*args, **kwargs):  # noqa: ANN002, ANN003, ANN202
        raise AssertionError("a run started before --out was checked")

    monkeypatch.setattr(womlab.studies, "run_replicates", must_not_run)
    (config.parent / "taken").write_text("not a folder")
    assert main(["run", "s.toml", "--out", "taken", "--quiet"]) == 2
    assert _err_lines(capsys) == ["womlab: error: --out 'taken' exists and is not a folder"]


def test_set_and_seed_change_the_scenario_and_are_recorded(config, capsys):
    assert (
        main(
            ["run", "s.toml", "--set", "run.periods=5", "--set", "adoption.word_of_mouth=0.2", "--seed", "7", "--quiet"]
        )
        == 0
    )
    m = json.loads((config.parent / "out" / "s-run" / "manifest.json").read_text())  # the default folder
    assert m["scenario"]["run"]["periods"] == 5 and m["scenario"]["adoption"]["word_of_mouth"] == 0.2
    assert m["root_seed"] == 7 and m["command_line"][:2] == ["womlab", "run"]
    assert main(["run", "s.toml", "--set", "adoption.wom=0.2", "--quiet"]) == 2
    (line,) = _err_lines(capsys)
    assert line.startswith("womlab: error: unknown field 'adoption.wom'") and "word_of_mouth" in line


def test_a_field_without_effect_is_a_warning_line(config, capsys):
    assert main(["check", "s.toml", "--set", "adoption.cap=0.2"]) == 0
    warnings = [line for line in _err_lines(capsys) if line.startswith("womlab: warning:")]
    assert warnings == [
        'womlab: warning: adoption.cap = 0.2 has no effect: adoption.rule = "share" '
        "(only the capped rule has a ceiling)"
    ]


def test_check_says_what_each_command_will_run(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "e.csv").write_text("source,target\n" + "".join(f"{i},{(i + 1) % 30}\n" for i in range(30)))
    (tmp_path / "n.csv").write_text("id,region\n" + "".join(f"{i},{'abc'[i % 3]}\n" for i in range(30)))
    (tmp_path / "s.toml").write_text(
        'name = "invented"\n[market]\ninitial_customers = 1\n[network]\nkind = "edgelist"\npath = "e.csv"\n'
        'nodes_path = "n.csv"\n[adoption]\nexternal = 0.0\n[run]\nreplicates = 100\njobs = 100000\n'
        '[study]\nstrategies = ["random", "hubs"]\nreplicates = 40\n'
        '[referral]\nenrol = "all"\nend = 12\ntalk_multiplier = 1.6\nreward = 20.0\nbudget = 6000.0\n'
        '[sweep]\nreplicates = 4\n[sweep.axes]\n"adoption.word_of_mouth" = { from = 0.1, to = 0.5, steps = 5 }\n'
        '"referral.reward" = [10.0, 20.0]\n'
        '[fit]\nfree = ["adoption.word_of_mouth"]\nparticles = 50\nsimulations = 700\n'
    )
    assert main(["check", "s.toml"]) == 0
    out = capsys.readouterr().out
    lines = {line.split()[0]: line for line in out.splitlines() if line.startswith("  ")}
    assert lines["regions"].split()[1] == "3"  # the node file's regions, not 1
    assert "Q <= p" not in out and "at the start" not in lines["Bass"]  # p = 0 with one initial customer: logistic
    assert "capped at the" in out  # jobs = 100000
    assert "2 strategies (random, hubs) x 40 paired replicates (study.replicates)" in out  # not 100
    assert "80 runs" in out
    assert "grid design: 10 points x 4 replicates" in out and "40 runs" in out
    assert "enrol all, periods 1-12, word of mouth x1.6, reward 20 per successful referral, budget 6000" in out
    assert "200 runs" in out  # programme and baseline, 100 replicates each
    assert "ABC-SMC over adoption.word_of_mouth: 50 particles" in out and "700 runs" in out  # the budget


def test_check_warns_of_slow_strategies(config, capsys):
    assert (
        main(
            [
                "check",
                "s.toml",
                "--set",
                "market.organisations=12000",
                "--set",
                "run.replicates=100",
                "--set",
                'study.strategies=["random", "bridges"]',
            ]
        )
        == 0
    )
    out = capsys.readouterr().out
    assert "slow (seeding): bridges: sampled betweenness from 500 of 12,000 organisations" in out


def test_a_closed_pipe_ends_quietly(config, capsys, monkeypatch):
    class Closed(io.StringIO):
        def write(self, text: str) -> int:
            raise BrokenPipeError(32, "Broken pipe")

    monkeypatch.setattr(sys, "stdout", Closed())
    assert main(["check", "s.toml"]) == 141
    assert "Traceback" not in capsys.readouterr().err


def test_figure_format_size_and_the_network_figure_on_request(config, capsys):
    assert (
        main(
            [
                "seeding",
                "s.toml",
                "--set",
                "market.organisations=700",
                "--set",
                'study.strategies=["hubs"]',
                "--replicates",
                "2",
                "--network-figure",
                "--figure-format",
                "svg",
                "--figure-size",
                "6x4",
                "--out",
                "o",
                "--quiet",
            ]
        )
        == 0
    )
    names = {p.name for p in (config.parent / "o").iterdir()}
    assert {"seeding.svg", "network.svg", "manifest.json"} <= names  # 700 organisations: above the default 600
    assert 'width="432pt" height="288pt"' in (config.parent / "o" / "seeding.svg").read_text()[:2000]
    assert "variance_reduction: 1 - Var(strategy - random)" in capsys.readouterr().out


def test_a_binding_budget_says_so(config, capsys):
    assert (
        main(
            [
                "referral",
                "s.toml",
                "--set",
                'referral.enrol="all"',
                "--set",
                "referral.reward=50.0",
                "--set",
                "referral.budget=60.0",
                "--out",
                "r",
                "--quiet",
            ]
        )
        == 0
    )
    out = capsys.readouterr().out
    assert "budget cap 60 bound: spent in 3 of 3 replicates" in out


def test_errors_are_one_line(config, capsys):
    (config.parent / "bad.toml").write_bytes(b"\x00\x01binary")
    assert main(["run", "bad.toml", "--quiet"]) == 2
    (line,) = _err_lines(capsys)
    assert line.startswith("womlab: error: bad.toml: is not a text file")
