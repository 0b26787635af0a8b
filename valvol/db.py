"""DuckDB adapter: one connection per process, statements from ``valvol/sql/`` files.

Every statement is a file ``<layer>_<name>.sql`` (layers ``stg``, ``int``,
``out``) with named parameters ``$name``; values are always bound, never
formatted into SQL text. Frames enter through `register`, under names fixed
in the SQL files.
"""

from __future__ import annotations

from functools import cache
from importlib import resources
from pathlib import Path

import duckdb
import pandas as pd
import pyarrow as pa

#: The embedded database file of a vintage (and of each economy's work while deriving).
DB_FILE = "valvol.duckdb"


@cache
def sql_text(name: str) -> str:
    """Text of ``valvol/sql/<name>.sql``."""
    return resources.files("valvol.sql").joinpath(f"{name}.sql").read_text(encoding="utf-8")


def connect(path: str | Path | None = None, *, threads: int | None = None) -> duckdb.DuckDBPyConnection:
    """Open (or create) the embedded database file; in memory when ``path`` is None."""
    return duckdb.connect(str(path) if path else ":memory:", config={"threads": int(threads)} if threads else {})


def run_sql(con: duckdb.DuckDBPyConnection, name: str, **params: object) -> None:
    """Execute one statement file with bound named parameters."""
    text = sql_text(name)
    used = {k: v for k, v in params.items() if f"${k}" in text}
    con.execute(text, used or None)


def query_df(con: duckdb.DuckDBPyConnection, name: str, **params: object) -> pd.DataFrame:
    """Run a statement file and return the result as a pandas frame."""
    text = sql_text(name)
    used = {k: v for k, v in params.items() if f"${k}" in text}
    return con.execute(text, used or None).df()


def query_arrow(con: duckdb.DuckDBPyConnection, name: str, **params: object) -> pa.Table:
    """Run a statement file and return the result as a fully read Arrow table."""
    text = sql_text(name)
    used = {k: v for k, v in params.items() if f"${k}" in text}
    return con.sql(text, params=used or None).to_arrow_table()


def register(con: duckdb.DuckDBPyConnection, name: str, frame: pd.DataFrame | pa.Table) -> None:
    """Expose a frame to SQL under a fixed name used in the statement files."""
    con.register(name, frame)
