"""The flash estimate of 2025 (sample_accounts/first_estimate/), reconciled to the 2025 annual accounts.

Sources are named beside each check (formulas in docs/methods.md).
"""

from __future__ import annotations

import tomllib

import numpy as np
import pandas as pd
from support.quillon import (
    AGGREGATES,
    COLUMNS,
    FLASH_ACCOUNTS,
    FLASH_BENCHMARKS,
    FLASH_COMPONENTS,
    FLASH_FOLDER,
    FLASH_Q,
    FLASH_SIGNS,
    INDICATOR_BASED,
    ROUND_Q,
    wide_basis,
)

from valvol.io.readers import account_files

# --- the flash estimate of 2025 (first_estimate/), reconciled to the 2025 annual accounts ------


def test_flash_folder_holds_accounts_config_and_benchmarks():
    # The accounts reader takes every .csv/.parquet of a folder and no sub-folder: the benchmarks sit in
    # annual/, which the [reconcile] benchmarks option names (README, benchmarking and reconciliation).
    top = sorted(p.name for p in FLASH_FOLDER.iterdir())
    assert top == ["accounts.csv", "annual", "valvol.toml"]
    assert sorted(p.name for p in (FLASH_FOLDER / "annual").iterdir()) == ["benchmarks.csv"]
    assert [p.name for p in account_files(FLASH_FOLDER)] == ["accounts.csv"]


def test_flash_files_are_the_generator_output(gen, built):
    # Common practice for committed generated data: both files are reproduced byte for byte.
    assert gen.to_csv_text(gen.build_first_estimate(built)) == FLASH_ACCOUNTS.read_text(encoding="utf-8")
    assert gen.to_csv_text(gen.build_benchmarks(built)) == FLASH_BENCHMARKS.read_text(encoding="utf-8")


def test_flash_config_is_read_by_valvol(gen):
    from valvol.config import load_config

    raw = tomllib.loads((FLASH_FOLDER / "valvol.toml").read_text(encoding="utf-8"))
    assert set(raw) == {"aggregates", "reconcile"}
    parsed = {
        agg: {c.lstrip("-"): -1 if c.startswith("-") else 1 for c in comps}
        for agg, comps in raw["aggregates"].items()
    }
    assert parsed == AGGREGATES == gen.AGGREGATES
    r = load_config(FLASH_FOLDER).reconcile
    assert r.aggregate == gen.FLASH_TOTAL == "B1GQ"
    assert {c.lstrip("-"): -1 if c.startswith("-") else 1 for c in r.components} == FLASH_SIGNS
    assert FLASH_SIGNS == gen.FLASH_SIGNS
    assert r.discrepancy == gen.FLASH_DISCREPANCY == "YA1"
    assert list(r.fixed) == gen.FLASH_BUDGET == ["P3_S13"]
    assert r.benchmarks == gen.FLASH_BENCHMARKS
    assert r.price_bases == ("current",)


def test_flash_input_contract(flash, benchmarks):
    assert list(flash.columns) == COLUMNS
    assert (flash["economy"] == "XQ").all() and (flash["adjustment"] == "S").all()
    assert (flash["unit"] == "tessel million").all()
    assert (flash["price_basis"] == "current").all()
    assert list(dict.fromkeys(flash["item"])) == [*FLASH_COMPONENTS, "YA1", "B1GQ"]  # no P3, P5: derived
    periods = [f"{y}-Q{q}" for y in range(2012, 2026) for q in range(1, 5)]
    for _, rows in flash.groupby("item"):
        assert rows["period"].tolist() == periods
    tenths = flash["value"].to_numpy() * 10.0
    np.testing.assert_allclose(tenths, np.round(tenths), rtol=0, atol=1e-6)
    # the benchmarks: the same columns, one annual row per component
    assert list(benchmarks.columns) == COLUMNS
    assert benchmarks["item"].tolist() == FLASH_COMPONENTS
    assert (benchmarks["period"] == "2025").all() and (benchmarks["price_basis"] == "current").all()
    assert (benchmarks["economy"] == "XQ").all() and (benchmarks["unit"] == "tessel million").all()


