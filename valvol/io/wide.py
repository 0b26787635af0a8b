"""Wide tables in: one row per series, one column per period, in a CSV file or in ``.xlsx`` sheets.

The layout offices keep in spreadsheets::

    economy | item    | price_basis | adjustment | unit           | 2024-Q1 | 2024-Q2 | ...
    XQ      | P31_S14 | current     | S          | tessel million | 51234.5 | 51876.0 | ...

A table is wide when its header holds ``economy``, ``item`` and ``price_basis`` (any case;
other spellings through ``[wide.columns]`` of ``valvol.toml``) and period columns (``YYYY-Qn``,
``YYYYQn``, ``YYYY``, ``YYYY-MM``), and neither ``period`` nor ``value``. An empty cell is no
observation (a series may start later); every filled cell is one row of the long form.

In a workbook (openpyxl, the cached values of formulas) each sheet is read (or those of
``[wide] sheets``); the header is the first row within the first 30 that names the three key
columns (or ``[wide] header_row``), so title rows above it are skipped. Below it:

* blank rows (separators) are skipped;
* a note row (a single filled cell, e.g. ``Source: ...`` or ``1) provisional``, and no complete
  series key) is skipped, with a logged count;
* a key cell merged down over several series rows holds for each of them; any other merged
  range below the header or in it is refused, naming its cells;
* a formula without a cached value (a workbook written by a program that does not compute) is
  refused, naming its cell: open and save the workbook in a spreadsheet program.

Problems name the sheet (``book.xlsx[Quarterly]``), the cell (``E7``; in a CSV file the same
letters and line numbers) and the series. Cells are converted column-wise with pandas; no loop
per row.
"""

from __future__ import annotations

import logging
import re
from pathlib import Path

import numpy as np
import pandas as pd

from valvol.errors import Problem, clip, found
from valvol.io.formats import WideConfig

log = logging.getLogger("valvol")

KEYS = ("economy", "item", "price_basis")
OPTIONAL_KEYS = ("adjustment", "unit")
PERIOD_HEADER = re.compile(r"^\d{4}(?:-?Q[1-4]|-\d{2})?$")
#: Rows searched for the header of a sheet when ``header_row`` is 0.
HEADER_SEARCH = 30


def column_letter(index: int) -> str:
    """Spreadsheet letters of a 0-based column (0 -> A, 26 -> AA)."""
    letters = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


def _normal(header: list[str], cfg: WideConfig) -> list[str]:
    renames = cfg.renames
    out = []
    for h in header:
        key = str(h).strip().lower()
        out.append(renames.get(key, key))
    return out


def is_wide(header: list[str], cfg: WideConfig) -> bool:
    """Does this header describe a wide table?"""
    names = _normal(header, cfg)
    return (all(k in names for k in KEYS) and "period" not in names and "value" not in names
            and any(PERIOD_HEADER.match(str(h).strip()) for h in header))


