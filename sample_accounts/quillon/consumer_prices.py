"""The monthly consumer price index, built from the simulated household prices."""

from __future__ import annotations

import numpy as np
import pandas as pd

from quillon.expenditure import *
from quillon.settings import *


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


__all__ = [n for n in dir() if not n.startswith("__") and n != "annotations"]
