"""Test helpers shared by several test modules: small panels and the UK reference release.

Importable as ``support`` (pytest puts ``tests/`` on ``sys.path``: ``pythonpath`` in pyproject.toml).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd

from valvol.frames import LEVEL_COLUMNS, period_label
from valvol.hierarchy import Hierarchy

#: UK ONS Quarterly National Accounts, release of 31 March 2023 (tests/reference_data/README.md).
UK_FILE = Path(__file__).resolve().parents[1] / "reference_data" / "uk_ons_qna_2023-03-31.csv"


def rows_of(economy, item, basis, freq, years, quarters, values):
    return pd.DataFrame({"economy": economy, "item": item, "price_basis": basis, "frequency": freq,
                         "year": np.asarray(years, dtype="int64"), "quarter": np.asarray(quarters, dtype="int64"),
                         "value": np.asarray(values, dtype="float64")})


def panel_from_quantities(prices, quantities, aggregates=(), *, economy="E", start_year=2000,
                          first_year_price=None, annual_rate=False, chain_linked=False, ref_year=None):
    """The one synthetic panel builder: levels from quarterly prices and quantities of items.

    c = p q; the annual average price is the unit value P_y = sum_s p|q| / sum_s |q| (the mean
    price in a year whose quantities are all zero); previous-year prices k(s,y) = P_{y-1} q(s,y)
    (IMF, *Quarterly National Accounts Manual, 2017 Edition*, ch. 8, para. 8.17, eq. (2)). The
    first year has no k unless ``first_year_price`` f is given: then k = f P_y q (f = 1, its own
    prices). ``aggregates``: a `Hierarchy` or (aggregate, [(item, sign), ...]) pairs, summed
    bottom-up at both price bases where all components are present. Annual values are sums of
    the quarters (means with ``annual_rate``). With ``chain_linked`` (first year priced, sums)
    every series positive at both bases also gets annual-overlap volumes
    CLV_y = CLV_{y-1} K_y / C_{y-1}, CLV_r = C_r (r = ``ref_year``, default the first year),
    CLV(s,y) = k(s,y) CLV_y / K_y (docs/methods.md section 2.2).
    """
    n = len(next(iter(quantities.values())))
    yidx = np.arange(n) // 4
    years, quarters = start_year + yidx, np.arange(n) % 4 + 1
    n_years = int(yidx.max()) + 1
    counts = np.bincount(yidx)

    def per_year(x, how="sum"):
        tot = np.bincount(yidx, weights=x)
        return tot / counts if how == "mean" else tot

    c, k = {}, {}
    for item, q in quantities.items():
        p, q = np.asarray(prices[item], dtype="float64"), np.asarray(q, dtype="float64")
        c[item] = p * q
        weight = per_year(np.abs(q))
        unit = np.where(weight > 0, per_year(p * np.abs(q)) / np.where(weight > 0, weight, 1.0),
                        per_year(p, "mean"))
        first = np.nan if first_year_price is None else first_year_price * unit[0]
        k[item] = np.r_[first, unit[:-1]][yidx] * q
    if hasattr(aggregates, "aggregates"):  # a Hierarchy
        pairs = [(a, [(x.item, x.sign) for x in aggregates.aggregates[a]]) for a in aggregates.order()]
    else:
        pairs = list(aggregates)
    for agg, comps in pairs:
        if all(i in c for i, _ in comps):
            c[agg] = sum(sg * c[i] for i, sg in comps)
            k[agg] = sum(sg * k[i] for i, sg in comps)
    ay, a0 = start_year + np.arange(n_years), np.zeros(n_years, "int64")
    how = "mean" if annual_rate else "sum"
    parts = []

    def add(item, basis, freq, yy, qq, vv):
        ok = np.isfinite(vv)
        parts.append(pd.DataFrame({"economy": economy, "item": item, "price_basis": basis, "frequency": freq,
                                   "year": np.asarray(yy, "int64")[ok], "quarter": np.asarray(qq, "int64")[ok],
                                   "value": np.asarray(vv, "float64")[ok]}))

    for basis, table in (("current", c), ("previous_year", k)):
        for item, vals in table.items():
            add(item, basis, "Q", years, quarters, vals)
            add(item, basis, "A", ay, a0, per_year(vals, how))
    if chain_linked:
        r = (start_year if ref_year is None else ref_year) - start_year
        for item in c:
            ca, ka = per_year(c[item]), per_year(k[item])
            if (c[item] > 0).all() and (k[item] > 0).all():
                va = np.cumprod(np.r_[1.0, ka[1:] / ca[:-1]])
                va *= ca[r] / va[r]
                add(item, "chain_linked", "Q", years, quarters, k[item] * (va / ka)[yidx])
                add(item, "chain_linked", "A", ay, a0, va)
    lv = pd.concat(parts, ignore_index=True)
    lv["period"] = period_label(lv["year"], lv["quarter"]).to_numpy()
    return lv[LEVEL_COLUMNS]


def chained_panel(prices, quantities, aggregates=(), *, first_year=2000, ref_year=2000, economy="XX"):
    """`panel_from_quantities` with the first year at its own prices and annual-overlap volumes."""
    return panel_from_quantities(prices, quantities, aggregates, economy=economy, start_year=first_year,
                                 first_year_price=1.0, chain_linked=True, ref_year=ref_year)


#: Worked example of docs/derivations/first_link.md, section 7: year 2000 (first year, no
#: previous-year values; current and chain-linked quarters) and 2001 (every quarter alike).
FIRST_LINK_2000 = {"P3_P5": ([100.0] * 4, [51.0, 51.0, 49.0, 49.0]), "P6": ([50.0] * 4, [25.0] * 4),
                   "P7": ([50.0] * 4, [26.0, 24.0, 25.0, 25.0]), "B1GQ": ([100.0] * 4, [50.0, 52.0, 49.0, 49.0]),
                   "P31_S14": ([60.0] * 4, [30.0] * 4)}
FIRST_LINK_2001 = {"P3_P5": (102.0, 100.0), "P6": (55.0, 50.0), "P7": (52.0, 50.0), "B1GQ": (105.0, 100.0),
                   "P31_S14": (61.2, 60.0)}


def first_link_panel(economy="XX"):
    """The levels panel of docs/derivations/first_link.md, section 7 (quarters and years).

    2001 at current and previous-year prices, c and k per quarter; its chain-linked volumes
    by annual overlap, CLV = k CLV_2000 / C_2000 (= k/2); annual values the sums of quarters.
    """
    q = np.arange(1, 5)
    out = []
    for item, (c, v) in FIRST_LINK_2000.items():
        out += [rows_of(economy, item, "current", "Q", [2000] * 4, q, c),
                rows_of(economy, item, "chain_linked", "Q", [2000] * 4, q, v),
                rows_of(economy, item, "current", "A", [2000], [0], [sum(c)]),
                rows_of(economy, item, "chain_linked", "A", [2000], [0], [sum(v)])]
        c1, k1 = FIRST_LINK_2001[item]
        for basis, x in (("current", c1), ("previous_year", k1), ("chain_linked", k1 * sum(v) / sum(c))):
            out += [rows_of(economy, item, basis, "Q", [2001] * 4, q, [x] * 4),
                    rows_of(economy, item, basis, "A", [2001], [0], [4 * x])]
    lv = pd.concat(out, ignore_index=True)
    lv["period"] = period_label(lv["year"], lv["quarter"]).to_numpy()
    return lv[LEVEL_COLUMNS]


def uk_release() -> pd.DataFrame:
    """The UK release as stored, with year, quarter and frequency columns."""
    d = pd.read_csv(UK_FILE, dtype={"period": str})
    d["year"] = d["period"].str[:4].astype("int64")
    d["quarter"] = np.where(d["period"].str.contains("Q"), d["period"].str[-1], "0").astype("int64")
    d["frequency"] = np.where(d["quarter"] > 0, "Q", "A")
    return d


#: Expenditure components of UK GDP in the release, with their signs: B1GQ = P31_S14 + P3_S15 +
#: P3_S13 + P51G + P52 + P53 + P6 - P7 + YA1 (current prices add within +-1 GBP million).
UK_COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "-P7", "YA1"]
#: The positive components, whose published volumes are own-deflator annual-overlap links.
UK_POSITIVE = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P6", "P7"]
UK_HIERARCHY = Hierarchy.from_mapping({"B1GQ": UK_COMPONENTS})


def uk_published_levels(d: pd.DataFrame) -> pd.DataFrame:
    """Levels panel of the release: published current prices and chained volumes (2019), Q and A."""
    basis = {"current_prices": "current", "chain_linked_volume": "chain_linked"}
    x = d[d["measure"].isin(basis)].copy()
    x["price_basis"] = x["measure"].map(basis)
    x["value"] = x["value"].astype("float64")
    return x[LEVEL_COLUMNS].reset_index(drop=True)


def uk_previous_year_prices(levels: pd.DataFrame) -> pd.DataFrame:
    """The one derivation of previous-year prices from the release (docs/methods.md section 10(c)).

    The release publishes none. For GDP and the positive components the published volumes are
    own-deflator annual-overlap links, which invert exactly: PYP(i,q) = CVM(i,q) CP(i,y-1) /
    CVM(i,y-1), y the year of quarter q. P52 and P53 (whose volumes are not such links) are
    valued with GDP's deflator of y-1, and YA1 closes the identity. Annual values are the sums
    of the quarters; 1995, the first year, has none.
    """
    items = ["B1GQ", *UK_POSITIVE, "P52", "P53"]
    q = levels[(levels["frequency"] == "Q") & levels["item"].isin(items)]
    cvm = q[q["price_basis"] == "chain_linked"].set_index(["item", "year", "quarter"])["value"]
    a = levels[levels["frequency"] == "A"].set_index(["item", "price_basis", "year"])["value"]
    deflator_item = {i: i for i in ["B1GQ", *UK_POSITIVE]} | {"P52": "B1GQ", "P53": "B1GQ"}
    idx = cvm.index
    defl_of = np.array([deflator_item[i] for i in idx.get_level_values("item")], dtype=object)
    prev = idx.get_level_values("year") - 1
    cp_prev = a.reindex(pd.MultiIndex.from_arrays([defl_of, ["current"] * len(idx), prev])).to_numpy()
    cvm_prev = a.reindex(pd.MultiIndex.from_arrays([defl_of, ["chain_linked"] * len(idx), prev])).to_numpy()
    wide = pd.Series(cvm.to_numpy() * cp_prev / cvm_prev, index=idx).dropna().unstack("item")
    signs = {c.item: c.sign for c in UK_HIERARCHY.aggregates["B1GQ"]}
    wide["YA1"] = wide["B1GQ"] - sum(signs[i] * wide[i] for i in [*UK_POSITIVE, "P52", "P53"])
    long = wide.stack().rename("value").reset_index().assign(economy="UK", price_basis="previous_year",
                                                             frequency="Q")
    ann = long.groupby(["economy", "item", "price_basis", "year"], as_index=False)["value"].sum()
    out = pd.concat([long, ann.assign(frequency="A", quarter=0)], ignore_index=True)
    out["period"] = period_label(out["year"], out["quarter"]).to_numpy()
    return out[LEVEL_COLUMNS]


def uk_additive_panel(levels: pd.DataFrame, pyp: pd.DataFrame) -> pd.DataFrame:
    """Current prices of GDP and its components plus the derived previous-year prices, additive.

    The published current prices add up only within +-4 GBP million (rounding); YA1 takes that
    gap too, so the panel is exactly additive at both price bases.
    """
    items = ["B1GQ"] + [c.lstrip("-") for c in UK_COMPONENTS]
    cur = levels[(levels["price_basis"] == "current") & levels["item"].isin(items)].copy()
    wide = cur.pivot_table(index=["frequency", "year", "quarter"], columns="item", values="value")
    signs = {c.item: c.sign for c in UK_HIERARCHY.aggregates["B1GQ"]}
    gap = wide["B1GQ"] - sum(s * wide[i] for i, s in signs.items())
    ya1 = cur["item"] == "YA1"
    key = pd.MultiIndex.from_frame(cur.loc[ya1, ["frequency", "year", "quarter"]])
    cur.loc[ya1, "value"] = cur.loc[ya1, "value"].to_numpy() + gap.reindex(key).to_numpy()
    return pd.concat([cur, pyp], ignore_index=True).reset_index(drop=True)


def uk_panel(d: pd.DataFrame) -> pd.DataFrame:
    """The additive panel with P3 and P5 summed and the published chained volumes of its items."""
    levels = uk_published_levels(d)
    add = uk_additive_panel(levels, uk_previous_year_prices(levels))
    parts = {"P3": ["P31_S14", "P3_S15", "P3_S13"], "P5": ["P51G", "P52", "P53"]}
    key = ["economy", "price_basis", "frequency", "year", "quarter", "period"]
    sums = [add[add["item"].isin(c)].groupby(key, as_index=False)["value"].sum().assign(item=a)
            for a, c in parts.items()]
    items = set(add["item"])
    clv = levels[(levels["price_basis"] == "chain_linked") & levels["item"].isin(items)]
    return pd.concat([add, *sums, clv], ignore_index=True)[LEVEL_COLUMNS].reset_index(drop=True)


def valvol_command() -> list[str]:
    """The installed ``valvol`` console script, as a user runs it (``python -m valvol.cli`` if absent).

    Subprocesses should also run outside the repository (``cwd``): there, ``python -m`` would
    import the source folder ``valvol/``, which lacks the sub-packages the installation maps in.
    """
    script = Path(sys.executable).with_name("valvol")
    return [str(script)] if script.exists() else [sys.executable, "-m", "valvol.cli"]


def demo_panel(folder: Path, demo_dir: Path, codes=("XQ", "XR", "XS")) -> Path:
    """The demo economy under several codes, scaled differently (an invented panel); returns ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    base = pd.read_csv(demo_dir / "accounts.csv")
    frames = [base.assign(economy=code, value=(base["value"] * (1 + 0.5 * i)).round(1)) for i, code in enumerate(codes)]
    pd.concat(frames).to_csv(folder / "panel.csv", index=False)
    (folder / "valvol.toml").write_bytes((demo_dir / "valvol.toml").read_bytes())
    return folder
