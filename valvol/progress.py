"""Progress of a rebuild, stage by stage, for the person at the console.

`valvol.pipeline.run_stages` tells the active reporter when each stage starts and ends, with
what the stage left (economies, rows, tables); the command line picks the reporter once:

* on a terminal, `RichReporter`: a live line with the running stage and its elapsed time, and
  one line per finished stage above it;
* elsewhere (a log file, CI, a pipe), `PlainReporter`: one plain line per finished stage;
* ``-q``: none (`use(None)`), only problems and the closing line are printed.

The reporter is set for the process (`use`), not passed through the Prefect flow: the flow
runs `run_stages` in the calling process, and a reporter is no parameter a flow run can
record. Reporting never changes what a stage computes.
"""

from __future__ import annotations

import sys
from collections.abc import Iterator
from contextlib import contextmanager
from typing import IO, Protocol


class Reporter(Protocol):
    """What `run_stages` calls: ``started`` before a stage, ``finished`` after it."""

    def started(self, stage: str, index: int, total: int) -> None: ...

    def finished(self, stage: str, index: int, total: int, seconds: float, facts: str, problems: int) -> None: ...


def _line(stage: str, index: int, total: int, seconds: float, facts: str, problems: int) -> str:
    text = "; ".join(x for x in (facts, f"{problems} problem(s), stopping" if problems else "") if x)
    return f"[{index}/{total}] {stage:<9} {seconds:6.1f} s  {text}".rstrip()


class PlainReporter:
    """One plain line per finished stage (for logs and pipes)."""

    def __init__(self, stream: IO[str] | None = None) -> None:
        self.stream = stream

    def started(self, stage: str, index: int, total: int) -> None:
        pass

    def finished(self, stage: str, index: int, total: int, seconds: float, facts: str, problems: int) -> None:
        print("valvol: " + _line(stage, index, total, seconds, facts, problems), file=self.stream or sys.stderr,
              flush=True)


class RichReporter:
    """A live status line for the running stage (rich), a kept line for every finished one."""

    def __init__(self, console=None) -> None:
        from rich.console import Console

        self.console = console or Console(stderr=True)
        self._progress = None
        self._task = None

    def started(self, stage: str, index: int, total: int) -> None:
        from rich.progress import BarColumn, Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

        if self._progress is None:
            self._progress = Progress(SpinnerColumn("line"), TextColumn("{task.description}"), BarColumn(),
                                      TextColumn("{task.completed}/{task.total} stages"), TimeElapsedColumn(),
                                      console=self.console, transient=True)
            self._progress.start()
            self._task = self._progress.add_task("rebuild", total=total)
        self._progress.update(self._task, description=f"{stage}...", completed=index - 1, total=total)

    def finished(self, stage: str, index: int, total: int, seconds: float, facts: str, problems: int) -> None:
        if self._progress is None:
            self.started(stage, index, total)
        self._progress.console.print(_line(stage, index, total, seconds, facts, problems), highlight=False,
                                     markup=False)
        self._progress.update(self._task, completed=index)
        if index == total or problems:
            self.close()

    def close(self) -> None:
        if self._progress is not None:
            self._progress.stop()
            self._progress = None


_ACTIVE: list[Reporter | None] = [None]


def active() -> Reporter | None:
    """The reporter of this process (None: report nothing)."""
    return _ACTIVE[0]


@contextmanager
def use(reporter: Reporter | None) -> Iterator[Reporter | None]:
    """Make ``reporter`` the active one while the block runs."""
    before = _ACTIVE[0]
    _ACTIVE[0] = reporter
    try:
        yield reporter
    finally:
        close = getattr(reporter, "close", None)
        if close is not None:
            close()
        _ACTIVE[0] = before


def for_console(quiet: bool, stream: IO[str] | None = None) -> Reporter | None:
    """The reporter the command line uses: none when quiet, rich on a terminal, plain lines otherwise."""
    stream = stream or sys.stderr
    if quiet:
        return None
    if stream.isatty():
        return RichReporter()
    return PlainReporter(stream)
