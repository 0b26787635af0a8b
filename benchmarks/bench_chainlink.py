"""Timing of chain-linking and volume contributions on a large synthetic panel.

200 invented economies x 30 years of quarters x 15 items in a 3-level hierarchy (GDP; its
consumption, capital formation, exports and imports aggregates; their components), at current
and previous-year prices with annual rows. Run: ``python benchmarks/bench_chainlink.py``.
"""

from __future__ import annotations

import time

import pandas as pd
from synthetic import HIERARCHY, synthetic_panel

from valvol.methods.chainlink import chain_link
from valvol.methods.contributions import CONVENTIONS, volume_contributions


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
