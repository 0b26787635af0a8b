"""Tests of valvol.methods.deflator_contributions.

External oracles:

* Statistics Canada, *User Guide: Canadian System of Macroeconomic Accounts* (13-017-X,
  2008), Table 2.12 "Contributions to growth for period 3, a sample calculation - chain
  Fisher" (tests/reference_data/fisher_contributions_worked_example*.csv). The published
  volume contributions (1.98, 1.66, 1.49, 1.22 pp, tolerance +-0.005) check the Fisher
  helper; the price-side values (P^F = 0.9659288; A -4.4108, B 0.0000, C +3.7430,
  D -2.7393) are docs/methods.md §10(a) [DERIVED] from the same table.
* UK Office for National Statistics, Quarterly National Accounts dataset, release of
  31 March 2023 (tests/reference_data/uk_ons_qna_2023-03-31.csv): published GDP-deflator
  growth (1 decimal, +-0.05), CDIDs of the pct_change_deflator series.
* The first link (first year without previous-year prices): hand derivation and worked
  example in docs/derivations/first_link.md (sections 3-5 and 7).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from support import chained_panel, first_link_panel, rows_of, uk_panel, uk_release

from valvol.errors import ConfigError, InputError
from valvol.frames import LEVEL_COLUMNS, period_label
from valvol.hierarchy import Hierarchy
from valvol.methods.contributions import volume_contributions
from valvol.methods.deflator_contributions import (
    CONTRIBUTION_COLUMNS,
    UNIT_DISCREPANCY,
    deflator_contributions,
    income_side_contributions,
)
from valvol.methods.deflators import deflator_growth, implicit_deflators
from valvol.methods.index_numbers import fisher_price_contributions_arrays

REFERENCE = Path(__file__).resolve().parents[1] / "reference_data"
ONE_DECIMAL = 0.05 + 1e-9


# --- panel builders (test helpers) -----------------------------------------------------------






def fisher_panel(prices, quantities, signs, *, aggregate="TOT", first_year=2000, freq="A"):
    """Components at constant first-period prices and their chain Fisher aggregate.

    Q^F = sqrt(Q^L Q^P) between adjacent periods, chained, first period = its value (BEA,
    SCB May 1996 box; docs/methods.md §2.1). Imports enter with negative quantities.
    """
    items = list(prices)
    p = np.array([np.asarray(prices[i], float) for i in items])
    q = np.array([signs[i] * np.asarray(quantities[i], float) for i in items])
    n = p.shape[1]
    ql = (p[:, :-1] * q[:, 1:]).sum(0) / (p[:, :-1] * q[:, :-1]).sum(0)
    qp = (p[:, 1:] * q[:, 1:]).sum(0) / (p[:, 1:] * q[:, :-1]).sum(0)
    value = (p * q).sum(0)
    chained = value[0] * np.cumprod(np.r_[1.0, np.sqrt(ql * qp)])
    if freq == "A":
        years, quarters = first_year + np.arange(n), np.zeros(n, dtype=int)
    else:
        years, quarters = first_year + np.arange(n) // 4, np.arange(n) % 4 + 1
    out = [rows_of("XX", aggregate, "current", freq, years, quarters, value),
           rows_of("XX", aggregate, "chain_linked", freq, years, quarters, chained)]
    for j, it in enumerate(items):
        out += [rows_of("XX", it, "current", freq, years, quarters, signs[it] * p[j] * q[j]),
                rows_of("XX", it, "chain_linked", freq, years, quarters, signs[it] * q[j] * p[j, 0])]
    lv = pd.concat(out, ignore_index=True)
    lv["period"] = period_label(lv["year"], lv["quarter"]).to_numpy()
    return lv[LEVEL_COLUMNS]


def random_economy(seed, n_years=3, **kw):
    """Consumption, investment, inventories, exports, imports; GDP = P3 + P5 + P6 - P7."""
    rng = np.random.default_rng(seed)
    n = 4 * n_years
    items = ["P31_S14", "P3_S13", "P51G", "P6", "P7"]
    prices = {i: np.exp(np.cumsum(rng.normal(0.01, 0.04, n))) for i in items}
    quantities = {i: 100 * np.exp(np.cumsum(rng.normal(0.005, 0.05, n))) for i in items}
    quantities["P7"] = 0.6 * quantities["P7"]
    prices["P52"], quantities["P52"] = np.ones(n), rng.normal(0.0, 5.0, n)
    spec = [("P3", [("P31_S14", 1), ("P3_S13", 1)]), ("P5", [("P51G", 1), ("P52", 1)]),
            ("B1GQ", [("P3", 1), ("P5", 1), ("P6", 1), ("P7", -1)])]
    hier = Hierarchy.from_mapping({a: [("-" if s < 0 else "") + i for i, s in c] for a, c in spec})
    return chained_panel(prices, quantities, spec, **kw), hier


# --- Statistics Canada Table 2.12 ------------------------------------------------------------


def statcan():
    d = pd.read_csv(REFERENCE / "fisher_contributions_worked_example.csv")
    value = d.pivot(index="item", columns="period", values="current_prices")
    price = d.pivot(index="item", columns="period", values="price_index") / 100.0
    return value, price, value / price


def test_statcan_fisher_volume_contributions_published():
    """StatCan 13-017-X (2008) Table 2.12: t3 volume contributions 1.98, 1.66, 1.49, 1.22 (READ).

    The price-side helper with prices and quantities swapped is the volume-side formula
    (docs/methods.md §3.5).
    """
    _, p, q = statcan()
    ctr, qf, pf = fisher_price_contributions_arrays(q["t2"], q["t3"], p["t2"], p["t3"])
    pub = pd.read_csv(REFERENCE / "fisher_contributions_worked_example_published.csv")
    pub = pub[pub["quantity"] == "contribution_pp"].set_index("item")["value"]
    np.testing.assert_allclose(ctr, pub.loc[["A", "B", "C", "D"]].to_numpy(), atol=0.005 + 1e-9)
    assert 100 * qf == pytest.approx(106.3, abs=0.05 + 1e-9)  # published unlinked Fisher, t3
    assert 100 * (qf - 1) == pytest.approx(6.3497, abs=5e-5)  # docs/methods.md §10(a), DERIVED


def test_statcan_fisher_price_contributions_derived():
    """StatCan Table 2.12 inputs; P^F = 0.9659288 and A -4.4108, B 0, C +3.7430, D -2.7393
    (docs/methods.md §10(a), DERIVED), summing exactly to 100 (P^F - 1)."""
    _, p, q = statcan()
    ctr, pf, qf = fisher_price_contributions_arrays(p["t2"], p["t3"], q["t2"], q["t3"])
    assert pf == pytest.approx(0.9659288, abs=5e-8)
    assert qf == pytest.approx(1.0634974, abs=5e-8)
    np.testing.assert_allclose(ctr, [-4.4108, 0.0, 3.7430, -2.7393], atol=5e-5)
    assert ctr.sum() == pytest.approx(100 * (pf - 1), abs=1e-12)


def test_statcan_through_the_panel_fisher_convention():
    """Same table as a panel (t0..t3 = 2000..2003): Fisher convention, aggregate TOT."""
    value, p, q = statcan()
    lv = fisher_panel({i: p.loc[i] for i in "ABCD"}, {i: q.loc[i] for i in "ABCD"}, dict.fromkeys("ABCD", 1))
    hier = Hierarchy.from_mapping({"TOT": ["A", "B", "C", "D"]})
    out = deflator_contributions(lv, hierarchy=hier, convention="fisher")
    t3 = out[(out["year"] == 2003) & (out["horizon"] == "prev_year")].set_index("item")
    np.testing.assert_allclose(t3.loc[list("ABCD"), "contribution_pp"], [-4.4108, 0.0, 3.7430, -2.7393], atol=5e-5)
    assert t3["aggregate_growth_pct"].iloc[0] == pytest.approx(100 * (0.9659288 - 1), abs=5e-6)
    assert out["residual_pp"].abs().max() < 1e-9
    assert set(out["horizon"]) == {"prev_period", "prev_year"}


# --- UK release -----------------------------------------------------------------------------






@pytest.fixture(scope="module")
def uk():
    d = uk_release()
    return d, uk_panel(d)


@pytest.mark.parametrize("horizon", ["prev_period", "prev_year"])
def test_uk_contributions_add_up_to_published_gdp_deflator_growth(uk, horizon):
    """ONS QNA 31 Mar 2023: contributions to GDP-deflator growth (annual_overlap_exact) sum to the
    published growth (pct_change_deflator_*, 1 decimal) within +-0.05."""
    d, lv = uk
    out = deflator_contributions(lv, hierarchy=Hierarchy.default())
    assert list(out.columns) == CONTRIBUTION_COLUMNS
    gdp = out[(out["aggregate"] == "B1GQ") & (out["horizon"] == horizon)]
    assert set(gdp["item"]) == {"P3", "P5", "P6", "P7", "YA1"}
    total = gdp.groupby("period").agg(total=("contribution_pp", "sum"), growth=("aggregate_growth_pct", "first"))
    pub = d[(d["item"] == "B1GQ") & (d["measure"] == f"pct_change_deflator_{horizon}")].set_index("period")["value"]
    m = total.join(pub, how="inner")
    assert len(m) >= 100
    assert (m["total"] - m["value"]).abs().max() <= ONE_DECIMAL
    assert out["residual_pp"].abs().max() < 1e-9


def test_uk_import_contribution_sign(uk):
    """Imports negative (docs/methods.md §3.7): in 2022 import prices rose (published P7 deflator
    growth > 0 both years), so the P7 contribution to GDP-deflator growth is negative."""
    d, lv = uk
    out = deflator_contributions(lv, hierarchy=Hierarchy.default())
    p7 = out[(out["item"] == "P7") & (out["period"].isin(["2021", "2022"])) & (out["horizon"] == "prev_year")]
    pub = d[(d["item"] == "P7") & (d["measure"] == "pct_change_deflator_prev_period") & d["period"].isin(["2021", "2022"])]
    assert (pub["value"] > 0).all()
    assert (p7["contribution_pp"] < 0).all()


@pytest.mark.parametrize("horizon", ["prev_period", "prev_year"])
def test_uk_first_link_exists_and_adds_up_to_published_growth(uk, horizon):
    """ONS QNA 31 Mar 2023: 1995, the release's first year, has no previous-year prices. The
    GDP contributions now start where the volume contributions start (1995-Q2 within 1995,
    1996 and 1996-Q1 across its end, docs/derivations/first_link.md sections 3-5), and add up
    to the published GDP-deflator growth (pct_change_deflator_*, 1 decimal, +-0.05) and
    exactly to that of the implicit deflator CP/CVM of the release, whose 1995 quarterly
    deflators are kept as published."""
    d, lv = uk
    hier = Hierarchy.default()
    out = deflator_contributions(lv, hierarchy=hier)
    gdp = out[(out["aggregate"] == "B1GQ") & (out["horizon"] == horizon)]
    vol = volume_contributions(lv, hierarchy=hier)
    vol = vol[(vol["aggregate"] == "B1GQ") & (vol["horizon"] == horizon)]
    assert set(zip(vol["period"], vol["item"], strict=True)) == set(zip(gdp["period"], gdp["item"], strict=True))
    first = ["1995-Q2", "1995-Q3", "1995-Q4", "1996", "1996-Q1"] if horizon == "prev_period" else ["1996", "1996-Q1"]
    assert set(first) <= set(gdp["period"])
    early = gdp[gdp["period"].str[:4].isin(["1995", "1996"])]
    total = early.groupby("period").agg(total=("contribution_pp", "sum"), growth=("aggregate_growth_pct", "first"))
    implicit = deflator_growth(implicit_deflators(lv, hierarchy=hier)).query("item == 'B1GQ' and horizon == @horizon")
    m = total.join(implicit.set_index("period")["pct"], how="inner")
    assert len(m) == len(total) == (8 if horizon == "prev_period" else 5)
    np.testing.assert_allclose(m["total"], m["pct"], atol=1e-9)
    np.testing.assert_allclose(m["growth"], m["pct"], atol=1e-12)
    pub = d[(d["item"] == "B1GQ") & (d["measure"] == f"pct_change_deflator_{horizon}")].set_index("period")["value"]
    both = total.join(pub, how="inner")
    assert len(both) == len(total) - (1 if horizon == "prev_year" else 0)  # no annual y/y series is published
    assert (both["total"] - both["value"]).abs().max() <= ONE_DECIMAL
    # aggregates without chain-linked volumes in the release (P3, P5): only the annual first link
    p3 = out[(out["aggregate"] == "P3") & out["period"].str.startswith(("1995", "1996-Q1"))]
    assert p3.empty
    assert {"1996"} <= set(out.loc[out["aggregate"] == "P3", "period"])


def test_first_link_worked_example():
    """docs/derivations/first_link.md, section 7: contributions to GDP (Z = DD + X - M) of the
    hand-worked example, first year 2000 without previous-year prices (pp, hand values)."""
    out = deflator_contributions(first_link_panel(), hierarchy=Hierarchy.from_mapping({"B1GQ": ["P3_P5", "P6", "-P7"]}))
    ctr = out.pivot_table(index=["period", "horizon"], columns="item", values="contribution_pp")
    expect = {
        ("2001", "prev_year"): (2.0, 5.0, -2.0, 5.0),  # case A
        ("2001", "prev_period"): (2.0, 5.0, -2.0, 5.0),
        ("2001-Q1", "prev_period"): (-0.04, 3.9, -0.96, 2.9),  # case B, across the end of 2000
        ("2001-Q1", "prev_year"): (2.0, 5.0, -2.0, 5.0),  # case B, year on year
        ("2001-Q2", "prev_year"): (6.08, 7.2, -4.08, 9.2),
        ("2001-Q3", "prev_year"): (-0.04, 3.9, -0.96, 2.9),
        ("2001-Q4", "prev_year"): (-0.04, 3.9, -0.96, 2.9),
        ("2000-Q2", "prev_period"): (-400 / 104, -200 / 104, 200 / 104, 100 * (50 / 52 - 1)),  # case C
        ("2000-Q3", "prev_period"): (600 / 98, 300 / 98, -300 / 98, 100 * (52 / 49 - 1)),
        ("2000-Q4", "prev_period"): (0.0, 0.0, 0.0, 0.0),
    } | {(f"2001-Q{s}", "prev_period"): (0.0, 0.0, 0.0, 0.0) for s in (2, 3, 4)}
    assert set(ctr.index) == set(expect)
    growth = out.groupby(["period", "horizon"])["aggregate_growth_pct"].first()
    for key, (dd, x, m, g) in expect.items():
        np.testing.assert_allclose(ctr.loc[key, ["P3_P5", "P6", "P7"]].to_numpy(float), [dd, x, m], atol=1e-9)
        assert growth[key] == pytest.approx(g, abs=1e-9)
    assert out["residual_pp"].abs().max() < 1e-9


def test_first_link_without_chain_linked_volumes():
    """docs/derivations/first_link.md, sections 2 and 4: without chain-linked values the first
    year's quarterly deflators are not given, so only the annual first link (which needs the
    second year alone) and the quarters within 2001 remain; the annual values are unchanged."""
    lv = first_link_panel()
    hier = Hierarchy.from_mapping({"B1GQ": ["P3_P5", "P6", "-P7"]})
    out = deflator_contributions(lv[lv["price_basis"] != "chain_linked"], hierarchy=hier)
    keys = set(zip(out["period"], out["horizon"], strict=True))
    assert keys == {("2001", "prev_period"), ("2001", "prev_year")} | {(f"2001-Q{s}", "prev_period") for s in (2, 3, 4)}
    a = out[(out["period"] == "2001") & (out["horizon"] == "prev_year")].set_index("item")["contribution_pp"]
    np.testing.assert_allclose(a[["P3_P5", "P6", "P7"]].to_numpy(float), [2.0, 5.0, -2.0], atol=1e-12)


# --- properties and hand checks --------------------------------------------------------------


@settings(max_examples=20, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), ref=st.integers(2000, 2002))
def test_property_annual_overlap_exact_adds_up_to_implicit_deflator_growth(seed, ref):
    """Sum of two-step contributions = growth of the aggregate's implicit deflator, to 1e-9,
    all horizons (docs/methods.md §4.1, DERIVED); also from c/k alone (no chained aggregate)."""
    lv, hier = random_economy(seed, ref_year=ref)
    out = deflator_contributions(lv, hierarchy=hier)
    assert out["residual_pp"].abs().max() < 1e-9
    growth = deflator_growth(implicit_deflators(lv, hierarchy=hier)).rename(columns={"item": "aggregate"})
    m = out.drop_duplicates(["aggregate", "period", "horizon"]).merge(growth, on=["aggregate", "period", "horizon"])
    assert len(m) == 3 * (2 * 2 + 11 + 8)  # 3 aggregates x (annual 2 horizons, 11 q/q, 8 y/y)
    np.testing.assert_allclose(m["aggregate_growth_pct"], m["pct"], atol=1e-9)


def test_annual_overlap_exact_without_chained_aggregates_uses_previous_year_prices():
    """Without chain-linked rows the aggregate's growth comes from c/k (annual overlap)."""
    lv, hier = random_economy(11, ref_year=2001)
    out = deflator_contributions(lv, hierarchy=hier)
    no_chain = deflator_contributions(lv[lv["price_basis"] != "chain_linked"], hierarchy=hier)
    np.testing.assert_allclose(no_chain["aggregate_growth_pct"], out["aggregate_growth_pct"], atol=1e-9)
    np.testing.assert_allclose(no_chain["contribution_pp"], out["contribution_pp"], atol=1e-12)


