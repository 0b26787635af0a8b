"""Chain-linked volumes from values at current and previous-year prices.

Each annual link values a year at the average prices of the year before (previous-year
prices, "PYP"). The links are multiplied into a chain scaled so that the annual volume of
the reference year equals its value at current prices. Quarters are linked by annual
overlap (default), one-quarter overlap or over-the-year. Items that change sign
(inventories, valuables, discrepancy, external balance) are not chained by ratios: their
values at previous-year prices are re-expressed with the deflator of the top aggregate
that contains them.

Panel utilities shared with `valvol.methods.contributions` live in `valvol.methods.panel`.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from valvol.errors import ConfigError, Problem
from valvol.frames import LEVEL_COLUMNS, empty_levels, period_label, sort_levels
from valvol.hierarchy import Hierarchy
from valvol.methods.panel import (
    Lookup,
    PanelCodes,
    item_flags,
    levels_wide,
    nonpositive_problems,
    problems_at,
    raise_problems,
    to_levels,
    top_aggregates,
)

#: Quarterly linking techniques (docs/methods.md section 2.2).
METHODS = ("annual_overlap", "one_quarter_overlap", "over_the_year")
COMPARE_COLUMNS = ["economy", "item", "frequency", "year", "quarter", "period", "given", "computed",
                   "diff", "pct_diff"]
_WIDE_KEY = ["economy", "item", "frequency", "year", "quarter"]


# ------------------------------------------------------------------------------- chain-linking
def chain_link(levels: pd.DataFrame, *, hierarchy: Hierarchy, method: str = "annual_overlap",
               reference_year: int | Mapping[str, int] | None = None, annual_rate: bool = False) -> pd.DataFrame:
    """Chain-linked volumes of every series with values at current and previous-year prices.

    Parameters
    ----------
    levels
        Levels panel with ``current`` and ``previous_year`` rows (Q and A, or A only),
        aggregates included; other price bases are ignored.
    hierarchy
        Signed hierarchy: tells the sign-changing items and the aggregates above them.
    method
        ``annual_overlap`` (default), ``one_quarter_overlap`` or ``over_the_year``.
    reference_year
        Year r whose annual volume equals its current-price value: one year for every
        economy, or a mapping economy -> year. None (or an economy the mapping lacks): the
        economy's latest year with an annual value at current prices (its latest complete year).
    annual_rate
        Quarterly levels at annual rate (annual value = mean of the quarters, not the sum).

    Returns
    -------
    DataFrame
        Levels panel of ``chain_linked`` rows (Q and A).

    Raises
    ------
    ConfigError
        Unknown method.
    InputError
        Zero or negative value of a positive series; a year that cannot be linked (its
        previous-year value or the previous year's current value missing); a series not
        covering the reference year; the overlap quarter of one-quarter overlap (or the
        same quarter of over-the-year) missing.

    Notes
    -----
    Annual links (docs/methods.md §2.1): L_y = K_y / C_{y-1}, CLV_r = C_r, CLV_y = CLV_{y-1} L_y
    forward and CLV_{y-1} = CLV_y / L_y backward. The first year y0 of a series (no
    previous-year prices) thus has CLV_{y0} = CLV_{y0+1} / L_{y0+1}.

    Quarters (docs/methods.md §2.2), k at previous-year prices, c at current prices:

    * annual overlap: CLV(s,y) = k(s,y) CLV_{y-1} / C_{y-1}. The quarters add up to the
      annual volume (average to it with ``annual_rate``, where C is the annual mean:
      the ratio CLV/C is the same in both conventions);
    * one-quarter overlap: CLV(s,y) = k(s,y) CLV(4,y-1) / k^{(y-1)}(4,y-1);
    * over-the-year: CLV(s,y) = CLV(s,y-1) k(s,y) / k^{(y-1)}(s,y-1).

    k^{(y-1)}(s,y-1), a quarter of y-1 at the average prices of y-1, is derived as
    k(s,y-1) C_{y-1} / K_{y-1} for an elementary series (exact: the series' annual
    Paasche deflator is its average price relative), as the signed sum of its components
    so valued for an aggregate. The one-quarter and over-the-year quarters do not add up
    to the annual volumes; they are left unbenchmarked and scaled so that the quarters of
    the reference year add up (average, ``annual_rate``) to C_r. Annual values are the
    annual links under every method.

    First-year quarters are valued at the average prices of that year:
    CLV(s,y0) = v(s,y0) CLV_{y0} / C_{y0}, with v(s,y0) = k(s,y0) C_{y0} / K_{y0} when
    previous-year values of y0 exist, else the current-price value c(s,y0) (the only
    information there is; it leaves that year's within-year price movement in the
    volumes). They add up to CLV_{y0}, and all three techniques coincide for the first
    link. Quarters of an incomplete year before the first complete year get no volume (nor
    does a series without any complete year).

    Sign-changing items (``hierarchy.is_sign_changing``: P52, P53, YA1, B11, ...) are not
    chained by ratios (docs/methods.md §2.4, a variant of option (c), common practice): their
    values at previous-year prices are re-expressed with the previous year's implicit
    deflator of the top aggregate Z containing them (B1GQ for P52, P53, YA1; the highest
    positive ancestor with data in the economy): CLV_i(t) = k_i(t) CLV^Z_{y-1} / C^Z_{y-1},
    or, in the item's first year, c_i(t) CLV^Z_y / C^Z_y; the same for all three
    techniques. An item with no such ancestor keeps its own previous-year values
    unscaled (current values in its first year). In the reference year such an item has
    CLV_i,r = C_i,r only if its own price movement equals Z's, so the annual values of r
    add up exactly only when the aggregate contains no sign-changing item; those of r+1
    (and its quarters) add up under annual overlap in every case (CLV^Z_r / C^Z_r = 1).

    References
    ----------
    IMF, *Quarterly National Accounts Manual*, 2017 Edition, ch. 8, section D (annual
    and one-quarter overlap) and ¶8.17 eq. (2); IMF, *Quarterly National Accounts
    Manual* (2001), ch. IX (over-the-year); ABS 5216.0 (2020-21), ch. 6 Annex ¶6A.2 eq. (1);
    ESA 95 ¶10.62-10.65; Aspden (2006), OECD.

    Examples
    --------
    >>> from valvol.frames import LEVEL_COLUMNS
    >>> h = Hierarchy.from_mapping({"T": ["X"]})
    >>> rows = [("E", "X", "current", "A", 2020, 0, "2020", 100.0),
    ...         ("E", "X", "current", "A", 2021, 0, "2021", 120.0),
    ...         ("E", "X", "previous_year", "A", 2021, 0, "2021", 110.0)]
    >>> lv = pd.DataFrame(rows, columns=LEVEL_COLUMNS)
    >>> chain_link(lv, hierarchy=h, reference_year=2021)["value"].round(4).tolist()
    [109.0909, 120.0]
    """
    if method not in METHODS:
        raise ConfigError(f"unknown chain-linking method {method!r}; expected one of {', '.join(METHODS)}")
    w = levels_wide(levels, {"current": "c", "previous_year": "k"})
    if w.empty:
        return empty_levels()
    codes = PanelCodes(w["economy"], [*pd.unique(w["item"]), *hierarchy.items], w["year"])
    w["sid"] = codes.sid(w["economy"], w["item"])
    n_sid = len(codes.economies) * len(codes.items)
    both = (np.bincount(w["sid"], weights=w["c"].notna(), minlength=n_sid) > 0) & (
        np.bincount(w["sid"], weights=w["k"].notna(), minlength=n_sid) > 0)
    w = w[both[w["sid"].to_numpy()]].reset_index(drop=True)
    if w.empty:
        return empty_levels()
    w["sc"] = item_flags(w["item"], hierarchy.is_sign_changing)
    raise_problems(nonpositive_problems(w, {"c": "current", "k": "previous_year"}, hierarchy))
    latest = w.loc[(w["frequency"] == "A") & w["c"].notna()].groupby("economy")["year"].max()
    if isinstance(reference_year, Mapping | pd.Series):  # one year per economy, latest where absent
        ref = pd.Series(reference_year, dtype="float64").reindex(latest.index).fillna(latest).astype("int64")
    elif reference_year is not None:
        ref = pd.Series(int(reference_year), index=pd.unique(w["economy"]))
    else:
        ref = latest

    ann = _annual_chain(w[~w["sc"] & (w["frequency"] == "A")], ref)
    ann_lu = Lookup(codes, ann, ["c", "k", "clv", "fa"])
    y0 = ann.groupby("sid")["year"].min()
    tops = top_aggregates(hierarchy, w[w["sc"]], ann)
    top_of = np.full(n_sid, -1, dtype="int64")
    top_of[codes.sid(tops["economy"], tops["item"])] = codes.sid(tops["economy"], tops["top"])
    w["top_sid"] = top_of[w["sid"].to_numpy()]

    q = w[~w["sc"] & (w["frequency"] == "Q")].copy()
    q["y0"] = q["sid"].map(y0)
    q = q[q["y0"].notna() & (q["year"] >= q["y0"])].reset_index(drop=True)
    q["y0"] = q["y0"].astype("int64")
    if method == "annual_overlap":
        q["clv"] = _annual_overlap_quarters(q, ann_lu)
    else:
        rho = _own_year_price_ratios(w[w["frequency"] == "Q"], ann_lu, hierarchy, codes)
        q["clv"] = _overlap_quarters(q, ann_lu, rho, codes, method, annual_rate, ref)
    parts = [to_levels(ann, "clv"), to_levels(q, "clv")]
    if w["sc"].any():
        parts.append(to_levels(_sign_changing_volumes(w[w["sc"]], ann_lu), "clv"))
    out = pd.concat(parts, ignore_index=True)
    return sort_levels(out)


def benchmark_to_years(chained: pd.DataFrame, *, hierarchy: Hierarchy, annual_rate: bool = False) -> pd.DataFrame:
    """Quarterly chain-linked volumes benchmarked to their annual chain by proportional Denton.

    One-quarter-overlap and over-the-year quarters do not add up to the annual chain-linked
    volume; as in IMF, *Quarterly National Accounts Manual*, 2017 Edition, Example 8.8, they
    are benchmarked to it with the proportional first-difference Denton method (Denton 1971;
    Cholette 1984), keeping their quarterly movements: the quarters of each complete year sum
    (or, with ``annual_rate``, average) to the annual value; quarters past the last complete
    year are extrapolated with a flat benchmark-to-indicator ratio. Sign-changing items keep
    their first differences instead (additive Denton). Annual rows are returned unchanged.
    """
    from valvol.methods.benchmark import denton

    q = chained[chained["frequency"] == "Q"]
    a = chained[chained["frequency"] == "A"]
    if q.empty or a.empty:
        return chained
    by = ["economy", "item"]
    ind = q[by + ["year", "quarter", "value"]]
    bench = a[by + ["year", "value"]]
    bench = bench.merge(ind.groupby(by + ["year"]).size().rename("n").reset_index(), on=by + ["year"])
    bench = bench[bench["n"] == 4].drop(columns="n")
    sc = ind["item"].map(hierarchy.is_sign_changing).astype(bool)
    parts = []
    for mask, method in ((~sc, "proportional"), (sc, "additive")):  # two calls, each a whole panel
        sub = ind[mask.to_numpy()]
        if len(sub):
            keys = sub[by].drop_duplicates()
            parts.append(denton(sub, bench.merge(keys, on=by), method=method,
                                year_from_quarters="mean" if annual_rate else "total", on_nonpositive="additive", by=by))
    out = pd.concat(parts, ignore_index=True)[by + ["year", "quarter", "value"]]
    quarters = q.drop(columns="value").merge(out, on=by + ["year", "quarter"], how="left", validate="one_to_one")
    return sort_levels(pd.concat([a, quarters[LEVEL_COLUMNS]], ignore_index=True))


def _annual_chain(a: pd.DataFrame, ref: pd.Series) -> pd.DataFrame:
    """Annual links, their chain and the volumes CLV_y; adds columns y0, clv and fa = CLV/C."""
    a = a.sort_values(["sid", "year"], ignore_index=True)
    y0 = a["year"].where(a["c"].notna()).groupby(a["sid"]).transform("min")
    a = a[y0.notna() & (a["year"] >= y0)].copy()
    a["y0"] = y0[a.index].astype("int64")
    a = a.reset_index(drop=True)
    g = a.groupby("sid", sort=False)
    prev_year = g["year"].shift()
    prev_c = g["c"].shift()
    later = a["year"] > a["y0"]
    gap = prev_year.notna() & (a["year"] - prev_year != 1)
    problems = problems_at(a[gap], "annual values missing just before this year: the chain cannot be "
                           "linked across a gap", price_basis="current", year_offset=-1)
    problems += problems_at(a[later & ~gap & a["k"].isna()], "previous_year value missing: the year "
                            "cannot be linked to the year before", price_basis="previous_year")
    problems += problems_at(a[later & ~gap & a["k"].notna() & prev_c.isna()], "current-price value "
                            "missing: the next year cannot be linked", price_basis="current", year_offset=-1)
    link = (a["k"] / prev_c).where(later, 1.0)
    a["chain"] = link.groupby(a["sid"]).cumprod()
    r = a["economy"].map(ref)
    is_r = a["year"] == r
    c_r = a["c"].where(is_r).groupby(a["sid"]).transform("max")
    chain_r = a["chain"].where(is_r).groupby(a["sid"]).transform("max")
    lost = a[c_r.isna()].drop_duplicates("sid")
    for row in lost.itertuples(index=False):  # one problem per series lacking the reference year
        year = ref.get(row.economy)
        problems.append(Problem(economy=row.economy, item=row.item, price_basis="current",
                                period="" if pd.isna(year) else str(int(year)),
                                reason="series does not cover the reference year (no annual current-price "
                                       "value there): its chain cannot be referenced"))
    raise_problems(problems)
    a["clv"] = c_r * a["chain"] / chain_r
    a["fa"] = a["clv"] / a["c"]
    return a


def _first_year_values(q: pd.DataFrame, ann_lu: Lookup) -> np.ndarray:
    """Quarters of the first year at that year's average prices (k C/K, else c)."""
    sid, year = q["sid"].to_numpy(), q["year"].to_numpy()
    k, c = q["k"].to_numpy(dtype="float64"), q["c"].to_numpy(dtype="float64")
    big_c, big_k = ann_lu.get("c", sid, year, 0), ann_lu.get("k", sid, year, 0)
    return np.where(np.isfinite(k) & np.isfinite(big_k), k * big_c / big_k, c)


def _annual_overlap_quarters(q: pd.DataFrame, ann_lu: Lookup) -> np.ndarray:
    sid, year = q["sid"].to_numpy(), q["year"].to_numpy()
    first = year == q["y0"].to_numpy()
    k = q["k"].to_numpy(dtype="float64")
    fa_prev = ann_lu.get("fa", sid, year - 1, 0)
    v_first = _first_year_values(q, ann_lu)
    clv = np.where(first, v_first * ann_lu.get("fa", sid, year, 0), k * fa_prev)
    no_k = ~first & ~np.isfinite(k)
    no_link = ~first & np.isfinite(k) & ~np.isfinite(fa_prev)
    raise_problems(problems_at(q[no_k], "previous_year value missing: the quarter cannot be linked",
                       price_basis="previous_year")
           + problems_at(q[no_link], "no annual chain-linked volume of the year before to link the "
                         "quarter to (annual values of that year missing)", price_basis="current")
           + problems_at(q[first & ~np.isfinite(v_first)], "current value missing in the first year",
                         price_basis="current"))
    return clv


def _heights(hierarchy: Hierarchy) -> list[list[str]]:
    """Positive aggregates grouped by height (1: only non-aggregate components)."""
    height: dict[str, int] = {}
    for agg in hierarchy.order():
        height[agg] = 1 + max((height.get(c.item, 0) for c in hierarchy.aggregates[agg]), default=0)
    levels: dict[int, list[str]] = {}
    for agg, h in height.items():
        if not hierarchy.is_sign_changing(agg):
            levels.setdefault(h, []).append(agg)
    return [sorted(levels[h]) for h in sorted(levels)]


def _own_year_price_ratios(qa: pd.DataFrame, ann_lu: Lookup, hierarchy: Hierarchy,
                           codes: PanelCodes) -> Lookup:
    """rho(s,j) = k^{(j)}(s,j) / k(s,j): value at own-year average prices over value at PYP."""
    qa = qa[["economy", "item", "year", "quarter", "sid", "top_sid", "sc", "k"]].copy()
    sid, top, year = qa["sid"].to_numpy(), qa["top_sid"].to_numpy(), qa["year"].to_numpy()
    own = ann_lu.get("c", sid, year, 0) / ann_lu.get("k", sid, year, 0)
    via_top = np.where(top >= 0, ann_lu.get("c", top, year, 0) / ann_lu.get("k", top, year, 0), 1.0)
    rho = np.where(qa["sc"].to_numpy(), via_top, own)
    qa["rho"] = np.where(np.isfinite(qa["k"].to_numpy(dtype="float64")), rho, np.nan)
    edges = pd.DataFrame(hierarchy.edges(), columns=["aggregate", "item", "sign"])
    for level in _heights(hierarchy):  # bottom-up over hierarchy levels, each over the whole panel
        comp = qa[qa["k"].notna()].merge(edges[edges["aggregate"].isin(level)], on="item")
        if comp.empty:
            continue
        comp["sk"] = comp["sign"] * comp["k"]
        comp["skr"] = comp["sk"] * comp["rho"]
        comp["gap"] = comp["rho"].isna()
        g = comp.groupby(["economy", "aggregate", "year", "quarter"], as_index=False).agg(
            sk=("sk", "sum"), skr=("skr", "sum"), gap=("gap", "any"))
        g["ratio"] = np.where(~g["gap"] & (g["sk"] > 0), g["skr"] / g["sk"], np.nan)
        g["sid"] = codes.sid(g["economy"], g["aggregate"])
        g["found"] = 1.0
        found = Lookup(codes, g, ["ratio", "found"])
        qtr = qa["quarter"].to_numpy()
        covered = np.isfinite(found.get("found", sid, year, qtr)) & np.isfinite(qa["k"].to_numpy(dtype="float64"))
        qa["rho"] = np.where(covered, found.get("ratio", sid, year, qtr), qa["rho"].to_numpy())
    return Lookup(codes, qa, ["rho"])


def _overlap_quarters(q: pd.DataFrame, ann_lu: Lookup, rho: Lookup, codes: PanelCodes, method: str,
                      annual_rate: bool, ref: pd.Series) -> np.ndarray:
    """Quarters by one-quarter overlap or over-the-year, scaled to C_r in the reference year."""
    sid, year, quarter = q["sid"].to_numpy(), q["year"].to_numpy(), q["quarter"].to_numpy()
    y0 = q["y0"].to_numpy()
    k = q["k"].to_numpy(dtype="float64")
    # growth factors 1/rho(s_o, j) for j > y0, s_o = 4 (one-quarter) or s (over-the-year)
    t = q[(year > y0) & ((quarter == 4) | (method == "over_the_year"))][["sid", "year", "quarter"]].copy()
    t = t.sort_values(["sid", "quarter", "year"], ignore_index=True)
    t["g"] = 1.0 / rho.get("rho", t["sid"].to_numpy(), t["year"].to_numpy(), t["quarter"].to_numpy())
    grp = t.groupby(["sid", "quarter"], sort=False)
    bad = t["g"].isna() | (grp["year"].diff().fillna(1) != 1)
    poisoned = bad.astype("int64").groupby([t["sid"], t["quarter"]]).cumsum() > 0
    t["G"] = t["g"].fillna(1.0).groupby([t["sid"], t["quarter"]]).cumprod().where(~poisoned)
    q_o = np.full(quarter.shape, 4) if method == "one_quarter_overlap" else quarter
    cum = np.where(year >= y0 + 2, Lookup(codes, t, ["G"]).get("G", sid, year - 1, q_o), 1.0)
    fa0 = ann_lu.get("fa", sid, y0, 0)
    clv = np.where(year == y0, _first_year_values(q, ann_lu) * fa0, k * fa0 * cum)
    where = "Q4" if method == "one_quarter_overlap" else "the same quarter"
    raise_problems(problems_at(q[(year > y0) & ~np.isfinite(k)], "previous_year value missing: the quarter "
                       "cannot be linked", price_basis="previous_year")
           + problems_at(q[(year > y0) & np.isfinite(k) & ~np.isfinite(cum * fa0)],
                         f"{method}: {where} of the year before, valued at that year's prices, is missing "
                         "(previous_year quarter or annual values of that year missing)",
                         price_basis="previous_year"))
    # scale: the quarters of the reference year add up (average) to C_r
    r = q["economy"].map(ref).to_numpy(dtype="float64")
    in_r = year == r
    tot = pd.Series(np.where(in_r, clv, 0.0)).groupby(sid).transform("sum").to_numpy()
    n = pd.Series(in_r.astype("int64")).groupby(sid).transform("sum").to_numpy()
    annual_of_quarters = tot / 4.0 if annual_rate else tot
    c_r = ann_lu.get("c", sid, np.nan_to_num(r, nan=-10**6).astype("int64"), 0)
    scale = np.where((n == 4) & np.isfinite(c_r), c_r / np.where(n == 4, annual_of_quarters, 1.0), 1.0)
    return clv * scale


def _sign_changing_volumes(s: pd.DataFrame, ann_lu: Lookup) -> pd.DataFrame:
    """Sign-changing items: PYP re-expressed with the top aggregate's previous-year deflator."""
    s = s.copy()
    top, year = s["top_sid"].to_numpy(), s["year"].to_numpy()
    k, c = s["k"].to_numpy(dtype="float64"), s["c"].to_numpy(dtype="float64")
    fa_prev, fa_same = ann_lu.get("fa", top, year - 1, 0), ann_lu.get("fa", top, year, 0)
    use_k = np.isfinite(k) & np.isfinite(fa_prev)
    clv = np.where(use_k, k * fa_prev, c * fa_same)
    s["clv"] = np.where(top >= 0, clv, np.where(np.isfinite(k), k, c))
    first = s["year"].where((s["frequency"] == "A") & s["c"].notna()).groupby(s["sid"]).transform("min")
    missing = ~np.isfinite(s["clv"].to_numpy()) & (s["year"] >= first).to_numpy()
    raise_problems(problems_at(s[missing], "sign-changing item: no chain-linked annual volume of the aggregate "
                       "whose deflator values it, for this year or the year before"))
    return s


# ------------------------------------------------------------------- re-referencing and checks
def nonadditivity_residual(chained: pd.DataFrame, hierarchy: Hierarchy,
                           reported: pd.DataFrame | None = None) -> pd.DataFrame:
    """Aggregate minus the signed sum of its chain-linked components.

    Parameters
    ----------
    chained
        Chain-linked levels of aggregates and components.
    hierarchy
        The signed aggregates.
    reported
        ``economy, item`` pairs an economy reports (at any price basis). A declared
        component an economy never reports (e.g. no valuables) is not expected; when None,
        every declared component is.

    Returns
    -------
    DataFrame
        Levels panel, item ``<AGG>_RESIDUAL``, price basis ``chain_linked``: one row per
        aggregate and period where the aggregate and all its expected direct components have
        chain-linked values.

    Notes
    -----
    R_t = CLV^Z_t - sum_i s_i CLV^i_t (docs/methods.md §2.3). Zero in the reference year and, under
    annual overlap, in the year after it; not otherwise (ESA 95 ¶10.65).

    References
    ----------
    ESA 95 ¶10.65; BEA, *Survey of Current Business*, Nov 1998, box 4.
    """
    ch = levels_wide(chained, {"chain_linked": "v"})
    edges = pd.DataFrame(hierarchy.edges(), columns=["aggregate", "item", "sign"])
    if reported is None:  # every declared component is expected
        reported = ch[["economy"]].drop_duplicates().merge(edges[["item"]], how="cross")
    n_comp = (reported[["economy", "item"]].drop_duplicates().merge(edges, on="item")
              .groupby(["economy", "aggregate"], as_index=False)["item"].size().rename(columns={"size": "n_comp"}))
    comp = ch.merge(edges, on="item")
    comp["sv"] = comp["sign"] * comp["v"]
    g = comp.groupby(["economy", "aggregate", "frequency", "year", "quarter"], as_index=False).agg(
        total=("sv", "sum"), n=("sv", "size"))
    g = g.merge(n_comp, on=["economy", "aggregate"])
    g = g[g["n"] == g["n_comp"]]
    agg = ch.rename(columns={"item": "aggregate"})
    g = g.merge(agg, on=["economy", "aggregate", "frequency", "year", "quarter"])
    g["value"] = g["v"] - g["total"]
    g["item"] = g["aggregate"] + "_RESIDUAL"
    return sort_levels(to_levels(g, "value"))


def compare_chain_linked(given: pd.DataFrame, computed: pd.DataFrame) -> pd.DataFrame:
    """Published (given) against computed chain-linked volumes, per economy, item and period.

    Returns
    -------
    DataFrame
        Columns economy, item, frequency, year, quarter, period, given, computed,
        diff = computed - given and pct_diff = 100 diff / |given| (NaN where given is 0),
        for the series-periods present in both.
    """
    g = levels_wide(given, {"chain_linked": "given"})
    c = levels_wide(computed, {"chain_linked": "computed"})
    out = g.merge(c, on=_WIDE_KEY)
    out["period"] = period_label(out["year"], out["quarter"]).to_numpy()
    out["diff"] = out["computed"] - out["given"]
    denom = out["given"].abs().where(out["given"] != 0)
    out["pct_diff"] = 100.0 * out["diff"] / denom
    return out[COMPARE_COLUMNS].sort_values(_WIDE_KEY, kind="mergesort", ignore_index=True)
