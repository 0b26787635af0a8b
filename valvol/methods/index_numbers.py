"""Index numbers: Laspeyres, Paasche and Fisher relatives and the additive Fisher decomposition.

`fisher_decomposition` is the one implementation of the Fisher contributions: vectorised
over any number of groups (an aggregate in one period comparison each), it serves the
volume contributions (`valvol.methods.contributions`), the price contributions
(`valvol.methods.deflator_contributions`) and the small wide-frame helpers below (rows:
periods in order, columns: items), which reproduce Statistics Canada's worked example.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd


def fisher_decomposition(w0: np.ndarray, w1: np.ndarray, v0: np.ndarray, v1: np.ndarray,
                         groups: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Additive contributions of the changes in ``v`` to a Fisher index, weighted by ``w``.

    Parameters
    ----------
    w0, w1, v0, v1
        One element per item and group: the weights (prices for a volume index, quantities
        for a price index) and the changing values, old (0) and new (1). Items subtracted
        from their aggregate (imports) enter with negative quantities.
    groups
        Group number of each element (one aggregate and comparison each), 0..G-1.

    Returns
    -------
    (ctr, W, F)
        ctr: contribution of each element in percentage points; W: the Fisher index of the
        weights' side (the price relative P^F for volume contributions), F: the Fisher index
        of ``v`` (Q^F), each repeated on the group's elements.

    Notes
    -----
    With V_0 = sum w0 v0 and V_1 = sum w1 v1 (the values), the Fisher index of ``w`` is
    W = sqrt[(sum w1 v0 / V_0)(V_1 / sum w0 v1)] and F = (V_1 / V_0) / W. Then
    ctr_i = 100 (w0_i + w1_i / W)(v1_i - v0_i) / sum_j (w0_j + w1_j / W) v0_j, and
    sum_i ctr_i = 100 (F - 1) exactly. Volume side: w = p, v = q; price side: w = q, v = p.

    References
    ----------
    BEA, *A Guide to the NIPAs*, appendix 3 (contributions to percent change in chain Fisher
    indexes); Statistics Canada, *User Guide: Canadian System of Macroeconomic Accounts*
    (13-017-X, 2008), Table 2.12; Reinsdorf, Diewert & Ehemann (2002), "Additive
    decompositions for Fisher, Törnqvist and geometric mean indexes", Journal of Economic
    and Social Measurement 28.

    Examples
    --------
    >>> ctr, w, f = fisher_decomposition(np.ones(2), np.ones(2), np.array([10.0, 10.0]),
    ...                                  np.array([12.0, 10.0]), np.zeros(2, dtype="int64"))
    >>> ctr.round(6).tolist(), float(f[0])
    ([10.0, 0.0], 1.1)
    """
    groups = np.asarray(groups, dtype="int64")
    n = int(groups.max()) + 1 if len(groups) else 0

    def total(x: np.ndarray) -> np.ndarray:
        return np.bincount(groups, weights=x, minlength=n)[groups]

    with np.errstate(divide="ignore", invalid="ignore"):  # an empty group gives NaN
        value_0, value_1 = total(w0 * v0), total(w1 * v1)
        w_fisher = np.sqrt((total(w1 * v0) / value_0) * (value_1 / total(w0 * v1)))
        v_fisher = (value_1 / value_0) / w_fisher
        weight = w0 + w1 / w_fisher
        return 100.0 * weight * (v1 - v0) / total(weight * v0), w_fisher, v_fisher


def fisher_price_contributions_arrays(
    p0: np.ndarray, p1: np.ndarray, q0: np.ndarray, q1: np.ndarray
) -> tuple[np.ndarray, float, float]:
    """Price-side contributions to the change of a Fisher price index, one set of items.

    Returns (contributions in pp, Fisher price relative P^F, Fisher quantity relative Q^F):
    `fisher_decomposition` with w = q and v = p.
    """
    arrays = [np.asarray(a, dtype="float64") for a in (q0, q1, p0, p1)]
    ctr, qf, pf = fisher_decomposition(*arrays, np.zeros(len(arrays[0]), dtype="int64"))
    return ctr, float(pf[0]), float(qf[0])


