"""The rebuild flow: load -> validate -> reconcile -> derive (one task per economy) -> write -> publish.

Tasks are thin wrappers of `valvol.pipeline` functions and pass paths only. The
economies fan out through the flow's task runner: local threads by default, or a
Dask cluster (`dask_runner`). Each economy works in its own DuckDB file and writes
parquet; the single write task combines them, so workers never share a database.

Invalid input does not raise inside the flow: the validate task returns the
problems as data and the flow ends in a Failed state carrying them, so a user
sees located problems and no traceback. Unchanged inputs, code and config end the
flow at once with the latest vintage (``force`` rebuilds anyway).
"""

from __future__ import annotations

from prefect import flow, task
from prefect.cache_policies import NO_CACHE
from prefect.states import Completed, Failed
from prefect.task_runners import ThreadPoolTaskRunner

from valvol import pipeline
from valvol.errors import InputError

IO_RETRIES = {"retries": 2, "retry_delay_seconds": [1, 5]}


def _problems(err: InputError) -> list[dict]:
    return [p.as_dict() for p in err.problems]


@task(name="load accounts", cache_policy=NO_CACHE, **IO_RETRIES)
def load_task(accounts_dir: str, work: str) -> str:
    return str(pipeline.load(accounts_dir, work))


@task(name="validate accounts", cache_policy=NO_CACHE)
def validate_task(accounts_dir: str, work: str) -> dict:
    try:
        return {"economies": pipeline.validate(accounts_dir, work), "problems": []}
    except InputError as err:
        return {"economies": [], "problems": _problems(err)}


@task(name="reconcile accounts", cache_policy=NO_CACHE)
def reconcile_task(accounts_dir: str, work: str) -> list[dict]:
    try:
        pipeline.reconcile(accounts_dir, work)
    except InputError as err:
        return _problems(err)
    return []


@task(name="derive economy", cache_policy=NO_CACHE, task_run_name="derive {economy}")
def derive_task(accounts_dir: str, work: str, economy: str) -> list[dict]:
    try:
        pipeline.derive_economy(accounts_dir, work, economy)
    except InputError as err:
        return _problems(err)
    return []


@task(name="write tables", cache_policy=NO_CACHE)
def write_task(accounts_dir: str, work: str, out_dir: str, label: str | None, charts: bool,
               chart_economies: list[str] | None) -> str:
    return str(pipeline.write(accounts_dir, work, out_dir=out_dir, label=label, charts=charts,
                              chart_economies=chart_economies))


@task(name="publish vintage", cache_policy=NO_CACHE)
def publish_task(work: str, out_dir: str) -> str:
    return str(pipeline.publish(work, out_dir))


def _rejected(problems: list[dict]):
    return Failed(message=f"{len(problems)} problem(s) in the accounts", data=problems)


@flow(name="valvol-rebuild", validate_parameters=False, task_runner=ThreadPoolTaskRunner(max_workers=2))
def rebuild_flow(
    accounts_dir: str,
    out_dir: str,
    force: bool = False,
    label: str | None = None,
    charts: bool = True,
    chart_economies: list[str] | None = None,
):
    """Rebuild every table of ``out_dir`` from the accounts folder; publish atomically."""
    options = pipeline.rebuild_options(label, charts, chart_economies)
    with pipeline.session(accounts_dir, out_dir, force=force, options=options) as run:
        if run.unchanged is not None:
            return Completed(message=f"unchanged since vintage {run.unchanged.name}", data=str(run.unchanged))
        work = str(run.work)
        load_task(accounts_dir, work)
        checked = validate_task(accounts_dir, work)
        if checked["problems"]:
            return _rejected(checked["problems"])
        problems = reconcile_task(accounts_dir, work)
        if problems:
            return _rejected(problems)
        futures = [derive_task.submit(accounts_dir, work, e) for e in checked["economies"]]
        problems = [p for future in futures for p in future.result()]  # every economy's problems
        if problems:
            return _rejected(problems)
        write_task(accounts_dir, work, out_dir, label, charts, chart_economies)
        return publish_task(work, out_dir)


def dask_runner(address: str | None = None, n_workers: int = 2):
    """A Prefect task runner on a Dask cluster: ``address`` of an existing scheduler, else a local one.

    The local cluster binds to 127.0.0.1 only (PLATFORM.md 1.7).
    """
    from prefect_dask import DaskTaskRunner

    if address:
        return DaskTaskRunner(address=address)
    return DaskTaskRunner(
        cluster_kwargs={"n_workers": n_workers, "threads_per_worker": 1, "processes": True,
                        "host": "127.0.0.1", "dashboard_address": None}
    )