def wide_to_long(df: pd.DataFrame, name: str, cfg: WideConfig,
                 header_row: int = 1) -> tuple[pd.DataFrame | None, list[Problem]]:
    """The series of a wide text frame (``source_row`` first, then the header's columns) as long raw rows.

    ``header_row`` is the row (line) of the header, for naming its cells; the header's cells
    are columns A, B, ... Returns ``source_row, economy, period, item, price_basis, value`` and the
    other key columns (adjustment, unit, any other column, repeated on each observation).
    """
    header = [str(h).strip() for h in df.columns[1:]]
    names = _normal(header, cfg)
    letters = [column_letter(i) for i in range(len(header))]
    rows = df["source_row"].to_numpy()
    grid = df.iloc[:, 1:].astype("str").apply(lambda s: s.str.strip())
    grid.columns = range(len(header))
    problems: list[Problem] = []

    def cell(col: int, row: int) -> str:
        return f"cell {letters[col]}{row}"

    is_period = np.array([bool(PERIOD_HEADER.match(h)) and n not in KEYS + OPTIONAL_KEYS
                          for h, n in zip(header, names, strict=True)])
    periods = [h.replace("Q", "-Q").replace("--", "-") if "Q" in h else h for h in header]
    seen: dict[str, int] = {}
    for j in np.flatnonzero(is_period):
        if periods[j] in seen:
            problems.append(Problem(file=name, row=header_row, period=periods[j],
                                    reason=f"{cell(j, header_row)}: period {found(header[j])} is also the header of "
                                           f"{cell(seen[periods[j]], header_row)}"))
        seen.setdefault(periods[j], j)
    repeated = sorted({n for n in names if n in KEYS + OPTIONAL_KEYS and names.count(n) > 1})
    if repeated or problems:
        return None, problems + [Problem(file=name, row=header_row, reason=f"column(s) {', '.join(repeated)} appear "
                                         "more than once in the header") for _ in repeated[:1]]
    filled = (grid != "").to_numpy()
    unnamed = np.array([h == "" for h in header])
    for j in np.flatnonzero(unnamed & filled.any(axis=0)):
        i = int(np.argmax(filled[:, j]))
        problems.append(Problem(file=name, row=int(rows[i]), reason=f"{cell(j, int(rows[i]))}: a value "
                                f"({found(grid.iat[i, j])}) in a column without a header"))
    key_idx = [names.index(k) for k in KEYS]
    keyed = filled[:, key_idx].all(axis=1)
    note = (filled.sum(axis=1) == 1) & ~keyed
    if note.any():
        log.info("%s: %d note row(s) skipped (rows %s)", clip(name, 200), int(note.sum()),
                    ", ".join(str(r) for r in rows[note][:5]) + (", ..." if note.sum() > 5 else ""))
    broken = ~keyed & ~note & filled.any(axis=1)
    if broken.sum() > 50:
        problems.append(Problem(file=name, reason=f"and {int(broken.sum()) - 50} more rows with an empty key cell"))
    for i in np.flatnonzero(broken)[:50]:
        j = next(k for k in key_idx if not filled[i, k])
        row = int(rows[i])
        problems.append(Problem(file=name, row=row, economy=grid.iat[i, key_idx[0]], item=grid.iat[i, key_idx[1]],
                                reason=f"{cell(j, row)}: {names[j]} is empty in a row with values (each series row "
                                       "needs economy, item and price_basis)"))
    series = keyed & ~broken
    pcols = np.flatnonzero(is_period)
    values = grid.to_numpy()[:, pcols]
    ri, ci = np.nonzero((values != "") & series[:, None])
    out = pd.DataFrame({
        "source_row": rows[ri].astype("int64"),
        "economy": grid[key_idx[0]].to_numpy()[ri],
        "period": np.asarray(periods, dtype=object)[pcols][ci],
        "item": grid[key_idx[1]].to_numpy()[ri],
        "price_basis": grid[key_idx[2]].to_numpy()[ri],
        "value": values[ri, ci],
    })
    for j, n in enumerate(names):
        if not is_period[j] and n not in KEYS and n:
            out[n] = grid[j].to_numpy()[ri]
    # a value cell that is not a number is named by its cell here (the long form names only row and period)
    number = pd.to_numeric(out["value"], errors="coerce")
    bad = number.isna().to_numpy() | ~np.isfinite(number.fillna(0).to_numpy())
    for k in np.flatnonzero(bad)[:200]:
        row, col = int(out.at[k, "source_row"]), int(pcols[ci[k]])
        problems.append(Problem(file=name, row=row, economy=out.at[k, "economy"], item=out.at[k, "item"],
                                price_basis=out.at[k, "price_basis"], period=out.at[k, "period"],
                                reason=f"{cell(col, row)}: value is not a number (found {found(out.at[k, 'value'])})"))
    if bad.sum() > 200:
        problems.append(Problem(file=name, reason=f"and {int(bad.sum()) - 200} more cells that are not numbers"))
    return out[~bad].reset_index(drop=True), problems


def read_workbook(path: Path, name: str, cfg: WideConfig | None = None) -> tuple[pd.DataFrame | None, list[Problem]]:
    """Every wide sheet of an ``.xlsx`` workbook as long raw rows, with ``source_file`` ``name[sheet]``."""
    import openpyxl

    cfg = cfg or WideConfig()
    try:
        values = openpyxl.load_workbook(path, data_only=True)
        formulas = openpyxl.load_workbook(path, data_only=False)
    except Exception as exc:  # noqa: BLE001 - any failure of the library on these bytes is the file's
        detail = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        return None, [Problem(file=name, reason=f"cannot be read as an .xlsx workbook: {clip(detail, 300)}")]
    problems: list[Problem] = []
    wanted = list(cfg.sheets) or values.sheetnames
    for sheet in cfg.sheets:
        if sheet not in values.sheetnames:
            problems.append(Problem(file=name, reason=f"no sheet {found(sheet)} ([wide] sheets); sheets: "
                                    f"{', '.join(values.sheetnames)}"))
    frames, skipped = [], []
    for sheet in (s for s in wanted if s in values.sheetnames):
        where = f"{name}[{sheet}]"
        df, found_here = _sheet(values[sheet], formulas[sheet], where, cfg)
        if df is None and not found_here:
            skipped.append(sheet)
            continue
        problems += found_here
        if df is not None:
            frames.append(df.assign(source_file=where))
    if skipped and (frames or problems or cfg.sheets):
        if cfg.sheets:
            problems += [Problem(file=f"{name}[{s}]", reason=_NO_HEADER) for s in skipped]
        else:
            log.warning("%s: sheet(s) %s without a wide header skipped", clip(name, 200), ", ".join(skipped))
    elif skipped:
        problems.append(Problem(file=name, reason=f"no sheet with a wide header ({', '.join(skipped)}): "
                                + _NO_HEADER))
    if not frames:
        return None, problems
    return pd.concat(frames, ignore_index=True), problems


