"""Benchmarking and reconciliation as a pipeline stage and a CLI command (README, reconciliation).

Scenario (invented, from the demo economy): indicator-based first estimates of the 2025
quarters of every expenditure component at current prices miss both the 2025 annual values
(which arrive later) and the quarterly GDP; reconciliation makes each component match its
year and the components add to GDP each quarter, government consumption held fixed.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from valvol import pipeline
from valvol.cli import main
from valvol.errors import InputError

COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "P7"]
TOML = """\
[aggregates]
B1GQ = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "-P7", "YA1"]
[reconcile]
aggregate = "B1GQ"
discrepancy = "YA1"
fixed = ["P3_S13"]
"""


def first_estimate(demo_dir, folder, toml=TOML, scale_annual=1.0):
    acc = pd.read_csv(demo_dir / "accounts.csv")
    acc = acc[(acc["price_basis"] == "current") & acc["item"].isin([*COMPONENTS, "YA1", "B1GQ"])]
    truth = acc.copy()
    rng = np.random.default_rng(7)
    late = acc["period"].str.startswith("2025") & acc["item"].isin(COMPONENTS) & (acc["item"] != "P3_S13")
    acc.loc[late, "value"] = (acc.loc[late, "value"] * (1 + rng.normal(0, 0.01, late.sum()))).round(1)
    years = truth[truth["period"].str.startswith("2025") & truth["item"].isin(COMPONENTS)]
    annual = years.groupby(["economy", "item", "price_basis"], as_index=False)["value"].sum()
    scale = np.where(annual["item"] == "P3_S13", 1.0, scale_annual)  # the fixed series keeps its year
    annual = annual.assign(period="2025", value=(annual["value"] * scale).round(1), adjustment="S",
                           unit="tessel million")
    folder.mkdir()
    pd.concat([acc, annual[acc.columns]]).to_csv(folder / "accounts.csv", index=False)
    (folder / "valvol.toml").write_text(toml)
    return folder, truth


def test_reconciled_components_add_up_and_meet_their_years(demo_dir, tmp_path):
    folder, truth = first_estimate(demo_dir, tmp_path / "first")
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    levels = pd.read_parquet(out / "levels.parquet").query("price_basis == 'current'")
    wide = levels[levels["frequency"] == "Q"].pivot(index="period", columns="item", values="value")
    signs = {c: -1 if c == "P7" else 1 for c in COMPONENTS}
    identity = sum(s * wide[c] for c, s in signs.items()) + wide["YA1"] - wide["B1GQ"]
    assert identity.abs().max() <= 1e-9 * wide["B1GQ"].abs().max()  # issue 5: within 1e-9
    bench = truth[truth["period"].str.startswith("2025")].groupby("item")["value"].sum()
    got = wide.loc[wide.index.str.startswith("2025")].sum()
    for c in COMPONENTS:
        assert abs(got[c] - round(bench[c], 1)) <= 1e-6 * abs(bench[c]) + 0.051, c
    report = pd.read_parquet(out / "reconciliation.parquet")
    assert set(report.columns) >= {"economy", "period", "item", "before", "after", "adjustment", "adjustment_pct",
                                   "constraint", "growth_before_pct", "growth_after_pct"}
    assert (report.query("item == 'P3_S13'")["adjustment"] == 0).all()  # fixed series do not move
    moved = report[report["adjustment"].abs() > 1e-9]
    # only the benchmark year and the year before it move; that year keeps its own total
    assert moved["period"].str[:4].isin(["2024", "2025"]).all()
    y2024 = report[report["period"].str.startswith("2024")].groupby("item")["adjustment"].sum()
    assert y2024.abs().max() < 1e-6
    checks = pd.read_parquet(out / "checks.parquet")
    after = checks[checks["rule"] == "reconcile_identity_after_current"]
    before = checks[checks["rule"] == "reconcile_identity_before_current"]
    assert (after["status"] == "pass").all() and (before["status"] == "warn").any()


def test_inconsistent_system_is_refused_with_year_and_gap(demo_dir, tmp_path):
    folder, _ = first_estimate(demo_dir, tmp_path / "bad", scale_annual=1.02)
    with pytest.raises(InputError) as err:
        pipeline.rebuild(folder, tmp_path / "out", charts=False)
    text = err.value.summary()
    assert "2025" in text and "gap" in text


def test_cli_writes_reconciled_accounts_ready_to_rebuild(demo_dir, tmp_path, capsys):
    folder, _ = first_estimate(demo_dir, tmp_path / "first")
    to = tmp_path / "reconciled"
    assert main(["-q", "reconcile", str(folder), "--to", str(to)]) == 0
    assert "quarterly values adjusted" in capsys.readouterr().out
    assert (to / "accounts.csv").exists() and (to / "reconciliation" / "report.csv").exists()
    again = tmp_path / "again"
    assert main(["-q", "reconcile", str(to), "--to", str(again)]) == 0
    second = pd.read_csv(again / "reconciliation" / "report.csv")
    assert second["adjustment"].abs().max() < 1e-6  # reconciled accounts are consistent: nothing moves
    assert main(["-q", "rebuild", str(to), "--out", str(tmp_path / "o"), "--no-flow", "--no-charts"]) == 0


def test_benchmarking_one_series_to_its_years(demo_dir, tmp_path):
    toml = '[benchmark]\nitems = ["P51G"]\nmethod = "proportional_denton"\n'
    acc = pd.read_csv(demo_dir / "accounts.csv")
    acc = acc[(acc["item"] == "P51G") & (acc["price_basis"] == "current")]
    annual = acc.assign(year=acc["period"].str[:4]).groupby("year", as_index=False)["value"].sum()
    annual = annual.assign(value=(annual["value"] * 1.01).round(1))  # the years arrive 1% higher
    rows = pd.concat([acc, pd.DataFrame({"economy": "XQ", "period": annual["year"], "item": "P51G",
                                         "price_basis": "current", "value": annual["value"], "adjustment": "S",
                                         "unit": "tessel million"})])
    folder = tmp_path / "bm"
    folder.mkdir()
    rows.to_csv(folder / "accounts.csv", index=False)
    (folder / "valvol.toml").write_text(toml)
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    levels = pd.read_parquet(out / "levels.parquet").query("item == 'P51G' and price_basis == 'current'")
    q = levels[levels["frequency"] == "Q"].assign(year=lambda d: d["period"].str[:4]).groupby("year")["value"].sum()
    a = annual.set_index("year")["value"]
    assert (q - a).abs().max() < 1e-6  # annual sums exact (Denton 1971; Cholette 1984)
    report = pd.read_parquet(out / "reconciliation.parquet")
    # a uniform 1% rise of every year: proportional Denton gives the pro-rata result
    assert np.allclose(report["adjustment_pct"], 1.0, atol=0.06)


def test_demo_flash_estimate_walkthrough(demo_dir, tmp_path, capsys):
    # sample_accounts/first_estimate (README walkthrough): benchmarks in a sub-folder file
    to = tmp_path / "reconciled_fe"
    assert main(["-q", "reconcile", str(demo_dir / "first_estimate"), "--to", str(to)]) == 0
    assert (to / "annual" / "benchmarks.csv").exists()  # the file the copied config names
    assert main(["-q", "rebuild", str(to), "--out", str(tmp_path / "o"), "--no-flow", "--no-charts"]) == 0
    checks = pd.read_parquet(tmp_path / "o" / "checks.parquet")
    assert (checks["status"] != "warn").all() and (checks["status"] != "fail").all()
    report = pd.read_csv(to / "reconciliation" / "report.csv")
    p53 = report[report["item"] == "P53"].set_index("period")
    # valuables change sign: adjusted additively (smooth first differences), not in proportion
    assert p53.loc["2025-Q1", "before"] > 0 > p53.loc["2025-Q4", "after"]
    steps = p53.loc[p53.index.str.startswith("2025"), "adjustment"].diff().dropna()
    assert (steps < 0).all()


def test_benchmark_file_changes_are_not_unchanged(demo_dir, tmp_path):
    import shutil

    folder = tmp_path / "fe"
    shutil.copytree(demo_dir / "first_estimate", folder)
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    bench = folder / "annual" / "benchmarks.csv"
    bench.write_text(bench.read_text().replace("current,", "current,1", 1))  # a changed benchmark
    with pytest.raises(InputError, match="gap"):  # rebuilt (and refused: inconsistent), not skipped
        pipeline.rebuild(folder, out, charts=False)


def test_benchmarking_a_component_of_a_given_aggregate_is_refused(demo_dir, tmp_path):
    # P5 is given; benchmarking P51G alone would publish P5 != P51G + P52 + P53
    acc = pd.read_csv(demo_dir / "accounts.csv")
    p51g = acc[(acc["item"] == "P51G") & (acc["price_basis"] == "current")]
    years = p51g.assign(period=p51g["period"].str[:4]).groupby(["economy", "item", "price_basis", "period"],
                                                               as_index=False)["value"].sum()
    years = years.assign(value=(years["value"] * 1.01).round(1), adjustment="S", unit="tessel million")
    folder = tmp_path / "bm"
    folder.mkdir()
    pd.concat([acc, years[acc.columns]]).to_csv(folder / "accounts.csv", index=False)
    (folder / "valvol.toml").write_text((demo_dir / "valvol.toml").read_text() + '\n[benchmark]\nitems = ["P51G"]\n')
    with pytest.raises(InputError) as err:
        pipeline.rebuild(folder, tmp_path / "out", charts=False)
    assert any(p.item == "P5" and "identity_current fails" in p.reason for p in err.value.problems)
    assert not (tmp_path / "out" / "latest").exists()
