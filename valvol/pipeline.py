"""The rebuild: one stage order, written once, run by every command and by the Prefect flow.

``STAGES`` is the order::

    load -> validate -> reconcile -> derive (one call per chunk of economies) -> check -> write -> publish

``load``       every accounts file -> ``rows.arrow`` (parsed rows, with file and row)
``validate``   row rules, keys, gaps, identities over the whole panel -> ``validated.arrow``
``reconcile``  ``[benchmark]`` / ``[reconcile]``: adjusted ``validated.arrow`` and its report
``derive``     one chunk of economies (contiguous in sorted order) -> ``chunks/<n>/<table>.arrow``;
               chunks are independent, so they run anywhere (threads, a Dask cluster)
``check``      a check that fails anywhere in the panel stops the rebuild
``write``      the chunks' tables -> one ordered parquet file per table, revisions against
               ``latest``, the vintage's ``valvol.duckdb``, charts, ``manifest.json`` (last)
``publish``    the work folder becomes ``vintages/<vintage>``; ``latest`` switches atomically

Every stage takes the `Run` (paths and the one `Config`, read once) and returns the problems
it found, as data; `run_stages` calls the stages in order, collects the problems of every
chunk and stops after the first stage that found any. ``valvol rebuild`` runs all stages,
``valvol check`` the stages up to ``check`` in a scratch folder, ``valvol reconcile`` those up
to ``reconcile`` and then writes the reconciled accounts; the flow (`valvol.flows.rebuild`)
hands `run_stages` a caller that runs each stage as a Prefect task.
"""

from __future__ import annotations

import json
import logging
import math
import multiprocessing
import os
import shutil
import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from valvol import db, reconcile_stage
from valvol.config import Config, load_config
from valvol.derive import TABLES
from valvol.errors import InputError, Problem
from valvol.io import publish as pub
from valvol.io import workfiles
from valvol.staging import STAGED_TABLES

log = logging.getLogger("valvol")

ROWS_FILE = "rows.arrow"
READ_PROBLEMS_FILE = "read_problems.json"
VALIDATED_FILE = "validated.arrow"
INDEXES_FILE = "indexes.arrow"
ECONOMIES_FILE = "economies.json"
RECONCILIATION_FILE = "reconciliation.arrow"
RECONCILE_CHECKS_FILE = "reconcile_checks.arrow"
STAGED_FILE = "staged_{}.arrow"
CHUNKS_DIR = "chunks"
TIMINGS_FILE = "timings.json"
MANIFEST_FILE = "manifest.json"
DB_FILE = db.DB_FILE

#: Tables of revisions against the previous vintage (empty for a first vintage).
REVISION_TABLES = ("revisions", "revision_summary")
#: Input rows per chunk at most when the chunk size is automatic (bounds a chunk's memory).
CHUNK_ROWS = 400_000
#: Input rows per chunk at least, when the chunk size is automatic and the panel is small.
MIN_CHUNK_ROWS = 100_000


# ----------------------------------------------------------------------------- the run
@dataclass(frozen=True)
class Run:
    """Everything a stage needs: where to read and work, and the one configuration.

    ``options`` (label, charts, chart economies) shape the vintage and its fingerprint;
    ``chunk_size`` (economies per derive chunk, 0 = automatic: one chunk per worker, at most
    `CHUNK_ROWS` input rows each) and ``workers`` (chunks derived at once on the plain path)
    never change the outputs.
    """

    accounts_dir: Path
    work: Path
    config: Config
    out_dir: Path | None = None
    options: dict = field(default_factory=dict)
    chunk_size: int = 0
    workers: int = 0


@dataclass(frozen=True)
class Chunk:
    """A contiguous run of economies (in sorted order) derived together."""

    index: int
    economies: tuple[str, ...]

    @property
    def name(self) -> str:
        return f"{self.index:05d}"


@dataclass(frozen=True)
class Stage:
    """One step of the rebuild: ``run(run)`` or, ``per_chunk``, ``run(run, chunk)``; returns problems."""

    name: str
    run: Callable[..., list[Problem]]
    per_chunk: bool = False
    io: bool = False  # reads or writes outside the work folder: worth a retry in the flow


