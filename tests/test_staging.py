"""The staging step (valvol/staging.py): typed rows, years from quarters, aggregates, identities.

Expected values are worked out by hand on a small economy (common practice: the annual value of
a flow is the sum of its quarters, or their mean for levels at annual rate; an aggregate is the
signed sum of its components, imports negative; rules in docs/methods.md, notation).
"""

from __future__ import annotations

import pandas as pd
import pytest

from valvol import db
from valvol.config import Config
from valvol.hierarchy import Hierarchy
from valvol.staging import STAGED_TABLES, load_staged, stage_accounts, staged_tables

QUARTERS = [f"2021-Q{q}" for q in range(1, 5)]


def rows(values: dict[tuple[str, str], list[float]], economy: str = "XX") -> pd.DataFrame:
    out = []
    for (item, basis), vals in values.items():
        for q, v in enumerate(vals, start=1):
            out.append({"economy": economy, "item": item, "price_basis": basis, "frequency": "Q", "year": 2021,
                        "quarter": q, "period": QUARTERS[q - 1], "value": v})
    return pd.DataFrame(out)


CONFIG = Config(hierarchy=Hierarchy.from_mapping({"B1GQ": ["P3", "P6", "-P7"]}))
GIVEN = {("P3", "current"): [10.0, 11.0, 12.0, 13.0], ("P6", "current"): [5.0, 5.0, 6.0, 6.0],
         ("P7", "current"): [4.0, 4.0, 4.0, 5.0]}


def staged(frame: pd.DataFrame, config: Config = CONFIG) -> pd.DataFrame:
    con = db.connect()
    stage_accounts(con, frame, config)
    return con.table("levels").df().set_index(["economy", "item", "price_basis", "period"])["value"]


def test_years_are_sums_of_quarters_and_aggregates_signed_sums():
    lv = staged(rows(GIVEN))
    assert lv[("XX", "P3", "current", "2021")] == 46.0  # 10 + 11 + 12 + 13
    assert lv[("XX", "B1GQ", "current", "2021-Q4")] == 14.0  # 13 + 6 - 5
    assert lv[("XX", "B1GQ", "current", "2021")] == 46.0 + 22.0 - 17.0


def test_years_are_means_at_annual_rate():
    lv = staged(rows(GIVEN), Config(hierarchy=CONFIG.hierarchy, levels_at_annual_rate=True))
    assert lv[("XX", "P3", "current", "2021")] == pytest.approx(11.5)


def test_identity_residuals_of_a_given_aggregate():
    frame = rows(GIVEN | {("B1GQ", "current"): [11.0, 12.0, 14.0, 14.5]})
    con = db.connect()
    stage_accounts(con, frame, CONFIG)
    res = con.table("identity_residuals").df().set_index("period")
    assert res.loc["2021-Q1", "residual"] == pytest.approx(0.0)  # 10 + 5 - 4
    assert res.loc["2021-Q4", "residual"] == pytest.approx(0.5)  # 14.5 - (13 + 6 - 5)
    assert (res["tolerance"] >= CONFIG.checks.tolerance_abs).all()


def test_economies_are_staged_together_but_never_mixed():
    both = pd.concat([rows(GIVEN, "AA"), rows({k: [2 * v for v in x] for k, x in GIVEN.items()}, "BB")])
    lv = staged(both)
    assert lv[("BB", "B1GQ", "current", "2021")] == 2 * lv[("AA", "B1GQ", "current", "2021")]


def test_staged_tables_restart_a_chunk_exactly():
    con = db.connect()
    stage_accounts(con, rows(GIVEN | {("B1GQ", "current"): [11.0, 12.0, 14.0, 14.0]}), CONFIG)
    tables = staged_tables(con)
    assert set(tables) == set(STAGED_TABLES)
    other = db.connect()
    load_staged(other, tables, CONFIG)
    for name in STAGED_TABLES:
        key = sorted(tables[name].column_names)
        a = con.table(name).df()[key].sort_values(key[:-1] if name != "levels" else key).reset_index(drop=True)
        b = other.table(name).df()[key].sort_values(key[:-1] if name != "levels" else key).reset_index(drop=True)
        pd.testing.assert_frame_equal(a, b, check_dtype=False)
