"""Parquet writers: one file per table, ordered by its key, byte-identical on rerun.

Tables arrive fully ordered (each economy's ``out_<table>.sql`` statement orders by the full
key, economy first, and economies are concatenated in sorted order); each is validated
against its pandera model, written by pyarrow as a single file (no multi-threaded
partitioned write can reorder rows; PLATFORM.md, DuckDB determinism) and loaded into the
vintage's own ``valvol.duckdb`` for SQL users.
"""

from __future__ import annotations

from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from valvol import db
from valvol.schemas.outputs import TABLES as SCHEMAS
from valvol.validate import StageError, run_schema


def write_tables(work: Path, tables: dict[str, pa.Table]) -> dict[str, int]:
    """Validate and write ``work/<table>.parquet`` and ``work/valvol.duckdb``; return row counts."""
    counts: dict[str, int] = {}
    for name, table in tables.items():
        schema = SCHEMAS.get(name)
        problems = run_schema(schema, table.to_pandas()) if schema is not None else []
        if problems:
            shown = "\n".join(p.render() for p in problems[:20])
            raise StageError(f"table {name} breaks its schema ({len(problems)} problem(s)):\n{shown}")
        pq.write_table(table, work / f"{name}.parquet", compression="zstd")
        counts[name] = table.num_rows
    con = db.connect(work / db.DB_FILE)
    try:
        for name, table in tables.items():
            db.register(con, "published_rows", table)
            db.run_sql(con, f"out_store_{name}")
            con.unregister("published_rows")
    finally:
        con.close()
    return counts
