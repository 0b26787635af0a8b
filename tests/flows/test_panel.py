"""A panel of economies fans out per economy; thread and Dask runners give identical tables.

Issue "Scheduled rebuilds, vintages and revisions, and scale-out": results are identical
whichever runner executes them; workers never share a DuckDB file (each economy stages
parquet, one writer publishes).
"""

from __future__ import annotations

import hashlib
import os

import pandas as pd
import pytest

from valvol import pipeline

pytestmark = pytest.mark.flow


def panel_accounts(demo_dir, folder, codes=("XQ", "XR", "XS")):
    """The demo economy under three codes, scaled differently (an invented panel)."""
    base = pd.read_csv(demo_dir / "accounts.csv")
    frames = [base.assign(economy=code, value=(base["value"] * (1 + i)).round(1)) for i, code in enumerate(codes)]
    folder.mkdir()
    pd.concat(frames).to_csv(folder / "panel.csv", index=False)
    (folder / "valvol.toml").write_bytes((demo_dir / "valvol.toml").read_bytes())
    return folder


def digest(out):
    return {t: hashlib.sha256((out / f"{t}.parquet").read_bytes()).hexdigest() for t in pipeline.TABLES}


def test_thread_and_dask_runners_give_identical_tables(prefect_harness, demo_dir, tmp_path):
    from prefect.settings import PREFECT_API_URL
    from valvol.flows.rebuild import dask_runner, rebuild_flow

    accounts = panel_accounts(demo_dir, tmp_path / "panel")
    plain = tmp_path / "plain"
    pipeline.rebuild(accounts, plain, charts=False)

    threads = tmp_path / "threads"
    assert rebuild_flow(str(accounts), str(threads), charts=False, return_state=True).is_completed()

    # Dask worker processes report to the same test server (docs/operations.md §6: never ephemeral servers)
    os.environ["PREFECT_API_URL"] = PREFECT_API_URL.value()
    try:
        dask = tmp_path / "dask"
        flow = rebuild_flow.with_options(task_runner=dask_runner(n_workers=2))
        assert flow(str(accounts), str(dask), charts=False, return_state=True).is_completed()
    finally:
        os.environ.pop("PREFECT_API_URL", None)

    assert digest(plain) == digest(threads) == digest(dask)
    levels = pd.read_parquet(dask / "levels.parquet")
    assert sorted(levels["economy"].unique()) == ["XQ", "XR", "XS"]
    assert not list((dask / "latest").glob("economies"))  # per-economy scratch is not published
