"""The CPI-to-household-deflator bridge (valvol.methods.price_bridge).

Hand numbers: docs/derivations/price_bridge.md (derived). Additivity and the zero
properties are derived from the sequential construction (derived); that a chain index
removes the substitution of a fixed basket is stated in McCully, Moyer & Stewart, Survey
of Current Business, November 2007.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from valvol.methods.price_bridge import price_bridge

YEARS = (2019, 2020, 2021)
# sub-index annual means (2019, 2020, 2021); the headline as published
INDEX = {"CPI": (95.0, 100.0, 107.4), "CPI_CP01": (100.0, 100.0, 102.0), "CPI_CP045": (100.0, 100.0, 130.0),
         "CPI_CP041": (100.0, 100.0, 101.0)}
WEIGHTS = {"CPI_CP01": 0.5, "CPI_CP045": 0.2, "CPI_CP041": 0.3}
# household consumption by purpose: (current, previous-year prices) per year
ACCOUNTS = {"P31_S14_CP01": ((400.0, 400.0), (400.0, 400.0), (418.2, 410.0)),
            "P31_S14_CP045": ((100.0, 100.0), (100.0, 100.0), (117.0, 90.0)),
            "P31_S14_CP042": ((500.0, 500.0), (500.0, 500.0), (520.15, 505.0))}


def _inputs(index=INDEX, weights=WEIGHTS, accounts=ACCOUNTS):
    ix = pd.DataFrame([("XQ", item, "A", y, 0, v[i]) for item, v in index.items() for i, y in enumerate(YEARS)],
                      columns=["economy", "item", "frequency", "year", "quarter", "value"])
    w = pd.DataFrame([("XQ", item, y, v) for item, v in weights.items() for y in YEARS[1:]],
                     columns=["economy", "item", "year", "value"])
    rows = []
    for item, vals in accounts.items():
        for i, y in enumerate(YEARS):
            rows += [("XQ", item, "current", "A", y, 0, vals[i][0]), ("XQ", item, "previous_year", "A", y, 0, vals[i][1])]
    total = {}
    for r in rows:
        total[(r[2], r[4])] = total.get((r[2], r[4]), 0.0) + r[6]
    rows += [("XQ", "P31_S14", b, "A", y, 0, v) for (b, y), v in total.items()]
    lv = pd.DataFrame(rows, columns=["economy", "item", "price_basis", "frequency", "year", "quarter", "value"])
    lv = lv.assign(period=lv["year"].astype(str))
    return ix, w, lv


def _effects(bridge, order="formula_on_common", year=2021):
    b = bridge[(bridge["order"] == order) & (bridge["year"] == year) & (bridge["horizon"] == "prev_year")]
    return dict(zip(b["effect"], b["value_pp"], strict=True))


def test_hand_example():
    """Three items on each side (two common): the figures of docs/derivations/price_bridge.md (derived)."""
    bridge, items = price_bridge(*_inputs())
    e = _effects(bridge)
    assert e["gap"] == pytest.approx(7.4 - 100 * (1055.35 / 1005 - 1), abs=1e-10)
    assert e["residual"] == pytest.approx(0.1, abs=1e-10)
    assert e["scope_index_only"] == pytest.approx(-2.7, abs=1e-10)
    assert e["weight"] == pytest.approx(2.4, abs=1e-10)
    assert e["formula"] == pytest.approx(0.56, abs=1e-10)
    assert e["scope_accounts_only"] == pytest.approx(7.04 - 100 * (1055.35 / 1005 - 1), abs=1e-10)
    alt = _effects(bridge, "formula_on_accounts")
    assert alt["scope_accounts_only"] == pytest.approx(2.3, abs=1e-10)
    assert alt["formula"] == pytest.approx(5.3 - 100 * (1055.35 / 1005 - 1), abs=1e-10)
    w = items[(items["effect"] == "weight") & (items["year"] == 2021) & (items["horizon"] == "prev_year")
              & (items["order"] == "formula_on_common")].set_index("item")["value_pp"]
    assert w["CPI_CP01"] == pytest.approx(100 * 0.01 / 0.7 - 1.6, abs=1e-10)
    assert w["CPI_CP045"] == pytest.approx(100 * 0.06 / 0.7 - 6.0, abs=1e-10)
    assert set(bridge["year"]) == {2021}  # 2020 lacks the year before its old period (derived)


def test_additive():
    """Effects add to the gap, item contributions to their effect (derived)."""
    bridge, items = price_bridge(*_inputs())
    for _, b in bridge.groupby(["economy", "period", "horizon", "order"]):
        e = b.set_index("effect")["value_pp"]
        assert abs(e.drop("gap").sum() - e["gap"]) < 1e-12
    s = items.groupby(["economy", "period", "horizon", "order", "effect"])["value_pp"].sum()
    e = bridge.set_index(["economy", "period", "horizon", "order", "effect"])["value_pp"].drop("gap", level="effect")
    assert np.allclose(s.reindex(e.index).to_numpy(), e.to_numpy(), atol=1e-12, rtol=0)


def test_same_scope_and_weights_give_zero():
    """Identical items and weights: scope and weight effects vanish (derived)."""
    index = {k: v for k, v in INDEX.items() if k != "CPI_CP041"} | {"CPI_CP042": (100.0, 100.0, 103.0)}
    weights = {"CPI_CP01": 400.0, "CPI_CP045": 100.0, "CPI_CP042": 500.0}
    e = _effects(price_bridge(*_inputs(index, weights))[0])
    for k in ("scope_index_only", "weight", "scope_accounts_only"):
        assert abs(e[k]) < 1e-12


def test_one_item_gives_zero_formula():
    """One common item: the Laspeyres and the accounts' formula coincide (derived)."""
    index = {"CPI": INDEX["CPI"], "CPI_CP01": INDEX["CPI_CP01"]}
    accounts = {"P31_S14_CP01": ACCOUNTS["P31_S14_CP01"]}
    e = _effects(price_bridge(*_inputs(index, {"CPI_CP01": 1.0}, accounts))[0])
    assert abs(e["formula"]) < 1e-12 and abs(e["scope_index_only"]) < 1e-12


