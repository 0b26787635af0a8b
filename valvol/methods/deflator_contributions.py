"""Contributions of components to the growth of an aggregate's implicit deflator.

Two families, both with the layout of the volume contributions (one row per aggregate,
direct component, period and horizon; percentage points; imports negative):

* `deflator_contributions`: expenditure side, from current and previous-year-price data
  (``annual_overlap_exact``) or from chain Fisher data (``fisher``);
* `income_side_contributions`: unit labour costs, unit profits, unit net taxes and the
  unit discrepancy, whose sum is the GDP deflator.

`first_year_values` and `step_values` are the two-link ends shared with `valvol.methods.price_gaps`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from valvol.errors import ConfigError, InputError, Problem
from valvol.frames import period_label
from valvol.hierarchy import Hierarchy
from valvol.methods.index_numbers import fisher_decomposition
from valvol.methods.panel import pivot_bases, raise_nonpositive, with_horizons

CONVENTIONS: tuple[str, ...] = ("annual_overlap_exact", "fisher")
CONTRIBUTION_COLUMNS = [
    "economy", "period", "frequency", "year", "quarter", "aggregate", "item", "horizon",
    "contribution_pp", "aggregate_growth_pct", "residual_pp",
]
#: Income items (current prices) and the unit-cost labels they give, in output order.
INCOME_ITEMS: dict[str, str] = {"D1": "ULC", "B2A3G": "UP", "D2X3": "UT"}
#: Label of the unit statistical discrepancy, (B1GQ - D1 - B2A3G - D2X3) / real GDP.
UNIT_DISCREPANCY = "UNIT_DISCREPANCY"

_SERIES = ["economy", "item", "frequency", "year", "quarter"]
_ROW = ["economy", "frequency", "year", "quarter", "horizon"]
_STEPS = ["ca1", "ka1", "cb1", "kb1", "ca2", "ka2", "cb2", "kb2"]


def first_year_values(series: pd.DataFrame) -> pd.DataFrame:
    """Values of each series' first year at that year's own average prices, in place of k.

    Parameters
    ----------
    series
        Columns economy, item, frequency, year, quarter, c (current prices), k (prices of
        the previous year) and optionally v (chain-linked volume).

    Returns
    -------
    DataFrame
        ``series`` with k filled in the first year of each series when that year has no
        previous-year value at all (quarterly or annual), and a boolean column ``unpriced``.

    Notes
    -----
    The first year y0 of a series (the first year with a current value) has no prices of
    the year before; its values are taken at its own average prices instead
    (docs/derivations/first_link.md, section 2): the year, K_{y0} = C_{y0}; a quarter,
    k(s, y0) = CLV(s, y0) C_{y0} / CLV_{y0}, which inverts the first-year rule of
    `valvol.methods.chainlink.chain_link`, CLV(s, y0) = v(s, y0) CLV_{y0} / C_{y0}. The
    quarter's price on that base is c/k = D(s, y0) / D_{y0}, its implicit deflator over the
    year's. A quarter without a positive chain-linked volume of its own and of its year
    takes k = c, as `chain_link` values such a quarter, and is flagged ``unpriced``: the
    data do not tell its price relative to the year's average. The annual price level is
    1 by construction and is never flagged.

    References
    ----------
    IMF, *Quarterly National Accounts Manual*, 2017 edition, ch. 8 (previous-year prices,
    annual overlap); ABS 5216.0 (2020-21), ch. 6 Annex, eqs (4)-(5).
    """
    s = series.reset_index(drop=True)
    if "v" not in s.columns:
        s = s.assign(v=np.nan)
    by = [s["economy"], s["item"]]
    y0 = s["year"].where(s["c"].notna()).groupby(by).transform("min")
    has_k = s["k"].notna().groupby([*by, s["year"]]).transform("any")
    first = (s["year"] == y0) & ~has_k
    annual = s.loc[s["frequency"].eq("A"), ["economy", "item", "year", "c", "v"]]
    year_values = s[["economy", "item", "year"]].merge(
        annual.rename(columns={"c": "c_y", "v": "v_y"}), on=["economy", "item", "year"], how="left")
    quarterly = s["frequency"].eq("Q").to_numpy()
    v, v_y, c_y = s["v"].to_numpy(), year_values["v_y"].to_numpy(), year_values["c_y"].to_numpy()
    with np.errstate(invalid="ignore"):
        priced = (v > 0) & (v_y > 0)
    at_own = np.where(quarterly & priced, v * (c_y / np.where(priced, v_y, 1.0)), s["c"].to_numpy())  # no overflow
    fill = first.to_numpy()
    s["k"] = np.where(fill, at_own, s["k"].to_numpy())
    s["unpriced"] = fill & quarterly & ~priced
    return s


def step_values(series: pd.DataFrame) -> pd.DataFrame:
    """Values at the two ends of the two links that make up each period's change.

    Parameters
    ----------
    series
        Columns economy, item, frequency, year, quarter, c (current prices), k (prices of
        the previous year; in a series' first year, as `first_year_values` fills them) and
        optionally ``unpriced`` (from `first_year_values`).

    Returns
    -------
    DataFrame
        One row per series, period and horizon with the columns of `with_horizons` and
        ``ca1, ka1, cb1, kb1`` (step 1, old end a and new end b), ``ca2 ... kb2`` (step 2),
        ``ok`` (every value needed is present, and the old period has a current value) and
        ``unpriced`` (an end of the link is a first-year quarter whose price relative the
        data do not give).

    Notes
    -----
    Every change is written as two links, each between two ends valued in *one* set of
    prices, with P = c/k the price level of an end on that base:

    * annual (y on y-1): step 1 the identity; step 2 from (K_y, K_y) to (C_y, K_y);
    * quarter on quarter within a year: identity; then (c, k)(s-1) to (c, k)(s);
    * across the year boundary and year on year (old period t_o in y-1): step 1 from
      (c, k)(t_o), prices of y-2, to (C_{y-1}, K_{y-1}); step 2 from (k, k)(t_n) to
      (c, k)(t_n), prices of y-1.

    The product of the two ratios P_b/P_a is D(t_n)/D(t_o) for annual-overlap data
    (docs/derivations/first_link.md, section 1). When y-1 is the first year of the
    series, step 1 runs at the average prices of y-1 itself: from (c(t_o), k0(t_o)),
    k0 = CLV C_{y-1}/CLV_{y-1}, to (C_{y-1}, C_{y-1}); within the first year both ends are
    (c, k0) (same file, sections 2 to 4). The annual link needs year y only.
    """
    cols = _SERIES + ["c", "k"] + (["unpriced"] if "unpriced" in series.columns else [])
    base = series[cols]
    if "unpriced" not in base.columns:
        base = base.assign(unpriced=False)
    h = with_horizons(base)
    old = base.rename(columns={"year": "old_year", "quarter": "old_quarter", "c": "c_o", "k": "k_o",
                               "unpriced": "unpriced_o"})
    h = h.merge(old, on=["economy", "item", "frequency", "old_year", "old_quarter"], how="left")
    annual = base.loc[base["frequency"].eq("A"), ["economy", "item", "year", "c", "k"]]
    annual = annual.rename(columns={"year": "ann_year", "c": "C_p", "k": "K_p"})
    h["ann_year"] = h["year"] - 1
    h = h.merge(annual, on=["economy", "item", "ann_year"], how="left")
    cross = h["cross"].to_numpy()
    within = h["frequency"].eq("Q").to_numpy() & ~cross
    c, k = h["c"].to_numpy(), h["k"].to_numpy()
    c_o, k_o = h["c_o"].to_numpy(), h["k_o"].to_numpy()
    h["ca1"] = np.where(cross, c_o, k)
    h["ka1"] = np.where(cross, k_o, k)
    h["cb1"] = np.where(cross, h["C_p"], k)
    h["kb1"] = np.where(cross, h["K_p"], k)
    h["ca2"] = np.where(within, c_o, k)
    h["ka2"] = np.where(within, k_o, k)
    h["cb2"], h["kb2"] = c, k
    h["ok"] = h[_STEPS].notna().all(axis=1) & h["c_o"].notna()
    h["unpriced"] = h["unpriced"].astype(bool) | h["unpriced_o"].fillna(False).astype(bool)
    return h.drop(columns=["c_o", "k_o", "C_p", "K_p", "ann_year", "unpriced_o"])


def deflator_contributions(
    levels: pd.DataFrame, *, hierarchy: Hierarchy, convention: str = "annual_overlap_exact"
) -> pd.DataFrame:
    """Contributions of each direct component to the growth of an aggregate's deflator.

    Parameters
    ----------
    levels
        Levels panel with ``current``, ``previous_year`` (``annual_overlap_exact``) and ``chain_linked``
        rows for the aggregates and their components.
    hierarchy
        Signed aggregates; sign-changing aggregates are skipped.
    convention
        ``"annual_overlap_exact"`` (previous-year-price data chained by annual overlap) or ``"fisher"``
        (chain Fisher data).

    Returns
    -------
    DataFrame
        Columns economy, period, frequency, year, quarter, aggregate, item, horizon,
        contribution_pp, aggregate_growth_pct, residual_pp. Quarters: ``prev_period`` and
        ``prev_year``; years: the change on the previous year under both labels. The
        contribution carries the component's sign (imports negative). aggregate_growth_pct is
        the growth of the aggregate's implicit deflator (current over chain-linked; from
        current and previous-year prices where the aggregate has no chain-linked value) and
        residual_pp = aggregate_growth_pct - sum of contributions.

    Raises
    ------
    ConfigError
        Unknown convention.
    InputError
        Zero or negative values of a positive aggregate, at any price basis (or, under
        ``fisher``, of a positive component); a component that the economy reports lacks a
        value the aggregate's change needs.

    Notes
    -----
    ``annual_overlap_exact`` (docs/methods.md §4.1, P = c/k on the previous-year base, s_i the sign, Z the
    aggregate): annual ctr_i = 100 s_i (C^i_y - K^i_y)/K^Z_y; within a year
    ctr_i = 100 s_i [c^i(s)/k^Z(s) - c^i(s-1)/k^Z(s-1)]/P^Z(s-1); across the year boundary
    and year on year ctr_i = d1_i + (1 + G1) d2_i with
    d1_i = 100 s_i [C^i_{y-1}/K^Z_{y-1} - c^i(t_o)/k^Z(t_o)]/P^Z(t_o),
    1 + G1 = P^Z_{y-1}/P^Z(t_o), d2_i = 100 s_i (c^i(t_n) - k^i(t_n))/k^Z(t_n). The sum is
    exactly 100 (D^Z(t_n)/D^Z(t_o) - 1) for annual-overlap data whose aggregate equals the
    signed sum of its components. Inventories and other sign-changing items enter in level
    form and need no deflator of their own.

    First link (docs/derivations/first_link.md). The annual link of the second year y0+1
    needs year y0+1 only, so it exists wherever the first year has a current value. In the
    first year y0 (no previous-year values) the same formulas run at the average prices of
    y0 (`first_year_values`): K^Z_{y0} = C^Z_{y0} and a quarter's k0^Z = CLV^Z C^Z_{y0} /
    CLV^Z_{y0}. Across the first year boundary and year on year in y0+1, step 1 becomes
    d1_i = 100 s_i [C^i_{y0} k0^Z(t_o)/C^Z_{y0} - c^i(t_o)] / c^Z(t_o) and
    1 + G1 = k0^Z(t_o)/c^Z(t_o) = D^Z_{y0}/D^Z(t_o); within y0, ctr_i = 100 s_i
    [c^i(s) k0^Z(s-1)/k0^Z(s) - c^i(s-1)] / c^Z(s-1). They add up exactly to the growth of
    the implicit deflator c/CLV when the chain-linked volumes of y0+1 are linked to y0 by
    annual overlap. These quarterly rows need the aggregate's chain-linked values in y0:
    without them its first-year quarterly deflators are not given and the rows are left
    out.

    ``fisher``: the price side of `valvol.methods.index_numbers.fisher_decomposition` between the two
    periods compared, with p_i = c_i/CLV_i and q_i = s_i CLV_i (imports at negative
    quantities); a sign-changing component is priced at the aggregate's implicit deflator
    (q_i = s_i c_i / p_Z), a valvol convention. Year-on-year quarterly rows use the direct
    Fisher index between the two quarters, so their residual shows the chain drift; the
    previous-period rows add up exactly when the aggregate is the chain Fisher aggregate of
    its components.

    References
    ----------
    IMF, *Quarterly National Accounts Manual*, 2017 edition, ch. 8 (previous-year prices,
    annual overlap); ABS 5216.0 (2020-21), ch. 6 Annex, eqs (4)-(5); ESA 95 para 10.64;
    BEA, *A Guide to the NIPAs*, appendix 3 (Fisher contributions); ECB Economic Bulletin
    4/2024, box (deflator decomposition, total-supply view).
    """
    if convention not in CONVENTIONS:
        raise ConfigError(f"deflator contributions: convention {convention!r} is not one of {', '.join(CONVENTIONS)}")
    wide = pivot_bases(levels)
    edges = pd.DataFrame(hierarchy.edges(), columns=["aggregate", "item", "sign"])
    edges = edges.loc[~edges["aggregate"].map(hierarchy.is_sign_changing).astype(bool)]
    aggs = wide.loc[wide["item"].isin(edges["aggregate"])]
    if convention == "fisher":
        positive = edges.loc[~edges["item"].map(hierarchy.is_sign_changing).astype(bool), "item"]
        raise_nonpositive(wide.loc[wide["item"].isin(positive)], ("current", "chain_linked"))
        raise_nonpositive(aggs, ("current", "chain_linked"))
        out = _fisher(wide, edges, hierarchy)
    else:
        raise_nonpositive(aggs, ("current", "previous_year", "chain_linked"))
        out = _annual_overlap_exact(wide, edges)
    return _finish(out)


def income_side_contributions(levels: pd.DataFrame, *, real_gdp_item: str = "B1GQ") -> pd.DataFrame:
    """Contributions of unit labour costs, unit profits and unit taxes to GDP-deflator growth.

    Parameters
    ----------
    levels
        Levels panel with, at current prices, D1 (compensation of employees), B2A3G (gross
        operating surplus and mixed income), D2X3 (taxes on production and imports less
        subsidies) and ``real_gdp_item``, and the chain-linked volume of ``real_gdp_item``.
        Economies without the income items are skipped.
    real_gdp_item
        Item whose current value is nominal GDP Y and whose chain-linked volume is X.

    Returns
    -------
    DataFrame
        Layout of `deflator_contributions`, aggregate = ``real_gdp_item``, items ``ULC``
        (D1/X), ``UP`` (B2A3G/X), ``UT`` (D2X3/X) and ``UNIT_DISCREPANCY``
        ((Y - D1 - B2A3G - D2X3)/X, zero when the income side adds up to expenditure GDP).

    Raises
    ------
    InputError
        A period with some but not all income items, or a zero or negative GDP value.

    Notes
    -----
    D = Y/X = ULC + UP + UT + US exactly; ctr_k = 100 (U_{k,t} - U_{k,t_o})/D_{t_o}, the
    level form, defined also when net taxes are near zero or negative; the sum equals
    100 (D_t/D_{t_o} - 1) to rounding (docs/methods.md section 4.2). ULC is W/X, not
    compensation per employee over productivity.

    References
    ----------
    ECB Economic Bulletin 6/2019, box (Hahn), unit profits as gross operating surplus over
    real GDP; ECB Economic Bulletin 4/2023, box; Statistics Canada, The Daily,
    28 June 2023, Table 1.
    """
    if not levels["item"].isin(list(INCOME_ITEMS)).any():  # no income side given
        return _finish(pd.DataFrame())
    wide = pivot_bases(levels)
    keys = ["economy", "frequency", "year", "quarter", "period"]
    inc = wide.loc[wide["item"].isin(list(INCOME_ITEMS))].pivot(index=keys, columns="item", values="current")
    inc = inc.reindex(columns=list(INCOME_ITEMS))
    partial = inc.notna().any(axis=1) & inc.isna().any(axis=1)
    if partial.any():
        raise InputError([
            Problem(economy=r[0], period=r[4], price_basis="current",
                    item=",".join(i for i in INCOME_ITEMS if np.isnan(inc.loc[r, i])),
                    reason="income item missing where other income items are given")
            for r in inc.index[partial]
        ])
    gdp = wide.loc[wide["item"].eq(real_gdp_item), keys + ["current", "chain_linked"]].dropna()
    raise_nonpositive(gdp.assign(item=real_gdp_item), ("current", "chain_linked"))
    m = inc.dropna().reset_index().merge(gdp, on=keys, how="inner")
    x = m["chain_linked"]
    units = {label: m[item] / x for item, label in INCOME_ITEMS.items()}
    units[UNIT_DISCREPANCY] = (m["current"] - m[list(INCOME_ITEMS)].sum(axis=1)) / x
    long = pd.concat(
        [m[keys].assign(item=label, u=u, d=m["current"] / x) for label, u in units.items()], ignore_index=True
    )
    h = with_horizons(long)
    old = long.drop(columns="period").rename(
        columns={"year": "old_year", "quarter": "old_quarter", "u": "u_o", "d": "d_o"}
    )
    h = h.merge(old, on=["economy", "item", "frequency", "old_year", "old_quarter"], how="inner")
    h["contribution_pp"] = 100.0 * (h["u"] - h["u_o"]) / h["d_o"]
    h["aggregate_growth_pct"] = 100.0 * (h["d"] / h["d_o"] - 1.0)
    h["aggregate"] = real_gdp_item
    return _finish(h)


def _annual_overlap_exact(wide: pd.DataFrame, edges: pd.DataFrame) -> pd.DataFrame:
    """Two-step contributions for every (aggregate, component, period, horizon)."""
    series = wide[_SERIES].assign(c=wide["current"], k=wide["previous_year"], v=wide["chain_linked"])
    steps = step_values(first_year_values(series.dropna(subset=["c"])))
    # an aggregate needs every end priced; a component's own volumes do not enter its
    # (level-form) contribution, so an unpriced first-year end does not keep it out
    agg = steps.loc[steps["ok"] & ~steps["unpriced"] & steps["item"].isin(edges["aggregate"])]
    agg = agg.rename(columns={"item": "aggregate", **{s: "z" + s for s in _STEPS}})
    agg = agg[["aggregate", *_ROW, *("z" + s for s in _STEPS)]]
    comp = steps.loc[steps["ok"], _SERIES + ["horizon", *_STEPS]]
    m = agg.merge(edges, on="aggregate").merge(comp, on=["item", *_ROW], how="left")
    m = _require_components(m, wide, m["ca2"].notna())
    s = m["sign"].to_numpy()

    def step(n: str) -> np.ndarray:
        pz_a = m[f"zca{n}"] / m[f"zka{n}"]
        return 100.0 * s * (m[f"cb{n}"] / m[f"zkb{n}"] - m[f"ca{n}"] / m[f"zka{n}"]) / pz_a

    r1 = (m["zcb1"] / m["zkb1"]) / (m["zca1"] / m["zka1"])
    r2 = (m["zcb2"] / m["zkb2"]) / (m["zca2"] / m["zka2"])
    m["contribution_pp"] = step("1") + r1 * step("2")
    growth = _chained_growth(wide, edges)
    m = m.merge(growth, on=["aggregate", *_ROW], how="left")
    m["aggregate_growth_pct"] = m["aggregate_growth_pct"].fillna(100.0 * (r1 * r2 - 1.0))
    return m


def _fisher(wide: pd.DataFrame, edges: pd.DataFrame, hierarchy: Hierarchy) -> pd.DataFrame:
    """Price-side Fisher contributions for every (aggregate, component, period, horizon)."""
    series = wide[_SERIES].assign(c=wide["current"], v=wide["chain_linked"])
    h = with_horizons(series)
    old = series.rename(columns={"year": "old_year", "quarter": "old_quarter", "c": "c_o", "v": "v_o"})
    h = h.merge(old, on=["economy", "item", "frequency", "old_year", "old_quarter"], how="left")
    agg = h.loc[h["item"].isin(edges["aggregate"]) & h[["c", "c_o"]].notna().all(axis=1)]
    agg = agg.rename(columns={"item": "aggregate", "c": "zc", "v": "zv", "c_o": "zc_o", "v_o": "zv_o"})
    agg = agg[["aggregate", *_ROW, "zc", "zv", "zc_o", "zv_o"]]
    comp = h[_SERIES + ["horizon", "c", "v", "c_o", "v_o"]]
    m = agg.merge(edges, on="aggregate").merge(comp, on=["item", *_ROW], how="left")
    signc = m["item"].map(hierarchy.is_sign_changing).astype(bool).to_numpy()
    has = m[["c", "c_o"]].notna().all(axis=1).to_numpy() & (signc | m[["v", "v_o"]].notna().all(axis=1).to_numpy())
    m = _require_components(m, wide, has)
    signc = m["item"].map(hierarchy.is_sign_changing).astype(bool).to_numpy()
    unpriced = signc & m[["zv", "zv_o"]].isna().any(axis=1).to_numpy()
    if unpriced.any():
        bad = m.loc[unpriced].drop_duplicates(["economy", "aggregate"])
        raise InputError([
            Problem(economy=r.economy, item=r.aggregate, period=period_label([r.year], [r.quarter])[0],
                    price_basis="chain_linked",
                    reason=f"no chain-linked value to price the sign-changing component {r.item}")
            for r in bad.itertuples(index=False)
        ])
    p1 = np.where(signc, m["zc"] / m["zv"], m["c"] / m["v"])
    p0 = np.where(signc, m["zc_o"] / m["zv_o"], m["c_o"] / m["v_o"])
    s = m["sign"].to_numpy()
    q1, q0 = s * m["c"].to_numpy() / p1, s * m["c_o"].to_numpy() / p0
    codes = m.groupby(["aggregate", *_ROW], sort=False).ngroup().to_numpy()
    ctr, _, pf = fisher_decomposition(q0, q1, p0, p1, codes)
    m["contribution_pp"] = ctr
    chained = 100.0 * ((m["zc"] / m["zv"]) / (m["zc_o"] / m["zv_o"]) - 1.0)
    m["aggregate_growth_pct"] = chained.fillna(pd.Series(100.0 * (pf - 1.0), index=m.index))
    return m


def _chained_growth(wide: pd.DataFrame, edges: pd.DataFrame) -> pd.DataFrame:
    """Growth of each aggregate's implicit deflator current / chain-linked, per horizon."""
    d = wide.loc[wide["item"].isin(edges["aggregate"]), _SERIES + ["current", "chain_linked"]].dropna()
    d = d.assign(d=d["current"] / d["chain_linked"])[_SERIES + ["d"]]
    h = with_horizons(d)
    old = d.rename(columns={"year": "old_year", "quarter": "old_quarter", "d": "d_o"})
    h = h.merge(old, on=["economy", "item", "frequency", "old_year", "old_quarter"], how="inner")
    h["aggregate_growth_pct"] = 100.0 * (h["d"] / h["d_o"] - 1.0)
    return h.rename(columns={"item": "aggregate"})[["aggregate", *_ROW, "aggregate_growth_pct"]]


