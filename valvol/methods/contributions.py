"""Contributions of components to the volume growth of their aggregates, and Fisher indexes.

`volume_contributions` works on a levels panel for every declared aggregate and each of its
direct signed components, over two horizons: the previous period and the same period a
year earlier (annual rows: the previous year, given under both horizon labels). Three
conventions: ``annual_overlap_exact`` (exactly additive on annual-overlap data), ``prior_year_weights``
(the UK agency's convention, non-additive) and ``fisher`` (chain Fisher data, additive).

Contributions carry the component's sign: imports count negative when import volumes rise.
Sign-changing items (inventories, valuables, discrepancy) get level-difference
contributions and no growth rate of their own.

The index-number helpers on small wide frames (Laspeyres, Paasche and Fisher indexes, the
Fisher contributions and their weights) are in `valvol.methods.index_numbers`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from valvol.errors import ConfigError, InputError
from valvol.frames import period_label
from valvol.hierarchy import Hierarchy
from valvol.methods.index_numbers import fisher_decomposition
from valvol.methods.panel import (
    Lookup,
    PanelCodes,
    category_strings,
    item_flags,
    levels_wide,
    nonpositive_problems,
    top_aggregates,
)

CONVENTIONS = ("annual_overlap_exact", "prior_year_weights", "fisher")
OUTPUT_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "aggregate", "item", "horizon",
                  "contribution_pp", "aggregate_growth_pct", "residual_pp"]
HORIZONS = ("prev_period", "prev_year")


def volume_contributions(levels: pd.DataFrame, *, hierarchy: Hierarchy, convention: str = "annual_overlap_exact",
                         annual_rate: bool = False) -> pd.DataFrame:
    """Contributions of each component to the volume growth of its aggregate.

    Parameters
    ----------
    levels
        Levels panel with ``current``, ``previous_year`` and ``chain_linked`` rows (Q and A;
        ``prior_year_weights`` and ``fisher`` need no previous-year values).
    hierarchy
        Signed aggregates; one row per aggregate, direct component, period and horizon.
    convention
        ``annual_overlap_exact`` (default), ``prior_year_weights`` or ``fisher``.
    annual_rate
        Quarterly levels at annual rate (the annual value is the mean of the quarters).

    Returns
    -------
    DataFrame
        Columns economy, period, frequency, year, quarter, aggregate, item, horizon
        (``prev_period`` / ``prev_year``), contribution_pp (component sign applied),
        aggregate_growth_pct (growth of the aggregate's chain-linked volume over the
        horizon) and residual_pp (growth minus the sum of the contributions of that
        aggregate, period and horizon, repeated on each row). Rows whose inputs are
        incomplete are left out. Sign-changing aggregates (B11, ...) have no growth rate
        and get no rows of their own.

    Raises
    ------
    ConfigError
        Unknown convention.
    InputError
        Malformed panel, or a zero or negative value of a positive series.

    Notes
    -----
    s_i the sign, k at previous-year prices, K and C annual values, a = 4 (1 with
    ``annual_rate``: the quarterly average of the year is then the annual value itself).

    ``annual_overlap_exact`` (docs/methods.md §3.1-3.3, exactly additive on annual-overlap data):

    * annual: ctr_i = 100 s_i (K^i_y - C^i_{y-1}) / C^Z_{y-1};
    * quarter on quarter within a year: ctr_i = 100 s_i (k^i(s) - k^i(s-1)) / k^Z(s-1);
    * across the year boundary (Q1 on Q4, and every year-on-year quarter), through the
      annual average of y-1: ctr_i = 100 s_i [K^i_{y-1}/a - k^i(t_o)
      + (k^i(t_n) - C^i_{y-1}/a) K^Z_{y-1}/C^Z_{y-1}] / k^Z(t_o).

    In the first year of a series (no previous-year values) the current values stand in
    for k and K, as in `valvol.methods.chainlink.chain_link`.

    ``prior_year_weights`` (docs/methods.md §3.4), w_{i} = C^i_{y-1} / CLV^i_{y-1}, y the year of
    the new period: ctr_i = 100 s_i (CLV^i_t - CLV^i_{t_o}) w_i / (CLV^Z_{t_o} w_Z); annual
    rows have CLV^Z_{y-1} w_Z = C^Z_{y-1}. Not additive across the year boundary and year
    on year: the residual is reported.

    ``fisher`` (docs/methods.md §3.5), current-price form with x = s_i C^i and the price relative
    r_i = p^i_t / p^i_{t_o}, p = C / CLV: ctr_i = 100 [(V_t/V_{t_o})(x_{i,t}/r_i - x_{i,t_o})
    + Q^F (x_{i,t} - x_{i,t_o} r_i)] / [V_t + Q^F sum_j x_{j,t_o} r_j], V = sum x; the
    contributions add up to the Fisher index of the comparison (for year-on-year
    quarters the direct Fisher index between t_o and t, so chained data leave a residual).

    Sign-changing components (docs/methods.md §3.6): the formulas above are level differences
    and apply unchanged under ``annual_overlap_exact``; under ``prior_year_weights`` the weight and
    under ``fisher`` the price relative are those of the item's top aggregate (the
    aggregate whose deflator values it in `chain_link`).

    References
    ----------
    IMF, *Quarterly National Accounts Manual*, 2017 Edition, ch. 8, section G; Aspden
    (2006), *Country practices in deriving contributions to growth*, OECD; ONS, Quarterly
    National Accounts (contributions to GDP growth); BEA, *A Guide to the NIPAs*, App. 3;
    Statistics Canada, 13-017-X (2008), Table 2.12.

    Examples
    --------
    >>> from valvol.frames import LEVEL_COLUMNS
    >>> h = Hierarchy.from_mapping({"T": ["X", "-M"]})
    >>> rows = [("E", i, b, "A", y, 0, str(y), v) for i, b, y, v in [
    ...     ("T", "current", 2020, 80.0), ("X", "current", 2020, 100.0), ("M", "current", 2020, 20.0),
    ...     ("T", "previous_year", 2021, 84.0), ("X", "previous_year", 2021, 110.0),
    ...     ("M", "previous_year", 2021, 26.0), ("T", "chain_linked", 2020, 80.0),
    ...     ("T", "chain_linked", 2021, 84.0)]]
    >>> out = volume_contributions(pd.DataFrame(rows, columns=LEVEL_COLUMNS), hierarchy=h)
    >>> sel = out.loc[out["horizon"] == "prev_year", ["item", "contribution_pp", "aggregate_growth_pct"]]
    >>> sel.round(6).values.tolist()
    [['M', -7.5, 5.0], ['X', 12.5, 5.0]]
    """
    if convention not in CONVENTIONS:
        raise ConfigError(f"unknown contributions convention {convention!r}; "
                          f"expected one of {', '.join(CONVENTIONS)}")
    w = levels_wide(levels, {"current": "c", "previous_year": "k", "chain_linked": "v"})
    problems = nonpositive_problems(w, {"c": "current", "k": "previous_year", "v": "chain_linked"}, hierarchy)
    if problems:
        raise InputError(problems)
    edges = pd.DataFrame(hierarchy.edges(), columns=["aggregate", "item", "sign"])
    edges = edges[~edges["aggregate"].map(hierarchy.is_sign_changing).astype(bool)]
    if w.empty or edges.empty:
        return pd.DataFrame({c: pd.Series(dtype="float64" if c.endswith(("pp", "pct")) else "str")
                             for c in OUTPUT_COLUMNS})
    codes = PanelCodes(w["economy"], [*pd.unique(w["item"]), *hierarchy.items], w["year"])
    w["sid"] = codes.sid(w["economy"], w["item"])
    w["sc"] = item_flags(w["item"], hierarchy.is_sign_changing)
    if convention == "annual_overlap_exact":  # first year of a series: current values stand in for PYP
        y0 = w["year"].where(w["c"].notna()).groupby(w["sid"]).transform("min")
        w["k"] = w["k"].where(w["k"].notna() | (w["year"] != y0), w["c"])
    avail = w.loc[~w["sc"] & w["c"].notna() & w["v"].notna(), ["economy", "item"]]
    tops = top_aggregates(hierarchy, w[w["sc"]], avail)
    lu = Lookup(codes, w, ["c", "k", "v"])

    # one row per (component row of the panel, aggregate it belongs to), integer codes only
    n_items = len(codes.items)
    top_of = np.full(len(codes.economies) * n_items, -1, dtype="int64")
    top_of[codes.sid(tops["economy"], tops["item"])] = codes.sid(tops["economy"], tops["top"])
    e_idx = pd.Series(codes.items.get_indexer(edges["item"]))
    edge = pd.DataFrame({"i": e_idx, "z": codes.items.get_indexer(edges["aggregate"]),
                         "sign": edges["sign"].to_numpy(dtype="float64")})
    sid_all = w["sid"].to_numpy()
    rows = pd.DataFrame({"sid": sid_all, "i": sid_all % n_items, "year": w["year"].to_numpy(),
                         "quarter": w["quarter"].to_numpy()})
    rows = _with_horizons(rows[rows["i"].isin(edge["i"])].merge(edge, on="i"))
    sid = rows["sid"].to_numpy()
    zsid = (sid // n_items) * n_items + rows["z"].to_numpy()
    tsid = np.where(top_of[sid] >= 0, top_of[sid], sid)
    sign = rows["sign"].to_numpy()
    # group: aggregate series, period, horizon
    group = np.unique(codes.key(zsid, rows["year"].to_numpy(), rows["quarter"].to_numpy()) * 2
                      + rows["h"].to_numpy(), return_inverse=True)[1]
    with np.errstate(divide="ignore", invalid="ignore"):
        ctr, growth = _compute(convention, rows, lu, sid, zsid, tsid, sign, annual_rate, group)
    keep = np.isfinite(ctr) & np.isfinite(growth)
    rows, zsid, ctr, growth, group = rows[keep], zsid[keep], ctr[keep], growth[keep], group[keep]
    residual = growth - np.bincount(group, weights=ctr)[group]
    # annual rows once more under the previous-period label
    dup = np.flatnonzero(rows["quarter"].to_numpy() == 0)
    take = np.concatenate([np.arange(len(rows)), dup])
    h = np.concatenate([rows["h"].to_numpy(), np.zeros(len(dup), dtype="int64")])
    sid, zsid, year, quarter = (np.asarray(a)[take] for a in (rows["sid"], zsid, rows["year"], rows["quarter"]))
    order = np.lexsort((sid % n_items, h, quarter, year, quarter > 0, zsid % n_items, sid // n_items))
    take, h, sid, zsid, year, quarter = (a[order] for a in (take, h, sid, zsid, year, quarter))
    out = pd.DataFrame({
        "economy": category_strings(codes.economies, sid // n_items),
        "period": period_label(year, quarter),
        "frequency": category_strings(["A", "Q"], (quarter > 0).astype("int64")),
        "year": year, "quarter": quarter,
        "aggregate": category_strings(codes.items, zsid % n_items),
        "item": category_strings(codes.items, sid % n_items),
        "horizon": category_strings(HORIZONS, h),
        "contribution_pp": ctr[take], "aggregate_growth_pct": growth[take], "residual_pp": residual[take]})
    return out[OUTPUT_COLUMNS]


def _compute(convention: str, rows: pd.DataFrame, lu: Lookup, sid: np.ndarray, zsid: np.ndarray,
             tsid: np.ndarray, sign: np.ndarray, annual_rate: bool,
             group: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Contributions and aggregate growth of every row under one convention."""
    year, qn = rows["year"].to_numpy(), rows["quarter"].to_numpy()
    yo, qo = rows["year_o"].to_numpy(), rows["quarter_o"].to_numpy()
    vz_n, vz_o = lu.get("v", zsid, year, qn), lu.get("v", zsid, yo, qo)
    growth = 100.0 * (vz_n / vz_o - 1.0)

    if convention == "annual_overlap_exact":
        a = 1.0 if annual_rate else 4.0
        ctr = _annual_overlap_exact(lu, sid, zsid, sign, year, qn, yo, qo, a)
        # no chain-linked aggregate: the growth its annual-overlap chain would have (same formula)
        own = _annual_overlap_exact(lu, zsid, zsid, np.ones_like(sign), year, qn, yo, qo, a)
        growth = np.where(np.isfinite(growth), growth, own)
    elif convention == "prior_year_weights":
        w_i = lu.get("c", tsid, year - 1, 0) / lu.get("v", tsid, year - 1, 0)
        w_z = lu.get("c", zsid, year - 1, 0) / lu.get("v", zsid, year - 1, 0)
        ctr = 100.0 * sign * (lu.get("v", sid, year, qn) - lu.get("v", sid, yo, qo)) * w_i / (vz_o * w_z)
    else:
        ctr = _fisher_long(rows, lu, sid, tsid, sign, group)
    return ctr, growth


