"""A bridge from consumer price index growth to household consumption deflator growth.

The gap between the growth of a consumer price index (headline ``CPI``) and that of the
household consumption deflator (``P31_S14``) is split, per economy, period and horizon,
into a residual, two scope effects, a weight effect and a formula effect that add up to it
exactly (`price_bridge`), and each effect into the contributions of the consumption
purposes (COICOP) that drive it.

Inputs: sub-indexes ``CPI_<COICOP>`` (price_basis ``index``, monthly or quarterly) with
their basket weights (price_basis ``weight``, one annual row per weight-reference year), and
household consumption by purpose ``P31_S14_<COICOP>`` at current and previous-year prices.
A sub-index pairs with the consumption item of the same COICOP code, or as ``pairs`` in
``[price_bridge]`` of valvol.toml says where the two classifications differ; items of one
side only form the scope sets. See docs/methods.md, section 6.1, and the hand example in
docs/derivations/price_bridge.md.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from valvol.errors import InputError, Problem
from valvol.frames import period_label
from valvol.methods.deflator_contributions import step_values
from valvol.methods.panel import pivot_bases

#: A COICOP purpose code as an item suffix: CP01 .. CP12 and finer (CP045, CP0451).
COICOP = re.compile(r"^CP[0-9]{2,6}$")
WEIGHT_BASIS = "weight"
#: The five effects, in the order of the steps, and the sensitivity order's labels.
EFFECTS = ("residual", "scope_index_only", "weight", "formula", "scope_accounts_only")
ORDERS = ("formula_on_common", "formula_on_accounts")
#: (order, effect, minuend, subtrahend): each effect a difference of two growth rates.
STEPS = (
    *((o, "gap", "G", "AN") for o in ORDERS),
    *((o, "residual", "G", "LC") for o in ORDERS),
    *((o, "scope_index_only", "LC", "LK") for o in ORDERS),
    *((o, "weight", "LK", "LKN") for o in ORDERS),
    ("formula_on_common", "formula", "LKN", "AK"),
    ("formula_on_common", "scope_accounts_only", "AK", "AN"),
    ("formula_on_accounts", "scope_accounts_only", "LKN", "LN"),
    ("formula_on_accounts", "formula", "LN", "AN"),
)
BRIDGE_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "horizon", "order", "effect", "value_pp"]
ITEM_COLUMNS = ["economy", "period", "frequency", "year", "quarter", "horizon", "order", "effect", "item",
                "value_pp"]
_ROW = ["economy", "frequency", "year", "quarter", "horizon"]
_STEP_COLS = ["ca1", "ka1", "cb1", "kb1", "ca2", "ka2", "cb2", "kb2"]


def breakdown_code(items: pd.Series, prefix: str) -> pd.Series:
    """The COICOP code of ``<prefix>_<COICOP>`` items, else NaN."""
    code = items.str.slice(len(prefix) + 1)
    ok = items.str.startswith(prefix + "_") & code.str.fullmatch(COICOP.pattern)
    return code.where(ok)


def pair_table(index_items: pd.DataFrame, accounts_items: pd.DataFrame, *, headline: str, accounts: str,
               pairs: tuple[tuple[str, str], ...] = ()) -> pd.DataFrame:
    """Items of each economy's bridge: one row per index item, accounts item or pair of both.

    ``index_items`` and ``accounts_items``: columns economy, item. A sub-index pairs with the
    accounts item of the same COICOP code unless ``pairs`` (index item, accounts item) names
    its counterpart; an item named in ``pairs`` pairs only as named. Columns of the result:
    economy, label (the index item where there is one, else the accounts item), index_item,
    accounts_item (NaN on the side that lacks it).
    """
    ix = index_items.assign(code=breakdown_code(index_items["item"], headline)).dropna(subset=["code"])
    ac = accounts_items.assign(code=breakdown_code(accounts_items["item"], accounts)).dropna(subset=["code"])
    named = pd.DataFrame(list(pairs), columns=["index_item", "accounts_item"])
    ix = ix.rename(columns={"item": "index_item"})
    ac = ac.rename(columns={"item": "accounts_item"})
    by_name = ix.merge(named, on="index_item").merge(ac[["economy", "accounts_item"]],
                                                     on=["economy", "accounts_item"])
    ix_free = ix[~ix["index_item"].isin(named["index_item"])]
    ac_free = ac[~ac["accounts_item"].isin(named["accounts_item"])]
    by_code = ix_free.merge(ac_free, on=["economy", "code"])
    paired = pd.concat([by_name[["economy", "index_item", "accounts_item"]],
                        by_code[["economy", "index_item", "accounts_item"]]], ignore_index=True)
    t = pd.concat([paired,
                   ix.loc[~_in(ix, paired, "index_item"), ["economy", "index_item"]],
                   ac.loc[~_in(ac, paired, "accounts_item"), ["economy", "accounts_item"]]], ignore_index=True)
    t["label"] = t["index_item"].fillna(t["accounts_item"])
    return t.sort_values(["economy", "label"], kind="mergesort", ignore_index=True)


def _in(df: pd.DataFrame, other: pd.DataFrame, col: str) -> np.ndarray:
    return pd.MultiIndex.from_frame(df[["economy", col]]).isin(
        pd.MultiIndex.from_frame(other[["economy", col]])).astype(bool)


def price_bridge(index_levels: pd.DataFrame, weights: pd.DataFrame, levels: pd.DataFrame, *,
                 headline: str = "CPI", accounts: str = "P31_S14",
                 pairs: tuple[tuple[str, str], ...] = ()) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The bridge table and the item contributions to each of its effects.

    Parameters
    ----------
    index_levels
        Quarterly and annual means of the headline and its sub-indexes: columns economy,
        item, frequency (``Q``/``A``), year, quarter (0 for years), value
        (`valvol.methods.price_gaps.index_levels`).
    weights
        Basket weights: economy, item (sub-index), year (weight-reference year), value (>= 0;
        any scale: only shares within a basket matter).
    levels
        Levels panel with ``P31_S14_<COICOP>`` at current and previous-year prices.
    headline, accounts
        Codes of the headline index and of the accounts aggregate.
    pairs
        (index item, accounts item) pairs where the COICOP codes of the two differ.

    Returns
    -------
    (bridge, items)
        ``bridge``: columns `BRIDGE_COLUMNS`, effect ``gap`` and the five `EFFECTS` per
        ``order``; ``items``: `ITEM_COLUMNS`, the item contributions, summing to the effect.

    Notes
    -----
    Every measure is a chain of links between two ends valued at one set of prices
    (`valvol.methods.deflator_contributions.step_values`), aggregated over items S as
    R = (sum cb / sum kb) / (sum ca / sum ka), growth 100 (R_1 R_2 - 1). The accounts' own
    formula A(S) takes c, k as given (annual-overlap implicit deflator, Paasche-type within
    each link). A Laspeyres-type index L(S, w) enters as a basket series c = w_y r,
    k = w_y, with r the price relative to the average of the year before (r = I/Ibar_{y-1}
    for a sub-index, c/k for an accounts item) and w_y the basket of year y at the prices of
    y-1: the CPI's weights of weight-reference year y (w_CPI), or the accounts' current
    values of y-1 (w_N). Then with G the headline's growth:
    G - A(N) = [G - L(C,w_CPI)] + [L(C,w_CPI) - L(K,w_CPI)] + [L(K,w_CPI) - L(K,w_N)]
    + [L(K,w_N) - A(K)] + [A(K) - A(N)] (order ``formula_on_common``); the order
    ``formula_on_accounts`` ends with [L(K,w_N) - L(N,w_N)] + [L(N,w_N) - A(N)] instead.
    Item contributions to a link: e_i = (cb_i - lambda ca_i) / (lambda sum ca),
    lambda = sum kb / sum ka; to two links 100 (e1_i R_2 + e2_i); an effect's item
    contributions are the differences of its two measures' contributions.

    References
    ----------
    McCully, Moyer & Stewart (2007), on the CPI and the PCE price index, Survey of Current
    Business, November (formula, weight, scope and other effects); IMF and others (2020),
    *Consumer Price Index Manual: Concepts and Methods* (price-updated baskets, annual
    chaining; from memory); IMF, *Quarterly National Accounts Manual*, 2017 edition, ch. 8
    (previous-year prices, annual overlap); United Nations (2018), *Classification of
    Individual Consumption According to Purpose (COICOP) 2018*.
    """
    wide = pivot_bases(levels)
    items = pair_table(index_levels[["economy", "item"]].drop_duplicates(),
                       wide[["economy", "item"]].drop_duplicates(), headline=headline, accounts=accounts,
                       pairs=pairs)
    series = _measure_series(index_levels, weights, wide, items)
    growth, ctr = _measures(series)
    head = index_levels[index_levels["item"].eq(headline)].assign(measure="G", label=headline)
    head = head.merge(_previous_mean(head), on=["economy", "item", "year"])
    head = head.assign(c=head["value"] / head["base"], k=1.0)
    hg, hc = _measures(head[["economy", "measure", "label", "frequency", "year", "quarter", "c", "k"]])
    growth = pd.concat([growth, hg], ignore_index=True)
    g = growth.pivot_table(index=_ROW, columns="measure", values="g", aggfunc="first")
    g = g.reindex(columns=["G", "LC", "LK", "LKN", "AK", "AN", "LN"]).dropna()
    if g.empty:
        return _empty(BRIDGE_COLUMNS), _empty(ITEM_COLUMNS)
    parts = []
    for order, effect, plus, minus in STEPS:  # over the eight step definitions, not the data
        parts.append(g.index.to_frame(index=False).assign(order=order, effect=effect,
                                                          value_pp=(g[plus] - g[minus]).to_numpy()))
    bridge = _finish(pd.concat(parts, ignore_index=True), ["order", "effect"])
    keep = g.index.to_frame(index=False)
    c = pd.concat([ctr, hc], ignore_index=True).merge(keep, on=_ROW)
    rows = []
    for order, effect, plus, minus in STEPS:
        if effect == "gap":
            continue
        for measure, sign in ((plus, 1.0), (minus, -1.0)):
            m = c[c["measure"].eq(measure)]
            if effect == "residual" and measure == "LC":  # the headline against its own aggregate
                m = m.groupby(_ROW, as_index=False)["ctr"].sum().assign(label=headline)
            rows.append(m[[*_ROW, "label", "ctr"]].assign(order=order, effect=effect, ctr=sign * m["ctr"].to_numpy()))
    it = pd.concat(rows, ignore_index=True)
    it = it.groupby([*_ROW, "order", "effect", "label"], as_index=False, sort=False)["ctr"].sum()
    it = it.rename(columns={"label": "item", "ctr": "value_pp"})
    return bridge, _finish(it, ["order", "effect", "item"])[ITEM_COLUMNS]


