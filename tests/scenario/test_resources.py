"""The resource estimate: what cannot fit a machine is refused before any allocation, in one line.

The probes are those that ran for minutes and then failed, or were accepted, before
(organisations = 1e8 ran 121 s and 6.7 GB before a memory error; 1e12 and 3e9 overflowed;
mean_degree = 1e5 at a million organisations asked for 3.6 TiB; periods = 1e9,
report_every = 1e-8, replicates = 1e12, regions = 1e6 and jobs = 100000 were accepted).
The unit costs come from ``python benchmarks/resources.py`` (benchmarks/results/resources.md);
an undirected tie stored both ways as int32 takes 8 bytes in CSR alone (common practice,
the CSR layout of scipy.sparse), which bounds the network's memory from below.
"""

from __future__ import annotations

import pytest

from womlab import Scenario, ScenarioError
from womlab.scenario.resources import MAX_ORGANISATIONS, check_resources, cores, estimate_resources, usable_jobs

GIB = 2**30


@pytest.mark.parametrize(
    "data, command, first",
    [
        ({"market": {"organisations": 10**8}, "run": {"replicates": 50}}, "run", "market.organisations = 100,000,000"),
        (
            {"market": {"organisations": 10**6}, "network": {"mean_degree": 100_000}},
            "run",
            "network.mean_degree = 100,000",
        ),
        ({"run": {"periods": 10**9}}, "run", "run.periods = 1,000,000,000"),
        ({"run": {"periods": 10, "report_every": 1e-8, "clock": "continuous"}}, "run", "run.report_every = 1e-08"),
        ({"run": {"replicates": 10**12}}, "run", "run.replicates = 1,000,000,000,000"),
        (
            {"market": {"organisations": 10**6, "regions": 10**6}, "network": {"kind": "regional_blocks"}},
            "run",
            "market.regions = 1,000,000",
        ),
        ({"study": {"replicates": 10**11}}, "seeding", "study.replicates = 100,000,000,000"),
    ],
)
def test_what_cannot_fit_is_refused_naming_the_field(data, command, first):
    s = Scenario.from_dict(data)
    with pytest.raises(ScenarioError) as exc:
        check_resources(s, command, memory=16 * GIB)
    text = str(exc.value)
    assert "\n" not in text and text.startswith(first) and "of memory" in text and "--skip-resource-check" in text
    assert check_resources(s, command, skip=True).memory > 16 * GIB  # the user may know better


@pytest.mark.parametrize("n", [3 * 10**9, 10**12])
def test_more_organisations_than_32_bit_ids_is_refused_always(n):
    s = Scenario.from_dict({"market": {"organisations": n}})
    for skip in (False, True):
        with pytest.raises(ScenarioError, match=f"market.organisations must be at most {MAX_ORGANISATIONS:,}"):
            check_resources(s, skip=skip)


def test_network_memory_is_at_least_its_csr_arrays():
    # a million organisations, mean degree 100,000: 5e10 ties, 8 bytes each in CSR (int32 both ways)
    s = Scenario.from_dict({"market": {"organisations": 10**6}, "network": {"mean_degree": 100_000}})
    ties = estimate_resources(s).largest("bytes")
    assert ties.what == "network ties" and ties.bytes >= 5e10 * 8


def test_work_beyond_a_month_is_refused():
    s = Scenario.from_dict(
        {"market": {"organisations": 2000}, "run": {"periods": 20_000, "replicates": 20_000, "engine": "mesa"}}
    )
    with pytest.raises(ScenarioError, match="of work .* more than 30 days is refused"):
        check_resources(s, memory=2**50)


def test_a_small_scenario_passes_with_a_small_estimate():
    s = Scenario.from_dict({"market": {"organisations": 1000}, "run": {"replicates": 10}})
    e = check_resources(s)
    assert e.runs == 10 and e.memory < GIB and e.seconds < 60


def test_runs_are_counted_as_each_command_runs_them():
    s = Scenario.from_dict(
        {
            "run": {"replicates": 100},
            "study": {"strategies": ["random", "hubs", "fringe"], "replicates": 40},
            "referral": {"enrol": "all"},
        }
    )
    assert estimate_resources(s, "run").runs == 100
    assert estimate_resources(s, "seeding").runs == 3 * 40  # the study's replicates, not run.replicates
    assert estimate_resources(s, "referral").runs == 2 * 100  # programme and baseline
    assert estimate_resources(s, "sweep", points=15).runs == 15 * s.sweep.replicates


def test_jobs_are_capped_at_the_cores():
    assert usable_jobs(100_000) == cores()
    assert usable_jobs(-1) == cores()
    assert usable_jobs(1) == 1
    s = Scenario.from_dict({"run": {"jobs": 100_000, "replicates": 1000}})
    assert estimate_resources(s).workers == cores()