def _problems_as_data(fn: Callable[..., None]) -> Callable[..., list[Problem]]:
    """Run a stage body; the problems of an `InputError` it raises become its return value,
    located in the input files (`located`)."""

    def stage(run: Run, *args) -> list[Problem]:
        try:
            fn(run, *args)
        except InputError as err:
            return located(run, list(err.problems))
        return []

    stage.__name__ = stage.__qualname__ = fn.__name__
    stage.__doc__ = fn.__doc__
    return stage


def located(run: Run, problems: list[Problem]) -> list[Problem]:
    """``problems`` found on derived panels (a zero volume, a broken identity, quarters that do
    not add to the year), which name economy, item, price basis and period, with the file and
    row of the input row they are about, or the file of their series (`valvol.validate.locate`)."""
    from valvol.validate import locate

    path = run.work / ROWS_FILE
    economies = sorted({p.economy for p in problems if not p.file and p.economy and p.item})
    if not economies or not path.exists():
        return problems
    return locate(problems, workfiles.read_frame(path, economies))


def default_workers() -> int:
    """Chunks derived at once on one machine: one per core."""
    return max(1, os.cpu_count() or 1)


# ----------------------------------------------------------------------------- stages
@_problems_as_data
def load(run: Run) -> None:
    """Read every data file of the accounts folder; write the parsed rows and the read problems."""
    from valvol.io.readers import read_accounts
    from valvol.validate import parse_rows

    raw, problems = read_accounts(run.accounts_dir, run.config.carry_columns, sdmx=run.config.sdmx,
                                  wide=run.config.wide)
    rows = parse_rows(raw)
    workfiles.write_frame(run.work / ROWS_FILE, rows)
    (run.work / READ_PROBLEMS_FILE).write_text(json.dumps([p.as_dict() for p in problems]))
    log.info("load: %d rows from %d file(s) in %s", len(rows), rows["source_file"].nunique(), run.accounts_dir)


@_problems_as_data
def validate(run: Run) -> None:
    """Check the parsed rows against the input contract over the whole panel.

    Every problem is collected (read problems, row rules, duplicate keys, gaps, identities,
    quarters against years) and raised together; valid rows go to ``validated.arrow``
    (accounts) and ``indexes.arrow`` (price indexes), the economies to ``economies.json``.
    """
    from valvol.validate import validate_rows

    problems = [Problem(**p) for p in json.loads((run.work / READ_PROBLEMS_FILE).read_text())]
    rows = workfiles.read_frame(run.work / ROWS_FILE)
    accounts, indexes, staged = validate_rows(rows, run.config, run.accounts_dir, problems)
    as_read = ["value_text", "period_text"]  # located problems read them from the rows file
    workfiles.write_frame(run.work / VALIDATED_FILE, accounts.drop(columns=as_read, errors="ignore"))
    workfiles.write_frame(run.work / INDEXES_FILE, indexes.drop(columns=as_read, errors="ignore"))
    if not reconcile_stage.enabled(run.config):  # else the derive chunks stage the adjusted rows
        for name, table in staged.items():
            workfiles.write_frame(run.work / STAGED_FILE.format(name), table)
    counts = accounts["economy"].value_counts().sort_index()
    (run.work / ECONOMIES_FILE).write_text(json.dumps({"rows": {str(e): int(n) for e, n in counts.items()}}))
    log.info("validate: %d rows valid: %d economies, %d accounts rows, %d price-index rows",
             len(accounts) + len(indexes), len(counts), len(accounts), len(indexes))


