"""Implicit deflators from current prices and chain-linked volumes, and their re-referencing.

The implicit deflator of a series is its value at current prices over its chain-linked
volume, times 100. Annual deflators come from the annual values (value-weighted), never
from the mean of the quarterly deflators. Sign-changing items (inventories, valuables,
discrepancy, external balance; `Hierarchy.is_sign_changing`) get no deflator.

The module also holds the small panel utilities the other price methods share:
`pivot_bases` (one row per series and period with one column per price basis) and
`with_horizons` (the comparison period of every row for each growth horizon).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from valvol.errors import InputError, Problem
from valvol.frames import KEY, PRICE_BASES, period_label
from valvol.hierarchy import Hierarchy

#: Growth horizons: previous period (quarter or year) and the same period a year earlier.
HORIZONS: tuple[str, str] = ("prev_period", "prev_year")
#: Key of a series-period once the price basis is spread into columns.
WIDE_KEY = ["economy", "item", "frequency", "year", "quarter"]
DEFLATOR_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "item", "deflator"]
GROWTH_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "item", "horizon", "pct"]


def pivot_bases(levels: pd.DataFrame) -> pd.DataFrame:
    """Spread a levels panel into one column per price basis.

    Parameters
    ----------
    levels
        Levels panel (`valvol.frames`); rows with another price basis are ignored.

    Returns
    -------
    DataFrame
        Columns economy, item, frequency, year, quarter, period, current, previous_year,
        chain_linked (NaN where the panel has no such value).

    Raises
    ------
    InputError
        Columns missing, or the same key given twice.
    """
    missing = [c for c in ("economy", "item", "price_basis", "frequency", "year", "quarter", "value")
               if c not in levels.columns]
    if missing:
        raise InputError([Problem(reason=f"levels panel lacks column(s) {', '.join(missing)}")])
    df = levels.loc[levels["price_basis"].isin(PRICE_BASES), KEY + ["value"]].copy()
    df["year"] = df["year"].astype("int64")
    df["quarter"] = df["quarter"].astype("int64")
    df["value"] = df["value"].astype("float64")
    dup = df.duplicated(KEY, keep="first")
    if dup.any():
        raise InputError([
            Problem(economy=r.economy, item=r.item, price_basis=r.price_basis,
                    period=_label(r.year, r.quarter), reason="value given more than once")
            for r in df.loc[dup].itertuples(index=False)
        ])
    wide = df.dropna(subset=["value"]).set_index(KEY)["value"].unstack("price_basis")
    wide = wide.reindex(columns=list(PRICE_BASES)).reset_index()
    wide.columns.name = None
    wide.insert(5, "period", period_label(wide["year"], wide["quarter"]).to_numpy())
    return wide.sort_values(WIDE_KEY, kind="mergesort", ignore_index=True)


def with_horizons(df: pd.DataFrame) -> pd.DataFrame:
    """Repeat each row once per horizon and name its comparison period.

    Adds columns ``horizon``, ``old_year``, ``old_quarter`` and ``cross`` (True when the
    comparison period lies in the previous calendar year, i.e. the link crosses a year
    boundary: quarterly ``prev_year`` rows and first quarters under ``prev_period``).
    Annual rows carry the change on the previous year under both horizon labels.
    """
    q = df["frequency"].eq("Q").to_numpy()
    quarter = df["quarter"].to_numpy()
    year = df["year"].to_numpy()
    prev_period = df.assign(
        horizon="prev_period",
        old_year=np.where(q & (quarter > 1), year, year - 1),
        old_quarter=np.where(q, np.where(quarter > 1, quarter - 1, 4), 0),
    )
    prev_year = df.assign(horizon="prev_year", old_year=year - 1, old_quarter=quarter)
    out = pd.concat([prev_period, prev_year], ignore_index=True)
    out["cross"] = out["frequency"].eq("Q") & (out["horizon"].eq("prev_year") | out["quarter"].eq(1))
    return out


def implicit_deflators(
    levels: pd.DataFrame, *, hierarchy: Hierarchy, reference_year: int | None = None
) -> pd.DataFrame:
    """Implicit deflators of every series with current and chain-linked values.

    Parameters
    ----------
    levels
        Levels panel with ``current`` and ``chain_linked`` rows, quarterly and annual.
    hierarchy
        Declares the sign-changing items, which get no deflator.
    reference_year
        If given, deflators are re-referenced so that each series' *annual* deflator of that
        year is 100; if None they are exactly ``100 * current / chain_linked``.

    Returns
    -------
    DataFrame
        Columns economy, period, frequency, year, quarter, item, deflator.

    Raises
    ------
    InputError
        A zero or negative current or chain-linked value of an item that is not
        sign-changing, or (with ``reference_year``) a series without an annual value in the
        reference year; each problem names economy, item, period.

    Notes
    -----
    D_t = 100 c_t / CLV_t; the annual D_y = 100 C_y / CLV_y, the value-weighted deflator,
    which differs from the mean of the quarterly deflators. Within one annual link
    D_y / D_{y-1} = C_y / K_y, a Paasche price index. Re-referencing to r:
    D'_t = 100 D_t / D_r, D_r the annual deflator of r; growth rates are unchanged.
    Sign-changing items (P52, P53, B11, YA1, ``*_RESIDUAL``) have numerator and denominator
    near zero or of opposite sign and get no deflator (METHODS.md section 1).

    References
    ----------
    BEA, Survey of Current Business, Nov 1998, box 4 (chained dollars, implicit price
    deflators); ONS, Blue Book 2013, ch. 1 (GDP implied deflator); ABS 5216.0 (2020-21),
    ch. 6, paras 6.29-6.31 and Annex paras 6A.5-6A.6; ESA 95 para 10.64.

    Examples
    --------
    >>> from valvol.hierarchy import Hierarchy
    >>> lv = pd.DataFrame({"economy": "XX", "item": "P6", "price_basis": ["current", "chain_linked"],
    ...                    "frequency": "A", "year": 2021, "quarter": 0, "period": "2021",
    ...                    "value": [110.0, 100.0]})
    >>> implicit_deflators(lv, hierarchy=Hierarchy.default())["deflator"].tolist()
    [110.0]
    """
    wide = pivot_bases(levels)
    positive = ~wide["item"].map(hierarchy.is_sign_changing).astype(bool)
    wide = wide.loc[positive]
    _raise_non_positive(wide, ("current", "chain_linked"))
    d = wide.dropna(subset=["current", "chain_linked"]).copy()
    d["deflator"] = 100.0 * d["current"] / d["chain_linked"]
    if reference_year is not None:
        base = d.loc[d["frequency"].eq("A") & d["year"].eq(int(reference_year)), ["economy", "item", "deflator"]]
        d = d.merge(base.rename(columns={"deflator": "base"}), on=["economy", "item"], how="left")
        lacking = d.loc[d["base"].isna(), ["economy", "item"]].drop_duplicates()
        if len(lacking):
            raise InputError([
                Problem(economy=r.economy, item=r.item, period=str(reference_year), price_basis="chain_linked",
                        reason="no annual value in the reference year: cannot re-reference its deflator")
                for r in lacking.itertuples(index=False)
            ])
        d["deflator"] = 100.0 * d["deflator"] / d["base"]
    d = d.sort_values(WIDE_KEY, kind="mergesort", ignore_index=True)
    return d[DEFLATOR_COLUMNS]


def deflator_growth(deflators: pd.DataFrame) -> pd.DataFrame:
    """Growth rates (percent) of a deflator table over both horizons.

    Parameters
    ----------
    deflators
        Output of `implicit_deflators`.

    Returns
    -------
    DataFrame
        Columns economy, period, frequency, year, quarter, item, horizon, pct; one row per
        period whose comparison period is present (quarters: previous quarter and same
        quarter a year earlier; years: previous year, under both horizon labels).

    Notes
    -----
    pct = 100 (D_t / D_{t_o} - 1), t_o the comparison period. Re-referencing leaves it
    unchanged (METHODS.md section 1).
    """
    d = deflators[["economy", "item", "frequency", "year", "quarter", "deflator"]]
    h = with_horizons(d)
    old = d.rename(columns={"year": "old_year", "quarter": "old_quarter", "deflator": "old"})
    m = h.merge(old, on=["economy", "item", "frequency", "old_year", "old_quarter"], how="inner")
    m["pct"] = 100.0 * (m["deflator"] / m["old"] - 1.0)
    m["period"] = period_label(m["year"], m["quarter"]).to_numpy()
    m = m.sort_values(WIDE_KEY + ["horizon"], kind="mergesort", ignore_index=True)
    return m[GROWTH_COLUMNS]


def _raise_non_positive(wide: pd.DataFrame, bases: tuple[str, ...]) -> None:
    """InputError for every zero or negative value of ``bases`` in ``wide``."""
    problems = []
    for basis in bases:
        bad = wide.loc[wide[basis] <= 0]
        problems += [
            Problem(economy=r.economy, item=r.item, period=r.period, price_basis=basis,
                    reason=f"value {getattr(r, basis):g} is zero or negative for an item that must be positive")
            for r in bad.itertuples(index=False)
        ]
    if problems:
        raise InputError(problems)


def _label(year: int, quarter: int) -> str:
    return f"{year}" if quarter == 0 else f"{year}-Q{quarter}"
