"""The two releases, the flash estimate of 2025 and its benchmarks, written as CSV text."""

from __future__ import annotations

import numpy as np
import pandas as pd

from quillon.consumer_prices import *
from quillon.expenditure import *
from quillon.income import *
from quillon.settings import *


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


__all__ = [n for n in dir() if not n.startswith("__") and n != "annotations"]