def test_flash_is_the_later_release_before_2025(flash, committed):
    # Design: only 2025 is a flash; every earlier quarter, and YA1, GDP and government consumption in 2025
    # (the production-side GDP, the fixed discrepancy, the budget), are the later release's values.
    later = committed[committed["price_basis"] == "current"].set_index(["item", "period"])["value"]
    merged = flash.set_index(["item", "period"])["value"].to_frame("flash").join(later.rename("later"))
    assert merged["later"].notna().all()
    before = merged.index.get_level_values("period") < "2025-Q1"
    assert (merged.loc[before, "flash"] == merged.loc[before, "later"]).all()
    held = merged.loc[(["YA1", "B1GQ", "P3_S13"], FLASH_Q), :]
    assert (held["flash"] == held["later"]).all()
    moved = merged.loc[(INDICATOR_BASED, FLASH_Q), :]
    assert (moved["flash"] != moved["later"]).all()


def test_indicator_errors_as_designed(gen, flash_wide, committed):
    # Design of the flash: F(h) = V(2024-Q4) * c(h) / c(2024-Q4) * exp(e(h)), c the true value at current
    # prices, e the indicator error (bias plus seeded noise), rounded; the errors reach by Q4: household
    # retail sales -0.5..-1%, GFCF +1..2%, exports and imports 0.5..1% in size.
    errors = gen.indicator_errors().pivot(index="item", columns="period", values="error")
    q4 = 100.0 * errors["2025-Q4"]
    assert -1.0 <= q4["P31_S14"] <= -0.5
    assert 1.0 <= q4["P51G"] <= 2.0
    assert 0.5 <= abs(q4["P6"]) <= 1.0 and 0.5 <= abs(q4["P7"]) <= 1.0
    truth = gen.unrounded_levels().pivot(index="period", columns="item", values="c")
    base = flash_wide.loc["2024-Q4", INDICATOR_BASED]
    expected = base * truth.loc[FLASH_Q, INDICATOR_BASED] / truth.loc["2024-Q4", INDICATOR_BASED]
    expected = expected * np.exp(errors.T.loc[FLASH_Q, INDICATOR_BASED])
    assert (flash_wide.loc[FLASH_Q, INDICATOR_BASED] - expected).abs().to_numpy().max() <= ROUND_Q + 1e-6
    # inventories and valuables: each 2025 quarter repeats the 2024 quarterly mean (rounded)
    for item in ["P52", "P53"]:
        mean_2024 = flash_wide.loc[[f"2024-Q{q}" for q in range(1, 5)], item].mean()
        assert (flash_wide.loc[FLASH_Q, item] - mean_2024).abs().max() <= ROUND_Q + 1e-9, item


def test_flash_misses_the_benchmarks(flash_wide, benchmarks):
    # Design: the indicator-based components miss their 2025 totals by more than 0.1%; government
    # consumption (from the budget) meets its benchmark exactly, as a fixed series must (reconcile
    # docstring: a benchmark of a fixed series must already be met; docs/methods.md §7.3, fixed series).
    bench = benchmarks.set_index("item")["value"]
    sums = flash_wide.loc[FLASH_Q, FLASH_COMPONENTS].sum()
    miss = 100.0 * (sums - bench) / bench.abs()
    assert (miss[INDICATOR_BASED].abs() > 0.1).all()
    assert abs(sums["P3_S13"] - bench["P3_S13"]) <= 1e-6
    assert miss["P31_S14"] < 0 and miss["P51G"] > 0  # retail sales miss services; GFCF overstated