@_problems_as_data
def reconcile(run: Run) -> None:
    """Benchmark and reconcile the validated rows as ``[benchmark]`` and ``[reconcile]`` ask.

    Rewrites ``validated.arrow`` with the adjusted quarters and writes the
    ``reconciliation`` report and its before/after checks (empty when not asked for).
    """
    if reconcile_stage.enabled(run.config):
        rows = workfiles.read_frame(run.work / VALIDATED_FILE)
        rows, report, checks = reconcile_stage.run(rows, run.config, run.accounts_dir)
        workfiles.write_frame(run.work / VALIDATED_FILE, rows)
        log.info("reconcile: %d quarterly values adjusted", int((report["adjustment"].abs() > 0).sum()))
    else:
        report = pd.DataFrame(columns=reconcile_stage.REPORT_COLUMNS)
        checks = pd.DataFrame(columns=reconcile_stage.CHECK_COLUMNS)
    workfiles.write_frame(run.work / RECONCILIATION_FILE, reconcile_stage.typed_report(report))
    workfiles.write_frame(run.work / RECONCILE_CHECKS_FILE, checks.astype({"value": "float64", "tolerance": "float64"}))


@_problems_as_data
def derive(run: Run, chunk: Chunk) -> None:
    """Derive every table of one chunk of economies in its own in-memory database.

    When a method finds problems in some economies, the chunk is derived again without them,
    so that every economy's problems are those of the first step that fails for it, whatever
    economies share its chunk; all of them are raised together at the end.
    """
    from valvol.derive import derive_chunk

    folder = run.work / CHUNKS_DIR / chunk.name
    if folder.exists():  # a retried or re-run task starts clean
        shutil.rmtree(folder)
    economies, problems = list(chunk.economies), []
    while economies:
        rows, indexes, checks = (workfiles.read_frame(run.work / name, economies)
                                 for name in (VALIDATED_FILE, INDEXES_FILE, RECONCILE_CHECKS_FILE))
        staged = None
        if (run.work / STAGED_FILE.format("levels")).exists():
            staged = {name: workfiles.read_table(run.work / STAGED_FILE.format(name), economies)
                      for name in STAGED_TABLES}
        try:
            tables = derive_chunk(rows, run.config, staged=staged, indexes=indexes, extra_checks=checks)
            break
        except InputError as err:
            problems += err.problems
            failing = {p.economy for p in err.problems}
            if "" in failing or not failing & set(economies):  # a problem of the whole chunk
                raise InputError(problems) from None
            economies = [e for e in economies if e not in failing]
    if problems:
        raise InputError(problems)
    folder.mkdir(parents=True)
    for name, table in tables.items():
        workfiles.write_frame(folder / f"{name}.arrow", table)


@_problems_as_data
def check(run: Run) -> None:
    """A check that fails in any chunk (e.g. an identity broken by benchmarking one component of
    a given aggregate) stops the rebuild with located problems: nothing inconsistent is published."""
    from valvol.derive import failed_check_problems

    problems = [p for c in chunks(run) for p in failed_check_problems(workfiles.read_table(_chunk_file(run, c, "checks")))]
    known = sorted(json.loads((run.work / ECONOMIES_FILE).read_text())["rows"])
    asked = run.options.get("chart_economies") if run.options.get("charts", True) else None
    unknown = sorted(set(asked or ()) - set(known))
    if unknown:  # before anything is written: a chart asked for that cannot be drawn
        problems.append(Problem(file="--charts", reason=f"no accounts of economy {', '.join(unknown)}; economies in "
                                f"the accounts: {', '.join(known[:50])}" + (" ..." if len(known) > 50 else "")))
    if problems:
        raise InputError(problems)


