"""The rebuild as plain functions, one per stage; Prefect tasks wrap them one to one.

Stages pass paths, never frames or connections:

``load``      accounts folder -> ``rows.parquet`` (parsed rows, with file and row) + read problems
``validate``  rows -> ``valvol.duckdb`` (staging tables) or `InputError` with every problem found
``derive``    staging -> levels, volumes, deflators, growth, contributions, price gaps, checks
``write``     DuckDB -> one parquet file per table + ``manifest.json`` (written last)

`rebuild` runs them in order without Prefect and publishes atomically
(`valvol.io.publish`); `valvol.flows.rebuild` runs the same functions as tasks.
"""

from __future__ import annotations

import json
import logging
import time
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from valvol import db
from valvol.config import Config, load_config
from valvol.errors import InputError, Problem
from valvol.io import publish as pub
from valvol.io.readers import read_accounts
from valvol.validate import duplicate_keys, identity_problems, parse_rows, period_gaps, row_problems

log = logging.getLogger("valvol")

ROWS_FILE = "rows.parquet"
READ_PROBLEMS_FILE = "read_problems.json"
DB_FILE = "valvol.duckdb"
MANIFEST_FILE = "manifest.json"
TIMINGS_FILE = "timings.json"

#: Output tables, in the order they are written.
TABLES = (
    "levels",
    "deflators",
    "growth",
    "checks",
    "volume_contributions",
    "deflator_contributions",
    "price_gaps",
)


@dataclass(frozen=True)
class RebuildResult:
    """What a rebuild produced."""

    vintage: str
    path: Path
    row_counts: dict[str, int]
    warnings: int


def _timed(work: Path, stage: str, started: float) -> None:
    path = work / TIMINGS_FILE
    timings = json.loads(path.read_text()) if path.exists() else {}
    timings[stage] = round(time.perf_counter() - started, 3)
    path.write_text(json.dumps(timings, indent=1, sort_keys=True))


def load(accounts_dir: str | Path, work: str | Path) -> Path:
    """Read every data file of the folder; write parsed rows and read problems into ``work``."""
    started = time.perf_counter()
    work = Path(work)
    raw, problems = read_accounts(accounts_dir)
    rows = parse_rows(raw)
    rows.to_parquet(work / ROWS_FILE, index=False)
    (work / READ_PROBLEMS_FILE).write_text(json.dumps([p.as_dict() for p in problems]))
    files = rows["source_file"].nunique()
    log.info("read %d rows from %d file(s) in %s", len(rows), files, accounts_dir)
    _timed(work, "load", started)
    return work / ROWS_FILE


def validate(accounts_dir: str | Path, work: str | Path, config: Config | None = None) -> Path:
    """Check the parsed rows against the input contract and stage them in DuckDB.

    Every problem is collected (row rules, duplicate keys, gaps, identities,
    quarters against years) and raised together as one `InputError`.
    """
    started = time.perf_counter()
    work = Path(work)
    config = config or load_config(accounts_dir)
    problems = [Problem(**p) for p in json.loads((work / READ_PROBLEMS_FILE).read_text())]
    rows = pd.read_parquet(work / ROWS_FILE)
    row_level = row_problems(rows, config)
    problems += row_level
    bad = {(p.file, p.row) for p in row_level}
    keep = [(f, r) not in bad for f, r in zip(rows["source_file"], rows["source_row"], strict=True)]
    ok = rows.loc[pd.Series(keep, index=rows.index, dtype=bool)]
    problems += duplicate_keys(ok)
    problems += period_gaps(ok.drop_duplicates(["economy", "item", "price_basis", "period"]))
    if problems:
        raise InputError(problems)
    con = db.connect(work / DB_FILE)
    try:
        db.register(con, "input_rows", ok)
        db.run_sql(con, "stg_input")
        db.register(con, "hierarchy_edges", pd.DataFrame(config.hierarchy.edges(),
                                                          columns=["aggregate", "component", "sign"]))
        db.run_sql(con, "stg_hierarchy")
        _derive_aggregates(con, config)
        tol = {"tol_abs": config.checks.tolerance_abs, "tol_rel": config.checks.tolerance_rel}
        db.run_sql(con, "int_identity_residuals", **tol)
        db.run_sql(con, "int_annual_vs_quarters", annual_rate=config.levels_at_annual_rate, **tol)
        problems += identity_problems(con.table("identity_residuals").df(), "components do not add to the aggregate")
        problems += identity_problems(
            con.table("annual_vs_quarters").df(),
            "quarters do not " + ("average" if config.levels_at_annual_rate else "add") + " to the year",
        )
    finally:
        con.close()
    if problems:
        raise InputError(problems)
    log.info("validated %d rows: %d economies, %d series", len(ok), ok["economy"].nunique(),
             len(ok.drop_duplicates(["economy", "item", "price_basis", "frequency"])))
    _timed(work, "validate", started)
    return work / DB_FILE


