"""The derive stage over chunks of economies: the same bytes and the same problems whatever the chunking.

The panel is the invented demo economy under four codes, scaled differently (common practice
for a synthetic panel; no published data).
"""

from __future__ import annotations

import hashlib

import pandas as pd
import pytest

from valvol import pipeline
from valvol.errors import InputError

CODES = ("XQ", "XR", "XS", "XT")


@pytest.fixture(scope="module")
def panel(tmp_path_factory, demo_dir):
    folder = tmp_path_factory.mktemp("panel") / "accounts"
    folder.mkdir()
    base = pd.read_csv(demo_dir / "accounts.csv")
    frames = [base.assign(economy=code, value=(base["value"] * (1 + 0.5 * i)).round(1)) for i, code in enumerate(CODES)]
    pd.concat(frames).to_csv(folder / "panel.csv", index=False)
    (folder / "valvol.toml").write_bytes((demo_dir / "valvol.toml").read_bytes())
    return folder


def _digest(out) -> dict[str, str]:
    return {t: hashlib.sha256((out / f"{t}.parquet").read_bytes()).hexdigest() for t in pipeline.TABLES}


@pytest.mark.parametrize("chunk_size, workers", [(1, 1), (3, 1), (1, 2)])
def test_tables_are_byte_identical_whatever_the_chunking(panel, tmp_path, chunk_size, workers):
    whole = tmp_path / "whole"
    pipeline.rebuild(panel, whole, charts=False, chunk_size=len(CODES), workers=1)
    chunked = tmp_path / "chunked"
    pipeline.rebuild(panel, chunked, charts=False, chunk_size=chunk_size, workers=workers)
    assert _digest(whole) == _digest(chunked)
    assert sorted(pd.read_parquet(chunked / "levels.parquet")["economy"].unique()) == list(CODES)


def test_automatic_chunks():
    # one chunk per worker once the panel is large enough, contiguous in sorted order
    rows = {f"E{i:02d}": 150_000 for i in range(5)}
    plan = pipeline.plan_chunks(rows, workers=2)
    assert [c.economies for c in plan] == [("E00", "E01", "E02"), ("E03", "E04")]  # about 400,000 rows each
    assert [c.economies for c in pipeline.plan_chunks(rows, chunk_size=4)] == [("E00", "E01", "E02", "E03"), ("E04",)]


def test_problems_are_the_same_whatever_the_chunking(panel, tmp_path):
    # under Fisher chains every positive series needs its given volumes: drop them for two
    # economies, so that the derive stage (not validation) finds the problems
    bad = tmp_path / "bad"
    bad.mkdir()
    rows = pd.read_csv(panel / "panel.csv")
    gone = rows["economy"].isin(["XR", "XT"]) & rows["item"].eq("P6") & rows["price_basis"].eq("chain_linked")
    rows[~gone].to_csv(bad / "panel.csv", index=False)
    (bad / "valvol.toml").write_text((panel / "valvol.toml").read_text() + '\n[volumes]\nindex = "fisher"\n'
                                     '[contributions]\nconvention = "fisher"\n')
    found = []
    for chunk_size in (1, 2, 4):
        with pytest.raises(InputError) as err:
            pipeline.rebuild(bad, tmp_path / f"out{chunk_size}", charts=False, chunk_size=chunk_size, workers=1)
        found.append(sorted(p.render() for p in err.value.problems))
        assert not (tmp_path / f"out{chunk_size}" / "latest").exists()
    assert found[0] == found[1] == found[2]
    assert {p.split()[1].split("/")[0] for p in found[0]} == {"XR", "XT"}


def test_the_flow_runs_the_stage_order():
    # the stage order is written once: the flow's tasks are the stages, in order
    from valvol.flows.rebuild import TASKS

    assert list(TASKS) == [s.name for s in pipeline.STAGES]
    assert [s.name for s in pipeline.stages_until("check")] == ["load", "validate", "reconcile", "derive", "check"]
