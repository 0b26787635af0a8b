"""Tests of the demo economy XQ: the seeded generator and the committed accounts.

The demo economy (the invented Republic of Quillon, currency the tessel) is built by
``sample_accounts/generate.py`` from invented product quantities and prices. These tests check
the committed files against the generator and the data against the rules of the trade they must
obey. The earlier release (``sample_accounts/earlier_release/``, one quarter shorter, with first
estimates of its last five quarters) is checked against the later one; then the income side (D1, B2A3G,
D2X3 at current prices), the monthly consumer price index (``cpi.csv``) and, at the end, the flash
estimate of 2025 (``sample_accounts/first_estimate/``) with its annual benchmarks, reconciled end to
end. Sources are named beside each check; METHODS.md is ``/work/shared/METHODS.md``.
"""

from __future__ import annotations

import hashlib
import importlib.util
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from valvol.io.readers import account_files

ROOT = Path(__file__).resolve().parents[2]
FOLDER = ROOT / "sample_accounts"
GENERATOR = FOLDER / "generate.py"
ACCOUNTS = FOLDER / "accounts.csv"
EARLIER_FOLDER = FOLDER / "earlier_release"
EARLIER = EARLIER_FOLDER / "accounts.csv"
CPI = FOLDER / "cpi.csv"
EARLIER_CPI = EARLIER_FOLDER / "cpi.csv"
FLASH_FOLDER = FOLDER / "first_estimate"
FLASH_ACCOUNTS = FLASH_FOLDER / "accounts.csv"
FLASH_BENCHMARKS = FLASH_FOLDER / "annual" / "benchmarks.csv"

COLUMNS = ["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]
COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "P7", "YA1"]
AGGREGATES = {
    "P3": {"P31_S14": 1, "P3_S15": 1, "P3_S13": 1},
    "P5": {"P51G": 1, "P52": 1, "P53": 1},
    "B1GQ": {"P3": 1, "P5": 1, "P6": 1, "P7": -1, "YA1": 1},
}
#: Number of rounded elementary components inside each item (bounds on accumulated rounding).
LEAVES = {"P3": 3, "P5": 3, "B1GQ": 9}
CHAINED = ["P31_S14", "P3_S15", "P3_S13", "P3", "P51G", "P5", "P6", "P7", "B1GQ"]
SIGN_CHANGING = ["P52", "P53", "YA1"]
INCOME = ["D1", "B2A3G", "D2X3"]  # published at current prices only
ROUND_Q = 0.05  # half a unit of the published last decimal, one quarter
ROUND_A = 4 * ROUND_Q  # four rounded quarters in a year


def _load_generator():
    spec = importlib.util.spec_from_file_location("xq_demo_generate", GENERATOR)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture(scope="module")
def gen():
    return _load_generator()


@pytest.fixture(scope="module")
def built(gen):
    return gen.build_accounts()


@pytest.fixture(scope="module")
def committed():
    return pd.read_csv(ACCOUNTS, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="module")
def wide(committed):
    """Quarterly values, one column per price basis."""
    df = committed.pivot(index=["item", "period"], columns="price_basis", values="value").reset_index()
    df["year"] = df["period"].str[:4].astype("int64")
    return df


@pytest.fixture(scope="module")
def annual(wide):
    """Annual values as the sum of the four quarters (levels_at_annual_rate = false)."""
    return wide.groupby(["item", "year"])[["current", "previous_year", "chain_linked"]].sum(min_count=4)


@pytest.fixture(scope="module")
def unrounded(gen):
    levels = gen.unrounded_levels()
    return levels.groupby(["item", "year"])[["c", "k"]].sum(min_count=4)


def _deflator_growth(annual: pd.DataFrame, item: str, year: int) -> float:
    """Annual implicit deflator growth, % (METHODS.md section 1: D = 100*C/CLV, value-weighted)."""
    a = annual.loc[item]
    d = a["current"] / a["chain_linked"]
    return 100.0 * (d.loc[year] / d.loc[year - 1] - 1.0)


def _tolerance(item: str) -> float:
    """Worst-case rounding of an annual value at current or previous-year prices."""
    return ROUND_A * LEAVES.get(item, 1)


# --- the committed file and the generator --------------------------------------------------


