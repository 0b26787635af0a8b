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


# --- past the last benchmark (a benchmarks file covering fewer years than the quarters) -------

def index_indicator_folder(folder, toml):
    """P51G quarters 2021..2023 on an index scale (near 100) and a benchmarks file in money
    terms (near 5,000 a year) for 2021 and 2022 only, the ratio differing by year."""
    rng = np.random.default_rng(3)
    i = 100.0 * np.exp(np.cumsum(rng.normal(0.005, 0.01, 12)))
    periods = [f"{y}-Q{q}" for y in (2021, 2022, 2023) for q in (1, 2, 3, 4)]
    acc = pd.DataFrame({"economy": "XQ", "period": periods, "item": "P51G", "price_basis": "current",
                        "value": i, "adjustment": "S", "unit": "tessel million"})
    bench = pd.DataFrame({"economy": "XQ", "period": ["2021", "2022"], "item": "P51G", "price_basis": "current",
                          "value": [round(i[:4].sum() * 12.4, 1), round(i[4:8].sum() * 12.9, 1)], "adjustment": "S",
                          "unit": "tessel million"})
    (folder / "annual").mkdir(parents=True)
    acc.to_csv(folder / "accounts.csv", index=False)
    bench.to_csv(folder / "annual" / "benchmarks.csv", index=False)
    (folder / "valvol.toml").write_text(toml + 'benchmarks = "annual/benchmarks.csv"\n')
    return i, bench["value"].to_numpy()


def benchmarked_quarters(out):
    lv = pd.read_parquet(out / "levels.parquet").query("item == 'P51G' and price_basis == 'current'")
    return lv[lv["frequency"] == "Q"].sort_values("period")["value"].to_numpy()


@pytest.mark.parametrize("method", ["proportional_denton", "additive_denton"])
def test_quarters_past_the_last_benchmark_carry_the_last_ratio_or_difference(tmp_path, method):
    """[benchmark] with a benchmarks file for 2021-2022 and quarters to 2023-Q4 (Denton 1971,
    Cholette 1984, IMF QNA 2017 ch. 6). No constraint binds the 2023 quarters, so the
    objective's terms past 2022-Q4 are zero at the minimum: the BI ratio X/I (proportional) or
    X - I (additive) stays at its 2022-Q4 value (derived from the objective). Not the circular
    benchmark that held 2023 to the index's own sum (about 420 against about 5,500)."""
    folder = tmp_path / "bm"
    i, bench = index_indicator_folder(folder, f'[benchmark]\nitems = ["P51G"]\nmethod = "{method}"\n')
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    x = benchmarked_quarters(out)
    np.testing.assert_allclose([x[:4].sum(), x[4:8].sum()], bench, rtol=1e-9)  # the given years, exact
    if method == "proportional_denton":
        np.testing.assert_allclose(x[8:], x[7] / i[7] * i[8:], rtol=1e-9)
    else:
        np.testing.assert_allclose(x[8:], i[8:] + (x[7] - i[7]), rtol=1e-9)
    assert x[8:].sum() > 12 * i[8:].sum()
    report = pd.read_parquet(out / "reconciliation.parquet").sort_values("period")
    assert (report["constraint"].iloc[8:] == "annual benchmarks (extrapolated)").all()
    assert list(report["constraint"].iloc[[0, 7]]) == ["annual benchmark 2021", "annual benchmark 2022"]
    checks = pd.read_parquet(out / "checks.parquet")
    after = checks[checks["rule"] == "benchmark_annual_after_current"]
    assert sorted(after["period"]) == ["2021", "2022"] and (after["status"] == "pass").all()


def test_chow_lin_past_the_last_benchmark_continues_the_fitted_relation(tmp_path):
    """[benchmark] Chow-Lin, rho fixed at 0.5, constant and indicator, two benchmark years
    (Chow & Lin 1971; IMF QNA 2017 ch. 6). Two years, two coefficients: the annual GLS fit is
    exact, whatever rho, so the annual residuals and hence the quarterly ones are zero, and
    every quarter, 2023 included, is b0 + b1 I_t with (b0, b1) solving A_y = 4 b0 + b1 sum_y I
    for y = 2021, 2022 (hand derivation). Held to its own sum, 2023 would enter the regression
    as a third observation on the index's scale."""
    folder = tmp_path / "cl"
    i, bench = index_indicator_folder(folder, '[benchmark]\nitems = ["P51G"]\nmethod = "chow_lin"\nrho = 0.5\n')
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    x = benchmarked_quarters(out)
    b0, b1 = np.linalg.solve([[4.0, i[:4].sum()], [4.0, i[4:8].sum()]], bench)
    np.testing.assert_allclose(x, b0 + b1 * i, rtol=1e-9)