@_problems_as_data
def write(run: Run) -> None:
    """Combine the chunks' tables, compare them with ``latest``, write the vintage's files.

    Writes ``<table>.parquet`` (one ordered file per table, combined in parallel), the
    revisions against the latest vintage of the output folder (when there is one),
    ``valvol.duckdb`` holding the same tables, ``charts/`` and, last, ``manifest.json``.
    """
    from valvol.charts import draw_charts
    from valvol.io import writers
    from valvol.manifest import build_manifest

    started = time.perf_counter()
    work, options = run.work, run.options
    parts = chunks(run)
    jobs = [(name, [_chunk_file(run, c, name) for c in parts], work / f"{name}.parquet") for name in TABLES]
    counts = dict(zip(TABLES, map_chunks(run, writers.combine_table, jobs), strict=True))
    small = {"reconciliation": workfiles.read_table(work / RECONCILIATION_FILE)}
    revised_against, revisions = _revisions_against_latest(run.out_dir, work)
    counts |= writers.write_tables(work, small | revisions)
    (work / "charts").mkdir(exist_ok=True)
    drawn = draw_charts(work, options.get("chart_economies")) if options.get("charts", True) else []
    writers.store_database(work, list(counts))
    status = pq.read_table(work / "checks.parquet", columns=["status"]).column("status").to_pandas()
    timings = _timings(work) | {"write": round(time.perf_counter() - started, 3)}
    manifest = build_manifest(run.accounts_dir, run.config, counts, status.value_counts().to_dict(), timings,
                              options=options)
    manifest["charts"] = sorted(str(p.relative_to(work)) for p in drawn)
    manifest["revised_against"] = revised_against
    manifest["review"] = _review_files(work, manifest, options)
    # last, the work files of earlier stages: a write retried after a failure starts again from them
    shutil.rmtree(work / CHUNKS_DIR, ignore_errors=True)
    for name in work.iterdir():
        if name.suffix == ".arrow" or name.name in (READ_PROBLEMS_FILE, ECONOMIES_FILE, TIMINGS_FILE):
            name.unlink()
    (work / MANIFEST_FILE).write_text(json.dumps(manifest, indent=2, sort_keys=True) + "\n")
    log.info("write: %s", ", ".join(f"{t} ({n} rows)" for t, n in counts.items()))
    if drawn:
        log.info("write: drew %d chart file(s)", len(drawn))
    for name in manifest["review"]:
        log.info("write: %s", name)


#: Review outputs a vintage may hold (`valvol.review`): the release report (by default) and the workbook.
REPORT_FILE = "report.html"
WORKBOOK_FILE = "workbook.xlsx"


def _review_files(work: Path, manifest: dict, options: dict) -> list[str]:
    """Write the review outputs the rebuild options ask for into the vintage; their names."""
    from valvol.review.report import report_of_vintage
    from valvol.review.workbook import workbook_of_vintage

    written = []
    if options.get("report", True):
        report_of_vintage(work, work / REPORT_FILE, manifest)
        written.append(REPORT_FILE)
    if options.get("workbook", False):
        workbook_of_vintage(work, work / WORKBOOK_FILE, manifest)
        written.append(WORKBOOK_FILE)
    return written


@_problems_as_data
def publish(run: Run) -> None:
    """Move the finished work folder into ``vintages/`` and switch ``latest`` to it."""
    manifest = json.loads((run.work / MANIFEST_FILE).read_text())
    links = [f"{t}.parquet" for t in (*TABLES, "reconciliation", *REVISION_TABLES)] + [MANIFEST_FILE, DB_FILE,
                                                                                      "charts"]
    links += [REPORT_FILE, WORKBOOK_FILE]
    target = pub.publish(run.work, run.out_dir, manifest["vintage"], [n for n in links if (run.work / n).exists()])
    for name in (REPORT_FILE, WORKBOOK_FILE):  # a review file the new vintage lacks: no link left dangling
        link = run.out_dir / name
        if link.is_symlink() and not link.exists():
            link.unlink()
    log.info("publish: vintage %s in %s", target.name, run.out_dir)


#: The stage order, written once.
STAGES: tuple[Stage, ...] = (
    Stage("load", load, io=True),
    Stage("validate", validate),
    Stage("reconcile", reconcile, io=True),
    Stage("derive", derive, per_chunk=True),
    Stage("check", check),
    Stage("write", write, io=True),
    Stage("publish", publish),  # one rename: a retry after it could not find the work folder
)


def stages_until(last: str) -> tuple[Stage, ...]:
    """The stages from ``load`` up to and including ``last``."""
    names = [s.name for s in STAGES]
    return STAGES[: names.index(last) + 1]


# ----------------------------------------------------------------------------- running them
def chunks(run: Run) -> list[Chunk]:
    """The derive chunks of a validated run: contiguous runs of economies in sorted order."""
    rows = json.loads((run.work / ECONOMIES_FILE).read_text())["rows"]
    return plan_chunks(rows, run.chunk_size, run.workers or default_workers())


