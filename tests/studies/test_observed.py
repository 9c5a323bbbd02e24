"""Observed adoption series: reading, validation (one line naming file, column, row), the statistic."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from womlab import ObservedDataError, Scenario, read_observed, run_one, simulated_series
from womlab.studies.observed import cumulative_at, observed_series


def _write(tmp_path, text: str, name: str = "seen.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_new_customers_with_a_gap_sum_over_observed_periods_only(tmp_path):
    # common practice: a missing period is unknown, so it is left out of the data's sum and
    # of every simulation's sum alike.
    s = read_observed(_write(tmp_path, "period,new_customers\n1,3\n2,8\n3,15\n5,30\n"))
    assert s.kind == "new_customers" and s.periods.tolist() == [1, 2, 3, 5]
    assert s.cumulative().tolist() == [3, 11, 26, 56]
    assert s.initial_customers() is None and s.largest_count() == 56


def test_customers_from_period_zero_give_the_initial_customers(tmp_path):
    s = read_observed(_write(tmp_path, "period,customers,market\n0,5,900\n1,9,900\n2,16,\n4,40,900\n"))
    assert s.kind == "customers" and s.market == 900 and s.initial_customers() == 5
    assert s.cumulative().tolist() == [5, 9, 16, 40]


def test_the_statistic_of_a_simulated_series_is_the_statistic_of_its_run():
    # common practice: the data and a simulation are summarised by one function, so a series
    # simulated from a run has exactly the run's statistic.
    sc = Scenario.from_dict(
        {
            "seed": 4,
            "market": {"organisations": 300, "initial_customers": 3},
            "network": {"kind": "random", "mean_degree": 6},
            "run": {"periods": 10},
        }
    )
    run = run_one(sc, (3,))
    for kind, drop in (("new_customers", [4, 7]), ("customers", [0, 5])):
        series = simulated_series(sc, kind=kind, key=(3,), drop=drop)
        assert np.array_equal(series.cumulative(), cumulative_at(run.customers, series.periods, kind))


@pytest.mark.parametrize(
    "text, fragments",
    [
        (
            "period,new_customers\n1,3\n2,-1\n3,4\n4,5\n",
            ["seen.csv", "'new_customers'", "row 3", "period 2", ">= 0", "-1"],
        ),
        ("period,customers\n1,3\n2,9\n3,7\n4,12\n", ["'customers'", "row 4", "period 3", "must not fall", "7 after 9"]),
        (
            "period,customers,market\n1,3,10\n2,9,10\n3,11,10\n4,12,10\n",
            ["'customers'", "row 4", "period 3", "11 customers is more than the market size 10"],
        ),
        ("period,new_customers\n1,3\n2,4\n2,5\n4,6\n", ["'period'", "row 4", "period 2 appears twice"]),
        ("period,new_customers\n1,3\n2,4\n3,5\n", ["seen.csv", "at least 4", "got 3"]),
        ("period,sales\n1,3\n2,4\n3,5\n4,6\n", ["unknown column 'sales'"]),
        ("period,new_customers,customers\n1,3,3\n2,4,7\n3,5,12\n4,6,18\n", ["give one of the columns", "both"]),
        ("period,new_customers\n1,3\n2,\n3,5\n4,6\n", ["'new_customers'", "row 3", "is empty"]),
        ("period,new_customers\n1,3\n2,4.5\n3,5\n4,6\n", ["row 3", "whole number", "'4.5'"]),
        ("period,new_customers,market\n1,3,50\n2,4,60\n3,5,50\n4,6,50\n", ["'market'", "row 3", "60 after 50"]),
        ("period,new_customers\n1,3\n3,4\n2,5\n4,6\n", ["'period'", "row 4", "must increase", "2 after 3"]),
    ],
)
def test_bad_data_is_one_line_naming_file_column_and_row(tmp_path, text, fragments):
    with pytest.raises(ObservedDataError) as err:
        read_observed(_write(tmp_path, text))
    message = str(err.value)
    assert "\n" not in message
    for fragment in fragments:
        assert fragment in message, (fragment, message)


def test_missing_file_and_table_input(tmp_path):
    with pytest.raises(ObservedDataError, match="does not exist"):
        read_observed(tmp_path / "nowhere.csv")
    s = observed_series(pd.DataFrame({"period": ["0", "1", "2", "3"], "customers": ["1", "2", "4", "8"]}), "table")
    assert s.source == "table" and s.counts.tolist() == [1, 2, 4, 8]