def test_committed_file_is_the_generator_output(gen, built, committed):
    # Common practice for committed generated data: the file is reproduced by its generator.
    assert list(committed.columns) == COLUMNS
    assert len(committed) == len(built)
    key = ["economy", "period", "item", "price_basis", "adjustment", "unit"]
    pd.testing.assert_frame_equal(committed[key], built[key].astype(committed[key].dtypes.to_dict()))
    np.testing.assert_allclose(committed["value"].to_numpy(), built["value"].to_numpy(), rtol=0, atol=1e-9)
    assert gen.to_csv_text(built) == ACCOUNTS.read_text(encoding="utf-8")


def test_two_runs_give_identical_frames(gen, built):
    # Common practice: a seeded generator is deterministic.
    pd.testing.assert_frame_equal(gen.build_accounts(), built)


def test_import_has_no_side_effects():
    # Common practice: importing the module only defines names; it must not write the data file.
    before = ACCOUNTS.stat().st_mtime_ns
    module = _load_generator()
    assert ACCOUNTS.stat().st_mtime_ns == before
    assert callable(module.build_accounts)


def test_folder_holds_the_accounts_and_the_cpi():
    # The accounts reader takes every .csv and .parquet file of the folder as accounts: the accounts
    # and the CPI (its rows have price basis ``index``), household consumption by purpose and the
    # CPI's sub-indexes with their basket weights (price basis ``weight``), and nothing else.
    files = sorted(p.name for p in FOLDER.iterdir() if p.suffix in {".csv", ".parquet"})
    assert files == ["accounts.csv", "cpi.csv", "cpi_coicop.csv", "household_coicop.csv"]
    assert [p.name for p in account_files(FOLDER)] == files


def test_config_matches_the_generator(gen):
    raw = tomllib.loads((FOLDER / "valvol.toml").read_text(encoding="utf-8"))
    assert set(raw) == {"reference_year", "levels_at_annual_rate", "aggregates", "price_bridge"}
    assert raw["reference_year"] == gen.REFERENCE_YEAR == 2020
    assert raw["levels_at_annual_rate"] is False
    parsed = {
        agg: {c.lstrip("-"): -1 if c.startswith("-") else 1 for c in comps}
        for agg, comps in raw["aggregates"].items()
    }
    assert parsed == AGGREGATES == gen.AGGREGATES


# --- the input contract --------------------------------------------------------------------


def test_input_contract(committed):
    assert (committed["economy"] == "XQ").all()
    assert (committed["adjustment"] == "S").all()
    assert (committed["unit"] == "tessel million").all()
    periods = [f"{y}-Q{q}" for y in range(2012, 2026) for q in range(1, 5)]
    assert sorted(committed["period"].unique()) == periods
    assert set(committed["item"]) == set(COMPONENTS) | set(AGGREGATES) | set(INCOME)
    assert not committed.duplicated(["item", "price_basis", "period"]).any()
    bases = committed.groupby("item")["price_basis"].agg(lambda s: tuple(sorted(set(s))))
    for item in CHAINED:
        assert bases[item] == ("chain_linked", "current", "previous_year"), item
    for item in SIGN_CHANGING:  # METHODS.md sections 1 and 2.4: no ratio chaining of sign-changing items
        assert bases[item] == ("current", "previous_year"), item
    for item in INCOME:  # income flows have no price and volume of their own (METHODS.md section 5)
        assert bases[item] == ("current",), item
    assert (committed.groupby(["item", "price_basis"]).size() == 56).all()
    tenths = committed["value"].to_numpy() * 10.0
    np.testing.assert_allclose(tenths, np.round(tenths), rtol=0, atol=1e-6)


def test_scale_and_shares_in_2012(annual):
    # Stated design of the demo economy (a small open economy), 2012 annual shares of GDP.
    cur = annual["current"].xs(2012, level="year")
    gdp = cur["B1GQ"]
    assert 4 * 40_000 <= gdp <= 4 * 60_000
    bounds = {
        "P31_S14": (55, 60),
        "P3_S15": (1, 2),
        "P3_S13": (18, 20),
        "P51G": (20, 22),
        "P6": (45, 55),
        "P7": (45, 55),
    }
    for item, (lo, hi) in bounds.items():
        assert lo <= 100 * cur[item] / gdp <= hi, item


def test_positive_and_sign_changing_items(wide):
    for item in CHAINED:
        rows = wide[wide["item"] == item]
        assert (rows[["current", "previous_year", "chain_linked"]] > 0).all().all(), item
    gdp = wide[wide["item"] == "B1GQ"].set_index("period")["current"]
    limits = {"P52": 0.01, "P53": 0.002, "YA1": 0.003}  # shares of GDP, both signs (design)
    for item, limit in limits.items():
        rows = wide[wide["item"] == item].set_index("period")
        assert (rows["current"] > 0).any() and (rows["current"] < 0).any(), item
        assert (rows["current"].abs() <= limit * gdp).all(), item
        same_sign = np.sign(rows["current"]) * np.sign(rows["previous_year"]) >= 0
        assert same_sign.all(), item  # deflated by a positive price relative


