"""The rebuild as plain functions, one per stage; Prefect tasks wrap them one to one.

Stages pass paths, never frames or connections:

``load``            accounts folder -> ``rows.parquet`` (parsed rows, with file and row) + read problems
``validate``        rows -> ``validated.parquet`` and the list of economies, or `InputError`
                    with every problem found (its own DuckDB file, removed afterwards)
``derive_economy``  one economy -> ``economies/<E>/<table>.parquet``, in its own DuckDB file:
                    workers never share a database, so economies can run anywhere
``write``           every economy's tables -> one ordered parquet file per table, charts,
                    revisions against the latest vintage, the vintage's ``valvol.duckdb``,
                    ``manifest.json`` (last)
``publish``         the work folder becomes ``vintages/<vintage>``; ``latest`` switches atomically

`rebuild` runs them in order without Prefect; `valvol.flows.rebuild` runs the same
functions as tasks, fanning ``derive_economy`` out over economies.
"""

from __future__ import annotations

import json
import logging
import shutil
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from valvol import db, reconciliation
from valvol.config import Config, load_config
from valvol.errors import InputError, Problem
from valvol.io import publish as pub
from valvol.io.readers import read_accounts
from valvol.validate import duplicate_keys, identity_problems, parse_rows, period_gaps, row_problems

log = logging.getLogger("valvol")

ROWS_FILE = "rows.parquet"
READ_PROBLEMS_FILE = "read_problems.json"
VALIDATED_FILE = "validated.parquet"
INDEXES_FILE = "indexes.parquet"
RECONCILIATION_FILE = "reconciliation.parquet"
RECONCILE_CHECKS_FILE = "reconcile_checks.parquet"
ECONOMIES_DIR = "economies"
DB_FILE = db.DB_FILE
MANIFEST_FILE = "manifest.json"
TIMINGS_FILE = "timings.json"
SCRATCH = (ROWS_FILE, READ_PROBLEMS_FILE, VALIDATED_FILE, INDEXES_FILE, RECONCILE_CHECKS_FILE, TIMINGS_FILE,
           "validate.duckdb")

#: Output tables, in the order they are written.
TABLES = (
    "levels",
    "deflators",
    "growth",
    "checks",
    "volume_contributions",
    "deflator_contributions",
    "income_contributions",
    "price_gaps",
)
#: Tables of revisions against the previous vintage (empty for a first vintage).
REVISION_TABLES = ("revisions", "revision_summary")


@dataclass(frozen=True)
class RebuildResult:
    """What a rebuild produced (``unchanged``: inputs, code and config as in ``latest``)."""

    vintage: str
    path: Path
    row_counts: dict[str, int]
    warnings: int
    unchanged: bool = False


def _timed(work: Path, stage: str, started: float) -> None:
    path = work / TIMINGS_FILE
    timings = json.loads(path.read_text()) if path.exists() else {}
    timings[stage] = round(timings.get(stage, 0.0) + time.perf_counter() - started, 3)
    path.write_text(json.dumps(timings, indent=1, sort_keys=True))


def load(accounts_dir: str | Path, work: str | Path) -> Path:
    """Read every data file of the folder; write parsed rows and read problems into ``work``."""
    started = time.perf_counter()
    work = Path(work)
    raw, problems = read_accounts(accounts_dir)
    rows = parse_rows(raw)
    rows.to_parquet(work / ROWS_FILE, index=False)
    (work / READ_PROBLEMS_FILE).write_text(json.dumps([p.as_dict() for p in problems]))
    log.info("read %d rows from %d file(s) in %s", len(rows), rows["source_file"].nunique(), accounts_dir)
    _timed(work, "load", started)
    return work / ROWS_FILE