def _annual_overlap_exact(lu: Lookup, sid: np.ndarray, zsid: np.ndarray, sign: np.ndarray, year: np.ndarray,
              qn: np.ndarray, yo: np.ndarray, qo: np.ndarray, a: float) -> np.ndarray:
    """docs/methods.md §3.1-3.3: annual, within-year and two-step (year-boundary) contributions."""
    k_n, k_o = lu.get("k", sid, year, qn), lu.get("k", sid, yo, qo)
    kz_o = lu.get("k", zsid, yo, qo)
    big_k, big_c = lu.get("k", sid, year - 1, 0), lu.get("c", sid, year - 1, 0)
    big_kz, big_cz = lu.get("k", zsid, year - 1, 0), lu.get("c", zsid, year - 1, 0)
    within = 100.0 * sign * (k_n - k_o) / kz_o
    cross = 100.0 * sign * (big_k / a - k_o + (k_n - big_c / a) * big_kz / big_cz) / kz_o
    annual = 100.0 * sign * (k_n - big_c) / big_cz
    return np.where(qn == 0, annual, np.where(yo == year, within, cross))


def _with_horizons(rows: pd.DataFrame) -> pd.DataFrame:
    """Repeat quarterly rows per horizon (h: 0 previous period, 1 a year earlier); add the
    comparison period (year_o, quarter_o). Annual rows: previous year (h = 1)."""
    q = rows[rows["quarter"] > 0]
    pp = q.assign(h=0, year_o=np.where(q["quarter"] > 1, q["year"], q["year"] - 1),
                  quarter_o=np.where(q["quarter"] > 1, q["quarter"] - 1, 4))
    py = q.assign(h=1, year_o=q["year"] - 1, quarter_o=q["quarter"])
    a = rows[rows["quarter"] == 0]
    ay = a.assign(h=1, year_o=a["year"] - 1, quarter_o=0)
    return pd.concat([pp, py, ay], ignore_index=True)