# --- accounting identities -----------------------------------------------------------------


@pytest.mark.parametrize("basis", ["current", "previous_year"])
def test_expenditure_identities_hold_each_quarter(wide, basis):
    # SNA expenditure identity, B1GQ = P3 + P5 + P6 - P7 + YA1 (common practice); aggregates are
    # formed at current and previous-year prices as signed sums (METHODS.md, Notation).
    table = wide.pivot(index="period", columns="item", values=basis)
    for agg, signs in AGGREGATES.items():
        total = sum(sign * table[item] for item, sign in signs.items())
        np.testing.assert_allclose(table[agg], total, rtol=0, atol=1e-6, err_msg=f"{agg} {basis}")


# --- previous-year prices ------------------------------------------------------------------


def test_annual_previous_year_value_is_quantities_at_previous_year_unit_values(gen, annual):
    # IMF QNA Manual 2017, ch.8, para. 8.17, eq.(2) (METHODS.md Notation, READ-partial):
    # K_y = sum over products of Pbar_{j,y-1} * Q_{j,y}, Pbar the value-weighted annual average price;
    # annual K_y is the sum of the four quarters.
    prod = gen.simulate_products()
    prod["value"] = prod["price"] * prod["quantity"]
    ann = prod.groupby(["item", "product", "year"])[["value", "quantity"]].sum()
    unit_value = (ann["value"] / ann["quantity"]).rename("pbar")
    prev = unit_value.reset_index().assign(year=lambda d: d["year"] + 1)
    merged = ann.reset_index().merge(prev, on=["item", "product", "year"])
    merged["K"] = merged["pbar"] * merged["quantity"]
    expected = merged.groupby(["item", "year"])["K"].sum()
    baskets = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P6", "P7"]
    published = annual["previous_year"].loc[baskets]
    diff = (published - expected.reindex(published.index)).abs()
    assert diff.max() <= ROUND_A + 1e-6


def test_unit_values_are_value_weighted(gen):
    # METHODS.md section 2.2, pitfall [DERIVED]: at value-weighted unit values the quarters of y
    # add up to the year's value C_y; an unweighted mean of quarterly prices misses it.
    prod = gen.simulate_products()
    prod["value"] = prod["price"] * prod["quantity"]
    keys = ["item", "product", "year"]
    ann = prod.groupby(keys)[["value", "quantity"]].sum()
    pbar = ann["value"] / ann["quantity"]
    revalued = pbar * ann["quantity"]
    np.testing.assert_allclose(revalued, ann["value"], rtol=1e-12)
    unweighted = prod.groupby(keys)["price"].mean() * ann["quantity"]
    energy = (unweighted - ann["value"]).xs(("P7", "imported energy", 2022))
    assert abs(energy) > 1.0  # the volatile 2022 energy price makes the pitfall visible


# --- chain-linked volumes by annual overlap ------------------------------------------------


def test_reference_year_annual_volume_equals_current_value(annual, unrounded):
    # ABS 5216.0 (2020-21), ch.6 Annex para. 6A.2, eq.(1); METHODS.md 2.1: CLV_r = C_r, r = 2020.
    for item in CHAINED:
        clv = annual.loc[(item, 2020), "chain_linked"]
        assert abs(clv - unrounded.loc[(item, 2020), "c"]) <= ROUND_A + 1e-6, item
        assert abs(clv - annual.loc[(item, 2020), "current"]) <= ROUND_A + _tolerance(item) + 1e-6, item


def test_quarters_sum_to_the_annual_chain(unrounded, annual):
    # METHODS.md 2.1-2.2 [READ: ABS 5216.0 ch.6 Annex eq.(1); DERIVED: annual overlap, QNA 2017
    # section 8.4.D]: L_y = K_y / C_{y-1}, CLV_2020 = C_2020, chained both ways; the four published
    # quarters of y sum to CLV_y. The chain is rebuilt here from the unrounded values.
    u = unrounded.loc[CHAINED].reset_index().sort_values(["item", "year"])
    link = (u["k"] / u.groupby("item")["c"].shift(1)).fillna(1.0)
    u["cum"] = link.groupby(u["item"]).cumprod()
    base = u[u["year"] == 2020].set_index("item")
    u["clv"] = u["cum"] * u["item"].map(base["c"] / base["cum"])
    expected = u[u["year"] >= 2012].set_index(["item", "year"])["clv"]
    published = annual["chain_linked"].loc[expected.index]
    assert (published - expected).abs().max() <= ROUND_A + 1e-6


