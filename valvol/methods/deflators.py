"""Implicit deflators from current prices and chain-linked volumes, their growth and re-referencing.

The implicit deflator of a series is its value at current prices over its chain-linked
volume, times 100; growth rates are 100 (x_t / x_base - 1). Both formulas have one
implementation, the set-based statements ``sql/int_deflators.sql`` and ``sql/int_growth.sql``
that the derive stage runs on every chunk of economies; the functions here run the same
statements on a frame in a scratch in-memory database, for tests and for library use.
Annual deflators come from the annual values (value-weighted), never from the mean of the
quarterly deflators. Sign-changing items (inventories, valuables, discrepancy, external
balance and their breakdowns; `Hierarchy.is_sign_changing`) get no deflator.
"""

from __future__ import annotations

import pandas as pd

from valvol import db
from valvol.errors import InputError, Problem
from valvol.frames import LEVEL_COLUMNS, period_label
from valvol.hierarchy import Hierarchy
from valvol.methods.panel import pivot_bases, raise_nonpositive

#: Growth horizons: previous period (quarter or year) and the same period a year earlier.
HORIZONS: tuple[str, str] = ("prev_period", "prev_year")
#: Key of a series-period once the price basis is spread into columns.
WIDE_KEY = ["economy", "item", "frequency", "year", "quarter"]
DEFLATOR_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "item", "deflator"]
GROWTH_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "item", "horizon", "pct"]


def _scratch(levels: pd.DataFrame, hierarchy: Hierarchy):
    con = db.connect(threads=1)
    db.register(con, "method_rows", levels[LEVEL_COLUMNS].assign(origin="input"))
    db.run_sql(con, "int_levels_from_rows")
    con.unregister("method_rows")
    sign_changing = hierarchy.sign_changing_among(pd.unique(levels["item"]))
    db.run_sql(con, "int_deflators", sign_changing=sign_changing)
    return con, sign_changing


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
        Columns economy, period, frequency, year, quarter, item, deflator, sorted by series
        and period.

    Raises
    ------
    InputError
        A zero or negative current or chain-linked value of an item that is not
        sign-changing, a value given twice, or (with ``reference_year``) a series without an
        annual value in the reference year; each problem names economy, item, period.

    Notes
    -----
    D_t = 100 c_t / CLV_t (``sql/int_deflators.sql``); the annual D_y = 100 C_y / CLV_y, the
    value-weighted deflator, which differs from the mean of the quarterly deflators. Within
    one annual link D_y / D_{y-1} = C_y / K_y, a Paasche price index. Re-referencing to r:
    D'_t = 100 D_t / D_r, D_r the annual deflator of r; growth rates are unchanged.
    Sign-changing items (P52, P53, B11, YA1 and their breakdowns, ``*_RESIDUAL``) have
    numerator and denominator near zero or of opposite sign and get no deflator.

    References
    ----------
    BEA, Survey of Current Business, Nov 1998, box 4 (chained dollars, implicit price
    deflators); ONS, Blue Book 2013, ch. 1 (GDP implied deflator); ABS 5216.0 (2020-21),
    ch. 6, paras 6.29-6.31 and Annex paras 6A.5-6A.6; ESA 95 para 10.64.

    Examples
    --------
    >>> lv = pd.DataFrame({"economy": "XX", "item": "P6", "price_basis": ["current", "chain_linked"],
    ...                    "frequency": "A", "year": 2021, "quarter": 0, "period": "2021",
    ...                    "value": [110.0, 100.0]})
    >>> implicit_deflators(lv, hierarchy=Hierarchy.default())["deflator"].tolist()
    [110.0]
    """
    wide = pivot_bases(levels)  # located errors for values given twice or not finite
    raise_nonpositive(wide, ("current", "chain_linked"), hierarchy)
    con, _ = _scratch(levels, hierarchy)
    try:
        d = db.query_df(con, "int_deflators_read")
    finally:
        con.close()
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
    """Growth rates (percent) of a deflator table over both horizons (``sql/int_growth.sql``).

    Parameters
    ----------
    deflators
        Output of `implicit_deflators` (columns economy, item, frequency, year, quarter,
        deflator).

    Returns
    -------
    DataFrame
        Columns economy, period, frequency, year, quarter, item, horizon, pct; one row per
        period whose comparison period is present and positive (quarters: previous quarter
        and same quarter a year earlier; years: previous year, under both horizon labels).

    Notes
    -----
    pct = 100 (D_t / D_{t_o} - 1), t_o the comparison period. Re-referencing leaves it
    unchanged.
    """
    con = db.connect(threads=1)
    try:
        db.register(con, "method_rows", pd.DataFrame({c: pd.Series(dtype="float64" if c == "value" else "int64"
                                                                   if c in ("year", "quarter") else "str")
                                                      for c in [*LEVEL_COLUMNS, "origin"]}))
        db.run_sql(con, "int_levels_from_rows")
        con.unregister("method_rows")
        d = deflators[["economy", "item", "frequency", "year", "quarter", "deflator"]]
        db.register(con, "deflator_rows", d.assign(period=period_label(d["year"], d["quarter"]).to_numpy()))
        db.run_sql(con, "int_deflators_from_rows")
        con.unregister("deflator_rows")
        db.run_sql(con, "int_growth", sign_changing=[])
        g = db.query_df(con, "int_growth_read")
    finally:
        con.close()
    g = g[g["measure"] == "price"].sort_values(WIDE_KEY + ["horizon"], kind="mergesort", ignore_index=True)
    return g[GROWTH_COLUMNS]
