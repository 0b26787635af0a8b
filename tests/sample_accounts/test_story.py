"""The demo's economic story: the 2022 energy shock, the 2024-2025 export boom, the 2020 dip.

Sources are named beside each check (formulas in docs/methods.md).
"""

from __future__ import annotations

from support.quillon import (
    deflator_growth,
)

# --- the story -----------------------------------------------------------------------------


def test_energy_shock_2022_lifts_household_prices_above_gdp_prices(annual):
    # Design of the demo: imported energy price shock in 2022. Annual implicit deflators
    # (docs/methods.md section 1 and 6: the household deflator includes imported goods, the GDP
    # deflator subtracts imports).
    hh = deflator_growth(annual, "P31_S14", 2022)
    gdp = deflator_growth(annual, "B1GQ", 2022)
    assert hh - gdp >= 3.0
    assert deflator_growth(annual, "P7", 2022) > 10.0
    tot = deflator_growth(annual, "P6", 2022) - deflator_growth(annual, "P7", 2022)
    assert tot < -5.0  # terms of trade fall (docs/methods.md section 5: ToT = 100 Px/Pm)


def test_export_boom_2024_2025_lifts_gdp_prices_above_household_prices(annual):
    # Design of the demo: export commodity boom in 2024-2025; terms of trade improve.
    for year in (2024, 2025):
        px = deflator_growth(annual, "P6", year)
        assert px > deflator_growth(annual, "P31_S14", year), year
        assert deflator_growth(annual, "B1GQ", year) > deflator_growth(annual, "P31_S14", year), year
        assert px > deflator_growth(annual, "P7", year), year


def test_volume_dip_in_2020_and_recovery(annual):
    gdp = annual["chain_linked"].loc["B1GQ"]
    assert gdp.loc[2020] < gdp.loc[2019] < gdp.loc[2021]
