"""The straightforward way: deflators and volume contributions with a pandas loop per series.

What an analyst would write without valvol, kept as the comparison for ``bench_rebuild.py``:
read the accounts, then for each economy and each series chain-link the previous-year-price
values by annual overlap (reference year: the economy's latest year), take implicit deflators
and quarter-on-quarter volume growth, and for each aggregate and component the contributions
to quarter-on-quarter volume growth (within a year on previous-year prices; across the year
boundary through the annual average of the previous year, so that they add up). Sign-changing
items (inventories, the discrepancy) get contributions but no volume growth or deflator.

    python benchmarks/baseline_loop.py ACCOUNTS_DIR OUT_DIR

writes ``deflators.parquet``, ``growth.parquet`` and ``contributions.parquet`` to OUT_DIR.
"""

from __future__ import annotations

import sys
import tomllib
from pathlib import Path

import pandas as pd

SIGN_CHANGING = {"P52", "YA1"}


def main(accounts_dir: Path, out_dir: Path) -> None:
    acc = pd.read_csv(accounts_dir / "accounts.csv", dtype={"period": str})
    aggregates = tomllib.loads((accounts_dir / "valvol.toml").read_text())["aggregates"]
    deflators, growth, contributions = [], [], []
    for economy, e in acc.groupby("economy"):
        q = e[e["period"].str.contains("Q")]
        a = e[~e["period"].str.contains("Q")]
        series = {}
        for (item, basis), s in q.groupby(["item", "price_basis"]):
            series[item, basis, "Q"] = s.set_index("period")["value"].sort_index()
        for (item, basis), s in a.groupby(["item", "price_basis"]):
            series[item, basis, "A"] = s.set_index(s["period"].astype(int))["value"].sort_index()
        items = sorted({k[0] for k in series})
        ref = max(series["B1GQ", "current", "A"].index)
        for item in items:
            if item in SIGN_CHANGING:
                continue
            c_a, k_a = series[item, "current", "A"], series[item, "previous_year", "A"]
            links = (k_a / c_a.shift(1)).fillna(1.0)
            chain = links.cumprod()
            clv_a = chain * c_a[ref] / chain[ref]
            c_q, k_q = series[item, "current", "Q"], series[item, "previous_year", "Q"]
            clv_q = pd.Series(index=c_q.index, dtype="float64")
            first = min(c_a.index)
            for period in c_q.index:  # one quarter at a time
                year = int(period[:4])
                if year == first:
                    clv_q[period] = c_q[period] * clv_a[year] / c_a[year]
                else:
                    clv_q[period] = k_q[period] * clv_a[year - 1] / c_a[year - 1]
            for freq, c, v in (("A", c_a, clv_a), ("Q", c_q, clv_q)):
                d = 100 * c / v
                deflators.append(pd.DataFrame({"economy": economy, "item": item, "frequency": freq,
                                               "period": d.index.astype(str), "deflator": d.to_numpy()}))
            g = 100 * (clv_q / clv_q.shift(1) - 1)
            growth.append(pd.DataFrame({"economy": economy, "item": item, "period": g.index,
                                        "pct": g.to_numpy()}).dropna())
        for aggregate, comps in aggregates.items():
            kz, cz_a = series[aggregate, "previous_year", "Q"], series[aggregate, "current", "A"]
            kz_a = series[aggregate, "previous_year", "A"]
            for comp in comps:
                sign = -1.0 if comp.startswith("-") else 1.0
                item = comp.lstrip("-")
                k, c_a = series[item, "previous_year", "Q"], series[item, "current", "A"]
                k_a = series[item, "previous_year", "A"]
                periods = list(series[item, "current", "Q"].index)
                for old, new in zip(periods[:-1], periods[1:], strict=True):  # one quarter at a time
                    y_new = int(new[:4])
                    if y_new == int(min(periods)[:4]) or old not in k.index or new not in k.index:
                        continue
                    if old[:4] == new[:4]:
                        ctr = 100 * sign * (k[new] - k[old]) / kz[old]
                    else:  # through the annual average of the previous year
                        y = y_new - 1
                        if y not in k_a.index:
                            continue
                        ctr = 100 * sign * (k_a[y] / 4 - k[old] + (k[new] - c_a[y] / 4) * kz_a[y] / cz_a[y]) / kz[old]
                    contributions.append((economy, new, aggregate, item, ctr))
    out_dir.mkdir(parents=True, exist_ok=True)
    pd.concat(deflators, ignore_index=True).to_parquet(out_dir / "deflators.parquet")
    pd.concat(growth, ignore_index=True).to_parquet(out_dir / "growth.parquet")
    pd.DataFrame(contributions, columns=["economy", "period", "aggregate", "item", "contribution_pp"]).to_parquet(
        out_dir / "contributions.parquet")


if __name__ == "__main__":
    main(Path(sys.argv[1]), Path(sys.argv[2]))
