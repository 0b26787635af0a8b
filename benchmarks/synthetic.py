"""An invented panel of economies for the speed scripts: prices, quantities and the accounts they give.

Each economy has 15 items in a 3-level hierarchy (GDP; consumption, capital formation,
exports and imports; their components), quarterly and annual values at current prices and at
the previous year's average prices (value-weighted unit values, so the data are exactly
annual-overlap data); inventories P52 and the discrepancy YA1 change sign. Nothing here is
anyone's published data.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from valvol.frames import LEVEL_COLUMNS, period_label
from valvol.hierarchy import Hierarchy

AGGREGATES = {
    "B1GQ": ["P3", "P5", "P6", "-P7", "YA1"],
    "P3": ["P31_S14", "P3_S15", "P3_S13"],
    "P5": ["P51G", "P52"],
    "P6": ["P61", "P62"],
    "P7": ["P71", "P72"],
}
HIERARCHY = Hierarchy.from_mapping(AGGREGATES)
#: leaf -> (quantity low, high); P52 and YA1 change sign
LEAVES = {"P31_S14": (550, 650), "P3_S15": (20, 30), "P3_S13": (180, 220), "P51G": (150, 200),
          "P52": (-10, 10), "P61": (150, 200), "P62": (100, 150), "P71": (200, 250), "P72": (80, 120),
          "YA1": (-5, 5)}


def synthetic_panel(n_economies: int = 200, n_years: int = 30, seed: int = 0) -> pd.DataFrame:
    """Levels panel (current and previous_year, Q and A) built from prices and quantities."""
    rng = np.random.default_rng(seed)
    n_q = 4 * n_years
    shape = (n_economies, n_q)
    yidx = np.arange(n_q) // 4
    c, k = {}, {}
    for item, (lo, hi) in LEAVES.items():
        p = rng.uniform(0.8, 1.2, (n_economies, 1)) * np.cumprod(rng.uniform(0.99, 1.02, shape), axis=1)
        q = rng.uniform(lo, hi, shape)
        c[item] = p * q
        w = np.abs(q)
        num = np.add.reduceat(p * w, np.arange(0, n_q, 4), axis=1)
        unit = num / np.add.reduceat(w, np.arange(0, n_q, 4), axis=1)
        prev = np.concatenate([np.full((n_economies, 1), np.nan), unit[:, :-1]], axis=1)
        k[item] = prev[:, yidx] * q
    for agg in HIERARCHY.order():
        comps = HIERARCHY.aggregates[agg]
        c[agg] = sum(x.sign * c[x.item] for x in comps)
        k[agg] = sum(x.sign * k[x.item] for x in comps)
    econ = np.array([f"E{i:03d}" for i in range(n_economies)], dtype=object)
    parts = []
    for basis, table in (("current", c), ("previous_year", k)):
        for item, vals in table.items():
            ann = vals.reshape(n_economies, n_years, 4).sum(axis=2)
            for freq, v, years, quarters in (
                    ("Q", vals, 2000 + yidx, np.arange(n_q) % 4 + 1),
                    ("A", ann, 2000 + np.arange(n_years), np.zeros(n_years, dtype="int64"))):
                ok = np.isfinite(v)
                e_idx, t_idx = np.nonzero(ok)
                parts.append(pd.DataFrame({"economy": econ[e_idx], "item": item, "price_basis": basis,
                                           "frequency": freq, "year": years[t_idx], "quarter": quarters[t_idx],
                                           "value": v[ok]}))
    out = pd.concat(parts, ignore_index=True)
    out["period"] = period_label(out["year"], out["quarter"]).to_numpy()
    return out[LEVEL_COLUMNS]




def write_accounts(folder: Path, n_economies: int, n_years: int = 30, seed: int = 0) -> int:
    """An accounts folder (``accounts.csv`` + ``valvol.toml`` declaring the hierarchy); returns its rows."""
    folder.mkdir(parents=True, exist_ok=True)
    panel = synthetic_panel(n_economies, n_years, seed)
    rows = panel[["economy", "period", "item", "price_basis", "value"]].assign(value=panel["value"].map(repr))
    rows.to_csv(folder / "accounts.csv", index=False)
    lines = ["# invented benchmark panel", "[aggregates]"]
    lines += [f"{a} = [{', '.join(f'{c!r}'.replace(chr(39), chr(34)) for c in comps)}]" for a, comps in AGGREGATES.items()]
    (folder / "valvol.toml").write_text("\n".join(lines) + "\n")
    return len(rows)