def _wide_decomposition(w: pd.DataFrame, v: pd.DataFrame) -> pd.DataFrame:
    """`fisher_decomposition` of each period on the previous one (wide frames, first row NaN)."""
    w0, v0 = w.shift().to_numpy(), v.shift().to_numpy()
    w1, v1 = w.to_numpy(), v.to_numpy()
    ok = np.isfinite(w0) & np.isfinite(w1) & np.isfinite(v0) & np.isfinite(v1)
    groups = np.repeat(np.arange(len(w)), w.shape[1])
    ctr, _, _ = fisher_decomposition(*(np.where(ok, a, 0.0).ravel() for a in (w0, w1, v0, v1)), groups)
    ctr = np.where(ok.ravel(), ctr, np.nan).reshape(w.shape)
    return pd.DataFrame(ctr, index=w.index, columns=w.columns)


def _prices_quantities(values: pd.DataFrame, prices: pd.DataFrame | None, volumes: pd.DataFrame | None,
                       signs: Mapping[str, int] | None) -> tuple[pd.DataFrame, pd.DataFrame]:
    if (prices is None) == (volumes is None):
        raise ValueError("give exactly one of prices and volumes")
    x = values.astype("float64")
    if prices is not None:
        p = prices.reindex_like(x).astype("float64")
        q = x / p
    else:
        q = volumes.reindex_like(x).astype("float64")
        p = x / q
    if signs:
        q = q * pd.Series({c: float(signs.get(c, 1)) for c in x.columns})
    return p, q


def index_relatives(values: pd.DataFrame, prices: pd.DataFrame | None = None, *,
                    volumes: pd.DataFrame | None = None, signs: Mapping[str, int] | None = None) -> pd.DataFrame:
    """Laspeyres, Paasche and Fisher volume and price relatives on the previous period.

    Parameters
    ----------
    values
        Current-price values, rows periods in order, columns items.
    prices, volumes
        Exactly one: price indexes (any base) or volumes of the same items.
    signs
        Item -> -1 for items subtracted (imports: negative quantities).

    Returns
    -------
    DataFrame
        Columns laspeyres_volume, paasche_volume, fisher_volume, laspeyres_price,
        paasche_price, fisher_price (ratios; NaN in the first period).

    Notes
    -----
    Q^L = sum p_{t-1} q_t / sum p_{t-1} q_{t-1}, Q^P = sum p_t q_t / sum p_t q_{t-1},
    Q^F = sqrt(Q^L Q^P); P^L, P^P, P^F likewise; P^F Q^F = V_t / V_{t-1} exactly.

    References
    ----------
    BEA, *Survey of Current Business*, May 1996, box "Basic formulas"; ESA 95 ¶10.62;
    Statistics Canada, 13-017-X (2008), Table 2.12.
    """
    p, q = _prices_quantities(values, prices, volumes, signs)
    p0, q0 = p.shift(), q.shift()
    s00, s01 = (p0 * q0).sum(axis=1, min_count=1), (p0 * q).sum(axis=1, min_count=1)
    s10, s11 = (p * q0).sum(axis=1, min_count=1), (p * q).sum(axis=1, min_count=1)
    out = pd.DataFrame({"laspeyres_volume": s01 / s00, "paasche_volume": s11 / s10,
                        "laspeyres_price": s10 / s00, "paasche_price": s11 / s01}, index=values.index)
    out.insert(2, "fisher_volume", np.sqrt(out["laspeyres_volume"] * out["paasche_volume"]))
    out["fisher_price"] = np.sqrt(out["laspeyres_price"] * out["paasche_price"])
    return out


def laspeyres_index(values: pd.DataFrame, prices: pd.DataFrame | None = None, *, volumes=None, signs=None,
                    kind: str = "volume") -> pd.Series:
    """Unlinked Laspeyres index, previous period = 100 (``kind`` volume or price)."""
    return 100.0 * index_relatives(values, prices, volumes=volumes, signs=signs)[f"laspeyres_{kind}"]


def paasche_index(values: pd.DataFrame, prices: pd.DataFrame | None = None, *, volumes=None, signs=None,
                  kind: str = "volume") -> pd.Series:
    """Unlinked Paasche index, previous period = 100 (``kind`` volume or price)."""
    return 100.0 * index_relatives(values, prices, volumes=volumes, signs=signs)[f"paasche_{kind}"]


