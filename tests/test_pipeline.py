"""The rebuild end to end on the demo, without Prefect (README, outputs)."""

from __future__ import annotations

import hashlib
import json
import shutil

import duckdb
import pandas as pd
import pytest

from valvol import pipeline
from valvol.errors import InputError

TABLES = pipeline.TABLES


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory, demo_dir):
    out = tmp_path_factory.mktemp("demo") / "out"
    pipeline.rebuild(demo_dir, out)
    return out


def _digest(folder):
    return {t: hashlib.sha256((folder / f"{t}.parquet").read_bytes()).hexdigest() for t in TABLES}


def test_every_table_is_written_and_readable(demo_out):
    for table in TABLES:
        n = duckdb.sql("SELECT count(*) FROM read_parquet($p)", params={"p": str(demo_out / f"{table}.parquet")})
        assert n.fetchall()[0][0] > 0, table
    manifest = json.loads((demo_out / "manifest.json").read_text())
    assert manifest["inputs"][0]["file"] == "accounts.csv" and len(manifest["inputs"][0]["sha256"]) == 64
    assert set(manifest["row_counts"]) == {*TABLES, "reconciliation"}  # empty: the demo asks for none
    assert manifest["versions"]["duckdb"]
    assert (demo_out / "valvol.duckdb").exists()


def test_levels_hold_inputs_and_derived_values(demo_out):
    levels = pd.read_parquet(demo_out / "levels.parquet")
    assert list(levels.columns) == ["economy", "period", "frequency", "item", "price_basis", "value"]
    annual = levels.query("frequency == 'A' and item == 'B1GQ' and price_basis == 'current'")
    quarters = levels.query("frequency == 'Q' and item == 'B1GQ' and price_basis == 'current'")
    assert len(annual) == 14
    # annual = sum of quarters (levels_at_annual_rate = false; common practice for flows)
    s = quarters.assign(year=quarters["period"].str[:4]).groupby("year")["value"].sum()
    assert (annual.set_index("period")["value"] - s).abs().max() < 1e-6
    assert {"B1GQ_RESIDUAL", "P3_RESIDUAL", "P5_RESIDUAL"} <= set(levels["item"])


def test_deflators_are_current_over_volume(demo_out):
    levels = pd.read_parquet(demo_out / "levels.parquet")
    d = pd.read_parquet(demo_out / "deflators.parquet")
    wide = levels.pivot_table(index=["period", "item"], columns="price_basis", values="value")
    both = d.set_index(["period", "item"]).join(wide)
    assert ((both["deflator"] - 100 * both["current"] / both["chain_linked"]).abs() < 1e-9).all()
    assert not set(d["item"]) & {"P52", "P53", "YA1"}  # sign-changing: no deflator
    # reference year 2020: the annual deflator is 100 (docs/methods.md section 1)
    ref = d.query("period == '2020'")
    assert ((ref["deflator"] - 100).abs() < 0.01).all()


def test_rebuild_is_byte_identical(demo_dir, demo_out, tmp_path):
    out2 = tmp_path / "again"
    pipeline.rebuild(demo_dir, out2)
    assert _digest(demo_out) == _digest(out2)


def test_failed_rebuild_leaves_previous_outputs_intact(demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out)
    before = _digest(out)
    latest = (out / "latest").resolve()
    bad = tmp_path / "bad"
    shutil.copytree(demo_dir, bad)
    with (bad / "accounts.csv").open("a") as fh:
        fh.write("XQ,2025-Q4,P6,current,oops,S,tessel million\n")
    with pytest.raises(InputError):
        pipeline.rebuild(bad, out)
    assert _digest(out) == before and (out / "latest").resolve() == latest
    assert not any((out / ".staging").iterdir())


def test_fisher_index_needs_given_volumes(accounts, tmp_path):
    # Fisher chains need each period's prices and quantities (docs/methods.md §3.5): without given
    # chain-linked volumes the rebuild stops with a located error (common practice)
    rows = "".join(f"XQ,2020-Q{q},P6,{b},{10 + q}\n" for q in range(1, 5) for b in ("current", "previous_year"))
    folder = accounts("economy,period,item,price_basis,value\n" + rows, '[volumes]\nindex = "fisher"\n')
    with pytest.raises(InputError) as err:
        pipeline.rebuild(folder, tmp_path / "out", charts=False)
    got = {(p.economy, p.item, p.price_basis) for p in err.value.problems}
    assert got == {("XQ", "P6", "chain_linked"), ("XQ", "B1GQ", "chain_linked")}  # B1GQ derived from P6
    assert all("fisher" in p.reason for p in err.value.problems)


