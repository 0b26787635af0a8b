"""Readers of an accounts folder: every ``.csv`` and ``.parquet`` file, one long raw frame.

Readers are spokes around one raw shape: text columns ``economy, period,
item, price_basis, value, adjustment, unit`` plus ``source_file`` (path
relative to the folder) and ``source_row`` (the line number in a CSV file,
header = line 1; the 1-based row number in a parquet file). Adding a format is
adding a function to `READERS`.

Besides the long form, a file may hold the same accounts in an exchange layout, recognised
from its header and turned into long rows before anything else: SDMX-CSV (`valvol.io.sdmx`:
a ``DATAFLOW`` or ``STRUCTURE``/``STRUCTURE_ID`` column first) and wide tables, one row per
series and one column per period (`valvol.io.wide`; also every sheet of an ``.xlsx``
workbook, named ``book.xlsx[Sheet]`` in problems, with its rows as sheet rows).

Agencies ship extra columns (an observation status ``obs_status``, a confidentiality
flag ``conf_status``, ...). Those declared in ``carry_columns`` of ``valvol.toml`` are
kept as text, after the raw columns (empty in a file that lacks them); any other
column is dropped with a warning on the ``valvol`` logger naming the file and the
columns.

Whatever a file holds, reading it never raises: a file that cannot be decoded (CSV files
are UTF-8, `valvol.io.text`) or parsed, a header with missing or repeated columns, a line
with too many or too few cells, a file without data rows: each is a located `Problem`.
"""

from __future__ import annotations

import csv
import io
import logging
import math
from collections.abc import Callable, Iterable
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq

from valvol.errors import Problem, clip, found
from valvol.io.formats import SdmxConfig, WideConfig
from valvol.io.text import NotUTF8, decode_utf8

REQUIRED = ("economy", "period", "item", "price_basis", "value")
OPTIONAL = ("adjustment", "unit")
RAW_COLUMNS = ["source_file", "source_row", *REQUIRED, *OPTIONAL]

log = logging.getLogger("valvol")

#: A reader: (path, name shown in problems) -> text frame of the file's columns plus ``source_row``
#: (None when the file cannot be read at all), and the problems met.
Reader = Callable[[Path, str], tuple[pd.DataFrame | None, list[Problem]]]


def _read_csv(path: Path, name: str) -> tuple[pd.DataFrame | None, list[Problem]]:
    """Comma-separated UTF-8 text; ``source_row`` is the line on which each record starts.

    Blank lines (and lines of empty cells) are skipped without shifting line numbers; a line
    whose cells do not match the header in number is a problem of that line.
    """
    data = path.read_bytes()
    try:
        text = decode_utf8(data)
    except NotUTF8 as exc:
        return None, [Problem(file=name, row=exc.line, reason=exc.reason)]
    fast = _plain_csv(data)
    if fast is not None:
        return fast, []
    return _quoted_csv(text, name)


def _plain_csv(data: bytes) -> pd.DataFrame | None:
    """The common file, parsed in C by pyarrow: no quotes, one record per line, every line
    with as many cells as the header and shorter than a cell may be. None for any other file
    (`_quoted_csv` reads it and names the lines at fault). The checks run on the bytes with
    numpy (UTF-8 never uses the bytes of ``,``, ``\\n`` and ``"`` inside a character)."""
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pacsv

    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    if any(c in data for c in (b'"', b"\r", b"\0")) or not data:
        return None
    raw = np.frombuffer(data, dtype=np.uint8)
    ends = np.flatnonzero(raw == ord("\n"))
    if len(data) and data[-1:] != b"\n":
        ends = np.r_[ends, len(data)]
    starts = np.r_[0, ends[:-1] + 1]
    if len(ends) < 2 or (ends - starts).max() > csv.field_size_limit():
        return None  # a header alone, or a line too long for any cell limit
    commas = np.flatnonzero(raw == ord(","))
    cells = np.searchsorted(commas, ends) - np.searchsorted(commas, starts)
    header = next(csv.reader([data[: ends[0]].decode("utf-8")], skipinitialspace=True))
    if not "".join(header).strip(" \t") or (cells != len(header) - 1).any():
        return None  # a blank first line, or a line (blank ones too) with the wrong number of cells
    table = pacsv.read_csv(
        io.BytesIO(data),
        read_options=pacsv.ReadOptions(skip_rows=1, column_names=[str(i) for i in range(len(header))],
                                       block_size=1 << 24),
        parse_options=pacsv.ParseOptions(ignore_empty_lines=False),
        convert_options=pacsv.ConvertOptions(column_types={str(i): pa.large_string() for i in range(len(header))},
                                             strings_can_be_null=False, quoted_strings_can_be_null=False),
    )
    if table.num_rows != len(ends) - 1:
        return None
    padded = data[:1].isspace() or any(s in data for s in (b" ,", b", ", b" \n", b"\n ", b"\t"))
    columns = {h: pc.utf8_trim_whitespace(table.column(i)) if padded else table.column(i)
               for i, h in enumerate(header)}
    empty = None
    for col in columns.values():
        blank = pc.equal(col, "")
        empty = blank if empty is None else pc.and_(empty, blank)
    df = pd.DataFrame({"source_row": np.arange(2, 2 + table.num_rows, dtype="int64")}
                      | {f"{i}": columns[h].to_pandas() for i, h in enumerate(header)})
    df.columns = ["source_row", *header]
    keep = ~empty.to_numpy(zero_copy_only=False)
    return df[keep].reset_index(drop=True) if not keep.all() else df


