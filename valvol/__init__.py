"""valvol: quarterly national-accounts price and volume work, from raw files to validated parquet.

The package holds pure computation (``valvol.methods``), thin adapters
(DuckDB, parquet, config, CLI), the pandera models (``valvol.schemas``), the SQL
statements (``valvol.sql``) and the Prefect flows (``valvol.flows``).
"""

__version__ = "0.1.0"