@settings(max_examples=20, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), freq=st.sampled_from(["A", "Q"]))
def test_property_fisher_adds_up_on_chain_fisher_data(seed, freq):
    """Chain Fisher data, imports at negative quantities: previous-period contributions sum to
    the chained aggregate's deflator growth (docs/methods.md §3.5, exactly additive)."""
    rng = np.random.default_rng(seed)
    items = ["P3", "P51G", "P6", "P7"]
    p = {i: np.exp(np.cumsum(rng.normal(0.01, 0.05, 8))) for i in items}
    q = {i: 100 * np.exp(np.cumsum(rng.normal(0.01, 0.05, 8))) for i in items}
    q["P7"] = 0.5 * q["P7"]
    lv = fisher_panel(p, q, {"P3": 1, "P51G": 1, "P6": 1, "P7": -1}, aggregate="B1GQ", freq=freq)
    hier = Hierarchy.from_mapping({"B1GQ": ["P3", "P51G", "P6", "-P7"]})
    out = deflator_contributions(lv, hierarchy=hier, convention="fisher")
    chained = out[(out["horizon"] == "prev_period") | (out["frequency"] == "A")]
    assert chained["residual_pp"].abs().max() < 1e-9
    w = lv[lv["item"] == "P7"].pivot_table(index="period", columns="price_basis", values="value")
    price = (w["current"] / w["chain_linked"]).sort_index()
    rise = out[(out["item"] == "P7") & (out["horizon"] == "prev_period")].set_index("period")
    dp = price.diff().reindex(rise.index)
    assert (np.sign(rise["contribution_pp"]) == -np.sign(dp)).all()  # imports negative