def test_flash_misses_the_gdp_identity_in_2025(flash_wide):
    # SNA expenditure identity B1GQ = P3 + P5 + P6 - P7 + YA1 (common practice): it holds to floating-point
    # precision up to 2024-Q4 (the later release) and fails in every quarter of the flash.
    signed = sum(sign * flash_wide[item] for item, sign in FLASH_SIGNS.items())
    residual = flash_wide["B1GQ"] - flash_wide["YA1"] - signed
    assert residual.loc[residual.index < "2025-Q1"].abs().max() <= 1e-6
    assert (residual.loc[FLASH_Q].abs() > 1e-4 * flash_wide.loc[FLASH_Q, "B1GQ"]).all()


def test_annual_system_is_consistent(flash_wide, benchmarks, committed):
    # docs/methods.md §7.3 (rank; Stone, Champernowne & Meade 1942, QNA 2017 6.5.A, as quoted): the signed
    # annual benchmarks plus the discrepancy must equal the year's total, sum_i s_i A_i + sum_q YA1_q =
    # sum_q B1GQ_q, within the reconcile tolerance (1e-6 of the annual total); here exactly, to float
    # precision. The benchmarks are the true totals: the later release's sums of quarters.
    bench = benchmarks.set_index("item")["value"]
    signed = sum(sign * bench[item] for item, sign in FLASH_SIGNS.items())
    total = flash_wide.loc[FLASH_Q, "B1GQ"].sum()
    gap = total - flash_wide.loc[FLASH_Q, "YA1"].sum() - signed
    assert abs(gap) <= 1e-6 * abs(total)
    assert abs(gap) <= 1e-6
    later = wide_basis(committed, "current").loc[FLASH_Q, FLASH_COMPONENTS].sum()
    assert (bench - later).abs().max() <= 1e-6


def test_reconciliation_of_the_flash_end_to_end(tmp_path, flash_wide, benchmarks, committed):
    # valvol reconcile (README, benchmarking and reconciliation; multivariate proportional Denton, QNA 2017
    # 6.5.A; docs/methods.md §7.3): afterwards each component meets its 2025 benchmark, the signed components
    # plus YA1 equal GDP each quarter, the fixed series and the quarters before 2024 do not move and 2024
    # keeps its annual totals. Design: the reconciled household consumption is within 0.1% of the later
    # release in every 2025 quarter, closer than the flash.
    from valvol.pipeline import reconciled_accounts

    report = reconciled_accounts(FLASH_FOLDER, tmp_path / "rec")
    out = pd.read_csv(tmp_path / "rec" / "accounts.csv", dtype={"value": "float64"})
    after = wide_basis(out, "current")
    bench = benchmarks.set_index("item")["value"]
    sums = after.loc[FLASH_Q, FLASH_COMPONENTS].sum()
    assert ((sums - bench).abs() <= 1e-6 * bench.abs().clip(lower=1.0)).all()
    signed = sum(sign * after[item] for item, sign in FLASH_SIGNS.items())
    residual = after["B1GQ"] - after["YA1"] - signed
    assert (residual.abs() <= 1e-9 * after["B1GQ"].abs()).all()
    assert (after["P3_S13"] == flash_wide["P3_S13"]).all()
    early = after.index < "2024-Q1"
    assert (after.loc[early] == flash_wide.loc[early, after.columns]).all().all()
    y2024 = [f"2024-Q{q}" for q in range(1, 5)]
    moved_2024 = after.loc[y2024, FLASH_COMPONENTS].sum() - flash_wide.loc[y2024, FLASH_COMPONENTS].sum()
    assert moved_2024.abs().max() <= 1e-6
    truth = wide_basis(committed, "current").loc[FLASH_Q, "P31_S14"]
    err_after = (100.0 * (after.loc[FLASH_Q, "P31_S14"] / truth - 1.0)).abs()
    err_before = (100.0 * (flash_wide.loc[FLASH_Q, "P31_S14"] / truth - 1.0)).abs()
    assert err_after.max() < 0.1 and err_after.max() < err_before.max()
    assert set(report["item"]) == set(FLASH_COMPONENTS)
    assert (report.loc[report["item"] == "P3_S13", "adjustment"] == 0).all()
