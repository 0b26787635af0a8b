"""Shared test panels for the chain-linking and contributions tests.

The UK panels come from the ONS Quarterly National Accounts dataset, release of
31 March 2023 (tests/reference_data/uk_ons_qna_2023-03-31.csv; provenance in
tests/reference_data/README.md).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from support import uk_release

from valvol.frames import LEVEL_COLUMNS, period_label
from valvol.hierarchy import Hierarchy

REFERENCE = Path(__file__).resolve().parents[1] / "reference_data"

#: Expenditure components of UK GDP in the release, with their signs (B1GQ identity of the
#: reference README: B1GQ = P31_S14 + P3_S15 + P3_S13 + P51G + P52 + P53 + P6 - P7 + YA1).
UK_COMPONENTS = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P52", "P53", "P6", "-P7", "YA1"]
UK_POSITIVE = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P6", "P7"]
UK_HIERARCHY = Hierarchy.from_mapping({"B1GQ": UK_COMPONENTS})




@pytest.fixture(scope="session")
def uk_raw() -> pd.DataFrame:
    """The release as stored (long: economy, period, item, measure, unit, adjustment, value)."""
    return uk_release()


def _levels(d: pd.DataFrame, measure: str, basis: str) -> pd.DataFrame:
    x = d[d["measure"] == measure].copy()
    x["price_basis"] = basis
    x["value"] = x["value"].astype("float64")
    return x[LEVEL_COLUMNS].reset_index(drop=True)


@pytest.fixture(scope="session")
def uk_published(uk_raw: pd.DataFrame) -> pd.DataFrame:
    """Levels panel: published current prices and chained volumes (ref. 2019), Q and A."""
    return pd.concat([_levels(uk_raw, "current_prices", "current"),
                      _levels(uk_raw, "chain_linked_volume", "chain_linked")], ignore_index=True)


@pytest.fixture(scope="session")
def uk_pyp(uk_published: pd.DataFrame) -> pd.DataFrame:
    """Additive previous-year-price values built as the reference README explains.

    GDP and the positive components: PYP(i,q) = CVM(i,q) x CP(i,y-1) / CVM(i,y-1); P52 and
    P53 valued with GDP's deflator of the previous year; YA1 closes the identity. Annual
    values are the sums of the quarters. 1995, the first year, has none.
    """
    lv = uk_published
    items = ["B1GQ"] + UK_POSITIVE + ["P52", "P53"]
    q = lv[(lv["frequency"] == "Q") & lv["item"].isin(items)]
    cvm = q[q["price_basis"] == "chain_linked"].set_index(["item", "year", "quarter"])["value"]
    a = lv[(lv["frequency"] == "A")].set_index(["item", "price_basis", "year"])["value"]
    deflator_item = {i: i for i in ["B1GQ"] + UK_POSITIVE} | {"P52": "B1GQ", "P53": "B1GQ"}
    idx = cvm.index
    defl_of = np.array([deflator_item[i] for i in idx.get_level_values("item")], dtype=object)
    prev = idx.get_level_values("year") - 1
    cp_prev = a.reindex(pd.MultiIndex.from_arrays([defl_of, ["current"] * len(idx), prev])).to_numpy()
    cvm_prev = a.reindex(pd.MultiIndex.from_arrays([defl_of, ["chain_linked"] * len(idx), prev])).to_numpy()
    pyp = pd.Series(cvm.to_numpy() * cp_prev / cvm_prev, index=idx).dropna()
    wide = pyp.unstack("item")
    signs = {c.item: c.sign for c in UK_HIERARCHY.aggregates["B1GQ"]}
    others = sum(signs[i] * wide[i] for i in UK_POSITIVE + ["P52", "P53"])
    wide["YA1"] = wide["B1GQ"] - others
    long = wide.stack().rename("value").reset_index()
    long["economy"] = "UK"
    long["price_basis"] = "previous_year"
    long["frequency"] = "Q"
    ann = long.groupby(["economy", "item", "price_basis", "year"], as_index=False)["value"].sum()
    ann["frequency"] = "A"
    ann["quarter"] = 0
    out = pd.concat([long, ann], ignore_index=True)
    out["period"] = period_label(out["year"], out["quarter"]).to_numpy()
    return out[LEVEL_COLUMNS]


@pytest.fixture(scope="session")
def uk_for_chaining(uk_published: pd.DataFrame, uk_pyp: pd.DataFrame) -> pd.DataFrame:
    """Current prices (GDP and its components) plus the derived previous-year prices.

    The published current prices add up only within +-4 GBP million (rounding); YA1 takes
    that gap too, so that the panel is exactly additive at both price bases.
    """
    items = ["B1GQ"] + [c.lstrip("-") for c in UK_COMPONENTS]
    cur = uk_published[(uk_published["price_basis"] == "current") & uk_published["item"].isin(items)].copy()
    wide = cur.pivot_table(index=["frequency", "year", "quarter"], columns="item", values="value")
    signs = {c.item: c.sign for c in UK_HIERARCHY.aggregates["B1GQ"]}
    gap = wide["B1GQ"] - sum(s * wide[i] for i, s in signs.items())
    ya1 = cur["item"] == "YA1"
    key = pd.MultiIndex.from_frame(cur.loc[ya1, ["frequency", "year", "quarter"]])
    cur.loc[ya1, "value"] = cur.loc[ya1, "value"].to_numpy() + gap.reindex(key).to_numpy()
    return pd.concat([cur, uk_pyp], ignore_index=True)


# ------------------------------------------------------------------ synthetic panels
def panel_from_quantities(prices: dict[str, np.ndarray], quantities: dict[str, np.ndarray],
                          hierarchy: Hierarchy, *, economy: str = "E", start_year: int = 2000,
                          first_year_pyp: bool = False, annual_rate: bool = False) -> pd.DataFrame:
    """Levels panel built from quarterly prices and quantities of elementary items.

    c = p q; the annual average price is the unit value P_y = sum_s c / sum_s q (weights |q|
    for quantities that change sign) and
    k(s,y) = P_{y-1} q(s,y) (QNA 2017 ch. 8 ¶8.17, eq. (2)); the first year has no k unless
    ``first_year_pyp`` (then valued at 0.9 x its own average price, no current values of
    the year before). Aggregates are signed sums at both price bases, annual values sums of
    the quarters (means with ``annual_rate``).
    """
    n = len(next(iter(quantities.values())))
    yidx = np.arange(n) // 4
    years = start_year + yidx
    quarters = np.arange(n) % 4 + 1

    def per_year(x, how="sum"):
        tot = np.bincount(yidx, weights=x)
        return tot / np.bincount(yidx) if how == "mean" else tot

    c, k = {}, {}
    for item, q in quantities.items():
        p = np.asarray(prices[item], dtype="float64")
        q = np.asarray(q, dtype="float64")
        c[item] = p * q
        # unit value; for quantities that change sign, |q|-weighted (mean price if all zero)
        weight = per_year(np.abs(q))
        unit = np.where(weight > 0, per_year(p * np.abs(q)) / np.where(weight > 0, weight, 1.0),
                        per_year(p, "mean"))
        prev = np.concatenate([[0.9 * unit[0] if first_year_pyp else np.nan], unit[:-1]])
        k[item] = prev[yidx] * q
    for agg in hierarchy.order():
        comps = hierarchy.aggregates[agg]
        if all(x.item in c for x in comps):
            c[agg] = sum(x.sign * c[x.item] for x in comps)
            k[agg] = sum(x.sign * k[x.item] for x in comps)
    cols: dict[str, list] = {k_: [] for k_ in ("item", "price_basis", "frequency", "year", "quarter", "value")}
    n_years = int(yidx.max()) + 1
    for basis, table in (("current", c), ("previous_year", k)):
        for item, vals in table.items():
            ann = per_year(vals, "mean" if annual_rate else "sum")
            for freq, yy, qq, vv in (("Q", years, quarters, vals),
                                     ("A", start_year + np.arange(n_years), np.zeros(n_years, "int64"), ann)):
                ok = np.isfinite(vv)
                cols["item"] += [item] * int(ok.sum())
                cols["price_basis"] += [basis] * int(ok.sum())
                cols["frequency"] += [freq] * int(ok.sum())
                cols["year"].append(yy[ok])
                cols["quarter"].append(qq[ok])
                cols["value"].append(vv[ok])
    out = pd.DataFrame({"economy": economy, "item": cols["item"], "price_basis": cols["price_basis"],
                        "frequency": cols["frequency"],
                        "year": np.concatenate(cols["year"]).astype("int64"),
                        "quarter": np.concatenate(cols["quarter"]).astype("int64"),
                        "value": np.concatenate(cols["value"])})
    out["period"] = period_label(out["year"], out["quarter"]).to_numpy()
    return out[LEVEL_COLUMNS]


@pytest.fixture(scope="session")
def make_panel():
    """`panel_from_quantities`, as a fixture (test modules do not import conftest)."""
    return panel_from_quantities