def test_import_price_rise_gives_negative_contribution():
    """Only the import price rises in 2001: P7 contributes negatively, the rest zero."""
    n = 8
    prices = {i: np.ones(n) for i in ["P31_S14", "P6", "P7"]}
    prices["P7"] = np.r_[np.ones(4), 1.1 * np.ones(4)]
    quantities = {"P31_S14": np.full(n, 80.0), "P6": np.full(n, 40.0), "P7": np.full(n, 30.0)}
    spec = [("B1GQ", [("P31_S14", 1), ("P6", 1), ("P7", -1)])]
    lv = chained_panel(prices, quantities, spec)
    hier = Hierarchy.from_mapping({"B1GQ": ["P31_S14", "P6", "-P7"]})
    out = deflator_contributions(lv, hierarchy=hier)
    a = out[(out["period"] == "2001") & (out["horizon"] == "prev_year")].set_index("item")["contribution_pp"]
    assert a["P7"] == pytest.approx(-100 * 3.0 / 90.0)  # 100 s (C - K)/K^Z = -100 x 3 / 90
    assert a["P31_S14"] == 0.0 and a["P6"] == 0.0
    q1 = out[(out["period"] == "2001-Q1") & (out["horizon"] == "prev_period")].set_index("item")["contribution_pp"]
    assert q1["P7"] == pytest.approx(-100 * 3.0 / 90.0)  # step 1 flat, step 2: 100 s (c - k)/k^Z
    assert set(out["horizon"]) == {"prev_period", "prev_year"}