def test_quarterly_volumes_follow_the_annual_overlap_formula(gen, committed):
    # METHODS.md 2.2 annual_overlap [DERIVED]: CLV(s,y) = k(s,y) * CLV_{y-1} / C_{y-1}, computed from
    # unrounded values and rounded to one decimal.
    levels = gen.unrounded_levels()
    ann = levels.groupby(["item", "year"])[["c", "k"]].sum(min_count=4)
    quarters = committed[committed["price_basis"] == "chain_linked"].assign(
        year=lambda d: d["period"].str[:4].astype("int64")
    )
    clv_annual = quarters.groupby(["item", "year"])["value"].sum()
    # CLV_{y-1}/C_{y-1} from y's own link: CLV_{y-1} = CLV_y * C_{y-1} / K_y, so the ratio is CLV_y / K_y.
    ratio = (clv_annual / ann["k"].reindex(clv_annual.index)).rename("ratio")
    merged = quarters.merge(levels, on=["item", "year", "period"]).merge(
        ratio.reset_index(), on=["item", "year"]
    )
    expected = merged["k"] * merged["ratio"]
    # ratio carries the rounding of the four published quarters (<= 0.2 over CLV_y)
    tol = ROUND_Q + merged["k"] * ROUND_A / merged["k"].groupby([merged["item"], merged["year"]]).transform(
        "sum"
    )
    assert ((merged["value"] - expected).abs() <= tol + 1e-6).all()


def test_annual_links_from_published_data(annual):
    # METHODS.md 2.1 [READ: ABS 5216.0 ch.6 Annex eq.(1)]: CLV_y / CLV_{y-1} = K_y / C_{y-1}, here
    # from the published (rounded) values alone; the tolerance bounds the rounding carried by each
    # term. 2012 is not checked: its previous year (2011) is not published.
    for item in CHAINED:
        a = annual.loc[item]
        c_prev, clv_prev = a["current"].shift(1), a["chain_linked"].shift(1)
        link = a["previous_year"] / c_prev
        expected = clv_prev * link
        e = _tolerance(item)
        tol = ROUND_A + link * ROUND_A + expected * (e / a["previous_year"] + e / c_prev)
        ok = ((a["chain_linked"] - expected).abs() <= tol + 1e-6).iloc[1:]
        assert ok.all(), item


def test_aggregates_are_not_sums_of_chained_components(annual):
    # ESA 95 para. 10.65 (METHODS.md 2.3): chained components do not add to the chained aggregate
    # away from the reference year; each aggregate is chained from its own sums.
    a = annual["chain_linked"].unstack("item")
    residual = a["B1GQ"] - (a["P3"] + a["P51G"] + a["P6"] - a["P7"])
    assert residual.drop(index=[2020]).abs().max() > 10.0


# --- the story -----------------------------------------------------------------------------


def test_energy_shock_2022_lifts_household_prices_above_gdp_prices(annual):
    # Design of the demo: imported energy price shock in 2022. Annual implicit deflators
    # (METHODS.md section 1 and 6: the household deflator includes imported goods, the GDP
    # deflator subtracts imports).
    hh = _deflator_growth(annual, "P31_S14", 2022)
    gdp = _deflator_growth(annual, "B1GQ", 2022)
    assert hh - gdp >= 3.0
    assert _deflator_growth(annual, "P7", 2022) > 10.0
    tot = _deflator_growth(annual, "P6", 2022) - _deflator_growth(annual, "P7", 2022)
    assert tot < -5.0  # terms of trade fall (METHODS.md section 5: ToT = 100 Px/Pm)


def test_export_boom_2024_2025_lifts_gdp_prices_above_household_prices(annual):
    # Design of the demo: export commodity boom in 2024-2025; terms of trade improve.
    for year in (2024, 2025):
        px = _deflator_growth(annual, "P6", year)
        assert px > _deflator_growth(annual, "P31_S14", year), year
        assert _deflator_growth(annual, "B1GQ", year) > _deflator_growth(annual, "P31_S14", year), year
        assert px > _deflator_growth(annual, "P7", year), year


