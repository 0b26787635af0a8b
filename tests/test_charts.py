"""Charts of the demo vintage are drawn as PNG and SVG (README, charts)."""

from __future__ import annotations

import json

from valvol import pipeline


def test_demo_charts_are_written_and_listed(demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out)
    manifest = json.loads((out / "manifest.json").read_text())
    names = {p.split("/")[-1] for p in manifest["charts"]}
    for stem in ("XQ_deflator_contributions", "XQ_deflator_gap", "XQ_terms_of_trade"):
        assert {f"{stem}.png", f"{stem}.svg"} <= names
        png = out / "charts" / f"{stem}.png"
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and png.stat().st_size > 20_000


def test_no_charts_when_asked(demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_dir, out, charts=False)
    assert json.loads((out / "manifest.json").read_text())["charts"] == []
    assert list((out / "charts").iterdir()) == []
