"""Household consumption by COICOP purpose and the CPI's sub-indexes with their basket weights."""

from __future__ import annotations

import numpy as np
import pandas as pd

from quillon.expenditure import *
from quillon.releases import *
from quillon.settings import *

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


__all__ = [n for n in dir() if not n.startswith("__") and n != "annotations"]
