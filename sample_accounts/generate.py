"""Seeded generator of the demo economy XQ, the invented Republic of Quillon.

The accounts are built bottom-up from invented elementary products: each
expenditure component is a small basket of products with simulated quarterly
quantities and prices. Values at current prices, at the previous year's
average prices and chain-linked volumes (annual overlap, reference year 2020)
all follow from the same quantities and prices, so the published series are
internally consistent. The economy, its currency (the tessel) and every number
are invented.

Two releases come out of the same simulation and the same code path
(``build_release``): the current release, 2012-Q1 .. 2025-Q4 (``build_accounts``),
and the release of one quarter earlier, 2012-Q1 .. 2025-Q3
(``build_earlier_release``), whose last five quarters are first estimates that
differ from the current release by seeded revisions of quantities and prices.

Each release also carries the income side at current prices (D1, B2A3G, D2X3,
adding up to B1GQ) in its ``accounts.csv`` and a monthly consumer price index
(``build_cpi``) in its own ``cpi.csv``; the CPI is built once from the simulated
household prices and is the same in both releases.

A third folder, ``first_estimate/``, holds a flash estimate of 2025 at current prices
(``build_first_estimate``): the components' 2025 quarters carried forward from 2024-Q4 with
seeded, biased indicators, GDP and the discrepancy as in the later release, and the 2025
annual totals of the components as benchmarks (``build_benchmarks``), for the
reconciliation walkthrough of the README.

Run ``python sample_accounts/generate.py`` to rewrite ``accounts.csv`` and
``cpi.csv`` next to this file and in ``earlier_release/``, and ``accounts.csv`` and
``annual/benchmarks.csv`` in ``first_estimate/``; the output is byte-identical on every run.
Importing the module has no side effects. The module is standalone (numpy and pandas only) so
that it documents the construction on its own.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
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
FOLDER = Path(__file__).resolve().parent
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


def _periods() -> pd.DataFrame:
    """Year, quarter and label of every simulated quarter, 2011-Q1 .. 2025-Q4."""
    t = np.arange(N_QUARTERS)
    year = FIRST_SIMULATED_YEAR + t // 4
    quarter = t % 4 + 1
    label = pd.Series(year).astype(str) + "-Q" + pd.Series(quarter).astype(str)
    return pd.DataFrame({"t": t, "year": year, "quarter": quarter, "period": label})


def _check_quarter(label: str) -> int:
    """Quarter index of a release's last quarter; a reference year must be complete."""
    if not isinstance(label, str) or re.fullmatch(r"\d{4}-Q[1-4]", label) is None:
        raise ValueError(f"last quarter must be a label YYYY-Qn, got {label!r}")
    n = int(_quarter_index(pd.Series([label]))[0])
    first = 4 * (REFERENCE_YEAR - FIRST_SIMULATED_YEAR) + 3
    if not first <= n < N_QUARTERS:
        raise ValueError(f"last quarter {label} outside {REFERENCE_YEAR}-Q4 .. {LAST_QUARTER}")
    return n


def _quarter_index(labels: pd.Series) -> np.ndarray:
    """Quarter index (0 = 2011-Q1) of ``YYYY-Qn`` labels."""
    parts = labels.str.extract(r"^(\d{4})-Q([1-4])$").astype("int64")
    return ((parts[0] - FIRST_SIMULATED_YEAR) * 4 + parts[1] - 1).to_numpy()


def _interpolate(knots: pd.DataFrame) -> np.ndarray:
    """Piecewise-linear paths between knots, shape (drivers, quarters)."""
    x = _quarter_index(knots["knot"]).astype(float)
    values = knots.drop(columns="knot").to_numpy(dtype=float).T
    t = np.arange(N_QUARTERS, dtype=float)
    right = np.clip(np.searchsorted(x, t, side="right"), 1, len(x) - 1)
    left = right - 1
    w = (t - x[left]) / (x[right] - x[left])
    return values[:, left] * (1.0 - w) + values[:, right] * w


def _smooth_noise(rng: np.random.Generator, sd: np.ndarray) -> np.ndarray:
    """Random walk (starting at zero) plus white noise per row, shape (len(sd), quarters)."""
    steps = rng.normal(0.0, 1.0, size=(len(sd), N_QUARTERS)) * sd[:, None]
    steps[:, 0] = 0.0
    level = rng.normal(0.0, 1.0, size=(len(sd), N_QUARTERS)) * (0.7 * sd[:, None])
    return np.cumsum(steps, axis=1) + level


def simulate_products() -> pd.DataFrame:
    """Quarterly prices and quantities of the elementary products, 2011-Q1 .. 2025-Q4.

    Returns
    -------
    pandas.DataFrame
        Long table with columns ``item, product, year, quarter, period, price, quantity``;
        quantities are in tessel million at 2011-Q1 prices (price about 1 then).

    Notes
    -----
    log q_j(t) = log q_j(0) + g^q_j t/4 + lock_j·L(t) + noise, and
    log p_j(t) = g^p_j t/4 + Σ_d β_jd·F_d(t) + noise, with F_d the price drivers of
    ``PRICE_KNOTS`` (energy, goods, domestic, corvite), L the lockdown driver and noise a
    seeded random walk plus white noise. The data are seasonally adjusted from the start.
    """
    rng = np.random.default_rng(SEED)
    per = _periods()
    t = per["t"].to_numpy(dtype=float)
    drivers = _interpolate(PRICE_KNOTS)
    lockdown = _interpolate(VOLUME_KNOTS)[0]
    loadings = PRODUCTS[["energy", "goods", "domestic", "corvite"]].to_numpy(dtype=float)
    gq, gp = PRODUCTS["gq"].to_numpy(), PRODUCTS["gp"].to_numpy()
    log_q = (
        np.log(PRODUCTS["value0"].to_numpy(dtype=float))[:, None]
        + gq[:, None] * t[None, :] / 4.0
        + PRODUCTS["lock"].to_numpy()[:, None] * lockdown[None, :]
        + _smooth_noise(rng, PRODUCTS["sq"].to_numpy())
    )
    log_p = (
        gp[:, None] * t[None, :] / 4.0 + loadings @ drivers + _smooth_noise(rng, PRODUCTS["sp"].to_numpy())
    )
    n_prod = len(PRODUCTS)
    out = pd.DataFrame(
        {
            "item": np.repeat(PRODUCTS["item"].to_numpy(), N_QUARTERS),
            "product": np.repeat(PRODUCTS["product"].to_numpy(), N_QUARTERS),
            "year": np.tile(per["year"].to_numpy(), n_prod),
            "quarter": np.tile(per["quarter"].to_numpy(), n_prod),
            "period": np.tile(per["period"].to_numpy(), n_prod),
            "price": np.exp(log_p).ravel(),
            "quantity": np.exp(log_q).ravel(),
        }
    )
    return out