_NO_HEADER = (f"no header row naming economy, item and price_basis and periods in the first {HEADER_SEARCH} rows "
              "(declare it with [wide] header_row, or other names with [wide.columns])")


def _sheet(ws, ws_formulas, where: str, cfg: WideConfig) -> tuple[pd.DataFrame | None, list[Problem]]:
    """One worksheet: its wide table as long raw rows, None without a header (and no problem)."""
    grid = pd.DataFrame(list(ws.iter_rows(values_only=True)), dtype=object)
    if grid.empty:
        return None, []
    header_at = _header_row(grid, cfg)
    if header_at is None:
        return None, []
    problems: list[Problem] = []
    top = header_at + 1  # 1-based sheet row of the header
    for rng in ws.merged_cells.ranges:
        if rng.max_row < top:
            continue  # a title above the table
        cols = {c for c in range(rng.min_col - 1, rng.max_col)}
        key_cols = {j for j in cols if _is_key(grid.iat[header_at, j] if j < grid.shape[1] else None, cfg)}
        if rng.min_row > top and len(cols) == 1 and key_cols:
            j = rng.min_col - 1
            grid.iloc[rng.min_row - 1:rng.max_row, j] = grid.iat[rng.min_row - 1, j]  # the key holds for every row
            continue
        problems.append(Problem(file=where, row=rng.min_row, reason=f"cells {rng.coord} are merged"
                                + (" in the header" if rng.min_row <= top else "") + ": each series needs its own "
                                "row and each value its own cell; unmerge them"))
    # formulas without a cached value
    text_f = pd.DataFrame(list(ws_formulas.iter_rows(values_only=True)), dtype=object)
    if not text_f.empty:
        is_formula = text_f.map(lambda v: (isinstance(v, str) and v.startswith("=")) or
                                (v is not None and not isinstance(v, str | int | float | bool)
                                 and type(v).__name__.endswith("Formula"))).to_numpy()
        shape = (min(is_formula.shape[0], grid.shape[0]), min(is_formula.shape[1], grid.shape[1]))
        empty = grid.isna().to_numpy()[: shape[0], : shape[1]]
        for i, j in zip(*np.nonzero(is_formula[: shape[0], : shape[1]] & empty), strict=True):
            formula = text_f.iat[i, j]
            shown = formula if isinstance(formula, str) else getattr(formula, "text", "a formula")
            problems.append(Problem(file=where, row=int(i) + 1, reason=f"cell {column_letter(int(j))}{i + 1}: formula "
                                    f"{found(shown)} has no cached value (the workbook was saved by a program that "
                                    "does not compute formulas); open and save it in a spreadsheet program, or "
                                    "write the values"))
    if problems:
        return None, problems
    head = grid.iloc[header_at]
    header = [_header_text(v) for v in head]
    for j, v in enumerate(head):
        if hasattr(v, "year") and not isinstance(v, int | float):
            problems.append(Problem(file=where, row=top, reason=f"cell {column_letter(j)}{top}: a date "
                                    f"({found(v)}) as a period; write the period as text, 2024-Q1 or 2024"))
    if problems:
        return None, problems
    body = grid.iloc[header_at + 1:]
    text = body.astype("object").where(body.notna(), "").astype("str")
    text.columns = header
    text.insert(0, "source_row", np.arange(top + 1, top + 1 + len(body), dtype="int64"))
    text = text[(text.iloc[:, 1:] != "").any(axis=1).to_numpy()]  # blank separator rows
    if text.empty:
        return None, [Problem(file=where, row=top, reason="a header but no series rows")]
    return wide_to_long(text.reset_index(drop=True), where, cfg, header_row=top)


def _header_text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip()


def _is_key(value, cfg: WideConfig) -> bool:
    return _normal([_header_text(value)], cfg)[0] in KEYS + OPTIONAL_KEYS


def _header_row(grid: pd.DataFrame, cfg: WideConfig) -> int | None:
    """0-based index of the header row: declared, or the first naming the key columns."""
    if cfg.header_row:
        return cfg.header_row - 1 if cfg.header_row <= len(grid) else None
    for i in range(min(HEADER_SEARCH, len(grid))):
        if is_wide([_header_text(v) for v in grid.iloc[i]], cfg):
            return i
    return None
