"""The pipeline reproduces the UK agency's published deflators and growth rates.

Source: UK Office for National Statistics, Quarterly National Accounts time-series dataset,
release of 31 March 2023 ("Quarterly national accounts, UK: October to December 2022"),
file ``tests/reference_data/uk_ons_qna_2023-03-31.csv`` (provenance in that folder's README).
Contains public sector information licensed under the Open Government Licence v3.0.

Published deflators and growth rates carry one decimal: tolerance +-0.05 (their rounding),
plus 1e-9 for floating point. The 2022 = 100 deflator carries four decimals: tolerance 5e-4.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from valvol import pipeline

UK_FILE = Path(__file__).resolve().parents[1] / "reference_data" / "uk_ons_qna_2023-03-31.csv"
ITEMS = ["B1GQ", "P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "P7", "YA1", "P3_P5", "P3_P5_P6"]
UK_TOML = """\
# ONS total national expenditure P3_P5 and total final expenditure P3_P5_P6 (release of 31 March 2023)
[aggregates]
P3_P5 = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53"]
P3_P5_P6 = ["P3_P5", "P6"]
B1GQ = ["P3_P5_P6", "-P7", "YA1"]
[checks]
tolerance_abs = 1.5
"""
ONE_DECIMAL = 0.05 + 1e-9


def published() -> pd.DataFrame:
    return pd.read_csv(UK_FILE)


def uk_accounts(folder: Path, extra_toml: str = "") -> Path:
    """The release as an accounts folder: current prices and chained volumes, as published."""
    pub = published()
    basis = {"current_prices": "current", "chain_linked_volume": "chain_linked"}
    rows = pub[pub["measure"].isin(basis) & pub["item"].isin(ITEMS)].assign(
        price_basis=lambda d: d["measure"].map(basis)
    )
    folder.mkdir(parents=True)
    rows[["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]].to_csv(
        folder / "uk.csv", index=False
    )
    (folder / "valvol.toml").write_text(extra_toml + UK_TOML)
    return folder


@pytest.fixture(scope="module")
def uk_out(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("uk")
    pipeline.rebuild(uk_accounts(root / "accounts"), root / "out")
    return root / "out"


@pytest.fixture(scope="module")
def uk_out_2022(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("uk2022")
    pipeline.rebuild(uk_accounts(root / "accounts", "reference_year = 2022\n"), root / "out")
    return root / "out"


def _base_in_1994(period: pd.Series, horizon: str) -> pd.Series:
    if horizon == "prev_year":
        return period.str.startswith("1995")
    return period.isin(["1995", "1995-Q1"])


def _published(measure: str) -> pd.DataFrame:
    pub = published()
    return pub[pub["measure"] == measure][["period", "item", "value"]]


def test_implicit_deflators_as_published(uk_out):
    # ONS GDP implied deflator (YBGB) and total national expenditure deflator, 2019 = 100
    ours = pd.read_parquet(uk_out / "deflators.parquet")
    both = _published("implicit_deflator").merge(ours, on=["period", "item"])
    assert len(both) == 280  # B1GQ and P3_P5, 28 years and 112 quarters each
    assert (both["deflator"] - both["value"]).abs().max() <= ONE_DECIMAL


@pytest.mark.parametrize("horizon", ["prev_period", "prev_year"])
def test_deflator_growth_as_published(uk_out, horizon):
    ours = pd.read_parquet(uk_out / "growth.parquet").query("measure == 'price' and horizon == @horizon")
    pub = _published(f"pct_change_deflator_{horizon}")
    both = pub.merge(ours, on=["period", "item"])
    # every published deflator growth rate of an item with chained volumes (P5 has none in the file),
    # except those whose base period lies in 1994, which the file does not hold
    assert len(both) == len(pub[(pub["item"] != "P5") & ~_base_in_1994(pub["period"], horizon)])
    assert (both["pct"] - both["value"]).abs().max() <= ONE_DECIMAL


@pytest.mark.parametrize(
    "measure, ours_measure", [("pct_change_volume", "volume"), ("pct_change_current_prices", "value")]
)
def test_volume_and_value_growth_as_published(uk_out, measure, ours_measure):
    growth = pd.read_parquet(uk_out / "growth.parquet")
    for horizon in ("prev_period", "prev_year"):
        pub = _published(f"{measure}_{horizon}")
        ours = growth.query("measure == @ours_measure and horizon == @horizon")
        both = pub.merge(ours, on=["period", "item"])
        assert len(both) == len(pub[~_base_in_1994(pub["period"], horizon)])
        assert (both["pct"] - both["value"]).abs().max() <= ONE_DECIMAL


def test_rereferenced_deflator_2022(uk_out_2022):
    # ONS GDP deflator at 2022 = 100 (MNF2), four decimals. Quarters: D'_t = 100 D_t / D_2022
    # (docs/methods.md section 1, re-referencing). The published annual MNF2 is the mean of the four
    # published quarters (checked on the release), not the value-weighted 100 C_y / CLV'_y that
    # valvol publishes; so annual rows are checked against the mean of our quarters.
    ours = pd.read_parquet(uk_out_2022 / "deflators.parquet").query("item == 'B1GQ'")
    pub = _published("implicit_deflator_ref2022")
    both = pub.merge(ours, on=["period", "item"])
    assert len(both) == 140
    quarters = both[both["frequency"] == "Q"]
    assert (quarters["deflator"] - quarters["value"]).abs().max() <= 5e-4
    mean_q = quarters.assign(year=quarters["period"].str[:4]).groupby("year")["deflator"].mean()
    annual = both[both["frequency"] == "A"].set_index("period")
    assert (annual["value"] - mean_q.reindex(annual.index)).abs().max() <= 5e-4
    assert abs(annual.loc["2022", "deflator"] - 100) < 1e-9


def test_components_add_to_gdp_at_current_prices(uk_out):
    # reference README: current prices add within +-1 (rounding of published components); the
    # published annual totals are rounded on their own, so their residuals reach a few units
    checks = pd.read_parquet(uk_out / "checks.parquet")
    ident = checks[checks["rule"] == "identity_current"]
    assert set(ident["item"]) == {"B1GQ", "P3_P5", "P3_P5_P6"}
    assert (ident["status"] == "pass").all()
    quarterly = ident["period"].str.contains("Q")
    assert ident.loc[quarterly, "value"].abs().max() <= 1.0
    assert ident.loc[~quarterly, "value"].abs().max() <= 4.0


def test_nonadditivity_residual_before_2020(uk_out):
    # reference README: chained volumes are not additive before 2020 (reference year 2019)
    levels = pd.read_parquet(uk_out / "levels.parquet")
    res = levels[(levels["item"] == "B1GQ_RESIDUAL") & (levels["frequency"] == "Q")].set_index("period")["value"]
    assert res.loc["2015-Q1"] != 0
    assert res.loc[[p for p in res.index if p >= "2020-Q1"]].abs().max() <= 3.0  # additive up to rounding


def _split_inventories(folder: Path, *, keep_total: bool) -> None:
    """Split the published P52 rows into two invented sector parts that add up to them exactly.

    The parts (P52_PRIV, P52_PUB) change sign on their own; with ``keep_total`` the published
    P52 rows stay as well (the parts are extra breakdown series), else they replace P52.
    """
    path = folder / "uk.csv"
    rows = pd.read_csv(path, dtype={"period": str})
    p52 = rows[rows["item"] == "P52"].reset_index(drop=True)
    quarter = p52["period"].str.extract(r"Q([1-4])$")[0].fillna("0").astype(int)
    wobble = quarter.map({0: 0.0, 1: 900.0, 2: -900.0, 3: 1800.0, 4: -1800.0})  # adds to 0 in a year
    priv = p52.assign(item="P52_PRIV", value=0.7 * p52["value"] + wobble)
    pub = p52.assign(item="P52_PUB", value=p52["value"] - priv["value"])
    kept = rows if keep_total else rows[rows["item"] != "P52"]
    pd.concat([kept, priv, pub], ignore_index=True).to_csv(path, index=False)


@pytest.fixture(scope="module")
def uk_split(tmp_path_factory) -> tuple[Path, Path]:
    """The release rebuilt twice under prior-year weights: as published, and with P52 split by sector."""
    root = tmp_path_factory.mktemp("uk_split")
    pyw = '[contributions]\nconvention = "prior_year_weights"\n'
    whole = uk_accounts(root / "whole", pyw)
    split = uk_accounts(root / "split", pyw)
    _split_inventories(split, keep_total=False)
    toml = (split / "valvol.toml").read_text().replace('"P52",', '"P52_PRIV", "P52_PUB",')
    (split / "valvol.toml").write_text(toml)
    for folder in (whole, split):
        pipeline.rebuild(folder, root / f"out_{folder.name}", charts=False)
    return root / "out_whole", root / "out_split"


def test_sector_split_inventories_rebuild_as_published(uk_split):
    # ONS QNA 31 March 2023 (YBGB and the P3_P5 deflator), with inventories split into two
    # invented sector parts: P52_PRIV and P52_PUB may be negative as P52 may (no sign_changing
    # declared), get no deflator and no growth rate, and the published deflators still follow.
    _, split = uk_split
    defl = pd.read_parquet(split / "deflators.parquet")
    assert not defl["item"].str.startswith("P52").any()
    growth = pd.read_parquet(split / "growth.parquet")
    assert not growth["item"].str.startswith("P52").any()
    both = _published("implicit_deflator").merge(defl, on=["period", "item"])
    assert len(both) == 280
    assert (both["deflator"] - both["value"]).abs().max() <= ONE_DECIMAL
    levels = pd.read_parquet(split / "levels.parquet")
    assert (levels.loc[levels["item"] == "P52_PUB", "value"] < 0).any()
    assert (levels.loc[levels["item"] == "P52_PRIV", "value"] < 0).any()


def test_sector_parts_contribute_what_inventories_contribute(uk_split):
    # prior-year weights (ONS convention): a sign-changing part is weighted with the deflator of
    # its top aggregate, as P52 is, so the two parts contribute exactly what P52 contributes
    whole, split = uk_split
    key = ["period", "aggregate", "horizon"]
    w = pd.read_parquet(whole / "volume_contributions.parquet")
    s = pd.read_parquet(split / "volume_contributions.parquet")
    p52 = w[w["item"] == "P52"].set_index(key)["contribution_pp"]
    parts = s[s["item"].isin(["P52_PRIV", "P52_PUB"])].groupby(key)["contribution_pp"].sum()
    assert len(p52) == 270 and parts.index.sort_values().equals(p52.index.sort_values())  # P3_P5, 1996-2022
    assert (parts.reindex(p52.index) - p52).abs().max() < 1e-9
    other = ["period", "aggregate", "item", "horizon"]
    rest_w = w[w["item"] != "P52"].set_index(other)["contribution_pp"]
    rest_s = s[~s["item"].str.startswith("P52")].set_index(other)["contribution_pp"]
    assert (rest_s.reindex(rest_w.index) - rest_w).abs().max() < 1e-9


def test_breakdown_series_need_no_declaration(tmp_path):
    # the release plus two breakdown series of P52 that neither [aggregates] nor sign_changing
    # names: accepted as breakdowns of a known transaction, negative like it, no deflator
    folder = uk_accounts(tmp_path / "accounts")
    _split_inventories(folder, keep_total=True)
    pipeline.rebuild(folder, tmp_path / "out", charts=False)
    levels = pd.read_parquet(tmp_path / "out" / "levels.parquet")
    assert {"P52_PRIV", "P52_PUB"} <= set(levels["item"])
    assert not pd.read_parquet(tmp_path / "out" / "deflators.parquet")["item"].str.startswith("P52").any()
