"""Panel utilities shared by the volume methods: wide price-basis frames and integer-keyed look-ups.

`levels_wide` turns a levels panel into one column per price basis; `PanelCodes` and `Lookup`
give vectorised access to any series in any period; `top_aggregates` finds, for a
sign-changing item, the highest positive aggregate containing it; `problems_at` and
`nonpositive_problems` turn bad values into located problems.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import replace

import numpy as np
import pandas as pd

from valvol.errors import InputError, Problem
from valvol.frames import KEY, LEVEL_COLUMNS, PRICE_BASES, period_label
from valvol.hierarchy import Hierarchy
from valvol.schemas.checks import key_codes

_WIDE_KEY = ["economy", "item", "frequency", "year", "quarter"]


def levels_wide(levels: pd.DataFrame, bases: Mapping[str, str]) -> pd.DataFrame:
    """Validate a levels panel and spread the wanted price bases into columns.

    Parameters
    ----------
    levels
        Levels panel (`valvol.frames`); rows of other price bases are ignored.
    bases
        Price basis -> column name, e.g. ``{"current": "c", "previous_year": "k"}``.

    Returns
    -------
    DataFrame
        Columns economy, item, frequency, year, quarter and one column per basis (NaN where
        the panel has no value), sorted by series and period.

    Raises
    ------
    InputError
        A column missing, a frequency/quarter pair outside (``A``, 0) / (``Q``, 1..4), a
        non-finite value, or the same key given twice.
    """
    missing = [c for c in KEY + ["value"] if c not in levels.columns]
    if missing:
        raise InputError([Problem(reason=f"levels panel lacks column(s) {', '.join(missing)}")])
    df = levels.loc[levels["price_basis"].isin(list(bases)), KEY + ["value"]].copy()
    df["year"] = df["year"].astype("int64")
    df["quarter"] = df["quarter"].astype("int64")
    df["value"] = df["value"].astype("float64")
    bad_freq = ~(((df["frequency"] == "A") & (df["quarter"] == 0))
                 | ((df["frequency"] == "Q") & df["quarter"].between(1, 4)))
    e_code, economies = pd.factorize(df["economy"], sort=True)
    i_code, items = pd.factorize(df["item"], sort=True)
    year, quarter = df["year"].to_numpy(), df["quarter"].to_numpy()
    y_lo = int(year.min()) if len(year) else 0
    n_years = (int(year.max()) - y_lo + 1) if len(year) else 1
    series = e_code.astype("int64") * max(len(items), 1) + i_code
    row_key = (series * n_years + (year - y_lo)) * 5 + np.clip(quarter, 0, 4)
    b_code = pd.Categorical(df["price_basis"], categories=list(bases)).codes.astype("int64")
    dup = pd.Series(row_key * len(bases) + b_code).duplicated().to_numpy()
    bad_value = ~np.isfinite(df["value"].to_numpy())
    problems = (problems_at(df[bad_freq], "frequency and quarter do not match (A with 0, Q with 1..4)")
                + problems_at(df[dup], "value given more than once")
                + problems_at(df[bad_value & ~bad_freq], "value is missing or not finite"))
    if problems:
        raise InputError(problems)
    cols = list(bases.values())
    if df.empty:
        return pd.DataFrame({c: pd.Series(dtype="str") for c in ("economy", "item", "frequency")}
                            | {c: pd.Series(dtype="int64") for c in ("year", "quarter")}
                            | {c: pd.Series(dtype="float64") for c in cols})
    keys, inverse = np.unique(row_key, return_inverse=True)
    mat = np.full((len(keys), len(bases)), np.nan)
    mat[inverse, b_code] = df["value"].to_numpy()
    q = keys % 5
    rest = keys // 5
    wide = pd.DataFrame({"economy": category_strings(economies, rest // n_years // len(items)),
                         "item": category_strings(items, (rest // n_years) % len(items)),
                         "frequency": category_strings(["Q", "A"], (q == 0).astype("int64")),
                         "year": (rest % n_years + y_lo).astype("int64"), "quarter": q.astype("int64")})
    for j, col in enumerate(cols):
        wide[col] = mat[:, j]
    return wide


def item_flags(items: pd.Series, predicate) -> np.ndarray:
    """``predicate(item)`` evaluated once per distinct item, broadcast to the rows."""
    uniq = pd.unique(items)
    return items.isin([u for u in uniq if predicate(u)]).to_numpy()


def problems_at(rows: pd.DataFrame, reason: str, price_basis: str | None = None,
                year_offset: int = 0) -> list[Problem]:
    """One `Problem` per row of ``rows`` (columns economy, item, year, quarter[, price_basis])."""
    if rows.empty:
        return []
    quarter = rows["quarter"] if year_offset == 0 else pd.Series(0, index=rows.index)
    labels = period_label(rows["year"].to_numpy() + year_offset, quarter.to_numpy())
    if price_basis is None:
        bases = rows["price_basis"] if "price_basis" in rows else pd.Series("", index=rows.index)
    else:
        bases = pd.Series(price_basis, index=rows.index)
    return [Problem(economy=str(e), item=str(i), period=str(p), price_basis=str(b), reason=reason)
            for e, i, p, b in zip(rows["economy"], rows["item"], labels, bases, strict=True)]


def _distinct(values: Iterable[str]) -> list[str]:
    if not isinstance(values, (pd.Series, pd.Index, np.ndarray, list)):
        values = list(values)
    return [str(v) for v in pd.unique(pd.Series(values, dtype="str"))]


class PanelCodes:
    """Integer codes of series ``(economy, item)`` and periods ``(year, quarter)``."""

    def __init__(self, economies: Iterable[str], items: Iterable[str], years: Iterable[int]) -> None:
        self.economies = pd.Index(sorted(_distinct(economies)), dtype="str")
        self.items = pd.Index(sorted(_distinct(items)), dtype="str")
        y = np.asarray(list(years), dtype="int64")
        self.y_lo = int(y.min()) - 2 if y.size else 0
        self.n_years = (int(y.max()) - self.y_lo + 3) if y.size else 1

    def sid(self, economy: Iterable[str], item: Iterable[str]) -> np.ndarray:
        """Series id, -1 where the economy or the item is unknown."""
        e = pd.Categorical(economy, categories=self.economies).codes.astype("int64")
        i = pd.Categorical(item, categories=self.items).codes.astype("int64")
        return np.where((e >= 0) & (i >= 0), e * len(self.items) + i, -1)

    def key(self, sid: np.ndarray, year: np.ndarray, quarter: np.ndarray) -> np.ndarray:
        """Key of a series-period, -1 where out of range."""
        sid = np.asarray(sid, dtype="int64")
        yy = np.asarray(year, dtype="int64") - self.y_lo
        ok = (sid >= 0) & (yy >= 0) & (yy < self.n_years)
        return np.where(ok, (sid * self.n_years + yy) * 5 + np.asarray(quarter, dtype="int64"), -1)


class Lookup:
    """Values of the columns of ``frame`` (which has sid, year, quarter) by series and period.

    Positions are kept in a dense array over the key space when it is small (a few million
    keys for hundreds of economies, tens of items and decades of quarters), else in a hash
    index. ``frame`` must have one row per key.
    """

    _DENSE_LIMIT = 50_000_000

    def __init__(self, codes: PanelCodes, frame: pd.DataFrame, columns: Iterable[str]) -> None:
        self.codes = codes
        keys = codes.key(frame["sid"].to_numpy(), frame["year"].to_numpy(), frame["quarter"].to_numpy())
        size = len(codes.economies) * len(codes.items) * codes.n_years * 5
        self.dense: np.ndarray | None = None
        if size <= self._DENSE_LIMIT:
            self.dense = np.full(size + 1, -1, dtype="int64")  # last slot: the "no key" -1
            self.dense[keys] = np.arange(len(keys))
            self.dense[-1] = -1
        else:
            self.index = pd.Index(keys)
        self.values = {c: frame[c].to_numpy(dtype="float64") for c in columns}

    def positions(self, sid: np.ndarray, year: np.ndarray, quarter: np.ndarray | int) -> np.ndarray:
        quarter = np.broadcast_to(np.asarray(quarter, dtype="int64"), np.shape(sid))
        keys = self.codes.key(sid, year, quarter)
        return self.dense[keys] if self.dense is not None else self.index.get_indexer(keys)

    def get(self, column: str, sid: np.ndarray, year: np.ndarray, quarter: np.ndarray | int) -> np.ndarray:
        """The column's values at ``(sid, year, quarter)``, NaN where absent."""
        pos = self.positions(sid, year, quarter)
        out = np.full(pos.shape, np.nan)
        hit = pos >= 0
        out[hit] = self.values[column][pos[hit]]
        return out