def test_volume_dip_in_2020_and_recovery(annual):
    gdp = annual["chain_linked"].loc["B1GQ"]
    assert gdp.loc[2020] < gdp.loc[2019] < gdp.loc[2021]


# --- the earlier release (one quarter earlier, first estimates of 2024-Q3 .. 2025-Q3) ---------

REVISED = ["2024-Q3", "2024-Q4", "2025-Q1", "2025-Q2", "2025-Q3"]
POSITIVE = ["P31_S14", "P3_S15", "P3_S13", "P3", "P6", "P7", "B1GQ"]  # without investment P51G, P5


@pytest.fixture(scope="module")
def earlier_built(gen):
    return gen.build_earlier_release()


@pytest.fixture(scope="module")
def earlier(earlier_built):
    return pd.read_csv(EARLIER, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="module")
def vintages(committed, earlier):
    """Both releases on their common periods: columns ``earlier``, ``later``, index item/basis/period."""
    key = ["item", "price_basis", "period"]
    later = committed.set_index(key)["value"].rename("later")
    first = earlier.set_index(key)["value"].rename("earlier")
    return pd.concat([first, later], axis=1, join="inner")


def _wide_basis(frame: pd.DataFrame, basis: str) -> pd.DataFrame:
    rows = frame[frame["price_basis"] == basis]
    return rows.pivot(index="period", columns="item", values="value")


def _qoq(frame: pd.DataFrame, item: str, basis: str = "chain_linked") -> pd.Series:
    """Quarter-on-quarter growth, % (METHODS.md section 4, growth of a chain-linked volume)."""
    s = _wide_basis(frame, basis)[item]
    return 100.0 * (s / s.shift(1) - 1.0)


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
    # CLV(s,y) = k(s,y) * CLV_{y-1} / C_{y-1} (METHODS.md 2.2; ABS 5216.0 ch.6 Annex eq.(1)).
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
    # (METHODS.md, Notation), within floating-point precision.
    table = _wide_basis(earlier, basis)
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
    # (METHODS.md section 8, OECD/Eurostat Guidelines on Revisions Policy and Analysis).
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
    # Table 1: mean absolute revision of GDP growth 0.2 pp at T+3 (as quoted in METHODS.md section 8).
    # Growth rates are computed within each vintage, then compared (METHODS.md section 8, pitfalls).
    revision = (_qoq(committed, "B1GQ") - _qoq(earlier, "B1GQ")).loc[["2024-Q2", *REVISED]]
    assert revision.loc["2024-Q2"] == 0.0
    assert 0.2 <= abs(revision.loc["2025-Q3"]) <= 0.5
    assert (revision.loc[REVISED[:-1]].abs() < abs(revision.loc["2025-Q3"])).all()
    assert 0.05 <= revision.loc[REVISED].abs().mean() <= 0.3
    # prices are revised less than volumes: GDP deflator growth (METHODS.md section 1, D = 100 C/CLV)
    defl = {
        name: _wide_basis(f, "current")["B1GQ"] / _wide_basis(f, "chain_linked")["B1GQ"]
        for name, f in [("earlier", earlier), ("later", committed)]
    }
    defl_growth = {name: 100.0 * (d / d.shift(1) - 1.0) for name, d in defl.items()}
    defl_revision = (defl_growth["later"] - defl_growth["earlier"]).loc[REVISED]
    assert defl_revision.abs().max() < revision.loc[REVISED].abs().max()


def test_incomplete_year_links_on_the_previous_year(gen, earlier, committed):
    # METHODS.md 2.2 annual_overlap [DERIVED]: the quarters of 2025, an incomplete year in the earlier
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


# --- the income side (D1, B2A3G, D2X3 at current prices) --------------------------------------

#: sha256 of the header and expenditure rows of each accounts.csv, as committed before the income
#: rows were appended after them (common practice: a regression pin on committed data).
EXPENDITURE_SHA256 = {
    "accounts.csv": "007d7315596c27f1302d0e8dc2692d3ffece54a971a1413f87e0daa039b4a520",
    "earlier_release/accounts.csv": "42216df64215b432faded5563e6667af0db617cc19b6e4fd680ea05325d423b3",
}


def _unit_incomes(annual: pd.DataFrame) -> tuple[pd.Series, pd.DataFrame]:
    """Annual GDP deflator D = Y/X and unit incomes U_k = income_k/X, X the chain-linked GDP (METHODS.md 4.2)."""
    real = annual.loc["B1GQ", "chain_linked"]
    current = annual["current"].unstack("item")
    return current["B1GQ"] / real, current[INCOME].div(real, axis=0)


