"""Terms of trade, trading gain, real GDI, and gaps between deflator (and CPI) growth rates.

One long output table, one row per economy, period, measure and horizon (``""`` for
level measures). Measures:

====================================  =========  ===========================================
measure                               horizon    value
====================================  =========  ===========================================
``terms_of_trade``                    ``""``     100 P_x / P_m
``trading_gain``                      ``""``     T = (X - M)/P - (X/P_x - M/P_m)
``real_gdi``                          ``""``     GDP volume + T
``gap_gdp_vs_domestic_demand``        per        pi_GDP - pi_DD (pp)
``gap_export_price_part``             per        export-price part of that gap (pp)
``gap_import_price_part``             per        import-price part of that gap (pp)
``gap_other_part``                    per        part of the rest of GDP (discrepancy) (pp)
``gap_household_vs_gdp``              per        pi_HH - pi_GDP (pp)
``cpi_quarterly`` / ``cpi_annual``    ``""``     mean of the CPI levels in the quarter/year
``cpi_growth``                        per        growth of those means (percent)
``gap_cpi_vs_household``              per        cpi_growth - pi_HH (pp)
====================================  =========  ===========================================

Items: GDP ``B1GQ``, exports ``P6``, imports ``P7``, household consumption ``P31_S14``,
domestic demand ``P3_P5`` (else P3 + P5), domestic final demand P3 + P51G. Current and
previous-year values of an aggregate that the panel lacks are the signed sums of its
hierarchy components. Measures whose items an economy lacks are left out for it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from valvol.errors import ConfigError, InputError, Problem
from valvol.frames import period_label
from valvol.hierarchy import Hierarchy
from valvol.methods.deflator_contributions import first_year_values, step_values
from valvol.methods.panel import pivot_bases, raise_nonpositive, with_horizons
from valvol.methods.reference_year import reference_year_candidates

NUMERAIRES: tuple[str, ...] = ("trade_average", "import", "export", "domestic_final_demand")
GDP, EXPORTS, IMPORTS, HOUSEHOLD, DOMESTIC_DEMAND = "B1GQ", "P6", "P7", "P31_S14", "P3_P5"
DOMESTIC_DEMAND_PARTS: tuple[tuple[str, int], ...] = (("P3", 1), ("P5", 1))
DOMESTIC_FINAL_DEMAND_PARTS: tuple[tuple[str, int], ...] = (("P3", 1), ("P51G", 1))
MEASURE_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "measure", "horizon", "value"]

_KEYS = ["economy", "frequency", "year", "quarter"]
_ROW = ["economy", "frequency", "year", "quarter", "horizon"]


def price_gaps(
    levels: pd.DataFrame,
    *,
    hierarchy: Hierarchy,
    numeraire: str = "trade_average",
    cpi: pd.DataFrame | None = None,
    reference_year: int | None = None,
) -> pd.DataFrame:
    """Terms of trade, trading gain, real GDI and growth gaps between price measures.

    Parameters
    ----------
    levels
        Levels panel (current, previous-year and chain-linked values, quarterly and annual).
    hierarchy
        Signed aggregates, used to form P3, P5 and the like when the panel lacks them.
    numeraire
        Deflator P of the trading gain: ``"trade_average"`` (P_x + P_m)/2, ``"import"`` P_m,
        ``"export"`` P_x or ``"domestic_final_demand"`` (deflator of P3 + P51G).
    cpi
        Optional consumer price index, one row per economy and month or quarter, columns
        ``economy``, ``item`` (``"CPI"``), ``price_basis`` (``"index"``), ``frequency``
        (``"M"`` or ``"Q"``), ``year``, ``month`` (1..12, monthly rows) or ``quarter``
        (1..4, quarterly rows) and ``value`` (> 0); other columns are ignored. One
        frequency per economy. Quarters lacking a month and years lacking a quarter are
        left out.
    reference_year
        Year in which all deflators of the trading gain equal 1. If None, the year in which
        the annual chain-linked GDP equals GDP at current prices
        (`valvol.methods.reference_year.reference_year_candidates`); with none found, the
        deflators are taken as they are (current over chain-linked, not rebased).

    Returns
    -------
    DataFrame
        Columns economy, period, frequency, year, quarter, measure, horizon, value (see the
        module docstring for the measures).

    Raises
    ------
    ConfigError
        Unknown numeraire.
    InputError
        Zero or negative current or chain-linked values of GDP, exports, imports, household
        consumption or domestic demand; no reference year found when the numeraire needs
        one; a malformed CPI frame.

    Notes
    -----
    *Terms of trade and trading gain* (docs/methods.md section 5). Deflators are ratios
    P_i = c_i/CLV_i re-referenced to 1 in the reference year r (annual value). X, M are
    exports and imports at current prices, X/P_x and M/P_m their volumes:
    T = (X - M)/P - (X/P_x - M/P_m), real GDI = GDP/P_GDP + T, terms of trade
    100 P_x/P_m. The domestic final demand deflator is chained from current and
    previous-year-price sums: P_y = P_{y-1} C_y/K_y (annual overlap), quarters
    P(s,y) = [c(s,y)/k(s,y)] [K_y/C_y] P_y, normalised to P_r = 1. T is zero in the
    reference year (annual rows), depends on r, and annual T is not the sum of the
    quarterly ones.

    *Growth gaps* (docs/methods.md section 6). Deflator growth rates pi come from current and
    previous-year prices; they equal the growth of annual-overlap implicit deflators. Each
    change is the product of two links between ends valued at common prices
    (`step_values`): annual, one link at the prices of y-1; within a year, one link;
    across the year boundary and year on year, old quarter to the average of y-1 (prices
    of y-2), then that average to the new quarter (prices of y-1). In a link from a to b,
    with P = c/k, R = P(b)/P(a) and e_j = s_j (c_j - k_j P_DD)/k_GDP (j = exports,
    imports with s = -1, other = GDP - DD - X + M):
    R_GDP - R_DD = sum_j [e_j(b) - R_DD e_j(a)] / P_GDP(a), exactly. The annual link gives
    docs/methods.md's pi_GDP - pi_DD = w_X (pi_X - pi_DD) - w_M (pi_M - pi_DD) + other, with
    K-share weights w = K_j/K_GDP. Two links combine as
    gap = gap_1 R_GDP,2 + R_DD,1 gap_2, part by part, so the parts add up to the gap.
    First link (docs/derivations/first_link.md, section 6): the annual link of the second
    year needs that year only; in the first year the ends are valued at that year's average
    prices (`first_year_values`: K = C, a quarter at CLV C/CLV_y from its own chain-linked
    values), so the gaps of the quarters within the first year, across its end and year on
    year in the second year exist where the series compared have chain-linked values there
    (a domestic demand summed from its parts has none: v is never summed).

    *CPI*: a monthly CPI enters as the mean of its levels over the quarter (common
    practice); growth gaps are differences of growth rates, not level ratios.

    References
    ----------
    ESA 95 paras 10.57-10.59 (trading gain, numeraire); 1993 SNA para 16.152; IMF,
    *Quarterly National Accounts Manual*, 2017 edition, ch. 8; McCully, Moyer & Stewart,
    Survey of Current Business, Nov 2007 (CPI vs PCE price index); ECB Economic Bulletin
    4/2024, box.
    """
    if numeraire not in NUMERAIRES:
        raise ConfigError(f"price gaps: numeraire {numeraire!r} is not one of {', '.join(NUMERAIRES)}")
    wide = pivot_bases(levels)
    positive = [GDP, EXPORTS, IMPORTS, HOUSEHOLD, DOMESTIC_DEMAND]
    raise_nonpositive(wide.loc[wide["item"].isin(positive)], ("current", "chain_linked"))
    series = {"Z": _series(wide, hierarchy, GDP), "X": _series(wide, hierarchy, EXPORTS),
              "M": _series(wide, hierarchy, IMPORTS)}
    gaps, household = _gaps(wide, hierarchy, series)
    parts = [_trade(wide, hierarchy, series, numeraire, reference_year), gaps]
    if cpi is not None:
        parts.append(_cpi(cpi, household))
    parts = [p for p in parts if len(p)]
    out = pd.concat(parts, ignore_index=True) if parts else pd.DataFrame()
    if out.empty:
        return pd.DataFrame(columns=MEASURE_COLUMNS).astype(
            {"year": "int64", "quarter": "int64", "value": "float64", "economy": "str", "measure": "str"})
    out = out.dropna(subset=["value"])
    out["period"] = period_label(out["year"], out["quarter"]).to_numpy()
    out = out.sort_values(["economy", "measure", "horizon", "frequency", "year", "quarter"],
                          kind="mergesort", ignore_index=True)
    return out[MEASURE_COLUMNS]


def _series(wide: pd.DataFrame, hierarchy: Hierarchy, item: str | None,
            parts: tuple[tuple[str, int], ...] | None = None) -> pd.DataFrame:
    """c, k, v of ``item``; current and previous-year values the panel lacks are filled with
    the signed sum of its parts (from ``hierarchy`` unless given); v is never summed.

    A part's own value is used where the panel has it, else the sum of the part's own parts,
    and so on down the hierarchy; an item whose own rows cover every economy with both values
    is used as it is. The sum is left missing where some part has no value. All the parts
    needed are taken from the panel in one merge and summed with one group-by per depth of
    the hierarchy over all of them (`_filled_from_parts`).
    """
    cols = {"current": "c", "previous_year": "k", "chain_linked": "v"}
    own = wide.loc[wide["item"].eq(item), _KEYS + list(cols)].rename(columns=cols).reset_index(drop=True)
    if parts is None:
        parts = tuple((c.item, c.sign) for c in hierarchy.aggregates.get(item, ()))
    complete = _complete_items(wide)
    if not parts or item in complete:
        return own
    summed = _filled_from_parts(wide, _part_tree(hierarchy, parts, complete))
    m = own.merge(summed, on=_KEYS, how="outer", suffixes=("", "_sum"))
    return m.assign(c=m["c"].fillna(m["c_sum"]), k=m["k"].fillna(m["k_sum"]))[_KEYS + ["c", "k", "v"]]


def _complete_items(wide: pd.DataFrame) -> set[str]:
    """Items whose own rows cover every economy of the panel with current and previous-year values."""
    full = wide[["current", "previous_year"]].notna().all(axis=1)
    g = wide.assign(full=full).groupby("item").agg(n=("economy", "nunique"), full=("full", "all"))
    return set(g.index[(g["n"] == wide["economy"].nunique()) & g["full"]])


def _part_tree(hierarchy: Hierarchy, parts: tuple[tuple[str, int], ...], complete: set[str]) -> pd.DataFrame:
    """The tree of parts below an item, one row per place of a node in it.

    Columns ``pos`` (the place, numbered depth first in the order of the parts), ``parent``
    (place of the aggregate it is a part of; -1 for the item's own parts), ``depth``,
    ``node``, ``sign`` (its sign in that aggregate) and ``n_parts`` (its own parts in the
    tree: none for a node without parts in ``hierarchy`` or a complete one, whose values
    are used as they are). Built from the hierarchy alone (a few rows), never from the data.
    """
    rows: list[tuple[int, int, int, str, int]] = []
    stack = [(-1, 1, sub, sign) for sub, sign in reversed(parts)]
    while stack:  # depth first over the hierarchy's structure
        parent, depth, node, sign = stack.pop()
        pos = len(rows)
        rows.append((pos, parent, depth, node, sign))
        if node not in complete:
            below = hierarchy.aggregates.get(node, ())
            stack.extend((pos, depth + 1, c.item, c.sign) for c in reversed(below))
    tree = pd.DataFrame(rows, columns=["pos", "parent", "depth", "node", "sign"])
    return tree.assign(n_parts=tree["pos"].map(tree["parent"].value_counts()).fillna(0).astype("int64"))


def _filled_from_parts(wide: pd.DataFrame, tree: pd.DataFrame) -> pd.DataFrame:
    """Signed sums c_sum, k_sum of an item's parts, per economy and period.

    One merge puts the panel's values on every place of the tree at once; the sums then
    climb the tree one depth at a time, each depth one group-by over all its places
    (bottom-up, as the aggregates are formed in ``sql/int_aggregate.sql``). A place keeps its
    own value where the panel has one, else takes the signed sum of its parts when all of
    them have a value. Keys: every economy and period where some place has a row.
    """
    vals = wide[[*_KEYS, "item", "current", "previous_year"]].rename(
        columns={"item": "node", "current": "c", "previous_year": "k"})
    places = tree.drop(columns="node")
    at = tree.merge(vals, on="node")[[*places.columns, *_KEYS, "c", "k"]]
    n_parts = pd.concat([pd.Series({-1: int(tree["parent"].eq(-1).sum())}), tree.set_index("pos")["n_parts"]])
    for depth in range(int(tree["depth"].max()), 0, -1):  # over the tree's depth, not its nodes
        level = at.loc[at["depth"].eq(depth)].sort_values(["pos", *_KEYS], kind="mergesort")
        signed = level.assign(c=level["c"] * level["sign"], k=level["k"] * level["sign"])
        g = signed.groupby(["parent", *_KEYS])[["c", "k"]]
        total, count = g.sum(), g.count()
        need = n_parts.reindex(total.index.get_level_values("parent")).to_numpy()[:, None]
        sums = total.where(count.to_numpy() == need).reset_index().rename(columns={"parent": "pos"})
        if depth == 1:
            return sums.drop(columns="pos").rename(columns={"c": "c_sum", "k": "k_sum"})
        up = at.loc[at["depth"].eq(depth - 1), ["pos", *_KEYS, "c", "k"]].merge(
            sums, on=["pos", *_KEYS], how="outer", suffixes=("", "_sum"))
        up = up.assign(c=up["c"].fillna(up["c_sum"]), k=up["k"].fillna(up["k_sum"]))
        at = pd.concat([at.loc[at["depth"].lt(depth - 1)],
                        places.merge(up[["pos", *_KEYS, "c", "k"]], on="pos")], ignore_index=True)
    return pd.DataFrame(columns=[*_KEYS, "c_sum", "k_sum"])


def _reference_years(z: pd.DataFrame, reference_year: int | None) -> pd.DataFrame:
    """Reference year per economy: given, or found in GDP's annual values (`reference_year_candidates`)."""
    if reference_year is not None:
        return pd.DataFrame({"economy": z["economy"].unique(), "ref": int(reference_year)})
    ann = z.loc[z["frequency"].eq("A")].dropna(subset=["c", "v"])
    levels = pd.concat([ann.assign(price_basis="current", value=ann["c"]),
                        ann.assign(price_basis="chain_linked", value=ann["v"])], ignore_index=True)
    found = reference_year_candidates(levels.assign(item=GDP)).drop_duplicates("economy")
    return found.rename(columns={"year": "ref"})[["economy", "ref"]]


def _rebase(df: pd.DataFrame, cols: list[str], refs: pd.DataFrame) -> pd.DataFrame:
    """Divide ``cols`` by their annual values in each economy's reference year (1 if none)."""
    base = df.loc[df["frequency"].eq("A"), ["economy", "year", *cols]].merge(
        refs, left_on=["economy", "year"], right_on=["economy", "ref"])
    factor = df[["economy"]].merge(base[["economy", *cols]], on="economy", how="left")
    return df[cols] / factor[cols].fillna(1.0).to_numpy()


def _trade(wide: pd.DataFrame, hierarchy: Hierarchy, series: dict[str, pd.DataFrame], numeraire: str,
           reference_year: int | None) -> pd.DataFrame:
    """terms_of_trade, trading_gain and real_gdi."""
    frames = [series[label][_KEYS + ["c", "v"]].rename(columns={"c": "c" + s, "v": "v" + s})
              for label, s in (("Z", "z"), ("X", "x"), ("M", "m"))]
    t = frames[0].merge(frames[1], on=_KEYS).merge(frames[2], on=_KEYS).dropna()
    if t.empty:
        return t
    refs = _reference_years(t.rename(columns={"cz": "c", "vz": "v"}), reference_year)
    if reference_year is not None:
        _require_reference(t, refs)
    t = t.assign(**{"p" + s: t["c" + s] / t["v" + s] for s in "zxm"}).reset_index(drop=True)
    t[["pz", "px", "pm"]] = _rebase(t, ["pz", "px", "pm"], refs)
    if numeraire == "import":
        p = t["pm"]
    elif numeraire == "export":
        p = t["px"]
    elif numeraire == "trade_average":
        p = 0.5 * (t["px"] + t["pm"])
    else:
        lacking = sorted(set(t["economy"]) - set(refs["economy"]))
        if lacking:
            raise InputError([Problem(economy=e, item=GDP, price_basis="chain_linked",
                                      reason="no year with chain-linked GDP equal to current GDP: "
                                             "pass reference_year for the domestic final demand numeraire")
                              for e in lacking])
        p = t[_KEYS].merge(_final_demand_deflator(wide, hierarchy, refs), on=_KEYS, how="left")["p"].to_numpy()
    gain = (t["cx"] - t["cm"]) / p - (t["cx"] / t["px"] - t["cm"] / t["pm"])
    measures = {"terms_of_trade": 100.0 * t["px"] / t["pm"], "trading_gain": gain,
                "real_gdi": t["cz"] / t["pz"] + gain}
    return pd.concat([t[_KEYS].assign(measure=k, horizon="", value=np.asarray(v, dtype="float64"))
                      for k, v in measures.items()], ignore_index=True)


def _require_reference(t: pd.DataFrame, refs: pd.DataFrame) -> None:
    """With an explicit reference year, GDP, exports and imports need an annual value there."""
    ann = t.loc[t["frequency"].eq("A"), ["economy", "year"]].merge(
        refs, left_on=["economy", "year"], right_on=["economy", "ref"])
    lacking = sorted(set(t["economy"]) - set(ann["economy"]))
    if lacking:
        raise InputError([Problem(economy=e, item=f"{GDP},{EXPORTS},{IMPORTS}", period=str(int(refs["ref"].iloc[0])),
                                  reason="no annual value in the reference year") for e in lacking])


def _final_demand_deflator(wide: pd.DataFrame, hierarchy: Hierarchy, refs: pd.DataFrame) -> pd.DataFrame:
    """Deflator ratio of P3 + P51G chained by annual overlap, 1 in the reference year."""
    # the chain starts in each economy's first year with current prices (P = 1 there, no
    # previous-year prices needed); its quarters are valued at that year's average prices
    s = _series(wide, hierarchy, None, DOMESTIC_FINAL_DEMAND_PARTS).dropna(subset=["c"])
    ann = s.loc[s["frequency"].eq("A")].sort_values(["economy", "year"], kind="mergesort")
    ann = ann.loc[ann["k"].notna() | ~ann.duplicated("economy")]
    step = ann.groupby("economy")["year"].diff()
    if (step > 1).any():
        bad = ann.loc[step > 1]
        raise InputError([Problem(economy=r.economy, item="P3+P51G", period=str(r.year),
                                  reason="years missing before this one: the final demand deflator cannot be chained")
                          for r in bad.itertuples(index=False)])
    link = np.where(step.isna(), 1.0, ann["c"] / ann["k"])
    ann = ann.assign(p=np.exp(pd.Series(np.log(link), index=ann.index).groupby(ann["economy"]).cumsum()))
    ann = ann.reset_index(drop=True)
    ann["p"] = _rebase(ann, ["p"], refs)["p"]
    q = s.loc[s["frequency"].eq("Q")].merge(
        ann[["economy", "year", "c", "k", "p"]].rename(columns={"c": "ca", "k": "ka", "p": "pa"}), on=["economy", "year"])
    q = q.assign(p=((q["c"] / q["k"]) * (q["ka"] / q["ca"])).fillna(1.0) * q["pa"])
    return pd.concat([ann[_KEYS + ["p"]], q[_KEYS + ["p"]]], ignore_index=True)


def _gaps(wide: pd.DataFrame, hierarchy: Hierarchy, trade: dict[str, pd.DataFrame]
          ) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Growth gaps GDP vs domestic demand (split), household vs GDP; household growth."""
    series = {**trade, "HH": _series(wide, hierarchy, HOUSEHOLD),
              "DD": _series(wide, hierarchy, DOMESTIC_DEMAND, DOMESTIC_DEMAND_PARTS)}
    # first years at their own average prices (from each series' own chain-linked values)
    ck = {lab: first_year_values(s.dropna(subset=["c"]).assign(item=lab))[_KEYS + ["c", "k", "unpriced"]]
          for lab, s in series.items()}
    o = ck["Z"]
    for label, sign in (("DD", -1), ("X", -1), ("M", 1)):  # the rest of GDP at both price bases
        o = o.merge(ck[label], on=_KEYS, suffixes=("", "_j"))
        o = o.assign(c=o["c"] + sign * o["c_j"], k=o["k"] + sign * o["k_j"],
                     unpriced=o["unpriced"] | o["unpriced_j"]).drop(columns=["c_j", "k_j", "unpriced_j"])
    ck["O"] = o
    long = pd.concat([v.assign(item=k) for k, v in ck.items()], ignore_index=True)
    st = step_values(long)
    keep = st["ok"] & ~st["unpriced"]
    w = st.loc[keep].set_index(_ROW + ["item"])[["ca1", "ka1", "cb1", "kb1", "ca2", "ka2", "cb2", "kb2"]]
    w = w.unstack("item")
    nan = np.full(len(w), np.nan)
    arrays = {key: w[key].to_numpy(dtype="float64") for key in w.columns}

    def col(name: str, label: str) -> np.ndarray:
        return arrays.get((name, label), nan)

    def price(label: str, end: str, n: str) -> np.ndarray:
        return col(f"c{end}{n}", label) / col(f"k{end}{n}", label)

    r = {(lab, n): price(lab, "b", n) / price(lab, "a", n) for lab in ("Z", "DD", "HH") for n in "12"}
    parts = {}
    for label, sign in (("X", 1.0), ("M", -1.0), ("O", 1.0)):
        link = {}
        for n in "12":
            e = {end: sign * (col(f"c{end}{n}", label) - col(f"k{end}{n}", label) * price("DD", end, n))
                 / col(f"k{end}{n}", "Z") for end in "ab"}
            link[n] = (e["b"] - r["DD", n] * e["a"]) / price("Z", "a", n)
        parts[label] = 100.0 * (link["1"] * r["Z", "2"] + r["DD", "1"] * link["2"])
    growth = {lab: 100.0 * (r[lab, "1"] * r[lab, "2"] - 1.0) for lab in ("Z", "DD", "HH")}
    measures = {
        "gap_gdp_vs_domestic_demand": growth["Z"] - growth["DD"],
        "gap_export_price_part": parts["X"],
        "gap_import_price_part": parts["M"],
        "gap_other_part": parts["O"],
        "gap_household_vs_gdp": growth["HH"] - growth["Z"],
    }
    keys = w.index.to_frame(index=False)
    out = pd.concat([keys.assign(measure=k, value=v) for k, v in measures.items()], ignore_index=True)
    household = keys.assign(hh=growth["HH"]).dropna(subset=["hh"])
    return out, household


def _cpi(cpi: pd.DataFrame, household: pd.DataFrame) -> pd.DataFrame:
    """cpi_quarterly / cpi_annual levels, cpi_growth and gap_cpi_vs_household."""
    levels = _cpi_levels(cpi)
    h = with_horizons(levels)
    old = levels.rename(columns={"year": "old_year", "quarter": "old_quarter", "value": "old"})
    h = h.merge(old[["economy", "frequency", "old_year", "old_quarter", "old"]],
                on=["economy", "frequency", "old_year", "old_quarter"], how="inner")
    h["value"] = 100.0 * (h["value"] / h["old"] - 1.0)
    growth = h[_ROW + ["value"]].assign(measure="cpi_growth")
    gap = growth.merge(household, on=_ROW, how="inner")
    gap = gap.assign(value=gap["value"] - gap["hh"], measure="gap_cpi_vs_household").drop(columns="hh")
    lv = levels.assign(horizon="", measure=np.where(levels["frequency"].eq("Q"), "cpi_quarterly", "cpi_annual"))
    return pd.concat([lv, growth, gap], ignore_index=True)


def _cpi_levels(cpi: pd.DataFrame) -> pd.DataFrame:
    """Quarterly (mean of three months) and annual (mean of four quarters) CPI levels."""
    return index_levels(cpi, ("CPI",), label="CPI").drop(columns="item")


def index_levels(frame: pd.DataFrame, items: tuple[str, ...], *, label: str) -> pd.DataFrame:
    """Quarterly (mean of three months) and annual (mean of four quarters) levels of price indexes.

    ``frame``: rows of the price indexes ``items`` (columns as the ``cpi`` argument of
    `price_gaps`); ``label`` names them in problems. Returns columns economy, item,
    frequency, year, quarter (0 for years), value. One frequency per economy and item.
    """
    need = ["economy", "item", "price_basis", "frequency", "year", "value"]
    missing = [c for c in need if c not in frame.columns]
    if missing:
        raise InputError([Problem(file="cpi", reason=f"{label} frame lacks column(s) {', '.join(missing)}")])
    df = frame.reset_index(drop=True)
    freq = df["frequency"].astype(str)
    sub = pd.to_numeric(df["month"] if "month" in df else pd.Series(np.nan, index=df.index), errors="coerce")
    quarter = pd.to_numeric(df["quarter"] if "quarter" in df else pd.Series(np.nan, index=df.index),
                            errors="coerce")
    value = pd.to_numeric(df["value"], errors="coerce")
    checks = {
        f"item is not {label}": ~df["item"].isin(items),
        "price_basis is not index": df["price_basis"].ne("index"),
        "frequency is neither M nor Q": ~freq.isin(["M", "Q"]),
        "monthly row without a month 1..12": freq.eq("M") & ~sub.isin(range(1, 13)),
        "quarterly row without a quarter 1..4": freq.eq("Q") & ~quarter.isin(range(1, 5)),
        "value missing, zero or negative": ~(value > 0),
    }
    problems = [Problem(file="cpi", row=int(i), economy=str(df.at[i, "economy"]), item=str(df.at[i, "item"]),
                        period=str(df.at[i, "year"]), reason=reason)
                for reason, bad in checks.items() for i in df.index[bad.to_numpy()]]
    df = df.assign(frequency=freq, year=df["year"].astype("int64"), value=value,
                   quarter=np.where(freq.eq("M"), (sub - 1) // 3 + 1, quarter), sub=np.where(freq.eq("M"), sub, 0))
    if not problems:
        dup = df.duplicated(["economy", "item", "year", "quarter", "sub"], keep="first")
        problems += [Problem(file="cpi", row=int(i), economy=str(df.at[i, "economy"]), item=str(df.at[i, "item"]),
                             period=str(df.at[i, "year"]), reason="value given more than once") for i in df.index[dup]]
        both = df.groupby(["economy", "item"])["frequency"].nunique()
        problems += [Problem(file="cpi", economy=str(e), item=str(i), reason="monthly and quarterly rows mixed")
                     for e, i in both.index[both > 1]]
    if problems:
        raise InputError(problems)
    df["quarter"] = df["quarter"].astype("int64")
    key = ["economy", "item", "year", "quarter"]
    g = df.groupby(key)["value"]
    months = df.groupby(key)["frequency"].first().eq("M")
    q = pd.DataFrame({"value": g.mean(), "n": g.size(), "monthly": months}).reset_index()
    q = q.loc[q["n"].eq(np.where(q["monthly"], 3, 1))].assign(frequency="Q")
    a = q.groupby(["economy", "item", "year"])["value"].agg(["mean", "size"]).reset_index()
    a = a.loc[a["size"].eq(4)].rename(columns={"mean": "value"}).assign(frequency="A", quarter=0)
    cols = ["economy", "item", "frequency", "year", "quarter", "value"]
    out = pd.concat([q[cols], a[cols]], ignore_index=True)
    out["quarter"] = out["quarter"].astype("int64")
    return out