def _finish(df: pd.DataFrame, extra: list[str]) -> pd.DataFrame:
    df = df.assign(period=period_label(df["year"], df["quarter"]).to_numpy())
    df = df.sort_values(["economy", *extra, "horizon", "frequency", "year", "quarter"], kind="mergesort",
                        ignore_index=True)
    return df[[c for c in ITEM_COLUMNS if c in df.columns]]


def _empty(columns: list[str]) -> pd.DataFrame:
    types = {"year": "int64", "quarter": "int64", "value_pp": "float64"}
    return pd.DataFrame({c: pd.Series(dtype=types.get(c, "object")) for c in columns})


def _measure_series(index_levels: pd.DataFrame, weights: pd.DataFrame, wide: pd.DataFrame,
                    items: pd.DataFrame) -> pd.DataFrame:
    """Long series (economy, measure, label, frequency, year, quarter, c, k) of every measure."""
    keys = ["economy", "frequency", "year", "quarter"]
    # price relatives of the sub-indexes to the average of the year before
    ix = index_levels[["economy", "item", *keys[1:], "value"]]
    rel = ix.merge(_previous_mean(ix), on=["economy", "item", "year"]).assign(r=lambda d: d["value"] / d["base"])
    rel = rel.rename(columns={"item": "index_item"})[["economy", "index_item", *keys[1:], "r"]]
    acc = wide.rename(columns={"item": "accounts_item", "current": "c", "previous_year": "k"})
    acc = acc[["economy", "accounts_item", *keys[1:], "c", "k"]].dropna(subset=["c", "k"])
    w_cpi = weights.rename(columns={"item": "index_item", "value": "w"})[["economy", "index_item", "year", "w"]]
    w_acc = acc.loc[acc["frequency"].eq("A"), ["economy", "accounts_item", "year", "c"]]
    w_acc = w_acc.assign(year=w_acc["year"] + 1).rename(columns={"c": "w"})
    on_c, on_n = items["index_item"].notna(), items["accounts_item"].notna()
    sets = {"C": items[on_c], "K": items[on_c & on_n], "N": items[on_n]}
    out = []

    def basket(measure: str, s: pd.DataFrame, w: pd.DataFrame, wkey: str) -> None:
        b = s.merge(rel, on=["economy", "index_item"]).merge(w, on=["economy", wkey, "year"])
        out.append(b.assign(measure=measure, c=b["w"] * b["r"], k=b["w"]))

    basket("LC", sets["C"], w_cpi, "index_item")
    basket("LK", sets["K"], w_cpi, "index_item")
    basket("LKN", sets["K"], w_acc, "accounts_item")
    for measure, s in (("AK", sets["K"]), ("AN", sets["N"])):
        out.append(s.merge(acc, on=["economy", "accounts_item"]).assign(measure=measure))
    # L(N, w_N): sub-index prices where paired, the item's own deflator relative (c/k) otherwise
    own = sets["N"][sets["N"]["index_item"].isna()].merge(acc, on=["economy", "accounts_item"])
    own = own.assign(r=own["c"] / own["k"]).drop(columns=["c", "k"]).merge(w_acc, on=["economy", "accounts_item", "year"])
    ln = pd.concat([out[2].drop(columns="measure"), own.assign(c=own["w"] * own["r"], k=own["w"])],
                   ignore_index=True)
    out.append(ln.assign(measure="LN"))
    cols = ["economy", "measure", "label", *keys[1:], "c", "k"]
    return pd.concat([o[cols] for o in out], ignore_index=True)


