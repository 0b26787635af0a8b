"""Charts of a vintage, drawn from its published tables (PNG and SVG, matplotlib, no screen).

For each chosen economy, in ``charts/<economy>/``:

* ``<economy>_deflator_contributions``: contributions of the components of GDP to GDP-deflator
  growth on the same quarter a year earlier, stacked bars (imports negative when import prices
  rise), with the deflator's own growth as a line;
* ``<economy>_deflator_gap``: household consumption deflator and GDP deflator growth on a year
  earlier (lines) and the gap between them (bars), with the CPI when given;
* ``<economy>_terms_of_trade``: export and import deflators and the terms of trade
  (100 x export / import deflator);
* ``<economy>_price_bridge`` (with CPI sub-indexes): the effects of the CPI-to-household-deflator
  bridge on a year earlier, stacked bars, with the gap as a line.

For a panel (more than one economy), ``charts/panel_overview``: the latest year's GDP volume
and GDP-deflator growth of every economy, side by side (horizontal bars, one row per economy,
so it stays readable for hundreds of economies). Per-economy charts are drawn for every
economy up to `PER_ECONOMY_LIMIT`; beyond it only the overview is drawn and a message says
which economies were not drawn and how to ask for them (``--charts CODES``). Codes asked for
that are not in the accounts are an error (the rebuild's check stage refuses them, exit 2).
"""

from __future__ import annotations

import logging
from pathlib import Path

import matplotlib

matplotlib.use("Agg")  # no screen: files only
matplotlib.rcParams["svg.hashsalt"] = "valvol"  # identical SVG files on rerun

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

log = logging.getLogger("valvol")

#: Colour-blind-safe palette (Okabe & Ito, "Color Universal Design", 2008).
PALETTE = ["#0072B2", "#E69F00", "#009E73", "#D55E00", "#CC79A7", "#56B4E9", "#F0E442", "#999999"]
NAMES = {
    "P3": "final consumption", "P31_S14": "household consumption", "P3_S15": "NPISH", "P3_S13": "government",
    "P5": "gross capital formation", "P51G": "fixed investment", "P52": "inventories", "P53": "valuables",
    "P6": "exports", "P7": "imports", "YA1": "discrepancy", "B1GQ": "GDP", "P3_P5": "domestic demand",
    "P3_P5_P6": "final expenditure",
}
FORMATS = ("png", "svg")


def _quarter_axis(periods: pd.Series) -> np.ndarray:
    p = pd.PeriodIndex(periods.str.replace("-", ""), freq="Q")
    return p.year + (p.quarter - 1) / 4


def _finish(fig, ax, title: str, ylabel: str, path: Path) -> list[Path]:
    ax.set_title(title, loc="left", fontsize=12, fontweight="bold")
    ax.set_ylabel(ylabel)
    ax.grid(axis="y", color="#dddddd", linewidth=0.6)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.legend(frameon=False, fontsize=8, ncols=3, loc="upper left")
    fig.text(0.01, 0.01, "valvol, analytical output, not official statistics", fontsize=7, color="#777777")
    fig.tight_layout(rect=(0, 0.03, 1, 1))
    written = []
    for fmt in FORMATS:
        out = path.with_suffix(f".{fmt}")
        fig.savefig(out, dpi=120, metadata={"Date": None} if fmt == "svg" else {"Software": None})
        written.append(out)
    plt.close(fig)
    return written


def deflator_contributions_chart(contrib: pd.DataFrame, economy: str, path: Path, aggregate: str = "B1GQ") -> list[Path]:
    """Stacked contributions to the aggregate's deflator growth (y/y, quarters) and its growth."""
    d = contrib[(contrib["economy"] == economy) & (contrib["aggregate"] == aggregate)
                & (contrib["frequency"] == "Q") & (contrib["horizon"] == "prev_year")]
    if d.empty:
        return []
    wide = d.pivot_table(index="period", columns="item", values="contribution_pp", sort=True)
    total = d.drop_duplicates("period").set_index("period")["aggregate_growth_pct"].reindex(wide.index)
    x = _quarter_axis(pd.Series(wide.index))
    fig, ax = plt.subplots(figsize=(10, 5))
    pos, neg = np.zeros(len(wide)), np.zeros(len(wide))
    for i, item in enumerate(wide.columns):
        v = wide[item].fillna(0).to_numpy()
        bottom = np.where(v >= 0, pos, neg)
        ax.bar(x, v, width=0.22, bottom=bottom, color=PALETTE[i % len(PALETTE)], label=NAMES.get(item, item))
        pos, neg = pos + np.clip(v, 0, None), neg + np.clip(v, None, 0)
    ax.plot(x, total.to_numpy(), color="black", linewidth=1.8, label=f"{NAMES.get(aggregate, aggregate)} deflator growth")
    ax.axhline(0, color="black", linewidth=0.6)
    return _finish(fig, ax, f"{economy}: contributions to {NAMES.get(aggregate, aggregate)}-deflator growth, "
                   "on a year earlier", "percent / percentage points", path)