def _income_contributions(annual: pd.DataFrame) -> pd.DataFrame:
    """ctr_k = 100 (U_k,t - U_k,t-1) / D_t-1, pp (METHODS.md 4.2, level form)."""
    deflator, units = _unit_incomes(annual)
    return 100.0 * units.diff().div(deflator.shift(1), axis=0)


@pytest.mark.parametrize("path", sorted(EXPENDITURE_SHA256))
def test_income_rows_are_appended_after_unchanged_expenditure_rows(path):
    text = (FOLDER / path).read_text(encoding="utf-8")
    lines = text.splitlines(keepends=True)
    items = [line.split(",")[2] for line in lines[1:]]
    first_income = items.index(INCOME[0]) + 1
    assert set(items[first_income - 1 :]) == set(INCOME)
    assert not set(items[: first_income - 1]) & set(INCOME)
    head = "".join(lines[:first_income]).encode("utf-8")
    assert hashlib.sha256(head).hexdigest() == EXPENDITURE_SHA256[path]


@pytest.mark.parametrize("release", ["later", "earlier"])
def test_income_identity_holds_each_quarter(committed, earlier, release):
    # SNA income approach (common practice; METHODS.md 4.2: Y = W + Pi + T (+ S)): D1 + B2A3G + D2X3 =
    # B1GQ at current prices; the demo has no income-side discrepancy S.
    table = _wide_basis(committed if release == "later" else earlier, "current")
    assert table[INCOME].notna().all().all()
    total = table["D1"] + table["B2A3G"] + table["D2X3"]
    np.testing.assert_allclose(total, table["B1GQ"], rtol=0, atol=1e-6)


def test_income_shares_of_gdp(annual, committed):
    # Design of the demo: compensation of employees about half of GDP, net taxes on production and
    # imports 10-12%, the operating surplus and mixed income the rest (annual shares, current prices).
    current = annual["current"].unstack("item")
    shares = 100.0 * current[INCOME].div(current["B1GQ"], axis=0)
    bounds = {"D1": (47.5, 52.5), "D2X3": (9.5, 12.5), "B2A3G": (35.0, 42.0)}
    for item, (lo, hi) in bounds.items():
        assert shares[item].between(lo, hi).all(), item
    quarterly = _wide_basis(committed, "current")
    assert (quarterly[INCOME] > 0).all().all()
    assert (100.0 * quarterly["D1"] / quarterly["B1GQ"]).between(46.0, 55.0).all()


def test_income_contributions_add_up_to_the_gdp_deflator(annual):
    # METHODS.md 4.2 [DERIVED]: D = ULC + UP + UT (+ US), so the contributions add up to the growth of
    # the GDP deflator; unit profits = operating surplus over real GDP (ECB Economic Bulletin 6/2019,
    # box by Hahn, as quoted in METHODS.md 4.2). Here within floating-point precision (no discrepancy).
    deflator, _ = _unit_incomes(annual)
    growth = 100.0 * (deflator / deflator.shift(1) - 1.0)
    total = _income_contributions(annual).sum(axis=1, min_count=3)
    np.testing.assert_allclose(total.iloc[1:], growth.iloc[1:], rtol=0, atol=1e-9)


def test_unit_profits_drive_the_gdp_deflator_in_the_export_boom(annual):
    # Design of the demo: in the 2024-2025 ore export boom the operating surplus jumps, so unit
    # profits grow faster than unit labour costs and contribute most to GDP deflator growth
    # (METHODS.md 4.2: ULC = D1/X, UP = B2A3G/X, X chain-linked GDP).
    _, units = _unit_incomes(annual)
    unit_growth = 100.0 * (units / units.shift(1) - 1.0)
    assert unit_growth.loc[2024, "B2A3G"] > unit_growth.loc[2024, "D1"] + 3.0
    ctr = _income_contributions(annual)
    for year in (2024, 2025):
        assert ctr.loc[year, "B2A3G"] == ctr.loc[year, INCOME].max(), year
        assert ctr.loc[year, "B2A3G"] > 3.0, year


