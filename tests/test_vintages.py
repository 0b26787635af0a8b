"""Vintages, no-op rebuilds, pruning and revisions between releases (README, command line).

Revision conventions: later minus earlier (OECD/Eurostat Guidelines on Revisions Policy and
Analysis, via docs/methods.md section 8).
"""

from __future__ import annotations

import pandas as pd

from valvol import pipeline
from valvol.cli import main
from valvol.vintages import list_vintages, prune


def test_unchanged_inputs_are_a_no_op_unless_forced(demo_dir, tmp_path, capsys):
    out = tmp_path / "out"
    first = pipeline.rebuild(demo_dir, out, charts=False)
    again = pipeline.rebuild(demo_dir, out, charts=False)
    assert again.unchanged and again.vintage == first.vintage
    forced = pipeline.rebuild(demo_dir, out, charts=False, force=True, label="rerun")
    assert not forced.unchanged and forced.vintage.endswith("-rerun")
    assert [v.latest for v in list_vintages(out)] == [False, True]
    assert main(["vintages", str(out)]) == 0
    assert "rerun  <- latest" in capsys.readouterr().out


def test_prune_keeps_newest_and_latest(demo_dir, tmp_path):
    out = tmp_path / "out"
    for label in ("a", "b", "c"):
        pipeline.rebuild(demo_dir, out, charts=False, force=True, label=label)
    removed = prune(out, keep=1)
    assert len(removed) == 2 and [v.label for v in list_vintages(out)] == ["c"]
    assert (out / "levels.parquet").exists()


def test_revisions_between_two_releases(demo_dir, tmp_path, capsys):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir / "earlier_release", out, charts=False, label="first")
    pipeline.rebuild(demo_dir, out, charts=False)
    revs = pd.read_parquet(out / "revisions.parquet")
    gdp = revs.query("item == 'B1GQ' and measure == 'growth_volume_prev_period' and frequency == 'Q'")
    gdp = gdp.set_index("period")
    # first estimates from 2024-Q3 on were revised; earlier quarters were not
    assert gdp.loc["2024-Q2", "revision"] == 0 and abs(gdp.loc["2025-Q3", "revision"]) > 0.1
    assert (gdp["revision"] - (gdp["later"] - gdp["earlier"])).abs().max() < 1e-12
    summary = pd.read_parquet(out / "revision_summary.parquet")
    assert {"mr", "mar", "rmar", "rmsr", "t_stat", "significant", "test_convention"} <= set(summary.columns)
    target = tmp_path / "rev"
    assert main(["revisions", str(out), "--write", str(target),
                 "--triangle", "XQ:B1GQ:growth_volume_prev_period"]) == 0
    text = capsys.readouterr().out
    assert "later minus earlier" in text and (target / "revision_triangle.parquet").exists()
