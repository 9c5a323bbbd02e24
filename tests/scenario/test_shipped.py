"""The demo scenarios that ship inside the package, ``womlab init`` and ``womlab --version``.

Expected values: the files themselves (what ``womlab init`` writes is byte for byte the
shipped file); the installed package metadata (importlib.metadata, PEP 566) for the version;
the rest is common practice for a command line (one line on error, exit status 2, nothing
overwritten without being asked).
"""

from __future__ import annotations

from importlib import metadata

import pytest

import womlab
from womlab import ScenarioError, demo_names, load_scenario, write_demo
from womlab.cli import main
from womlab.scenario import demo_path


def test_every_demo_ships_and_loads_by_name() -> None:
    assert demo_names() == [
        "demo",
        "fit-demo",
        "levers-demo",
        "markets-demo",
        "referral-demo",
        "seeding-demo",
        "sweep-demo",
    ]
    for name in demo_names():
        assert load_scenario(name) == load_scenario(demo_path(name))
        assert "invented" in demo_path(name).read_text(encoding="utf-8").lower()


def test_init_writes_a_demo_out_and_never_overwrites_unasked(tmp_path, capsys) -> None:
    assert main(["init", "seeding-demo", "--folder", str(tmp_path)]) == 0
    written = tmp_path / "seeding-demo.toml"
    assert written.read_bytes() == demo_path("seeding-demo").read_bytes()
    assert "womlab run" in capsys.readouterr().out
    written.write_text("# mine\n", encoding="utf-8")
    assert main(["init", "seeding-demo", "--folder", str(tmp_path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "exists; remove it or choose another folder (nothing was written)" in err[0]
    assert written.read_text(encoding="utf-8") == "# mine\n"
    assert main(["init", "seeding-demo", "--folder", str(tmp_path), "--force"]) == 0
    assert written.read_bytes() == demo_path("seeding-demo").read_bytes()


def test_init_lists_the_demos_and_names_them_for_a_wrong_one(tmp_path, capsys) -> None:
    assert main(["init"]) == 0
    assert (
        "demo, fit-demo, levers-demo, markets-demo, referral-demo, seeding-demo, sweep-demo" in capsys.readouterr().out
    )
    with pytest.raises(
        ScenarioError,
        match="no shipped demo scenario 'dmeo'; the demos are demo, fit-demo, levers-demo, markets-demo, referral-demo",
    ):
        write_demo("dmeo", tmp_path)
    assert main(["run", "dmeo"]) == 2
    assert (
        "does not exist (the shipped demos are demo, fit-demo, levers-demo, markets-demo, referral-demo"
        in capsys.readouterr().err
    )


def test_version_has_one_source(capsys) -> None:
    assert womlab.__version__ == metadata.version("womlab")
    with pytest.raises(SystemExit) as done:
        main(["--version"])
    assert done.value.code == 0
    assert capsys.readouterr().out.strip() == f"womlab {metadata.version('womlab')}"


def test_run_a_shipped_demo_by_name_with_per_organisation_results(tmp_path, monkeypatch) -> None:
    monkeypatch.chdir(tmp_path)
    assert main(["run", "demo", "--replicates", "2", "--quiet", "--out", "out", "--organisations", "csv"]) == 0
    lines = (tmp_path / "out" / "organisations.csv").read_text().splitlines()
    assert len(lines) == 1 + 2 * 12_000  # the demo's 12,000 invented firms, two replicates
    assert (tmp_path / "out" / "curves.csv").is_file()


def test_the_fit_demo_is_written_out_with_its_record_and_reads_it(tmp_path) -> None:
    # fit.data_path names the demo's observed record; init writes the two files side by side
    path = write_demo("fit-demo", tmp_path)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["fit-demo-observed.csv", "fit-demo.toml"]
    scenario = load_scenario(path)
    assert scenario.fit.data_path == str((tmp_path / "fit-demo-observed.csv").resolve())
    assert load_scenario("fit-demo").fit.data_path == str(demo_path("fit-demo").with_name("fit-demo-observed.csv"))
