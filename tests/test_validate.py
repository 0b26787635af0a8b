"""Bad input gets located problems, all at once (README, input contract and validation)."""

from __future__ import annotations

import logging

import pandas as pd
import pytest

from valvol import pipeline
from valvol.errors import InputError

GOOD_ROWS = """\
economy,period,item,price_basis,value
XQ,2020-Q1,P31_S14,current,60
XQ,2020-Q1,P3_S13,current,20
XQ,2020-Q1,P3,current,80
"""


def problems_of(folder, tmp_path) -> list:
    with pytest.raises(InputError) as err:
        pipeline.check(folder, tmp_path / "work_check")
    return err.value.problems


@pytest.fixture(autouse=True)
def _work(tmp_path):
    (tmp_path / "work_check").mkdir()


def test_every_row_problem_is_reported_with_file_row_series_period(accounts, tmp_path):
    folder = accounts(
        """\
        economy,period,item,price_basis,value
        XQ,2020-Q1,P31_S14,current,100
        XQ,2020-Q2,P31_S14,current,abc
        XQ,2020-Q3,P31_S14,current,-5
        xq,2020-Q4,P31_S14,current,100
        XQ,2020-13,P31_S14,current,100
        XQ,2020-Q1,FOO,current,100
        XQ,2020-Q1,P31_S14,real,100
        XQ,2020-Q1,P31_S14,current,101
        XQ,2021-Q1,P52,current,-10
        XQ,2021-Q1,P7,current,inf
        """
    )
    got = {(p.row, p.reason.split(" (")[0]) for p in problems_of(folder, tmp_path)}
    assert got == {
        (3, "value is not a number"),
        (4, "negative level of an item that cannot be negative"),
        (5, "economy code must be 2-16 characters of A-Z, 0-9, _"),
        (6, "period must be YYYY-Qn, YYYYQn or YYYY"),
        (7, "item is not a known SNA code nor a breakdown of one"),
        (8, "price_basis must be one of current, previous_year, chain_linked, volume_index, price_index, index, weight"),
        (9, "duplicate of accounts.csv:2"),
        (11, "value must be a finite number"),
    }
    # inventories (P52) may be negative: no problem on row 10
    one = next(p for p in problems_of(folder, tmp_path) if p.row == 4)
    assert (one.file, one.economy, one.item, one.price_basis, one.period) == (
        "accounts.csv", "XQ", "P31_S14", "current", "2020-Q3")
    assert "'-5'" in one.render()


def test_declared_items_are_allowed(accounts, tmp_path):
    folder = accounts(
        "economy,period,item,price_basis,value\nXQ,2020,P31_S14_FOOD,current,5\nXQ,2020,P31_S14,current,5\n",
        '[aggregates]\nP31_S14 = ["P31_S14_FOOD"]\n',
    )
    assert pipeline.check(folder, tmp_path / "work_check") == 2


def test_gap_in_quarters_names_the_missing_span(accounts, tmp_path):
    folder = accounts(
        "economy,period,item,price_basis,value\n"
        + "".join(f"XQ,{p},P6,current,10\n" for p in ["2020-Q1", "2020-Q2", "2021-Q1"])
    )
    (p,) = problems_of(folder, tmp_path)
    assert p.period == "2020-Q3 to 2020-Q4" and p.item == "P6"
    assert "not contiguous" in p.reason


def test_duplicates_across_files_name_both(accounts, tmp_path):
    folder = accounts(GOOD_ROWS, name="a.csv")
    (folder / "b.csv").write_text("economy,period,item,price_basis,value\nXQ,2020Q1,P3,current,80\n")
    (p,) = problems_of(folder, tmp_path)
    assert p.file == "b.csv" and p.row == 2 and "duplicate of a.csv:4" in p.reason


def test_identity_failure_names_aggregate_basis_period(accounts, tmp_path):
    folder = accounts(GOOD_ROWS.replace("XQ,2020-Q1,P3,current,80", "XQ,2020-Q1,P3,current,90")
                      + "XQ,2020-Q1,P3_S15,current,1\n")
    (p,) = problems_of(folder, tmp_path)
    assert (p.economy, p.item, p.price_basis, p.period) == ("XQ", "P3", "current", "2020-Q1")
    assert "components do not add to the aggregate" in p.reason and "residual 9" in p.reason


