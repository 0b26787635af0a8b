"""The UK release given as published indexes rebuilds as published (README, input contract: index bases).

Source: UK Office for National Statistics, Quarterly National Accounts time-series dataset,
release of 31 March 2023 ("Quarterly national accounts, UK: October to December 2022"),
file ``tests/reference_data/uk_ons_qna_2023-03-31.csv`` (provenance in that folder's README).
Contains public sector information licensed under the Open Government Licence v3.0.

The release is turned into accounts as in ``test_uk_published.py`` (current prices and chained
volume measures), then re-expressed as agencies also publish it:

* volume indexes, 2019 = 100, of every positive item: VI = 100 CVM_t / CVM_2019 for years and
  100 CVM_t / (CVM_2019 / 4) for quarters (the quarters of 2019 average 100; ONS CVM indexes
  are so defined, common practice); the sign-changing items P52, P53, YA1 stay chained volumes
  in money terms (they have no meaningful volume index);
* price indexes: the published implicit deflators of B1GQ (YBGB) and P3_P5, 2019 = 100, one
  decimal, as published.

Tolerances (stated beside each check) are the published rounding, +-0.05 for one-decimal
values, plus its first-order propagation where an index rounded to one decimal enters a
product or quotient (relative error h / x for a value x rounded by h).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from reference.test_uk_published import ONE_DECIMAL, published, uk_accounts

from valvol import pipeline
from valvol.errors import InputError
from valvol.hierarchy import Hierarchy

H = 0.05  # rounding of one-decimal indexes


def _accounts(folder: Path) -> pd.DataFrame:
    uk_accounts(folder)
    return pd.read_csv(folder / "uk.csv", dtype={"period": str})


def _volume_indexes(rows: pd.DataFrame, decimals: int | None) -> pd.DataFrame:
    """The chained volumes of positive items as indexes, 2019 = 100 (module docstring)."""
    clv = rows[(rows["price_basis"] == "chain_linked") & ~rows["item"].map(Hierarchy.default().is_sign_changing)]
    ref = clv[clv["period"] == "2019"].set_index("item")["value"]
    per_quarter = np.where(clv["period"].str.contains("Q"), 4.0, 1.0)
    vi = clv.assign(price_basis="volume_index", value=100 * clv["value"] * per_quarter / clv["item"].map(ref),
                    unit="index 2019=100")
    if decimals is not None:
        vi["value"] = vi["value"].round(decimals)
    return pd.concat([rows.drop(index=clv.index), vi], ignore_index=True)


def _price_indexes() -> pd.DataFrame:
    pub = published()
    return pub[pub["measure"] == "implicit_deflator"].assign(price_basis="price_index")[
        ["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]]


def _rebuild(root: Path, rows: pd.DataFrame) -> Path:
    rows.to_csv(root / "accounts" / "uk.csv", index=False)
    pipeline.rebuild(root / "accounts", root / "out", charts=False)
    return root / "out"


@pytest.fixture(scope="module")
def from_volume_indexes(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("uk_vi")
    return _rebuild(root, _volume_indexes(_accounts(root / "accounts"), None))


@pytest.fixture(scope="module")
def from_rounded_volume_indexes(tmp_path_factory) -> tuple[Path, pd.DataFrame]:
    root = tmp_path_factory.mktemp("uk_vi1")
    rows = _volume_indexes(_accounts(root / "accounts"), 1)
    return _rebuild(root, rows), rows


@pytest.fixture(scope="module")
def from_price_indexes(tmp_path_factory) -> Path:
    # current prices of every item; chained volumes of all but B1GQ and P3_P5, whose volumes
    # follow from their published deflators
    root = tmp_path_factory.mktemp("uk_pi")
    rows = _accounts(root / "accounts")
    rows = rows[~((rows["price_basis"] == "chain_linked") & rows["item"].isin(["B1GQ", "P3_P5"]))]
    return _rebuild(root, pd.concat([rows, _price_indexes()], ignore_index=True))


def _deflators_vs_published(out: Path) -> pd.DataFrame:
    pub = published()
    pub = pub[pub["measure"] == "implicit_deflator"][["period", "item", "value"]]
    return pub.merge(pd.read_parquet(out / "deflators.parquet"), on=["period", "item"])


def test_volume_indexes_give_the_published_deflators(from_volume_indexes):
    # ONS GDP implied deflator (YBGB) and total national expenditure deflator, 2019 = 100:
    # current prices + volume indexes reproduce them within their rounding, +-0.05
    both = _deflators_vs_published(from_volume_indexes)
    assert len(both) == 280  # B1GQ and P3_P5, 28 years and 112 quarters each
    assert (both["deflator"] - both["value"]).abs().max() <= ONE_DECIMAL


def test_volume_indexes_give_the_published_volume_growth(from_volume_indexes):
    # ONS volume growth (e.g. IHYQ, IHYR for GDP), one decimal: +-0.05, as test_uk_published.py
    pub = published()
    growth = pd.read_parquet(from_volume_indexes / "growth.parquet").query("measure == 'volume'")
    for horizon in ("prev_period", "prev_year"):
        mine = pub[pub["measure"] == f"pct_change_volume_{horizon}"]
        both = mine.merge(growth[growth["horizon"] == horizon], on=["period", "item"])
        # every published rate but those whose base period lies in 1994, which the file does not hold
        base_1994 = mine["period"].str.startswith("1995") if horizon == "prev_year" else mine["period"].isin(
            ["1995", "1995-Q1"])
        assert len(both) == len(mine[~base_1994])
        assert (both["pct"] - both["value"]).abs().max() <= ONE_DECIMAL


def test_volumes_from_volume_indexes_are_the_published_ones(from_volume_indexes):
    # CLV_t = VI_t C_2019 / VI_2019 gives back the ONS chained volume measures (2019 reference),
    # up to the published rounding of the quarters of 2019 (they add to the year within 1 GBP million)
    levels = pd.read_parquet(from_volume_indexes / "levels.parquet").query("price_basis == 'chain_linked'")
    pub = published()
    both = pub[pub["measure"] == "chain_linked_volume"].merge(levels, on=["period", "item"])
    assert len(both) == 1680  # the 12 items of the accounts, 140 periods each
    assert ((both["value_y"] - both["value_x"]).abs() <= 1e-5 * both["value_x"].abs() + 2).all()


def test_rounded_volume_indexes_give_the_published_deflators_within_their_rounding(from_rounded_volume_indexes):
    # Volume indexes published with one decimal (as ONS publishes CVM indexes): each derived
    # volume is off by at most h / VI_t relatively, the reference year's own index by h / 100,
    # so the deflator D by D h (1/VI_t + 1/100); plus the +-0.05 of the published deflator.
    # For years (sums of quarters) VI_t is the smallest of the four quarterly indexes.
    out, rows = from_rounded_volume_indexes
    both = _deflators_vs_published(out)
    assert len(both) == 280
    vi = rows[rows["price_basis"] == "volume_index"][["period", "item", "value"]].rename(columns={"value": "vi"})
    vi_q = vi[vi["period"].str.contains("Q")]
    year_min = vi_q.assign(period=vi_q["period"].str[:4]).groupby(["period", "item"], as_index=False)["vi"].min()
    both = both.merge(pd.concat([vi_q, year_min]), on=["period", "item"])
    tol = ONE_DECIMAL + both["value"] * H * (1 / both["vi"] + 1 / 100)
    err = (both["deflator"] - both["value"]).abs()
    assert (err <= tol).all()
    assert err.max() > ONE_DECIMAL  # the rounding of the indexes shows: the wider tolerance is needed


def test_price_indexes_give_the_published_volumes(from_price_indexes):
    # CLV_t = C_t P_r / P_t from the published deflators (YBGB and the P3_P5 deflator, one decimal)
    # gives the ONS chained volume measures of B1GQ and P3_P5 within the propagated rounding:
    # relatively h / P_t (the quarter's or the year's deflator; for years, the smallest of its
    # quarters) + h / min_s P_s(2019) (P_r, the value-weighted mean of the quarters of 2019)
    levels = pd.read_parquet(from_price_indexes / "levels.parquet").query(
        "price_basis == 'chain_linked' and item in ['B1GQ', 'P3_P5']")
    pub = published()
    cvm = pub[pub["measure"] == "chain_linked_volume"].merge(levels, on=["period", "item"])
    assert len(cvm) == 280
    p = _price_indexes()[["period", "item", "value"]].rename(columns={"value": "p"})
    p_q = p[p["period"].str.contains("Q")]
    p_min = p_q.assign(year=p_q["period"].str[:4]).groupby(["year", "item"])["p"].min()
    cvm = cvm.merge(p_q, on=["period", "item"], how="left")
    annual = cvm["p"].isna()
    cvm.loc[annual, "p"] = [p_min[(y, i)] for y, i in zip(cvm.loc[annual, "period"], cvm.loc[annual, "item"],
                                                            strict=True)]
    p_2019 = p_min.xs("2019", level="year")
    rel_tol = H / cvm["p"] + H / cvm["item"].map(p_2019) + 1e-6
    rel = ((cvm["value_y"] - cvm["value_x"]) / cvm["value_x"]).abs()
    assert (rel <= rel_tol).all()


def test_price_indexes_come_back_as_the_deflators(from_price_indexes):
    # Quarters: D_t = 100 C_t / CLV_t = 100 P_t / P_r exactly, P_r within h 100 / min_s P_s(2019)
    # of 100 (value-weighted mean of rounded quarters), so |D_t - P_t| <= P_t h / min_s P_s(2019).
    # Years: D_y is the value-weighted mean of the quarters' D, within h (1 + P_y / min_s P_s(y))
    # of the published annual deflator (both roundings), plus the same P_r term.
    both = _deflators_vs_published(from_price_indexes)
    assert len(both) == 280
    p = _price_indexes()
    q = p[p["period"].str.contains("Q")]
    p_min = q.assign(year=q["period"].str[:4]).groupby(["year", "item"])["value"].min()
    floor_2019 = both["item"].map(p_min.xs("2019", level="year"))
    quarter = both["period"].str.contains("Q")
    year_min = pd.Series([p_min[(y[:4], i)] for y, i in zip(both["period"], both["item"], strict=True)],
                         index=both.index)
    tol = np.where(quarter, 0.0, H * (1 + both["value"] / year_min)) + both["value"] * H / floor_2019 + 1e-9
    assert ((both["deflator"] - both["value"]).abs() <= tol).all()
    assert (both.loc[quarter, "deflator"] - both.loc[quarter, "value"]).abs().max() <= ONE_DECIMAL


def test_price_indexes_beside_current_and_volumes_are_only_checked(tmp_path):
    # All three given (current prices, chained volumes and the published deflators): the deflators
    # are consistent with the release within their rounding, so the rebuild carries the published
    # volumes unchanged and reproduces YBGB within +-0.05 (as test_uk_published.py)
    rows = _accounts(tmp_path / "accounts")
    out = _rebuild(tmp_path, pd.concat([rows, _price_indexes()], ignore_index=True))
    both = _deflators_vs_published(out)
    assert len(both) == 280 and (both["deflator"] - both["value"]).abs().max() <= ONE_DECIMAL
    levels = pd.read_parquet(out / "levels.parquet").query("price_basis == 'chain_linked'")
    pub = published()
    cvm = pub[pub["measure"] == "chain_linked_volume"].merge(levels, on=["period", "item"])
    assert len(cvm) == 1680 and (cvm["value_x"] == cvm["value_y"]).all()


def test_a_price_index_off_the_release_is_a_located_error(tmp_path):
    # the published GDP deflator of 2010-Q3 raised by 0.3: beyond the tolerance of the check
    # (0.05 + P (h/100 + rounding of the money values), about 0.1 here)
    rows = _accounts(tmp_path / "accounts")
    p = _price_indexes().reset_index(drop=True)
    hit = (p["item"] == "B1GQ") & (p["period"] == "2010-Q3")
    p.loc[hit, "value"] += 0.3
    data = pd.concat([rows, p], ignore_index=True)
    data.to_csv(tmp_path / "accounts" / "uk.csv", index=False)
    with pytest.raises(InputError) as err:
        pipeline.check(tmp_path / "accounts", _work(tmp_path))
    quarter, year = sorted(err.value.problems, key=lambda p: len(p.period), reverse=True)
    assert (quarter.file, quarter.row) == ("uk.csv", len(rows) + int(np.flatnonzero(hit)[0]) + 2)
    assert (quarter.item, quarter.price_basis, quarter.period) == ("B1GQ", "price_index", "2010-Q3")
    assert "does not match current prices and volume" in quarter.reason
    # and the published annual 2010 deflator is no longer the value-weighted mean of its quarters
    assert (year.item, year.period) == ("B1GQ", "2010") and "not the value-weighted mean" in year.reason


def _work(tmp_path: Path) -> Path:
    (tmp_path / "work").mkdir()
    return tmp_path / "work"
