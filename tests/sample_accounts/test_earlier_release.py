"""The earlier release (sample_accounts/earlier_release/): one quarter shorter, first estimates of 2024-Q3 to 2025-Q3.

Sources are named beside each check (formulas in docs/methods.md).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from support.quillon import (
    ACCOUNTS,
    AGGREGATES,
    CHAINED,
    COLUMNS,
    CPI,
    EARLIER,
    EARLIER_CPI,
    EARLIER_FOLDER,
    FLASH_ACCOUNTS,
    FLASH_BENCHMARKS,
    FOLDER,
    INCOME,
    POSITIVE,
    REVISED,
    ROUND_A,
    ROUND_Q,
    qoq,
    wide_basis,
)

# --- the earlier release (one quarter earlier, first estimates of 2024-Q3 .. 2025-Q3) ---------


def test_earlier_file_is_the_generator_output(gen, earlier_built, earlier):
    # Common practice for committed generated data: the file is reproduced by its generator, and the
    # earlier release comes out of the same code path as the later one (build_release).
    assert list(earlier.columns) == COLUMNS
    assert gen.to_csv_text(earlier_built) == EARLIER.read_text(encoding="utf-8")
    again = gen.build_release(gen.EARLIER_LAST_QUARTER, gen.REVISION_SEED)
    pd.testing.assert_frame_equal(again, earlier_built)


def test_main_regenerates_both_files_identically(gen, tmp_path):
    # Common practice: a seeded generator rewrites byte-identical files on every run; the committed
    # files come from an earlier run, so a fresh run into an empty folder must give the same bytes.
    gen.main(tmp_path)
    written = sorted(p.relative_to(tmp_path).as_posix() for p in tmp_path.rglob("*") if p.is_file())
    assert written == [
        "accounts.csv",
        "cpi.csv",
        "cpi_coicop.csv",
        "earlier_release/accounts.csv",
        "earlier_release/cpi.csv",
        "first_estimate/accounts.csv",
        "first_estimate/annual/benchmarks.csv",
        "household_coicop.csv",
    ]
    for committed_file in [ACCOUNTS, CPI, EARLIER, EARLIER_CPI, FLASH_ACCOUNTS, FLASH_BENCHMARKS,
                           FOLDER / "household_coicop.csv", FOLDER / "cpi_coicop.csv"]:
        fresh = tmp_path / committed_file.relative_to(FOLDER)
        assert fresh.read_bytes() == committed_file.read_bytes(), committed_file.name


def test_earlier_folder_is_one_release_with_the_same_config():
    # The accounts reader takes every .csv/.parquet of a folder and no sub-folder: the earlier release
    # has its own folder with only its accounts, its CPI and the same valvol.toml as the later one.
    assert sorted(p.name for p in EARLIER_FOLDER.iterdir()) == ["accounts.csv", "cpi.csv", "valvol.toml"]
    assert (EARLIER_FOLDER / "valvol.toml").read_bytes() == (FOLDER / "valvol.toml").read_bytes()


def test_earlier_input_contract(earlier, committed):
    assert (earlier["economy"] == "XQ").all()
    assert (earlier["adjustment"] == "S").all()
    assert (earlier["unit"] == "tessel million").all()
    periods = [f"{y}-Q{q}" for y in range(2012, 2026) for q in range(1, 5)][:-1]
    assert sorted(earlier["period"].unique()) == periods
    assert periods[-1] == "2025-Q3"
    series = committed[["item", "price_basis"]].drop_duplicates()
    first = earlier[["item", "price_basis"]].drop_duplicates()
    assert first.reset_index(drop=True).equals(series.reset_index(drop=True))  # same series, same order
    assert (earlier.groupby(["item", "price_basis"]).size() == 55).all()
    assert not earlier.duplicated(["item", "price_basis", "period"]).any()
    tenths = earlier["value"].to_numpy() * 10.0
    np.testing.assert_allclose(tenths, np.round(tenths), rtol=0, atol=1e-6)


def test_earlier_release_identical_before_the_revised_quarters(vintages):
    # Design of the two releases: up to 2024-Q2 quantities and prices are the same, so the published
    # values at current and previous-year prices are identical. The chain-linked quarters too: by
    # annual overlap a quarter of y depends only on y-1 and earlier years and on the quarter itself,
    # CLV(s,y) = k(s,y) * CLV_{y-1} / C_{y-1} (docs/methods.md §2.2; ABS 5216.0 ch.6 Annex eq.(1)).
    before = vintages[vintages.index.get_level_values("period") < "2024-Q3"]
    assert len(before) == 36 * 50  # 36 series (33 expenditure, 3 income) over 2012-Q1 .. 2024-Q2
    for basis in ["current", "previous_year", "chain_linked"]:
        rows = before.xs(basis, level="price_basis")
        assert (rows["earlier"] == rows["later"]).all(), basis


def test_same_simulation_before_the_revised_quarters(gen):
    # Design: the earlier release perturbs only the quarters 2024-Q3 .. 2025-Q3 of the same simulation;
    # prices are revised less than quantities.
    later = gen.simulate_products()
    first, shares = gen.release_inputs(gen.EARLIER_LAST_QUARTER, gen.REVISION_SEED)
    merged = first.merge(later, on=["item", "product", "period"], suffixes=("_e", "_l"), validate="1:1")
    before = merged["period"] < "2024-Q3"
    for col in ["price", "quantity"]:
        assert (merged.loc[before, f"{col}_e"] == merged.loc[before, f"{col}_l"]).all(), col
    window = merged[~before]
    assert sorted(window["period"].unique()) == REVISED
    d_q = np.log(window["quantity_e"] / window["quantity_l"]).abs()
    d_p = np.log(window["price_e"] / window["price_l"]).abs()
    assert (d_q > 0).all() and (d_p > 0).all()
    assert d_p.mean() < d_q.mean()
    assert len(shares["P52"]) == 4 * 15 - 1  # 2011-Q1 .. 2025-Q3


@pytest.mark.parametrize("basis", ["current", "previous_year"])
def test_earlier_expenditure_identities_hold_each_quarter(earlier, basis):
    # SNA expenditure identity (common practice); signed sums at current and previous-year prices
    # (docs/methods.md, Notation), within floating-point precision.
    table = wide_basis(earlier, basis)
    for agg, signs in AGGREGATES.items():
        total = sum(sign * table[item] for item, sign in signs.items())
        np.testing.assert_allclose(table[agg], total, rtol=0, atol=1e-6, err_msg=f"{agg} {basis}")


def test_revisions_present_in_every_revised_quarter(vintages):
    # Design: every quarter of 2024-Q3 .. 2025-Q3 is a first estimate that the later release revised.
    window = vintages[vintages.index.get_level_values("period") >= "2024-Q3"]
    changed = (window["earlier"] != window["later"]).groupby(level=["item", "price_basis"]).sum()
    for basis in ["current", "previous_year", "chain_linked"]:
        assert changed.loc[("B1GQ", basis)] == 5, basis
    for item in ["P51G", "P52", "P3", "P6", "P7", *INCOME]:
        assert changed.loc[(item, "current")] >= 4, item


def test_size_of_the_level_revisions(vintages):
    # Design of the demo (a few tenths of a percent, larger for investment P51G and inventories P52,
    # growing toward the latest quarter). Revision R = L - P, later minus earlier estimate
    # (docs/methods.md section 8, OECD/Eurostat Guidelines on Revisions Policy and Analysis).
    cur = vintages.xs("current", level="price_basis").loc[(slice(None), REVISED), :]
    rel = (100.0 * (cur["later"] / cur["earlier"] - 1.0)).unstack("period")
    assert rel.loc[POSITIVE].abs().to_numpy().max() <= 1.0
    assert 0.5 <= rel.loc["P51G"].abs().max() <= 3.0
    assert rel.loc["P51G"].abs().max() > rel.loc[POSITIVE].abs().to_numpy().max()
    assert rel.loc[POSITIVE, "2025-Q3"].abs().mean() > rel.loc[POSITIVE, "2024-Q3"].abs().mean()
    clv = vintages.xs(("B1GQ", "chain_linked"), level=["item", "price_basis"]).loc[REVISED]
    gdp_rel = (100.0 * (clv["later"] / clv["earlier"] - 1.0)).abs()
    assert gdp_rel.idxmax() == "2025-Q3" and 0.2 <= gdp_rel.max() <= 1.0
    # inventories: poor first estimates, tens of percent of their own (small) level, under 0.15% of GDP
    p52 = cur.loc["P52"]
    gdp = cur.loc["B1GQ", "later"]
    assert (100.0 * (p52["later"] - p52["earlier"]).abs() / p52["earlier"].abs()).max() >= 10.0
    assert (100.0 * (p52["later"] - p52["earlier"]).abs() / gdp).max() <= 0.15


def test_size_of_the_gdp_growth_revisions(earlier, committed):
    # Design: the first estimate of 2025-Q3 GDP volume growth q/q differs by 0.2-0.5 pp from the later
    # release; earlier quarters less. Scale checked against ONS, GDP revisions in Blue Book 2020 (2023),
    # Table 1: mean absolute revision of GDP growth 0.2 pp at T+3 (as quoted in docs/methods.md section 8).
    # Growth rates are computed within each vintage, then compared (docs/methods.md section 8, pitfalls).
    revision = (qoq(committed, "B1GQ") - qoq(earlier, "B1GQ")).loc[["2024-Q2", *REVISED]]
    assert revision.loc["2024-Q2"] == 0.0
    assert 0.2 <= abs(revision.loc["2025-Q3"]) <= 0.5
    assert (revision.loc[REVISED[:-1]].abs() < abs(revision.loc["2025-Q3"])).all()
    assert 0.05 <= revision.loc[REVISED].abs().mean() <= 0.3
    # prices are revised less than volumes: GDP deflator growth (docs/methods.md section 1, D = 100 C/CLV)
    defl = {
        name: wide_basis(f, "current")["B1GQ"] / wide_basis(f, "chain_linked")["B1GQ"]
        for name, f in [("earlier", earlier), ("later", committed)]
    }
    defl_growth = {name: 100.0 * (d / d.shift(1) - 1.0) for name, d in defl.items()}
    defl_revision = (defl_growth["later"] - defl_growth["earlier"]).loc[REVISED]
    assert defl_revision.abs().max() < revision.loc[REVISED].abs().max()


def test_incomplete_year_links_on_the_previous_year(gen, earlier, committed):
    # docs/methods.md §2.2 annual_overlap [DERIVED]: the quarters of 2025, an incomplete year in the earlier
    # release, are CLV(s,2025) = k(s,2025) * CLV_2024 / C_2024, with the earlier release's own 2024.
    levels = gen.unrounded_levels(gen.EARLIER_LAST_QUARTER, gen.REVISION_SEED)
    assert levels["period"].max() == "2025-Q3"
    chained = levels[levels["item"].isin(CHAINED)]
    c_2024 = chained[chained["year"] == 2024].groupby("item")["c"].sum()
    clv = earlier[earlier["price_basis"] == "chain_linked"].assign(year=lambda d: d["period"].str[:4])
    clv_2024 = clv[clv["year"] == "2024"].groupby("item")["value"].sum()
    q2025 = chained[chained["year"] == 2025].merge(
        clv[["item", "period", "value"]], on=["item", "period"], validate="1:1"
    )
    assert len(q2025) == 3 * len(CHAINED)
    expected = q2025["k"] * q2025["item"].map(clv_2024 / c_2024)
    tol = ROUND_Q + q2025["k"] * ROUND_A / q2025["item"].map(c_2024)
    assert ((q2025["value"] - expected).abs() <= tol + 1e-6).all()
    # the 2024 annual chain-linked volume differs between the releases (its Q3 and Q4 were revised)
    later_2024 = committed[
        (committed["price_basis"] == "chain_linked") & committed["period"].str.startswith("2024")
    ]
    assert (later_2024.groupby("item")["value"].sum() - clv_2024).abs().min() > 0.0


def test_bad_last_quarter_is_refused(gen):
    for label in ["2025Q3", "2026-Q1", "2019-Q4"]:
        with pytest.raises(ValueError, match="last quarter"):
            gen.build_release(label)
