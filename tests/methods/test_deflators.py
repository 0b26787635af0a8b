"""Tests of valvol.methods.deflators (implicit deflators, re-referencing, deflator growth).

External oracle: UK Office for National Statistics, Quarterly National Accounts dataset,
release of 31 March 2023 (tests/reference_data/uk_ons_qna_2023-03-31.csv, provenance in
tests/reference_data/README.md; Open Government Licence v3.0). Published deflators and
growth rates carry one decimal (tolerance +-0.05); the 2022 = 100 deflator four decimals
(tolerance 5e-4, docs/methods.md section 1).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from support import uk_release

from valvol.errors import InputError
from valvol.frames import LEVEL_COLUMNS, period_label
from valvol.hierarchy import Hierarchy
from valvol.methods.deflators import deflator_growth, implicit_deflators
from valvol.methods.panel import pivot_bases

ONE_DECIMAL = 0.05 + 1e-9
HIER = Hierarchy.default()




def uk_levels(d: pd.DataFrame) -> pd.DataFrame:
    """Published current prices and chained volumes (reference year 2019) as a levels panel."""
    basis = {"current_prices": "current", "chain_linked_volume": "chain_linked"}
    x = d[d["measure"].isin(basis)].assign(price_basis=lambda t: t["measure"].map(basis))
    return x.assign(value=x["value"].astype("float64"))[LEVEL_COLUMNS].reset_index(drop=True)


@pytest.fixture(scope="module")
def uk() -> tuple[pd.DataFrame, pd.DataFrame]:
    d = uk_release()
    return d, uk_levels(d)


def published(d: pd.DataFrame, measure: str) -> pd.DataFrame:
    return d.loc[d["measure"] == measure, ["item", "period", "value"]].rename(columns={"value": "published"})


def level(item, basis, freq, year, quarter, value, economy="XX"):
    return {"economy": economy, "item": item, "price_basis": basis, "frequency": freq, "year": year,
            "quarter": quarter, "period": f"{year}" if quarter == 0 else f"{year}-Q{quarter}", "value": value}


# --- published UK figures -------------------------------------------------------------------


def test_uk_published_deflators_gdp_and_total_national_expenditure(uk):
    """ONS QNA 31 Mar 2023: GDP implied deflator (YBGB, 2019 = 100) and P3_P5's, 1 decimal."""
    d, lv = uk
    ours = implicit_deflators(lv, hierarchy=HIER)
    m = ours.merge(published(d, "implicit_deflator"), on=["item", "period"])
    assert set(m["item"]) == {"B1GQ", "P3_P5"}
    assert len(m) == 280
    assert (m["deflator"] - m["published"]).abs().max() <= ONE_DECIMAL


def test_uk_gdp_deflator_rereferenced_to_2022(uk):
    """ONS QNA 31 Mar 2023: GDP deflator at 2022 = 100 (MNF2), four decimals: within 5e-4.

    The quarters are 100 D_t / D_2022 (annual, value-weighted). The published *annual* MNF2
    values are the mean of the four published quarters (checked here to +-5e-5, their
    rounding), not 100 D_y / D_2022: in 2020 the two differ by 0.2. Our annual rows follow
    docs/methods.md section 1 and are checked against the 2019 = 100 annual series instead.
    """
    d, lv = uk
    ours = implicit_deflators(lv, hierarchy=HIER, reference_year=2022)
    m = ours.merge(published(d, "implicit_deflator_ref2022"), on=["item", "period"])
    q = m[m["frequency"] == "Q"]
    assert len(q) == 112
    assert (q["deflator"] - q["published"]).abs().max() <= 5e-4
    a = m[m["frequency"] == "A"].set_index("year")
    assert (q.groupby("year")["published"].mean() - a["published"]).abs().max() <= 5e-5 + 1e-9
    assert (q.groupby("year")["deflator"].mean() - a["published"]).abs().max() <= 5e-4
    assert a.loc[2022, "deflator"] == pytest.approx(100.0)
    base = implicit_deflators(lv, hierarchy=HIER).query("item == 'B1GQ' and frequency == 'A'").set_index("year")
    np.testing.assert_allclose(a["deflator"], 100 * base["deflator"] / base.loc[2022, "deflator"], rtol=1e-12)