def category_strings(labels: Iterable[str], codes: np.ndarray) -> pd.Series:
    """String column ``labels[codes]`` built by one take from the distinct labels."""
    return pd.Series(pd.array(list(labels), dtype="str")).take(np.asarray(codes)).reset_index(drop=True)


def nonpositive_problems(wide: pd.DataFrame, columns: Mapping[str, str],
                         hierarchy: Hierarchy | None = None) -> list[Problem]:
    """Zero or negative values in the ``columns`` of a wide frame, located (the one such rule).

    ``columns`` maps a wide column to its price basis. With ``hierarchy``, only positive
    (not sign-changing) series are judged; without it, every row of ``wide``.
    """
    positive = (~item_flags(wide["item"], hierarchy.is_sign_changing) if hierarchy is not None
                else np.ones(len(wide), dtype=bool))
    out: list[Problem] = []
    for col, basis in columns.items():
        bad = positive & (wide[col] <= 0).to_numpy()
        why = ("its deflator (current / volume) is undefined and no ratio can be chained or weighted"
               if basis in ("chain_linked", "previous_year") else "no ratio can be chained or weighted")
        out += [replace(p, reason=f"{basis} value {v:g} is zero or negative in a series that must be positive: {why}")
                for p, v in zip(problems_at(wide[bad], "", price_basis=basis), wide.loc[bad, col], strict=True)]
    return out