def _unit_values(products: pd.DataFrame) -> pd.DataFrame:
    """Value-weighted annual average price of each product: annual value / annual quantity.

    Notes
    -----
    P̄_{j,y} = Σ_s p_j(s,y)·q_j(s,y) / Σ_s q_j(s,y); an unweighted mean of the quarterly
    prices would make the quarters of y valued at P̄_{j,y} miss the annual value
    (docs/methods.md section 2.2, pitfalls).

    References
    ----------
    IMF, *Quarterly National Accounts Manual*, 2017 Edition, ch.8, para. 8.17, eq. (2).
    """
    annual = (
        products.assign(value=products["price"] * products["quantity"])
        .groupby(["item", "product", "year"], sort=False)[["value", "quantity"]]
        .sum()
        .reset_index()
    )
    annual["unit_value"] = annual["value"] / annual["quantity"]
    return annual[["item", "product", "year", "unit_value"]]


def _with_previous_year_prices(products: pd.DataFrame) -> pd.DataFrame:
    """Add the previous year's unit value ``pbar_prev`` (NaN in 2011) to each product quarter."""
    uv = (
        _unit_values(products)
        .assign(year=lambda d: d["year"] + 1)
        .rename(columns={"unit_value": "pbar_prev"})
    )
    return products.merge(uv, on=["item", "product", "year"], how="left", validate="many_to_one")


def _shares() -> dict[str, np.ndarray]:
    """Shares of P52, P53 and YA1 in the rest of GDP (current prices), 2011-Q1 .. 2025-Q4.

    Notes
    -----
    P52: a slow cycle of ±0.4% plus a standardised random walk (sd 0.12%); P53: a cycle of
    ±0.05% plus a random walk (sd 0.02%); YA1: white noise (sd 0.09%) clipped to ±0.28%.
    """
    rng = np.random.default_rng(SEED + 1)
    t = np.arange(N_QUARTERS, dtype=float)
    ar = np.cumsum(rng.normal(0.0, 1.0, size=(2, N_QUARTERS)), axis=1) * 0.25
    return {
        "P52": 0.0040 * np.sin(2 * np.pi * t / 15.0 + 0.6) + 0.0012 * (ar[0] - ar[0].mean()) / ar[0].std(),
        "P53": 0.0005 * np.sin(2 * np.pi * t / 9.0 + 2.0) + 0.0002 * (ar[1] - ar[1].mean()) / ar[1].std(),
        "YA1": np.clip(rng.normal(0.0, 0.0009, size=N_QUARTERS), -0.0028, 0.0028),
    }


def _first_estimates(
    products: pd.DataFrame, shares: dict[str, np.ndarray], last_quarter: str, revision_seed: int
) -> tuple[pd.DataFrame, dict[str, np.ndarray]]:
    """Products and shares with the last ``REVISED_QUARTERS`` quarters up to ``last_quarter``
    replaced by seeded first estimates.

    Notes
    -----
    With w_h = (h+1)/H, h = 0 .. H−1 over the revised quarters, the first estimate of product j
    is log q'_j(h) = log q_j(h) + Σ_{i≤h} w_i·(σ_c·z_c(i) + σ_{item(j)}·z_{item(j)}(i) +
    σ_p·z_j(i)), z independent standard normal draws; prices alike with all σ times
    ``REVISION_PRICE_RATIO`` and own draws; the P52 share gets s'(h) = s(h) + w_h·σ_52·z_52(h).
    Quarters before the window are untouched.
    """
    rng = np.random.default_rng(revision_seed)
    horizon = REVISED_QUARTERS
    weight = np.arange(1, horizon + 1) / horizon
    item_codes, item_of = np.unique(PRODUCTS["item"].to_numpy(), return_inverse=True)
    item_sd = pd.Series(item_codes).map(REVISION_ITEM).fillna(REVISION_ITEM_DEFAULT).to_numpy()

    def log_errors(scale: float) -> np.ndarray:
        common = rng.normal(0.0, REVISION_COMMON, size=horizon)
        per_item = rng.normal(0.0, 1.0, size=(len(item_codes), horizon)) * item_sd[:, None]
        per_product = rng.normal(0.0, REVISION_PRODUCT, size=(len(PRODUCTS), horizon))
        growth = (common[None, :] + per_item[item_of] + per_product) * weight[None, :]
        return scale * np.cumsum(growth, axis=1)

    d_log_q, d_log_p = log_errors(1.0), log_errors(REVISION_PRICE_RATIO)
    d_share_p52 = rng.normal(0.0, REVISION_P52, size=horizon) * weight
    end = _check_quarter(last_quarter) + 1
    window = np.arange(end - horizon, end)
    labels = _periods().set_index("t").loc[window, "period"].to_numpy()
    errors = pd.DataFrame(
        {
            "item": np.repeat(PRODUCTS["item"].to_numpy(), horizon),
            "product": np.repeat(PRODUCTS["product"].to_numpy(), horizon),
            "period": np.tile(labels, len(PRODUCTS)),
            "d_log_q": d_log_q.ravel(),
            "d_log_p": d_log_p.ravel(),
        }
    )
    merged = products.merge(errors, on=["item", "product", "period"], how="left", validate="one_to_one")
    revised = products.assign(
        quantity=products["quantity"].to_numpy() * np.exp(merged["d_log_q"].fillna(0.0).to_numpy()),
        price=products["price"].to_numpy() * np.exp(merged["d_log_p"].fillna(0.0).to_numpy()),
    )
    p52 = shares["P52"].copy()
    p52[window] += d_share_p52
    return revised, {**shares, "P52": p52}


def release_inputs(
    last_quarter: str = LAST_QUARTER, revision_seed: int | None = None
) -> tuple[pd.DataFrame, dict[str, np.ndarray]]:
    """Product prices and quantities and sign-changing shares of one release, 2011-Q1 .. last.

    Parameters
    ----------
    last_quarter
        Last quarter of the release, ``YYYY-Qn`` between ``REFERENCE_YEAR``-Q4 and 2025-Q4.
    revision_seed
        ``None``: the quarters are those of the current release. Otherwise the seed of the
        first-estimate errors of the last ``REVISED_QUARTERS`` quarters (``_first_estimates``).

    Returns
    -------
    tuple
        The products table of ``simulate_products`` cut at ``last_quarter`` and the shares of
        P52, P53 and YA1 (arrays over the same quarters).
    """
    end = _check_quarter(last_quarter) + 1
    products, shares = simulate_products(), _shares()
    if revision_seed is not None:
        products, shares = _first_estimates(products, shares, last_quarter, revision_seed)
    keep = _quarter_index(products["period"]) < end
    return products[keep].reset_index(drop=True), {code: share[:end] for code, share in shares.items()}


