"""The review workbook: sheets, formats, highlights, charts, the row limit and the formula guard (README, workbook)."""

from __future__ import annotations

import re

import openpyxl
import pandas as pd
import pytest

from valvol import pipeline
from valvol.cli import main
from valvol.review.workbook import EXCEL_ROWS, LEVEL, PCT, PP, plan_sheets, write_workbook

#: Text that a spreadsheet could run as a formula or a DDE call, or that looks like a number.
HOSTILE = ["=1+1", "x_x000D_y", "a\r\nb", "=HYPERLINK(\"http://example.invalid\",\"x\")", "+SUM(A1:A9)", "-2+3", "@SUM(1)",
           "\tTAB", "\rCR", "{=A1}", "=cmd|' /C calc'!A0", "0042", "1e5", "http://example.invalid", "plain"]


@pytest.fixture(scope="module")
def demo_out(demo_dir, tmp_path_factory):
    out = tmp_path_factory.mktemp("wb") / "out"
    pipeline.rebuild(demo_dir / "earlier_release", out, label="first", charts=False, report=False)
    pipeline.rebuild(demo_dir, out, workbook=True, report=False)
    return out


def _text(value):
    """A text cell's value as Excel shows it: openpyxl leaves the OOXML escape of control characters
    (``_x000D_`` for a carriage return, ``_x005F_`` for an underscore that starts such a form;
    ECMA-376 Part 1, ST_Xstring, from memory) undecoded, so decode it here."""
    if not isinstance(value, str):
        return value
    return re.sub(r"_x([0-9A-Fa-f]{4})_", lambda m: chr(int(m[1], 16)), value)


def _cells(ws):
    for row in ws.iter_rows():
        yield from row


def test_no_cell_is_a_formula_and_hostile_text_is_intact(tmp_path):
    n = len(HOSTILE)
    levels = pd.DataFrame({"economy": HOSTILE, "period": ["2020-Q1"] * n, "frequency": ["Q"] * n,
                           "item": HOSTILE[::-1], "price_basis": ["current"] * n, "value": range(n),
                           "obs_status": HOSTILE})
    checks = pd.DataFrame({"economy": HOSTILE, "period": ["2020"] * n, "rule": HOSTILE, "item": HOSTILE,
                           "value": [1.0] * n, "tolerance": [0.5] * n, "status": ["warn"] * n})
    path = write_workbook({"levels": levels, "checks": checks}, tmp_path / "w.xlsx", vintage="=EVIL()",
                          caution="@caution")
    wb = openpyxl.load_workbook(path)
    for ws in wb.worksheets:
        for cell in _cells(ws):
            assert cell.data_type != "f", (ws.title, cell.coordinate, cell.value)
    ws = wb["levels"]
    got = [[_text(c.value) for c in row] for row in ws.iter_rows(min_row=2)]
    assert [r[0] for r in got] == HOSTILE and [r[3] for r in got] == HOSTILE[::-1] and [r[6] for r in got] == HOSTILE
    for row in ws.iter_rows(min_row=2):
        cell = row[0]
        assert cell.data_type == "s"
        assert cell.quotePrefix == _text(cell.value).startswith(("=", "+", "-", "@", "\t", "\r"))
    assert [_text(c.value) for c in wb["checks"]["C"]][1:] == HOSTILE
    assert wb["contents"]["A1"].value == "valvol review workbook: vintage =EVIL()"
    summary = [r for r in wb["contents"].iter_rows(values_only=True) if r[1] == "warn"]
    assert sorted(_text(r[0]) for r in summary) == sorted(HOSTILE)


def test_tables_split_at_the_row_limit_between_economies(tmp_path):
    economy = pd.Series(["A"] * 3 + ["B"] * 2 + ["C"] * 6)
    parts = plan_sheets("levels", economy, max_rows=5)
    assert [(p.sheet, p.start, p.stop, p.first, p.last) for p in parts] == [
        ("levels 1", 0, 5, "A", "B"), ("levels 2", 5, 10, "C", "C"), ("levels 3", 10, 11, "C", "C")]
    assert [p.sheet for p in plan_sheets("levels", economy, max_rows=EXCEL_ROWS - 1)] == ["levels"]
    frame = pd.DataFrame({"economy": economy, "value": range(11)})
    wb = openpyxl.load_workbook(write_workbook({"levels": frame}, tmp_path / "s.xlsx", max_rows=5))
    assert wb.sheetnames == ["contents", "levels 1", "levels 2", "levels 3"]
    assert [c.value for c in wb["levels 2"]["B"]] == ["value", 5, 6, 7, 8, 9]
    listed = {r[0]: r[2] for r in wb["contents"].iter_rows(min_row=5, max_row=7, values_only=True)}
    assert listed == {"levels 1": "A to B", "levels 2": "C", "levels 3": "C"}


def test_demo_workbook_is_a_readable_release(demo_out):
    wb = openpyxl.load_workbook(demo_out / "workbook.xlsx")
    assert wb.sheetnames[0] == "contents" and wb.sheetnames[-1] == "charts"
    assert {"levels", "deflators", "growth", "checks", "price_gaps", "revisions", "revision_summary"} <= set(
        wb.sheetnames)
    for name in ("levels", "growth", "checks", "revisions"):
        ws = wb[name]
        assert ws.freeze_panes == "A2" and ws.auto_filter.ref.startswith("A1:")
    assert wb["levels"]["F2"].number_format == LEVEL and wb["growth"]["G2"].number_format == PCT
    gaps = {r[3].value: r[5].number_format for r in wb["price_gaps"].iter_rows(min_row=2)}
    assert gaps["gap_household_vs_gdp"] == PP and gaps["terms_of_trade"] == "0.000"
    warned = [r for r in wb["checks"].iter_rows(min_row=2) if r[6].value == "warn"]
    assert len(warned) == 8 and all(c.fill.fgColor.rgb == "FFFFE699" for c in warned[0])
    assert wb["checks"]["A2"].fill.fgColor.rgb != "FFFFE699"
    rules = [rule.operator for cf in wb["revisions"].conditional_formatting for rule in cf.rules]
    assert sorted(rules) == ["greaterThan", "lessThan"]
    contents = list(wb["contents"].iter_rows(values_only=True))
    assert ("deflator_jump", "warn", 8, "XQ", None) in contents
    assert len(wb["charts"]._images) == 4


def test_workbook_command(demo_out, tmp_path, capsys):
    target = tmp_path / "review.xlsx"
    assert main(["-q", "workbook", str(demo_out), "--vintage", "first", "--to", str(target)]) == 0
    assert "review workbook of vintage" in capsys.readouterr().out
    wb = openpyxl.load_workbook(target)
    assert "revisions" not in wb.sheetnames  # the first vintage has no revisions table
    assert main(["-q", "workbook", str(demo_out), "--to", str(tmp_path / "x.csv")]) == 1


def test_the_workbook_link_follows_the_latest_vintage(demo_out, demo_dir):
    assert (demo_out / "workbook.xlsx").is_file()
    pipeline.rebuild(demo_dir, demo_out, force=True, charts=False, report=False)  # no workbook this time
    assert not (demo_out / "workbook.xlsx").is_symlink()
