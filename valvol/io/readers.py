"""Readers of an accounts folder: every ``.csv`` and ``.parquet`` file, one long raw frame.

Readers are spokes around one raw shape: text columns ``economy, period,
item, price_basis, value, adjustment, unit`` plus ``source_file`` (path
relative to the folder) and ``source_row`` (the line number in a CSV file,
header = line 1; the 1-based row number in a parquet file). Adding a format is
adding a function to `READERS`.

Agencies ship extra columns (an observation status ``obs_status``, a confidentiality
flag ``conf_status``, ...). Those declared in ``carry_columns`` of ``valvol.toml`` are
kept as text, after the raw columns (empty in a file that lacks them); any other
column is dropped with a warning on the ``valvol`` logger naming the file and the
columns.
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Iterable
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from valvol.errors import Problem

REQUIRED = ("economy", "period", "item", "price_basis", "value")
OPTIONAL = ("adjustment", "unit")
RAW_COLUMNS = ["source_file", "source_row", *REQUIRED, *OPTIONAL]

log = logging.getLogger("valvol")


def _read_csv(path: Path) -> tuple[pd.DataFrame, int]:
    # keep every cell as text: numbers are parsed later, where a bad one can be located
    df = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True, encoding="utf-8")
    return df, 2


def _read_parquet(path: Path) -> tuple[pd.DataFrame, int]:
    df = pq.read_table(path).to_pandas()
    # the same text shape as CSV; numbers keep their full precision through repr()
    text = {c: df[c].map(lambda v: "" if pd.isna(v) else repr(v) if isinstance(v, float) else str(v)) for c in df}
    return pd.DataFrame(text, index=df.index), 1


READERS: dict[str, Callable[[Path], tuple[pd.DataFrame, int]]] = {
    ".csv": _read_csv,
    ".parquet": _read_parquet,
}


def account_files(accounts_dir: Path) -> list[Path]:
    """The data files of a folder (not recursive), sorted by name."""
    return sorted(p for p in accounts_dir.iterdir() if p.is_file() and p.suffix.lower() in READERS)


def read_accounts(accounts_dir: str | Path,
                  carry_columns: Iterable[str] = ()) -> tuple[pd.DataFrame, list[Problem]]:
    """Read every data file of ``accounts_dir`` into one raw frame.

    ``carry_columns``: extra columns kept as text (``carry_columns`` of the configuration).

    Returns the frame (columns `RAW_COLUMNS` plus the carried columns, all text but
    ``source_row``) and the problems met while reading (unreadable file, missing column,
    no file). Other unknown columns are dropped with a logged warning, not a problem.
    """
    folder = Path(accounts_dir)
    problems: list[Problem] = []
    if not folder.is_dir():
        return _empty(()), [Problem(file=str(folder), reason="accounts folder does not exist")]
    carry = tuple(carry_columns)
    text_columns = (*REQUIRED, *OPTIONAL, *carry)
    files = account_files(folder)
    if not files:
        return _empty(carry), [Problem(file=str(folder), reason="no .csv or .parquet file in the accounts folder")]
    frames = []
    for path in files:
        name = path.name
        try:
            df, first_row = READERS[path.suffix.lower()](path)
        except UnicodeDecodeError:
            problems.append(Problem(file=name, reason="file is not UTF-8 text"))
            continue
        except (pd.errors.ParserError, pd.errors.EmptyDataError, pa.ArrowException, OSError) as exc:
            problems.append(Problem(file=name, reason=f"cannot be read: {str(exc).splitlines()[0]}"))
            continue
        df.columns = [str(c).strip().lower() for c in df.columns]
        missing = [c for c in REQUIRED if c not in df.columns]
        extra = [c for c in df.columns if c not in text_columns]
        if missing:
            problems.append(Problem(file=name, reason=f"missing column(s) {', '.join(missing)}"))
            continue
        if extra:
            log.warning("%s: unknown column(s) %s dropped (declare them in carry_columns of valvol.toml to keep "
                        "them)", name, ", ".join(extra))
            df = df.drop(columns=extra)
        for col in (*OPTIONAL, *carry):
            if col not in df.columns:
                df[col] = ""
        df = df.astype({c: "str" for c in text_columns})
        for col in text_columns:
            df[col] = df[col].str.strip()
        df.insert(0, "source_row", pd.RangeIndex(first_row, first_row + len(df)).astype("int64"))
        df.insert(0, "source_file", name)
        frames.append(df[[*RAW_COLUMNS, *carry]])
    if not frames:
        return _empty(carry), problems
    return pd.concat(frames, ignore_index=True), problems


def _empty(carry: tuple[str, ...]) -> pd.DataFrame:
    return pd.DataFrame({c: pd.Series(dtype="int64" if c == "source_row" else "str") for c in [*RAW_COLUMNS, *carry]})
