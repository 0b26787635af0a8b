"""The expenditure side: simulated products, unit values, previous-year prices, chain-linked volumes."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from quillon.settings import *


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


__all__ = [n for n in dir() if not n.startswith("__") and n != "annotations"]