def plan_chunks(rows: dict[str, int], chunk_size: int = 0, workers: int = 1) -> list[Chunk]:
    """Split economies (with their input row counts) into chunks.

    ``chunk_size`` > 0: that many economies per chunk. Automatic (0): one chunk per
    `MIN_CHUNK_ROWS` input rows, up to ``workers`` chunks (a small panel is one chunk: a
    worker process costs more than it saves there), and more whenever chunks would hold more
    than `CHUNK_ROWS` input rows on average.

    >>> [c.economies for c in plan_chunks({"A": 10**5, "B": 10**5, "C": 10**5}, workers=2)]
    [('A', 'B'), ('C',)]
    >>> [c.economies for c in plan_chunks({"A": 10, "B": 10, "C": 10}, workers=2)]
    [('A', 'B', 'C')]
    """
    economies = sorted(rows)
    if not economies:
        return []
    if chunk_size <= 0:
        total = sum(rows.values())
        n = max(min(workers, math.ceil(total / MIN_CHUNK_ROWS)), math.ceil(total / CHUNK_ROWS))
        chunk_size = math.ceil(len(economies) / min(n, len(economies)))
    return [Chunk(i, tuple(economies[start:start + chunk_size]))
            for i, start in enumerate(range(0, len(economies), chunk_size))]


def _chunk_file(run: Run, chunk: Chunk, table: str) -> Path:
    return run.work / CHUNKS_DIR / chunk.name / f"{table}.arrow"


#: How a stage is invoked: ``call(stage, run, chunks)`` -> problems (chunks: None unless per chunk).
StageCaller = Callable[[Stage, Run, Sequence[Chunk] | None], list[Problem]]


def _executor(run: Run):
    """joblib's reusable process pool (loky) of ``run.workers`` processes, or None for one worker.

    Chunk work is mostly pandas and numpy, which hold the interpreter lock: processes, not
    threads, use the cores. The workers stay alive for the next call and need no
    ``__main__`` guard on POSIX systems.
    """
    workers = run.workers or default_workers()
    if workers <= 1 or multiprocessing.current_process().daemon:  # a daemon (a Dask worker) has no children
        return None
    if not (run.work / ECONOMIES_FILE).exists() or len(chunks(run)) < 2:  # one chunk: no pool worth starting
        return None
    from joblib.externals.loky import get_reusable_executor

    _POOLS.append(get_reusable_executor(max_workers=workers, timeout=300, initializer=_keep_worker))
    return _POOLS[-1]


def _keep_worker() -> None:
    """Runs in each worker: a chunk's arrays leave the worker's memory grown by more than loky's
    leak threshold (300 MB), after which loky would replace the worker (paying its start-up
    again) for every chunk; chunks free what they use, so the check is lifted."""
    from joblib.externals.loky import process_executor

    process_executor._MAX_MEMORY_LEAK_SIZE = 1 << 62


#: Pools started during the current run (shut down when it ends).
_POOLS: list = []


def _shutdown_pool() -> None:
    """Stop the pool's workers (if any were started), so that no process outlives the run."""
    while _POOLS:
        _POOLS.pop().shutdown(wait=True)


def map_chunks(run: Run, fn: Callable, jobs: Sequence[tuple]) -> list:
    """``fn(*job)`` for every job, in order; in the process pool when there is one."""
    pool = _executor(run) if len(jobs) > 1 else None
    if pool is None:
        return [fn(*job) for job in jobs]
    return list(pool.map(fn, *zip(*jobs, strict=True)))


class _Done:
    def __init__(self, value) -> None:
        self.value = value

    def result(self):
        return self.value


def submit(run: Run, fn: Callable, *args):
    """``fn(*args)`` started in the process pool (a future), or run here when there is none."""
    pool = _executor(run)
    return pool.submit(fn, *args) if pool is not None else _Done(fn(*args))


def run_chunk(stage: Stage, run: Run, chunk: Chunk) -> list[Problem]:
    """One chunk of a per-chunk stage, in a worker process when the run has a pool."""
    return submit(run, stage.run, run, chunk).result()


