"""The release report rendered in headless Chromium: text, tables, charts, no request, no console error,
and escaping of hostile text (README, report). Skipped where Chromium or playwright is missing."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pandas as pd
import pytest
from support import demo_panel

from valvol import pipeline
from valvol.cli import main
from valvol.review.report import context, render

CHROMIUM = os.environ.get("VALVOL_CHROMIUM", "/usr/bin/chromium")
sync_api = pytest.importorskip("playwright.sync_api", reason="playwright is not installed")
if not Path(CHROMIUM).exists() and shutil.which("chromium") is None:
    pytest.skip("no Chromium at /usr/bin/chromium (.ci/run installs Debian's chromium)", allow_module_level=True)


@pytest.fixture(scope="module")
def browser():
    with sync_api.sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM if Path(CHROMIUM).exists() else shutil.which("chromium"),
                              args=["--no-sandbox"])
        yield b
        b.close()


def _open(browser, path: Path):
    """The page of ``path`` with the console errors and the requests it made (other than the file itself)."""
    page = browser.new_page(viewport={"width": 1200, "height": 900})
    seen = {"errors": [], "requests": []}
    page.on("console", lambda m: seen["errors"].append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: seen["errors"].append(str(e)))
    page.on("request", lambda r: seen["requests"].append(r.url) if r.url != path.resolve().as_uri() else None)
    page.goto(path.resolve().as_uri())
    page.wait_for_load_state("load")
    return page, seen


@pytest.fixture(scope="module")
def demo_out(demo_dir, tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "out"
    pipeline.rebuild(demo_dir / "earlier_release", out, label="first")
    pipeline.rebuild(demo_dir, out)
    return out


def test_demo_report_renders_the_release(browser, demo_out, tmp_path_factory):
    page, seen = _open(browser, demo_out / "report.html")
    shots = tmp_path_factory.mktemp("screenshots")
    page.screenshot(path=str(shots / "demo_report.png"), full_page=True)
    text = page.inner_text("body")
    assert "Release report: XQ" in text and "analytical outputs" in text.lower()
    assert "not official statistics" in page.inner_text("#caution")
    head = page.locator("#headline tbody tr").first.inner_text()
    assert head.split("\t")[:2] == ["XQ", "2025-Q4"] and "%" in head
    assert page.locator("#contributions table").count() == 2
    assert "imports" in page.inner_text("#contributions") and "terms of trade" in page.inner_text("#price-gaps")
    # the rule, then its 8 rows
    assert "deflator_jump" in page.inner_text("#checks") and page.locator("#checks tr.warn").count() == 9
    assert "revised against vintage" in text and page.locator("#revisions tbody tr").count() > 5
    charts = page.locator("#charts svg")
    assert charts.count() == 4  # deflator contributions, deflator gap, terms of trade, price bridge
    for i in range(4):
        box = charts.nth(i).bounding_box()
        assert box["width"] > 500 and box["height"] > 200
    assert seen == {"errors": [], "requests": []}
    assert (shots / "demo_report.png").stat().st_size > 50_000


def test_panel_report_has_a_row_per_economy_and_the_overview(browser, demo_dir, tmp_path):
    out = tmp_path / "out"
    pipeline.rebuild(demo_panel(tmp_path / "accounts", demo_dir), out)
    page, seen = _open(browser, out / "report.html")
    assert page.locator("#headline tbody td.code").all_inner_texts() == ["XQ", "XR", "XS"]
    assert page.locator("#charts > figure svg").count() == 1  # the overview, then one section per economy
    assert page.locator("#charts details").count() == 3 and page.locator("#charts details[open]").count() == 0
    assert "in the latest year, by economy (panel_overview)" in page.inner_text("#charts > figure figcaption")
    assert seen == {"errors": [], "requests": []}


def test_hostile_text_is_escaped(browser, tmp_path):
    hostile = ["<script>window.__pwned = 1</script>", "<img src=x onerror=\"window.__pwned=2\">",
               "\"><svg onload=window.__pwned=3>", "{{ 7*7 }}", "&amp;"]
    n = len(hostile)
    growth = pd.DataFrame({"economy": hostile, "period": ["2020-Q1"] * n, "frequency": ["Q"] * n,
                           "item": ["B1GQ"] * n, "measure": ["volume"] * n, "horizon": ["prev_period"] * n,
                           "pct": [1.0] * n})
    checks = pd.DataFrame({"economy": hostile, "period": hostile, "rule": hostile, "item": hostile,
                           "value": [1.0] * n, "tolerance": [0.5] * n, "status": ["warn"] * n})
    manifest = {"vintage": hostile[0], "label": hostile[1], "created_at": hostile[2], "caution": hostile[1],
                "revised_against": None, "row_counts": {hostile[0]: 1}}
    path = tmp_path / "hostile.html"
    path.write_text(render(context({"growth": growth, "checks": checks}, manifest, [])), encoding="utf-8")
    page, seen = _open(browser, path)
    assert page.evaluate("typeof window.__pwned") == "undefined"
    assert page.locator("script, img, #checks svg, #headline svg").count() == 0
    cells = page.locator("#headline tbody td.code").all_inner_texts()
    assert cells == sorted(hostile)
    assert hostile[0] in page.title()
    assert "{{ 7*7 }}" in page.inner_text("#checks") and "&amp;" in page.inner_text("#checks")
    assert seen == {"errors": [], "requests": []}


def test_report_command(demo_out, tmp_path, capsys):
    assert main(["-q", "report", str(demo_out)]) == 0
    assert str(demo_out.resolve() / "vintages") in capsys.readouterr().out
    target = tmp_path / "first.html"
    assert main(["-q", "report", str(demo_out), "--vintage", "first", "--to", str(target)]) == 0
    assert "first vintage in this output folder" in target.read_text()
