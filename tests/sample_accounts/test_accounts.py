"""The demo accounts obey the input contract and the accounting identities.

Sources are named beside each check (formulas in docs/methods.md).
"""

from __future__ import annotations

import numpy as np
import pytest
from support.quillon import (
    AGGREGATES,
    CHAINED,
    COMPONENTS,
    INCOME,
    SIGN_CHANGING,
)

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
    for item in SIGN_CHANGING:  # docs/methods.md sections 1 and 2.4: no ratio chaining of sign-changing items
        assert bases[item] == ("current", "previous_year"), item
    for item in INCOME:  # income flows have no price and volume of their own (docs/methods.md section 5)
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
    # formed at current and previous-year prices as signed sums (docs/methods.md, Notation).
    table = wide.pivot(index="period", columns="item", values=basis)
    for agg, signs in AGGREGATES.items():
        total = sum(sign * table[item] for item, sign in signs.items())
        np.testing.assert_allclose(table[agg], total, rtol=0, atol=1e-6, err_msg=f"{agg} {basis}")