@pytest.mark.parametrize("horizon", ["prev_period", "prev_year"])
def test_uk_published_deflator_growth(uk, horizon):
    """ONS QNA 31 Mar 2023: deflator growth (1 decimal) of GDP and the positive components."""
    d, lv = uk
    growth = deflator_growth(implicit_deflators(lv, hierarchy=HIER))
    growth = growth[growth["horizon"] == horizon]
    m = growth.merge(published(d, f"pct_change_deflator_{horizon}"), on=["item", "period"])
    assert set(m["item"]) == {"B1GQ", "P31_S14", "P3_S15", "P3_S13", "P51G", "P6", "P7"}
    assert len(m) >= 6 * 100
    assert (m["pct"] - m["published"]).abs().max() <= ONE_DECIMAL


def test_uk_annual_deflator_is_value_weighted_not_mean_of_quarters(uk):
    """Annual D = 100 C_y / CLV_y (docs/methods.md section 1, DERIVED); ONS annual YBGB, 1 decimal."""
    d, lv = uk
    ours = implicit_deflators(lv, hierarchy=HIER)
    gdp = ours[ours["item"] == "B1GQ"]
    annual = gdp[gdp["frequency"] == "A"].set_index("year")["deflator"]
    mean_q = gdp[gdp["frequency"] == "Q"].groupby("year")["deflator"].mean()
    assert (annual - mean_q).abs().max() > 1e-3  # they differ from about the second decimal
    pub = published(d, "implicit_deflator").query("item == 'B1GQ'").set_index("period")["published"]
    assert (annual.rename(index=str) - pub.reindex(annual.index.astype(str))).abs().max() <= ONE_DECIMAL


def test_uk_sign_changing_items_get_no_deflator(uk):
    """P52, P53, YA1 (and B11) have no deflator (docs/methods.md section 1, degenerate cases)."""
    _, lv = uk
    ours = implicit_deflators(lv, hierarchy=HIER)
    assert not set(ours["item"]) & {"P52", "P53", "YA1", "B11"}
    assert {"B1GQ", "P31_S14", "P6", "P7", "P3_P5"} <= set(ours["item"])


# --- hand-checkable cases (common practice) ---------------------------------------------------


def small_panel() -> pd.DataFrame:
    rows = []
    for y, (c, v) in {2020: (100.0, 100.0), 2021: (120.0, 110.0)}.items():
        rows += [level("P6", "current", "A", y, 0, c), level("P6", "chain_linked", "A", y, 0, v)]
    rows += [level("P6", "current", "Q", 2021, 1, 28.0), level("P6", "chain_linked", "Q", 2021, 1, 28.0),
             level("P52", "current", "A", 2021, 0, -3.0), level("P52", "chain_linked", "A", 2021, 0, 2.0)]
    return pd.DataFrame(rows)


def test_hand_checked_deflators_and_rereferencing():
    """D = 100 c/CLV; with r = 2021, D' = 100 D / D_2021 (docs/methods.md section 1)."""
    out = implicit_deflators(small_panel(), hierarchy=HIER)
    assert list(out.columns) == ["economy", "period", "frequency", "year", "quarter", "item", "deflator"]
    got = out.set_index("period")["deflator"]
    assert got.to_dict() == pytest.approx({"2020": 100.0, "2021": 120.0 / 1.1, "2021-Q1": 100.0})
    ref = implicit_deflators(small_panel(), hierarchy=HIER, reference_year=2021).set_index("period")["deflator"]
    assert ref["2021"] == pytest.approx(100.0)
    assert ref["2021-Q1"] == pytest.approx(100.0 * 100.0 / (120.0 / 1.1))
    assert "P52" not in set(out["item"])