def test_errors_convention_missing_component_non_positive_aggregate():
    lv, hier = random_economy(7, n_years=2)
    with pytest.raises(ConfigError):
        deflator_contributions(lv, hierarchy=hier, convention="prior_year_weights")
    gap = lv.drop(lv.index[(lv["item"] == "P51G") & (lv["period"] == "2001-Q3")
                           & (lv["price_basis"] == "previous_year")])
    with pytest.raises(InputError) as err:
        deflator_contributions(gap, hierarchy=hier)
    assert {(p.economy, p.item) for p in err.value.problems} == {("XX", "P51G")}
    assert "2001-Q3" in {p.period for p in err.value.problems}
    neg = lv.copy()
    neg.loc[(neg["item"] == "P3") & (neg["period"] == "2001") & (neg["price_basis"] == "current"), "value"] = -1.0
    with pytest.raises(InputError) as err:
        deflator_contributions(neg, hierarchy=hier)
    assert [(p.item, p.period, p.price_basis) for p in err.value.problems] == [("P3", "2001", "current")]
    neg = lv.copy()
    neg.loc[(neg["item"] == "B1GQ") & (neg["period"] == "2000-Q1") & (neg["price_basis"] == "chain_linked"),
            "value"] = 0.0
    with pytest.raises(InputError) as err:  # it values the first year's quarters (first_link.md)
        deflator_contributions(neg, hierarchy=hier)
    assert [(p.item, p.period, p.price_basis) for p in err.value.problems] == [("B1GQ", "2000-Q1", "chain_linked")]