def _unrounded_components(products: pd.DataFrame, shares: dict[str, np.ndarray]) -> pd.DataFrame:
    """Unrounded quarterly current (``c``) and previous-year-price (``k``) values per component.

    Notes
    -----
    Basket items: c(s,y) = Σ_j p_j(s,y)·q_j(s,y), k(s,y) = Σ_j P̄_{j,y−1}·q_j(s,y).
    Sign-changing items, given as shares of the remaining expenditure X (current prices):
    P52 and P53 are valued with a reference product's price relative,
    k = c·P̄_{ref,y−1}/p_ref(s,y); YA1 is deflated by the quarter's Paasche price relative of
    X, k = c·k_X(s,y)/c_X(s,y). In 2011 (simulated only) k is not defined. ``shares`` holds one
    value per quarter of ``products`` (``_shares``, ``release_inputs``).
    """
    prod = _with_previous_year_prices(products)
    prod["c"] = prod["price"] * prod["quantity"]
    prod["k"] = prod["pbar_prev"] * prod["quantity"]
    basket = prod.groupby(["item", "year", "quarter", "period"], sort=False)[["c", "k"]].sum(min_count=1)
    basket = basket.reset_index()
    sign = basket["item"].map({"P7": -1.0}).fillna(1.0)
    core = (
        basket.assign(c=basket["c"] * sign, k=basket["k"] * sign)
        .groupby(["year", "quarter", "period"], sort=False)[["c", "k"]]
        .sum(min_count=1)
        .reset_index()
    )
    n_quarters = len(core)
    if any(len(share) != n_quarters for share in shares.values()):
        raise ValueError(f"shares must hold one value per quarter ({n_quarters})")
    ref_keys = pd.DataFrame(
        [(code, ref_item, ref_product) for code, (ref_item, ref_product) in SIGN_CHANGING_PRICE.items()],
        columns=["code", "item", "product"],
    )
    ref = prod.merge(ref_keys, on=["item", "product"])[["code", "year", "quarter", "price", "pbar_prev"]]
    stocks = pd.DataFrame(
        {
            "item": np.repeat(list(SIGN_CHANGING_PRICE), n_quarters),
            "year": np.tile(core["year"].to_numpy(), len(SIGN_CHANGING_PRICE)),
            "quarter": np.tile(core["quarter"].to_numpy(), len(SIGN_CHANGING_PRICE)),
            "period": np.tile(core["period"].to_numpy(), len(SIGN_CHANGING_PRICE)),
            "c": np.concatenate([shares[code] for code in SIGN_CHANGING_PRICE])
            * np.tile(core["c"].to_numpy(), len(SIGN_CHANGING_PRICE)),
        }
    )
    stocks = stocks.merge(
        ref.rename(columns={"code": "item"}),
        on=["item", "year", "quarter"],
        how="left",
        validate="one_to_one",
    )
    stocks["k"] = stocks["c"] * stocks["pbar_prev"] / stocks["price"]
    ya1 = core[["year", "quarter", "period"]].assign(
        item="YA1", c=shares["YA1"] * core["c"], k=shares["YA1"] * core["k"]
    )
    cols = ["item", "year", "quarter", "period", "c", "k"]
    out = pd.concat([basket[cols], stocks[cols], ya1[cols]], ignore_index=True)
    return out


def _aggregate(frame: pd.DataFrame, columns: list[str]) -> pd.DataFrame:
    """Append the aggregates of ``AGGREGATES`` as signed sums of their components."""
    for agg, signs in AGGREGATES.items():
        part = frame[frame["item"].isin(list(signs))]
        sign = part["item"].map(signs).to_numpy(dtype=float)
        summed = (
            part[["year", "quarter", "period"]]
            .assign(**{col: part[col].to_numpy() * sign for col in columns})
            .groupby(["year", "quarter", "period"], sort=False)[columns]
            .sum(min_count=1)
            .reset_index()
            .assign(item=agg)
        )
        frame = pd.concat([frame, summed], ignore_index=True)
    return frame


def unrounded_levels(last_quarter: str = LAST_QUARTER, revision_seed: int | None = None) -> pd.DataFrame:
    """Unrounded quarterly values of every item of one release, 2011-Q1 .. ``last_quarter``.

    Parameters
    ----------
    last_quarter, revision_seed
        The release, as in ``release_inputs``; the defaults give the current release,
        2011-Q1 .. 2025-Q4 (2011 simulated only).

    Returns
    -------
    pandas.DataFrame
        Columns ``item, year, quarter, period, c, k``: ``c`` at current prices, ``k`` at the
        previous year's average prices (NaN in 2011); aggregates as signed sums of the
        unrounded components.
    """
    products, shares = release_inputs(last_quarter, revision_seed)
    return _aggregate(_unrounded_components(products, shares), ["c", "k"])


def _chain_link(levels: pd.DataFrame) -> pd.DataFrame:
    """Quarterly chain-linked volumes by annual overlap, reference year ``REFERENCE_YEAR``.

    Notes
    -----
    Annual links L_y = K_y / C_{y−1}; CLV_r = C_r, CLV_y = CLV_{y−1}·L_y forward and
    CLV_{y−1} = CLV_y / L_y backward; quarters CLV(s,y) = k(s,y)·CLV_{y−1}/C_{y−1}, so the
    four quarters of y sum to CLV_y. 2011 (simulated) serves as the previous year of 2012.
    An incomplete last year (a release ending before Q4) has no annual link; its quarters
    link on the previous complete year like any other, CLV(s,y) = k(s,y)·CLV_{y−1}/C_{y−1}.

    References
    ----------
    ABS 5216.0 (2020-21), ch.6 Annex, para. 6A.2, eq. (1); IMF, *Quarterly National Accounts
    Manual*, 2017 Edition, section 8.4.D (annual overlap); docs/methods.md sections 2.1-2.2.
    """
    chained = levels[levels["item"].isin(CHAINED)]
    annual = chained.groupby(["item", "year"])[["c", "k"]].sum(min_count=4).reset_index()
    annual = annual[annual["c"].notna()]  # complete years only
    annual = annual.sort_values(["item", "year"], ignore_index=True)
    prev_c = annual.groupby("item")["c"].shift(1)
    link = (annual["k"] / prev_c).fillna(1.0)  # 1 in 2011: the base of the cumulative product
    annual["cum"] = link.groupby(annual["item"]).cumprod()
    ref = annual[annual["year"] == REFERENCE_YEAR].set_index("item")
    scale = annual["item"].map(ref["c"] / ref["cum"])
    annual["clv"] = annual["cum"] * scale
    annual["ratio_next"] = annual["clv"] / annual["c"]  # CLV_{y-1}/C_{y-1}, used in year y
    step = annual[["item", "year", "ratio_next"]].assign(year=lambda d: d["year"] + 1)
    out = chained.merge(step, on=["item", "year"], how="inner", validate="many_to_one")
    out["clv"] = out["k"] * out["ratio_next"]
    return out[["item", "year", "quarter", "period", "clv"]]


