"""The rebuild flow: the stages of `valvol.pipeline.STAGES`, each a Prefect task, in that order.

Tasks are the stage functions themselves, wrapped one to one; they pass the run (paths and
the configuration) and return problems as data. The derive stage fans out one task per chunk
of economies through the flow's task runner: local threads by default (one per core), or a
Dask cluster (`dask_runner`). Each chunk works in its own in-memory DuckDB database and
writes parquet; the single write task combines them, so workers never share a database. The
orchestration cost is paid per rebuild and per chunk, never per economy.

Invalid input does not raise inside the flow: the stage that finds it returns its problems and
the flow ends in a Failed state carrying them, so a user sees located problems and no
traceback. Unchanged inputs, code and config end the flow at once with the latest vintage
(``force`` rebuilds anyway).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from prefect import flow, task, unmapped
from prefect.cache_policies import NO_CACHE
from prefect.states import Completed, Failed
from prefect.task_runners import ThreadPoolTaskRunner

from valvol import pipeline
from valvol.config import Config
from valvol.errors import Problem
from valvol.io.publish import LATEST

IO_RETRIES = {"retries": 2, "retry_delay_seconds": [1, 5]}

def _chunk_task(stage: pipeline.Stage):
    """A per-chunk stage as a task body: on the local runner each chunk runs in the run's process
    pool (the task's thread waits for it), on a Dask worker in that worker (``workers`` = 1)."""

    def one_chunk(run: pipeline.Run, chunk: pipeline.Chunk) -> list[Problem]:
        return pipeline.run_chunk(stage, run, chunk)

    one_chunk.__name__ = one_chunk.__qualname__ = stage.name
    return one_chunk


#: One task per stage, built from the stage order (``io`` stages retry).
TASKS = {
    stage.name: task(_chunk_task(stage) if stage.per_chunk else stage.run, name=stage.name, cache_policy=NO_CACHE,
                     **({"task_run_name": f"{stage.name} {{chunk.name}}"} if stage.per_chunk else {}),
                     **(IO_RETRIES if stage.io else {}))
    for stage in pipeline.STAGES
}


def call_as_task(stage: pipeline.Stage, run: pipeline.Run,
                 parts: Sequence[pipeline.Chunk] | None) -> list[Problem]:
    """Run a stage as its Prefect task; a per-chunk stage as one task per chunk, all at once."""
    if parts is None:
        return TASKS[stage.name](run)
    futures = TASKS[stage.name].map(unmapped(run), list(parts))
    return [p for future in futures for p in future.result()]  # every chunk's problems


@flow(name="valvol-rebuild", validate_parameters=False,
      task_runner=ThreadPoolTaskRunner(max_workers=pipeline.default_workers()))
def rebuild_flow(
    accounts_dir: str,
    out_dir: str,
    force: bool = False,
    label: str | None = None,
    charts: bool = True,
    chart_economies: list[str] | None = None,
    chunk_size: int = 0,
    workers: int = 0,
    config: Config | None = None,
    report: bool = True,
    workbook: bool = False,
):
    """Rebuild every table of ``out_dir`` from the accounts folder; publish atomically.

    ``config`` is the configuration the caller has already read (read here when absent, as
    in a scheduled run); ``workers`` sizes the local process pool (1 on a Dask cluster,
    whose workers run the chunks themselves).
    """
    options = pipeline.rebuild_options(label, charts, chart_economies, report=report, workbook=workbook)
    with pipeline.session(accounts_dir, out_dir, force=force, options=options, config=config,
                          chunk_size=chunk_size, workers=workers) as s:
        if s.unchanged is not None:
            return Completed(message=f"unchanged since vintage {s.unchanged.name}", data=str(s.unchanged))
        problems = pipeline.run_stages(s.run, pipeline.STAGES, call=call_as_task)
        if problems:
            return Failed(message=f"{len(problems)} problem(s) in the accounts",
                          data=[p.as_dict() for p in problems])
    return Completed(data=str((Path(out_dir) / LATEST).resolve()))


def dask_runner(address: str | None = None, n_workers: int = 2):
    """A Prefect task runner on a Dask cluster: ``address`` of an existing scheduler, else a local one.

    The local cluster binds to 127.0.0.1 only; its workers report to the Prefect server the
    flow uses (set ``PREFECT_API_URL`` for an external cluster, or each worker would start its
    own embedded server).
    """
    from prefect_dask import DaskTaskRunner

    if address:
        return DaskTaskRunner(address=address)
    return DaskTaskRunner(
        cluster_kwargs={"n_workers": n_workers, "threads_per_worker": 1, "processes": True,
                        "host": "127.0.0.1", "dashboard_address": None}
    )
