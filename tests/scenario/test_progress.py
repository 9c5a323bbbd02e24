"""Long work is never silent, and piped output stays plain.

A progress bar redraws itself with carriage returns, which only a terminal understands;
in a file or a pipe they pile up as thousands of lines (common practice: draw a bar only
when the stream is a TTY, as POSIX isatty(3) tells).
"""

from __future__ import annotations

import numpy as np

from womlab import Scenario, compare_strategies
from womlab.scenario import progress


def test_piped_progress_is_a_few_plain_lines(capsys, monkeypatch):
    monkeypatch.setattr(progress, "on_terminal", lambda stream=None: False)
    with progress.bar(1000, "replicates", unit="replicate", show=True) as count:
        for _ in range(1000):
            count.update(1)
    err = capsys.readouterr().err
    assert "\r" not in err
    lines = err.strip().splitlines()
    assert 2 <= len(lines) <= 4 and lines[0] == "replicates: 1000 replicates to do"
    assert lines[-1].startswith("replicates: 1000/1000 replicates")


def test_a_terminal_gets_a_bar(monkeypatch):
    monkeypatch.setattr(progress, "on_terminal", lambda stream=None: True)
    with progress.bar(3, show=True) as count:
        assert type(count.inner).__module__.startswith("tqdm")
        count.update(3)


def test_quiet_is_silent(capsys):
    with progress.bar(10, show=False) as count:
        count.update(10)
    with progress.stage("anything", show=False):
        pass
    assert capsys.readouterr().err == ""


def test_an_expensive_seeding_step_reports_itself(capsys, monkeypatch):
    # sampled betweenness sat at 0/2 for nine minutes; now choosing seeds says when it starts and ends
    from womlab.seeding import registry

    monkeypatch.setattr(registry, "SLOW_STAGE", 0.0)
    monkeypatch.setattr(progress, "on_terminal", lambda stream=None: False)
    s = Scenario.from_dict(
        {
            "market": {"organisations": 200},
            "network": {"kind": "random", "mean_degree": 4},
            "run": {"periods": 5},
            "seeding": {"budget": 2},
        }
    )
    compare_strategies(s, ["bridges"], replicates=2, jobs=1, progress=True, snapshot=False)
    err = capsys.readouterr().err
    assert err.count("bridges: choosing 2 seeds among 200 organisations ...") == 2
    assert err.count("bridges: choosing 2 seeds among 200 organisations: done in") == 2
    assert "\r" not in err


def test_the_switch_travels_in_the_environment(monkeypatch):
    monkeypatch.delenv(progress.ENV, raising=False)
    assert not progress.enabled()
    progress.enable()
    try:
        import os

        assert os.environ[progress.ENV] == "1" and progress.enabled()
    finally:
        progress.enable(False)
    assert not progress.enabled()
    assert np.isfinite(1.0)
