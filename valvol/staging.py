"""Staging in DuckDB: typed input rows, annual values from quarters, aggregates, identity residuals.

Shared by the validate stage (identities of the whole panel) and the derive stage (the
starting levels of each chunk of economies). Every statement is a file of ``sql/``; frames
enter under the fixed names the statements use (``input_rows``, ``hierarchy_edges``).
"""

from __future__ import annotations

import duckdb
import pandas as pd
import pyarrow as pa

from valvol import db
from valvol.config import Config


def stage_accounts(con: duckdb.DuckDBPyConnection, rows: pd.DataFrame, config: Config) -> None:
    """Stage validated rows and derive annual values, aggregates and identity residuals.

    Tables created: ``stg_hierarchy``, ``levels`` (inputs, annual values of
    complete years, aggregates formed bottom-up at current and previous-year prices),
    ``identity_residuals`` and ``annual_vs_quarters``.
    """
    db.register(con, "input_rows", rows)
    db.run_sql(con, "stg_input")
    con.unregister("input_rows")
    edges = pd.DataFrame(config.hierarchy.edges(), columns=["aggregate", "component", "sign"])
    db.register(con, "hierarchy_edges", edges)
    db.run_sql(con, "stg_hierarchy")
    con.unregister("hierarchy_edges")
    db.run_sql(con, "int_annual_from_quarters", annual_rate=config.levels_at_annual_rate)
    for aggregate in config.hierarchy.order():  # bottom-up; each statement covers every economy
        db.run_sql(con, "int_aggregate", aggregate=aggregate)
    tol = {"tol_abs": config.checks.tolerance_abs, "tol_rel": config.checks.tolerance_rel}
    db.run_sql(con, "int_identity_residuals", **tol)
    db.run_sql(con, "int_annual_vs_quarters", annual_rate=config.levels_at_annual_rate, **tol)


#: Tables `stage_accounts` leaves that the derive stage starts from.
STAGED_TABLES = ("levels", "identity_residuals", "annual_vs_quarters")


def staged_tables(con: duckdb.DuckDBPyConnection) -> dict[str, pa.Table]:
    """The staged tables of a connection, as Arrow tables (to hand them to the derive chunks)."""
    return {name: con.table(name).to_arrow_table() for name in STAGED_TABLES}


def load_staged(con: duckdb.DuckDBPyConnection, tables: dict[str, pa.Table], config: Config) -> None:
    """Start a chunk's database from tables staged earlier (the rows of its economies)."""
    edges = pd.DataFrame(config.hierarchy.edges(), columns=["aggregate", "component", "sign"])
    db.register(con, "hierarchy_edges", edges)
    db.run_sql(con, "stg_hierarchy")
    con.unregister("hierarchy_edges")
    for name in STAGED_TABLES:
        db.register(con, "staged_rows", tables[name])
        db.run_sql(con, f"stg_staged_{name}")
        con.unregister("staged_rows")
