"""The sweep report page (womlab.results.write_report) rendered in a real browser.

Oracle: headless Chromium (Debian package `chromium`) loads the page from disk with
networking off and a small script reports, from the browser's own DOM, how many images
decoded (HTMLImageElement.naturalWidth > 0, per the HTML standard) and which tables
and sections exist. Skipped only when chromium is not installed; CI installs it.
"""

from __future__ import annotations

import re
import shutil
import subprocess

import pytest

from womlab import dynamics
from womlab.results.report import sweep_summary, write_report
from womlab.scenario import Scenario
from womlab.studies.sweep import run_sweep

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

CHECK = """<script>
window.addEventListener('load', function () {
  var imgs = Array.prototype.slice.call(document.images);
  var loaded = imgs.filter(function (i) { return i.complete && i.naturalWidth > 0; }).length;
  var tables = document.querySelectorAll('table.womlab-table').length;
  var heads = Array.prototype.map.call(document.querySelectorAll('h2'), function (h) { return h.textContent; });
  var out = document.createElement('pre');
  out.id = 'womlab-check';
  out.textContent = 'images=' + imgs.length + ';loaded=' + loaded + ';tables=' + tables + ';heads=' + heads.join('|');
  document.body.appendChild(out);
});
</script></body>"""


def sweep_folder(tmp_path, monkeypatch):
    real = dynamics.ENGINES["array"]

    def flaky(scenario, network, initial, rng):  # noqa: ANN001
        if scenario.adoption.word_of_mouth == 0.5 and scenario.network.kind == "ring":
            raise RuntimeError("deliberate failure for the report")
        return real(scenario, network, initial, rng)

    monkeypatch.setitem(dynamics.ENGINES, "array", flaky)
    s = Scenario.from_dict(
        {
            "name": "report test (invented)",
            "seed": 4,
            "market": {"organisations": 200, "initial_customers": 2},
            "network": {"kind": "random", "mean_degree": 4},
            "run": {"periods": 20},
            "sweep": {
                "replicates": 3,
                "axes": {"adoption.word_of_mouth": [0.2, 0.5], "network.kind": ["random", "ring"]},
            },
        }
    )
    out = tmp_path / "sweep"
    run_sweep(s, out, 1, progress=False, report=False)
    return out


def test_summary_interval_is_the_student_t_interval_of_the_mean(tmp_path, monkeypatch):
    # mean ± t(0.975, n-1) sd / sqrt(n), scipy.stats.t as reference
    from scipy import stats

    from womlab.store import ResultsStore

    out = sweep_folder(tmp_path, monkeypatch)
    summary = sweep_summary(out)
    runs = ResultsStore(out).runs()
    x = runs.loc[(runs["point"] == 0), "final_share"].astype(float)
    row = summary[(summary["point"] == 0) & (summary["outcome"] == "final_share")].iloc[0]
    lo, hi = stats.t.interval(0.95, len(x) - 1, loc=x.mean(), scale=x.std(ddof=1) / len(x) ** 0.5)
    assert row["estimate"] == pytest.approx(x.mean()) and row["low"] == pytest.approx(lo)
    assert row["high"] == pytest.approx(hi) and row["runs"] == 3
    assert summary.loc[summary["point"] == 3, "runs"].empty  # every run of point 3 failed


@pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed (CI installs Debian's chromium)")
def test_report_renders_offline_in_headless_chromium_with_every_figure_and_table(tmp_path, monkeypatch):
    out = sweep_folder(tmp_path, monkeypatch)
    page = write_report(out)
    text = page.read_text(encoding="utf-8")
    assert not re.search(r"""(src|href)=['"]?(https?:)?//""", text), "the page must not fetch anything"
    n_images = text.count("<img ")
    assert n_images >= 1
    probe = tmp_path / "probe.html"
    probe.write_text(text.replace("</body>", CHECK), encoding="utf-8")
    profile = tmp_path / "profile"
    done = subprocess.run(
        [
            CHROMIUM,
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--no-first-run",
            f"--user-data-dir={profile}",
            "--virtual-time-budget=10000",
            "--dump-dom",
            probe.as_uri(),
        ],
        capture_output=True,
        text=True,
        timeout=120,
    )
    match = re.search(r"images=(\d+);loaded=(\d+);tables=(\d+);heads=([^<]*)", done.stdout)
    assert match, f"no check result in the dumped DOM; stderr: {done.stderr[-2000:]}"
    images, loaded, tables, heads = int(match[1]), int(match[2]), int(match[3]), match[4].split("|")
    assert images == n_images and loaded == images
    assert tables >= 3  # outcomes by point, failures, versions
    assert {"Figures", "Outcomes by point", "Failures (3)", "Sweep spec", "Scenario", "Versions"} <= set(heads)
    assert "deliberate failure for the report" in done.stdout
