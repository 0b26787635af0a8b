"""Parquet writers: one file per table, ordered by its key, byte-identical on rerun.

Each table comes out of DuckDB through its ``out_<table>.sql`` statement (an
ORDER BY over the full key), is validated against its pandera model and is
written by pyarrow as a single file, so no multi-threaded partitioned write
can reorder rows (see PLATFORM.md, DuckDB determinism).
"""

from __future__ import annotations

from pathlib import Path

import duckdb
import pyarrow.parquet as pq

from valvol import db
from valvol.errors import Problem
from valvol.schemas.outputs import TABLES as SCHEMAS
from valvol.validate import StageError, run_schema


def write_tables(con: duckdb.DuckDBPyConnection, work: Path, tables: tuple[str, ...]) -> dict[str, int]:
    """Validate and write ``work/<table>.parquet`` for each table; return row counts."""
    counts: dict[str, int] = {}
    for name in tables:
        table = db.query_arrow(con, f"out_{name}")
        problems: list[Problem] = run_schema(SCHEMAS[name], table.to_pandas())
        if problems:
            shown = "\n".join(p.render() for p in problems[:20])
            raise StageError(f"table {name} breaks its schema ({len(problems)} problem(s)):\n{shown}")
        pq.write_table(table, work / f"{name}.parquet", compression="zstd", write_statistics=True)
        counts[name] = table.num_rows
    return counts
