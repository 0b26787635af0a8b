"""The review workbook of a vintage (XLSX, XlsxWriter): every published table for spreadsheet readers.

Sheets:

* ``contents``: the vintage, the caution, one line per sheet (table, economies, rows, a link)
  and the checks that warn or fail, by rule;
* one sheet per table, in the order of `SHEETS`, then any other table of the vintage (named
  by its first 31 characters, Excel's limit); a table longer than Excel's sheet (1,048,576
  rows, one of them the header) is split over sheets ``<table> 1``, ``<table> 2``, ... cut
  between economies where one economy fits, and the contents sheet says which economies
  each holds;
* ``charts``: the vintage's PNG charts (panel overview first).

Every table sheet has a frozen header row, an autofilter and number formats by measure:
levels ``#,##0.0``, indexes (deflators, terms of trade, CPI) ``0.000``, growth rates ``0.00"%"``,
contributions, gaps and growth revisions ``0.00" pp"``. Checks that warn or fail are filled
(amber, red) across the row; revisions are coloured by sign (green up, red down).

No formula ever comes from data: the workbook is opened with ``strings_to_formulas``,
``strings_to_numbers`` and ``strings_to_urls`` off, so text is always written as a text cell,
and text beginning with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return is written with
Excel's quote prefix, so that editing the cell keeps it text too. The workbook is written in
XlsxWriter's constant-memory mode, row by row: memory stays flat whatever the panel's size.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from valvol.errors import ValvolError

#: Rows of an Excel worksheet (the header takes one).
EXCEL_ROWS = 1_048_576
#: Sheets in order: table -> what it holds.
SHEETS = {
    "levels": "levels at current prices, previous-year prices and chain-linked volumes",
    "deflators": "implicit deflators, 100 x current / chain-linked (reference year = 100)",
    "growth": "growth rates of volumes, prices and values, percent",
    "volume_contributions": "contributions to volume growth, percentage points",
    "deflator_contributions": "contributions to deflator growth, percentage points",
    "income_contributions": "income-side contributions to GDP-deflator growth, percentage points",
    "price_gaps": "price gaps (pp), terms of trade and CPI (index), trading gain, real GDI",
    "checks": "every check, its value, tolerance and status (warn and fail filled)",
    "reconciliation": "quarterly values moved by benchmarking or reconciliation",
    "revisions": "revisions against the previous vintage, later minus earlier",
    "revision_summary": "revision statistics per series (mean, mean absolute, RMS revision, t)",
}
LEVEL, INDEX, PCT, PP, PLAIN = "#,##0.0", "0.000", '0.00"%"', '0.00" pp"', "0.0000"
#: Number format of a value column, by table and column.
COLUMN_FORMATS = {
    "levels": {"value": LEVEL},
    "deflators": {"deflator": INDEX},
    "growth": {"pct": PCT},
    "volume_contributions": {"contribution_pp": PP, "aggregate_growth_pct": PCT, "residual_pp": PP},
    "deflator_contributions": {"contribution_pp": PP, "aggregate_growth_pct": PCT, "residual_pp": PP},
    "income_contributions": {"contribution_pp": PP, "aggregate_growth_pct": PCT, "residual_pp": PP},
    "checks": {"value": PLAIN, "tolerance": PLAIN},
    "reconciliation": {"before": LEVEL, "after": LEVEL, "adjustment": LEVEL, "adjustment_pct": PCT,
                       "adjustment_annual": LEVEL, "adjustment_identity": LEVEL, "growth_before_pct": PCT,
                       "growth_after_pct": PCT},
    "revision_summary": {"mr": PLAIN, "mar": PLAIN, "rmar": PLAIN, "rmsr": PLAIN, "sd": PLAIN, "t_stat": "0.00",
                         "critical_value": "0.00"},
}
#: Tables whose value column takes its format from the row's measure: (measure column, value columns).
MEASURED = {"price_gaps": ("measure", ("value",)), "revisions": ("measure", ("earlier", "later", "revision"))}
#: Text that a spreadsheet could take for a formula (or a DDE call) when typed or edited.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
STATUS_FILL = {"warn": "#FFE699", "fail": "#F4B183"}


def measure_formats(measure: pd.Series) -> np.ndarray:
    """The number format of each row of a table with a ``measure`` column (price gaps, revisions)."""
    m = measure.astype(str)
    return np.select(
        [m.str.startswith(("gap_", "growth_", "contribution_")) | m.eq("cpi_growth"),
         m.isin(["terms_of_trade", "cpi_annual", "cpi_quarterly", "deflator"]),
         m.str.startswith("level_") | m.isin(["trading_gain", "real_gdi"])],
        [PP, INDEX, LEVEL], default=PLAIN)


@dataclass(frozen=True)
class Part:
    """One sheet of a table: rows ``start:stop``, economies ``first`` to ``last``."""

    table: str
    sheet: str
    start: int
    stop: int
    first: str
    last: str


def plan_sheets(table: str, economy: pd.Series, max_rows: int = EXCEL_ROWS - 1) -> list[Part]:
    """Split a table (ordered by economy) into sheets of at most ``max_rows`` data rows.

    Cuts fall between economies where the economies fit (greedy, in order); an economy longer
    than a sheet is cut inside itself. One sheet keeps the table's name; several are numbered.
    """
    n = len(economy)
    codes = economy.astype(str).to_numpy()
    if n <= max_rows:
        return [Part(table, table[:31], 0, n, codes[0] if n else "", codes[-1] if n else "")]
    starts = np.flatnonzero(np.r_[True, codes[1:] != codes[:-1]])  # first row of each economy
    cuts, begin = [0], 0
    while n - begin > max_rows:
        limit = begin + max_rows
        fitting = starts[(starts > begin) & (starts <= limit)]
        begin = int(fitting[-1]) if len(fitting) else limit
        cuts.append(begin)
    bounds = [*cuts, n]
    return [Part(table, f"{table[:24]} {i + 1}", a, b, codes[a], codes[b - 1])  # Excel: 31 characters
            for i, (a, b) in enumerate(zip(bounds[:-1], bounds[1:], strict=True))]


def _cells(frame: pd.DataFrame) -> list[list]:
    """Columns as Python lists, missing values as None (written as blank cells)."""
    out = []
    for name in frame.columns:
        col = frame[name]
        values = col.astype(object).where(col.notna(), None).tolist()
        out.append(values)
    return out


def _risky(frame: pd.DataFrame) -> dict[int, np.ndarray]:
    """Per text column, the rows whose text begins like a formula (vectorised)."""
    found = {}
    for j, name in enumerate(frame.columns):
        col = frame[name]
        if col.dtype == object or pd.api.types.is_string_dtype(col):
            mask = col.astype(str).str.startswith(FORMULA_START).to_numpy() & col.notna().to_numpy()
            if mask.any():
                found[j] = np.flatnonzero(mask)
    return found


def write_workbook(tables: dict[str, pd.DataFrame], path: Path, *, vintage: str = "", caution: str = "",
                   charts: list[Path] = (), max_rows: int = EXCEL_ROWS - 1) -> Path:
    """Write the review workbook of ``tables`` (name -> frame) to ``path`` (module docstring)."""
    import xlsxwriter
    from xlsxwriter.utility import xl_col_to_name

    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    wb = xlsxwriter.Workbook(str(path), {"constant_memory": True, "strings_to_formulas": False,
                                         "strings_to_numbers": False, "strings_to_urls": False})
    bold = wb.add_format({"bold": True})
    head = wb.add_format({"bold": True, "bg_color": "#DDEBF7", "bottom": 1, "text_wrap": True})
    title = wb.add_format({"bold": True, "font_size": 14})
    quoted = wb.add_format({"quote_prefix": True})
    formats = {f: wb.add_format({"num_format": f}) for f in (LEVEL, INDEX, PCT, PP, PLAIN, "0.00")}
    fills = {s: wb.add_format({"bg_color": c}) for s, c in STATUS_FILL.items()}
    up, down = wb.add_format({"font_color": "#006100", "bg_color": "#E2EFDA"}), \
        wb.add_format({"font_color": "#9C0006", "bg_color": "#FCE4E4"})

    ordered = [t for t in SHEETS if t in tables] + sorted(set(tables) - set(SHEETS))
    parts = {t: plan_sheets(t, tables[t]["economy"] if "economy" in tables[t] else pd.Series([""] * len(tables[t])),
                            max_rows) for t in ordered}
    contents = wb.add_worksheet("contents")
    contents.write_string(0, 0, "valvol review workbook" + (f": vintage {vintage}" if vintage else ""), title)
    contents.write_string(1, 0, caution or "Analytical outputs, not official statistics.")
    contents.write_row(3, 0, ["sheet", "table", "economies", "rows", "what it holds"], head)
    row = 4
    for t in ordered:
        for p in parts[t]:
            contents.write_url(row, 0, f"internal:'{p.sheet}'!A1", string=p.sheet)
            contents.write_string(row, 1, t)
            contents.write_string(row, 2, p.first if p.first == p.last else f"{p.first} to {p.last}")
            contents.write_number(row, 3, p.stop - p.start)
            contents.write_string(row, 4, SHEETS.get(t, ""))
            row += 1
    review = _checks_to_review(tables.get("checks"))
    row += 1
    contents.write_string(row, 0, "checks that warn or fail" if len(review) else "no check warns or fails", bold)
    if len(review):
        contents.write_row(row + 1, 0, ["rule", "status", "count", "economies"], head)
        for i, r in enumerate(review.itertuples(index=False), row + 2):
            contents.write_row(i, 0, [str(r.rule), str(r.status), int(r.count), str(r.economies)], quoted)
    contents.set_column(0, 0, 26)
    contents.set_column(1, 2, 24)
    contents.set_column(4, 4, 80)

    for t in ordered:
        frame = tables[t]
        for p in parts[t]:
            _write_sheet(wb, p.sheet, frame.iloc[p.start:p.stop].reset_index(drop=True), t, head, quoted,
                         formats, fills, (up, down), xl_col_to_name)
    if charts:
        ws = wb.add_worksheet("charts")
        ws.write_string(0, 0, "charts of the vintage (analytical, not official statistics)", bold)
        for i, png in enumerate(charts):
            ws.write_string(1 + 32 * (i // 2), 10 * (i % 2), Path(png).stem)
            ws.insert_image(2 + 32 * (i // 2), 10 * (i % 2), str(png), {"x_scale": 0.5, "y_scale": 0.5})
    wb.close()
    return path


def _write_sheet(wb, name: str, frame: pd.DataFrame, table: str, head, quoted, formats, fills, signs,
                 col_name) -> None:
    ws = wb.add_worksheet(name)
    columns = list(frame.columns)
    widths = [max(10, min(40, len(c) + 2)) for c in columns]
    fixed = COLUMN_FORMATS.get(table, {})
    for j, c in enumerate(columns):
        fmt = formats.get(fixed.get(c, "")) if c in fixed else None
        if frame[c].dtype == object or pd.api.types.is_string_dtype(frame[c]):
            longest = frame[c].astype(str).str.len().max() if len(frame) else 0
            widths[j] = max(widths[j], min(40, int(longest or 0) + 2))
        ws.set_column(j, j, widths[j], fmt)  # the column's format applies to its unformatted cells
    ws.write_row(0, 0, columns, head)
    ws.freeze_panes(1, 0)
    n = len(frame)
    cells = _cells(frame)
    risky = {j: set(rows.tolist()) for j, rows in _risky(frame).items()}
    measured = MEASURED.get(table)
    row_formats = measure_formats(frame[measured[0]]) if measured and n else None
    value_cols = [columns.index(c) for c in (measured[1] if measured else ()) if c in columns]
    status = frame["status"].astype(str).to_numpy() if table == "checks" and "status" in frame else None
    for i in range(n):  # row by row, as constant-memory mode requires
        values = [col[i] for col in cells]
        fill = fills.get(status[i]) if status is not None else None
        ws.write_row(i + 1, 0, values, fill)
        for j in risky:
            if i in risky[j]:
                ws.write_string(i + 1, j, values[j], quoted)
        if row_formats is not None:
            for j in value_cols:
                if values[j] is not None:
                    ws.write_number(i + 1, j, values[j], formats[row_formats[i]])
    ws.autofilter(0, 0, max(n, 1), len(columns) - 1)
    if table == "revisions" and "revision" in columns and n:
        j = columns.index("revision")
        ws.conditional_format(1, j, n, j, {"type": "cell", "criteria": ">", "value": 0, "format": signs[0]})
        ws.conditional_format(1, j, n, j, {"type": "cell", "criteria": "<", "value": 0, "format": signs[1]})


def _checks_to_review(checks: pd.DataFrame | None) -> pd.DataFrame:
    """Checks that warn or fail, by rule and status: count and economies."""
    if checks is None or checks.empty:
        return pd.DataFrame(columns=["rule", "status", "count", "economies"])
    bad = checks[checks["status"].isin(["warn", "fail"])]
    return (bad.groupby(["rule", "status"], sort=True)
            .agg(count=("economy", "size"), economies=("economy", lambda e: ", ".join(sorted(set(e))[:20])))
            .reset_index())


def vintage_tables(folder: Path) -> dict[str, pd.DataFrame]:
    """Every published table of a vintage folder, by name (those of `SHEETS` first, then any other)."""
    names = sorted(p.stem for p in Path(folder).glob("*.parquet"))
    return {t: pd.read_parquet(folder / f"{t}.parquet") for t in [*(t for t in SHEETS if t in names),
                                                                  *(t for t in names if t not in SHEETS)]}


def workbook_of_vintage(folder: Path, path: Path, manifest: dict | None = None) -> Path:
    """The review workbook of the vintage in ``folder`` (its manifest read unless given)."""
    folder = Path(folder)
    if manifest is None:
        if not (folder / "manifest.json").exists():
            raise ValvolError(f"{folder} is not a vintage (no manifest.json)")
        manifest = json.loads((folder / "manifest.json").read_text())
    charts = sorted((folder / c for c in manifest.get("charts", []) if c.endswith(".png")),
                    key=lambda p: (p.parent != folder / "charts", str(p)))
    return write_workbook(vintage_tables(folder), path, vintage=manifest.get("vintage", ""),
                          caution=manifest.get("caution", ""), charts=charts)
