"""``womlab run --by``: tables and a figure split by segment or region; a wrong split is one line, exit 2
(common practice for command-line tools, as in tests/cli/test_cli.py)."""

from __future__ import annotations

import pandas as pd

from womlab.cli import main

BASE = (
    'name = "invented markets cli test"\nseed = 1\n[market]\norganisations = 300\ninitial_customers = 3\n'
    'regions = 2\nopens = [{region = 1, period = 4}]\n[network]\nkind = "random"\nmean_degree = 6\n'
    "[run]\nperiods = 8\nreplicates = 3\n"
)
SEGMENTS = "[segments.few]\nshare = 0.2\nword_of_mouth = 2\n[segments.many]\nshare = 0.8\n"


def test_run_by_segment_writes_the_split(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(BASE + SEGMENTS)
    assert main(["run", "s.toml", "--by", "segment", "--out", "out", "--quiet"]) == 0
    for name in (
        "curves_by_segment.csv",
        "summary_by_segment.csv",
        "metrics_by_segment.csv",
        "adoption_by_segment.png",
    ):
        assert (tmp_path / "out" / name).is_file()
    split = pd.read_csv(tmp_path / "out" / "curves_by_segment.csv")
    assert set(split["group"]) == {"few", "many"} and len(split) == 3 * 9 * 2
    curves = pd.read_csv(tmp_path / "out" / "curves.csv")
    assert curves["market"].tolist()[:6] == [150, 150, 150, 150, 300, 300]  # region 1 opens in period 4


def test_run_by_segment_without_segments_is_one_line(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(BASE)
    assert main(["run", "s.toml", "--by", "segment", "--out", "out", "--quiet"]) == 2
    err = [line for line in capsys.readouterr().err.splitlines() if line]
    assert len(err) == 1 and err[0].startswith('womlab: error: --by segment: by = "segment" needs segments')


def test_run_with_product_generations_writes_per_product_tables(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(
        BASE.replace("regions = 2\nopens = [{region = 1, period = 4}]\n", "")
        + "[[product]]\nlaunch = 4\nword_of_mouth = 0.5\nvalue_per_period = 2\n"
    )
    assert main(["run", "s.toml", "--out", "out", "--quiet"]) == 0
    products = pd.read_csv(tmp_path / "out" / "products.csv")
    assert set(products["product"]) == {"generation 1", "generation 2", "all"} and len(products) == 3 * 9 * 3
    summary = pd.read_csv(tmp_path / "out" / "products_summary.csv")
    assert list(summary.columns) == ["period", "product", "mean", "q05", "q95", "aggregate", "norton_bass", "value"]
    assert (tmp_path / "out" / "products.png").is_file()


def test_compare_with_product_generations_writes_them_beside_norton_bass(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "s.toml").write_text(
        BASE.replace("regions = 2\nopens = [{region = 1, period = 4}]\n", "") + "[[product]]\nlaunch = 4\n"
    )
    assert main(["compare", "s.toml", "--out", "out", "--quiet"]) == 0
    table = pd.read_csv(tmp_path / "out" / "compare_products.csv")
    assert {"aggregate", "norton_bass"} <= set(table.columns) and (tmp_path / "out" / "products.png").is_file()