def _previous_mean(ix: pd.DataFrame) -> pd.DataFrame:
    """The annual mean of the year before, as ``base`` of each economy, item and year."""
    ann = ix.loc[ix["frequency"].eq("A"), ["economy", "item", "year", "value"]]
    return ann.assign(year=ann["year"] + 1).rename(columns={"value": "base"})


def _measures(series: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Growth (percent) of each measure and each item's contribution to it (pp).

    A measure is left out for a period and horizon where any of its items lacks a value
    needed by the links (its first year, a missing weight).
    """
    s = series.assign(item=series["measure"] + "\x1f" + series["label"])
    st = step_values(s[["economy", "item", "frequency", "year", "quarter", "c", "k"]])
    st[["measure", "label"]] = st["item"].str.split("\x1f", n=1, expand=True)
    grp = [*_ROW, "measure"]
    st["ok"] = st["ok"].groupby([st[k] for k in grp]).transform("all")
    st = st[st["ok"]].reset_index(drop=True)
    sums = st.groupby(grp)[_STEP_COLS].transform("sum")
    with np.errstate(divide="ignore", invalid="ignore"):
        lam = {n: sums[f"kb{n}"] / sums[f"ka{n}"] for n in "12"}
        r = {n: (sums[f"cb{n}"] / sums[f"kb{n}"]) / (sums[f"ca{n}"] / sums[f"ka{n}"]) for n in "12"}
        e = {n: (st[f"cb{n}"] - lam[n] * st[f"ca{n}"]) / (lam[n] * sums[f"ca{n}"]) for n in "12"}
    st["ctr"] = 100.0 * (e["1"] * r["2"] + e["2"])
    st["g"] = 100.0 * (r["1"] * r["2"] - 1.0)
    growth = st.drop_duplicates(grp)[[*grp, "g"]]
    return growth, st[[*grp, "label", "ctr"]]


def input_problems(indexes: pd.DataFrame, accounts: pd.DataFrame, *, headline: str, accounts_item: str,
                   tolerance_abs: float, tolerance_rel: float) -> list[Problem]:
    """Input rules of the bridge, each problem located at a row (file, row, series, period).

    * a sub-index with values in a year needs a basket weight for that weight-reference year;
    * a weight needs a sub-index ``<headline>_<COICOP>`` with values in its year;
    * the purposes ``<accounts>_<COICOP>`` add up to the aggregate at current and at
      previous-year prices, per period, within max(abs, rel * sum |parts|) (the identity
      tolerance of ``[checks]``).
    """
    problems: list[Problem] = []
    code = breakdown_code(indexes["item"], headline)
    sub = indexes[code.notna().to_numpy()]
    vals = sub[sub["price_basis"].eq("index")]
    wts = sub[sub["price_basis"].eq(WEIGHT_BASIS)]
    years = vals.drop_duplicates(["economy", "item", "year"])
    have = wts[["economy", "item", "year"]].drop_duplicates()
    lack = years.merge(have, on=["economy", "item", "year"], how="left", indicator=True)
    lack = lack[lack["_merge"].eq("left_only")]
    problems += [_located(r, f"sub-index of {headline} without a basket weight for weight-reference year {r.year} "
                             f"(give a row with price_basis {WEIGHT_BASIS} and period {r.year})")
                 for r in lack.itertuples(index=False)]
    stray = wts.merge(years[["economy", "item", "year"]], on=["economy", "item", "year"], how="left", indicator=True)
    stray = stray[stray["_merge"].eq("left_only")]
    problems += [_located(r, "basket weight without sub-index values in its year") for r in stray.itertuples(index=False)]
    bad_w = indexes[indexes["price_basis"].eq(WEIGHT_BASIS) & code.isna().to_numpy()]
    problems += [_located(r, f"a basket weight belongs to a sub-index {headline}_<COICOP> (e.g. {headline}_CP01)")
                 for r in bad_w.itertuples(index=False)]
    parts = accounts[breakdown_code(accounts["item"], accounts_item).notna().to_numpy()]
    if len(parts):
        key = ["economy", "price_basis", "period"]
        g = parts.assign(a=parts["value"].abs()).groupby(key, as_index=False).agg(s=("value", "sum"), a=("a", "sum"))
        agg = accounts[accounts["item"].eq(accounts_item)].merge(g, on=key)
        off = (agg["value"] - agg["s"]).abs() > np.maximum(tolerance_abs, tolerance_rel * agg["a"])
        problems += [_located(r, f"the purposes {accounts_item}_<COICOP> add up to {r.s:.6g}, not to the "
                                 f"{accounts_item} given ({r.value:.6g})") for r in agg[off].itertuples(index=False)]
    return problems


def _located(r, reason: str) -> Problem:
    row = getattr(r, "source_row", None)
    return Problem(file=str(getattr(r, "source_file", "")), row=None if row is None or pd.isna(row) else int(row),
                   economy=str(r.economy), item=str(r.item), period=str(getattr(r, "period", "")),
                   price_basis=str(r.price_basis), reason=reason)


def raise_input_problems(problems: list[Problem]) -> None:
    if problems:
        raise InputError(problems)
