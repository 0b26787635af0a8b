"""The release report of a vintage: one self-contained HTML file (Jinja2, CSS inline, charts as inline SVG).

What it shows, economy by economy (rows) for a panel:

* the headline: GDP volume and GDP-deflator growth in the latest quarter (on the quarter
  before and on the same quarter a year earlier) and the latest year (on the year before),
  from ``growth`` (item B1GQ);
* contributions of the components of GDP to volume and to deflator growth in the latest
  quarter, on a year earlier (``volume_contributions``, ``deflator_contributions``), in pp;
* the price gaps (households vs GDP, CPI vs households, GDP vs domestic demand and the import
  and export price parts, pp on a year earlier) and the terms of trade (``price_gaps``);
* the charts of ``charts/`` (the panel overview, then each economy's), inline SVG;
* the checks that warn or fail, counted by rule, with their rows (``checks``);
* the largest revisions of growth rates and contributions against the previous vintage
  (``revisions``), when the vintage was revised against one;
* the caution that the outputs are analytical, not official statistics.

The page makes no request: no script, no external style sheet, font or image. The template
(``templates/report.html.j2``, package data) is rendered with autoescape on, so every text from
the data (codes, carried columns, rule names) is escaped; only the SVG that valvol's own
charts wrote is inserted as markup.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pandas as pd
from markupsafe import Markup

from valvol.charts import NAMES
from valvol.errors import ValvolError

#: Price-gap measures shown, on a year earlier (pp), in this order.
GAP_MEASURES = {
    "gap_household_vs_gdp": "households vs GDP",
    "gap_cpi_vs_household": "CPI vs households",
    "gap_gdp_vs_domestic_demand": "GDP vs domestic demand",
    "gap_import_price_part": "import-price part",
    "gap_export_price_part": "export-price part",
}
#: Captions of the charts, by the end of their file name.
CAPTIONS = {
    "panel_overview": "GDP volume and GDP-deflator growth in the latest year, by economy",
    "deflator_contributions": "contributions to GDP-deflator growth, on a year earlier",
    "deflator_gap": "household consumption vs GDP deflator growth, and the gap",
    "terms_of_trade": "export and import deflators and the terms of trade",
}
#: Rows of warned or failed checks listed (the count by rule covers them all).
CHECK_ROWS = 200
#: Largest revisions listed.
REVISION_ROWS = 15
TABLES = ("growth", "volume_contributions", "deflator_contributions", "price_gaps", "checks", "revisions")


def _fmt(value, digits: int = 2, suffix: str = "") -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)) or pd.isna(value):
        return "–"
    return f"{value:,.{digits}f}{suffix}"


def _latest(frame: pd.DataFrame) -> pd.DataFrame:
    """Rows of each economy's latest period (periods sort as text within a frequency)."""
    if frame.empty:
        return frame
    last = frame.groupby("economy")["period"].transform("max")
    return frame[frame["period"] == last]


def headline(growth: pd.DataFrame) -> list[dict]:
    """Per economy: GDP volume and deflator growth, latest quarter (q/q, y/y) and latest year."""
    g = growth[(growth["item"] == "B1GQ") & growth["measure"].isin(["volume", "price"])]
    out = {}
    for freq, horizons in (("Q", ("prev_period", "prev_year")), ("A", ("prev_period",))):
        part = _latest(g[g["frequency"] == freq])
        for r in part.itertuples(index=False):
            if r.horizon in horizons:
                row = out.setdefault(r.economy, {"economy": r.economy})
                row[f"{freq}_period"] = r.period
                row[f"{freq}_{r.measure}_{r.horizon}"] = _fmt(r.pct, 2, "%")
    return [out[e] for e in sorted(out)]


def contributions(contrib: pd.DataFrame) -> tuple[list[str], list[dict]]:
    """Latest quarter's contributions to GDP growth on a year earlier: components and rows per economy."""
    c = contrib[(contrib["aggregate"] == "B1GQ") & (contrib["frequency"] == "Q") & (contrib["horizon"] == "prev_year")]
    c = _latest(c)
    if c.empty:
        return [], []
    wide = c.pivot_table(index=["economy", "period"], columns="item", values="contribution_pp", sort=True)
    total = c.drop_duplicates("economy").set_index("economy")["aggregate_growth_pct"]
    items = list(wide.columns)
    rows = [{"economy": e, "period": p, "total": _fmt(total.get(e), 2, "%"),
             "values": [_fmt(wide.loc[(e, p), i], 2) for i in items]} for e, p in wide.index]
    return [NAMES.get(i, i) for i in items], rows


def price_gaps(gaps: pd.DataFrame) -> list[dict]:
    """Latest quarter's price gaps on a year earlier (pp) and the terms of trade, per economy."""
    q = gaps[gaps["frequency"] == "Q"]
    gap = _latest(q[q["measure"].isin(list(GAP_MEASURES)) & (q["horizon"] == "prev_year")])
    tot = _latest(q[q["measure"] == "terms_of_trade"]).set_index("economy")
    rows = []
    for economy, part in gap.groupby("economy", sort=True):
        values = part.set_index("measure")["value"]
        rows.append({"economy": economy, "period": part["period"].iloc[0],
                     "values": [_fmt(values.get(m), 2) for m in GAP_MEASURES],
                     "terms_of_trade": _fmt(tot["value"].get(economy), 1)})
    return rows


