"""Same numbers every time: one scenario per engine, run in two processes with different hash
seeds and job counts, writes the same files byte for byte (the manifest's timing fields,
command line and job count aside).

Python randomises the hash of text per process unless PYTHONHASHSEED is set (Python
documentation, "PYTHONHASHSEED"), so iterating a set or a dict keyed by text in a
different order would change results from one process to the next; a run's result
depends only on the scenario, the root seed and its spawn key (numpy SeedSequence), never
on the number of workers (DEVELOPERS.md, Randomness). Every probe of this kind passed;
this test keeps it so.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from womlab.store.folders import TIMING_FIELDS

SCENARIO = (
    'name = "invented determinism check ({engine})"\nseed = 31\n[market]\norganisations = {n}\n'
    'initial_customers = 3\nregions = 2\n[network]\nkind = "regional"\nmean_degree = 6\n'
    '[adoption]\nsatisfied_share = 0.7\ntalkers_per_customer = {{ distribution = "poisson", mean = 2 }}\n'
    '[run]\nperiods = 12\nreplicates = 4\nengine = "{engine_name}"\nclock = "{clock}"\n{extra}'
)
ENGINES = {
    "array": dict(n=400, engine_name="array", clock="discrete", extra=""),
    "mesa": dict(n=150, engine_name="mesa", clock="discrete", extra=""),
    "event": dict(n=400, engine_name="array", clock="continuous", extra="report_every = 0.25\n"),
}
DRIVER = """
import sys
from womlab.cli import main
jobs, out = sys.argv[1], sys.argv[2]
for engine in sys.argv[3:]:
    status = main(["run", f"{engine}.toml", "--jobs", jobs, "--out", f"{out}/{engine}", "--quiet"])
    assert status == 0, engine
"""


def _comparable_manifest(path: Path) -> dict:
    m = json.loads(path.read_text())
    for key in (*TIMING_FIELDS, "command_line"):
        m.pop(key)
    m["scenario"]["run"].pop("jobs")
    return m


@pytest.mark.slow
def test_same_files_across_hash_seeds_and_job_counts(tmp_path):
    for engine, fields in ENGINES.items():
        (tmp_path / f"{engine}.toml").write_text(SCENARIO.format(engine=engine, **fields))
    for hash_seed, jobs, out in (("0", "1", "a"), ("4242", "2", "b")):
        env = {**os.environ, "PYTHONHASHSEED": hash_seed}
        done = subprocess.run(
            [sys.executable, "-c", DRIVER, jobs, out, *ENGINES],
            cwd=tmp_path,
            env=env,
            capture_output=True,
            text=True,
            timeout=900,
        )
        assert done.returncode == 0, done.stderr[-2000:]
    for engine in ENGINES:
        a, b = tmp_path / "a" / engine, tmp_path / "b" / engine
        names = sorted(p.name for p in a.iterdir())
        assert names == sorted(p.name for p in b.iterdir())
        assert {"curves.csv", "summary.csv", "metrics.csv", "adoption.png", "manifest.json"} <= set(names)
        for name in names:
            if name == "manifest.json":
                assert _comparable_manifest(a / name) == _comparable_manifest(b / name), engine
            else:
                assert (a / name).read_bytes() == (b / name).read_bytes(), (engine, name)