def stage_accounts(con, rows: pd.DataFrame, config: Config) -> None:
    """Stage rows in DuckDB and derive annual values and aggregates (shared by validate and derive)."""
    db.register(con, "input_rows", rows)
    db.run_sql(con, "stg_input")
    con.unregister("input_rows")
    edges = pd.DataFrame(config.hierarchy.edges(), columns=["aggregate", "component", "sign"])
    db.register(con, "hierarchy_edges", edges)
    db.run_sql(con, "stg_hierarchy")
    con.unregister("hierarchy_edges")
    db.run_sql(con, "int_levels_init")
    db.run_sql(con, "int_annual_from_quarters", annual_rate=config.levels_at_annual_rate)
    for aggregate in config.hierarchy.order():  # bottom-up, one statement per aggregate
        db.run_sql(con, "int_aggregate", aggregate=aggregate)
    tol = {"tol_abs": config.checks.tolerance_abs, "tol_rel": config.checks.tolerance_rel}
    db.run_sql(con, "int_identity_residuals", **tol)
    db.run_sql(con, "int_annual_vs_quarters", annual_rate=config.levels_at_annual_rate, **tol)


def validate(accounts_dir: str | Path, work: str | Path, config: Config | None = None) -> list[str]:
    """Check the parsed rows against the input contract; return the economies found.

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
    bad = pd.DataFrame([(p.file, p.row) for p in row_level], columns=["source_file", "source_row"])
    located = pd.MultiIndex.from_frame(rows[["source_file", "source_row"]])
    ok = rows.loc[~located.isin(pd.MultiIndex.from_frame(bad.astype({"source_row": "int64"})))]
    if rows.empty and not problems:
        problems.append(Problem(file=str(accounts_dir), reason="the accounts files hold no data rows"))
    problems += duplicate_keys(ok)
    dated = rows[rows["frequency"] != ""]  # every row with a valid period counts for contiguity
    problems += period_gaps(dated.drop_duplicates(["economy", "item", "price_basis", "period"]))
    is_index = ok["price_basis"].eq("index")
    indexes, ok = ok[is_index], ok[~is_index]
    for economy in sorted(set(indexes["economy"]) - set(ok["economy"])):
        first = indexes[indexes["economy"] == economy].iloc[0]
        problems.append(Problem(file=first["source_file"], row=int(first["source_row"]), economy=economy,
                                item=first["item"], price_basis="index",
                                reason="price index of an economy that has no accounts"))
    if problems:
        raise InputError(problems)
    from valvol.methods.index_bases import convert  # volume_index, price_index -> chain_linked (and current)

    ok, problems = convert(ok, config)
    if problems:
        raise InputError(problems)
    moved, rebalanced = reconciliation.adjusted_items(config)  # checked again after reconciliation
    bases = set(config.benchmark.price_bases) | set(config.reconcile.price_bases)
    con = db.connect(work / "validate.duckdb")
    try:
        stage_accounts(con, ok, config)
        ident = con.table("identity_residuals").df()
        ident = ident[~(ident["item"].isin(rebalanced) & ident["price_basis"].isin(bases))]
        annual = con.table("annual_vs_quarters").df()
        annual = annual[~(annual["item"].isin(moved) & annual["price_basis"].isin(bases))]
        problems += identity_problems(ident, "components do not add to the aggregate")
        problems += identity_problems(
            annual,
            "quarters do not " + ("average" if config.levels_at_annual_rate else "add") + " to the year",
        )
    finally:
        con.close()
        (work / "validate.duckdb").unlink(missing_ok=True)
    if problems:
        raise InputError(problems)
    ok.to_parquet(work / VALIDATED_FILE, index=False)
    indexes.to_parquet(work / INDEXES_FILE, index=False)
    economies = sorted(ok["economy"].unique())
    log.info("validated %d rows: %d economies, %d accounts series, %d price-index rows", len(ok) + len(indexes),
             len(economies), len(ok.drop_duplicates(["economy", "item", "price_basis", "frequency"])), len(indexes))
    _timed(work, "validate", started)
    return economies


def reconcile(accounts_dir: str | Path, work: str | Path, config: Config | None = None) -> Path:
    """Benchmark and reconcile the validated rows as ``[benchmark]`` and ``[reconcile]`` ask.

    Rewrites ``validated.parquet`` with the adjusted quarters and writes the
    ``reconciliation`` report and its before/after checks (empty when not asked for).
    """
    started = time.perf_counter()
    work = Path(work)
    config = config or load_config(accounts_dir)
    if reconciliation.enabled(config):
        rows = pd.read_parquet(work / VALIDATED_FILE)
        rows, report, checks = reconciliation.run(rows, config, Path(accounts_dir))
        rows.to_parquet(work / VALIDATED_FILE, index=False)
        log.info("reconciliation: %d quarterly values adjusted", int((report["adjustment"].abs() > 0).sum()))
    else:
        report = pd.DataFrame(columns=reconciliation.REPORT_COLUMNS)
        checks = pd.DataFrame(columns=reconciliation.CHECK_COLUMNS)
    _typed_report(report).to_parquet(work / RECONCILIATION_FILE, index=False)
    checks.astype({"value": "float64", "tolerance": "float64"}).to_parquet(work / RECONCILE_CHECKS_FILE, index=False)
    _timed(work, "reconcile", started)
    return work / RECONCILIATION_FILE


def _typed_report(report: pd.DataFrame) -> pd.DataFrame:
    floats = ["before", "after", "adjustment", "adjustment_pct", "adjustment_annual", "adjustment_identity",
              "growth_before_pct", "growth_after_pct"]
    text = [c for c in reconciliation.REPORT_COLUMNS if c not in floats]
    return report.astype({**{c: "float64" for c in floats}, **{c: "str" for c in text}})


def derive_economy(accounts_dir: str | Path, work: str | Path, economy: str, config: Config | None = None) -> Path:
    """Derive every table of one economy in its own DuckDB file; write its tables as parquet."""
    from valvol import derive as steps

    started = time.perf_counter()
    work = Path(work)
    config = config or load_config(accounts_dir)
    folder = work / ECONOMIES_DIR / economy
    if folder.exists():  # a retried or re-run task starts clean
        shutil.rmtree(folder)
    folder.mkdir(parents=True)
    rows = pd.read_parquet(work / VALIDATED_FILE, filters=[("economy", "==", economy)])
    indexes = pd.read_parquet(work / INDEXES_FILE, filters=[("economy", "==", economy)])
    checks = pd.read_parquet(work / RECONCILE_CHECKS_FILE, filters=[("economy", "==", economy)])
    con = db.connect(folder / DB_FILE, threads=1)
    try:
        stage_accounts(con, rows, config)
        steps.derive_all(con, config, indexes=indexes, extra_checks=checks)
        for name in TABLES:
            pq.write_table(db.query_arrow(con, f"out_{name}"), folder / f"{name}.parquet")
    finally:
        con.close()
    (folder / DB_FILE).unlink()
    # each economy keeps its own time (tasks may run at once); write() adds them up
    (folder / TIMINGS_FILE).write_text(json.dumps({"derive": time.perf_counter() - started}))
    return folder


def write(
    accounts_dir: str | Path,
    work: str | Path,
    config: Config | None = None,
    *,
    out_dir: str | Path | None = None,
    label: str | None = None,
    charts: bool = True,
    chart_economies: list[str] | None = None,
) -> Path:
    """Combine the economies' tables, validate and write them, draw charts, compare with ``latest``.

    Writes ``work/<table>.parquet`` (one ordered file per table), ``work/valvol.duckdb``
    holding the same tables, ``work/charts/``, the revisions against the latest vintage
    of ``out_dir`` (when there is one) and, last, ``manifest.json``.
    """
    from valvol.charts import draw_charts
    from valvol.io.writers import write_tables
    from valvol.manifest import build_manifest

    started = time.perf_counter()
    work = Path(work)
    config = config or load_config(accounts_dir)
    economies = sorted(p.name for p in (work / ECONOMIES_DIR).iterdir()) if (work / ECONOMIES_DIR).exists() else []
    tables = {
        name: pa.concat_tables([pq.read_table(work / ECONOMIES_DIR / e / f"{name}.parquet") for e in economies])
        for name in TABLES
    }
    revisions = _revisions_against_latest(Path(out_dir), tables) if out_dir is not None else {}
    tables["reconciliation"] = pq.read_table(work / RECONCILIATION_FILE)
    counts = write_tables(work, {**tables, **revisions})
    checks = tables["checks"].column("status").to_pandas().value_counts().to_dict()
    derive_s = sum(json.loads((work / ECONOMIES_DIR / e / TIMINGS_FILE).read_text())["derive"] for e in economies)
    shutil.rmtree(work / ECONOMIES_DIR, ignore_errors=True)
    (work / "charts").mkdir(exist_ok=True)
    drawn = draw_charts(work, chart_economies) if charts else []
    _timed(work, "write", started)
    timings = json.loads((work / TIMINGS_FILE).read_text()) | {"derive": round(derive_s, 3)}
    for name in SCRATCH:
        (work / name).unlink(missing_ok=True)
    options = rebuild_options(label, charts, chart_economies)
    manifest = build_manifest(Path(accounts_dir), config, counts, checks, timings, options=options)
    manifest["charts"] = sorted(str(p.relative_to(work)) for p in drawn)
    manifest["revised_against"] = revisions and json.loads(
        (Path(out_dir) / pub.LATEST / MANIFEST_FILE).read_text())["vintage"] or None
    (work / MANIFEST_FILE).write_text(json.dumps(manifest, indent=2, sort_keys=True) + "\n")
    log.info("wrote %s", ", ".join(f"{t} ({n} rows)" for t, n in counts.items()))
    if drawn:
        log.info("drew %d chart file(s)", len(drawn))
    return work / MANIFEST_FILE


def _revisions_against_latest(out_dir: Path, tables: dict[str, pa.Table]) -> dict[str, pa.Table]:
    """Revisions of these tables against the latest published vintage (none for a first one)."""
    from valvol.methods.revisions import revision_summary, revisions

    latest = out_dir / pub.LATEST
    if not (latest / MANIFEST_FILE).exists():
        return {}
    earlier = {t: pd.read_parquet(latest / f"{t}.parquet") for t in TABLES if (latest / f"{t}.parquet").exists()}
    revs = revisions(earlier, {t: tbl.to_pandas() for t, tbl in tables.items()})
    return {
        "revisions": pa.Table.from_pandas(revs, preserve_index=False),
        "revision_summary": pa.Table.from_pandas(revision_summary(revs), preserve_index=False),
    }


def publish(work: str | Path, out_dir: str | Path) -> Path:
    """Move the finished work folder into ``out_dir/vintages`` and switch ``latest`` to it."""
    work, out_dir = Path(work), Path(out_dir)
    manifest = json.loads((work / MANIFEST_FILE).read_text())
    links = [f"{t}.parquet" for t in (*TABLES, "reconciliation", *REVISION_TABLES)] + [MANIFEST_FILE, DB_FILE,
                                                                                      "charts"]
    target = pub.publish(work, out_dir, manifest["vintage"], [n for n in links if (work / n).exists()])
    log.info("published vintage %s in %s", target.name, out_dir)
    return target


def rebuild_options(label: str | None, charts: bool, chart_economies: list[str] | None) -> dict:
    """The rebuild options that shape a vintage (part of its fingerprint); checks the label."""
    from valvol.manifest import check_label

    return {"label": check_label(label), "charts": charts, "chart_economies": chart_economies}


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


def reconciled_accounts(accounts_dir: str | Path, to_dir: str | Path) -> pd.DataFrame:
    """Benchmark and reconcile a folder; write the adjusted accounts in the input format to ``to_dir``.

    ``to_dir`` gets ``accounts.csv`` (every row, quarters adjusted), a copy of ``valvol.toml``
    and ``reconciliation/report.csv`` (a sub-folder, so it is not read as accounts). Returns
    the report. Rebuilding ``to_dir`` reproduces the reconciled accounts (a second
    reconciliation of consistent data moves nothing).
    """
    import tempfile

    from valvol.config import CONFIG_FILE

    config = load_config(accounts_dir)
    to_dir = Path(to_dir)
    with tempfile.TemporaryDirectory(prefix="valvol-reconcile-") as tmp:
        load(accounts_dir, tmp)
        validate(accounts_dir, tmp, config)
        reconcile(accounts_dir, tmp, config)
        rows = pd.concat([pd.read_parquet(Path(tmp) / VALIDATED_FILE), pd.read_parquet(Path(tmp) / INDEXES_FILE)])
        report = pd.read_parquet(Path(tmp) / RECONCILIATION_FILE)
    rows = rows.sort_values(["source_file", "source_row"], kind="mergesort")
    out = rows[["economy", "period", "item", "price_basis", "value", "adjustment", "unit"]].copy()
    out["value"] = out["value"].map(repr)
    to_dir.mkdir(parents=True, exist_ok=True)
    (to_dir / "reconciliation").mkdir(exist_ok=True)
    out.to_csv(to_dir / "accounts.csv", index=False)
    report.to_csv(to_dir / "reconciliation" / "report.csv", index=False)
    if (Path(accounts_dir) / CONFIG_FILE).exists():
        shutil.copyfile(Path(accounts_dir) / CONFIG_FILE, to_dir / CONFIG_FILE)
    for name in {config.benchmark.benchmarks, config.reconcile.benchmarks} - {""}:  # files the config names
        (to_dir / name).parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(Path(accounts_dir) / name, to_dir / name)
    log.info("wrote reconciled accounts (%d rows) and the report to %s", len(out), to_dir)
    return report


def check(accounts_dir: str | Path, work: str | Path) -> int:
    """Every rule a rebuild applies (load, validate, reconcile, derive), writing nothing; the rows checked."""
    config = load_config(accounts_dir)
    load(accounts_dir, work)
    n = len(pd.read_parquet(Path(work) / ROWS_FILE))
    economies = validate(accounts_dir, work, config)
    reconcile(accounts_dir, work, config)
    problems: list[Problem] = []
    for economy in economies:
        try:
            derive_economy(accounts_dir, work, economy, config)
        except InputError as err:
            problems += err.problems
    if problems:
        raise InputError(problems)
    return n


@dataclass(frozen=True)
class Session:
    """One rebuild's hold on an output root: its config, and its work folder or the unchanged vintage."""

    config: Config
    work: Path | None
    unchanged: Path | None


