"""The rebuild flow: load -> validate -> derive -> write -> publish, each a coarse task.

Tasks are thin wrappers of `valvol.pipeline` functions and pass paths only.
Invalid input does not raise inside the flow: the validate task returns the
problems as data and the flow ends in a Failed state carrying them, so a
user sees the located problems and no traceback.
"""

from __future__ import annotations

from pathlib import Path

from prefect import flow, task
from prefect.cache_policies import NO_CACHE
from prefect.states import Failed

from valvol import pipeline
from valvol.errors import InputError
from valvol.io import publish as pub


@task(name="load accounts", retries=2, retry_delay_seconds=[1, 5], cache_policy=NO_CACHE)
def load_task(accounts_dir: str, work: str) -> str:
    return str(pipeline.load(accounts_dir, work))


@task(name="validate accounts", cache_policy=NO_CACHE)
def validate_task(accounts_dir: str, work: str) -> list[dict]:
    try:
        pipeline.validate(accounts_dir, work)
    except InputError as err:
        return [p.as_dict() for p in err.problems]
    return []


@task(name="derive measures", cache_policy=NO_CACHE)
def derive_task(accounts_dir: str, work: str) -> str:
    return str(pipeline.derive(accounts_dir, work))


@task(name="write tables", retries=2, retry_delay_seconds=[1, 5], cache_policy=NO_CACHE)
def write_task(accounts_dir: str, work: str, charts: bool, chart_economies: list[str] | None) -> str:
    return str(pipeline.write(accounts_dir, work, charts=charts, chart_economies=chart_economies))


@task(name="publish vintage", cache_policy=NO_CACHE)
def publish_task(work: str, out_dir: str) -> str:
    return str(pipeline.publish(work, out_dir))


@flow(name="valvol-rebuild", validate_parameters=False)
def rebuild_flow(accounts_dir: str, out_dir: str, charts: bool = True, chart_economies: list[str] | None = None):
    """Rebuild every table of ``out_dir`` from the accounts folder; publish atomically."""
    out = Path(out_dir)
    with pub.output_lock(out):
        work = pub.new_staging_dir(out)
        try:
            load_task(accounts_dir, str(work))
            problems = validate_task(accounts_dir, str(work))
            if problems:
                pub.discard_staging(work)
                return Failed(message=f"{len(problems)} problem(s) in the accounts", data=problems)
            derive_task(accounts_dir, str(work))
            write_task(accounts_dir, str(work), charts, chart_economies)
            target = publish_task(str(work), out_dir)
        except BaseException:
            pub.discard_staging(work)
            raise
    return target
