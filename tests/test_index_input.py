"""Accounts given as volume and price indexes, and carried columns (README, input contract).

Bad index input is a located error with exit code 2 through ``valvol check``; good index input
rebuilds into money terms. Expected values are hand derivations (CLV = VI C_ref / 100, BEA,
Survey of Current Business, November 1998, box 4; D = 100 C / CLV, ONS Blue Book 2013, ch. 1).
"""

from __future__ import annotations

import pandas as pd
import pytest

from valvol import pipeline
from valvol.cli import main

HEAD = "economy,period,item,price_basis,value\n"
#: P6 at current prices in 2020 (quarters 10, 11, 12, 13: C_2020 = 46) and as a volume index
#: whose 2020 quarters average 100, 2021 given too (CLV_q = VI_q x 46 / 400).
GOOD = HEAD + "".join(f"XQ,2020-Q{q},P6,current,{c}\n" for q, c in zip(range(1, 5), [10, 11, 12, 13], strict=True)) \
    + "".join(f"XQ,{p},P6,volume_index,{v}\n" for p, v in
              zip(["2020-Q1", "2020-Q2", "2020-Q3", "2020-Q4", "2021-Q1", "2021-Q2", "2021-Q3", "2021-Q4"],
                  [96, 98, 102, 104, 106, 106, 107, 109], strict=True))


def run_check(folder, capsys) -> tuple[int, str]:
    code = main(["-q", "check", str(folder)])
    return code, capsys.readouterr().err


def test_volume_index_accounts_check_and_rebuild(accounts, tmp_path, capsys):
    folder = accounts(GOOD)
    assert run_check(folder, capsys)[0] == 0
    pipeline.rebuild(folder, tmp_path / "out", charts=False)
    levels = pd.read_parquet(tmp_path / "out" / "levels.parquet").set_index(["price_basis", "period"])["value"]
    # 2021-Q1: 106 x 46 / 400 = 12.19; the year 2021: (106 + 106 + 107 + 109) x 46 / 400 = 49.22
    assert levels[("chain_linked", "2021-Q1")] == pytest.approx(12.19)
    assert levels[("chain_linked", "2021")] == pytest.approx(49.22)
    assert levels[("chain_linked", "2020")] == pytest.approx(46.0)
    defl = pd.read_parquet(tmp_path / "out" / "deflators.parquet").set_index("period")["deflator"]
    # D = 100 C / CLV: 2020 (the reference year) 100; 2020-Q1: 100 x 10 / 11.04 = 90.58
    assert defl["2020"] == pytest.approx(100.0)
    assert defl["2020-Q1"] == pytest.approx(100 * 10 / 11.04)
    assert "volume_index" not in set(levels.index.get_level_values("price_basis"))