@contextmanager
def session(accounts_dir: str | Path, out_dir: str | Path, *, force: bool = False,
            options: dict | None = None) -> Iterator[Session]:
    """Hold the output lock for one rebuild, shared by `rebuild` and the Prefect flow.

    Yields the unchanged latest vintage (``work`` None) when inputs, code, config and
    options are as in ``latest`` and ``force`` is False; otherwise a fresh staging folder,
    removed on any failure and whenever the body ends without publishing it.
    """
    if not Path(accounts_dir).is_dir():
        raise InputError([Problem(file=str(accounts_dir), reason="accounts folder does not exist")])
    out_dir = Path(out_dir)
    with pub.output_lock(out_dir):
        config = load_config(accounts_dir)
        same = None if force else unchanged_since_latest(accounts_dir, out_dir, config, options)
        if same is not None:
            log.info("inputs, code and config unchanged since vintage %s: nothing to do", same.name)
            yield Session(config, None, same)
            return
        work = pub.new_staging_dir(out_dir)
        try:
            yield Session(config, work, None)
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
) -> RebuildResult:
    """Run every stage without Prefect and publish atomically (the flow does the same as tasks)."""
    options = rebuild_options(label, charts, chart_economies)
    with session(accounts_dir, out_dir, force=force, options=options) as run:
        if run.unchanged is not None:
            return result_of(run.unchanged, unchanged=True)
        work, config = run.work, run.config
        load(accounts_dir, work)
        economies = validate(accounts_dir, work, config)
        reconcile(accounts_dir, work, config)
        for economy in economies:  # fan-out: one economy at a time here
            derive_economy(accounts_dir, work, economy, config)
        write(accounts_dir, work, config, out_dir=out_dir, label=label, charts=charts,
              chart_economies=chart_economies)
        target = publish(work, out_dir)
    return result_of(target)


def result_of(target: Path, unchanged: bool = False) -> RebuildResult:
    """Summary of a published vintage, from its manifest."""
    manifest = json.loads((target / MANIFEST_FILE).read_text())
    return RebuildResult(
        vintage=target.name,
        path=target,
        row_counts=manifest["row_counts"],
        warnings=manifest["checks"].get("warn", 0),
        unchanged=unchanged,
    )