def deflator_gap_chart(growth: pd.DataFrame, gaps: pd.DataFrame, economy: str, path: Path) -> list[Path]:
    """Household consumption vs GDP deflator growth (y/y) and the gap between them."""
    g = growth[(growth["economy"] == economy) & (growth["measure"] == "price") & (growth["frequency"] == "Q")
               & (growth["horizon"] == "prev_year") & growth["item"].isin(["P31_S14", "B1GQ"])]
    gap = gaps[(gaps["economy"] == economy) & (gaps["measure"] == "gap_household_vs_gdp")
               & (gaps["frequency"] == "Q") & (gaps["horizon"] == "prev_year")]
    if g.empty or gap.empty:
        return []
    fig, ax = plt.subplots(figsize=(10, 5))
    ax.bar(_quarter_axis(gap["period"]), gap["value"], width=0.22, color="#E69F00",
           label="gap: households minus GDP (pp)")
    for item, colour in (("P31_S14", "#D55E00"), ("B1GQ", "#0072B2")):
        s = g[g["item"] == item].sort_values("period")
        ax.plot(_quarter_axis(s["period"]), s["pct"], color=colour, linewidth=1.8,
                label=f"{NAMES[item]} deflator growth")
    cpi = gaps[(gaps["economy"] == economy) & (gaps["measure"] == "cpi_growth") & (gaps["frequency"] == "Q")
               & (gaps["horizon"] == "prev_year")]
    if len(cpi):
        ax.plot(_quarter_axis(cpi["period"]), cpi["value"], color="#009E73", linewidth=1.2, linestyle="--",
                label="consumer price index growth")
    ax.axhline(0, color="black", linewidth=0.6)
    return _finish(fig, ax, f"{economy}: what households pay vs the price of domestic output, on a year earlier",
                   "percent / percentage points", path)


def terms_of_trade_chart(deflators: pd.DataFrame, gaps: pd.DataFrame, economy: str, path: Path) -> list[Path]:
    """Export and import deflators and the terms of trade, quarters."""
    tot = gaps[(gaps["economy"] == economy) & (gaps["measure"] == "terms_of_trade") & (gaps["frequency"] == "Q")]
    d = deflators[(deflators["economy"] == economy) & (deflators["frequency"] == "Q")
                  & deflators["item"].isin(["P6", "P7"])]
    if tot.empty:
        return []
    fig, ax = plt.subplots(figsize=(10, 5))
    for item, colour in (("P6", "#009E73"), ("P7", "#D55E00")):
        s = d[d["item"] == item].sort_values("period")
        ax.plot(_quarter_axis(s["period"]), s["deflator"], color=colour, linewidth=1.2,
                label=f"{NAMES[item]} deflator")
    ax.plot(_quarter_axis(tot["period"]), tot["value"], color="#0072B2", linewidth=2.2,
            label="terms of trade (100 x export / import deflator)")
    return _finish(fig, ax, f"{economy}: terms of trade", "index (reference year = 100)", path)


BRIDGE_EFFECTS = {"residual": "residual (headline vs sub-indexes)", "scope_index_only": "scope: index only",
                  "weight": "weights", "formula": "formula (substitution)", "scope_accounts_only": "scope: accounts only"}


def price_bridge_chart(bridge: pd.DataFrame, economy: str, path: Path) -> list[Path]:
    """Stacked effects of the price bridge (quarters on a year earlier, published order), the gap as a line."""
    b = bridge[(bridge["economy"] == economy) & (bridge["frequency"] == "Q") & (bridge["horizon"] == "prev_year")
               & (bridge["order"] == "formula_on_common")]
    if b.empty:
        return []
    w = b.pivot(index="period", columns="effect", values="value_pp").sort_index()
    x = _quarter_axis(pd.Series(w.index))
    fig, ax = plt.subplots(figsize=(10, 5))
    pos, neg = np.zeros(len(w)), np.zeros(len(w))
    for (effect, label), colour in zip(BRIDGE_EFFECTS.items(), PALETTE, strict=False):
        v = w[effect].to_numpy() if effect in w else np.zeros(len(w))
        base = np.where(v >= 0, pos, neg)
        ax.bar(x, v, width=0.22, bottom=base, color=colour, label=label)
        pos, neg = pos + np.clip(v, 0, None), neg + np.clip(v, None, 0)
    ax.plot(x, w["gap"], color="#000000", linewidth=1.8, label="gap: CPI minus household deflator growth")
    ax.axhline(0, color="#555555", linewidth=0.6)
    return _finish(fig, ax, f"{economy}: CPI vs household consumption deflator, on a year earlier",
                   "percentage points", path)


