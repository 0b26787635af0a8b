"""Volumes and prices as agencies publish them: volume and price indexes into money terms.

Agencies publish a chain-linked volume as an index (reference year = 100) as often as in
money terms, and publish implicit price deflators (reference year = 100) beside current
prices. The input contract accepts both as price bases of an accounts item:

``volume_index``
    a chain-linked volume index, reference year r = 100;
``price_index``
    an implicit price deflator (or a price index used as one), reference year r = 100.

Any two of current prices C, volume V and price P determine the third. `to_money_terms`
turns every index row into a ``chain_linked`` row (and a ``current`` row where current
prices are missing), once, after the row-level rules and before staging, so that the
levels panel and every method downstream see money terms only. Derived rows keep the
``source_file``, ``source_row``, period and carried columns of the index row they come
from, and name its price basis in the column ``derived_from`` (empty for rows as given).
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from valvol.errors import Problem
from valvol.frames import INDEX_BASES

log = logging.getLogger("valvol")

#: Column naming the index basis a row was derived from ("" for rows as given).
DERIVED_FROM = "derived_from"
#: Floating-point slack added to every tolerance.
EPS = 1e-9

_KEY = ["economy", "item", "frequency", "year", "quarter"]
_SERIES = ["economy", "item"]
_YEAR = ["economy", "item", "year"]
_COLS = {"current": "c", "chain_linked": "v", "volume_index": "vi", "price_index": "pi"}
_LOCATE = ["source_file", "source_row", "economy", "item", "price_basis", "period"]


def convert(rows: pd.DataFrame, config) -> tuple[pd.DataFrame, list[Problem]]:
    """`to_money_terms` with the settings of one accounts folder (`valvol.config.Config`)."""
    return to_money_terms(
        rows,
        annual_rate=config.levels_at_annual_rate,
        index_tolerance=config.checks.index_tolerance,
        value_tolerance=config.checks.tolerance_abs,
    )


def to_money_terms(
    rows: pd.DataFrame,
    *,
    annual_rate: bool = False,
    index_tolerance: float = 0.05,
    value_tolerance: float = 0.5,
) -> tuple[pd.DataFrame, list[Problem]]:
    """Turn ``volume_index`` and ``price_index`` rows into ``chain_linked`` and ``current`` rows.

    Parameters
    ----------
    rows
        Validated accounts rows (row-level rules passed, keys unique): columns
        ``source_file, source_row, economy, item, price_basis, frequency, year, quarter,
        period, value`` and any others (``adjustment``, ``unit``, carried columns, ...),
        which derived rows copy from their index row.
    annual_rate
        Quarterly levels at annual rate (the year is the mean of its quarters, not the sum).
    index_tolerance
        h_I, the rounding of given indexes: half a unit of their last decimal (0.05 for
        indexes published with one decimal).
    value_tolerance
        h_C, the rounding of given money values (current prices, chain-linked volumes) in
        the unit of the accounts.

    Returns
    -------
    rows : DataFrame
        The rows of every other price basis unchanged, plus the derived rows (no index row
        is left); column ``derived_from`` added: ``volume_index`` or ``price_index`` on
        derived rows, empty on rows as given.
    problems : list of Problem
        Located problems (empty when every index could be used); the caller raises them.

    Notes
    -----
    *Reference year.* The reference year r of an index series is the year whose annual
    value A_y is 100, found per series: A_y is the given annual row, else the mean of the
    four quarters (a volume index; its annual value is the mean of its quarters whether
    quarters add to the year or are at annual rate) or their value-weighted mean
    100 sum_s c_s / sum_s V_s = sum_s V_s P_s / sum_s V_s (a price index, weights the
    quarterly volumes 100 c_s / P_s, else the given or derived V_s; the unweighted mean
    when neither is given). A year qualifies when |A_y - 100| <= h_I (for a weighted mean
    h_I max(1, A_y / min_s P_s), the bound of its rounding error); the qualifying year
    closest to 100 is r. No qualifying year, or two equally close, is an error.

    *Own value of the reference year.* I_r is the index's value of r computed as its
    annual value is formed downstream: from the four quarters when they are given (mean,
    or value-weighted mean), else the annual row. It is 100 within the rounding; dividing
    by it instead of by 100 makes the defining property of the reference year exact:
    CLV_r = C_r and the annual deflator of r = 100, as in money-terms input.

    *Rules* (c̄_r = C_r / 4 the mean quarter of the reference year when quarters add to
    the year, c̄_r = C_r at annual rate; annual rows use C_r itself):

    - volume index: CLV_t = VI_t c̄_r / VI_r, with C_r the annual current-price value of
      r (given, or the sum, resp. mean, of its four quarters);
    - price index and current prices: CLV_t = C_t P_r / P_t;
    - price index and a volume (given, or from a volume index), current prices missing:
      C_t = CLV_t P_t / P_r.

    With I_r = 100 these are the published rules CLV = VI C_r / 100 (BEA's chained dollars)
    and D = 100 C / CLV (the implicit deflator). Annual index rows are converted only in
    years without four quarters of the index; otherwise the annual volume (or current
    value) is formed downstream from the converted quarters, as for money-terms input, and
    the given annual index is checked against its quarters: a volume index within 2 h_I of
    their mean, a price index within h_I (1 + A_y / min_s P_s) of their weighted mean.

    *Reference years of one economy.* Every index series that is used (converted into
    volumes or current prices) of one economy must share one reference year: the derived
    volumes form one set of accounts, whose non-additivity residuals and re-referencing
    assume it; each series off the economy's most common reference year (the latest among
    equally common ones) is named. A volume derived from a price index and a volume index of the same economy
    are thus on one reference, and so are the volume and the price behind a derived
    current price. A volume given as ``chain_linked`` has no detectable reference year
    where current prices are missing: a current price derived from it assumes the price
    index's reference year.

    *Consistency where all three are given* (current prices, a volume as ``chain_linked``,
    and a price index; or a volume given both as ``chain_linked`` and as ``volume_index``):
    the given money values are kept and the index is only checked, re-referenced exactly
    to its own reference year r so that indexes on another reference than the volume
    compare too:

    - price index: P'_t = P_r (C_t / V_t) / (C_r / V_r) against P_t;
    - volume index: VI'_t = VI_r V_t / v̄_r against VI_t (v̄_r = V_r / 4, or V_r at annual
      rate, for quarters).

    The tolerance is the first-order bound of the roundings of the inputs (each value x
    off by at most h_x: h_I for indexes, h_C for money values; the relative error of a
    product or quotient is at most the sum of the h_x / |x|): |P'_t - P_t| <= h_I + P_t
    (h_C/|C_t| + e_t + h_C/|C_r| + e_r + h_I/P_r), e = h_C/|V| for a given volume and
    h_I / VI for one derived from a volume index; likewise h_I + VI_t (h_C/|V_t| +
    h_C/|V_r| + h_I/VI_r). Beyond it the row is a located error (the accounts would carry
    a deflator, or a volume, that the agency did not publish); where the reference year
    lacks current prices or volumes the index cannot be re-referenced and is not checked
    (a warning is logged).

    Degenerate cases, each a located problem: an index value that is not positive; an
    index with no year at 100 or two; C_r missing or not positive; a price index with
    neither current prices nor a volume in its period; a volume index given where a
    ``chain_linked`` series is given but not for that period; reference years that differ
    within an economy (above). Sign-changing items are rejected earlier, by the row
    rules (`valvol.schemas.input`): they have no deflator and no meaningful volume index.

    References
    ----------
    .. [1] BEA, Survey of Current Business, November 1998, box 4: chained dollars =
       reference-year current-dollar value x chain-type quantity index / 100.
    .. [2] ONS, United Kingdom National Accounts (The Blue Book), 2013, ch. 1: the implied
       GDP deflator = current prices / chained volume measure x 100.
    .. [3] ABS, Australian System of National Accounts: Concepts, Sources and Methods
       (5216.0), ch. 6, paras 6.29-6.31: the reference year of chain volumes, moved by
       one factor per series.

    Examples
    --------
    An annual volume index (2020 = 100) and current prices of 2020:

    >>> rows = pd.DataFrame({"source_file": "a.csv", "source_row": [2, 3, 4], "economy": "XQ",
    ...     "item": "P6", "price_basis": ["current", "volume_index", "volume_index"],
    ...     "frequency": "A", "year": [2020, 2020, 2021], "quarter": 0,
    ...     "period": ["2020", "2020", "2021"], "value": [50.0, 100.0, 104.0]})
    >>> out, problems = to_money_terms(rows)
    >>> out["price_basis"].tolist(), out["value"].tolist(), problems
    (['current', 'chain_linked', 'chain_linked'], [50.0, 50.0, 52.0], [])
    >>> out["derived_from"].tolist()
    ['', 'volume_index', 'volume_index']
    """
    rows = rows.copy()
    if DERIVED_FROM not in rows.columns:
        rows[DERIVED_FROM] = ""
    is_index = rows["price_basis"].isin(INDEX_BASES).to_numpy()
    if not is_index.any():
        return rows.reset_index(drop=True), []
    h, hv = float(index_tolerance), float(value_tolerance)
    idx = rows[is_index]
    nonpositive = ~(idx["value"] > 0)
    problems = _problems(idx[nonpositive], "a volume_index or price_index must be positive (reference year = 100)")
    idx = idx[~nonpositive]
    loc = _Locator(idx)
    w = _wide(rows[~is_index], idx, annual_rate)
    q, a = w["frequency"].eq("Q"), w["frequency"].eq("A")

    # --- volume indexes: reference year, C_ref, CLV_t = VI_t c_r / VI_r ------------------------
    w = _quarter_stats(w, "vi")
    vi_ann = w["vi"].where(w["vi"].notna(), w["vi_q"]).where(a)
    vi_own = w["vi_q"].where(w["vi_q"].notna(), w["vi"]).where(a)
    w, found = _reference_years(w, "vi", vi_ann, vi_own, pd.Series(h, index=w.index), loc)
    problems += found
    w["has_v"] = w.groupby(_SERIES)["v"].transform("count") > 0
    w["c_ref"] = _annual_at(w, "c_ann", "vi_year")
    to_convert = w["vi"].notna() & ~w["has_v"] & w["vi_year"].notna()
    no_cref = w[to_convert & ~(w["c_ref"] > 0)].drop_duplicates(_SERIES)
    problems += loc.series(no_cref, "volume_index", "volume_index (reference year " + _year(no_cref["vi_year"])
                           + ") needs the annual current-price value of its reference year (C_ref, given as a year or "
                           "as four quarters), positive: " + _text(
                               no_cref["c_ref"], lambda x: "missing" if pd.isna(x) else f"found {x:g}"),
                           year=no_cref["vi_year"])
    four_vi = a & w["vi_n"].eq(4)
    scale = np.where(q & (not annual_rate), 0.25, 1.0)  # c̄_r = C_r / 4 for quarters that add to the year
    convert = to_convert & (w["c_ref"] > 0) & ~four_vi
    w["v_vi"] = (w["vi"] * w["c_ref"] / w["vi_ref"] * scale).where(convert)
    off = w["vi"].notna() & four_vi & ((w["vi"] - w["vi_q"]).abs() > 2 * h + EPS)
    problems += loc.rows(w[off], "volume_index", "annual volume_index " + _fmt(w.loc[off, "vi"]) + " is not the "
                         "mean of its quarters (" + _fmt(w.loc[off, "vi_q"]) + ") within " + f"{2 * h:g}")
    # a volume index beside a given chain-linked volume only checks it
    checked_vi = w["vi"].notna() & w["has_v"] & w["vi_year"].notna()
    lacking = checked_vi & w["v_ann"].isna()
    problems += loc.rows(w[lacking], "volume_index", "volume_index given for a series whose chain_linked volume is "
                         "given, but not for this period: when both are given the index only checks the volume")
    problems += _check_volume_index(w, checked_vi & ~lacking, h, hv, annual_rate, loc)

    # --- the volumes now known: given, or from a volume index ---------------------------------
    w["v_all"] = w["v"].where(w["v"].notna(), w["v_vi"])
    w["v_all"] = w["v_all"].where(q | w["v_all"].notna(), _from_quarters(w, "v_all", annual_rate))
    from_vi = w.groupby(_SERIES)["v_vi"].transform("count") > 0
    vi_here = w["vi"].where(w["vi"].notna(), w["vi_qmin"])
    w["e_v"] = (h / vi_here).where(from_vi, hv / w["v_all"].abs())  # relative rounding of the volume

    # --- price indexes: reference year, then per period check, CLV or C ------------------------
    w = _price_quarter_stats(w)
    weighted = w["pi_q"].notna()
    pi_ann = w["pi"].where(w["pi"].notna(), w["pi_q"].where(weighted, w["pi_mean"])).where(a)
    pi_own = w["pi_q"].where(weighted, w["pi"].where(w["pi"].notna(), w["pi_mean"])).where(a)
    spread = (w["pi_q"] / w["pi_qmin"]).where(weighted & w["pi"].isna(), 1.0)
    w, found = _reference_years(w, "pi", pi_ann, pi_own, h * np.maximum(1.0, spread), loc)
    problems += found
    has_pi = w["pi"].notna() & w["pi_year"].notna()
    four_pi = a & w["pi_n"].eq(4)
    tol_mean = h * (1 + w["pi_q"] / w["pi_qmin"])
    off = has_pi & four_pi & weighted & ((w["pi"] - w["pi_q"]).abs() > tol_mean + EPS)
    problems += loc.rows(w[off], "price_index", "annual price_index " + _fmt(w.loc[off, "pi"]) + " is not the "
                         "value-weighted mean of its quarters (" + _fmt(w.loc[off, "pi_q"]) + ") within their "
                         "rounding " + _fmt(tol_mean[off], 3))
    per_period = has_pi & ~four_pi
    have_c, have_v = w["c_ann"].notna(), w["v_all"].notna()
    both = per_period & have_c & have_v
    problems += loc.rows(w[per_period & ~have_c & ~have_v], "price_index", "price_index needs current prices or a "
                         "volume (chain_linked or volume_index) of the same series and period")
    w["v_pi"] = (w["c_ann"] * w["pi_ref"] / w["pi"]).where(per_period & have_c & ~have_v)
    w["c_pi"] = (w["v_all"] * w["pi"] / w["pi_ref"]).where(per_period & ~have_c & have_v)
    problems += _check_price_index(w, both, h, hv, loc)

    # --- one reference year per economy -----------------------------------------------------
    used = pd.concat([
        w.loc[w["v_vi"].notna(), _SERIES + ["vi_year"]].rename(columns={"vi_year": "ref"}).assign(
            price_basis="volume_index"),
        w.loc[w["v_pi"].notna() | w["c_pi"].notna(), _SERIES + ["pi_year"]].rename(
            columns={"pi_year": "ref"}).assign(price_basis="price_index"),
    ]).drop_duplicates()
    problems += _mixed_reference_years(used, loc)

    out = _derived_rows(idx, w)
    n_checked = int(both.sum() + (checked_vi & ~lacking).sum())
    log.info("index bases: %d index row(s) -> %d chain_linked and %d current row(s); %d index value(s) checked",
             len(idx), int((out["price_basis"] == "chain_linked").sum()), int((out["price_basis"] == "current").sum()),
             n_checked)
    return pd.concat([rows[~is_index], out], ignore_index=True), problems


# ----------------------------------------------------------------------------- wide frame
def _wide(money: pd.DataFrame, idx: pd.DataFrame, annual_rate: bool) -> pd.DataFrame:
    """One row per series-period of the series with an index; columns c, v, vi, pi and the
    annual values c_ann, v_ann (given, else from four quarters). Every year with a quarter
    gets an annual row."""
    series = idx[_SERIES].drop_duplicates()
    base = money[money["price_basis"].isin(["current", "chain_linked"])].merge(series, on=_SERIES)
    long = pd.concat([base[_KEY + ["price_basis", "value"]], idx[_KEY + ["price_basis", "value"]]])
    w = long.set_index(_KEY + ["price_basis"])["value"].unstack("price_basis")
    w = w.reindex(columns=list(_COLS)).rename(columns=_COLS).reset_index()
    w.columns.name = None
    years = w.loc[w["frequency"] == "Q", _YEAR].drop_duplicates().assign(frequency="A", quarter=0)
    keys = pd.concat([w[_KEY], years[_KEY]]).drop_duplicates()
    w = keys.merge(w, on=_KEY, how="left").astype({"year": "int64", "quarter": "int64"})
    w = w.sort_values(_KEY, kind="mergesort", ignore_index=True)
    for col in ("c", "v"):
        w[f"{col}_ann"] = w[col].where((w["frequency"] == "Q") | w[col].notna(), _from_quarters(w, col, annual_rate))
    return w


def _by_year(w: pd.DataFrame, per_year: pd.Series, years: pd.Series | None = None) -> pd.Series:
    """``per_year`` (indexed by economy, item, year) for each row of ``w`` (its own year, or ``years``)."""
    keys = w[_SERIES].assign(year=(w["year"] if years is None else years).astype("float64"))
    table = per_year.rename("_v").reset_index()
    table["year"] = table["year"].astype("float64")
    got = keys.merge(table, on=_YEAR, how="left")["_v"]
    return pd.Series(got.to_numpy(), index=w.index)


def _from_quarters(w: pd.DataFrame, col: str, annual_rate: bool) -> pd.Series:
    """On annual rows: the sum (mean at annual rate) of the four quarters of ``col``, else NaN."""
    g = w[w["frequency"] == "Q"].groupby(_YEAR)[col].agg(["count", "sum"])
    value = (g["sum"] / (4 if annual_rate else 1)).where(g["count"] == 4)
    return _by_year(w, value).where(w["frequency"] == "A")


def _annual_at(w: pd.DataFrame, col: str, year_col: str) -> pd.Series:
    """Row by row, the annual value of ``col`` in the year named by ``year_col``."""
    return _by_year(w, w[w["frequency"] == "A"].set_index(_YEAR)[col], w[year_col])


def _quarter_stats(w: pd.DataFrame, col: str) -> pd.DataFrame:
    """On annual rows: the number of quarters of ``col``, and their mean and minimum when four."""
    g = w[w["frequency"] == "Q"].groupby(_YEAR)[col].agg(["count", "mean", "min"])
    a = w["frequency"] == "A"
    w[f"{col}_n"] = _by_year(w, g["count"]).where(a)
    w[f"{col}_q"] = _by_year(w, g["mean"].where(g["count"] == 4)).where(a)
    w[f"{col}_qmin"] = _by_year(w, g["min"].where(g["count"] == 4)).where(a)
    return w


def _price_quarter_stats(w: pd.DataFrame) -> pd.DataFrame:
    """On annual rows: ``pi_mean`` (plain mean of four quarters) and ``pi_q``, their value-weighted
    mean sum V P / sum V, weights V = 100 c / P where current prices are given in all four
    quarters, else the given or derived volumes."""
    w = _quarter_stats(w, "pi")
    w["pi_mean"] = w["pi_q"]
    quarters = w[w["frequency"] == "Q"]
    weighted = pd.Series(np.nan, index=w.index)
    for weight in (100 * quarters["c"] / quarters["pi"], quarters["v_all"].where(quarters["pi"].notna())):
        parts = pd.DataFrame({"w": weight, "wp": weight * quarters["pi"]}).join(quarters[_YEAR])
        stats = parts.groupby(_YEAR).agg(n=("w", "count"), sw=("w", "sum"), swp=("wp", "sum"))
        mean = (stats["swp"] / stats["sw"]).where((stats["n"] == 4) & (stats["sw"] > 0))
        weighted = weighted.where(weighted.notna(), _by_year(w, mean))
    w["pi_q"] = weighted.where(w["frequency"] == "A")
    return w


# ------------------------------------------------------------------------- reference years
def _reference_years(w: pd.DataFrame, col: str, ann: pd.Series, own: pd.Series, tol: pd.Series,
                     loc: _Locator) -> tuple[pd.DataFrame, list[Problem]]:
    """Add ``<col>_year`` (the reference year: annual value ``ann`` at 100 within ``tol``, the
    closest) and ``<col>_ref`` (``own``, the index's own annual value there) to every row of a
    series with index ``col``; problems for series with no such year or two equally close."""
    basis = {"vi": "volume_index", "pi": "price_index"}[col]
    series = w.loc[w[col].notna(), _SERIES].drop_duplicates()
    cand = w.loc[ann.notna(), _YEAR].assign(dist=(ann - 100).abs(), tol=tol, value=ann, own=own)
    cand = cand.merge(series, on=_SERIES).sort_values(_SERIES + ["dist", "year"], kind="mergesort")
    ok = cand[cand["dist"] <= cand["tol"] + EPS]
    best = ok.drop_duplicates(_SERIES)
    ties = ok.merge(best[_SERIES + ["dist", "year"]], on=_SERIES, suffixes=("", "_best"))
    ties = ties[(ties["dist"] <= ties["dist_best"] + EPS) & (ties["year"] != ties["year_best"])]
    problems: list[Problem] = []
    none = series.merge(best[_SERIES], on=_SERIES, how="left", indicator=True)
    none = none[none["_merge"] == "left_only"].drop(columns="_merge")
    if len(none):
        closest = none.merge(cand.drop_duplicates(_SERIES)[_SERIES + ["year", "value"]], on=_SERIES, how="left")
        hint = ("; the closest is " + _fmt(closest["value"]) + " in " + _year(closest["year"])).where(
            closest["year"].notna(), "; it has no annual value (a year, or four quarters)")
        problems += loc.series(closest, basis, f"{basis} has no year at 100 (an annual value, or the mean of its "
                               f"four quarters, within its rounding {_h_text(tol)}): its reference year cannot be "
                               "found" + hint)
    if len(ties):
        amb = ties.groupby(_SERIES).agg(year_best=("year_best", "first"), others=("year", list)).reset_index()
        years = [", ".join(str(y) for y in sorted([b, *o])) for b, o in zip(amb["year_best"], amb["others"],
                                                                                 strict=True)]
        problems += loc.series(amb, basis, f"{basis}: several years at 100 (" + pd.Series(years, index=amb.index)
                               + "): the reference year is ambiguous (give the index with more decimals)")
        best = best.merge(amb[_SERIES], on=_SERIES, how="left", indicator=True)
        best = best[best["_merge"] == "left_only"].drop(columns="_merge")
    ref = best[_SERIES + ["year", "own"]].rename(columns={"year": f"{col}_year", "own": f"{col}_ref"})
    ref[f"{col}_year"] = ref[f"{col}_year"].astype("float64")
    return w.merge(ref, on=_SERIES, how="left"), problems


def _h_text(tol: pd.Series) -> str:
    """The tolerance of a reference-year search, as shown in a problem (its smallest value)."""
    return f"+-{float(tol.min()):g}" if len(tol) else ""


def _mixed_reference_years(used: pd.DataFrame, loc: _Locator) -> list[Problem]:
    """Index series used in one economy share a reference year: one problem per series off the
    economy's most common year (the latest among equally common ones)."""
    used = used.dropna(subset=["ref"]).astype({"ref": "int64"})
    mixed = used[used.groupby("economy")["ref"].transform("nunique") > 1]
    if mixed.empty:
        return []
    counts = mixed.groupby(["economy", "ref"]).size().rename("n").reset_index()
    common = counts.sort_values(["economy", "n", "ref"], ascending=[True, False, False]).drop_duplicates("economy")
    mixed = mixed.merge(common[["economy", "ref"]], on="economy", suffixes=("", "_common"))
    problems = []
    for basis in INDEX_BASES:
        off = mixed[(mixed["ref"] != mixed["ref_common"]) & (mixed["price_basis"] == basis)]
        problems += loc.series(off, basis, "reference year " + _year(off["ref"]) + " differs from "
                               + _year(off["ref_common"]) + ", that of the economy's other index series used "
                               "here: the volumes and prices derived for one economy must share one reference year",
                               year=off["ref"])
    return problems


# ---------------------------------------------------------------------------------- checks
def _check_volume_index(w: pd.DataFrame, checked: pd.Series, h: float, hv: float, annual_rate: bool,
                        loc: _Locator) -> list[Problem]:
    """VI'_t = VI_r V_t / v̄_r against the given VI_t (`to_money_terms`, Notes)."""
    if not checked.any():
        return []
    v_r = _annual_at(w, "v_ann", "vi_year")
    b = w[checked].assign(v_r=v_r[checked])
    unchecked = ~(b["v_r"] > 0)
    _warn_unchecked(b[unchecked], "volume_index", "vi_year", "chain_linked volume")
    b = b[~unchecked]
    per = np.where((b["frequency"] == "Q") & (not annual_rate), 4.0, 1.0)
    implied = b["vi_ref"] * b["v_ann"] * per / b["v_r"]
    tol = h + b["vi"] * (hv / b["v_ann"].abs() + hv / b["v_r"] + h / b["vi_ref"])
    off = (implied - b["vi"]).abs() > tol + EPS
    return loc.rows(b[off], "volume_index", "volume_index " + _fmt(b.loc[off, "vi"]) + " does not match the given "
                    "chain_linked volume: it implies " + _fmt(implied[off]) + " on the index's reference year "
                    + _year(b.loc[off, "vi_year"]) + ", beyond the rounding tolerance " + _fmt(tol[off], 3))


def _check_price_index(w: pd.DataFrame, both: pd.Series, h: float, hv: float, loc: _Locator) -> list[Problem]:
    """P'_t = P_r (C_t / V_t) / (C_r / V_r) against the given P_t (`to_money_terms`, Notes)."""
    if not both.any():
        return []
    b = w[both].assign(c_r=_annual_at(w, "c_ann", "pi_year")[both], v_r=_annual_at(w, "v_all", "pi_year")[both],
                       e_vr=_annual_at(w, "e_v", "pi_year")[both])
    unchecked = ~(b["c_r"] * b["v_r"] > 0)
    _warn_unchecked(b[unchecked], "price_index", "pi_year", "current price and volume")
    b = b[~unchecked]
    implied = b["pi_ref"] * (b["c_ann"] / b["v_all"]) / (b["c_r"] / b["v_r"])
    tol = h + b["pi"] * (hv / b["c_ann"].abs() + b["e_v"] + hv / b["c_r"].abs() + b["e_vr"] + h / b["pi_ref"])
    off = (implied - b["pi"]).abs() > tol + EPS
    return loc.rows(b[off], "price_index", "price_index " + _fmt(b.loc[off, "pi"]) + " does not match current "
                    "prices and volume: they imply " + _fmt(implied[off]) + " on the index's reference year "
                    + _year(b.loc[off, "pi_year"]) + ", beyond the rounding tolerance " + _fmt(tol[off], 3))


def _warn_unchecked(b: pd.DataFrame, basis: str, year_col: str, what: str) -> None:
    for r in b.drop_duplicates(_SERIES).itertuples(index=False):  # one line per series, on the log only
        log.warning("%s/%s %s: no annual %s in its reference year %d; not checked", r.economy, r.item, basis,
                    what, int(getattr(r, year_col)))


# ---------------------------------------------------------------------------- derived rows
def _derived_rows(idx: pd.DataFrame, w: pd.DataFrame) -> pd.DataFrame:
    """Copies of index rows with the derived basis and value; ``derived_from`` names the index basis."""
    parts = []
    for col, basis, source in (("v_vi", "chain_linked", "volume_index"), ("v_pi", "chain_linked", "price_index"),
                               ("c_pi", "current", "price_index")):
        got = w.loc[w[col].notna(), _KEY + [col]]
        src = idx[idx["price_basis"] == source].merge(got, on=_KEY)
        parts.append(src.assign(price_basis=basis, value=src[col].astype("float64"),
                                **{DERIVED_FROM: source}).drop(columns=col))
    out = pd.concat(parts, ignore_index=True)
    return out.sort_values(["source_file", "source_row", "price_basis"], kind="mergesort", ignore_index=True)


# -------------------------------------------------------------------------------- problems
class _Locator:
    """Finds the file, row and period of index rows (by key) and of index series (their first row)."""

    def __init__(self, idx: pd.DataFrame) -> None:
        self.at = idx[_KEY + ["price_basis", "source_file", "source_row", "period"]]
        self.first = self.at.sort_values(["source_file", "source_row"], kind="mergesort").drop_duplicates(
            _SERIES + ["price_basis"])

    def rows(self, frame: pd.DataFrame, basis: str, reason: str | pd.Series) -> list[Problem]:
        """One problem per index row of ``basis`` at the keys of ``frame``."""
        if frame.empty:
            return []
        why = _texts(frame, reason)
        at = frame[_KEY].assign(_why=why).merge(self.at[self.at["price_basis"] == basis], on=_KEY)
        return _problems(at, at["_why"])

    def series(self, frame: pd.DataFrame, basis: str, reason: str | pd.Series,
               year: pd.Series | None = None) -> list[Problem]:
        """One problem per series of ``frame``, located at its first ``basis`` row in ``year`` (the
        series' reference year) when there is one, else at its first ``basis`` row."""
        if frame.empty:
            return []
        at = frame[_SERIES].assign(_why=_texts(frame, reason))
        first = self.first[self.first["price_basis"] == basis]
        if year is not None:
            rows = self.at[self.at["price_basis"] == basis].sort_values(["source_file", "source_row"],
                                                                         kind="mergesort")
            in_year = rows.drop_duplicates(_SERIES + ["year"])[_SERIES + ["year", *_LOCATE[:2], "price_basis",
                                                                          "period"]]
            in_year = in_year.astype({"year": "float64"})
            at = at.assign(year=year.reindex(frame.index).astype("float64").to_numpy())
            located = at.merge(in_year, on=_SERIES + ["year"], how="left")
            fallback = located["source_row"].isna()
            rest = located.loc[fallback, _SERIES + ["_why"]].merge(first, on=_SERIES)
            at = pd.concat([located[~fallback], rest], ignore_index=True)
        else:
            at = at.merge(first, on=_SERIES)
        return _problems(at, at["_why"])


def _texts(frame: pd.DataFrame, reason: str | pd.Series) -> pd.Series:
    if isinstance(reason, pd.Series):
        return reason.reindex(frame.index)
    return pd.Series(reason, index=frame.index, dtype="object")


def _problems(rows: pd.DataFrame, reason: str | pd.Series) -> list[Problem]:
    """One problem per row (file, row, economy, item, price basis, period)."""
    if rows.empty:
        return []
    why = _texts(rows, reason)
    return [
        Problem(file=str(r["source_file"]), row=int(r["source_row"]), economy=str(r["economy"]), item=str(r["item"]),
                price_basis=str(r["price_basis"]), period=str(r["period"]), reason=str(text))
        for r, text in zip(rows.to_dict("records"), why, strict=True)
    ]


def _text(values: pd.Series, fn) -> pd.Series:
    """``fn`` of each value, as text (an empty Series stays text, so that it adds to strings)."""
    return pd.Series([fn(x) for x in values], index=values.index, dtype="object")


def _fmt(values: pd.Series, digits: int = 6) -> pd.Series:
    return _text(values, lambda x: f"{x:.{digits}g}")


def _year(values: pd.Series) -> pd.Series:
    return _text(values, lambda y: "?" if pd.isna(y) else f"{int(y)}")