def call_plainly(stage: Stage, run: Run, parts: Sequence[Chunk] | None) -> list[Problem]:
    """Call a stage as a plain function; a per-chunk stage over its chunks in the process pool."""
    if parts is None:
        return stage.run(run)
    return [p for found in map_chunks(run, stage.run, [(run, c) for c in parts]) for p in found]


def run_stages(run: Run, stages: Sequence[Stage] = STAGES, call: StageCaller = call_plainly) -> list[Problem]:
    """Run ``stages`` in order; return the problems of the first stage that finds any (else []).

    The active progress reporter (`valvol.progress.active`) hears of every stage's start and
    end, with what it left (`stage_facts`).
    """
    from valvol import progress

    reporter = progress.active()
    try:
        for i, stage in enumerate(stages, 1):
            started = time.perf_counter()
            if reporter is not None:
                reporter.started(stage.name, i, len(stages))
            problems = call(stage, run, chunks(run) if stage.per_chunk else None)
            _timed(run.work, stage.name, started)
            if reporter is not None:
                reporter.finished(stage.name, i, len(stages), time.perf_counter() - started,
                                  stage_facts(run, stage.name) if not problems else "", len(problems))
            if problems:
                log.info("%s: %d problem(s); stopping", stage.name, len(problems))
                return problems
        return []
    finally:
        _shutdown_pool()


def stage_facts(run: Run, stage: str) -> str:
    """What a finished stage left, in a few words for the console (read from its work files)."""
    work = run.work
    try:
        if stage == "load":
            n = workfiles.read_table(work / ROWS_FILE).num_rows
            return f"{n:,} rows read"
        if stage == "validate":
            rows = json.loads((work / ECONOMIES_FILE).read_text())["rows"]
            return f"{_economies(len(rows))}, {sum(rows.values()):,} rows valid"
        if stage == "reconcile":
            n = workfiles.read_table(work / RECONCILIATION_FILE).num_rows
            return f"{n:,} quarterly values benchmarked or reconciled" if n else "nothing asked"
        if stage == "derive":
            parts = chunks(run)
            return f"{_economies(sum(len(c.economies) for c in parts))} in {len(parts)} chunk(s)"
        if stage == "check":
            status = pa.concat_tables([workfiles.read_table(_chunk_file(run, c, "checks")).select(["status"])
                                       for c in chunks(run)]).column("status").to_pandas().value_counts()
            return ", ".join(f"{status.get(k, 0):,} {k}" for k in ("pass", "warn", "fail", "info"))
        manifest_path = work / MANIFEST_FILE if stage == "write" else run.out_dir / pub.LATEST / MANIFEST_FILE
        m = json.loads(manifest_path.read_text())
        if stage == "write":
            return (f"{len(m['row_counts'])} tables, {sum(m['row_counts'].values()):,} rows, "
                    f"{len(m.get('charts', []))} chart file(s)" + "".join(f", {k}" for k in m.get("review", [])))
        return f"vintage {m['vintage']}"
    except (OSError, KeyError, ValueError, TypeError):  # a stage run outside the usual order: no facts
        return ""


def _economies(n: int) -> str:
    return f"{n:,} econom{'y' if n == 1 else 'ies'}"


def _timed(work: Path, stage: str, started: float) -> None:
    path = work / TIMINGS_FILE
    if not work.is_dir() or (work / MANIFEST_FILE).exists():  # written (or published): timings are final
        return
    timings = _timings(work)
    timings[stage] = round(timings.get(stage, 0.0) + time.perf_counter() - started, 3)
    path.write_text(json.dumps(timings, indent=1, sort_keys=True))


def _timings(work: Path) -> dict[str, float]:
    path = work / TIMINGS_FILE
    return json.loads(path.read_text()) if path.exists() else {}