def test_quarters_must_add_to_given_year(accounts, tmp_path):
    rows = "".join(f"XQ,2020-Q{q},P6,current,10\n" for q in range(1, 5)) + "XQ,2020,P6,current,41\n"
    folder = accounts("economy,period,item,price_basis,value\n" + rows)
    (p,) = problems_of(folder, tmp_path)
    assert p.period == "2020" and "quarters do not add to the year" in p.reason


def test_quarters_average_to_year_at_annual_rate(accounts, tmp_path):
    rows = "".join(f"XQ,2020-Q{q},P6,current,40\n" for q in range(1, 5)) + "XQ,2020,P6,current,40\n"
    folder = accounts("economy,period,item,price_basis,value\n" + rows, "levels_at_annual_rate = true\n")
    assert pipeline.check(folder, tmp_path / "work_check") == 5


def test_missing_and_unknown_columns(accounts, tmp_path, caplog):
    # a missing column is a problem; an unknown one is dropped with a warning naming file and column
    folder = accounts("economy,period,item,value\nXQ,2020,P6,1\n", name="a.csv")
    (folder / "b.csv").write_text("economy,period,item,price_basis,value,colour\nXQ,2020,P6,current,1,red\n")
    log = logging.getLogger("valvol")
    log.addHandler(caplog.handler)  # the CLI may have stopped valvol's records reaching the root logger
    try:
        with caplog.at_level("WARNING", logger="valvol"):
            got = {(p.file, p.reason) for p in problems_of(folder, tmp_path)}
    finally:
        log.removeHandler(caplog.handler)
    assert got == {("a.csv", "missing column(s) price_basis")}
    assert any(r.levelname == "WARNING" and "b.csv: unknown column(s) colour dropped" in r.getMessage()
               for r in caplog.records)


def test_parquet_input_is_read_like_csv(accounts, tmp_path):
    folder = accounts(GOOD_ROWS)
    frame = pd.read_csv(folder / "accounts.csv")
    (folder / "accounts.csv").unlink()
    frame.to_parquet(folder / "accounts.parquet", index=False)
    assert pipeline.check(folder, tmp_path / "work_check") == 3
    frame.loc[1, "value"] = -1.0
    frame.to_parquet(folder / "accounts.parquet", index=False)
    (p,) = problems_of(folder, tmp_path)
    assert (p.file, p.row, p.item) == ("accounts.parquet", 2, "P3_S13")


def test_empty_folder(tmp_path):
    (tmp_path / "empty").mkdir()
    (p,) = problems_of(tmp_path / "empty", tmp_path)
    assert "no .csv or .parquet file" in p.reason


def test_price_index_rows(accounts, tmp_path):
    # a monthly consumer price index in its own file (README, input contract: price indexes)
    folder = accounts(GOOD_ROWS)
    months = "".join(f"XQ,2020-{m:02d},CPI,index,{100 + m}\n" for m in range(1, 13))
    (folder / "cpi.csv").write_text("economy,period,item,price_basis,value\n" + months)
    assert pipeline.check(folder, tmp_path / "work_check") == 15


def test_price_index_problems_are_located(accounts, tmp_path):
    folder = accounts(GOOD_ROWS)
    (folder / "cpi.csv").write_text(
        "economy,period,item,price_basis,value\n"
        "XQ,2020-01,CPI,index,100\n"
        "XQ,2020-02,CPI,current,100\n"     # CPI must come as an index
        "XQ,2020-03,P6,current,100\n"      # months are for price indexes only
        "XQ,2020-04,CPI,index,0\n"         # an index is positive
        "XQ,2020-07,CPI,index,101\n"       # gap: 2020-05 to 2020-06
        "XR,2020-01,CPI,index,100\n"       # an economy with no accounts
    )
    got = {(p.row, p.reason.split(" (found")[0]) for p in problems_of(folder, tmp_path)}
    assert (3, "price_basis index is for price indexes (CPI) and only for them") in got
    assert (4, "monthly periods (YYYY-MM) are for price indexes only") in got
    assert (5, "a price index must be positive") in got
    assert (7, "price index of an economy that has no accounts") in got
    # every row with a valid period counts for contiguity: only the truly missing months are named
    assert any(p.period == "2020-05 to 2020-06" for p in problems_of(folder, tmp_path))


def test_header_only_file(accounts, tmp_path):
    folder = accounts("economy,period,item,price_basis,value\n")
    (p,) = problems_of(folder, tmp_path)
    assert "no data rows" in p.reason