def _quoted_csv(text: str, name: str) -> tuple[pd.DataFrame | None, list[Problem]]:
    """Any CSV text, record by record with the standard library's reader (quoted cells, cells
    spanning lines, lines of the wrong length); keep every cell as text: numbers are parsed
    later, where a bad one can be located."""
    reader = csv.reader(io.StringIO(text, newline=""), skipinitialspace=True, strict=True)
    header: list[str] | None = None
    records: list[list[str]] = []
    lines: list[int] = []
    problems: list[Problem] = []
    last = 0
    try:
        for record in reader:
            first, last = last + 1, reader.line_num
            if not any(cell.strip() for cell in record):
                continue
            if header is None:
                header = record
                continue
            if len(record) != len(header):
                problems.append(Problem(file=name, row=first, reason=f"{len(record)} cells where the header has "
                                        f"{len(header)} (found {found(','.join(record))})"))
                continue
            records.append(record)
            lines.append(first)
    except csv.Error as exc:
        reason = str(exc)
        if "field larger than field limit" in reason:
            reason = f"a cell longer than {csv.field_size_limit()} characters (is this an accounts file?)"
        return None, [*problems, Problem(file=name, row=max(reader.line_num, 1), reason=f"not readable as CSV: "
                                                                                         f"{reason}")]
    if header is None:
        return None, [Problem(file=name, reason="empty file: no header line and no data rows")]
    df = pd.DataFrame(records, columns=range(len(header)), dtype="str") if records else \
        pd.DataFrame(columns=range(len(header)), dtype="str")
    df.columns = header
    df.insert(0, "source_row", pd.array(lines, dtype="int64"))
    return df, problems


def _read_parquet(path: Path, name: str) -> tuple[pd.DataFrame | None, list[Problem]]:
    """A parquet file; ``source_row`` is the 1-based row number; every cell becomes text."""
    try:
        names = pq.ParquetFile(path).schema_arrow.names
        repeated = sorted({c for c in names if names.count(c) > 1})
        if repeated:
            return None, [Problem(file=name, reason=f"column(s) {', '.join(clip(c) for c in repeated)} appear more "
                                  "than once")]
        df = pq.read_table(path).to_pandas()
    except Exception as exc:  # noqa: BLE001 - any failure of the parquet library on these bytes is the file's
        detail = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        return None, [Problem(file=name, reason=f"cannot be read as parquet: {clip(detail, 300)}")]
    # the same text shape as CSV; numbers keep their full precision through repr()
    text = pd.DataFrame({c: df[c].map(_cell).astype("str") for c in df}, index=df.index)
    text.insert(0, "source_row", pd.RangeIndex(1, 1 + len(df)).astype("int64"))
    return text, []


def _cell(value: object) -> str:
    if value is None or value is pd.NA or value is pd.NaT:
        return ""
    if isinstance(value, float):
        return "" if math.isnan(value) else repr(value)
    return str(value)


def _read_xlsx(path: Path, name: str, wide: WideConfig | None = None) -> tuple[pd.DataFrame | None, list[Problem]]:
    """The wide sheets of a workbook, already as long rows (`valvol.io.wide.read_workbook`)."""
    from valvol.io.wide import read_workbook

    return read_workbook(path, name, wide)


READERS: dict[str, Reader] = {
    ".csv": _read_csv,
    ".parquet": _read_parquet,
    ".xlsx": _read_xlsx,
}


def _exchange_layout(df: pd.DataFrame, name: str, sdmx: SdmxConfig,
                     wide: WideConfig) -> tuple[pd.DataFrame | None, list[Problem]]:
    """A frame in SDMX-CSV or wide layout as long rows; any other frame as it is."""
    from valvol.io import sdmx as sdmx_io
    from valvol.io import wide as wide_io

    header = [str(c) for c in df.columns[1:]]
    if sdmx_io.sdmx_version(header):
        return sdmx_io.sdmx_to_long(df, name, sdmx)
    if wide_io.is_wide(header, wide):
        return wide_io.wide_to_long(df, name, wide)
    return df, []


def _layout_hint(header: list[str]) -> str:
    """Why a header may lack the long form's columns: an exchange layout not recognised."""
    from valvol.io import sdmx as sdmx_io
    from valvol.io.wide import KEYS, PERIOD_HEADER

    if hint := sdmx_io.looks_like_sdmx(header):
        return hint
    if any(PERIOD_HEADER.match(h.strip()) for h in header):
        lacking = [k for k in KEYS if k not in header]
        return (f"; periods as columns: a wide table also needs the column(s) {', '.join(lacking)} (or declare its "
                "names in [wide.columns] of valvol.toml)") if lacking else ""
    return ""