def test_energy_shock_squeezes_real_wages_and_cuts_net_taxes(annual):
    # Design of the demo: in 2022 wages lag consumer prices (unit labour costs grow far less than the
    # household consumption deflator) and catch up in 2023; energy subsidies make net taxes on
    # production and imports fall in 2022 (METHODS.md 4.2: use the level form when net taxes move
    # sharply).
    _, units = _unit_incomes(annual)
    ulc_growth = 100.0 * (units["D1"] / units["D1"].shift(1) - 1.0)
    hh = {year: _deflator_growth(annual, "P31_S14", year) for year in (2022, 2023)}
    assert ulc_growth.loc[2022] < hh[2022] - 3.0
    assert ulc_growth.loc[2023] > hh[2023]
    d2x3 = annual.loc["D2X3", "current"]
    assert d2x3.loc[2022] < d2x3.loc[2021]
    assert _income_contributions(annual).loc[2022, "D2X3"] < 0.0


# --- the consumer price index (cpi.csv, monthly, 2020 = 100) ----------------------------------

CPI_COLUMNS_FIXED = {
    "economy": "XQ",
    "item": "CPI",
    "price_basis": "index",
    "adjustment": "N",
    "unit": "index 2020=100",
}


@pytest.fixture(scope="module")
def cpi():
    return pd.read_csv(CPI, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="module")
def earlier_cpi():
    return pd.read_csv(EARLIER_CPI, dtype={"value": "float64"}, keep_default_na=False)


def _months(last: str) -> list[str]:
    return [f"{y}-{m:02d}" for y in range(2012, 2026) for m in range(1, 13) if f"{y}-{m:02d}" <= last]


def _cpi_quarterly(frame: pd.DataFrame) -> pd.Series:
    """Quarterly CPI: the mean of the three monthly levels (METHODS.md 6 [MEMORY, common practice])."""
    month = frame["period"].str[5:7].astype("int64")
    label = frame["period"].str[:4] + "-Q" + ((month + 2) // 3).astype(str)
    return frame.groupby(label)["value"].mean()


def test_cpi_files_are_the_generator_output(gen):
    # Common practice for committed generated data: each release's cpi.csv is reproduced by the generator.
    assert gen.to_csv_text(gen.build_cpi(gen.LAST_QUARTER)) == CPI.read_text(encoding="utf-8")
    assert gen.to_csv_text(gen.build_cpi(gen.EARLIER_LAST_QUARTER)) == EARLIER_CPI.read_text(encoding="utf-8")
    pd.testing.assert_frame_equal(gen.consumer_price_index(), gen.consumer_price_index())


@pytest.mark.parametrize("release", ["later", "earlier"])
def test_cpi_format(cpi, earlier_cpi, release):
    # valvol's price-index input (README of the demo): the input columns, item CPI, price basis index,
    # contiguous months YYYY-MM, one decimal, 2020 average = 100 (within the rounding of 12 months).
    frame, last = (cpi, "2025-12") if release == "later" else (earlier_cpi, "2025-09")
    assert list(frame.columns) == COLUMNS
    for column, value in CPI_COLUMNS_FIXED.items():
        assert (frame[column] == value).all(), column
    assert frame["period"].tolist() == _months(last)
    assert (frame["value"] > 0).all()
    tenths = frame["value"].to_numpy() * 10.0
    np.testing.assert_allclose(tenths, np.round(tenths), rtol=0, atol=1e-6)
    assert abs(frame.loc[frame["period"].str.startswith("2020"), "value"].mean() - 100.0) <= 0.05


def test_cpi_is_not_revised(cpi, earlier_cpi):
    # Design (CPIs are usually not revised): the earlier release's CPI is the later one's up to 2025-09.
    assert len(earlier_cpi) == len(cpi) - 3
    pd.testing.assert_frame_equal(earlier_cpi, cpi.iloc[: len(earlier_cpi)])


def test_cpi_moves_smoothly_within_quarters(cpi):
    # Design of the demo: monthly prices interpolate the quarterly ones with a constant monthly change
    # inside each quarter, plus small monthly noise.
    change = 100.0 * (cpi["value"] / cpi["value"].shift(1) - 1.0)
    assert change.abs().max() < 2.0
    by_quarter = change.to_numpy().reshape(-1, 3)  # months 1, 2, 3 of each quarter
    assert np.abs(by_quarter[:, 2] - by_quarter[:, 1]).max() < 0.5


def test_cpi_tracks_the_household_deflator_and_exceeds_it_at_the_energy_peak(cpi, committed):
    # METHODS.md 6: growth gaps in pp y/y, a monthly CPI entering as the quarterly mean of its levels
    # [MEMORY, common practice]. Coverage (METHODS.md 6; ECB Economic Bulletin 1/2022, Eiglsperger
    # et al.: no owner-occupied housing in the HICP) and fixed-basket weights (McCully, Moyer & Stewart,
    # SCB Nov 2007, as quoted in METHODS.md 6) make the CPI run above the household consumption
    # deflator when energy prices jump (design: 1-2 pp at the 2022 peak); otherwise it tracks it.
    quarterly = _cpi_quarterly(cpi)
    hh = _wide_basis(committed, "current")["P31_S14"] / _wide_basis(committed, "chain_linked")["P31_S14"]
    cpi_yoy = 100.0 * (quarterly / quarterly.shift(4) - 1.0)
    hh_yoy = 100.0 * (hh / hh.shift(4) - 1.0)
    gap = (cpi_yoy - hh_yoy).dropna()
    assert len(gap) == 52  # 2013-Q1 .. 2025-Q4
    assert any(0.5 <= gap.loc[q] <= 3.0 for q in ["2022-Q3", "2022-Q4"])
    assert gap.abs().mean() < 0.8
    assert np.corrcoef(cpi_yoy.dropna(), hh_yoy.dropna())[0, 1] > 0.95


# --- the flash estimate of 2025 (first_estimate/), reconciled to the 2025 annual accounts ------

FLASH_COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "P7"]
FLASH_SIGNS = {item: -1 if item == "P7" else 1 for item in FLASH_COMPONENTS}
INDICATOR_BASED = ["P31_S14", "P3_S15", "P51G", "P6", "P7"]  # carried forward with an indicator
FLASH_Q = [f"2025-Q{q}" for q in range(1, 5)]