@pytest.mark.parametrize(
    "rows, located",
    [
        # no year at 100: the quarters of 2020 average 101 (beyond +-0.05), 2021 gives no year
        (GOOD.replace("2020-Q1,P6,volume_index,96", "2020-Q1,P6,volume_index,100"),
         "accounts.csv:6 XQ/P6/volume_index/2020-Q1: volume_index has no year at 100"),
        # a zero price index
        (GOOD + "XQ,2020-Q1,P6,price_index,0\n",
         "accounts.csv:14 XQ/P6/price_index/2020-Q1: a volume_index or price_index must be positive"),
        # inventories have no deflator ...
        (GOOD + "XQ,2020-Q1,P52,current,-3\nXQ,2020-Q1,P52,price_index,101\n",
         "accounts.csv:15 XQ/P52/price_index/2020-Q1: an item that changes sign"),
        # ... and a sector part of them no meaningful volume index
        (GOOD + "XQ,2020-Q1,P52_PRIV,volume_index,101\n",
         "accounts.csv:14 XQ/P52_PRIV/volume_index/2020-Q1: an item that changes sign"),
        # the reference year's current-price value is missing (2021 = 100, current prices of 2020 only)
        (HEAD + "XQ,2020,P6,current,46\nXQ,2020,P6,volume_index,98\nXQ,2021,P6,volume_index,100\n",
         "accounts.csv:4 XQ/P6/volume_index/2021: volume_index (reference year 2021) needs the annual current-price "
         "value of its reference year (C_ref"),
        # two index series of one economy, both used, on different reference years
        (GOOD + "XQ,2021,P7,current,30\nXQ,2020,P7,volume_index,95\nXQ,2021,P7,volume_index,100\n",
         # (as many series on each: the latest year is taken as the economy's, the other series named)
         "accounts.csv:6 XQ/P6/volume_index/2020-Q1: reference year 2020 differs from 2021"),
        # all three given and inconsistent: C 46, CLV 46 in 2020, so the deflator is 100, not 103
        (HEAD + "XQ,2020,P6,current,46\nXQ,2020,P6,chain_linked,46\nXQ,2021,P6,current,50\n"
         "XQ,2021,P6,chain_linked,48\nXQ,2020,P6,price_index,103\nXQ,2021,P6,price_index,100\n",
         "XQ/P6/price_index/2020: price_index 103 does not match current prices and volume"),
        # a price index with neither current prices nor a volume of its period
        (GOOD + "XQ,2020,P7,price_index,100\n",
         "accounts.csv:14 XQ/P7/price_index/2020: price_index needs current prices or a volume"),
    ],
    ids=["no_year_at_100", "zero_price_index", "price_index_P52", "volume_index_P52_PRIV", "c_ref_missing",
         "mixed_reference_years", "inconsistent", "price_index_alone"],
)
def test_bad_index_input_exit_2_located(accounts, capsys, rows, located):
    code, err = run_check(accounts(rows), capsys)
    assert code == 2
    assert located in err
    assert "Traceback" not in err


def test_carried_columns_reach_the_validated_rows_and_levels(accounts, tmp_path, monkeypatch):
    # obs_status declared in carry_columns is kept as text through validation (index rows give it
    # to the rows derived from them) and published in levels; conf_status, not declared, is dropped
    from valvol import staging
    from valvol.config import load_config
    from valvol.io import workfiles

    csv = GOOD.replace("value\n", "value,obs_status,conf_status\n", 1)
    lines = csv.splitlines()
    csv = "\n".join([lines[0], *[f"{line},{'P' if 'index' in line else 'A'},F" for line in lines[1:]]]) + "\n"
    folder = accounts(csv, 'carry_columns = ["obs_status"]\n')
    staged = []
    stage = staging.stage_accounts
    monkeypatch.setattr(staging, "stage_accounts", lambda con, rows, config: (staged.append(rows),
                                                                              stage(con, rows, config))[1])
    work = tmp_path / "work"
    work.mkdir()
    run = pipeline.Run(folder, work, load_config(folder))
    assert pipeline.run_stages(run, pipeline.stages_until("validate")) == []
    validated = workfiles.read_frame(work / pipeline.VALIDATED_FILE)
    assert "obs_status" in validated.columns and "conf_status" not in validated.columns
    by_basis = validated.groupby("price_basis")["obs_status"].agg(set).to_dict()
    assert by_basis == {"current": {"A"}, "chain_linked": {"P"}}
    assert set(validated.loc[validated["price_basis"] == "chain_linked", "derived_from"]) == {"volume_index"}
    assert validated["obs_status"].map(type).eq(str).all()
    (rows,) = staged  # the rows that reach stage_accounts carry it too
    assert rows["obs_status"].tolist() == validated["obs_status"].tolist()
    pipeline.rebuild(folder, tmp_path / "out", charts=False)
    levels = pd.read_parquet(tmp_path / "out" / "levels.parquet")
    assert list(levels.columns)[-1] == "obs_status"
    given = levels.merge(validated[["economy", "period", "item", "price_basis"]])
    assert len(given) == len(validated) and set(given["obs_status"]) == {"A", "P"}
    assert (levels.merge(validated[["economy", "period", "item", "price_basis"]], how="left", indicator=True)
            .query("_merge == 'left_only'")["obs_status"].eq("")).all()
