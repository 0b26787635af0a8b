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
    # (METHODS.md section 1, re-referencing). The published annual MNF2 is the mean of the four
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
    ident = checks[checks["check"] == "identity_current"]
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
