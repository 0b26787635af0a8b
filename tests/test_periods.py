"""Period labels of the input contract (README, input contract; SDMX TIME_PERIOD forms)."""

import pandas as pd

from valvol.periods import parse_periods, quarter_index


def test_accepted_forms_are_normalised():
    out = parse_periods(pd.Series(["2024-Q3", "2024Q1", "2024", " 2019-Q4 "]))
    assert out["valid"].all()
    assert out["period"].tolist() == ["2024-Q3", "2024-Q1", "2024", "2019-Q4"]
    assert out["frequency"].tolist() == ["Q", "Q", "A", "Q"]
    assert out["quarter"].tolist() == [3, 1, 0, 4]


def test_everything_else_is_rejected():
    bad = ["2024-Q5", "2024-Q0", "24Q1", "2024-13", "2024-00", "2024M01", "Q1-2024", "", "2024-q1", "20245"]
    out = parse_periods(pd.Series(bad))
    assert not out["valid"].any()


def test_quarter_index_is_consecutive_across_years():
    idx = quarter_index([2019, 2020, 2020], [4, 1, 2])
    assert list(idx[1:] - idx[:-1]) == [1, 1]


def test_months_for_price_indexes():
    out = parse_periods(pd.Series(["2024-01", "2024-12"]))
    assert out["valid"].all() and out["frequency"].tolist() == ["M", "M"]
    assert out["quarter"].tolist() == [1, 4] and out["month"].tolist() == [1, 12]