def test_reconcile_past_the_last_benchmark_is_bound_by_the_identity_only(tmp_path):
    """[reconcile] with a benchmarks file for 2021-2022, quarters and GDP to 2023-Q4. Each
    component's indicator is proportional to its benchmarks (ratio 1.04 for P31_S14, 0.95 for
    P51G) and GDP is 1.04 P31_S14 + 0.95 P51G every quarter: that point meets every
    constraint at zero objective (multivariate proportional Denton, IMF QNA 2017 ch. 6
    6.5.A; Denton 1971), so it is the result, 2023 included (hand derivation). Held to their own
    2023 sums, the components could not add to GDP's 2023 (the rebuild was refused)."""
    rng = np.random.default_rng(5)
    z = {"P31_S14": 4000 * np.exp(np.cumsum(rng.normal(0.01, 0.01, 12))),
         "P51G": 1500 * np.exp(np.cumsum(rng.normal(0.0, 0.03, 12)))}
    k = {"P31_S14": 1.04, "P51G": 0.95}
    periods = [f"{y}-Q{q}" for y in (2021, 2022, 2023) for q in (1, 2, 3, 4)]
    gdp = sum(k[c] * z[c] for c in z)
    acc = pd.concat([pd.DataFrame({"item": c, "period": periods, "value": v}) for c, v in [*z.items(), ("B1GQ", gdp)]])
    acc = acc.assign(economy="XQ", price_basis="current", adjustment="S", unit="tessel million")
    cols = ["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]
    years = pd.DataFrame([{"item": c, "period": str(y), "value": k[c] * z[c][4 * (y - 2021): 4 * (y - 2020)].sum()}
                          for c in z for y in (2021, 2022)])
    years = years.assign(economy="XQ", price_basis="current", adjustment="S", unit="tessel million")
    folder = tmp_path / "rc"
    (folder / "annual").mkdir(parents=True)
    acc[cols].to_csv(folder / "accounts.csv", index=False)
    years[cols].to_csv(folder / "annual" / "benchmarks.csv", index=False)
    (folder / "valvol.toml").write_text('[aggregates]\nB1GQ = ["P31_S14", "P51G"]\n[reconcile]\naggregate = "B1GQ"\n'
                                        'benchmarks = "annual/benchmarks.csv"\n')
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    lv = pd.read_parquet(out / "levels.parquet").query("price_basis == 'current' and frequency == 'Q'")
    wide = lv.pivot(index="period", columns="item", values="value").sort_index()
    for c in z:
        np.testing.assert_allclose(wide[c].to_numpy(), k[c] * z[c], rtol=1e-9)
    report = pd.read_parquet(out / "reconciliation.parquet")
    r2023 = report[report["period"].str.startswith("2023")]
    assert len(r2023) == 8 and (r2023["constraint"] == "annual benchmarks (extrapolated)").all()


def test_join_year_keeps_its_own_aggregate_of_the_configured_kind(tmp_path):
    """first_year defaults to the year before the first given year (2021 here, benchmark 2022
    only, end-of-year stocks: year_from_quarters = "q4"). 2020 does not move; 2021 keeps its
    own Q4 value (its q4 aggregate, not the sum of its quarters); 2022-Q4 meets the benchmark;
    past it the BI ratio stays flat (Denton 1971, Cholette 1984; derived from the objective)."""
    rng = np.random.default_rng(8)
    i = 100.0 * np.exp(np.cumsum(rng.normal(0.005, 0.01, 16)))
    periods = [f"{y}-Q{q}" for y in (2020, 2021, 2022, 2023) for q in (1, 2, 3, 4)]
    row = {"economy": "XQ", "item": "P51G", "price_basis": "current", "adjustment": "S", "unit": "tessel million"}
    folder = tmp_path / "stock"
    (folder / "annual").mkdir(parents=True)
    pd.DataFrame({**row, "period": periods, "value": i}).to_csv(folder / "accounts.csv", index=False)
    pd.DataFrame([{**row, "period": "2022", "value": 5000.0}]).to_csv(folder / "annual" / "b.csv", index=False)
    (folder / "valvol.toml").write_text('[benchmark]\nitems = ["P51G"]\nyear_from_quarters = "q4"\n'
                                        'benchmarks = "annual/b.csv"\n')
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    x = benchmarked_quarters(out)
    np.testing.assert_allclose(x[:4], i[:4], rtol=1e-12)
    assert x[7] == pytest.approx(i[7], rel=1e-9) and x[11] == pytest.approx(5000.0, rel=1e-9)
    np.testing.assert_allclose(x[12:], x[11] / i[11] * i[12:], rtol=1e-9)
    report = pd.read_parquet(out / "reconciliation.parquet").sort_values("period")
    assert list(report["period"].iloc[[0, -1]]) == ["2021-Q1", "2023-Q4"]
