"""Tests of valvol.methods.price_gaps (terms of trade, trading gain, real GDI, growth gaps, CPI).

External oracle: UK Office for National Statistics, Quarterly National Accounts dataset,
release of 31 March 2023 (tests/reference_data/uk_ons_qna_2023-03-31.csv, provenance in
tests/reference_data/README.md): published deflator growth of households' consumption, GDP,
exports and imports (1 decimal each). The other checks are properties [DERIVED] of
docs/methods.md sections 5 and 6 (ESA 95 paras 10.57-10.59), and the hand-worked first-link
example of docs/derivations/first_link.md (sections 6 and 7).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from support import chained_panel, first_link_panel, rows_of, uk_panel, uk_release

from valvol.errors import ConfigError, InputError
from valvol.hierarchy import Hierarchy
from valvol.methods.deflators import deflator_growth, implicit_deflators
from valvol.methods.panel import pivot_bases
from valvol.methods.price_gaps import MEASURE_COLUMNS, NUMERAIRES, _series, price_gaps

GAP_MEASURES = ["gap_gdp_vs_domestic_demand", "gap_export_price_part", "gap_import_price_part", "gap_other_part"]


# --- panel builders (test helpers) -----------------------------------------------------------






SPEC = [("P3", [("P31_S14", 1), ("P3_S13", 1)]), ("P5", [("P51G", 1), ("P52", 1)]),
        ("B1GQ", [("P3", 1), ("P5", 1), ("P6", 1), ("P7", -1), ("YA1", 1)]),
        ("P3_P5", [("P3", 1), ("P5", 1)]), ("DFD_CHECK", [("P3", 1), ("P51G", 1)])]
HIER = Hierarchy.from_mapping({"P3": ["P31_S14", "P3_S13"], "P5": ["P51G", "P52"],
                               "B1GQ": ["P3", "P5", "P6", "-P7", "YA1"]})


def economy_data(seed, n_years=3):
    """Random prices and quantities; P52 and YA1 change sign (priced at 1)."""
    rng = np.random.default_rng(seed)
    n = 4 * n_years
    items = ["P31_S14", "P3_S13", "P51G", "P6", "P7"]
    prices = {i: np.exp(np.cumsum(rng.normal(0.01, 0.04, n))) for i in items}
    quantities = {i: 100 * np.exp(np.cumsum(rng.normal(0.005, 0.05, n))) for i in items}
    quantities["P31_S14"] *= 2.0
    for i in ("P52", "YA1"):
        prices[i], quantities[i] = np.ones(n), rng.normal(0.0, 3.0, n)
    return prices, quantities


def wide(out: pd.DataFrame) -> pd.DataFrame:
    return out.pivot_table(index=["period", "horizon"], columns="measure", values="value")


# --- terms of trade and trading gain --------------------------------------------------------


@settings(max_examples=10, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), delta=st.floats(0.01, 0.5), numeraire=st.sampled_from(NUMERAIRES))
def test_property_import_price_rise_with_and_without_pass_through(seed, delta, numeraire):
    """Volumes fixed; in 2002-Q4 import prices rise by delta (docs/methods.md §6, DERIVED).

    Full pass-through (extra import bill = extra consumption bill): consumption deflator
    up, GDP deflator unchanged, trading gain and terms of trade down. No pass-through: GDP
    deflator down, trading gain down.
    """
    prices, quantities = economy_data(seed)
    shocked_m = prices["P7"].copy()
    shocked_m[-1] *= 1 + delta
    extra = (shocked_m[-1] - prices["P7"][-1]) * quantities["P7"][-1]
    full_c = prices["P31_S14"].copy()
    full_c[-1] += extra / quantities["P31_S14"][-1]
    lv = pd.concat([chained_panel(prices, quantities, SPEC, economy="BASE"),
                    chained_panel(prices | {"P7": shocked_m, "P31_S14": full_c}, quantities, SPEC, economy="FULL"),
                    chained_panel(prices | {"P7": shocked_m}, quantities, SPEC, economy="NONE")], ignore_index=True)
    d = implicit_deflators(lv, hierarchy=HIER)
    d = d[d["period"].isin(["2002-Q4", "2002"]) & d["item"].isin(["P31_S14", "B1GQ"])]
    d = d.pivot_table(index="period", columns=["economy", "item"], values="deflator")
    assert (d["FULL", "P31_S14"] > d["BASE", "P31_S14"]).all()
    np.testing.assert_allclose(d["FULL", "B1GQ"], d["BASE", "B1GQ"], rtol=1e-12)
    assert (d["NONE", "B1GQ"] < d["BASE", "B1GQ"]).all()
    out = price_gaps(lv, hierarchy=HIER, numeraire=numeraire)
    level = out[out["period"].isin(["2002-Q4", "2002"]) & out["horizon"].eq("")].pivot_table(
        index="period", columns=["economy", "measure"], values="value")
    for case in ("FULL", "NONE"):
        assert (level[case, "trading_gain"] < level["BASE", "trading_gain"]).all()
        assert (level[case, "terms_of_trade"] < level["BASE", "terms_of_trade"]).all()
    earlier = out[out["period"] == "2002-Q3"].set_index(["economy", "measure", "horizon"])["value"]
    pd.testing.assert_series_equal(earlier["FULL"], earlier["BASE"], rtol=1e-12)


@settings(max_examples=12, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), ref=st.integers(2000, 2002), numeraire=st.sampled_from(NUMERAIRES),
       explicit=st.booleans())
def test_property_trading_gain_zero_in_reference_year(seed, ref, numeraire, explicit):
    """T = 0 in the reference year (annual) when all deflators equal 1 there (docs/methods.md §5)."""
    prices, quantities = economy_data(seed)
    lv = chained_panel(prices, quantities, SPEC, ref_year=2001 if explicit else ref)
    out = price_gaps(lv, hierarchy=HIER, numeraire=numeraire, reference_year=ref if explicit else None)
    a = out[(out["frequency"] == "A") & (out["year"] == ref)].set_index("measure")["value"]
    gdp = lv[(lv["item"] == "B1GQ") & (lv["price_basis"] == "current") & (lv["period"] == str(ref))]
    gdp_current = gdp["value"].item()
    assert abs(a["trading_gain"]) < 1e-9 * gdp_current
    assert a["terms_of_trade"] == pytest.approx(100.0, rel=1e-12)
    assert a["real_gdi"] == pytest.approx(gdp_current, rel=1e-12)
    q = out[(out["frequency"] == "Q") & (out["measure"] == "trading_gain")]
    assert q["value"].abs().max() > 0  # quarterly T is not zero in general


def test_trading_gain_closed_forms_and_final_demand_numeraire():
    """P = P_m: T = (X/P_x)(P_x/P_m - 1); P = P_x: T = (M/P_m)(1 - P_m/P_x) (docs/methods.md §5,
    DERIVED); the final-demand numeraire equals the implicit deflator of P3 + P51G chained by
    annual overlap (here an explicit aggregate DFD_CHECK of the test panel)."""
    prices, quantities = economy_data(5)
    lv = chained_panel(prices, quantities, SPEC, ref_year=2001)
    w = lv.pivot_table(index=["period", "item"], columns="price_basis", values="value").reset_index()
    w = w.pivot(index="period", columns="item")
    x, m = w[("current", "P6")], w[("current", "P7")]
    px, pm = x / w[("chain_linked", "P6")], m / w[("chain_linked", "P7")]
    p_dfd = w[("current", "DFD_CHECK")] / w[("chain_linked", "DFD_CHECK")]
    expect = {"import": (x / px) * (px / pm - 1), "export": (m / pm) * (1 - pm / px),
              "trade_average": (x - m) / ((px + pm) / 2) - (x / px - m / pm),
              "domestic_final_demand": (x - m) / p_dfd - (x / px - m / pm)}
    for numeraire, e in expect.items():
        out = price_gaps(lv, hierarchy=HIER, numeraire=numeraire)
        got = out[out["measure"] == "trading_gain"].set_index("period")["value"]
        np.testing.assert_allclose(got.sort_index(), e.reindex(got.index).sort_index(), rtol=1e-10, atol=1e-9)
    out = price_gaps(lv, hierarchy=HIER)
    assert list(out.columns) == MEASURE_COLUMNS
    assert set(out.loc[out["measure"].isin(["terms_of_trade", "trading_gain", "real_gdi"]), "horizon"]) == {""}
    tot = out[out["measure"] == "terms_of_trade"].set_index("period")["value"]
    np.testing.assert_allclose(tot.sort_index(), (100 * px / pm).reindex(tot.index).sort_index(), rtol=1e-12)
    gdi = out[out["measure"] == "real_gdi"].set_index("period")["value"]
    gain = out[out["measure"] == "trading_gain"].set_index("period")["value"]
    np.testing.assert_allclose(gdi - gain, w[("chain_linked", "B1GQ")].reindex(gdi.index), rtol=1e-12)


def test_numeraire_and_reference_year_errors():
    prices, quantities = economy_data(2)
    lv = chained_panel(prices, quantities, SPEC)
    with pytest.raises(ConfigError):
        price_gaps(lv, hierarchy=HIER, numeraire="harmonic")
    off = lv.copy()
    off.loc[(off["item"] == "B1GQ") & (off["price_basis"] == "chain_linked"), "value"] *= 1.1
    with pytest.raises(InputError) as err:
        price_gaps(off, hierarchy=HIER, numeraire="domestic_final_demand")
    assert [(p.economy, p.item) for p in err.value.problems] == [("XX", "B1GQ")]
    assert len(price_gaps(off, hierarchy=HIER, numeraire="domestic_final_demand", reference_year=2001))
    with pytest.raises(InputError):
        price_gaps(lv, hierarchy=HIER, reference_year=1990)
    # household chain-linked volumes now value the first year's quarters: they must be positive
    neg = lv.copy()
    neg.loc[(neg["item"] == "P31_S14") & (neg["period"] == "2000-Q2") & (neg["price_basis"] == "chain_linked"),
            "value"] = -1.0
    with pytest.raises(InputError) as err:
        price_gaps(neg, hierarchy=HIER)
    assert [(p.item, p.period, p.price_basis) for p in err.value.problems] == [("P31_S14", "2000-Q2", "chain_linked")]


# --- growth gaps ---------------------------------------------------------------------------


@settings(max_examples=10, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_property_gap_split_adds_exactly_and_matches_deflator_growth(seed):
    """gap = export part + import part + other part, to 1e-9, every horizon (docs/methods.md §6);
    the gaps equal differences of implicit-deflator growth rates of annual-overlap data."""
    prices, quantities = economy_data(seed)
    lv = chained_panel(prices, quantities, SPEC)
    g = wide(price_gaps(lv, hierarchy=HIER))
    split = g["gap_export_price_part"] + g["gap_import_price_part"] + g["gap_other_part"]
    np.testing.assert_allclose(split, g["gap_gdp_vs_domestic_demand"], atol=1e-9)
    growth = deflator_growth(implicit_deflators(lv, hierarchy=HIER)).pivot_table(
        index=["period", "horizon"], columns="item", values="pct")
    m = g.join(growth, how="inner")
    assert len(m) == 2 * 2 + 11 + 8
    np.testing.assert_allclose(m["gap_gdp_vs_domestic_demand"], m["B1GQ"] - m["P3_P5"], atol=1e-9)
    np.testing.assert_allclose(m["gap_household_vs_gdp"], m["P31_S14"] - m["B1GQ"], atol=1e-9)


def test_gap_annual_k_share_formula_and_derived_domestic_demand():
    """Annual link: pi_GDP - pi_DD = w_X (pi_X - pi_DD) - w_M (pi_M - pi_DD) + other, w = K_j/K_GDP
    (docs/methods.md §6); without a P3_P5 item the domestic demand is P3 + P5 (same result)."""
    prices, quantities = economy_data(9)
    lv = chained_panel(prices, quantities, SPEC)
    g = wide(price_gaps(lv, hierarchy=HIER))
    a = lv[(lv["frequency"] == "A") & (lv["year"] == 2002)].pivot(index="item", columns="price_basis", values="value")
    c, k = a["current"], a["previous_year"]
    pi = 100 * (c / k - 1)
    wx, wm = k["P6"] / k["B1GQ"], k["P7"] / k["B1GQ"]
    row = g.loc[("2002", "prev_year")]
    assert row["gap_export_price_part"] == pytest.approx(wx * (pi["P6"] - pi["P3_P5"]), abs=1e-10)
    assert row["gap_import_price_part"] == pytest.approx(-wm * (pi["P7"] - pi["P3_P5"]), abs=1e-10)
    other = 100 * (c["YA1"] - k["YA1"] * c["P3_P5"] / k["P3_P5"]) / k["B1GQ"]
    assert row["gap_other_part"] == pytest.approx(other, abs=1e-10)
    derived = wide(price_gaps(lv[lv["item"] != "P3_P5"], hierarchy=HIER))
    pd.testing.assert_frame_equal(derived[GAP_MEASURES], g[GAP_MEASURES], rtol=1e-10, atol=1e-10)
    no_pyp = lv[~((lv["item"] == "P3_P5") & (lv["price_basis"] == "previous_year"))]  # filled from P3 + P5
    filled = wide(price_gaps(no_pyp, hierarchy=HIER))
    pd.testing.assert_frame_equal(filled[GAP_MEASURES], g[GAP_MEASURES], rtol=1e-10, atol=1e-10)


def test_first_link_worked_example_gaps():
    """docs/derivations/first_link.md, section 7: growth gaps of the hand-worked example (pp),
    first year 2000 without previous-year prices, chain-linked volumes given."""
    out = price_gaps(first_link_panel(), hierarchy=Hierarchy.from_mapping({"B1GQ": ["P3_P5", "P6", "-P7"]}))
    g = wide(out[out["horizon"] != ""])
    cols = ["gap_gdp_vs_domestic_demand", "gap_export_price_part", "gap_import_price_part", "gap_other_part",
            "gap_household_vs_gdp"]
    expect = {
        ("2001", "prev_year"): (3.0, 4.0, -1.0, 0.0, -3.0),
        ("2001", "prev_period"): (3.0, 4.0, -1.0, 0.0, -3.0),
        ("2001-Q1", "prev_period"): (2.94, 4.97, -2.03, 0.0, -0.9),
        ("2001-Q1", "prev_year"): (0.96, 3.03, -2.07, 0.0, -3.0),
        ("2001-Q2", "prev_year"): (5.16, 3.03, 2.13, 0.0, -7.2),
        ("2000-Q2", "prev_period"): (-400 / 104, -400 / 10608, -40400 / 10608, 0.0, 400 / 104),
    }
    for key, values in expect.items():
        np.testing.assert_allclose(g.loc[key, cols].to_numpy(float), values, atol=1e-9)
    assert len(g) == 3 + 2 + 4 * 2  # 2000-Q2..Q4, 2001 (both labels), 2001 quarters (both horizons)
    no_chain = first_link_panel().query("price_basis != 'chain_linked'")
    out = price_gaps(no_chain, hierarchy=Hierarchy.from_mapping({"B1GQ": ["P3_P5", "P6", "-P7"]}))
    g = wide(out[out["horizon"] != ""])
    assert set(g.index) == {("2001", "prev_period"), ("2001", "prev_year")} | {
        (f"2001-Q{s}", "prev_period") for s in (2, 3, 4)}
    np.testing.assert_allclose(g.loc[("2001", "prev_year"), cols].to_numpy(float), expect["2001", "prev_year"],
                               atol=1e-9)


def test_series_fills_an_aggregate_from_parts_at_every_depth():
    """Hand sums: DD = P3 + P5 with P3 = P31_S14 + P3_S13 and P5 = P51G + P52; the panel lacks DD.
    A part's own value is used where given, else the sum of its parts, per price basis: 2000
    P3 has its own current value (30, not 1 + 1) and its previous-year value from its parts
    (0.5 + 0.5); 2001 lacks P3 (15 and 7.5 from its parts) and P5 at previous-year prices
    (1.5 + 0.5, its own current value 7 kept); 2002 lacks P3 and P5, and P52 at previous-year
    prices, so DD has a current value (5 + 5) and no previous-year one. v is never summed."""
    hier = Hierarchy.from_mapping({"P3": ["P31_S14", "P3_S13"], "P5": ["P51G", "P52"]})
    vals = {("P31_S14", 2000): 1.0, ("P3_S13", 2000): 1.0, ("P3", 2000): 30.0, ("P5", 2000): 4.0,
            ("P31_S14", 2001): 10.0, ("P3_S13", 2001): 5.0, ("P5", 2001): 7.0, ("P51G", 2001): 3.0,
            ("P52", 2001): 1.0, ("P31_S14", 2002): 2.0, ("P3_S13", 2002): 3.0, ("P51G", 2002): 6.0,
            ("P52", 2002): -1.0}
    rows = []
    for (item, year), v in vals.items():
        rows.append(rows_of("XX", item, "current", "A", [year], [0], [v]))
        if (item, year) not in {("P52", 2002), ("P3", 2000), ("P5", 2001)}:
            rows.append(rows_of("XX", item, "previous_year", "A", [year], [0], [v / 2]))
        rows.append(rows_of("XX", item, "chain_linked", "A", [year], [0], [abs(v)]))
    lv = pd.concat(rows, ignore_index=True)
    lv["period"] = lv["year"].astype(str)
    got = _series(pivot_bases(lv), hier, "P3_P5", (("P3", 1), ("P5", 1))).set_index("year")
    np.testing.assert_allclose(got["c"].to_numpy(), [30.0 + 4.0, 15.0 + 7.0, 5.0 + 5.0])
    np.testing.assert_allclose(got["k"].to_numpy(), [1.0 + 2.0, 7.5 + 2.0, np.nan])
    assert got["v"].isna().all()


# --- UK release ----------------------------------------------------------------------------






@pytest.fixture(scope="module")
def uk():
    d = uk_release()
    lv = uk_panel(d)
    return d, lv, price_gaps(lv, hierarchy=Hierarchy.default())


def uk_growth(d, item, horizon, frequency=None):
    rows = d[(d["item"] == item) & (d["measure"] == f"pct_change_deflator_{horizon}")]
    if frequency is not None:
        rows = rows[rows["frequency"] == frequency]
    return rows.set_index("period")["value"]


@pytest.mark.parametrize("horizon", ["prev_period", "prev_year"])
def test_uk_household_vs_gdp_gap_matches_published_growth(uk, horizon):
    """ONS QNA 31 Mar 2023: published deflator growth of P31_S14 minus B1GQ's (each 1
    decimal): tolerance 0.1 + 1e-9."""
    d, _, out = uk
    gap = out[(out["measure"] == "gap_household_vs_gdp") & (out["horizon"] == horizon)].set_index("period")["value"]
    pub = (uk_growth(d, "P31_S14", horizon) - uk_growth(d, "B1GQ", horizon)).dropna()
    m = pd.concat([gap, pub], axis=1, join="inner", keys=["ours", "pub"])
    assert len(m) >= 100
    assert (m["ours"] - m["pub"]).abs().max() <= 0.1 + 1e-9
    # the first link (docs/derivations/first_link.md, sections 3-6): 1995 has no previous-year
    # prices; household and GDP have chain-linked volumes there, so the gap exists from 1995-Q2
    first = ["1995-Q2", "1995-Q3", "1995-Q4", "1996", "1996-Q1"] if horizon == "prev_period" else ["1996", "1996-Q1"]
    assert set(first) <= set(gap.index)
    # the release publishes household deflator growth from 1997 on: the first links are checked
    # against the growth of its implicit deflators CP/CVM instead (exact)
    _, lv, _ = uk
    growth = deflator_growth(implicit_deflators(lv, hierarchy=Hierarchy.default())).query("horizon == @horizon")
    growth = growth.pivot_table(index="period", columns="item", values="pct")
    np.testing.assert_allclose(gap.loc[first], (growth["P31_S14"] - growth["B1GQ"]).loc[first], atol=1e-9)


def test_uk_terms_of_trade_and_gap_split(uk):
    """ONS QNA 31 Mar 2023: terms-of-trade growth = (1 + g_x)/(1 + g_m) - 1 from the published
    export and import deflator growth (1 decimal each; tolerance 0.11 pp); 2019 = 100; the gap
    split adds up exactly on real data."""
    d, _, out = uk
    tot = out[out["measure"] == "terms_of_trade"]
    annual = tot[tot["frequency"] == "A"].set_index("year")["value"]
    assert annual[2019] == pytest.approx(100.0, abs=1e-9)
    g_tot = 100 * (annual / annual.shift(1) - 1)
    gx = uk_growth(d, "P6", "prev_period", "A").rename(index=int)
    gm = uk_growth(d, "P7", "prev_period", "A").rename(index=int)
    implied = 100 * ((1 + gx / 100) / (1 + gm / 100) - 1)
    m = pd.concat([g_tot, implied], axis=1, join="inner").dropna()
    assert len(m) == 26
    assert (m.iloc[:, 0] - m.iloc[:, 1]).abs().max() <= 0.11
    g = wide(out[out["measure"].isin(GAP_MEASURES)])
    split = g["gap_export_price_part"] + g["gap_import_price_part"] + g["gap_other_part"]
    np.testing.assert_allclose(split, g["gap_gdp_vs_domestic_demand"], atol=1e-9)
    # domestic demand is summed from P3 + P5 here (no chain-linked volumes): of the first links
    # only the annual one of 1996 is formed (docs/derivations/first_link.md, section 6)
    first = g.loc[[i for i in g.index if i[0].startswith(("1995", "1996-Q1"))]]
    assert first.empty and ("1996", "prev_year") in g.index
    trade = tot.merge(out[out["measure"] == "trading_gain"], on="period")
    assert len(trade) == 140


# --- CPI -----------------------------------------------------------------------------------


def cpi_monthly(values, first_year=2000, economy="XX"):
    n = len(values)
    return pd.DataFrame({"economy": economy, "item": "CPI", "price_basis": "index", "frequency": "M",
                         "year": first_year + np.arange(n) // 12, "month": np.arange(n) % 12 + 1, "value": values})


def test_cpi_quarterly_means_growth_and_gap_to_household_deflator():
    """Monthly CPI enters as the mean of its levels in the quarter (docs/methods.md §6, common
    practice); growth per horizon; gap = CPI growth - household deflator growth."""
    prices, quantities = economy_data(4)
    lv = chained_panel(prices, quantities, SPEC)
    months = 100 * 1.004 ** np.arange(35)  # 2000-01 .. 2002-11: 2002-Q4 incomplete
    out = price_gaps(lv, hierarchy=HIER, cpi=cpi_monthly(months))
    q = out[out["measure"] == "cpi_quarterly"].set_index("period")["value"]
    assert len(q) == 11 and "2002-Q4" not in q.index
    assert q["2000-Q1"] == pytest.approx(months[:3].mean())
    a = out[out["measure"] == "cpi_annual"].set_index("period")["value"]
    assert list(a.index) == ["2000", "2001"] and a["2001"] == pytest.approx(months[12:24].mean())
    growth = out[out["measure"] == "cpi_growth"].set_index(["period", "horizon"])["value"]
    assert growth[("2001-Q1", "prev_period")] == pytest.approx(100 * (months[12:15].mean() / months[9:12].mean() - 1))
    assert growth[("2001-Q1", "prev_year")] == pytest.approx(100 * (1.004**12 - 1))
    assert growth[("2001", "prev_year")] == growth[("2001", "prev_period")]
    hh = deflator_growth(implicit_deflators(lv, hierarchy=HIER)).query("item == 'P31_S14'")
    gap = out[out["measure"] == "gap_cpi_vs_household"].merge(hh, on=["period", "horizon"])
    assert len(gap) == 2 * 1 + 10 + 7
    np.testing.assert_allclose(gap["value"], growth.loc[list(zip(gap["period"], gap["horizon"], strict=True))]
                               .to_numpy() - gap["pct"].to_numpy(), atol=1e-9)
    quarterly = pd.DataFrame({"economy": "XX", "item": "CPI", "price_basis": "index", "frequency": "Q",
                              "year": 2000 + np.arange(11) // 4, "quarter": np.arange(11) % 4 + 1, "value": q.to_numpy()})
    same = price_gaps(lv, hierarchy=HIER, cpi=quarterly)
    pd.testing.assert_frame_equal(same, out)


def test_cpi_frame_errors():
    prices, quantities = economy_data(4)
    lv = chained_panel(prices, quantities, SPEC)
    bad = cpi_monthly(np.full(12, 100.0))
    bad.loc[3, "month"] = 13
    bad.loc[5, "value"] = -1.0
    with pytest.raises(InputError) as err:
        price_gaps(lv, hierarchy=HIER, cpi=bad)
    assert sorted(p.row for p in err.value.problems) == [3, 5]
    dup = pd.concat([cpi_monthly(np.full(12, 100.0)), cpi_monthly(np.full(1, 100.0))], ignore_index=True)
    with pytest.raises(InputError, match="more than once"):
        price_gaps(lv, hierarchy=HIER, cpi=dup)
    with pytest.raises(InputError, match="lacks column"):
        price_gaps(lv, hierarchy=HIER, cpi=cpi_monthly(np.full(12, 100.0)).drop(columns="price_basis"))


def test_final_demand_numeraire_when_the_first_year_is_the_reference():
    # the first year of accounts has no previous-year prices: the domestic final demand
    # deflator's chain starts there at 1 (docs/methods.md section 5; first-year convention of 2.2)
    prices, quantities = economy_data(3)
    lv = chained_panel(prices, quantities, SPEC, ref_year=2000)
    lv = lv[~((lv["price_basis"] == "previous_year") & (lv["year"] == 2000))]
    out = price_gaps(lv, hierarchy=HIER, numeraire="domestic_final_demand", reference_year=2000)
    gain = out.query("measure == 'trading_gain' and frequency == 'A'").set_index("year")["value"]
    assert abs(gain.loc[2000]) < 1e-9
    a = lv[(lv["frequency"] == "A")].pivot_table(index=["year", "item"], columns="price_basis", values="value")
    dfd = (a.loc[(2001, "P3"), "current"] + a.loc[(2001, "P51G"), "current"]) / (
        a.loc[(2001, "P3"), "previous_year"] + a.loc[(2001, "P51G"), "previous_year"])
    px = (a.loc[(2001, "P6"), "current"] / a.loc[(2001, "P6"), "chain_linked"]) / (
        a.loc[(2000, "P6"), "current"] / a.loc[(2000, "P6"), "chain_linked"])
    pm = (a.loc[(2001, "P7"), "current"] / a.loc[(2001, "P7"), "chain_linked"]) / (
        a.loc[(2000, "P7"), "current"] / a.loc[(2000, "P7"), "chain_linked"])
    x, m = a.loc[(2001, "P6"), "current"], a.loc[(2001, "P7"), "current"]
    assert abs(gain.loc[2001] - ((x - m) / dfd - (x / px - m / pm))) < 1e-6 * abs(x)
