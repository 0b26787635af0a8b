"""Timing of chain-linking and volume contributions on a large synthetic panel.

200 invented economies x 30 years of quarters x 15 items in a 3-level hierarchy (GDP; its
consumption, capital formation, exports and imports aggregates; their components), at current
and previous-year prices with annual rows. Run: ``python benchmarks/bench_chainlink.py``.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from valvol.frames import LEVEL_COLUMNS, period_label
from valvol.hierarchy import Hierarchy
from valvol.methods.chainlink import chain_link
from valvol.methods.contributions import CONVENTIONS, volume_contributions

HIERARCHY = Hierarchy.from_mapping({
    "B1GQ": ["P3", "P5", "P6", "-P7", "YA1"],
    "P3": ["P31_S14", "P3_S15", "P3_S13"],
    "P5": ["P51G", "P52"],
    "P6": ["P61", "P62"],
    "P7": ["P71", "P72"],
})
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


def main() -> None:
    t0 = time.perf_counter()
    panel = synthetic_panel()
    t1 = time.perf_counter()
    print(f"synthetic panel: {len(panel):,} rows, {panel['economy'].nunique()} economies, "
          f"{panel['item'].nunique()} items, built in {t1 - t0:.2f} s")
    chained = None
    for method in ("annual_overlap", "one_quarter_overlap", "over_the_year"):
        t = time.perf_counter()
        out = chain_link(panel, hierarchy=HIERARCHY, method=method, reference_year=2019)
        print(f"chain_link({method}): {len(out):,} rows in {time.perf_counter() - t:.2f} s")
        if method == "annual_overlap":
            chained = out
    full = pd.concat([panel, chained], ignore_index=True)
    for convention in CONVENTIONS:
        t = time.perf_counter()
        ctr = volume_contributions(full, hierarchy=HIERARCHY, convention=convention)
        print(f"volume_contributions({convention}): {len(ctr):,} rows in {time.perf_counter() - t:.2f} s; "
              f"max |residual| {ctr['residual_pp'].abs().max():.2e} pp")
    print(f"total {time.perf_counter() - t0:.2f} s")


if __name__ == "__main__":
    main()