def _require_components(m: pd.DataFrame, wide: pd.DataFrame, has: np.ndarray | pd.Series) -> pd.DataFrame:
    """Drop components absent from an economy; raise for reported ones lacking a value."""
    reported = pd.MultiIndex.from_frame(wide[["economy", "item"]].drop_duplicates())
    gap = ~np.asarray(has, dtype=bool)
    is_reported = pd.MultiIndex.from_frame(m[["economy", "item"]]).isin(reported)
    bad = m.loc[gap & is_reported]
    if len(bad):
        raise InputError([
            Problem(economy=r.economy, item=r.item, period=period_label([r.year], [r.quarter])[0],
                    reason=f"component of {r.aggregate} lacks a value needed for its {r.horizon} change")
            for r in bad.drop_duplicates(["economy", "item", "year", "quarter"]).itertuples(index=False)
        ])
    return m.loc[~gap].reset_index(drop=True)


def _finish(m: pd.DataFrame) -> pd.DataFrame:
    """Residual per aggregate-period-horizon, canonical period labels, order, columns."""
    if m.empty:
        dtypes = {c: "float64" if c.endswith(("_pp", "_pct")) else "str" for c in CONTRIBUTION_COLUMNS}
        return pd.DataFrame(columns=CONTRIBUTION_COLUMNS).astype({**dtypes, "year": "int64", "quarter": "int64"})
    total = m.groupby(["aggregate", *_ROW], sort=False)["contribution_pp"].transform("sum")
    m = m.assign(residual_pp=m["aggregate_growth_pct"] - total,
                 period=period_label(m["year"], m["quarter"]).to_numpy())
    m = m.sort_values(["economy", "aggregate", "frequency", "year", "quarter", "horizon", "item"],
                      kind="mergesort", ignore_index=True)
    return m[CONTRIBUTION_COLUMNS]