def fisher_index(values: pd.DataFrame, prices: pd.DataFrame | None = None, *, volumes=None, signs=None,
                 kind: str = "volume") -> pd.Series:
    """Unlinked Fisher index, previous period = 100 (``kind`` volume or price)."""
    return 100.0 * index_relatives(values, prices, volumes=volumes, signs=signs)[f"fisher_{kind}"]


def chain_index(unlinked: pd.Series, base: float = 100.0) -> pd.Series:
    """Link an index on the previous period (= 100) into a chain, first period = ``base``."""
    return base * (unlinked.fillna(100.0) / 100.0).cumprod()


def fisher_contributions(values: pd.DataFrame, prices: pd.DataFrame | None = None, *,
                         volumes: pd.DataFrame | None = None,
                         signs: Mapping[str, int] | None = None) -> pd.DataFrame:
    """Contributions (pp) of each item to the Fisher volume growth on the previous period.

    Notes
    -----
    ctr_i = 100 (p_{i,t-1} + p_{i,t}/P^F)(q_{i,t} - q_{i,t-1}) / sum_j (p_{j,t-1} + p_{j,t}/P^F) q_{j,t-1},
    summing to 100 (Q^F - 1) (docs/methods.md §3.5).

    References
    ----------
    Statistics Canada, 13-017-X (2008), Table 2.12; BEA, *A Guide to the NIPAs*, App. 3.

    Examples
    --------
    >>> x = pd.DataFrame({"A": [10.0, 12.0], "B": [10.0, 10.0]})
    >>> fisher_contributions(x, pd.DataFrame({"A": [1.0, 1.0], "B": [1.0, 1.0]})).iloc[1].tolist()
    [10.0, 0.0]
    """
    p, q = _prices_quantities(values, prices, volumes, signs)
    return _wide_decomposition(p, q)


def fisher_price_contributions(values: pd.DataFrame, prices: pd.DataFrame | None = None, *,
                               volumes: pd.DataFrame | None = None,
                               signs: Mapping[str, int] | None = None) -> pd.DataFrame:
    """Contributions (pp) of each item to the Fisher price change on the previous period.

    Notes
    -----
    ctr^P_i = 100 (q_{i,t-1} + q_{i,t}/Q^F)(p_{i,t} - p_{i,t-1}) / sum_j (q_{j,t-1} + q_{j,t}/Q^F) p_{j,t-1},
    summing to 100 (P^F - 1) (docs/methods.md §3.5, price side).
    """
    p, q = _prices_quantities(values, prices, volumes, signs)
    return _wide_decomposition(q, p)


def fisher_contribution_weights(values: pd.DataFrame, prices: pd.DataFrame | None = None, *,
                                volumes: pd.DataFrame | None = None,
                                signs: Mapping[str, int] | None = None) -> pd.DataFrame:
    """Fisher contributions in weight form: ctr_i = W1_i W2_i g_i.

    Returns
    -------
    DataFrame
        Long: period, item, contribution_pp, own_volume_growth_pct (g_i),
        weight_w1 (x_{i,t-1}/V_{t-1}) and weight_w2 ((1 + r_i/P^F) / (1 + P^L/P^F)),
        r_i = p_{i,t}/p_{i,t-1}; the first period is left out.

    References
    ----------
    Statistics Canada, 13-017-X (2008), Table 2.12 (weights W1 and W2).
    """
    p, q = _prices_quantities(values, prices, volumes, signs)
    rel = index_relatives(values, prices, volumes=volumes, signs=signs)
    x0 = (p * q).shift()
    w1 = x0.div(x0.sum(axis=1, min_count=1), axis=0)
    w2 = (1.0 + (p / p.shift()).div(rel["fisher_price"], axis=0)).div(
        1.0 + rel["laspeyres_price"] / rel["fisher_price"], axis=0)
    g = 100.0 * (q / q.shift() - 1.0)
    parts = {"contribution_pp": w1 * w2 * g, "own_volume_growth_pct": g, "weight_w1": w1, "weight_w2": w2}
    long = pd.concat({k: v.stack(future_stack=True) for k, v in parts.items()}, axis=1)
    long.index.names = ["period", "item"]
    return long.dropna(how="all").reset_index()