def raise_nonpositive(wide: pd.DataFrame, columns: Mapping[str, str] | Iterable[str],
                      hierarchy: Hierarchy | None = None) -> None:
    """`nonpositive_problems` raised as one `InputError` (``columns`` may name bases that are columns)."""
    if not isinstance(columns, Mapping):
        columns = {c: c for c in columns}
    raise_problems(nonpositive_problems(wide, columns, hierarchy))


#: Price bases as the columns `pivot_bases` spreads them into.
BASIS_COLUMNS = {basis: basis for basis in PRICE_BASES}


def pivot_bases(levels: pd.DataFrame) -> pd.DataFrame:
    """`levels_wide` with one column per price basis (named as the basis) and the period label.

    Columns economy, item, frequency, year, quarter, period, current, previous_year,
    chain_linked; sorted by economy, item, frequency (annual first), year, quarter.
    """
    wide = levels_wide(levels, BASIS_COLUMNS)
    wide.insert(5, "period", period_label(wide["year"], wide["quarter"]).to_numpy())
    order = np.lexsort((wide["quarter"].to_numpy(), wide["year"].to_numpy(), wide["frequency"].ne("A").to_numpy(),
                        key_codes(wide, ["economy", "item"])))
    return wide.take(order).reset_index(drop=True)