def _round(x: pd.Series | np.ndarray) -> np.ndarray:
    """Round to one decimal; ``+ 0.0`` turns negative zeros into zeros."""
    return np.round(np.asarray(x, dtype=float), 1) + 0.0


def _monthly(log_quarterly: np.ndarray) -> np.ndarray:
    """Monthly log levels from quarterly ones (one row per series), 2011-01 .. 2025-12.

    Notes
    -----
    Within quarter q the log level is linear, x(q, m) = x_q + (m − 2)·b_q for its months
    m = 1, 2, 3, with the centred monthly slope b_q = (x_{q+1} − x_{q−1})/6 (one-sided,
    (x_1 − x_0)/3 and (x_Q − x_{Q−1})/3, at the ends). The three months average to x_q, the
    monthly change is constant within a quarter, and at steady growth g a quarter it is g/3
    across the quarter boundaries too.
    """
    padded = np.concatenate(
        [
            2.0 * log_quarterly[:, :1] - log_quarterly[:, 1:2],
            log_quarterly,
            2.0 * log_quarterly[:, -1:] - log_quarterly[:, -2:-1],
        ],
        axis=1,
    )
    slope = (padded[:, 2:] - padded[:, :-2]) / 6.0
    offset = np.tile(np.arange(-1.0, 2.0), log_quarterly.shape[1])
    return np.repeat(log_quarterly, 3, axis=1) + np.repeat(slope, 3, axis=1) * offset


def consumer_price_index() -> pd.DataFrame:
    """Unrounded monthly consumer price index, 2011-01 .. 2025-12, 2020 average = 100.

    Returns
    -------
    pandas.DataFrame
        Columns ``year, month, period`` (``YYYY-MM``) and ``value``. Built from the prices of the
        simulation (``simulate_products``), never from first estimates: the CPI is not revised.

    Notes
    -----
    Fixed-basket (Laspeyres-type) index with baskets renewed in January (``CPI_BASKETS``): basket b
    holds q_{j,b} = scope_j·Q_{j,w(b)}, the annual quantities of its weight year times the CPI
    scope of the product, and is linked in December:
    I(t) = I(link_b)·Σ_j q_{j,b}·p_j(t) / Σ_j q_{j,b}·p_j(link_b), link_b the December before the
    basket starts (the first month for the first basket). Monthly prices interpolate the
    quarterly ones (``_monthly``) times seeded monthly noise. Against the household consumption
    deflator (national-accounts scope, chained yearly with current-year weights) the CPI has
    fixed weights, a larger energy weight and no owner-occupiers' imputed rent.

    References
    ----------
    McCully, Moyer and Stewart, "Comparing the Consumer Price Index and the Personal Consumption
    Expenditures Price Index", *Survey of Current Business*, Nov 2007 (fixed basket, weights
    renewed every two years); ECB *Economic Bulletin* 1/2022, Eiglsperger et al. (no
    owner-occupied housing in the HICP); valvol docs/methods.md section 6.
    """
    products = simulate_products()
    household = products[products["item"] == "P31_S14"]
    names = CPI_PRODUCTS["product"].to_numpy()
    log_price = np.log(
        household.pivot(index="product", columns="period", values="price").loc[names].to_numpy()
    )
    quantity = household.groupby(["product", "year"])["quantity"].sum().unstack("year").loc[names]
    rng = np.random.default_rng(CPI_SEED)
    noise = (
        rng.normal(0.0, 1.0, size=(len(names), 3 * N_QUARTERS)) * CPI_PRODUCTS["noise"].to_numpy()[:, None]
    )
    price = np.exp(_monthly(log_price) + noise).T  # months x products
    months = np.arange(3 * N_QUARTERS)
    year = FIRST_SIMULATED_YEAR + months // 12
    starts = CPI_BASKETS["start"].to_numpy()
    basket = quantity[CPI_BASKETS["weight_year"].to_numpy()].to_numpy().T * CPI_PRODUCTS["scope"].to_numpy()
    link = np.maximum(12 * (starts - FIRST_SIMULATED_YEAR) - 1, 0)  # December before the start
    segment = np.searchsorted(starts, year, side="right") - 1
    relative = (basket[segment] * price).sum(axis=1) / (basket[segment] * price[link[segment]]).sum(axis=1)
    step = (basket[:-1] * price[link[1:]]).sum(axis=1) / (basket[:-1] * price[link[:-1]]).sum(axis=1)
    level = np.concatenate([[1.0], np.cumprod(step)])[segment] * relative
    month = months % 12 + 1
    level = 100.0 * level / level[year == REFERENCE_YEAR].mean()
    period = pd.Series(year).astype(str) + "-" + pd.Series(month).astype(str).str.zfill(2)
    return pd.DataFrame({"year": year, "month": month, "period": period, "value": level})


def build_cpi(last_quarter: str = LAST_QUARTER) -> pd.DataFrame:
    """The published CPI of a release, 2012-01 .. the last month of ``last_quarter``.

    Parameters
    ----------
    last_quarter
        Last quarter of the release (``YYYY-Qn``); the CPI is the same in every release.

    Returns
    -------
    pandas.DataFrame
        Columns ``economy, period, item, price_basis, value, adjustment, unit``: item ``CPI``,
        price basis ``index``, periods ``YYYY-MM``, not seasonally adjusted (``N``), 2020 = 100,
        one decimal.
    """
    end = 3 * (_check_quarter(last_quarter) + 1)
    cpi = consumer_price_index().iloc[:end]
    cpi = cpi[cpi["year"] >= FIRST_YEAR]
    return pd.DataFrame(
        {
            "economy": ECONOMY,
            "period": cpi["period"].to_numpy(),
            "item": CPI_ITEM,
            "price_basis": CPI_PRICE_BASIS,
            "value": _round(cpi["value"]),
            "adjustment": CPI_ADJUSTMENT,
            "unit": CPI_UNIT,
        }
    )[COLUMNS]


