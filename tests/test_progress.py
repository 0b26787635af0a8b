"""Progress of a rebuild, stage by stage, and the closing summary (README, progress and verbosity)."""

from __future__ import annotations

import io

import pytest

from valvol import pipeline, progress
from valvol.cli import main
from valvol.errors import InputError


class Recorder:
    def __init__(self) -> None:
        self.events: list[tuple] = []

    def started(self, stage, index, total):
        self.events.append(("start", stage, index, total))

    def finished(self, stage, index, total, seconds, facts, problems):
        self.events.append(("end", stage, index, total, facts, problems))


def test_every_stage_is_reported_with_its_counts(demo_dir, tmp_path):
    rec = Recorder()
    with progress.use(rec):
        pipeline.rebuild(demo_dir, tmp_path / "out", charts=False, report=False)
    assert progress.active() is None
    names = [s.name for s in pipeline.STAGES]
    assert [e[1] for e in rec.events if e[0] == "start"] == names
    facts = {e[1]: e[4] for e in rec.events if e[0] == "end"}
    assert facts["load"] == "6,300 rows read"
    assert facts["validate"] == "1 economy, 3,584 rows valid"
    assert facts["derive"] == "1 economy in 1 chunk(s)"
    assert facts["check"].startswith("2,307 pass, 8 warn, 0 fail")
    assert facts["write"].startswith("11 tables, ") and facts["publish"].startswith("vintage ")
    assert all(e[3] == len(names) and e[-1] == 0 for e in rec.events if e[0] == "end")


def test_a_stage_with_problems_is_the_last_reported(accounts, tmp_path):
    folder = accounts("economy,period,item,price_basis,value\nXQ,2020-Q9,P6,current,1\n")
    rec = Recorder()
    with progress.use(rec), pytest.raises(InputError):
        (tmp_path / "work").mkdir()
        pipeline.check(folder, tmp_path / "work")
    ends = [e for e in rec.events if e[0] == "end"]
    assert [e[-1] for e in ends[:-1]] == [0] * (len(ends) - 1) and ends[-1][-1] == 1
    assert ends[-1][1] in ("load", "validate") and ends[-1][4] == ""


def test_plain_lines_when_not_a_terminal_and_a_closing_summary(demo_dir, tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["rebuild", str(demo_dir), "--out", str(out), "--no-flow", "--no-charts"]) == 0
    captured = capsys.readouterr()
    lines = [line for line in captured.err.splitlines() if line.startswith("valvol: [")]
    assert [line.split()[2] for line in lines] == [s.name for s in pipeline.STAGES]
    assert lines[1].endswith("1 economy, 3,584 rows valid")
    assert "validate: 6300 rows valid" not in captured.err  # the detailed lines only with -v
    assert f"checks to review: deflator_jump 8 (warn); rows in {out / 'checks.parquet'} (columns rule, status)" \
        in captured.out
    assert f"release report: {out / 'report.html'}" in captured.out


def test_quiet_prints_no_progress_and_verbose_the_details(demo_dir, tmp_path, capsys):
    assert main(["-q", "rebuild", str(demo_dir), "--out", str(tmp_path / "q"), "--no-flow", "--no-charts"]) == 0
    quiet = capsys.readouterr()
    assert "valvol: [" not in quiet.err and "checks to review: deflator_jump 8" in quiet.out
    assert main(["-v", "rebuild", str(demo_dir), "--out", str(tmp_path / "v"), "--no-flow", "--no-charts",
                 "--no-report"]) == 0
    verbose = capsys.readouterr()
    assert "valvol: [2/7] validate" in verbose.err and "valvol: validate: 6300 rows valid" in verbose.err
    assert "release report" not in verbose.out


def test_rich_reporter_on_a_terminal():
    from rich.console import Console

    buffer = io.StringIO()
    reporter = progress.RichReporter(Console(file=buffer, force_terminal=True, width=100))
    reporter.started("load", 1, 2)
    reporter.finished("load", 1, 2, 0.5, "10 rows read", 0)
    reporter.started("write", 2, 2)
    reporter.finished("write", 2, 2, 1.0, "1 table", 0)
    text = buffer.getvalue()
    assert "[1/2] load" in text and "10 rows read" in text and "[2/2] write" in text
    assert progress.for_console(True) is None
    assert isinstance(progress.for_console(False, io.StringIO()), progress.PlainReporter)