def with_horizons(df: pd.DataFrame) -> pd.DataFrame:
    """Repeat each row once per growth horizon and name its comparison period.

    Adds columns ``horizon`` (``prev_period``: the previous quarter or year; ``prev_year``:
    the same period a year earlier), ``old_year``, ``old_quarter`` and ``cross`` (True when
    the comparison period lies in the previous calendar year, i.e. the link crosses a year
    boundary: quarterly ``prev_year`` rows and first quarters under ``prev_period``). Annual
    rows carry the change on the previous year under both horizon labels.
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


def _positive_ancestors(hierarchy: Hierarchy) -> pd.DataFrame:
    """Every positive ancestor of every item, ranked from the top of the hierarchy down."""
    parents: dict[str, set[str]] = {}
    for agg, comps in hierarchy.aggregates.items():
        for comp in comps:
            parents.setdefault(comp.item, set()).add(agg)
    rows = []
    for item in sorted(hierarchy.items):
        dist: dict[str, int] = {}
        stack = [(p, 1) for p in parents.get(item, ())]
        while stack:
            anc, d = stack.pop()
            if dist.get(anc, 0) < d:
                dist[anc] = d
                stack.extend((p, d + 1) for p in parents.get(anc, ()))
        rows += [(item, a, d) for a, d in dist.items() if not hierarchy.is_sign_changing(a)]
    anc = pd.DataFrame(rows, columns=["item", "top", "distance"])
    return anc.sort_values(["item", "distance", "top"], ascending=[True, False, True], ignore_index=True)


def top_aggregates(hierarchy: Hierarchy, series: pd.DataFrame, available: pd.DataFrame) -> pd.DataFrame:
    """The aggregate whose deflator values each sign-changing series.

    Climbs the hierarchy from the item and takes the highest positive ancestor that has
    data in the item's economy (``available``: columns economy, item). A breakdown that the
    hierarchy does not declare (``P52_PRIV``) climbs from the code it breaks down (``P52``),
    which is itself a candidate when positive.

    Returns
    -------
    DataFrame
        Columns economy, item, top; series without such an ancestor are left out.
    """
    if series.empty or available.empty:
        return pd.DataFrame({c: pd.Series(dtype="str") for c in ("economy", "item", "top")})
    anc = _positive_ancestors(hierarchy)
    cand = series[["economy", "item"]].drop_duplicates()
    anchors = {i: hierarchy.anchor(i) for i in pd.unique(cand["item"])}
    cand = cand.assign(anchor=cand["item"].map(anchors))
    own = cand[(cand["anchor"] != cand["item"]) & cand["anchor"].notna()]
    own = own.assign(top=own["anchor"], distance=0)
    own = own[~own["top"].map(hierarchy.is_sign_changing).astype(bool)]
    cand = pd.concat([cand.merge(anc.rename(columns={"item": "anchor"}), on="anchor"), own], ignore_index=True)
    avail = available[["economy", "item"]].drop_duplicates().rename(columns={"item": "top"})
    cand = cand.merge(avail, on=["economy", "top"])
    cand = cand.sort_values(["economy", "item", "distance", "top"], ascending=[True, True, False, True])
    return cand.drop_duplicates(["economy", "item"])[["economy", "item", "top"]].reset_index(drop=True)


def to_levels(frame: pd.DataFrame, column: str) -> pd.DataFrame:
    out = frame.loc[np.isfinite(frame[column].to_numpy(dtype="float64")),
                    ["economy", "item", "frequency", "year", "quarter", column]]
    out = out.rename(columns={column: "value"})
    out.insert(2, "price_basis", "chain_linked")
    out["period"] = period_label(out["year"], out["quarter"]).set_axis(out.index)
    return out[LEVEL_COLUMNS]


def raise_problems(problems: list[Problem]) -> None:
    if problems:
        raise InputError(problems)




def zero_fill_components(levels: pd.DataFrame, hierarchy: Hierarchy) -> pd.DataFrame:
    """Zeros for a component's periods before it starts (or after it ends), where its aggregate has values.

    The aggregates are formed with a missing component counting as zero in that period
    (``sql/int_aggregate.sql``); the decompositions see the same zeros, so that a series
    starting later than others contributes its level change from zero, and the aggregate's
    contributions still add up. Only series the economy reports are filled.
    """
    from valvol.schemas.checks import key_codes

    edges = pd.DataFrame(hierarchy.edges(), columns=["aggregate", "item", "sign"])[["aggregate", "item"]]
    at = ["economy", "price_basis", "frequency", "year", "quarter", "period"]
    aggregate_rows = levels.loc[levels["item"].isin(edges["aggregate"].unique()), [*at, "item"]]
    wanted = aggregate_rows.rename(columns={"item": "aggregate"}).merge(edges, on="aggregate")[[*at, "item"]]
    if wanted.empty:
        return levels
    n = len(levels)
    both = pd.concat([levels[[*at, "item"]], wanted], ignore_index=True)
    row = key_codes(both, ["economy", "item", "price_basis", "frequency", "year", "quarter"])
    series = key_codes(both, ["economy", "item", "price_basis", "frequency"])
    new = ~np.isin(row[n:], row[:n]) & np.isin(series[n:], series[:n])
    new &= ~pd.Series(row[n:]).duplicated().to_numpy()
    if not new.any():
        return levels
    missing = wanted[new].assign(value=0.0)
    return pd.concat([levels, missing[levels.columns]], ignore_index=True)
