"""Scheduled rebuilds: serve the rebuild flow as a Prefect deployment on a cron or interval schedule.

Prefect's ephemeral mode cannot schedule (docs/operations.md §5), so without ``PREFECT_API_URL``
this module starts and supervises a local Prefect server bound to 127.0.0.1 (SQLite in
``DIR/.prefect-server``), points the client at it, and stops it when serving ends; the
server is also told to end with its parent (Linux ``PR_SET_PDEATHSIG``), so a killed
``valvol serve`` leaves no server behind. With ``PREFECT_API_URL`` set, the team's server
is used and nothing is started.

The deployment runs one rebuild at a time (``limit=1``: overlapping rebuilds would only
collide on the output lock), is not paused on shutdown (a restart must not silently turn
the schedule off; Prefect issue 16363), and a run with unchanged inputs, code and config is
a no-op.
"""

from __future__ import annotations

import ctypes
import logging
import os
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from valvol.errors import ValvolError

log = logging.getLogger("valvol")
SERVER_HOME = ".prefect-server"
START_TIMEOUT_S = 180.0


def free_port() -> int:
    """A free TCP port on 127.0.0.1."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _die_with_parent() -> None:  # runs in the child before exec
    if sys.platform.startswith("linux"):
        ctypes.CDLL("libc.so.6", use_errno=True).prctl(1, signal.SIGTERM)  # PR_SET_PDEATHSIG


@contextmanager
def local_server(out_dir: Path, port: int | None = None) -> Iterator[str]:
    """Start ``prefect server start`` on 127.0.0.1, wait until healthy, yield its API URL, stop it."""
    home = (out_dir / SERVER_HOME).resolve()
    home.mkdir(parents=True, exist_ok=True)
    port = port or free_port()
    env = {**os.environ, "PREFECT_HOME": str(home), "PREFECT_SERVER_ANALYTICS_ENABLED": "false",
           "DO_NOT_TRACK": "1", "PREFECT_SERVER_API_HOST": "127.0.0.1", "PREFECT_UI_ENABLED": "false"}
    env.pop("PREFECT_API_URL", None)
    log_file = (home / "server.log").open("ab")
    proc = subprocess.Popen(
        [sys.executable, "-m", "prefect", "server", "start", "--host", "127.0.0.1", "--port", str(port)],
        env=env, stdout=log_file, stderr=subprocess.STDOUT, stdin=subprocess.DEVNULL,
        start_new_session=True, preexec_fn=_die_with_parent,
    )
    (home / "server.pid").write_text(str(proc.pid))
    url = f"http://127.0.0.1:{port}/api"
    try:
        _wait_healthy(url, proc)
        log.info("local Prefect server on %s (logs in %s)", url, home / "server.log")
        yield url
    finally:
        _stop(proc)
        log_file.close()
        (home / "server.pid").unlink(missing_ok=True)


def _wait_healthy(url: str, proc: subprocess.Popen) -> None:
    deadline = time.monotonic() + START_TIMEOUT_S
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            raise ValvolError(f"the local Prefect server exited with code {proc.returncode}; see its server.log")
        try:
            with urllib.request.urlopen(f"{url}/health", timeout=2) as r:
                if r.status == 200:
                    return
        except OSError:
            pass
        time.sleep(0.5)
    _stop(proc)
    raise ValvolError(f"the local Prefect server did not answer within {START_TIMEOUT_S:.0f} s")


def _stop(proc: subprocess.Popen) -> None:
    if proc.poll() is not None:
        return
    os.killpg(proc.pid, signal.SIGTERM)
    try:
        proc.wait(timeout=20)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        proc.wait()


def serve(
    accounts_dir: Path,
    out_dir: Path,
    *,
    cron: str | None = None,
    interval: float | None = None,
    name: str = "scheduled-rebuild",
    force: bool = False,
) -> None:
    """Serve the rebuild flow on a schedule until interrupted (SIGINT or SIGTERM)."""
    from valvol import prefect_env

    if (cron is None) == (interval is None):
        raise ValvolError("give exactly one of --cron or --interval")
    prefect_env.configure()
    parameters = {"accounts_dir": str(accounts_dir.resolve()), "out_dir": str(out_dir.resolve()), "force": force}
    signal.signal(signal.SIGTERM, lambda *_: (_ for _ in ()).throw(KeyboardInterrupt()))
    if os.environ.get("PREFECT_API_URL"):
        _serve(parameters, name, cron, interval)
        return
    with local_server(out_dir) as url:
        os.environ["PREFECT_API_URL"] = url
        try:
            _serve(parameters, name, cron, interval)
        finally:
            os.environ.pop("PREFECT_API_URL", None)


def _serve(parameters: dict, name: str, cron: str | None, interval: float | None) -> None:
    from prefect.deployments.runner import EntrypointType

    from valvol.flows.rebuild import rebuild_flow

    log.info("serving %s every %s for %s", name, cron or f"{interval:g} s", parameters["accounts_dir"])
    try:
        rebuild_flow.serve(
            name=name,
            cron=cron,
            interval=interval,
            parameters=parameters,
            limit=1,
            pause_on_shutdown=False,
            print_starting_message=False,
            entrypoint_type=EntrypointType.MODULE_PATH,
        )
    except KeyboardInterrupt:
        log.info("stopped serving %s", name)
