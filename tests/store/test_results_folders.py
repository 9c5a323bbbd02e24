"""A results folder is never a mix, womlab never touches files it did not write, and the manifest reproduces.

Each case is one of the output-folder probes: a run into a folder holding another run's
results replaced some files and kept others; a write that failed midway left new files
beside the old manifest; a run into a sweep folder overwrote the sweep's manifest; a
user's own curves.csv was overwritten without a word; compare wrote compare_manifest.json.
Writing everything aside and moving it in with the manifest last is common practice for
atomic directory updates (rename is atomic within a file system, POSIX rename(2)).
"""

from __future__ import annotations

import hashlib
import json
import os

import pytest

from womlab import Scenario, StoreError, load_scenario, run_replicates, save_batch
from womlab.results import check_output_folder, save_seeding_study
from womlab.store import FolderWriter, ResultsStore
from womlab.studies import compare_strategies


def _scenario(name: str = "invented folder test", **changes) -> Scenario:  # noqa: ANN003
    s = Scenario.from_dict(
        {
            "name": name,
            "seed": 4,
            "market": {"organisations": 200, "initial_customers": 2},
            "network": {"kind": "random", "mean_degree": 6},
            "run": {"periods": 8},
        }
    )
    return s.replace(changes) if changes else s


@pytest.fixture(scope="module")
def batches():  # noqa: ANN201
    return run_replicates(_scenario(), 2), run_replicates(_scenario("another invented scenario"), 2)


def _snapshot(folder) -> dict[str, bytes]:  # noqa: ANN001
    return {p.name: p.read_bytes() for p in folder.iterdir()}


def test_a_file_or_a_path_under_a_file_is_refused(tmp_path, batches):
    (tmp_path / "f").write_text("not a folder")
    for out in (tmp_path / "f", tmp_path / "f" / "sub"):
        with pytest.raises(StoreError, match="is a file|not a folder"):
            check_output_folder(out, "run", _scenario())
        with pytest.raises(StoreError):
            save_batch(batches[0], out)
    assert (tmp_path / "f").read_text() == "not a folder"


def test_another_scenarios_results_are_refused_unless_forced(tmp_path, batches):
    out = tmp_path / "o"
    save_batch(batches[0], out)
    before = _snapshot(out)
    with pytest.raises(StoreError, match=r"another scenario \(scenario.name: .*\); use --force"):
        save_batch(batches[1], out)
    assert _snapshot(out) == before
    save_batch(batches[1], out, force=True)
    assert json.loads((out / "manifest.json").read_text())["scenario"]["name"] == "another invented scenario"


def test_the_same_scenario_may_be_rewritten_with_more_replicates(tmp_path, batches):
    out = tmp_path / "o"
    save_batch(batches[0], out)
    save_batch(run_replicates(_scenario(), 3), out)  # replicates and jobs are not part of what must match
    assert json.loads((out / "manifest.json").read_text())["replicates"] == 3


def test_another_commands_results_are_refused_and_force_removes_only_womlabs(tmp_path, batches):
    out = tmp_path / "o"
    s = _scenario().replace("study.strategies", ["random", "hubs"])
    save_seeding_study(compare_strategies(s, replicates=2), out)
    (out / "notes.txt").write_text("mine")
    with pytest.raises(StoreError, match="holds the results of womlab seeding"):
        save_batch(batches[0], out)
    save_batch(batches[0], out, force=True)
    names = {p.name for p in out.iterdir()}
    assert "notes.txt" in names and (out / "notes.txt").read_text() == "mine"
    assert "strategies.csv" not in names  # womlab's own seeding files went with the results they belonged to
    assert {"curves.csv", "summary.csv", "metrics.csv", "adoption.png", "manifest.json"} <= names


def test_a_users_own_file_is_never_replaced(tmp_path, batches):
    out = tmp_path / "o"
    out.mkdir()
    (out / "curves.csv").write_text("mine\n")
    for force in (False, True):
        with pytest.raises(StoreError, match="holds curves.csv, which womlab did not write"):
            save_batch(batches[0], out, force=force)
    assert (out / "curves.csv").read_text() == "mine\n" and _snapshot(out).keys() == {"curves.csv"}


