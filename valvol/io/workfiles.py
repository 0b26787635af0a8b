"""Scratch tables passed between stages inside a work folder: Arrow IPC files, read memory-mapped.

Stages pass paths, never frames; the files they leave for the next stage are uncompressed
Arrow IPC ("Feather v2") files: writing and reading them costs little more than a memory copy,
and a chunk reads only its economies' rows from a memory-mapped file. Published tables are
parquet (`valvol.io.writers`); these files never leave the work folder.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.feather as feather


def write_frame(path: Path, frame: pd.DataFrame | pa.Table) -> None:
    """Write a frame (or Arrow table) to ``path``, uncompressed.

    The file is written beside ``path`` and renamed over it: a table still mapped from the
    old file (read earlier in this process) keeps its bytes.
    """
    table = frame if isinstance(frame, pa.Table) else pa.Table.from_pandas(frame, preserve_index=False)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    feather.write_feather(table, tmp, compression="uncompressed")
    os.replace(tmp, path)


def read_table(path: Path, economies: Sequence[str] | None = None) -> pa.Table:
    """The table at ``path``, or only the rows of ``economies``."""
    table = feather.read_table(path, memory_map=True)
    if economies is None or table.num_rows == 0:
        return table
    return table.filter(pc.is_in(table["economy"], value_set=pa.array(list(economies), type=table["economy"].type)))


def read_frame(path: Path, economies: Sequence[str] | None = None) -> pd.DataFrame:
    """`read_table` as a pandas frame."""
    return read_table(path, economies).to_pandas()
