"""The income side of the demo (D1, B2A3G, D2X3 at current prices) and its decomposition of the GDP deflator.

Sources are named beside each check (formulas in docs/methods.md).
"""

from __future__ import annotations

import hashlib

import numpy as np
import pytest
from support.quillon import (
    EXPENDITURE_SHA256,
    FOLDER,
    INCOME,
    deflator_growth,
    income_contributions,
    unit_incomes,
    wide_basis,
)

# --- the income side (D1, B2A3G, D2X3 at current prices) --------------------------------------


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
    # SNA income approach (common practice; docs/methods.md §4.2: Y = W + Pi + T (+ S)): D1 + B2A3G + D2X3 =
    # B1GQ at current prices; the demo has no income-side discrepancy S.
    table = wide_basis(committed if release == "later" else earlier, "current")
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
    quarterly = wide_basis(committed, "current")
    assert (quarterly[INCOME] > 0).all().all()
    assert (100.0 * quarterly["D1"] / quarterly["B1GQ"]).between(46.0, 55.0).all()


def test_income_contributions_add_up_to_the_gdp_deflator(annual):
    # docs/methods.md §4.2 [DERIVED]: D = ULC + UP + UT (+ US), so the contributions add up to the growth of
    # the GDP deflator; unit profits = operating surplus over real GDP (ECB Economic Bulletin 6/2019,
    # box by Hahn, as quoted in docs/methods.md §4.2). Here within floating-point precision (no discrepancy).
    deflator, _ = unit_incomes(annual)
    growth = 100.0 * (deflator / deflator.shift(1) - 1.0)
    total = income_contributions(annual).sum(axis=1, min_count=3)
    np.testing.assert_allclose(total.iloc[1:], growth.iloc[1:], rtol=0, atol=1e-9)


def test_unit_profits_drive_the_gdp_deflator_in_the_export_boom(annual):
    # Design of the demo: in the 2024-2025 ore export boom the operating surplus jumps, so unit
    # profits grow faster than unit labour costs and contribute most to GDP deflator growth
    # (docs/methods.md §4.2: ULC = D1/X, UP = B2A3G/X, X chain-linked GDP).
    _, units = unit_incomes(annual)
    unit_growth = 100.0 * (units / units.shift(1) - 1.0)
    assert unit_growth.loc[2024, "B2A3G"] > unit_growth.loc[2024, "D1"] + 3.0
    ctr = income_contributions(annual)
    for year in (2024, 2025):
        assert ctr.loc[year, "B2A3G"] == ctr.loc[year, INCOME].max(), year
        assert ctr.loc[year, "B2A3G"] > 3.0, year


def test_energy_shock_squeezes_real_wages_and_cuts_net_taxes(annual):
    # Design of the demo: in 2022 wages lag consumer prices (unit labour costs grow far less than the
    # household consumption deflator) and catch up in 2023; energy subsidies make net taxes on
    # production and imports fall in 2022 (docs/methods.md §4.2: use the level form when net taxes move
    # sharply).
    _, units = unit_incomes(annual)
    ulc_growth = 100.0 * (units["D1"] / units["D1"].shift(1) - 1.0)
    hh = {year: deflator_growth(annual, "P31_S14", year) for year in (2022, 2023)}
    assert ulc_growth.loc[2022] < hh[2022] - 3.0
    assert ulc_growth.loc[2023] > hh[2023]
    d2x3 = annual.loc["D2X3", "current"]
    assert d2x3.loc[2022] < d2x3.loc[2021]
    assert income_contributions(annual).loc[2022, "D2X3"] < 0.0