def test_fixed_basket_gives_zero_formula():
    """No relative price change (every price up 3%): no substitution term (derived)."""
    index = {"CPI": (100.0, 100.0, 103.0), "CPI_CP01": (100.0, 100.0, 103.0), "CPI_CP045": (100.0, 100.0, 103.0)}
    accounts = {"P31_S14_CP01": ((400.0, 400.0), (400.0, 400.0), (422.3, 410.0)),
                "P31_S14_CP045": ((100.0, 100.0), (100.0, 100.0), (92.7, 90.0))}
    e = _effects(price_bridge(*_inputs(index, {"CPI_CP01": 0.5, "CPI_CP045": 0.5}, accounts))[0])
    assert abs(e["formula"]) < 1e-12 and abs(e["gap"]) < 1e-12


def test_demo_sub_indexes_give_the_headline(demo_dir):
    """Quillon: the weighted sub-indexes reproduce the published CPI within its rounding of 0.1
    (half a unit: 0.05), every month from the second year on (derived from the annually chained
    fixed-basket form of docs/methods.md section 6.1; derived)."""
    head = pd.read_csv(demo_dir / "cpi.csv")
    sub = pd.read_csv(demo_dir / "cpi_coicop.csv")
    ix = sub[sub["price_basis"] == "index"].pivot(index="period", columns="item", values="value")
    w = sub[sub["price_basis"] == "weight"].pivot(index="period", columns="item", values="value")
    h = head.set_index("period")["value"].reindex(ix.index)
    year = ix.index.str.slice(0, 4).astype(int)
    mean = ix.groupby(year).mean()
    hmean = h.groupby(year).mean()
    for y in sorted(set(year))[1:]:  # a check over the demo's years
        cur = year == y
        wy = w.loc[str(y), ix.columns] / w.loc[str(y), ix.columns].sum()
        agg = hmean[y - 1] * (ix[cur] / mean.loc[y - 1]).mul(wy, axis=1).sum(axis=1)
        assert (agg - h[cur]).abs().max() <= 0.05


def test_demo_bridge_adds_up_to_the_published_gap(demo_dir, tmp_path):
    """Quillon: the bridge's gap is price_gaps' gap_cpi_vs_household; effects add to it and item
    contributions to the effects (derived); in 2022 energy drives the weight effect."""
    from valvol import pipeline

    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out, charts=False)
    bridge = pd.read_parquet(out / "price_bridge.parquet")
    items = pd.read_parquet(out / "price_bridge_items.parquet")
    gaps = pd.read_parquet(out / "price_gaps.parquet")
    key = ["economy", "period", "horizon"]
    gap = bridge[bridge["effect"] == "gap"].merge(gaps[gaps["measure"] == "gap_cpi_vs_household"], on=key)
    assert len(gap) == len(bridge[bridge["effect"] == "gap"]) > 0
    assert np.allclose(gap["value_pp"], gap["value"], atol=1e-9, rtol=0)
    k = [*key, "order"]
    e = bridge.pivot_table(index=k, columns="effect", values="value_pp")
    assert (e.drop(columns="gap").sum(axis=1) - e["gap"]).abs().max() < 1e-12
    s = items.groupby([*k, "effect"])["value_pp"].sum()
    b = bridge[bridge["effect"] != "gap"].set_index([*k, "effect"])["value_pp"]
    assert (s.reindex(b.index) - b).abs().max() < 1e-12
    w = items[(items["period"] == "2022") & (items["effect"] == "weight") & (items["horizon"] == "prev_year")
              & (items["order"] == "formula_on_common")].set_index("item")["value_pp"]
    assert w.idxmax() == "CPI_CP0451"