def _discount_cumsum(v: np.ndarray, decay: float) -> np.ndarray:
    """s(t) = decay·s(t−1) + v(t), s(0) = v(0), by a cumulative sum (each s(t) uses v up to t only)."""
    power = decay ** np.arange(len(v), dtype=float)
    return power * np.cumsum(v / power)


def _income(products: pd.DataFrame, levels: pd.DataFrame, clv: pd.DataFrame, gdp: pd.Series) -> pd.DataFrame:
    """D1, B2A3G and D2X3 at current prices, 2012-Q1 .. the release's last quarter, rounded.

    Parameters
    ----------
    products, levels, clv
        The release's products, unrounded levels and unrounded chain-linked volumes.
    gdp
        Published (rounded) B1GQ at current prices, indexed by period.

    Notes
    -----
    D1 = w·n with labour input log n = ε·log X (X chain-linked GDP) and a wage rate w whose
    log growth is m(t) + κ·(log s* − s(t−1)), m(t) = (θ·π_CPI(t−L) + (1−θ)·π* + g*)/4 + noise
    (π_CPI the CPI's y/y log change, π* before the CPI has one); so the log labour share
    s = log(D1/Y) follows s(t) = (1−κ)·s(t−1) + κ·log s* + m(t) + Δ(log n − log Y)(t),
    s(2012-Q1) = log s*. D2X3 = (τ_c·P31_S14 + τ_y·Y)·noise − (σ_0 + σ_L(t))·Y − σ_E(t)·E,
    E the imported energy bill. D1 and D2X3 are rounded; B2A3G = B1GQ − D1 − D2X3 from the
    rounded values, so the income identity holds to floating-point precision.

    References
    ----------
    valvol docs/methods.md section 4.2 (income side, Y = W + Π + T; unit profits as in ECB *Economic
    Bulletin* 6/2019, box by Hahn); the income approach to GDP of the SNA (common practice).
    """
    cur = levels[levels["year"] >= FIRST_YEAR].pivot(index="period", columns="item", values="c")
    real = clv[clv["item"] == "B1GQ"].set_index("period")["clv"].reindex(cur.index)
    energy = products[products["product"] == "imported energy"].set_index("period")
    bill = (energy["price"] * energy["quantity"]).reindex(cur.index).to_numpy()
    first = 4 * (FIRST_YEAR - FIRST_SIMULATED_YEAR)
    end = first + len(cur)
    rng = np.random.default_rng(INCOME_SEED)
    draws = rng.normal(0.0, 1.0, size=(3, N_QUARTERS))[:, first:end]
    cpi = consumer_price_index()
    log_cpi = np.log(cpi.groupby(np.arange(len(cpi)) // 3)["value"].mean().to_numpy())
    inflation = np.full(N_QUARTERS, TREND_INFLATION)
    inflation[4 + WAGE_LAG :] = (log_cpi[4:] - log_cpi[:-4])[: N_QUARTERS - 4 - WAGE_LAG]
    y = cur["B1GQ"].to_numpy()
    log_n = LABOUR_ELASTICITY * np.log(real.to_numpy()) + LABOUR_NOISE * draws[0]
    u = log_n - np.log(y)
    wage = (
        WAGE_INDEXATION * inflation[first:end]
        + (1.0 - WAGE_INDEXATION) * TREND_INFLATION
        + TREND_PRODUCTIVITY
    ) / 4.0 + WAGE_NOISE * draws[1]
    target = np.log(LABOUR_SHARE)
    v = WAGE_CORRECTION * target + wage + np.diff(u, prepend=np.nan)
    v[0] = target
    d1 = np.exp(_discount_cumsum(v, 1.0 - WAGE_CORRECTION)) * y
    subsidy = _interpolate(SUBSIDY_KNOTS)[:, first:end]
    taxes = (TAX_ON_CONSUMPTION * cur["P31_S14"].to_numpy() + TAX_ON_OUTPUT * y) * np.exp(
        TAX_NOISE * draws[2]
    )
    d2x3 = taxes - (SUBSIDY_BASE + subsidy[0]) * y - subsidy[1] * bill
    d1, d2x3 = _round(d1), _round(d2x3)
    b2a3g = _round(gdp.reindex(cur.index).to_numpy() - d1 - d2x3)
    n = len(INCOME_ITEMS)
    return pd.DataFrame(
        {
            "item": np.repeat(INCOME_ITEMS, len(cur)),
            "year": np.tile(cur.index.str[:4].astype("int64").to_numpy(), n),
            "period": np.tile(cur.index.to_numpy(), n),
            "value": np.concatenate([d1, b2a3g, d2x3]),
            "price_basis": "current",
        }
    )


def build_release(last_quarter: str, revision_seed: int | None = None) -> pd.DataFrame:
    """One release of the demo accounts of XQ in the input contract, 2012-Q1 .. ``last_quarter``.

    Parameters
    ----------
    last_quarter
        Last published quarter, ``YYYY-Qn`` (``REFERENCE_YEAR``-Q4 .. 2025-Q4).
    revision_seed
        ``None`` for the quarters of the current release; otherwise the last
        ``REVISED_QUARTERS`` quarters are seeded first estimates (``release_inputs``).

    Returns
    -------
    pandas.DataFrame
        Columns ``economy, period, item, price_basis, value, adjustment, unit``; every row
        seasonally adjusted (``S``), values in tessel million rounded to one decimal.

    Notes
    -----
    Components are rounded first; aggregates at current and previous-year prices are the
    signed sums of the rounded components (P3 = P31_S14 + P3_S15 + P3_S13, P5 = P51G + P52 +
    P53, B1GQ = P3 + P5 + P6 − P7 + YA1), so the identities hold to floating-point
    precision. Chain-linked volumes are computed from the unrounded values, each aggregate
    from its own sums, then rounded; none is published for P52, P53 or YA1. A release ending
    before Q4 links the quarters of its incomplete last year on the previous year. The income
    items D1, B2A3G and D2X3 (current prices, ``_income``) follow all expenditure rows, which
    are the same as without them.
    """
    products, shares = release_inputs(last_quarter, revision_seed)
    levels = _aggregate(_unrounded_components(products, shares), ["c", "k"])
    components = levels[levels["item"].isin(COMPONENTS)]
    clv = _chain_link(levels)
    rounded = components.assign(c=_round(components["c"]), k=_round(components["k"]))
    rounded = _aggregate(rounded, ["c", "k"])
    rounded = rounded.assign(c=_round(rounded["c"]), k=_round(rounded["k"]))
    gdp = rounded[rounded["item"] == "B1GQ"].set_index("period")["c"]
    long = pd.concat(
        [
            rounded[["item", "year", "period", "c"]]
            .rename(columns={"c": "value"})
            .assign(price_basis="current"),
            rounded[["item", "year", "period", "k"]]
            .rename(columns={"k": "value"})
            .assign(price_basis="previous_year"),
            clv[["item", "year", "period"]].assign(value=_round(clv["clv"]), price_basis="chain_linked"),
            _income(products, levels, clv, gdp),
        ],
        ignore_index=True,
    )
    long = long[long["year"] >= FIRST_YEAR]
    long = long.assign(
        item_rank=long["item"].map({item: i for i, item in enumerate(ITEMS + INCOME_ITEMS)}),
        basis_rank=long["price_basis"].map({basis: i for i, basis in enumerate(PRICE_BASES)}),
    ).sort_values(["item_rank", "basis_rank", "period"], kind="mergesort", ignore_index=True)
    return long.assign(economy=ECONOMY, adjustment=ADJUSTMENT, unit=UNIT)[COLUMNS]


def build_accounts() -> pd.DataFrame:
    """The current (later) release of the demo accounts of XQ, 2012-Q1 .. 2025-Q4.

    Returns
    -------
    pandas.DataFrame
        ``build_release(LAST_QUARTER)``: the quarters of the simulation, unrevised.
    """
    return build_release(LAST_QUARTER)


def build_earlier_release() -> pd.DataFrame:
    """The release of one quarter earlier, 2012-Q1 .. 2025-Q3, with first estimates.

    Returns
    -------
    pandas.DataFrame
        ``build_release(EARLIER_LAST_QUARTER, REVISION_SEED)``: identical to the current
        release up to 2024-Q2; 2024-Q3 .. 2025-Q3 are first estimates that the current
        release revised.
    """
    return build_release(EARLIER_LAST_QUARTER, REVISION_SEED)


def indicator_errors() -> pd.DataFrame:
    """Seeded errors of the flash indicators in the quarters of ``FLASH_YEAR`` (log levels).

    Returns
    -------
    pandas.DataFrame
        Columns ``item, period, error``: one row per indicator item (``FLASH_INDICATORS``) and
        quarter of ``FLASH_YEAR``; ``error`` is the log of the indicator's level over the true
        level, both relative to the previous year's Q4.

    Notes
    -----
    e_i(h) = Σ_{k≤h} (b_i/4 + σ_i·z_i(k)), h = 1 .. 4 the quarters of the year, b_i the bias and
    σ_i the noise of ``FLASH_INDICATORS``, z independent standard normal draws (seed
    ``FLASH_SEED``): a drift that cumulates to about b_i by Q4, plus noise.
    """
    rng = np.random.default_rng(FLASH_SEED)
    n = len(FLASH_INDICATORS)
    drift = FLASH_INDICATORS["bias"].to_numpy()[:, None] / 4.0
    noise = rng.normal(0.0, 1.0, size=(n, 4)) * FLASH_INDICATORS["noise"].to_numpy()[:, None]
    periods = [f"{FLASH_YEAR}-Q{q}" for q in range(1, 5)]
    return pd.DataFrame(
        {
            "item": np.repeat(FLASH_INDICATORS["item"].to_numpy(), 4),
            "period": np.tile(periods, n),
            "error": np.cumsum(drift + noise, axis=1).ravel(),
        }
    )


def _later_current(accounts: pd.DataFrame | None) -> pd.DataFrame:
    """Current-price rows of the flash items in the later release (``accounts``, else built)."""
    accounts = build_accounts() if accounts is None else accounts
    keep = (accounts["price_basis"] == "current") & accounts["item"].isin(FLASH_ITEMS)
    return accounts[keep].reset_index(drop=True)


def build_first_estimate(accounts: pd.DataFrame | None = None) -> pd.DataFrame:
    """The flash estimate of ``FLASH_YEAR`` at current prices, 2012-Q1 .. 2025-Q4.

    Parameters
    ----------
    accounts
        The later release (``build_accounts()``, built when ``None``).

    Returns
    -------
    pandas.DataFrame
        The input columns; current prices only, the items ``FLASH_ITEMS`` in the later release's
        order (no P3, P5: derived from their components). Up to the previous year's Q4 every value
        is the later release's; in ``FLASH_YEAR`` the components are first estimates, the
        discrepancy YA1 and GDP B1GQ (the production side's, held as the total) the later
        release's.

    Notes
    -----
    Indicator items (``FLASH_INDICATORS``): the published Q4 of the previous year carried forward
    with the indicator's movement, F_i(h) = V_i(Q4) · c_i(h)/c_i(Q4) · exp(e_i(h)), c the true
    unrounded value at current prices (volume times price) and e the indicator error
    (``indicator_errors``). Government consumption (``FLASH_BUDGET``) comes from the budget and is
    right. Inventories and valuables (``FLASH_RULE``) have no indicator: each quarter repeats the
    mean of the previous year's published quarters. Rounded to one decimal. Extrapolating a
    quarterly indicator from the last known quarter is the usual basis of a flash estimate
    (IMF, *Quarterly National Accounts Manual*, 2017 Edition, ch. 6, on indicator-based
    quarterly estimates before the annual benchmark; common practice).
    """
    later = _later_current(accounts)
    last = f"{FLASH_YEAR - 1}-Q4"
    published = later.set_index(["item", "period"])["value"]
    truth = unrounded_levels().set_index(["item", "period"])["c"]
    errors = indicator_errors()
    base_truth = errors["item"].map(truth.xs(last, level="period"))
    base_value = errors["item"].map(published.xs(last, level="period"))
    now = truth.reindex(pd.MultiIndex.from_frame(errors[["item", "period"]])).to_numpy()
    indicated = errors.assign(flash=base_value * now / base_truth * np.exp(errors["error"]))
    previous = later[later["item"].isin(FLASH_RULE) & later["period"].str.startswith(str(FLASH_YEAR - 1))]
    rule_mean = previous.groupby("item")["value"].mean()
    rule = pd.DataFrame(
        {
            "item": np.repeat(FLASH_RULE, 4),
            "period": np.tile([f"{FLASH_YEAR}-Q{q}" for q in range(1, 5)], len(FLASH_RULE)),
        }
    )
    rule["flash"] = rule["item"].map(rule_mean)
    flash = pd.concat([indicated[["item", "period", "flash"]], rule], ignore_index=True)
    merged = later.merge(flash, on=["item", "period"], how="left", validate="one_to_one")
    value = np.where(merged["flash"].notna(), _round(merged["flash"].fillna(0.0)), later["value"].to_numpy())
    return later.assign(value=value + 0.0)[COLUMNS]


def build_benchmarks(accounts: pd.DataFrame | None = None) -> pd.DataFrame:
    """Annual benchmarks of ``FLASH_YEAR``: each component's true total, from the annual accounts.

    Parameters
    ----------
    accounts
        The later release (``build_accounts()``, built when ``None``).

    Returns
    -------
    pandas.DataFrame
        The input columns, one row per component of ``FLASH_COMPONENTS``, period ``YYYY``, price
        basis ``current``, rounded to one decimal.

    Notes
    -----
    A_i = Σ_q V_i(q), the sum of the later release's (rounded) quarters of the year. The system is
    consistent: Σ_i s_i A_i + Σ_q YA1(q) = Σ_q B1GQ(q), s_i = −1 for imports P7; any rounding gap
    g = Σ_q B1GQ(q) − Σ_q YA1(q) − Σ_i s_i A_i goes into the benchmark of ``FLASH_CLOSING``
    (sign +1) before rounding (IMF, *Quarterly National Accounts Manual*, 2017 Edition, §6.5.A:
    the annual benchmarks of a reconciled system must add up to the annual total).
    """
    later = _later_current(accounts)
    year = later[later["period"].str.startswith(str(FLASH_YEAR))]
    sums = year.groupby("item")["value"].sum()
    components = sums.reindex(FLASH_COMPONENTS)
    signs = pd.Series(FLASH_SIGNS).reindex(FLASH_COMPONENTS)
    gap = sums[FLASH_TOTAL] - sums[FLASH_DISCREPANCY] - (signs * components).sum()
    components[FLASH_CLOSING] += gap * signs[FLASH_CLOSING]
    return pd.DataFrame(
        {
            "economy": ECONOMY,
            "period": str(FLASH_YEAR),
            "item": FLASH_COMPONENTS,
            "price_basis": "current",
            "value": _round(components.to_numpy()),
            "adjustment": ADJUSTMENT,
            "unit": UNIT,
        }
    )[COLUMNS]


def to_csv_text(frame: pd.DataFrame) -> str:
    """The CSV text of ``frame`` as committed: one decimal, ``\\n`` line ends."""
    return frame.to_csv(index=False, float_format="%.1f", lineterminator="\n")


#: Household consumption by purpose (COICOP 2018) and the CPI's sub-indexes (invented).
#: code, base share of household consumption, relative price trend a year, substitution
#: elasticity, CPI weight factor (the budget survey's scope), paired CPI sub-index ("" none).
COICOP_PURPOSES = pd.DataFrame(
    [
        ("CP01", 0.13, 0.004, 0.2, 1.10, "CPI_CP01"),
        ("CP02", 0.04, 0.010, 0.1, 0.80, "CPI_CP02"),
        ("CP03", 0.05, -0.015, 0.6, 1.00, "CPI_CP03"),
        ("CP041", 0.05, 0.006, 0.1, 1.60, "CPI_CP041"),
        ("CP045", 0.05, 0.000, 0.3, 1.50, "CPI_CP0451"),
        ("CP05", 0.06, -0.008, 0.5, 1.00, "CPI_CP05"),
        ("CP06", 0.05, 0.008, 0.1, 0.40, "CPI_CP06"),
        ("CP07", 0.12, 0.000, 0.4, 1.10, "CPI_CP07"),
        ("CP08", 0.03, -0.020, 0.3, 1.00, "CPI_CP08"),
        ("CP09", 0.09, -0.004, 0.5, 1.00, "CPI_CP09"),
        ("CP10", 0.02, 0.012, 0.0, 0.70, "CPI_CP10"),
        ("CP11", 0.08, 0.010, 0.3, 1.00, "CPI_CP11"),
        ("CP12", 0.07, 0.004, 0.2, 0.60, "CPI_CP12"),
    ],
    columns=["code", "share", "trend", "sigma", "cpi_factor", "index_item"],
)
#: Owner-occupiers' imputed rentals: accounts only, the balancing purpose (its value is the
#: rest of P31_S14 at both price bases).
COICOP_BALANCE = "CP042"
#: Insurance at gross premiums: in the CPI only (the accounts value the service charge in CP12).
COICOP_INDEX_ONLY = ("CPI_CP125", 0.015, 0.010)
#: The CPI sub-index that balances the headline (its level makes the weighted sub-indexes give
#: the published CPI exactly, before rounding to two decimals).
COICOP_INDEX_BALANCE = "CPI_CP09"
COICOP_HOUSEHOLD_OUTPUT = "household_coicop.csv"
COICOP_CPI_OUTPUT = "cpi_coicop.csv"


def _energy_factor(t: np.ndarray) -> np.ndarray:
    """Relative price of household energy (t in years): the 2022 shock, then a partial return."""
    up = np.clip((t - 2021.5) / 1.0, 0.0, 1.0)
    down = np.clip((t - 2023.0) / 1.0, 0.0, 1.0)
    return np.exp(0.45 * up - 0.20 * down)


def build_coicop(accounts: pd.DataFrame, cpi: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Household consumption by purpose and the CPI's sub-indexes with their basket weights.

    Consistent with the published aggregates by construction: the purposes add up to
    P31_S14 at current and previous-year prices (imputed rentals take the rest), and the
    sub-indexes, weighted with the baskets, give the published CPI within its rounding
    (``CPI_CP09`` balances; sub-indexes have two decimals). A purpose's price is its
    sub-index, relative prices drift with ``trend``, household energy follows the 2022
    shock; spending shares move with relative prices to the power 1 - ``sigma``
    (substitution). The CPI's basket for weight-reference year y holds the accounts'
    spending of y - 2 times the survey's ``cpi_factor``, price-updated to y - 1.

    Returns
    -------
    (household, cpi)
        Long tables as ``accounts.csv`` and ``cpi.csv``: items ``P31_S14_<COICOP>``
        (current and previous_year, quarterly) and ``CPI_<COICOP>`` (index, monthly; weight,
        one row per weight-reference year).
    """
    head = cpi.assign(year=cpi["period"].str.slice(0, 4).astype(int), month=cpi["period"].str.slice(5, 7).astype(int))
    h = head["value"].to_numpy(dtype=float)
    t_m = head["year"].to_numpy() + (head["month"].to_numpy() - 0.5) / 12.0
    years = head["year"].to_numpy()
    p = COICOP_PURPOSES
    index_items = [*p["index_item"], COICOP_INDEX_ONLY[0]]
    trend = np.array([*p["trend"], COICOP_INDEX_ONLY[2]])
    rel = np.exp(np.outer(t_m - 2020.0, trend))  # relative prices, months x items
    rel[:, list(p["code"]).index("CP045")] *= _energy_factor(t_m)
    base_share = np.array([*p["share"], COICOP_INDEX_ONLY[1]])
    idx = h[:, None] * rel / (rel @ base_share)[:, None] * base_share.sum()  # before the balancing item is set
    # accounts: quarterly spending shares from relative (quarterly mean) prices
    hh = accounts[accounts["item"].eq("P31_S14")].pivot(index="period", columns="price_basis", values="value")
    q_year = hh.index.str.slice(0, 4).astype(int).to_numpy()
    n_q = len(hh)
    qm = idx.reshape(n_q, 3, -1).mean(axis=1)  # quarterly means of the (unbalanced) sub-indexes
    relq = qm[:, : len(p)] / qm[:, : len(p)].mean(axis=1, keepdims=True)
    share = p["share"].to_numpy() * relq ** (1.0 - p["sigma"].to_numpy())
    c_tot, k_tot = hh["current"].to_numpy(), hh["previous_year"].to_numpy()
    c = c_tot[:, None] * share
    annual_c = pd.DataFrame(c).groupby(q_year).sum()
    # CPI baskets: weight-reference year y = accounts spending of y - 2 (times the survey factor),
    # price-updated to the average of y - 1; the index-only item a fixed share
    ann_c = annual_c.to_numpy() * p["cpi_factor"].to_numpy()
    yrs = annual_c.index.to_numpy()
    m_avg = pd.DataFrame(idx).groupby(years).mean()
    weights = {}
    for i, y in enumerate(yrs):  # over the years of the demo (a few), building it once
        base = ann_c[max(i - 2, 0)] * (m_avg.loc[yrs[max(i - 1, 0)]].to_numpy()[: len(p)]
                                       / m_avg.loc[yrs[max(i - 2, 0)]].to_numpy()[: len(p)])
        w = np.append(base / base.sum() * (1 - COICOP_INDEX_ONLY[1]), COICOP_INDEX_ONLY[1])
        weights[y] = w
    # the balancing sub-index: headline relative = weighted sub-index relatives, year by year
    b = index_items.index(COICOP_INDEX_BALANCE)
    for y in yrs[1:]:
        cur, last = years == y, years == y - 1
        base_all = idx[last].mean(axis=0)
        w = weights[y]
        others = np.delete(np.arange(len(index_items)), b)
        r_other = (idx[cur][:, others] / base_all[others]) @ w[others]
        idx[cur, b] = base_all[b] * (h[cur] / h[last].mean() - r_other) / w[b]
    idx = np.round(idx, 2)
    qb = idx.reshape(n_q, 3, -1).mean(axis=1)[:, : len(p)]  # the balanced sub-indexes, quarterly
    # prices of the purposes: their sub-index; previous-year prices at y-1's average price
    annual_q = pd.DataFrame(c / qb).groupby(q_year).sum()
    avg = annual_c / annual_q  # value-weighted average price of each year
    first = q_year.min()
    prev = avg.reindex(q_year - 1).to_numpy().copy()
    prev[q_year == first] = avg.loc[first].to_numpy()  # the first year at its own average prices
    k = c * prev / qb
    cols = [f"P31_S14_{code}" for code in p["code"]]
    c, k = np.round(c, 1), np.round(k, 1)  # as published: the balance takes the rounding, so the sums are exact
    household = pd.DataFrame(c, index=hh.index, columns=cols).assign(
        **{f"P31_S14_{COICOP_BALANCE}": np.round(c_tot - c.sum(axis=1), 1)})
    household_k = pd.DataFrame(k, index=hh.index, columns=cols).assign(
        **{f"P31_S14_{COICOP_BALANCE}": np.round(k_tot - k.sum(axis=1), 1)})
    periods = head["period"].to_numpy()
    rows = [(ECONOMY, periods[m], item, "index", idx[m, j], CPI_ADJUSTMENT, CPI_UNIT)
            for j, item in enumerate(index_items) for m in range(len(periods))]
    rows += [(ECONOMY, str(y), item, "weight", round(1000.0 * weights[y][j], 1), CPI_ADJUSTMENT, "per mille")
             for j, item in enumerate(index_items) for y in yrs]
    cpi_out = pd.DataFrame(rows, columns=["economy", "period", "item", "price_basis", "value", "adjustment", "unit"])
    long = []
    for basis, frame in (("current", household), ("previous_year", household_k)):
        f = frame.round(1).stack().rename("value").reset_index()
        f.columns = ["period", "item", "value"]
        long.append(f.assign(economy=ECONOMY, price_basis=basis))
    hh_out = pd.concat(long, ignore_index=True)
    hh_out = hh_out.assign(adjustment="S", unit="tessel million")
    hh_out = hh_out.sort_values(["item", "price_basis", "period"], kind="mergesort", ignore_index=True)
    return hh_out[["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]], cpi_out


def main(folder: Path = FOLDER) -> None:
    """Write both releases and the flash estimate.

    ``accounts.csv`` and ``cpi.csv`` in ``folder`` and in ``folder/earlier_release``;
    ``accounts.csv`` and ``annual/benchmarks.csv`` in ``folder/first_estimate``.

    Parameters
    ----------
    folder
        Target folder, by default the folder of this file (the committed demo data).
    """
    folder = Path(folder)
    (folder / EARLIER_FOLDER).mkdir(parents=True, exist_ok=True)
    (folder / FLASH_FOLDER / FLASH_BENCHMARKS).parent.mkdir(parents=True, exist_ok=True)
    accounts = build_accounts()
    tables = {
        folder / OUTPUT.name: accounts,
        folder / CPI_OUTPUT: build_cpi(LAST_QUARTER),
        folder / EARLIER_FOLDER / EARLIER_OUTPUT.name: build_earlier_release(),
        folder / EARLIER_FOLDER / CPI_OUTPUT: build_cpi(EARLIER_LAST_QUARTER),
        folder / FLASH_FOLDER / OUTPUT.name: build_first_estimate(accounts),
        folder / FLASH_FOLDER / FLASH_BENCHMARKS: build_benchmarks(accounts),
    }
    household, cpi_coicop = build_coicop(accounts, tables[folder / CPI_OUTPUT])
    tables[folder / COICOP_HOUSEHOLD_OUTPUT] = household
    for path, table in tables.items():
        path.write_text(to_csv_text(table), encoding="utf-8", newline="")
    # sub-indexes with two decimals (the aggregate meets the one-decimal headline within its rounding)
    (folder / COICOP_CPI_OUTPUT).write_text(cpi_coicop.to_csv(index=False, float_format="%.2f", lineterminator="\n"),
                                            encoding="utf-8", newline="")


if __name__ == "__main__":
    main()