def test_component_absent_from_an_economy_is_skipped():
    """A declared component an economy does not report (no rows at all) is left out."""
    lv, hier = random_economy(3, n_years=2)
    hier2 = Hierarchy.from_mapping({**{a: [("-" if c.sign < 0 else "") + c.item for c in cs]
                                       for a, cs in hier.aggregates.items()}, "P5": ["P51G", "P52", "P53"]})
    out = deflator_contributions(lv, hierarchy=hier2)
    assert "P53" not in set(out["item"])
    assert out["residual_pp"].abs().max() < 1e-9


# --- income side ----------------------------------------------------------------------------


def income_panel(w, pi, t, y, x, freq="A"):
    n = len(w)
    years = 2000 + (np.arange(n) if freq == "A" else np.arange(n) // 4)
    quarters = np.zeros(n, dtype=int) if freq == "A" else np.arange(n) % 4 + 1
    lv = pd.concat([rows_of("XX", "D1", "current", freq, years, quarters, w),
                    rows_of("XX", "B2A3G", "current", freq, years, quarters, pi),
                    rows_of("XX", "D2X3", "current", freq, years, quarters, t),
                    rows_of("XX", "B1GQ", "current", freq, years, quarters, y),
                    rows_of("XX", "B1GQ", "chain_linked", freq, years, quarters, x)], ignore_index=True)
    lv["period"] = period_label(lv["year"], lv["quarter"]).to_numpy()
    return lv


def test_income_side_hand_checked():
    """D = Y/X = ULC + UP + UT + US (docs/methods.md §4.2); ctr = 100 (U_t - U_{t-1}) / D_{t-1}."""
    lv = income_panel([50.0, 60.0], [40.0, 42.0], [10.0, 8.0], [100.0, 112.0], [100.0, 100.0])
    out = income_side_contributions(lv).query("horizon == 'prev_year'").set_index("item")
    assert sorted(out.index) == sorted(["ULC", "UP", "UT", UNIT_DISCREPANCY])
    assert out.loc["ULC", "contribution_pp"] == pytest.approx(10.0)
    assert out.loc["UP", "contribution_pp"] == pytest.approx(2.0)
    assert out.loc["UT", "contribution_pp"] == pytest.approx(-2.0)
    assert out.loc[UNIT_DISCREPANCY, "contribution_pp"] == pytest.approx(2.0)
    assert out["aggregate_growth_pct"].iloc[0] == pytest.approx(12.0)
    assert (out["aggregate"] == "B1GQ").all()


@settings(max_examples=20, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), freq=st.sampled_from(["A", "Q"]))
def test_property_income_side_sums_to_deflator_growth(seed, freq):
    """Income-side contributions sum to GDP-deflator growth (docs/methods.md §4.2, DERIVED), net
    taxes allowed negative."""
    rng = np.random.default_rng(seed)
    n = 8
    y = 100 * np.exp(np.cumsum(rng.normal(0.02, 0.05, n)))
    w = y * rng.uniform(0.4, 0.6, n)
    t = y * rng.uniform(-0.05, 0.15, n)
    pi = y - w - t + rng.normal(0, 1, n)
    x = 100 * np.exp(np.cumsum(rng.normal(0.01, 0.03, n)))
    out = income_side_contributions(income_panel(w, pi, t, y, x, freq))
    assert out["residual_pp"].abs().max() < 1e-9
    d = y / x
    first = out[(out["horizon"] == "prev_period")].groupby("period")["aggregate_growth_pct"].first()
    lag = 1
    expect = 100 * (d[lag:] / d[:-lag] - 1)
    np.testing.assert_allclose(first.to_numpy(), expect, rtol=1e-12)


