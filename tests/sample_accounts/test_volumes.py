"""Previous-year prices and annual-overlap chain-linked volumes of the demo, recomputed from their definitions.

Sources are named beside each check (formulas in docs/methods.md).
"""

from __future__ import annotations

import numpy as np
from support.quillon import (
    CHAINED,
    ROUND_A,
    ROUND_Q,
    tolerance,
)

# --- previous-year prices ------------------------------------------------------------------


def test_annual_previous_year_value_is_quantities_at_previous_year_unit_values(gen, annual):
    # IMF QNA Manual 2017, ch.8, para. 8.17, eq.(2) (docs/methods.md Notation, READ-partial):
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
    # docs/methods.md section 2.2, pitfall [DERIVED]: at value-weighted unit values the quarters of y
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
    # ABS 5216.0 (2020-21), ch.6 Annex para. 6A.2, eq.(1); docs/methods.md §2.1: CLV_r = C_r, r = 2020.
    for item in CHAINED:
        clv = annual.loc[(item, 2020), "chain_linked"]
        assert abs(clv - unrounded.loc[(item, 2020), "c"]) <= ROUND_A + 1e-6, item
        assert abs(clv - annual.loc[(item, 2020), "current"]) <= ROUND_A + tolerance(item) + 1e-6, item


def test_quarters_sum_to_the_annual_chain(unrounded, annual):
    # docs/methods.md §2.1-2.2 [READ: ABS 5216.0 ch.6 Annex eq.(1); DERIVED: annual overlap, QNA 2017
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
    # docs/methods.md §2.2 annual_overlap [DERIVED]: CLV(s,y) = k(s,y) * CLV_{y-1} / C_{y-1}, computed from
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
    # docs/methods.md §2.1 [READ: ABS 5216.0 ch.6 Annex eq.(1)]: CLV_y / CLV_{y-1} = K_y / C_{y-1}, here
    # from the published (rounded) values alone; the tolerance bounds the rounding carried by each
    # term. 2012 is not checked: its previous year (2011) is not published.
    for item in CHAINED:
        a = annual.loc[item]
        c_prev, clv_prev = a["current"].shift(1), a["chain_linked"].shift(1)
        link = a["previous_year"] / c_prev
        expected = clv_prev * link
        e = tolerance(item)
        tol = ROUND_A + link * ROUND_A + expected * (e / a["previous_year"] + e / c_prev)
        ok = ((a["chain_linked"] - expected).abs() <= tol + 1e-6).iloc[1:]
        assert ok.all(), item


def test_aggregates_are_not_sums_of_chained_components(annual):
    # ESA 95 para. 10.65 (docs/methods.md §2.3): chained components do not add to the chained aggregate
    # away from the reference year; each aggregate is chained from its own sums.
    a = annual["chain_linked"].unstack("item")
    residual = a["B1GQ"] - (a["P3"] + a["P51G"] + a["P6"] - a["P7"])
    assert residual.drop(index=[2020]).abs().max() > 10.0