@pytest.fixture(scope="module")
def flash():
    return pd.read_csv(FLASH_ACCOUNTS, dtype={"value": "float64"}, keep_default_na=False)


@pytest.fixture(scope="module")
def flash_wide(flash):
    return _wide_basis(flash, "current")


@pytest.fixture(scope="module")
def benchmarks():
    return pd.read_csv(FLASH_BENCHMARKS, dtype={"value": "float64", "period": "str"}, keep_default_na=False)


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
    # docstring: a benchmark of a fixed series must already be met; METHODS.md 7.3, fixed series).
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
    # METHODS.md 7.3 (rank; Stone, Champernowne & Meade 1942, QNA 2017 6.5.A, as quoted): the signed
    # annual benchmarks plus the discrepancy must equal the year's total, sum_i s_i A_i + sum_q YA1_q =
    # sum_q B1GQ_q, within the reconcile tolerance (1e-6 of the annual total); here exactly, to float
    # precision. The benchmarks are the true totals: the later release's sums of quarters.
    bench = benchmarks.set_index("item")["value"]
    signed = sum(sign * bench[item] for item, sign in FLASH_SIGNS.items())
    total = flash_wide.loc[FLASH_Q, "B1GQ"].sum()
    gap = total - flash_wide.loc[FLASH_Q, "YA1"].sum() - signed
    assert abs(gap) <= 1e-6 * abs(total)
    assert abs(gap) <= 1e-6
    later = _wide_basis(committed, "current").loc[FLASH_Q, FLASH_COMPONENTS].sum()
    assert (bench - later).abs().max() <= 1e-6


def test_reconciliation_of_the_flash_end_to_end(tmp_path, flash_wide, benchmarks, committed):
    # valvol reconcile (README, benchmarking and reconciliation; multivariate proportional Denton, QNA 2017
    # 6.5.A; METHODS.md 7.3): afterwards each component meets its 2025 benchmark, the signed components
    # plus YA1 equal GDP each quarter, the fixed series and the quarters before 2024 do not move and 2024
    # keeps its annual totals. Design: the reconciled household consumption is within 0.1% of the later
    # release in every 2025 quarter, closer than the flash.
    from valvol.pipeline import reconciled_accounts

    report = reconciled_accounts(FLASH_FOLDER, tmp_path / "rec")
    out = pd.read_csv(tmp_path / "rec" / "accounts.csv", dtype={"value": "float64"})
    after = _wide_basis(out, "current")
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
    truth = _wide_basis(committed, "current").loc[FLASH_Q, "P31_S14"]
    err_after = (100.0 * (after.loc[FLASH_Q, "P31_S14"] / truth - 1.0)).abs()
    err_before = (100.0 * (flash_wide.loc[FLASH_Q, "P31_S14"] / truth - 1.0)).abs()
    assert err_after.max() < 0.1 and err_after.max() < err_before.max()
    assert set(report["item"]) == set(FLASH_COMPONENTS)
    assert (report.loc[report["item"] == "P3_S13", "adjustment"] == 0).all()