def panel_overview_chart(growth: pd.DataFrame, path: Path) -> list[Path]:
    """Latest year's GDP volume and GDP-deflator growth (on the year before) of every economy, bars."""
    g = growth[(growth["item"] == "B1GQ") & (growth["frequency"] == "A") & (growth["horizon"] == "prev_period")
               & growth["measure"].isin(["volume", "price"])]
    if g.empty:
        return []
    latest = g.sort_values("period").groupby(["economy", "measure"], sort=True).tail(1)
    wide = latest.pivot_table(index="economy", columns="measure", values="pct", sort=True)
    years = latest.groupby("economy")["period"].max().reindex(wide.index)
    wide = wide.reindex(columns=["volume", "price"])
    n = len(wide)
    y = np.arange(n)[::-1]
    fig, ax = plt.subplots(figsize=(10, max(3.0, 1.2 + 0.28 * n)))
    ax.barh(y + 0.2, wide["volume"].to_numpy(), height=0.38, color=PALETTE[0], label="GDP volume growth")
    ax.barh(y - 0.2, wide["price"].to_numpy(), height=0.38, color=PALETTE[1], label="GDP deflator growth")
    same_year = years.nunique() == 1
    ax.set_yticks(y, [e if same_year else f"{e} ({years[e]})" for e in wide.index], fontsize=8)
    ax.axvline(0, color="black", linewidth=0.6)
    ax.set_xlabel("percent, on the year before")
    title = f"Panel of {n} economies: latest year" + (f" ({years.iloc[0]})" if same_year else "")
    return _finish(fig, ax, title, "", path)


#: Per-economy charts are drawn for every economy of a panel of at most this many economies.
PER_ECONOMY_LIMIT = 40


def draw_charts(tables_dir: Path, economies: list[str] | None = None,
                limit: int = PER_ECONOMY_LIMIT) -> list[Path]:
    """Draw the charts of the chosen economies (default: all, when there are at most ``limit``)
    in ``charts/<economy>/``, and the panel overview when the accounts hold several economies.

    Unknown codes in ``economies`` are skipped here (the rebuild's check stage refuses them).
    """
    read = {t: pd.read_parquet(tables_dir / f"{t}.parquet")
            for t in ("deflator_contributions", "growth", "price_gaps", "deflators")}
    bridge_file = tables_dir / "price_bridge.parquet"
    bridge = pd.read_parquet(bridge_file) if bridge_file.exists() else None
    known = sorted(read["deflators"]["economy"].unique())
    chosen = known if economies is None else [e for e in economies if e in known]
    if economies is None and len(known) > limit:
        chosen = []
        log.warning("charts: %d economies, more than %d: drew the panel overview only (charts/panel_overview.png); "
                    "no per-economy chart for %s; ask for some with --charts CODES (e.g. --charts %s)",
                    len(known), limit, _listed(known), ",".join(known[:3]))
    out_dir = tables_dir / "charts"
    out_dir.mkdir(exist_ok=True)
    written: list[Path] = []
    if len(known) > 1:
        written += panel_overview_chart(read["growth"], out_dir / "panel_overview")
    for economy in chosen:  # a handful of pictures per economy, not per series
        folder = out_dir / economy
        folder.mkdir(exist_ok=True)
        written += deflator_contributions_chart(read["deflator_contributions"], economy,
                                                folder / f"{economy}_deflator_contributions")
        written += deflator_gap_chart(read["growth"], read["price_gaps"], economy, folder / f"{economy}_deflator_gap")
        written += terms_of_trade_chart(read["deflators"], read["price_gaps"], economy,
                                        folder / f"{economy}_terms_of_trade")
        if bridge is not None:
            written += price_bridge_chart(bridge, economy, folder / f"{economy}_price_bridge")
    return written


def _listed(codes: list[str], shown: int = 8) -> str:
    head = ", ".join(codes[:shown])
    return head + (f" and {len(codes) - shown} more" if len(codes) > shown else "")
