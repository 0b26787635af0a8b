"""The DuckDB adapter (valvol/db.py) and the statement files of sql/ it runs."""

from __future__ import annotations

import re
from importlib import resources

import pandas as pd
import pytest

from valvol import db

STATEMENTS = sorted(p.name[:-4] for p in resources.files("valvol.sql").iterdir() if p.name.endswith(".sql"))


def test_every_statement_file_has_a_layer_prefix():
    assert STATEMENTS and all(re.fullmatch(r"(stg|int|out)_[a-z0-9_]+", n) for n in STATEMENTS)


@pytest.mark.parametrize("name", STATEMENTS)
def test_every_file_holds_one_statement(name):
    """One statement per file (common practice of this project's layout): no ';' but a final one."""
    text = re.sub(r"--[^\n]*", "", db.sql_text(name))  # comments may hold any text
    text = re.sub(r"'(?:[^']|'')*'", "''", text)  # so may string literals
    assert text.strip().rstrip(";").count(";") == 0


@pytest.mark.parametrize("name", STATEMENTS)
def test_no_statement_is_assembled_from_python_formatting(name):
    """Values enter as bound $parameters; no placeholder for Python formatting is left in a file."""
    text = db.sql_text(name)
    assert "{" not in re.sub(r"--[^\n]*", "", text) and "%s" not in text


def test_values_are_bound_never_formatted():
    """A hostile aggregate code is compared as a value: it matches nothing and runs nothing."""
    con = db.connect()
    con.execute("CREATE TABLE levels (economy VARCHAR, item VARCHAR, price_basis VARCHAR, frequency VARCHAR, "
                "year BIGINT, quarter BIGINT, period VARCHAR, value DOUBLE, origin VARCHAR)")
    con.execute("INSERT INTO levels VALUES ('XX', 'P3', 'current', 'A', 2020, 0, '2020', 1.0, 'input')")
    edges = pd.DataFrame({"aggregate": ["B1GQ"], "component": ["P3"], "sign": [1]})
    db.register(con, "hierarchy_edges", edges)
    db.run_sql(con, "stg_hierarchy")
    db.run_sql(con, "int_aggregate", aggregate="B1GQ'; DROP TABLE levels; --")
    assert con.execute("SELECT count(*) FROM levels").fetchone()[0] == 1
    db.run_sql(con, "int_aggregate", aggregate="B1GQ")
    assert con.execute("SELECT value FROM levels WHERE item = 'B1GQ'").fetchone()[0] == 1.0


def test_parameters_a_statement_does_not_use_are_ignored():
    con = db.connect()
    con.execute("CREATE TABLE levels (economy VARCHAR, item VARCHAR, price_basis VARCHAR, frequency VARCHAR, "
                "year BIGINT, quarter BIGINT, period VARCHAR, value DOUBLE, origin VARCHAR)")
    db.register(con, "hierarchy_edges", pd.DataFrame({"aggregate": ["B1GQ"], "component": ["P3"], "sign": [1]}))
    db.run_sql(con, "stg_hierarchy", aggregate="unused", tol_abs=0.5)  # no error
    assert db.query_df(con, "int_levels_read").empty


def test_a_missing_statement_is_an_error():
    with pytest.raises(FileNotFoundError):
        db.sql_text("int_no_such_statement")


def test_connection_in_memory_and_on_disk(tmp_path):
    path = tmp_path / db.DB_FILE
    con = db.connect(path, threads=1)
    con.execute("CREATE TABLE t AS SELECT 1 AS x")
    con.close()
    assert db.connect(path).execute("SELECT x FROM t").fetchone() == (1,)
    assert db.connect().execute("SELECT 42").fetchone() == (42,)