def account_files(accounts_dir: Path) -> list[Path]:
    """The data files of an accounts folder, in a stable order."""
    return sorted(p for p in accounts_dir.iterdir() if p.is_file() and p.suffix.lower() in READERS)


def read_file(path: Path, name: str, carry_columns: Iterable[str] = (), *, sdmx: SdmxConfig | None = None,
              wide: WideConfig | None = None) -> tuple[pd.DataFrame | None, list[Problem]]:
    """One accounts-format file as a raw frame (`RAW_COLUMNS` plus the carried columns, text but
    ``source_row``), or None when it cannot be used, and the problems met.

    ``name`` is how problems name the file (its path relative to the accounts folder). Columns
    neither read nor carried are dropped with a warning. ``sdmx`` and ``wide`` (``[sdmx]``,
    ``[wide]`` of the configuration) say how exchange layouts map.
    """
    carry = tuple(carry_columns)
    sdmx, wide = sdmx or SdmxConfig(), wide or WideConfig()
    try:
        if path.suffix.lower() == ".xlsx":
            df, problems = _read_xlsx(path, name, wide)
        else:
            df, problems = READERS[path.suffix.lower()](path, name)
            if df is not None:
                df, more = _exchange_layout(df, name, sdmx, wide)
                problems += more
    except OSError as exc:
        return None, [Problem(file=name, reason=f"cannot be read: {exc.strerror or exc}")]
    if df is None:
        return None, problems
    sheets = df.pop("source_file") if path.suffix.lower() == ".xlsx" else None  # rows of workbook sheets
    columns = [str(c).strip().lower() for c in df.columns]
    df.columns = columns
    header = columns[1:]  # after source_row
    used = (*REQUIRED, *OPTIONAL, *carry)
    row = 1 if path.suffix.lower() == ".csv" else None
    repeated = sorted({c for c in header if c in used and header.count(c) > 1})
    missing = [c for c in REQUIRED if c not in header]
    if repeated:
        return None, [*problems, Problem(file=name, row=row, reason=f"column(s) {', '.join(clip(c) for c in repeated)} "
                                         "appear more than once in the header")]
    if missing:
        hint = _layout_hint(header)
        if len(header) == 1 and (sep := next((s for s in ";\t|" if s in header[0]), None)):
            hint = f"; the columns seem separated by {sep!r}: valvol reads comma-separated files"
        return None, [*problems, Problem(file=name, row=row, reason=f"missing column(s) {', '.join(missing)}{hint}")]
    extra = list(dict.fromkeys(c for c in header if c not in used))
    if extra:
        shown = ", ".join(clip(c) if c else "(unnamed)" for c in extra[:20]) + (", ..." if len(extra) > 20 else "")
        log.warning("%s: unknown column(s) %s dropped (declare them in carry_columns of valvol.toml to keep "
                    "them)", clip(name, 200), shown)
        df = df.iloc[:, [0] + [i + 1 for i, c in enumerate(header) if c in used]]
    if df.empty and not problems:
        return None, [Problem(file=name, row=row, reason="a header but no data rows" if row else "no data rows")]
    for col in (*OPTIONAL, *carry):
        if col not in df.columns:
            df[col] = ""
    for col in used:
        df[col] = df[col].astype("str").str.strip()
    df.insert(0, "source_file", name if sheets is None else sheets.loc[df.index].to_numpy())
    return df[[*RAW_COLUMNS, *carry]], problems


def read_accounts(accounts_dir: str | Path, carry_columns: Iterable[str] = (), *, sdmx: SdmxConfig | None = None,
                  wide: WideConfig | None = None) -> tuple[pd.DataFrame, list[Problem]]:
    """Read every data file of ``accounts_dir`` into one raw frame.

    ``carry_columns``: extra columns kept as text (``carry_columns`` of the configuration);
    ``sdmx``, ``wide``: how SDMX-CSV and wide files map (``[sdmx]``, ``[wide]``).

    Returns the frame (columns `RAW_COLUMNS` plus the carried columns, all text but
    ``source_row``) and the problems met while reading (unreadable file, bad header or line,
    no file). Other unknown columns are dropped with a logged warning, not a problem.
    """
    folder = Path(accounts_dir)
    carry = tuple(carry_columns)
    problems: list[Problem] = []
    if not folder.is_dir():
        return _empty(carry), [Problem(file=str(folder), reason="accounts folder does not exist")]
    files = account_files(folder)
    if not files:
        return _empty(carry), [Problem(file=str(folder), reason="no .csv or .parquet file (nor .xlsx workbook) in "
                                       "the accounts folder")]
    frames = []
    for path in files:
        df, found_here = read_file(path, path.name, carry, sdmx=sdmx, wide=wide)
        problems += found_here
        if df is not None:
            frames.append(df)
    if not frames:
        return _empty(carry), problems
    return pd.concat(frames, ignore_index=True), problems


def _empty(carry: tuple[str, ...]) -> pd.DataFrame:
    return pd.DataFrame({c: pd.Series(dtype="int64" if c == "source_row" else "str") for c in [*RAW_COLUMNS, *carry]})
