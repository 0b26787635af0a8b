"""Settings of the Quillon demo: seeds, periods, products and the knots of prices and volumes."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

SEED = 20_120_331
ECONOMY = "XQ"
CURRENCY = "tessel"
UNIT = "tessel million"
ADJUSTMENT = "S"
FIRST_SIMULATED_YEAR = 2011  # simulated only: the previous year of 2012, not published
FIRST_YEAR = 2012
LAST_YEAR = 2025
LAST_QUARTER = "2025-Q4"  # last quarter of the current (later) release
EARLIER_LAST_QUARTER = "2025-Q3"  # last quarter of the release of one quarter earlier
REFERENCE_YEAR = 2020
COLUMNS = ["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]
PRICE_BASES = ["current", "previous_year", "chain_linked"]
FOLDER = Path(__file__).resolve().parents[1]  # sample_accounts/
OUTPUT = FOLDER / "accounts.csv"
EARLIER_FOLDER = "earlier_release"
EARLIER_OUTPUT = FOLDER / EARLIER_FOLDER / "accounts.csv"

#: Published items in output order (components before the aggregates using them).
ITEMS = ["P31_S14", "P3_S15", "P3_S13", "P3", "P51G", "P52", "P53", "P5", "P6", "P7", "YA1", "B1GQ"]
COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "P7", "YA1"]
#: Signed aggregates, as in ``valvol.toml``; listed bottom-up.
AGGREGATES = {
    "P3": {"P31_S14": 1, "P3_S15": 1, "P3_S13": 1},
    "P5": {"P51G": 1, "P52": 1, "P53": 1},
    "B1GQ": {"P3": 1, "P5": 1, "P6": 1, "P7": -1, "YA1": 1},
}
#: Items that are always positive and get a published chain-linked volume.
CHAINED = ["P31_S14", "P3_S15", "P3_S13", "P3", "P51G", "P5", "P6", "P7", "B1GQ"]

N_YEARS = LAST_YEAR - FIRST_SIMULATED_YEAR + 1
N_QUARTERS = 4 * N_YEARS

#: Price drivers (log levels) at knots; linear in between. Columns: knot period, then
#: energy (world energy price), goods (world goods prices), domestic (wage and
#: services pressure), corvite (the island's export ore).
PRICE_KNOTS = pd.DataFrame(
    [
        ("2010-Q4", 0.00, 0.000, 0.000, 0.00),
        ("2011-Q4", 0.05, 0.005, 0.000, 0.08),
        ("2012-Q4", 0.08, 0.005, 0.000, 0.02),
        ("2013-Q4", 0.06, 0.000, 0.000, -0.05),
        ("2014-Q4", -0.15, -0.005, 0.000, -0.10),
        ("2015-Q4", -0.38, -0.015, -0.003, -0.20),
        ("2016-Q4", -0.35, -0.015, -0.005, -0.15),
        ("2017-Q4", -0.25, -0.010, -0.003, -0.05),
        ("2018-Q4", -0.18, -0.005, 0.000, 0.00),
        ("2019-Q4", -0.20, -0.005, 0.000, -0.02),
        ("2020-Q2", -0.55, -0.010, -0.003, -0.15),
        ("2020-Q4", -0.42, -0.005, -0.003, -0.08),
        ("2021-Q2", -0.22, 0.010, 0.000, 0.02),
        ("2021-Q4", -0.02, 0.035, 0.003, 0.06),
        ("2022-Q2", 0.38, 0.080, 0.012, 0.08),
        ("2022-Q4", 0.50, 0.110, 0.028, 0.06),
        ("2023-Q2", 0.22, 0.115, 0.045, 0.02),
        ("2023-Q4", 0.18, 0.115, 0.055, 0.05),
        ("2024-Q2", 0.17, 0.115, 0.060, 0.30),
        ("2024-Q4", 0.16, 0.115, 0.063, 0.48),
        ("2025-Q2", 0.15, 0.115, 0.066, 0.60),
        ("2025-Q4", 0.14, 0.115, 0.068, 0.68),
    ],
    columns=["knot", "energy", "goods", "domestic", "corvite"],
)

#: Volume driver (log level): the 2020-2021 lockdown dip and recovery.
VOLUME_KNOTS = pd.DataFrame(
    [
        ("2010-Q4", 0.000),
        ("2019-Q4", 0.000),
        ("2020-Q1", -0.030),
        ("2020-Q2", -0.140),
        ("2020-Q3", -0.060),
        ("2020-Q4", -0.045),
        ("2021-Q1", -0.035),
        ("2021-Q2", -0.020),
        ("2021-Q3", -0.008),
        ("2021-Q4", 0.000),
        ("2025-Q4", 0.000),
    ],
    columns=["knot", "lockdown"],
)

#: Elementary products. value0: quarterly value in 2011-Q1 (tessel million, prices = 1);
#: gq, gp: trend log growth a year of quantity and price; sq, sp: quarterly noise (log);
#: lock: loading on the lockdown driver; energy .. corvite: loadings on the price drivers.
# fmt: off
PRODUCTS = pd.DataFrame(
    [
        ("P31_S14", "food", 4400, 0.012, 0.020, 0.003, 0.003, 0.10, 0.10, 0.60, 0.2, 0.0),
        ("P31_S14", "household energy", 2200, 0.005, 0.015, 0.004, 0.004, 0.60, 0.60, 0.00, 0.0, 0.0),
        ("P31_S14", "imported manufactures", 5500, 0.030, 0.012, 0.004, 0.003, 0.80, 0.00, 0.60, 0.0, 0.0),
        ("P31_S14", "services", 9400, 0.028, 0.022, 0.003, 0.002, 1.30, 0.02, 0.00, 1.0, 0.0),
        ("P31_S14", "housing", 6000, 0.020, 0.022, 0.001, 0.001, 0.05, 0.03, 0.00, 0.8, 0.0),
        ("P3_S15", "community services", 560, 0.020, 0.022, 0.004, 0.002, 0.80, 0.00, 0.00, 1.0, 0.0),
        ("P3_S15", "community goods", 140, 0.015, 0.010, 0.005, 0.003, 0.40, 0.10, 0.50, 0.0, 0.0),
        ("P3_S13", "public services", 6400, 0.018, 0.022, 0.002, 0.002, -0.10, 0.00, 0.00, 1.0, 0.0),
        ("P3_S13", "purchased goods", 2800, 0.020, 0.018, 0.003, 0.003, 0.00, 0.10, 0.30, 0.3, 0.0),
        ("P51G", "construction", 5600, 0.020, 0.022, 0.005, 0.003, 1.00, 0.05, 0.20, 0.8, 0.0),
        ("P51G", "domestic equipment", 1500, 0.030, 0.010, 0.006, 0.003, 1.20, 0.00, 0.40, 0.3, 0.0),
        ("P51G", "imported equipment", 3000, 0.030, 0.010, 0.006, 0.003, 1.20, 0.00, 0.70, 0.0, 0.0),
        ("P6", "corvite ore", 7000, 0.020, 0.010, 0.006, 0.006, 0.50, 0.00, 0.00, 0.0, 1.0),
        ("P6", "manufactures", 9500, 0.028, 0.010, 0.004, 0.003, 0.90, 0.04, 0.35, 0.2, 0.0),
        ("P6", "tourism services", 7500, 0.032, 0.022, 0.005, 0.003, 4.50, 0.05, 0.00, 1.0, 0.0),
        ("P7", "imported energy", 3800, 0.005, 0.010, 0.005, 0.008, 0.70, 1.00, 0.00, 0.0, 0.0),
        ("P7", "imported manufactures", 14000, 0.035, 0.012, 0.004, 0.003, 1.00, 0.00, 0.75, 0.0, 0.0),
        ("P7", "imported food", 5700, 0.015, 0.022, 0.003, 0.003, 0.30, 0.12, 0.80, 0.0, 0.0),
    ],
    columns=[
        "item", "product", "value0", "gq", "gp", "sq", "sp", "lock", "energy", "goods", "domestic", "corvite",
    ],
)
# fmt: on

#: Revisions of first estimates (earlier release minus later release, in logs). The last
#: ``REVISED_QUARTERS`` quarters of a revised release are first estimates. Their errors in
#: quarterly log-quantity growth are a common (economy-wide) part, an item part and a product
#: part, each scaled by the horizon weight (h+1)/H, h = 0 the oldest revised quarter, and
#: cumulated, so the level errors grow toward the latest quarter. Prices are revised by
#: ``REVISION_PRICE_RATIO`` times as much (own draws); the share of inventories P52 in the
#: rest of GDP gets an additive error of standard deviation ``REVISION_P52`` (times the weight).
REVISED_QUARTERS = 5
REVISION_SEED = 20_120_342  # chosen among SEED + 2 .. SEED + 13 for a typical pattern (README)
REVISION_COMMON = 0.0016
REVISION_ITEM = {"P51G": 0.0100}
REVISION_ITEM_DEFAULT = 0.0012
REVISION_PRODUCT = 0.0008
REVISION_PRICE_RATIO = 0.4
REVISION_P52 = 0.0009

#: Price reference of the sign-changing items: P52 (stocks of manufactured goods) is valued
#: at the price of imported manufactures, P53 (worked corvite stones) at the ore price.
SIGN_CHANGING_PRICE = {"P52": ("P7", "imported manufactures"), "P53": ("P6", "corvite ore")}

#: Income side, at current prices only: compensation of employees D1, taxes on production and
#: imports less subsidies D2X3, and gross operating surplus and mixed income B2A3G, which
#: closes the income identity D1 + B2A3G + D2X3 = B1GQ (no income-side discrepancy).
INCOME_ITEMS = ["D1", "B2A3G", "D2X3"]
INCOME_SEED = SEED + 20
#: Labour input n: log n = LABOUR_ELASTICITY·log X + noise (X chain-linked GDP; labour hoarding).
LABOUR_ELASTICITY = 0.75
LABOUR_NOISE = 0.0010
#: Wage rate w, quarterly log growth: (θ·π_CPI(t−L) + (1−θ)·π* + g*)/4 + κ·(log s* − log s(t−1)) +
#: noise, with π_CPI the CPI's year-on-year log change L quarters back (indexation on past
#: consumer prices) and s = D1/B1GQ the labour share, pulled back to s* by bargaining.
WAGE_INDEXATION = 0.75  # θ
WAGE_LAG = 4  # L, quarters
TREND_INFLATION = 0.018  # π*, a year
TREND_PRODUCTIVITY = 0.0055  # g*, a year: (1 − ε) times trend GDP growth
WAGE_CORRECTION = 0.10  # κ, a quarter
LABOUR_SHARE = 0.51  # s*, also the share in 2012-Q1
WAGE_NOISE = 0.0015
#: Net taxes: TAX_ON_CONSUMPTION·P31_S14 + TAX_ON_OUTPUT·B1GQ (times noise) less subsidies:
#: SUBSIDY_BASE·B1GQ, the job-retention subsidies (``lockdown``, a share of GDP) of 2020-2021
#: and the energy subsidies of 2022-2023 (``energy``, a share of the imported energy bill).
TAX_ON_CONSUMPTION = 0.140
TAX_ON_OUTPUT = 0.042
TAX_NOISE = 0.004
SUBSIDY_BASE = 0.006
SUBSIDY_KNOTS = pd.DataFrame(
    [
        ("2010-Q4", 0.000, 0.00),
        ("2019-Q4", 0.000, 0.00),
        ("2020-Q1", 0.002, 0.00),
        ("2020-Q2", 0.020, 0.00),
        ("2020-Q3", 0.008, 0.00),
        ("2020-Q4", 0.006, 0.00),
        ("2021-Q1", 0.005, 0.00),
        ("2021-Q2", 0.003, 0.00),
        ("2021-Q3", 0.001, 0.00),
        ("2021-Q4", 0.000, 0.00),
        ("2022-Q1", 0.000, 0.08),
        ("2022-Q2", 0.000, 0.18),
        ("2022-Q3", 0.000, 0.24),
        ("2022-Q4", 0.000, 0.26),
        ("2023-Q1", 0.000, 0.20),
        ("2023-Q2", 0.000, 0.12),
        ("2023-Q3", 0.000, 0.06),
        ("2023-Q4", 0.000, 0.03),
        ("2024-Q1", 0.000, 0.00),
        ("2025-Q4", 0.000, 0.00),
    ],
    columns=["knot", "lockdown", "energy"],
)

#: Consumer price index (monthly, 2020 = 100) of the household products of P31_S14.
#: scope: CPI expenditure weight relative to national-accounts household consumption (household
#: budget weights put more on energy; owner-occupiers' imputed rent is left out, so housing keeps
#: only actual rentals); noise: monthly white noise of the log price.
CPI_SEED = SEED + 21
CPI_ITEM = "CPI"
CPI_PRICE_BASIS = "index"
CPI_ADJUSTMENT = "N"
CPI_UNIT = "index 2020=100"
CPI_OUTPUT = "cpi.csv"
CPI_PRODUCTS = pd.DataFrame(
    [
        ("food", 1.00, 0.0015),
        ("household energy", 1.30, 0.0030),
        ("imported manufactures", 1.00, 0.0010),
        ("services", 1.00, 0.0005),
        ("housing", 0.30, 0.0003),
    ],
    columns=["product", "scope", "noise"],
)
#: Fixed baskets: a basket starts in January of ``start`` and holds the quantities bought in
#: ``weight_year`` (times scope); renewed every two years, every year from 2022.
CPI_BASKETS = pd.DataFrame(
    [
        (2011, 2011),
        (2014, 2012),
        (2016, 2014),
        (2018, 2016),
        (2020, 2018),
        (2022, 2020),
        (2023, 2021),
        (2024, 2022),
        (2025, 2023),
    ],
    columns=["start", "weight_year"],
)

#: Flash estimate of ``FLASH_YEAR`` (folder ``first_estimate/``): the quarters of that year at current
#: prices as the office estimated them from monthly indicators before the year's annual accounts
#: existed, to be reconciled to the annual totals (``annual/benchmarks.csv``, the later release's
#: sums) and to the quarterly GDP of the production side (the later release's B1GQ, held as the
#: total). Earlier quarters are the later release's. Only current prices are published.
FLASH_FOLDER = "first_estimate"
FLASH_BENCHMARKS = "annual/benchmarks.csv"  # in a sub-folder: the reader would take it as accounts
FLASH_YEAR = 2025
FLASH_SEED = SEED + 22
FLASH_COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "P7"]
FLASH_DISCREPANCY = "YA1"  # held at the later release's values: a fixed discrepancy in the identity
FLASH_TOTAL = "B1GQ"
FLASH_ITEMS = [*FLASH_COMPONENTS, FLASH_DISCREPANCY, FLASH_TOTAL]
FLASH_SIGNS = {item: -1 if item == "P7" else 1 for item in FLASH_COMPONENTS}
FLASH_BUDGET = ["P3_S13"]  # government consumption from the budget: already right, held fixed
FLASH_RULE = ["P52", "P53"]  # no indicator: each quarter repeats the previous year's quarterly mean
FLASH_CLOSING = "P31_S14"  # its benchmark closes any rounding gap of the annual system
#: Indicator of each remaining component: the true movement at current prices (volume times price)
#: times a seeded error whose quarterly log growth is bias/4 plus noise (standard deviation
#: ``noise``), so that the error reaches about ``bias`` (in logs) by Q4.
FLASH_INDICATORS = pd.DataFrame(
    [
        ("P31_S14", "retail sales (goods; misses the growth of services)", -0.0075, 0.0004),
        ("P3_S15", "membership-fee survey of non-profit institutions", 0.0050, 0.0004),
        ("P51G", "construction output and equipment deliveries", 0.0150, 0.0010),
        ("P6", "customs exports (misses tourism services)", -0.0075, 0.0005),
        ("P7", "customs imports", 0.0060, 0.0005),
    ],
    columns=["item", "indicator", "bias", "noise"],
)


__all__ = [n for n in dir() if not n.startswith("__") and n != "annotations"]
