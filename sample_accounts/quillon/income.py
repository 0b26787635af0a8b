"""The income side at current prices: compensation of employees, operating surplus, net taxes."""

from __future__ import annotations

import numpy as np
import pandas as pd

from quillon.consumer_prices import *
from quillon.expenditure import *
from quillon.settings import *


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


__all__ = [n for n in dir() if not n.startswith("__") and n != "annotations"]
