"""The reference year of chain-linked volumes: finding it, and moving volumes to another.

In the reference year r the annual chain-linked volume of every series equals its value at
current prices, CLV_r = C_r; `reference_year_candidates` finds r from the data (the one
implementation of that test, used to re-reference given volumes, to rebase deflators in the
price gaps and to tell a change of reference between two vintages), `rereference` moves
volumes to another year.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from valvol.errors import InputError, Problem
from valvol.frames import sort_levels
from valvol.hierarchy import Hierarchy
from valvol.methods.panel import item_flags, levels_wide, raise_problems, to_levels, top_aggregates

#: Relative tolerance of "annual chain-linked = current": the rounding of published volumes
#: (five significant digits, common practice) passes, a year apart does not (its price level
#: differs by the year's inflation).
REFERENCE_TOLERANCE = 1e-4


def reference_year_candidates(levels: pd.DataFrame, *, tolerance: float = REFERENCE_TOLERANCE) -> pd.DataFrame:
    """Every year tied for first rank as the reference year of each economy, best first.

    Parameters
    ----------
    levels
        Levels panel (or the published ``levels`` table: economy, period or year, item,
        price_basis, value, frequency) with annual ``current`` and ``chain_linked`` values.

    Returns
    -------
    DataFrame
        Columns economy, year; economies without any matching year are absent.

    Notes
    -----
    A year matches an item when |CLV_y / C_y - 1| < tolerance. Years rank by: B1GQ matches,
    then the number of matching items, then the B1GQ deviation, then the year; several years
    can tie for first (e.g. CLV = C in every year).
    """
    need = ["economy", "item", "price_basis", "frequency", "value"]
    missing = [c for c in need if c not in levels.columns] + ([] if {"year", "period"} & set(levels) else ["year"])
    if missing:
        raise InputError([Problem(file="levels", reason=f"table lacks column(s) {', '.join(missing)}")])
    lv = levels.loc[levels["frequency"].eq("A") & levels["price_basis"].isin(["current", "chain_linked"])]
    lv = lv.assign(year=lv["year"] if "year" in lv else lv["period"].str[:4].astype("int64"))
    wide = lv.pivot_table(index=["economy", "year", "item"], columns="price_basis", values="value",
                          aggfunc="first", observed=True).reindex(columns=["current", "chain_linked"]).reset_index()
    wide = wide.loc[wide["current"].ne(0) & wide["current"].notna() & wide["chain_linked"].notna()]
    dev = (wide["chain_linked"] / wide["current"] - 1.0).abs()
    gdp = wide["item"].eq("B1GQ")
    y = pd.DataFrame({"economy": wide["economy"].astype(str), "year": wide["year"].astype("int64"),
                      "match": dev < tolerance, "gdp_match": gdp & (dev < tolerance),
                      "gdp_dev": dev.where(gdp)})
    y = y.groupby(["economy", "year"], as_index=False).agg(
        gdp_match=("gdp_match", "any"), n_match=("match", "sum"), gdp_dev=("gdp_dev", "min"))
    y = y.loc[y["gdp_match"] | y["n_match"].gt(0)]
    y = y.sort_values(["economy", "gdp_match", "n_match", "gdp_dev", "year"],
                      ascending=[True, False, False, True, True], kind="mergesort", ignore_index=True)
    best = y.drop_duplicates("economy")[["economy", "gdp_match", "n_match"]]
    return y.merge(best, on=["economy", "gdp_match", "n_match"], sort=False)[["economy", "year"]]


def reference_years(levels: pd.DataFrame, *, tolerance: float = REFERENCE_TOLERANCE) -> pd.DataFrame:
    """The first-ranked reference year of each economy (`reference_year_candidates`).

    Returns
    -------
    DataFrame
        Columns economy, reference_year (Int64); economies without a matching year are absent.
    """
    first = reference_year_candidates(levels, tolerance=tolerance).drop_duplicates("economy")
    return pd.DataFrame({"economy": first["economy"].astype(str),
                         "reference_year": first["year"].astype("Int64")}).reset_index(drop=True)


def reference_year_of(levels: pd.DataFrame) -> dict[str, int]:
    """`reference_years` as a mapping economy -> year."""
    found = reference_years(levels)
    return dict(zip(found["economy"], found["reference_year"].astype("int64"), strict=True))


def rereference(chained: pd.DataFrame, current: pd.DataFrame, reference_year: int, *,
                hierarchy: Hierarchy | None = None) -> pd.DataFrame:
    """Move chain-linked volumes to another reference year.

    Parameters
    ----------
    chained
        Levels panel; its ``chain_linked`` rows (annual and quarterly) are re-referenced.
    current
        Levels panel holding the annual ``current`` values of the new reference year.
    reference_year
        The new reference year r'.
    hierarchy
        Tells the sign-changing items and their top aggregates (default:
        `Hierarchy.default`).

    Returns
    -------
    DataFrame
        Levels panel of ``chain_linked`` rows at the new reference.

    Raises
    ------
    InputError
        A series without annual current-price and chain-linked values in r', or with a
        non-positive factor.

    Notes
    -----
    One annual factor per series for its annual and quarterly values (docs/methods.md §1):
    CLV'_t = CLV_t C_{r'} / CLV_{r'}. Growth rates are unchanged; the quarters of r' no
    longer add up. A sign-changing item takes the factor of its top aggregate (consistent
    with `chain_link`, where its volume is re-expressed with that aggregate's deflator);
    without one, its own factor.

    References
    ----------
    ABS 5216.0 (2020-21), ch. 6 ¶6.29-6.31.
    """
    hierarchy = hierarchy if hierarchy is not None else Hierarchy.default()
    ch = levels_wide(chained, {"chain_linked": "v"})
    cur = levels_wide(current, {"current": "c"})
    r = int(reference_year)
    keys = ["economy", "item"]
    f = ch[keys].drop_duplicates()
    f = f.merge(ch.loc[(ch["frequency"] == "A") & (ch["year"] == r), keys + ["v"]], on=keys, how="left")
    f = f.merge(cur.loc[(cur["frequency"] == "A") & (cur["year"] == r), keys + ["c"]], on=keys, how="left")
    f["factor"] = f["c"] / f["v"]
    f["sc"] = item_flags(f["item"], hierarchy.is_sign_changing)
    ok = np.isfinite(f["factor"]) & (f["factor"] > 0)
    tops = top_aggregates(hierarchy, f[f["sc"]], f[~f["sc"] & ok])
    top_f = f[keys + ["factor"]].rename(columns={"item": "top", "factor": "top_factor"})
    f = f.merge(tops.merge(top_f, on=["economy", "top"]), on=keys, how="left")
    f["factor"] = np.where(f["top_factor"].notna(), f["top_factor"], f["factor"])
    bad = ~(np.isfinite(f["factor"]) & (f["factor"] > 0))
    raise_problems([Problem(economy=row.economy, item=row.item, period=str(r),
                    price_basis="current" if pd.isna(row.c) else "chain_linked",
                    reason="no annual current-price and chain-linked values in the new reference year "
                           "(or their ratio is not positive): the series cannot be re-referenced")
            for row in f[bad].itertuples(index=False)])
    out = ch.merge(f[keys + ["factor"]], on=keys)
    out["value"] = out["v"] * out["factor"]
    return sort_levels(to_levels(out, "value"))