# ----------------------------------------------------------------------------- commands
@dataclass(frozen=True)
class RebuildResult:
    """What a rebuild produced (``unchanged``: inputs, code and config as in ``latest``)."""

    vintage: str
    path: Path
    row_counts: dict[str, int]
    warnings: int
    unchanged: bool = False
    #: Checks that warn or fail, counted by (status, rule) (read from the vintage's checks table).
    flagged: dict[tuple[str, str], int] = field(default_factory=dict)
    #: Review outputs written into the vintage (``report.html``, ``workbook.xlsx``).
    review: tuple[str, ...] = ()


def rebuild_options(label: str | None, charts: bool, chart_economies: list[str] | None, *, report: bool = True,
                    workbook: bool = False) -> dict:
    """The rebuild options that shape a vintage (part of its fingerprint); checks the label.

    ``report``: write the release report ``report.html`` into the vintage (default);
    ``workbook``: also the review workbook ``workbook.xlsx``.
    """
    from valvol.manifest import check_chart_economies, check_label

    return {"label": check_label(label), "charts": charts, "chart_economies": check_chart_economies(chart_economies),
            "report": report, "workbook": workbook}


def unchanged_since_latest(accounts_dir: str | Path, out_dir: str | Path, config: Config,
                           options: dict | None = None) -> Path | None:
    """The latest vintage when it was built from identical inputs, code, config and options; else None."""
    from valvol.manifest import fingerprint

    manifest = Path(out_dir) / pub.LATEST / MANIFEST_FILE
    if not manifest.exists():
        return None
    if json.loads(manifest.read_text()).get("fingerprint") != fingerprint(Path(accounts_dir), config, options):
        return None
    return (Path(out_dir) / pub.LATEST).resolve()


@dataclass(frozen=True)
class Session:
    """One rebuild's hold on an output root: its run, or the unchanged vintage (``run`` None)."""

    run: Run | None
    unchanged: Path | None


@contextmanager
def session(accounts_dir: str | Path, out_dir: str | Path, *, force: bool = False, options: dict | None = None,
            config: Config | None = None, chunk_size: int = 0, workers: int = 0) -> Iterator[Session]:
    """Hold the output lock for one rebuild, shared by `rebuild` and the Prefect flow.

    Reads the configuration once (unless given). Yields the unchanged latest vintage when
    inputs, code, config and options are as in ``latest`` and ``force`` is False; otherwise a
    `Run` in a fresh staging folder, removed on any failure and whenever the body ends without
    publishing it.
    """
    accounts_dir, out_dir = Path(accounts_dir), Path(out_dir)
    if not accounts_dir.is_dir():
        raise InputError([Problem(file=str(accounts_dir), reason="accounts folder does not exist")])
    options = options if options is not None else rebuild_options(None, True, None)
    pub.check_output_folder(accounts_dir, out_dir)  # before anything is written
    with pub.output_lock(out_dir):
        config = config or load_config(accounts_dir)
        same = None if force else unchanged_since_latest(accounts_dir, out_dir, config, options)
        if same is not None:
            log.info("inputs, code and config unchanged since vintage %s: nothing to do", same.name)
            yield Session(None, same)
            return
        work = pub.new_staging_dir(out_dir)
        try:
            yield Session(Run(accounts_dir, work, config, out_dir, options, chunk_size, workers), None)
        finally:
            pub.discard_staging(work)  # a no-op once published (the folder has moved)


def rebuild(
    accounts_dir: str | Path,
    out_dir: str | Path,
    *,
    force: bool = False,
    label: str | None = None,
    charts: bool = True,
    chart_economies: list[str] | None = None,
    chunk_size: int = 0,
    workers: int = 0,
    report: bool = True,
    workbook: bool = False,
) -> RebuildResult:
    """Run every stage without Prefect and publish atomically (the flow runs the same stages as tasks)."""
    options = rebuild_options(label, charts, chart_economies, report=report, workbook=workbook)
    with session(accounts_dir, out_dir, force=force, options=options, chunk_size=chunk_size,
                 workers=workers) as s:
        if s.unchanged is not None:
            return result_of(s.unchanged, unchanged=True)
        problems = run_stages(s.run)
        if problems:
            raise InputError(problems)
        target = (Path(out_dir) / pub.LATEST).resolve()
    return result_of(target)


