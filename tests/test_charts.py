"""Charts of a vintage: per economy in charts/<ECONOMY>/, a panel overview, no silent skip (README, charts)."""

from __future__ import annotations

import json
import logging

import pytest
from support import demo_panel

from valvol import pipeline
from valvol.charts import draw_charts
from valvol.cli import main

STEMS = ("XQ_deflator_contributions", "XQ_deflator_gap", "XQ_terms_of_trade")
CODES = ("XQ", "XR", "XS")


@pytest.fixture(scope="module")
def panel(tmp_path_factory, demo_dir):
    return demo_panel(tmp_path_factory.mktemp("panel") / "accounts", demo_dir, CODES)


@pytest.fixture(scope="module")
def panel_out(panel, tmp_path_factory):
    out = tmp_path_factory.mktemp("panel_out") / "out"
    pipeline.rebuild(panel, out, report=False)
    return out


def test_demo_charts_are_written_per_economy_and_listed(demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out, report=False)
    manifest = json.loads((out / "manifest.json").read_text())
    for stem in STEMS:
        assert {f"charts/XQ/{stem}.png", f"charts/XQ/{stem}.svg"} <= set(manifest["charts"])
        png = out / "charts" / "XQ" / f"{stem}.png"
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and png.stat().st_size > 20_000
    assert not (out / "charts" / "panel_overview.png").exists()  # one economy: no overview


def test_no_charts_when_asked(demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out, charts=False, report=False)
    assert json.loads((out / "manifest.json").read_text())["charts"] == []
    assert list((out / "charts").iterdir()) == []


def test_panel_gets_an_overview_and_a_folder_per_economy(panel_out):
    charts = set(json.loads((panel_out / "manifest.json").read_text())["charts"])
    assert {"charts/panel_overview.png", "charts/panel_overview.svg"} <= charts
    for code in CODES:
        assert f"charts/{code}/{code}_deflator_gap.png" in charts
    assert "Panel of 3 economies" in (panel_out / "charts" / "panel_overview.svg").read_text()


def test_a_panel_beyond_the_limit_says_what_was_not_drawn(panel_out, tmp_path, caplog):
    folder = tmp_path / "v"
    folder.mkdir()
    for t in ("deflator_contributions", "growth", "price_gaps", "deflators"):
        (folder / f"{t}.parquet").write_bytes((panel_out / f"{t}.parquet").read_bytes())
    log = logging.getLogger("valvol")
    log.addHandler(caplog.handler)  # the CLI may have stopped valvol's records reaching the root logger
    try:
        with caplog.at_level("WARNING", logger="valvol"):
            drawn = draw_charts(folder, limit=2)
    finally:
        log.removeHandler(caplog.handler)
    assert sorted(p.name for p in drawn) == ["panel_overview.png", "panel_overview.svg"]
    message = " ".join(r.getMessage() for r in caplog.records)
    assert "3 economies, more than 2" in message and "XQ, XR, XS" in message and "--charts" in message
    assert [p.name for p in draw_charts(folder, ["XR"], limit=2) if p.suffix == ".png"] == [
        "panel_overview.png", "XR_deflator_contributions.png", "XR_deflator_gap.png", "XR_terms_of_trade.png"]


def test_unknown_chart_codes_are_an_error_naming_them_and_the_known_ones(panel, tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["-q", "rebuild", str(panel), "--out", str(out), "--no-flow", "--charts", "XR,ZZ,YY"]) == 2
    err = capsys.readouterr().err
    assert "--charts: no accounts of economy YY, ZZ; economies in the accounts: XQ, XR, XS" in err
    assert not (out / "latest").exists()