def test_income_side_partial_items_is_an_input_error():
    lv = income_panel([50.0, 60.0], [40.0, 42.0], [10.0, 8.0], [100.0, 112.0], [100.0, 100.0])
    lv = lv.drop(lv.index[(lv["item"] == "D2X3") & (lv["year"] == 2001)])
    with pytest.raises(InputError) as err:
        income_side_contributions(lv)
    assert [(p.item, p.period) for p in err.value.problems] == [("D2X3", "2001")]
    none = lv[~lv["item"].isin(["D1", "B2A3G", "D2X3"])]
    assert income_side_contributions(none).empty


def test_fisher_sign_changing_component_priced_at_aggregate_deflator():
    """valvol convention: under ``fisher`` an inventory change is priced at the aggregate's
    implicit deflator; without the aggregate's chain-linked value that is an InputError."""
    rng = np.random.default_rng(5)
    p = {i: np.exp(np.cumsum(rng.normal(0.01, 0.05, 4))) for i in ["P3", "P6", "P7"]}
    q = {i: 100 * np.exp(np.cumsum(rng.normal(0.01, 0.05, 4))) for i in ["P3", "P6", "P7"]}
    p["P52"], q["P52"] = np.ones(4), np.array([3.0, -2.0, 1.0, 0.5])  # own price 1 in the chain
    lv = fisher_panel(p, q, {"P3": 1, "P52": 1, "P6": 1, "P7": -1}, aggregate="B1GQ")
    hier = Hierarchy.from_mapping({"B1GQ": ["P3", "P52", "P6", "-P7"]})
    out = deflator_contributions(lv, hierarchy=hier, convention="fisher")
    assert np.isfinite(out["contribution_pp"]).all() and "P52" in set(out["item"])
    total = out.groupby(["period", "horizon"])["contribution_pp"].sum()
    # the chain priced P52 at 1, the convention at the aggregate's deflator: a small residual
    assert (total - out.groupby(["period", "horizon"])["aggregate_growth_pct"].first()).abs().max() < 0.2
    assert out["residual_pp"].abs().max() > 0
    no_chain = lv[~((lv["item"] == "B1GQ") & (lv["price_basis"] == "chain_linked"))]
    with pytest.raises(InputError) as err:
        deflator_contributions(no_chain, hierarchy=hier, convention="fisher")
    assert {p.item for p in err.value.problems} == {"B1GQ"}


def test_empty_panel_gives_empty_tables():
    from valvol.frames import empty_levels

    for convention in ("annual_overlap_exact", "fisher"):
        out = deflator_contributions(empty_levels(), hierarchy=Hierarchy.default(), convention=convention)
        assert out.empty and list(out.columns) == CONTRIBUTION_COLUMNS
    assert income_side_contributions(empty_levels()).empty