def test_series_starting_later_and_components_not_reported(demo_dir, tmp_path):
    # input contract: a series may start later than others (it counts as zero before), and an
    # economy need not report every declared component (here no valuables P53 before 2015 and
    # no discrepancy YA1 at all)
    acc = pd.read_csv(demo_dir / "accounts.csv")
    early = (acc["item"] == "P53") & (acc["period"] < "2015")
    moved = acc[early].set_index(["period", "price_basis"])["value"]
    p52 = (acc["item"] == "P52") & (acc["period"] < "2015")
    acc.loc[p52, "value"] = [round(v + moved[(p, b)], 1) for v, p, b in
                             zip(acc.loc[p52, "value"], acc.loc[p52, "period"], acc.loc[p52, "price_basis"],
                                 strict=True)]
    ya1 = acc[acc["item"] == "YA1"].set_index(["period", "price_basis"])["value"]
    gdp = (acc["item"] == "B1GQ") & acc["price_basis"].isin(["current", "previous_year"])
    acc.loc[gdp, "value"] = [round(v - ya1[(p, b)], 1) for v, p, b in zip(
        acc.loc[gdp, "value"], acc.loc[gdp, "period"], acc.loc[gdp, "price_basis"], strict=True)]
    # GDP without the discrepancy; its chained volume is then chain-linked here
    acc = acc[~early & (acc["item"] != "YA1") & ~((acc["item"] == "B1GQ") & (acc["price_basis"] == "chain_linked"))]
    folder = tmp_path / "acc"
    folder.mkdir()
    acc.to_csv(folder / "accounts.csv", index=False)
    (folder / "valvol.toml").write_bytes((demo_dir / "valvol.toml").read_bytes())
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    vol = pd.read_parquet(out / "volume_contributions.parquet")
    assert vol["residual_pp"].abs().max() < 0.01  # rounding of the published volumes only
    levels = pd.read_parquet(out / "levels.parquet")
    assert {"B1GQ_RESIDUAL", "P5_RESIDUAL"} <= set(levels["item"])  # YA1 not expected for B1GQ


def test_one_quarter_overlap_quarters_are_benchmarked_to_the_years(demo_dir, tmp_path):
    # IMF QNA 2017, Example 8.8: one-quarter-overlap quarters, which do not add to the annual
    # chain, are benchmarked to it by proportional Denton ([volumes] benchmark_to_years = true)
    acc = pd.read_csv(demo_dir / "accounts.csv")
    folder = tmp_path / "acc"
    folder.mkdir()
    acc[acc["price_basis"] != "chain_linked"].to_csv(folder / "accounts.csv", index=False)
    (folder / "valvol.toml").write_text((demo_dir / "valvol.toml").read_text()
                                        + '\n[volumes]\nmethod = "one_quarter_overlap"\n')
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    clv = pd.read_parquet(out / "levels.parquet").query("price_basis == 'chain_linked' and item == 'B1GQ'")
    q = clv[clv["frequency"] == "Q"].assign(year=lambda d: d["period"].str[:4]).groupby("year")["value"].sum()
    a = clv[clv["frequency"] == "A"].set_index("period")["value"]
    assert ((q - a.reindex(q.index)).abs() / a.reindex(q.index)).max() < 1e-9
    assert abs(a.loc["2020"] - acc.query("item == 'B1GQ' and price_basis == 'current' and "
                                         "period.str.startswith('2020')")["value"].sum()) < 1e-6


def test_first_year_without_previous_year_prices_gets_its_first_links(demo_dir, demo_out, tmp_path):
    # the demo without its 2012 values at previous-year prices: 2012 becomes the first year of
    # every series, valued at its own average prices from the published chain-linked volumes
    # (docs/derivations/first_link.md, sections 2-6). Deflator contributions then exist wherever
    # volume contributions do, and the first links come close to those of the full demo, whose
    # 2012 values at 2011 prices the generator made from the quantities and the 2011 unit values
    # (sample_accounts/README.md, "How the data were built"): the first-year quarters' published
    # volumes are rounded to 0.1, hence the tolerance.
    acc = pd.read_csv(demo_dir / "accounts.csv")
    folder = tmp_path / "acc"
    shutil.copytree(demo_dir, folder, ignore=shutil.ignore_patterns("earlier_release", "first_estimate"))
    acc[~((acc["price_basis"] == "previous_year") & acc["period"].str.startswith("2012"))].to_csv(
        folder / "accounts.csv", index=False)
    out = tmp_path / "out"
    pipeline.rebuild(folder, out, charts=False)
    key = ["period", "aggregate", "item", "horizon"]
    vol = pd.read_parquet(out / "volume_contributions.parquet")
    ctr = pd.read_parquet(out / "deflator_contributions.parquet")
    assert set(map(tuple, vol[key].to_numpy())) == set(map(tuple, ctr[key].to_numpy()))
    year = ctr["period"].str[:4]
    first = ctr[year.eq("2012") | (year.eq("2013") & (ctr["horizon"].eq("prev_year") | ctr["period"].isin(["2013", "2013-Q1"])))]
    assert {"2012-Q2", "2013", "2013-Q1"} <= set(first["period"])
    full = pd.read_parquet(demo_out / "deflator_contributions.parquet")
    m = first.merge(full, on=key, suffixes=("", "_full"))
    assert len(m) == len(first)
    assert (m["contribution_pp"] - m["contribution_pp_full"]).abs().max() < 2e-3
    assert (m["aggregate_growth_pct"] - m["aggregate_growth_pct_full"]).abs().max() < 1e-12
    gaps = pd.read_parquet(out / "price_gaps.parquet")
    hh = gaps[(gaps["measure"] == "gap_household_vs_gdp") & gaps["period"].isin(["2012-Q2", "2013", "2013-Q1"])]
    assert len(hh) == 1 + 2 + 2  # 2012-Q2 on Q1; 2013 (both labels); 2013-Q1 (both horizons)
