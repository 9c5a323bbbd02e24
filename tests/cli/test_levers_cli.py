"""``womlab levers``: a results folder from the shipped invented demo's form; bad input is one line, exit 2
(common practice for command-line tools, as in tests/cli/test_cli.py)."""

from __future__ import annotations

import pandas as pd
import pytest

from womlab.cli import main

BASE = (
    'name = "invented levers cli test"\nseed = 1\n[market]\norganisations = 200\ninitial_customers = 2\n'
    'regions = 2\nopens = [{region = 1, period = "never"}]\n[network]\nkind = "random"\nmean_degree = 6\n'
    '[run]\nperiods = 10\nreplicates = 5\n[referral]\nenrol = "all"\ntalk_multiplier = 2.0\nreward = 1.0\n'
)
LEVERS = (
    "[levers]\npulled_at = [0, 4, 8]\nlifetime = 10\n[levers.referral]\n[levers.campaign]\nperiods = 2\n"
    "multiplier = 4.0\ncost_per_period = 2.0\n[levers.open_region]\nregion = 1\ncost = 5.0\n"
)


def test_levers_writes_its_folder(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(BASE + LEVERS)
    assert main(["levers", "s.toml", "--out", "out", "--quiet"]) == 0
    for name in (
        "levers.csv",
        "levers_best.csv",
        "levers_crossover.csv",
        "levers_stage.csv",
        "levers_runs.csv",
        "levers_curve.csv",
        "levers.png",
        "manifest.json",
    ):
        assert (tmp_path / "out" / name).is_file(), name
    table = pd.read_csv(tmp_path / "out" / "levers.csv")
    assert len(table) == 3 * 3 and set(table["lever"]) == {"referral", "campaign", "open_region"}
    runs = pd.read_csv(tmp_path / "out" / "levers_runs.csv")
    assert len(runs) == 3 * 3 * 5
    assert "best lever by incremental_value" in capsys.readouterr().out


@pytest.mark.parametrize(
    ("extra", "words"),
    [
        ("[levers]\n[levers.next_product]\n", "levers.next_product"),
        (
            "[levers]\npulled_at = [10]\n[levers.referral]\n",
            "levers.pulled_at must be a period between 0 and run.periods - 1 = 9 (a lever pulled at the end of period t acts from t + 1), got 10",
        ),
        (
            "[levers]\n[levers.open_region]\nregion = 0\n",
            "levers.open_region.region must be a region or segment that market.opens lists",
        ),
    ],
)
def test_bad_levers_are_one_line_exit_2(tmp_path, monkeypatch, capsys, extra, words):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(BASE + extra)
    assert main(["levers", "s.toml", "--out", "out", "--quiet"]) == 2
    err = [line for line in capsys.readouterr().err.splitlines() if line]
    assert len(err) == 1 and err[0].startswith("womlab: error: ") and words in err[0], err


def test_levers_without_a_levers_section_is_one_line(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(BASE)
    assert main(["levers", "s.toml", "--out", "out", "--quiet"]) == 2
    err = [line for line in capsys.readouterr().err.splitlines() if line]
    assert len(err) == 1 and "levers must name at least one lever" in err[0], err


def test_check_plans_the_levers_study_and_by_roi_runs(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(BASE + LEVERS)
    assert main(["check", "s.toml"]) == 0
    out = capsys.readouterr().out
    # the baseline and 3 levers x 3 periods, on 5 replicates
    assert "levers    3 levers (referral, campaign, open_region) x 3 periods pulled" in out
    assert "50 runs" in out
    assert main(["levers", "s.toml", "--out", "out", "--quiet", "--by", "roi"]) == 0
    best = pd.read_csv(tmp_path / "out" / "levers_best.csv")
    assert "roi" in best.columns