def test_a_sweep_folder_is_refused_even_when_forced(tmp_path, batches):
    out = tmp_path / "sweep"
    store = ResultsStore(out)
    with store.locked():
        store.create(
            {"identity": {"sweep": {"axes": {}}}, "scenario": {}}, __import__("pandas").DataFrame({"point": [0]})
        )
    before = (out / "manifest.json").read_bytes()
    for force in (False, True):
        with pytest.raises(StoreError, match="holds a sweep's results"):
            save_batch(batches[0], out, force=force)
    assert (out / "manifest.json").read_bytes() == before


def test_a_write_that_fails_midway_leaves_the_folder_as_it_was(tmp_path, batches):
    out = tmp_path / "o"
    save_batch(batches[0], out)
    before = _snapshot(out)

    def disk_full(path):  # noqa: ANN001, ANN202
        path.write_text("partial")
        raise OSError(28, "No space left on device")

    with pytest.raises(StoreError, match="could not be written .*the folder is as it was"):
        with FolderWriter(
            out, "run", json.loads((out / "manifest.json").read_text())["identity"], ["curves.csv"]
        ) as folder:
            folder.write("curves.csv", lambda p: p.write_text("new"))
            folder.write("summary.csv", disk_full)
    assert _snapshot(out) == before  # no staging folder left, nothing replaced


def test_a_crash_while_moving_in_leaves_a_folder_womlab_can_rewrite(tmp_path, batches):
    out = tmp_path / "o"
    save_batch(batches[0], out)
    # what a kill between removing the manifest and writing the new one leaves behind
    moving = json.loads((out / "manifest.json").read_text())["files"]
    (out / ".womlab-moving.json").write_text(json.dumps(moving))
    (out / "manifest.json").unlink()
    save_batch(batches[1], out)  # no manifest, but the files are known as womlab's
    assert not (out / ".womlab-moving.json").exists()


def test_a_new_folder_is_not_left_behind_when_writing_fails(tmp_path, batches):
    out = tmp_path / "new"
    with pytest.raises(ValueError):
        with FolderWriter(out, "run", {}, ["a.csv"]) as folder:
            folder.write("a.csv", lambda p: p.write_text("x"))
            raise ValueError("a figure could not be drawn")
    assert not out.exists()


def test_the_manifest_reproduces(tmp_path, monkeypatch):
    # issue 12 part 8: command line, scenario file and input hashes, versions, commit, OS and CPU,
    # the edge list's measured mean degree, only the sections in use; issue 19 part 6: paths as given
    (tmp_path / "data").mkdir()
    edges = "source,target\n" + "".join(f"{i},{(i + 1) % 40}\n{i},{(i + 5) % 40}\n" for i in range(40))
    (tmp_path / "data" / "ties.csv").write_text(edges)
    cfg = tmp_path / "s.toml"
    text = (
        'name = "invented edge list"\n[market]\ninitial_customers = 2\n[network]\nkind = "edgelist"\n'
        'path = "data/ties.csv"\n[run]\nperiods = 5\nreplicates = 2\n'
    )
    cfg.write_text(text)
    monkeypatch.chdir(tmp_path)
    s = load_scenario("s.toml")  # the paths the user gives are relative
    out = tmp_path / "o"
    save_batch(run_replicates(s), out, command_line=["womlab", "run", "s.toml"])
    m = json.loads((out / "manifest.json").read_text())
    assert m["command"] == "run" and m["command_line"] == ["womlab", "run", "s.toml"]
    assert m["scenario_file"] == {"path": "s.toml", "sha256": hashlib.sha256(text.encode()).hexdigest()}
    assert m["inputs"] == [
        {"field": "network.path", "path": "data/ties.csv", "sha256": hashlib.sha256(edges.encode()).hexdigest()}
    ]
    assert m["scenario"]["network"]["mean_degree"] == 4.0 and m["scenario"]["network"]["path"] == "data/ties.csv"
    assert set(m["scenario"]) == {"name", "seed", "market", "network", "adoption", "run", "seeding"}
    assert {"os", "cpu", "cores"} <= set(m["machine"]) and m["versions"]["womlab"]
    assert "source" in m  # the git commit where there is one, else null
    assert str(tmp_path) not in (out / "manifest.json").read_text()
    assert sorted(m["files"]) == sorted(p.name for p in out.iterdir())


def test_staged_files_are_readable_by_the_group_as_before(tmp_path, batches):
    out = tmp_path / "o"
    save_batch(batches[0], out)
    umask = os.umask(0)
    os.umask(umask)
    assert (out / "curves.csv").stat().st_mode & 0o777 == 0o666 & ~umask