def checks_to_review(checks: pd.DataFrame) -> tuple[list[dict], list[dict], int]:
    """Warned and failed checks: counts by rule and status, the first rows, and how many in all."""
    bad = checks[checks["status"].isin(["warn", "fail"])]
    by_rule = (bad.groupby(["rule", "status"], sort=True).size().reset_index(name="count")
               .to_dict("records"))
    rows = [{"economy": r.economy, "period": r.period, "rule": r.rule, "item": r.item, "status": r.status,
             "value": _fmt(r.value, 3), "tolerance": _fmt(r.tolerance, 3)}
            for r in bad.head(CHECK_ROWS).itertuples(index=False)]
    return by_rule, rows, len(bad)


def largest_revisions(revs: pd.DataFrame) -> list[dict]:
    """The largest revisions (absolute, pp) of growth rates and contributions."""
    if revs is None or revs.empty:
        return []
    r = revs[revs["measure"].astype(str).str.startswith(("growth_", "contribution_")) & revs["revision"].notna()]
    r = r.assign(size=r["revision"].abs()).sort_values(["size", "economy", "period"], ascending=[False, True, True])
    return [{"economy": x.economy, "period": x.period, "item": x.item, "name": NAMES.get(x.item, ""),
             "measure": x.measure, "earlier": _fmt(x.earlier, 2), "later": _fmt(x.later, 2),
             "revision": _fmt(x.revision, 2, " pp"), "sign": "up" if x.revision > 0 else "down"}
            for x in r.head(REVISION_ROWS).itertuples(index=False) if x.size > 0]


def inline_svg(path: Path) -> str:
    """A matplotlib SVG file without its XML prolog, ready to sit inside HTML."""
    text = Path(path).read_text(encoding="utf-8")
    start = text.find("<svg")
    if start < 0:
        raise ValvolError(f"{path}: not an SVG file")
    return text[start:]


def context(tables: dict[str, pd.DataFrame], manifest: dict, charts: list[Path]) -> dict:
    """Everything the template shows (module docstring), from a vintage's tables and manifest."""
    empty = pd.DataFrame(columns=["economy", "period", "frequency", "item", "measure", "horizon", "pct", "value",
                                  "aggregate", "contribution_pp", "aggregate_growth_pct", "rule", "status",
                                  "tolerance"])
    t = {name: tables.get(name, empty) for name in TABLES}
    vol_items, vol_rows = contributions(t["volume_contributions"])
    defl_items, defl_rows = contributions(t["deflator_contributions"])
    by_rule, check_rows, n_bad = checks_to_review(t["checks"])
    economies = sorted(set(t["growth"]["economy"])) if len(t["growth"]) else []
    groups: dict[str, list[dict]] = {}
    for path in charts:
        key = "panel" if Path(path).parent.name == "charts" else Path(path).parent.name
        stem = Path(path).stem
        caption = next((c for end, c in CAPTIONS.items() if stem.endswith(end)), stem)
        groups.setdefault(key, []).append({"name": stem, "caption": caption, "svg": inline_svg(path)})
    for items in groups.values():
        for c in items:
            c["svg"] = Markup(c["svg"])  # valvol's own charts; everything else stays escaped
    return {
        "vintage": manifest.get("vintage", ""), "label": manifest.get("label"),
        "created_at": manifest.get("created_at", ""), "revised_against": manifest.get("revised_against"),
        "caution": manifest.get("caution") or "Analytical outputs, not official statistics.",
        "economies": economies, "headline": headline(t["growth"]),
        "volume": {"items": vol_items, "rows": vol_rows}, "deflator": {"items": defl_items, "rows": defl_rows},
        "gap_names": list(GAP_MEASURES.values()), "gaps": price_gaps(t["price_gaps"]),
        "checks_by_rule": by_rule, "check_rows": check_rows, "checks_bad": n_bad,
        "checks_total": len(t["checks"]), "check_rows_limit": CHECK_ROWS,
        "revisions": largest_revisions(t["revisions"]),
        "panel_charts": groups.pop("panel", []), "economy_charts": sorted(groups.items()),
        "row_counts": manifest.get("row_counts", {}),
    }


def render(ctx: dict) -> str:
    """The report's HTML from its context (autoescape on)."""
    from jinja2 import Environment, PackageLoader, StrictUndefined

    env = Environment(loader=PackageLoader("valvol.review", "templates"), autoescape=True,
                      undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    return env.get_template("report.html.j2").render(**ctx)


def report_of_vintage(folder: Path, path: Path, manifest: dict | None = None) -> Path:
    """Write the release report of the vintage in ``folder`` to ``path`` (manifest read unless given)."""
    folder = Path(folder)
    if manifest is None:
        if not (folder / "manifest.json").exists():
            raise ValvolError(f"{folder} is not a vintage (no manifest.json)")
        manifest = json.loads((folder / "manifest.json").read_text())
    tables = {n: pd.read_parquet(folder / f"{n}.parquet") for n in TABLES if (folder / f"{n}.parquet").exists()}
    charts = sorted((folder / c for c in manifest.get("charts", []) if c.endswith(".svg")),
                    key=lambda p: (p.parent != folder / "charts", str(p)))
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(render(context(tables, manifest, charts)), encoding="utf-8")
    return path
