"""Parquet writers and the vintage's database: one file per table, byte-identical on rerun.

Tables arrive fully ordered (each chunk's ``out_<table>.sql`` statement orders by the full key,
economy first, and chunks are contiguous runs of economies taken in sorted order). Each is
written by pyarrow as a single file with a fixed row-group size, so its bytes do not depend on
how the panel was chunked (a multi-threaded partitioned write could reorder rows). The
vintage's own ``valvol.duckdb`` is loaded from those files with insertion order preserved, so it
holds the same rows in the same order.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from valvol import db
from valvol.io import workfiles
from valvol.schemas.outputs import TABLES as SCHEMAS
from valvol.validate import StageError, check_table

#: Rows per parquet row group: fixed, so that files do not depend on the chunking.
ROW_GROUP = 1 << 20


def _require_models(names: Iterable[str]) -> None:
    unknown = sorted(set(names) - set(SCHEMAS))
    if unknown:
        raise StageError(f"table(s) {', '.join(unknown)} have no pandera model: not written")


def write_parquet(table: pa.Table, path: Path) -> int:
    """One published parquet file (zstd, fixed row groups); returns its row count.

    The table is made one contiguous chunk first: the writer's page boundaries and its
    dictionary fallback follow the chunks it is given, so the bytes would otherwise depend
    on how the panel was chunked.
    """
    pq.write_table(table.combine_chunks(), path, compression="zstd", row_group_size=ROW_GROUP)
    return table.num_rows


def combine_table(name: str, parts: Sequence[Path], target: Path) -> int:
    """Concatenate a table's chunk files, in order, into one published parquet file.

    The chunks were checked against the table's model as they were derived.
    """
    _require_models([name])
    return write_parquet(pa.concat_tables([workfiles.read_table(p) for p in parts]), target)


def write_tables(work: Path, tables: dict[str, pa.Table]) -> dict[str, int]:
    """Check each table against its model and write ``work/<table>.parquet``; return row counts."""
    _require_models(tables)
    counts = {}
    for name, table in tables.items():
        check_table(name, table)
        counts[name] = write_parquet(table, work / f"{name}.parquet")
    return counts


def store_database(work: Path, names: Sequence[str]) -> None:
    """Load the published tables ``names`` into ``work/valvol.duckdb`` for SQL users."""
    con = db.connect(work / db.DB_FILE)  # rows keep the files' order (DuckDB preserves insertion order)
    try:
        for name in names:
            db.run_sql(con, f"out_store_{name}", path=str(work / f"{name}.parquet"))
    finally:
        con.close()
