"""Test helpers shared by several test modules: small panels and the UK reference release.

Importable as ``support`` (pytest puts ``tests/`` on ``sys.path``: ``pythonpath`` in pyproject.toml).
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd

from valvol.frames import LEVEL_COLUMNS, period_label

#: UK ONS Quarterly National Accounts, release of 31 March 2023 (tests/reference_data/README.md).
UK_FILE = Path(__file__).resolve().parents[1] / "reference_data" / "uk_ons_qna_2023-03-31.csv"


def rows_of(economy, item, basis, freq, years, quarters, values):
    return pd.DataFrame({"economy": economy, "item": item, "price_basis": basis, "frequency": freq,
                         "year": np.asarray(years, dtype="int64"), "quarter": np.asarray(quarters, dtype="int64"),
                         "value": np.asarray(values, dtype="float64")})


def make_panel(prices, quantities, spec=(), *, first_year=2000, ref_year=2000, economy="XX"):
    """Quarterly and annual current, previous-year-price and annual-overlap chained values.

    PYP = quantity x unit value of the previous year (first year: its own), QNA 2017 ch. 8;
    CLV_y = CLV_{y-1} K_y / C_{y-1}, CLV_r = C_r, CLV(s, y) = k(s, y) CLV_y / K_y (METHODS.md
    2.2). ``spec``: bottom-up (aggregate, [(item, sign), ...]) summed at current and
    previous-year prices. Series with a non-positive value get no chained rows.
    """
    n = len(next(iter(prices.values())))
    yi = np.arange(n) // 4
    years, quarters = first_year + yi, np.arange(n) % 4 + 1
    ck = {}
    for it in prices:
        p, q = np.asarray(prices[it], float), np.asarray(quantities[it], float)
        unit = np.bincount(yi, p * q) / np.bincount(yi, q)
        ck[it] = (p * q, np.r_[unit[0], unit[:-1]][yi] * q)
    for agg, comps in spec:
        ck[agg] = tuple(sum(s * ck[i][j] for i, s in comps) for j in (0, 1))
    cols: dict[str, list] = {"item": [], "price_basis": [], "frequency": [], "year": [], "quarter": [], "value": []}

    def add(item, basis, freq, yrs, qtrs, values):
        for key, v in zip(cols, (item, basis, freq, yrs, qtrs, values), strict=True):
            cols[key].append(np.broadcast_to(np.asarray(v), (len(values),)))

    ay = first_year + np.arange(yi[-1] + 1)
    zero = np.zeros(len(ay), dtype="int64")
    for it, (c, k) in ck.items():
        ca, ka = np.bincount(yi, c), np.bincount(yi, k)
        add(it, "current", "Q", years, quarters, c)
        add(it, "previous_year", "Q", years, quarters, k)
        add(it, "current", "A", ay, zero, ca)
        add(it, "previous_year", "A", ay, zero, ka)
        if (c > 0).all() and (k > 0).all():
            va = np.cumprod(np.r_[1.0, ka[1:] / ca[:-1]])
            va *= ca[ref_year - first_year] / va[ref_year - first_year]
            add(it, "chain_linked", "Q", years, quarters, k * (va / ka)[yi])
            add(it, "chain_linked", "A", ay, zero, va)
    lv = pd.DataFrame({key: np.concatenate(v) for key, v in cols.items()})
    lv.insert(0, "economy", economy)
    lv = lv.astype({"item": "str", "price_basis": "str", "frequency": "str", "year": "int64", "quarter": "int64",
                    "value": "float64"})
    lv["period"] = period_label(lv["year"], lv["quarter"]).to_numpy()
    return lv[LEVEL_COLUMNS]


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


#: Positive expenditure components of UK GDP in the release (reference README).
UK_POSITIVE = ["P31_S14", "P3_S15", "P3_S13", "P51G", "P6", "P7"]


def uk_panel(d: pd.DataFrame) -> pd.DataFrame:
    """Current prices, chained volumes and derived previous-year prices of the release.

    As the reference README explains: PYP(i,t) = CVM(i,t) CP(i,y-1)/CVM(i,y-1) for GDP and
    the positive components; P52 and P53 at GDP's deflator of y-1; YA1 closes the identity
    at previous-year prices and (within the published +-1 rounding) at current prices.
    P3 and P5 are summed. 1995 has no previous-year prices.
    """
    basis = {"current_prices": "current", "chain_linked_volume": "chain_linked"}
    items = ["B1GQ", *UK_POSITIVE, "P52", "P53", "YA1"]
    x = d[d["measure"].isin(basis) & d["item"].isin(items)].assign(price_basis=lambda t: t["measure"].map(basis))
    w = x.pivot_table(index=["frequency", "year", "quarter"], columns=["price_basis", "item"], values="value")
    cp, cvm = w["current"], w["chain_linked"]
    annual = (cp / cvm).xs("A", level="frequency").droplevel("quarter")
    defl = annual.reindex(w.index.get_level_values("year") - 1).set_axis(w.index)
    pyp = pd.DataFrame({i: cvm[i] * defl[i] for i in ["B1GQ", *UK_POSITIVE]}
                       | {i: cvm[i] * defl["B1GQ"] for i in ["P52", "P53"]})
    cur = cp[items].copy()
    for t in (cur, pyp):
        t["YA1"] = t["B1GQ"] - t[UK_POSITIVE[:-1] + ["P52", "P53"]].sum(axis=1) + t["P7"]
        t["P3"] = t["P31_S14"] + t["P3_S15"] + t["P3_S13"]
        t["P5"] = t["P51G"] + t["P52"] + t["P53"]
        t.columns.name = "item"
    long = pd.concat([t.stack().rename("value").reset_index().assign(price_basis=b)
                      for b, t in (("current", cur), ("previous_year", pyp))], ignore_index=True)
    lv = pd.concat([long.assign(economy="UK"), x[x["price_basis"] == "chain_linked"]], ignore_index=True)
    lv["period"] = period_label(lv["year"], lv["quarter"]).to_numpy()
    return lv[LEVEL_COLUMNS].dropna().reset_index(drop=True)


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