def _derive_aggregates(con, config: Config) -> None:
    db.run_sql(con, "int_levels_init")
    db.run_sql(con, "int_annual_from_quarters", annual_rate=config.levels_at_annual_rate)
    for aggregate in config.hierarchy.order():
        db.run_sql(con, "int_aggregate", aggregate=aggregate)


def derive(accounts_dir: str | Path, work: str | Path, config: Config | None = None) -> Path:
    """Derive volumes, deflators, growth rates, contributions, price gaps and checks in DuckDB."""
    from valvol import derive as steps

    started = time.perf_counter()
    work = Path(work)
    config = config or load_config(accounts_dir)
    con = db.connect(work / DB_FILE)
    try:
        steps.derive_all(con, config)
    finally:
        con.close()
    _timed(work, "derive", started)
    return work / DB_FILE


def write(
    accounts_dir: str | Path,
    work: str | Path,
    config: Config | None = None,
    *,
    charts: bool = True,
    chart_economies: list[str] | None = None,
) -> Path:
    """Write each table to ``work/<table>.parquet`` (validated, ordered), the charts, then the manifest.

    Charts are drawn for ``chart_economies`` (default: every economy, when there are at
    most ten) unless ``charts`` is False.
    """
    from valvol.charts import draw_charts

    from valvol.io.writers import write_tables
    from valvol.manifest import build_manifest

    started = time.perf_counter()
    work = Path(work)
    config = config or load_config(accounts_dir)
    con = db.connect(work / DB_FILE)
    try:
        counts = write_tables(con, work, TABLES)
        checks = con.execute('SELECT status, count(*) FROM checks GROUP BY status ORDER BY status').fetchall()
    finally:
        con.close()
    (work / "charts").mkdir(exist_ok=True)
    drawn = draw_charts(work, chart_economies) if charts else []
    _timed(work, "write", started)
    timings = json.loads((work / TIMINGS_FILE).read_text())
    (work / TIMINGS_FILE).unlink()
    for name in (ROWS_FILE, READ_PROBLEMS_FILE):
        (work / name).unlink(missing_ok=True)
    manifest = build_manifest(Path(accounts_dir), config, counts, dict(checks), timings)
    manifest["charts"] = sorted(str(p.relative_to(work)) for p in drawn)
    (work / MANIFEST_FILE).write_text(json.dumps(manifest, indent=2, sort_keys=True) + "\n")
    log.info("wrote %s", ", ".join(f"{t} ({n} rows)" for t, n in counts.items()))
    if drawn:
        log.info("drew %d chart file(s) in %s", len(drawn), work / "charts")
    return work / MANIFEST_FILE


def publish(work: str | Path, out_dir: str | Path) -> Path:
    """Move the finished work folder into ``out_dir/vintages`` and switch ``latest`` to it."""
    work, out_dir = Path(work), Path(out_dir)
    manifest = json.loads((work / MANIFEST_FILE).read_text())
    links = [f"{t}.parquet" for t in TABLES] + [MANIFEST_FILE, DB_FILE, "charts"]
    target = pub.publish(work, out_dir, manifest["vintage"], links)
    log.info("published vintage %s in %s", target.name, out_dir)
    return target


def check(accounts_dir: str | Path, work: str | Path) -> int:
    """Validate only (load + validate); returns the number of rows checked."""
    load(accounts_dir, work)
    validate(accounts_dir, work)
    return len(pd.read_parquet(Path(work) / ROWS_FILE))


def rebuild(
    accounts_dir: str | Path, out_dir: str | Path, *, charts: bool = True, chart_economies: list[str] | None = None
) -> RebuildResult:
    """Run every stage without Prefect and publish atomically (the flow does the same as tasks)."""
    out_dir = Path(out_dir)
    if not Path(accounts_dir).is_dir():
        raise InputError([Problem(file=str(accounts_dir), reason="accounts folder does not exist")])
    with pub.output_lock(out_dir):
        work = pub.new_staging_dir(out_dir)
        try:
            config = load_config(accounts_dir)
            load(accounts_dir, work)
            validate(accounts_dir, work, config)
            derive(accounts_dir, work, config)
            write(accounts_dir, work, config, charts=charts, chart_economies=chart_economies)
            target = publish(work, out_dir)
        except BaseException:
            pub.discard_staging(work)
            raise
    return result_of(target)


def result_of(target: Path) -> RebuildResult:
    """Summary of a published vintage, from its manifest."""
    manifest = json.loads((target / MANIFEST_FILE).read_text())
    return RebuildResult(
        vintage=target.name,
        path=target,
        row_counts=manifest["row_counts"],
        warnings=manifest["checks"].get("warn", 0),
    )