def check(accounts_dir: str | Path, work: str | Path, *, chunk_size: int = 0) -> int:
    """Every rule a rebuild applies (the stages up to ``check``) in ``work``, publishing nothing.

    Returns the number of rows read; raises `InputError` with every problem found.
    """
    run = Run(Path(accounts_dir), Path(work), load_config(accounts_dir), chunk_size=chunk_size)
    problems = run_stages(run, stages_until("check"))
    if problems:
        raise InputError(problems)
    return workfiles.read_table(run.work / ROWS_FILE).num_rows


def reconciled_accounts(accounts_dir: str | Path, to_dir: str | Path) -> pd.DataFrame:
    """Benchmark and reconcile a folder (the stages up to ``reconcile``); write the adjusted accounts.

    ``to_dir`` gets ``accounts.csv`` (every row, quarters adjusted), a copy of ``valvol.toml``
    and ``reconciliation/report.csv`` (a sub-folder, so it is not read as accounts), plus
    the benchmarks files the configuration names. Returns the report. Rebuilding ``to_dir``
    reproduces the reconciled accounts (a second reconciliation of consistent data moves
    nothing).
    """
    import tempfile

    with tempfile.TemporaryDirectory(prefix="valvol-reconcile-") as tmp:
        run = Run(Path(accounts_dir), Path(tmp), load_config(accounts_dir))
        problems = run_stages(run, stages_until("reconcile"))
        if problems:
            raise InputError(problems)
        rows = pd.concat([workfiles.read_frame(run.work / VALIDATED_FILE),
                          workfiles.read_frame(run.work / INDEXES_FILE)])
        report = workfiles.read_frame(run.work / RECONCILIATION_FILE)
    reconcile_stage.export_accounts(rows, report, run.config, Path(accounts_dir), Path(to_dir))
    log.info("wrote reconciled accounts (%d rows) and the report to %s", len(rows), to_dir)
    return report


def result_of(target: Path, unchanged: bool = False) -> RebuildResult:
    """Summary of a published vintage, from its manifest."""
    manifest = json.loads((target / MANIFEST_FILE).read_text())
    return RebuildResult(
        vintage=target.name,
        path=target,
        row_counts=manifest["row_counts"],
        warnings=manifest["checks"].get("warn", 0),
        unchanged=unchanged,
        flagged=flagged_checks(target),
        review=tuple(manifest.get("review", ())),
    )


def flagged_checks(vintage: Path) -> dict[tuple[str, str], int]:
    """Checks of a vintage that warn or fail: count by (status, rule), fails first."""
    path = vintage / "checks.parquet"
    if not path.exists():
        return {}
    t = pq.read_table(path, columns=["rule", "status"]).to_pandas()
    bad = t[t["status"].isin(["fail", "warn"])]
    counts = bad.groupby(["status", "rule"], sort=True).size()
    return {k: int(v) for k, v in sorted(counts.items(), key=lambda kv: (kv[0][0] != "fail", kv[0]))}


def _revisions_against_latest(out_dir: Path | None, work: Path) -> tuple[str | None, dict[str, pa.Table]]:
    """Revisions of the tables written in ``work`` against the latest published vintage, and its name."""
    latest = out_dir / pub.LATEST if out_dir is not None else None
    if latest is None or not (latest / MANIFEST_FILE).exists():
        return None, {}
    from valvol.methods.revision_statistics import revision_summary  # scipy.stats: only when compared
    from valvol.methods.revisions import revisions

    names = [t for t in TABLES if (latest / f"{t}.parquet").exists()]
    earlier = {t: pd.read_parquet(latest / f"{t}.parquet") for t in names}
    revs = revisions(earlier, {t: pd.read_parquet(work / f"{t}.parquet") for t in names})
    vintage = json.loads((latest / MANIFEST_FILE).read_text())["vintage"]
    return vintage, {
        "revisions": pa.Table.from_pandas(revs, preserve_index=False),
        "revision_summary": pa.Table.from_pandas(revision_summary(revs), preserve_index=False),
    }