def _fisher_long(rows: pd.DataFrame, lu: Lookup, sid: np.ndarray, tsid: np.ndarray, sign: np.ndarray,
                 group: np.ndarray) -> np.ndarray:
    """Fisher contributions in current-price form, summed by aggregate, period and horizon.

    Each component enters as its relative price r_i = p^i_t / p^i_{t_o} (old price 1) and its
    quantity x_i / price (old x_{i,t_o}, new x_{i,t} / r_i), x = s_i C^i: the Fisher
    decomposition of `valvol.methods.index_numbers.fisher_decomposition` on these is the
    current-price form of the docstring of `volume_contributions`.
    """
    year, qn = rows["year"].to_numpy(), rows["quarter"].to_numpy()
    yo, qo = rows["year_o"].to_numpy(), rows["quarter_o"].to_numpy()
    x1, x0 = sign * lu.get("c", sid, year, qn), sign * lu.get("c", sid, yo, qo)
    rel = (lu.get("c", tsid, year, qn) / lu.get("v", tsid, year, qn)) / (
        lu.get("c", tsid, yo, qo) / lu.get("v", tsid, yo, qo))
    ok = np.isfinite(x1) & np.isfinite(x0) & np.isfinite(rel)
    z = np.zeros_like(x0)
    ctr, _, _ = fisher_decomposition(np.where(ok, 1.0, z), np.where(ok, rel, z), np.where(ok, x0, z),
                                     np.where(ok, x1 / np.where(ok, rel, 1.0), z), group)
    return np.where(ok, ctr, np.nan)