def test_growth_horizons_and_unchanged_by_rereferencing():
    """Comparison periods per horizon; re-referencing leaves growth unchanged (docs/methods.md §1)."""
    rows = []
    for y in (2020, 2021):
        for q in range(1, 5):
            rows += [level("P6", "current", "Q", y, q, 100.0 + 3 * (4 * (y - 2020) + q)),
                     level("P6", "chain_linked", "Q", y, q, 100.0 + (4 * (y - 2020) + q))]
        rows += [level("P6", "current", "A", y, 0, 500.0 + y - 2020), level("P6", "chain_linked", "A", y, 0, 450.0)]
    lv = pd.DataFrame(rows)
    g0 = deflator_growth(implicit_deflators(lv, hierarchy=HIER))
    g1 = deflator_growth(implicit_deflators(lv, hierarchy=HIER, reference_year=2021))
    assert len(g0[(g0["horizon"] == "prev_period") & (g0["frequency"] == "Q")]) == 7
    assert len(g0[(g0["horizon"] == "prev_year") & (g0["frequency"] == "Q")]) == 4
    annual = g0[g0["frequency"] == "A"]
    assert sorted(annual["horizon"]) == ["prev_period", "prev_year"]
    assert annual["pct"].tolist() == pytest.approx([100 * (501 / 500 - 1)] * 2)
    q1 = g0[(g0["period"] == "2021-Q1") & (g0["horizon"] == "prev_period")]["pct"].item()
    d = lambda n: 100 * (100.0 + 3 * n) / (100.0 + n)  # noqa: E731
    assert q1 == pytest.approx(100 * (d(5) / d(4) - 1))
    np.testing.assert_allclose(g1["pct"], g0["pct"], rtol=1e-12, atol=1e-12)
    pd.testing.assert_frame_equal(g0.drop(columns="pct"), g1.drop(columns="pct"))


def test_non_positive_value_of_positive_item_is_an_input_error():
    lv = small_panel()
    lv.loc[(lv["period"] == "2021-Q1") & (lv["price_basis"] == "chain_linked"), "value"] = 0.0
    with pytest.raises(InputError) as err:
        implicit_deflators(lv, hierarchy=HIER)
    (p,) = err.value.problems
    assert (p.economy, p.item, p.period, p.price_basis) == ("XX", "P6", "2021-Q1", "chain_linked")


def test_missing_reference_year_and_duplicates_are_input_errors():
    with pytest.raises(InputError) as err:
        implicit_deflators(small_panel(), hierarchy=HIER, reference_year=2019)
    assert {(p.item, p.period) for p in err.value.problems} == {("P6", "2019")}
    lv = small_panel()
    with pytest.raises(InputError, match="more than once"):
        pivot_bases(pd.concat([lv, lv.iloc[:1]]))


@settings(max_examples=50, deadline=None)
@given(
    values=st.lists(st.tuples(st.floats(1.0, 1e6), st.floats(1.0, 1e6)), min_size=1, max_size=12),
    ref=st.integers(0, 11),
)
def test_property_deflator_times_volume_is_value(values, ref):
    """D x CLV / 100 = c, and the re-referenced annual deflator is 100 in r (common practice)."""
    n = len(values)
    years = 2000 + np.arange(n)
    lv = pd.DataFrame(
        [level("P31_S14", "current", "A", int(y), 0, c) for y, (c, _) in zip(years, values, strict=True)]
        + [level("P31_S14", "chain_linked", "A", int(y), 0, v) for y, (_, v) in zip(years, values, strict=True)]
    )
    out = implicit_deflators(lv, hierarchy=HIER)
    c = np.array([v[0] for v in values])
    v = np.array([v[1] for v in values])
    np.testing.assert_allclose(out["deflator"].to_numpy() * v / 100.0, c, rtol=1e-12)
    r = int(years[min(ref, n - 1)])
    rr = implicit_deflators(lv, hierarchy=HIER, reference_year=r).set_index("year")["deflator"]
    assert rr[r] == pytest.approx(100.0, rel=1e-12)
    assert period_label(pd.Series([r]), pd.Series([0]))[0] == str(r)
