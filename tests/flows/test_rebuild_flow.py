"""The Prefect rebuild flow, end to end under one session-wide test harness (docs/operations.md §4.2)."""

from __future__ import annotations

import pandas as pd
import pytest

pytestmark = pytest.mark.flow


def test_flow_rebuilds_demo(prefect_harness, demo_dir, tmp_path):
    from valvol.flows.rebuild import rebuild_flow

    state = rebuild_flow(str(demo_dir), str(tmp_path / "out"), return_state=True)
    assert state.is_completed()
    for table in ("levels", "deflators", "growth", "checks", "volume_contributions"):
        assert len(pd.read_parquet(tmp_path / "out" / f"{table}.parquet")) > 0


def test_flow_with_bad_input_fails_with_problems_and_writes_nothing(prefect_harness, accounts, tmp_path):
    from valvol.flows.rebuild import rebuild_flow

    folder = accounts("economy,period,item,price_basis,value\nXQ,2020-Q1,P6,current,x\n")
    state = rebuild_flow(str(folder), str(tmp_path / "out"), return_state=True)
    assert state.is_failed()
    problems = state.result(raise_on_failure=False)
    assert problems[0]["row"] == 2 and "value is not a number" in problems[0]["reason"]
    assert not (tmp_path / "out" / "latest").exists()
